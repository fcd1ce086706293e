//! Reading `[emc]`, its `[[emc.prescan]]` points and `[emc.filter]` key by key, with every
//! problem located by line and key. Checks that need a rule table (the band of the limit
//! lines) come later, in `evaluate`, with the positions kept here.

use super::rules::LimitClass;
use super::{EmcSpec, FilterSpec, PrescanDetector, PrescanPoint, YArrangement};
use crate::input_limits::{
    CAPACITANCE_NF, CAPACITANCE_PF, CAPACITANCE_UF, INDUCTANCE_MH, INDUCTANCE_UH, LEVEL_DBUV,
    MARGIN_DB, PRESCAN_FREQUENCY_HZ, RESISTANCE_OHM, RISE_NS, SWING_V,
};
use crate::toml_read::{Reader, TableRef};

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

/// Reads `[emc]`; `None` when absent or unusable (the problem is then reported).
pub fn read_emc(r: &mut Reader, root: &TableRef) -> Option<EmcSpec> {
    let t = r.table(root, "emc", EMC_KEYS)?;
    let problems_before = r.problems.len();
    let limit_class = r.word::<LimitClass>(&t, "limit_class").map(|l| l.value);
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
        let frequency = r.required_number(&p, "frequency_hz", &PRESCAN_FREQUENCY_HZ);
        let level = r.required_number(&p, "level_dbuv", &LEVEL_DBUV);
        let detector = r.required_word::<PrescanDetector>(&p, "detector");
        let (Some(frequency), Some(level), Some(detector)) = (frequency, level, detector) else {
            continue;
        };
        let detector = detector.value;
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
    let y_arrangement = r.word::<YArrangement>(f, "y_arrangement").map(|l| l.value);

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
