//! The rule tables the EMC evaluation reads: the conducted-emission limit lines and the
//! model's parameters (measuring network, defaults, practical bounds), each typed and
//! checked before use.

use serde::{Deserialize, Serialize};

use crate::rules::Table;

/// Limit class of the conducted-emission limits.
#[derive(Debug, Clone, Copy, PartialEq, Eq, clap::ValueEnum)]
pub enum LimitClass {
    #[value(name = "A")]
    A,
    #[value(name = "B")]
    B,
}

/// Detector of a limit line (a prescan point may also be read with a peak detector).
#[derive(Debug, Clone, Copy, PartialEq, Eq, clap::ValueEnum)]
pub enum Detector {
    QuasiPeak,
    Average,
}

crate::domain_words!(LimitClass, Detector);

/// One straight piece of a limit line on a log-frequency axis.
#[derive(Debug, Clone, PartialEq, Deserialize, Serialize)]
#[serde(deny_unknown_fields)]
pub struct LimitSegment {
    pub from_hz: f64,
    pub to_hz: f64,
    pub from_dbuv: f64,
    pub to_dbuv: f64,
}

impl LimitSegment {
    /// The limit at `frequency_hz`, linear in log10 f between the ends.
    pub fn at(&self, frequency_hz: f64) -> f64 {
        if self.from_dbuv == self.to_dbuv {
            return self.from_dbuv;
        }
        let share = (frequency_hz / self.from_hz).log10() / (self.to_hz / self.from_hz).log10();
        self.from_dbuv + (self.to_dbuv - self.from_dbuv) * share
    }
}

#[derive(Debug, Clone, PartialEq, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct LimitLine {
    pub class: LimitClass,
    pub detector: Detector,
    pub confirmed: bool,
    pub segments: Vec<LimitSegment>,
}

#[derive(Debug, Clone, PartialEq, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct LimitTable {
    pub id: String,
    pub title: String,
    pub source: String,
    pub provenance: String,
    #[serde(default)]
    pub overrides: bool,
    /// "lower": where two segments meet, the lower limit applies.
    pub at_transition: String,
    pub line: Vec<LimitLine>,
}

impl LimitTable {
    pub fn line(&self, class: LimitClass, detector: Detector) -> Option<&LimitLine> {
        self.line
            .iter()
            .find(|l| l.class == class && l.detector == detector)
    }

    /// The band every line covers (checked equal for all lines when loaded).
    pub fn band_hz(&self) -> (f64, f64) {
        let first = self.line.first().and_then(|l| l.segments.first());
        let last = self.line.first().and_then(|l| l.segments.last());
        match (first, last) {
            (Some(a), Some(b)) => (a.from_hz, b.to_hz),
            _ => (f64::NAN, f64::NAN),
        }
    }
}

impl Table for LimitTable {
    const ID: &'static str = "cispr32.mains-conducted-limits";

    fn check(&self) -> Result<(), String> {
        if self.at_transition != "lower" {
            return Err(format!(
                "at_transition = \"{}\": only \"lower\" is understood",
                self.at_transition
            ));
        }
        let mut band: Option<(f64, f64)> = None;
        for class in [LimitClass::A, LimitClass::B] {
            for detector in [Detector::QuasiPeak, Detector::Average] {
                let what = format!("class {} {}", class.as_str(), detector.as_str());
                let count = self
                    .line
                    .iter()
                    .filter(|l| l.class == class && l.detector == detector)
                    .count();
                if count != 1 {
                    return Err(format!("{what}: expected one [[line]], found {count}"));
                }
                let Some(line) = self.line(class, detector) else {
                    return Err(format!("{what}: no [[line]]"));
                };
                let (Some(first), Some(last)) = (line.segments.first(), line.segments.last())
                else {
                    return Err(format!("{what}: the line has no segments"));
                };
                let mut previous_end: Option<f64> = None;
                for s in &line.segments {
                    let finite = [s.from_hz, s.to_hz, s.from_dbuv, s.to_dbuv]
                        .iter()
                        .all(|v| v.is_finite());
                    if !finite || s.from_hz <= 0.0 || s.to_hz <= s.from_hz {
                        return Err(format!(
                            "{what}: segment {} to {} Hz must have finite figures and 0 below from_hz below to_hz",
                            s.from_hz, s.to_hz
                        ));
                    }
                    if let Some(end) = previous_end
                        && end != s.from_hz
                    {
                        return Err(format!(
                            "{what}: segments must join; one ends at {end} Hz, the next starts at {} Hz",
                            s.from_hz
                        ));
                    }
                    previous_end = Some(s.to_hz);
                }
                let this_band = (first.from_hz, last.to_hz);
                match band {
                    None => band = Some(this_band),
                    Some(b) if b != this_band => {
                        return Err(format!(
                            "{what}: covers {} to {} Hz; every line must cover the same band ({} to {} Hz)",
                            this_band.0, this_band.1, b.0, b.1
                        ));
                    }
                    Some(_) => {}
                }
            }
        }
        if self.line.len() != 4 {
            return Err(format!(
                "expected four [[line]] tables (class A and B, quasi-peak and average), found {}",
                self.line.len()
            ));
        }
        Ok(())
    }
}

/// A model parameter with its own source.
#[derive(Debug, Clone, PartialEq, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct Parameter {
    pub value: f64,
    pub source: String,
    pub provenance: String,
}

impl Parameter {
    /// "value (source; provenance)" for a derivation step.
    pub fn cite(&self) -> String {
        format!("{}; {}", self.source, self.provenance)
    }
}

#[derive(Debug, Clone, PartialEq, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct FilterModel {
    pub id: String,
    pub title: String,
    pub source: String,
    pub provenance: String,
    #[serde(default)]
    pub overrides: bool,
    pub line_impedance_ohm: Parameter,
    pub common_mode_impedance_ohm: Parameter,
    pub default_margin_db: Parameter,
    pub default_parasitic_capacitance_pf: Parameter,
    pub default_switch_node_swing_factor: Parameter,
    pub middlebrook_margin_db: Parameter,
    pub single_stage_practical_db: Parameter,
    pub two_stage_practical_db: Parameter,
    pub network_inductance_uh: Parameter,
    pub dm_source_impedance_ohm: Parameter,
    pub cm_source_impedance_ohm: Parameter,
    pub default_switch_node_rise_time_ns: Parameter,
}

impl Table for FilterModel {
    const ID: &'static str = "emc.filter-model";

    fn check(&self) -> Result<(), String> {
        let positive = [
            ("line_impedance_ohm", &self.line_impedance_ohm),
            ("common_mode_impedance_ohm", &self.common_mode_impedance_ohm),
            (
                "default_parasitic_capacitance_pf",
                &self.default_parasitic_capacitance_pf,
            ),
            (
                "default_switch_node_swing_factor",
                &self.default_switch_node_swing_factor,
            ),
            ("single_stage_practical_db", &self.single_stage_practical_db),
            ("two_stage_practical_db", &self.two_stage_practical_db),
            ("network_inductance_uh", &self.network_inductance_uh),
            ("dm_source_impedance_ohm", &self.dm_source_impedance_ohm),
            ("cm_source_impedance_ohm", &self.cm_source_impedance_ohm),
            (
                "default_switch_node_rise_time_ns",
                &self.default_switch_node_rise_time_ns,
            ),
        ];
        for (name, p) in positive {
            if !(p.value.is_finite() && p.value > 0.0) {
                return Err(format!(
                    "{name}: {} must be a finite figure above 0",
                    p.value
                ));
            }
        }
        for (name, p) in [
            ("default_margin_db", &self.default_margin_db),
            ("middlebrook_margin_db", &self.middlebrook_margin_db),
        ] {
            if !(p.value.is_finite() && (0.0..=60.0).contains(&p.value)) {
                return Err(format!("{name}: {} must be 0 to 60 dB", p.value));
            }
        }
        Ok(())
    }
}
