//! Reading `[emc]`, its `[[emc.prescan]]` points and `[emc.filter]` key by key, with every
//! problem located by line and key. Checks that need a rule table (the band of the limit
//! lines) come later, in `evaluate`, with the positions kept here.

use super::rules::LimitClass;
use super::{EmcSpec, FilterSpec, PrescanDetector, PrescanPoint, YArrangement};
use crate::toml_read::{NumberRule, Reader, TableRef};

const EMC_KEYS: &[&str] = &[
    "limit_class",
    "margin_db",
    "prescan",
    "filter",
    "parasitic_capacitance_pf",
    "switch_node_swing_v",
    "switch_node_rise_time_ns",
];
const PRESCAN_KEYS: &[&str] = &["frequency_hz", "level_dbuv", "detector"];
const FILTER_KEYS: &[&str] = &[
    "dm_inductance_uh",
    "dm_inductor_resistance_ohm",
    "x_capacitance_uf",
    "damping_resistance_ohm",
    "damping_capacitance_uf",
    "cm_inductance_mh",
    "y_capacitance_nf",
    "y_arrangement",
];

const MARGIN_DB: NumberRule = NumberRule {
    min: 0.0,
    min_inclusive: true,
    max: 60.0,
    plausible_min: 0.0,
    plausible_max: 20.0,
    integer: false,
    expected: "a margin in dB below the limit, 0 to 60",
};

const FREQUENCY_HZ: NumberRule = NumberRule {
    min: 0.0,
    min_inclusive: false,
    max: 1e12,
    plausible_min: 0.0,
    plausible_max: 30e6,
    integer: false,
    expected: "a frequency in hertz, above 0 (the limits cover 150000 to 30000000)",
};

const LEVEL_DBUV: NumberRule = NumberRule {
    min: -100.0,
    min_inclusive: true,
    max: 250.0,
    plausible_min: 0.0,
    plausible_max: 150.0,
    integer: false,
    expected: "a level in dBuV, -100 to 250",
};

const INDUCTANCE_UH: NumberRule = NumberRule {
    min: 0.0,
    min_inclusive: false,
    max: 1e9,
    plausible_min: 0.0,
    plausible_max: 100_000.0,
    integer: false,
    expected: "an inductance in microhenries, above 0",
};

const INDUCTANCE_MH: NumberRule = NumberRule {
    min: 0.0,
    min_inclusive: false,
    max: 1e6,
    plausible_min: 0.0,
    plausible_max: 200.0,
    integer: false,
    expected: "an inductance in millihenries, above 0",
};

/// Below 1 pF no filter capacitor is meant; the corner, R0 and the damping ratio divide
/// by it.
const CAPACITANCE_UF: NumberRule = NumberRule {
    min: 1e-6,
    min_inclusive: true,
    max: 1e6,
    plausible_min: 0.0001,
    plausible_max: 100.0,
    integer: false,
    expected: "a capacitance in microfarads, above 0 (at least 0.000001, 1 pF)",
};

const CAPACITANCE_NF: NumberRule = NumberRule {
    min: 0.0,
    min_inclusive: false,
    max: 1e9,
    plausible_min: 0.001,
    plausible_max: 1_000.0,
    integer: false,
    expected: "a capacitance in nanofarads, above 0",
};

const CAPACITANCE_PF: NumberRule = NumberRule {
    min: 0.0,
    min_inclusive: false,
    max: 1e9,
    plausible_min: 0.0,
    plausible_max: 10_000.0,
    integer: false,
    expected: "a capacitance in picofarads, above 0",
};

const RESISTANCE_OHM: NumberRule = NumberRule {
    min: 0.0,
    min_inclusive: false,
    max: 1e9,
    plausible_min: 0.0,
    plausible_max: 10_000.0,
    integer: false,
    expected: "a resistance in ohms, above 0",
};

const RISE_NS: NumberRule = NumberRule {
    min: 0.0,
    min_inclusive: false,
    max: 1e6,
    plausible_min: 0.1,
    plausible_max: 10_000.0,
    integer: false,
    expected: "a rise time in nanoseconds, above 0 (20 for 20 ns)",
};

const SWING_V: NumberRule = NumberRule {
    min: 0.0,
    min_inclusive: false,
    max: 100_000.0,
    plausible_min: 0.0,
    plausible_max: 2_000.0,
    integer: false,
    expected: "a voltage swing in volts, above 0 and at most 100000",
};

/// Reads `[emc]`; `None` when absent or unusable (the problem is then reported).
pub fn read_emc(r: &mut Reader, root: &TableRef) -> Option<EmcSpec> {
    let t = r.table(root, "emc", EMC_KEYS)?;
    let problems_before = r.problems.len();
    let limit_class = r
        .word(&t, "limit_class", &LimitClass::WORDS)
        .and_then(|l| LimitClass::from_word(l.value));
    let margin_db = r.number(&t, "margin_db", &MARGIN_DB).map(|l| l.value);
    let parasitic_capacitance_pf = r
        .number(&t, "parasitic_capacitance_pf", &CAPACITANCE_PF)
        .map(|l| l.value);
    let switch_node_swing_v = r
        .number(&t, "switch_node_swing_v", &SWING_V)
        .map(|l| l.value);
    let switch_node_rise_time_ns = r
        .number(&t, "switch_node_rise_time_ns", &RISE_NS)
        .map(|l| l.value);

    let mut prescan = Vec::new();
    for p in r.table_array(&t, "prescan", PRESCAN_KEYS) {
        let frequency = r.required_number(&p, "frequency_hz", &FREQUENCY_HZ);
        let level = r.required_number(&p, "level_dbuv", &LEVEL_DBUV);
        let detector = r.required_word(&p, "detector", &PrescanDetector::WORDS);
        let (Some(frequency), Some(level), Some(detector)) = (frequency, level, detector) else {
            continue;
        };
        let Some(detector) = PrescanDetector::from_word(detector.value) else {
            continue;
        };
        prescan.push(PrescanPoint {
            frequency_hz: frequency.value,
            level_dbuv: level.value,
            detector,
            key: format!("{}.frequency_hz", p.path),
            span: frequency.span,
        });
    }

    let filter = match r.table(&t, "filter", FILTER_KEYS) {
        Some(f) => read_filter(r, &f),
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

fn read_filter(r: &mut Reader, f: &TableRef) -> FilterSpec {
    let dm_inductance_uh = r
        .number(f, "dm_inductance_uh", &INDUCTANCE_UH)
        .map(|l| l.value);
    let dm_inductor_resistance_ohm = r
        .number(f, "dm_inductor_resistance_ohm", &RESISTANCE_OHM)
        .map(|l| l.value);
    let x_capacitance_uf = r
        .number(f, "x_capacitance_uf", &CAPACITANCE_UF)
        .map(|l| l.value);
    let damping_resistance = r.number(f, "damping_resistance_ohm", &RESISTANCE_OHM);
    let damping_capacitance = r.number(f, "damping_capacitance_uf", &CAPACITANCE_UF);
    let cm_inductance_mh = r
        .number(f, "cm_inductance_mh", &INDUCTANCE_MH)
        .map(|l| l.value);
    let y_capacitance_nf = r
        .number(f, "y_capacitance_nf", &CAPACITANCE_NF)
        .map(|l| l.value);
    let y_arrangement = r
        .word(f, "y_arrangement", &YArrangement::WORDS)
        .and_then(|l| YArrangement::from_word(l.value));

    // The damping branch is a resistor and a capacitor in series: both or neither.
    for (present, absent, other) in [
        (
            &damping_resistance,
            "damping_capacitance_uf",
            "damping_resistance_ohm",
        ),
        (
            &damping_capacitance,
            "damping_resistance_ohm",
            "damping_capacitance_uf",
        ),
    ] {
        if let Some(p) = present
            && !r.has(f, absent)
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
