//! Reading `[emc]`, its `[[emc.prescan]]` points and `[emc.filter]` key by key, with every
//! problem located by line and key. Checks that need a rule table (the band of the limit
//! lines) come later, in `evaluate`, with the positions kept here.

use super::rules::LimitClass;
use super::{EmcSpec, FilterSpec, PrescanDetector, PrescanPoint, YArrangement};
use crate::input_limits::rule;
use schemars::JsonSchema;
use serde::Deserialize;

use crate::key;
use crate::project::{Key, RawProject, TableKey, TablesKey};
use crate::raw::{Num, Reader, TableAt, Word};

/// `[emc]`: conducted emissions on the mains port and the input filter.
#[derive(Debug, Deserialize, JsonSchema)]
#[serde(deny_unknown_fields)]
pub struct RawEmc {
    /// Conducted-emission limits on the mains port: "A" or "B" (default "B", the
    /// stricter).
    pub limit_class: Key<Word<LimitClass>>,
    /// Margin below the limit in decibels (default: from the rule book, stated as an
    /// assumption).
    pub margin_db: Key<Num<rule::MarginDb>>,
    /// Levels measured without the filter.
    pub prescan: TablesKey<RawPrescan>,
    /// The input filter as built.
    pub filter: TableKey<RawFilter>,
    /// Parasitic capacitance from the switch node to earth in picofarads.
    pub parasitic_capacitance_pf: Key<Num<rule::CapacitancePf>>,
    /// Voltage swing of the switch node in volts.
    pub switch_node_swing_v: Key<Num<rule::SwingV>>,
    /// Rise time of the switch node in nanoseconds.
    pub switch_node_rise_time_ns: Key<Num<rule::RiseNs>>,
}

/// One `[[emc.prescan]]` point.
#[derive(Debug, Deserialize, JsonSchema)]
#[serde(deny_unknown_fields)]
pub struct RawPrescan {
    /// Frequency in hertz (required).
    pub frequency_hz: Key<Num<rule::PrescanFrequencyHz>>,
    /// Measured level in dBµV (required).
    pub level_dbuv: Key<Num<rule::LevelDbuv>>,
    /// The detector it was read with (required).
    pub detector: Key<Word<PrescanDetector>>,
}

/// `[emc.filter]`.
#[derive(Debug, Deserialize, JsonSchema)]
#[serde(deny_unknown_fields)]
pub struct RawFilter {
    /// Differential-mode inductance in microhenries.
    pub dm_inductance_uh: Key<Num<rule::InductanceUh>>,
    /// Resistance of the differential-mode inductor in ohms.
    pub dm_inductor_resistance_ohm: Key<Num<rule::ResistanceOhm>>,
    /// X capacitance of the filter in microfarads.
    pub x_capacitance_uf: Key<Num<rule::CapacitanceUf>>,
    /// Damping branch resistance in ohms (with `damping_capacitance_uf`).
    pub damping_resistance_ohm: Key<Num<rule::ResistanceOhm>>,
    /// Damping branch capacitance in microfarads (with `damping_resistance_ohm`).
    pub damping_capacitance_uf: Key<Num<rule::CapacitanceUf>>,
    /// Common-mode inductance in millihenries.
    pub cm_inductance_mh: Key<Num<rule::InductanceMh>>,
    /// Y capacitance in nanofarads.
    pub y_capacitance_nf: Key<Num<rule::CapacitanceNf>>,
    /// How the Y capacitors sit (default: "each-line" for protection class I, "single"
    /// otherwise).
    pub y_arrangement: Key<Word<YArrangement>>,
}

/// Reads `[emc]`; `None` when absent or unusable (the problem is then reported).
pub fn read_emc(r: &mut Reader, root: &TableAt, raw_root: &RawProject) -> Option<EmcSpec> {
    let (t, raw_t) = r.table(root, key!(raw_root.emc))?;
    let problems_before = r.problems.len();
    let limit_class = r
        .word::<LimitClass>(&t, key!(raw_t.limit_class))
        .map(|l| l.value);
    let margin_db = r.ruled(&t, key!(raw_t.margin_db)).map(|l| l.value);
    let parasitic_capacitance_pf = r
        .ruled(&t, key!(raw_t.parasitic_capacitance_pf))
        .map(|l| l.value);
    let switch_node_swing_v = r
        .ruled(&t, key!(raw_t.switch_node_swing_v))
        .map(|l| l.value);
    let switch_node_rise_time_ns = r
        .ruled(&t, key!(raw_t.switch_node_rise_time_ns))
        .map(|l| l.value);

    let mut prescan = Vec::new();
    for (p, raw_p) in r.table_array(&t, key!(raw_t.prescan)) {
        let frequency = r.required_ruled(&p, key!(raw_p.frequency_hz));
        let level = r.required_ruled(&p, key!(raw_p.level_dbuv));
        let detector = r.required_word::<PrescanDetector>(&p, key!(raw_p.detector));
        let (Some(frequency), Some(level), Some(detector)) = (frequency, level, detector) else {
            continue;
        };
        let detector = detector.value;
        prescan.push(PrescanPoint {
            frequency_hz: frequency.value,
            level_dbuv: level.value,
            detector,
            key: [p.path.as_str(), ".frequency_hz"].concat(),
            span: frequency.span,
        });
    }

    let filter = match r.table(&t, key!(raw_t.filter)) {
        Some((f, raw_f)) => read_filter(r, &f, raw_f),
        None => FilterSpec::default(),
    };

    if r.problems.len() > problems_before {
        return None;
    }
    Some(EmcSpec {
        limit_class,
        margin_db,
        prescan,
        filter,
        parasitic_capacitance_pf,
        switch_node_swing_v,
        switch_node_rise_time_ns,
    })
}

fn read_filter(r: &mut Reader, f: &TableAt, raw_f: &RawFilter) -> FilterSpec {
    let dm_inductance_uh = r.ruled(f, key!(raw_f.dm_inductance_uh)).map(|l| l.value);
    let dm_inductor_resistance_ohm = r
        .ruled(f, key!(raw_f.dm_inductor_resistance_ohm))
        .map(|l| l.value);
    let x_capacitance_uf = r.ruled(f, key!(raw_f.x_capacitance_uf)).map(|l| l.value);
    let damping_resistance = r.ruled(f, key!(raw_f.damping_resistance_ohm));
    let damping_capacitance = r.ruled(f, key!(raw_f.damping_capacitance_uf));
    let cm_inductance_mh = r.ruled(f, key!(raw_f.cm_inductance_mh)).map(|l| l.value);
    let y_capacitance_nf = r.ruled(f, key!(raw_f.y_capacitance_nf)).map(|l| l.value);
    let y_arrangement = r
        .word::<YArrangement>(f, key!(raw_f.y_arrangement))
        .map(|l| l.value);

    // The damping branch is a resistor and a capacitor in series: both or neither.
    for (present, absent, absent_given, other) in [
        (
            &damping_resistance,
            "damping_capacitance_uf",
            raw_f.damping_capacitance_uf.is_some(),
            "damping_resistance_ohm",
        ),
        (
            &damping_capacitance,
            "damping_resistance_ohm",
            raw_f.damping_resistance_ohm.is_some(),
            "damping_capacitance_uf",
        ),
    ] {
        if let Some(p) = present
            && !absent_given
        {
            r.error_with_help(
                &p.span,
                format!("{}.{other}", f.path),
                format!("is given without {absent}; the damping branch needs both"),
                format!("add {absent}, or remove {other}"),
            );
        }
    }
    if let (Some(rd), Some(_)) = (&damping_resistance, &damping_capacitance)
        && (dm_inductance_uh.is_none() || x_capacitance_uf.is_none())
    {
        r.error_with_help(
            &rd.span,
            format!("{}.damping_resistance_ohm", f.path),
            "damps the differential-mode stage, which is not declared",
            "declare dm_inductance_uh and x_capacitance_uf as well",
        );
    }
    FilterSpec {
        dm_inductance_uh,
        dm_inductor_resistance_ohm,
        x_capacitance_uf,
        damping: match (damping_resistance, damping_capacitance) {
            (Some(rd), Some(cd)) => Some((rd.value, cd.value)),
            _ => None,
        },
        cm_inductance_mh,
        y_capacitance_nf,
        y_arrangement,
    }
}
