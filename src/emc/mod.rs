//! Input EMC filter: conducted-emission limits, the noise to beat (measured or estimated),
//! the required attenuation and filter corners, the touch-current cap on the Y capacitance,
//! the filter's interaction with the converter (Middlebrook's criterion) and damping, and a
//! chart, from `[emc]`. Every figure carries the steps that produced it.

mod chart;
mod evaluate;
pub mod explain;
pub mod filter;
pub mod limits;
pub mod noise;
mod read;
pub mod rules;

use crate::rules::Table as _;
use serde::Serialize;

use crate::area::{Area, Evaluation, ExplainItem, ProjectPart};
use crate::derivation::{Derivation, Suspicious, steps_only};
use crate::diag::{Diagnostic, Problems, Source};
use crate::power_entry::PowerEntryReport;
use crate::power_entry::TouchRules;
use crate::project::{PartKind, Project, ProtectionClass};
use crate::raw::Span;
use crate::report::Report;
use crate::rules::RuleBook;
use crate::spacing::show;

pub use evaluate::{EmcInputs, InputProblem, TouchLimit, compute};
pub use noise::{BulkCapacitor, CommonModePath, ConverterFigures, Network};
pub use read::{RawEmc, RawFilter, RawPrescan};
pub use rules::{Detector, LimitClass};

/// The detector a prescan point was read with.
#[derive(Debug, Clone, Copy, PartialEq, Eq, clap::ValueEnum)]
pub enum PrescanDetector {
    QuasiPeak,
    Average,
    /// Compared with both limits (a peak reading is never below quasi-peak or average).
    Peak,
}

/// How the Y capacitors sit: one from each mains line to earth (common-mode capacitance
/// twice the per-line value), or a single one from the rectified primary to earth or to the
/// secondary (common-mode capacitance equal to it).
#[derive(Debug, Clone, Copy, PartialEq, Eq, clap::ValueEnum)]
pub enum YArrangement {
    EachLine,
    Single,
}

crate::domain_words!(PrescanDetector, YArrangement);

impl YArrangement {
    /// Common-mode capacitance as a multiple of the per-line Y capacitance.
    pub fn common_mode_factor(self) -> f64 {
        match self {
            Self::EachLine => 2.0,
            Self::Single => 1.0,
        }
    }
}

/// One measured point from `[[emc.prescan]]`, taken without the filter.
#[derive(Debug, Clone, PartialEq)]
pub struct PrescanPoint {
    pub frequency_hz: f64,
    pub level_dbuv: f64,
    pub detector: PrescanDetector,
    /// `emc.prescan[2].frequency_hz`, for messages.
    pub key: String,
    pub span: Span,
}

/// The filter as declared in `[emc.filter]`; every part optional.
#[derive(Debug, Clone, Default, PartialEq)]
pub struct FilterSpec {
    /// Total differential-mode inductance in the current loop (both lines, including the
    /// common-mode choke's leakage inductance).
    pub dm_inductance_uh: Option<f64>,
    pub dm_inductor_resistance_ohm: Option<f64>,
    /// X capacitance on the converter side of that inductance.
    pub x_capacitance_uf: Option<f64>,
    /// Parallel damping branch across the X capacitor: (Rd in ohms, Cd in microfarads).
    pub damping: Option<(f64, f64)>,
    /// Common-mode choke, inductance of one winding.
    pub cm_inductance_mh: Option<f64>,
    /// Y capacitance from one mains line to earth or to the accessible side.
    pub y_capacitance_nf: Option<f64>,
    pub y_arrangement: Option<YArrangement>,
}

/// The checked `[emc]` table with its prescan points and filter.
#[derive(Debug, Clone, PartialEq)]
pub struct EmcSpec {
    pub limit_class: Option<LimitClass>,
    pub margin_db: Option<f64>,
    pub prescan: Vec<PrescanPoint>,
    pub filter: FilterSpec,
    pub parasitic_capacitance_pf: Option<f64>,
    pub switch_node_swing_v: Option<f64>,
    pub switch_node_rise_time_ns: Option<f64>,
}

/// One point of noise, before and after the filter, beside the limit.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct NoisePoint {
    pub frequency_hz: f64,
    /// "measured" (mode unknown), "differential" or "common" (estimated).
    pub mode: &'static str,
    /// Switching harmonic number of an estimated point.
    pub harmonic: Option<u64>,
    /// "quasi-peak", "average", "peak" (measured) or "estimate".
    pub detector: &'static str,
    /// The limit line the point was compared with ("quasi-peak" or "average").
    pub compared_with: &'static str,
    pub level_dbuv: f64,
    pub limit_dbuv: f64,
    /// level - limit + margin; at or below 0 nothing is needed here.
    pub required_attenuation_db: f64,
    /// Asymptotic attenuation of the filter used for "after" at this frequency.
    pub filter_attenuation_db: f64,
    pub after_filter_dbuv: f64,
    /// After the declared filter, at or below the limit less the margin: `pass`; above:
    /// `fail`; no declared stage for this mode: `not-judged`; a point needing no
    /// attenuation passes; `check-input` where it rests on an implausible input.
    pub verdict: crate::derivation::Verdict,
}

/// The filter as declared, with its own corners.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct DeclaredFilter {
    pub dm_inductance_uh: Option<f64>,
    pub dm_inductor_resistance_ohm: Option<f64>,
    pub x_capacitance_uf: Option<f64>,
    pub dm_corner_hz: Option<f64>,
    pub dm_characteristic_impedance_ohm: Option<f64>,
    pub damping_resistance_ohm: Option<f64>,
    pub damping_capacitance_uf: Option<f64>,
    /// n = Cd / C of the declared damping branch.
    pub damping_ratio: Option<f64>,
    /// The optimum damping resistor for that ratio.
    pub optimum_damping_resistance_ohm: Option<f64>,
    pub cm_inductance_mh: Option<f64>,
    /// Common-mode capacitance (per-line Y capacitance times 2 or 1 by arrangement).
    pub cm_capacitance_nf: Option<f64>,
    pub cm_corner_hz: Option<f64>,
}

/// A parallel R-C damping branch and the peak output impedance it gives.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct Damping {
    /// n = Cd / C.
    pub ratio: f64,
    pub capacitance_uf: f64,
    pub resistance_ohm: f64,
    pub peak_output_impedance_ohm: f64,
}

/// Middlebrook's criterion at the lowest line.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct Middlebrook {
    /// "declared" (the filter in `[emc.filter]`) or "proposed" (the X capacitor with the
    /// inductance for the required corner).
    pub filter: &'static str,
    pub inductance_uh: f64,
    pub capacitance_uf: f64,
    pub corner_hz: f64,
    pub characteristic_impedance_ohm: f64,
    pub bulk_v: f64,
    pub input_power_w: f64,
    /// |Z_in| = V^2 / P of the converter at the lowest bulk voltage.
    pub converter_input_impedance_ohm: f64,
    pub margin_db: f64,
    /// |Z_in| reduced by the margin: the filter's peak output impedance must stay below it.
    pub allowed_peak_ohm: f64,
    /// Null when the stage is lossless and undamped (the peak is unbounded).
    pub peak_output_impedance_ohm: Option<f64>,
    pub peak_at_hz: Option<f64>,
    pub satisfied: bool,
    /// Proposed when the criterion is not met: the smallest Cd whose optimum Rd meets it.
    pub proposed_damping: Option<Damping>,
}

/// A limit line as a polyline for the chart.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct LimitLineOut {
    pub detector: &'static str,
    /// (frequency in Hz, limit in dBuV) vertices.
    pub vertices: Vec<[f64; 2]>,
}

/// The derivation of each EMC topic; the JSON shows each as its list of steps, as it
/// always has. Each id is an `explain` item.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct EmcDerivation {
    #[serde(serialize_with = "steps_only")]
    pub noise: Derivation,
    #[serde(serialize_with = "steps_only")]
    pub limit: Derivation,
    #[serde(serialize_with = "steps_only")]
    pub attenuation: Derivation,
    #[serde(serialize_with = "steps_only")]
    pub dm_corner: Derivation,
    #[serde(serialize_with = "steps_only")]
    pub cm_corner: Derivation,
    #[serde(serialize_with = "steps_only")]
    pub y_capacitance: Derivation,
    #[serde(serialize_with = "steps_only")]
    pub filter: Derivation,
    #[serde(serialize_with = "steps_only")]
    pub middlebrook: Derivation,
}

impl Default for EmcDerivation {
    fn default() -> Self {
        EmcDerivation {
            noise: Derivation::new("emc.noise", "noise"),
            limit: Derivation::new("emc.limit", "limit"),
            attenuation: Derivation::new("emc.attenuation", "attenuation"),
            dm_corner: Derivation::new("emc.dm_corner", "differential-mode corner"),
            cm_corner: Derivation::new("emc.cm_corner", "common-mode corner"),
            y_capacitance: Derivation::new("emc.y_capacitance", "Y capacitance"),
            filter: Derivation::new("emc.filter", "declared filter"),
            middlebrook: Derivation::new("emc.middlebrook", "Middlebrook's criterion"),
        }
    }
}

impl EmcDerivation {
    /// Every topic, in the order the report shows them.
    pub fn all(&self) -> [&Derivation; 8] {
        [
            &self.noise,
            &self.limit,
            &self.attenuation,
            &self.dm_corner,
            &self.cm_corner,
            &self.y_capacitance,
            &self.filter,
            &self.middlebrook,
        ]
    }
}

/// The `emc` section of the report (JSON core fields in DESIGN.md, and more).
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct EmcReport {
    pub limit_class: LimitClass,
    pub margin_db: f64,
    /// The limits' band, [low, high] in Hz.
    pub band_hz: [f64; 2],
    /// "prescan", "estimate" or "none" (neither prescan points nor converter figures).
    pub noise_source: &'static str,
    /// The point that forces the lowest second-order corner.
    pub governing_frequency_hz: Option<f64>,
    pub governing_mode: Option<&'static str>,
    pub governing_detector: Option<&'static str>,
    /// The limit at the governing frequency, for the detector it was compared with.
    pub limit_dbuv: Option<f64>,
    /// Required attenuation at the governing frequency.
    pub required_attenuation_db: Option<f64>,
    /// The largest required attenuation at any point (it may sit elsewhere).
    pub max_required_attenuation_db: Option<f64>,
    pub max_required_attenuation_hz: Option<f64>,
    /// The highest differential-mode corner that meets every point with a second-order
    /// (40 dB/decade) filter.
    pub dm_corner_hz: Option<f64>,
    pub dm_governing_frequency_hz: Option<f64>,
    /// The same for a fourth-order (two-stage, 80 dB/decade) filter.
    pub dm_corner_fourth_order_hz: Option<f64>,
    /// The differential-mode inductance that puts the corner at dm_corner_hz with the
    /// declared X capacitance.
    pub dm_inductance_for_corner_uh: Option<f64>,
    pub cm_corner_hz: Option<f64>,
    pub cm_governing_frequency_hz: Option<f64>,
    pub cm_corner_fourth_order_hz: Option<f64>,
    /// The common-mode choke inductance that puts the corner at cm_corner_hz with the Y
    /// capacitance used (the declared one, capped by max_y_capacitance_nf).
    pub cm_inductance_for_corner_mh: Option<f64>,
    /// Y capacitance per line allowed by the touch-current limit at the highest mains
    /// voltage and frequency; null when the rules give no limit for the standard and part.
    pub max_y_capacitance_nf: Option<f64>,
    /// The end-product standard and kind of accessible part whose limit applies.
    pub touch_current_standard: String,
    pub touch_current_part: String,
    pub touch_current_limit_ma: Option<f64>,
    pub max_mains_v: f64,
    pub max_mains_frequency_hz: f64,
    /// Declared Y capacitance per line ([emc.filter] or the Y-capacitor parts), or null.
    pub y_capacitance_nf: Option<f64>,
    pub y_capacitance_from: Option<String>,
    /// The Y capacitance comes from the parts, whose touch current power entry judges
    /// itself (so the EMC check does not raise the same shortfall twice).
    pub y_capacitance_judged_by_power_entry: bool,
    pub y_arrangement: YArrangement,
    /// The per-line Y capacitance the common-mode corner was sized with (the declared
    /// one capped by max_y_capacitance_nf); null when neither is known.
    pub y_capacitance_used_nf: Option<f64>,
    /// The common-mode capacitance the choke was sized with: twice the per-line value for
    /// a declared "each-line" y_capacitance_nf, the sum of the Y-capacitor parts (never
    /// doubled: they are every Y capacitor), or the capped value times the arrangement.
    pub cm_capacitance_used_nf: Option<f64>,
    pub single_stage_practical_db: f64,
    pub two_stage_practical_db: f64,
    pub filter: Option<DeclaredFilter>,
    /// Whether converter figures (power, efficiency, bulk voltage, switching) were available.
    pub converter_figures_available: bool,
    /// Parts of the estimate that could not be made, in words (empty when complete).
    pub noise_gaps: Vec<String>,
    pub middlebrook: Option<Middlebrook>,
    /// Middlebrook's criterion holds for this converter (`converter.pfc_stage = true`).
    pub middlebrook_applies: bool,
    /// Why it was not applied, where a converter is declared without a PFC stage.
    pub middlebrook_not_applied: Option<String>,
    /// The verdict of each judged EMC figure, made on unrounded figures: `y_capacitance_nf`
    /// (against the touch-current cap), `dm_corner_hz` and `cm_corner_hz` (declared against
    /// required), `middlebrook`, `points` (the worst point after the declared filter).
    pub verdicts: std::collections::BTreeMap<String, crate::derivation::Verdict>,
    /// What "after the filter" means in the points.
    pub after_filter: String,
    pub points: Vec<NoisePoint>,
    /// Estimated harmonics evaluated (all inside the band); `points` shows a thinned set.
    pub harmonics_evaluated: usize,
    pub limit_lines: Vec<LimitLineOut>,
    pub assumptions: Vec<String>,
    pub derivation: EmcDerivation,
}

/// The EMC area: `[emc]`.
pub struct Emc;

impl Area for Emc {
    fn name(&self) -> &'static str {
        "emc"
    }

    /// `[emc]` with its `[[emc.prescan]]` points and `[emc.filter]`; a table present is read
    /// in full (nothing is left unevaluated).
    fn read(&self, part: &mut ProjectPart) {
        part.inputs.emc = read::read_emc(&mut part.r, &part.root, part.raw);
    }

    fn described(&self, project: &Project) -> bool {
        project.emc.is_some()
    }

    fn evaluate(&self, run: &mut Evaluation) -> Result<(), Problems> {
        run.sections.emc = evaluate(
            run.project,
            run.rules,
            run.sections.power_entry.as_ref(),
            run.source,
        )?;
        Ok(())
    }

    fn explain_items(&self, report: &Report) -> Vec<ExplainItem> {
        match &report.emc {
            Some(_) => explain::ITEMS
                .iter()
                .map(|(id, shows)| ExplainItem::new(*id, *shows))
                .collect(),
            None => Vec::new(),
        }
    }

    fn explain(&self, report: &Report, item: &str) -> Option<String> {
        explain::explain(report.emc.as_ref()?, item)
    }
}

/// The EMC figures; `None` when the project has no `[emc]`.
pub fn evaluate(
    project: &Project,
    rules: &RuleBook,
    power_entry: Option<&PowerEntryReport>,
    source: &Source,
) -> Result<Option<EmcReport>, Problems> {
    let Some(spec) = &project.emc else {
        return Ok(None);
    };
    let inputs = gather(project, rules, power_entry, spec);
    compute(&inputs, rules).map(Some).map_err(|problems| {
        Problems(
            problems
                .into_iter()
                .map(|p| {
                    let d = match &p.span {
                        Some(span) => source.diag(span, p.message),
                        None => Diagnostic::new(&source.name, p.message),
                    };
                    d.with_key(p.key)
                })
                .collect(),
        )
    })
}

/// The plain inputs of the EMC evaluation, from the project and power entry: the mains
/// range and touch-current limit (power entry's tables), the converter and bulk capacitor
/// (`[converter]`, `[input]`), and the Y-capacitor parts.
fn gather(
    project: &Project,
    rules: &RuleBook,
    power_entry: Option<&PowerEntryReport>,
    spec: &EmcSpec,
) -> EmcInputs {
    let mut assumptions = Vec::new();
    let mains_defaults = rules.table::<crate::power_entry::tables::MainsDefaults>();
    let (max_mains_v, max_mains_frequency_hz) = match power_entry {
        // Power entry has settled the range (and listed its own defaults).
        Some(pe) => (pe.mains.max_v, pe.mains.max_frequency_hz),
        None => {
            let v = match project.mains.max_v {
                Some(v) => v,
                None => {
                    let v = project.mains.nominal_v * (1.0 + mains_defaults.tolerance.value);
                    assumptions.push(format!(
                        "Highest mains voltage {} V: nominal {} V + {} % (max_v not stated in the mains table; {}, rule {}).",
                        show(v),
                        show(project.mains.nominal_v),
                        show(mains_defaults.tolerance.value * 100.0),
                        mains_defaults.tolerance.source,
                        mains_defaults.id
                    ));
                    v
                }
            };
            let f = match project.mains.frequency_hz {
                Some(f) => f,
                None => {
                    let f = mains_defaults.high_frequency_hz.value;
                    assumptions.push(format!(
                        "Highest mains frequency {} Hz (frequency_hz not stated in the mains table; {}, rule {}).",
                        show(f),
                        mains_defaults.high_frequency_hz.source,
                        mains_defaults.id
                    ));
                    f
                }
            };
            (v, f)
        }
    };

    let touch = rules.table::<crate::power_entry::tables::TouchRules>();
    let named = project
        .input
        .as_ref()
        .and_then(|i| i.end_product_standard.as_ref())
        .map(|l| l.value.clone())
        .filter(|id| touch.standard(id).is_some());
    let standard = named.unwrap_or_else(|| touch.default_standard.clone());
    let part = match project.design.protection_class {
        ProtectionClass::I => {
            let hand_held = project.input.as_ref().and_then(|i| i.hand_held);
            if hand_held.is_none() {
                assumptions.push(
                    "Class I, not hand-held (input.hand_held not given): the touch-current limit for earthed parts other than hand-held caps the Y capacitance."
                        .to_string(),
                );
            }
            if hand_held == Some(true) {
                "earthed-hand-held"
            } else {
                "earthed"
            }
        }
        ProtectionClass::II | ProtectionClass::III => "not-earthed",
    };
    let touch_limit = touch.limit(&standard, part).map(|l| TouchLimit {
        limit_ma: l.limit_ma,
        standard: standard.clone(),
        standard_title: touch
            .standard(&standard)
            .map(|s| s.title.clone())
            .unwrap_or_else(|| standard.clone()),
        part: part.to_string(),
        source: l.source.clone(),
        rule: TouchRules::ID.to_string(),
    });

    let y_parts: Vec<(String, f64)> = project
        .parts
        .iter()
        .filter(|p| p.kind == PartKind::YCapacitor)
        .filter_map(|p| {
            p.ratings.capacitance_nf.map(|c| {
                (
                    p.reference.clone(),
                    c / f64::from(p.ratings.count_in_series.max(1)),
                )
            })
        })
        .collect();

    let converter = project.converter.as_ref().map(|c| {
        let valley = power_entry.and_then(|pe| pe.bulk_valley_v);
        let bulk_v = match valley {
            Some(v) if v < c.min_bulk_v => v,
            _ => c.min_bulk_v,
        };
        ConverterFigures {
            output_w: c.output_w,
            efficiency: c.efficiency,
            bulk_v,
            switching_hz: c.switching_hz,
            max_duty: c.max_duty,
        }
    });
    let bulk = project.input.as_ref().map(|i| BulkCapacitor {
        capacitance_uf: i.bulk_capacitance_uf,
        esr_ohm: i.series_resistance_ohm,
    });
    if converter.is_some() && bulk.is_some() && spec.prescan.is_empty() {
        assumptions.push(
            "Bulk capacitor ESR taken as the input's series_resistance_ohm (line, bridge and ESR together): an upper bound, which over-estimates the differential-mode noise."
                .to_string(),
        );
    }
    EmcInputs {
        spec: spec.clone(),
        protection_class: project.design.protection_class,
        max_mains_v,
        max_mains_frequency_hz,
        mains_from_power_entry: power_entry.is_some(),
        touch_limit,
        touch_standard: standard,
        touch_part: part.to_string(),
        y_parts_judged_by_power_entry: !y_parts.is_empty()
            && power_entry.is_some_and(|pe| {
                y_parts.iter().all(|(reference, _)| {
                    pe.touch
                        .iter()
                        .any(|t| t.capacitors.iter().any(|c| &c.part == reference))
                })
            }),
        y_parts,
        input_x_capacitance_uf: project.input.as_ref().and_then(|i| i.x_capacitance_uf),
        converter,
        bulk,
        assumptions,
        pfc_stage: project.converter.as_ref().is_some_and(|c| c.pfc_stage),
        min_mains_v: match power_entry {
            Some(pe) => pe.mains.min_v,
            None => project
                .mains
                .min_v
                .unwrap_or(project.mains.nominal_v * (1.0 - mains_defaults.tolerance.value)),
        },
        suspicious: Suspicious::of(&project.warnings),
    }
}

/// The SVG chart for the HTML report: limit lines and the noise before and after the filter.
pub fn chart_svg(report: &EmcReport) -> Option<String> {
    chart::svg(report)
}

/// Whether `chart_svg` gives a chart for the report, decided without drawing it.
pub fn has_chart(report: &EmcReport) -> bool {
    chart::drawable(report)
}

/// Text for `gapwarden explain` about an EMC item, if `item` names one.
pub fn explain(report: &EmcReport, item: &str) -> Option<String> {
    explain::explain(report, item)
}
