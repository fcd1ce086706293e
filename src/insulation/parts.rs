//! Parts that bridge a barrier: for each (barrier, part) pair, the part's declared ratings
//! beside what the barrier needs, looked up from the rule tables. The checks in
//! `rules/checks/part.toml` compare them.

use crate::rules::Table as _;
use serde::Serialize;

use crate::project::{Barrier, Grade, Part, PartKind, Project};
use crate::rules::{CapacitorSubclasses, EPS, RuleBook, TestVoltages, ThermalClasses};
use crate::spacing::{BarrierResult, Step, show};

#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct BridgeResult {
    pub barrier: String,
    pub part: String,
    pub kind: PartKind,
    pub grade: Grade,
    /// Under IEC 60601-1: the barrier's means of protection ("2-mopp", ...).
    pub means_of_protection: Option<&'static str>,
    pub working_rms_v: f64,
    /// Declared working peak, or the rms value times sqrt(2).
    pub working_peak_v: f64,
    /// Either side of the barrier is an accessible circuit.
    pub to_accessible: bool,
    pub required_clearance_mm: f64,
    pub required_creepage_mm: f64,
    pub subclass: Option<String>,
    pub count_in_series: u32,
    pub rated_ac_v: Option<f64>,
    pub capacitance_nf: Option<f64>,
    /// Grades the capacitor subclass may bridge (from the subclass table).
    pub subclass_bridges: Vec<String>,
    pub subclass_allowed: bool,
    /// Basic-rated capacitors in series accepted across reinforced or double insulation.
    pub series_accepted: bool,
    /// Those capacitors in series under a named end-product standard: the sources carried
    /// do not prove that they withstand the barrier's electric strength test, so the lab's
    /// test decides (a warning; `crate::standards::series_capacitors_test_decides`).
    pub series_test_decides: bool,
    /// The standard the barrier is judged against ("iec60664-1" for the basics).
    pub standard: &'static str,
    /// The barrier's electric strength test as a.c. rms and as peak or d.c. volts, and where
    /// it comes from (null where no test applies or the standard's table is not carried).
    pub barrier_test_v_rms: Option<f64>,
    pub barrier_test_v_dc: Option<f64>,
    pub barrier_test_v_basis: String,
    pub isolation_test_v_rms: Option<f64>,
    /// Electric strength test voltage the barrier's grade needs; null for functional
    /// insulation or above the table.
    pub required_test_v_rms: Option<f64>,
    /// Where the test voltage comes from: the table row, or (above the table) the
    /// end-product standard that provides it; null where no test applies.
    pub required_test_v_from: Option<String>,
    pub external_clearance_mm: Option<f64>,
    pub external_creepage_mm: Option<f64>,
    pub distance_through_insulation_mm: Option<f64>,
    pub thin_layer_rated: bool,
    pub min_distance_through_insulation_mm: f64,
    pub insulation_system: Option<String>,
    pub tape_layers: Option<u32>,
    pub min_tape_layers: u32,
    pub margin_mm: Option<f64>,
    pub thermal_class: Option<String>,
    pub thermal_class_max_c: Option<f64>,
    pub hot_spot_c: Option<f64>,
    /// Explained as the part's reference; the JSON shows its steps, as it always has.
    #[serde(serialize_with = "crate::derivation::steps_only")]
    pub derivation: crate::derivation::Derivation,
}

/// Every part listed in a barrier's `bridged_by`, set beside that barrier.
pub fn bridges(
    rules: &RuleBook,
    project: &Project,
    results: &[BarrierResult],
) -> Vec<BridgeResult> {
    // Looked up by name once, so that a large design costs no more than its size.
    let parts: std::collections::HashMap<&str, &Part> = project
        .parts
        .iter()
        .map(|p| (p.reference.as_str(), p))
        .collect();
    let accessible: std::collections::HashSet<&str> = project
        .circuits
        .iter()
        .filter(|c| c.accessible)
        .map(|c| c.id.as_str())
        .collect();
    let mut out = Vec::new();
    for (barrier, result) in project.barriers.iter().zip(results) {
        let to_accessible = barrier
            .between
            .iter()
            .any(|id| accessible.contains(id.as_str()));
        for reference in &barrier.bridged_by {
            if let Some(part) = parts.get(reference.as_str()) {
                out.push(bridge(rules, barrier, result, part, to_accessible));
            }
        }
    }
    out
}

fn bridge(
    rules: &RuleBook,
    barrier: &Barrier,
    result: &BarrierResult,
    part: &Part,
    to_accessible: bool,
) -> BridgeResult {
    let r = &part.ratings;
    let mut derivation = Vec::new();
    let working_peak_v = barrier.peak_v();
    let (subclass_bridges, mut subclass_allowed, mut series_accepted) = capacitor_fit(
        rules.table::<crate::rules::CapacitorSubclasses>(),
        r.subclass.as_deref(),
        r.count_in_series,
        barrier.grade,
        &mut derivation,
    );
    if let Some(ok) = crate::standards::two_mopp_capacitor(
        barrier.means,
        part.kind,
        r.subclass.as_deref(),
        r.count_in_series,
        &mut derivation,
    ) {
        subclass_allowed = ok;
        series_accepted = false;
    }
    let entry = r.subclass.as_deref().and_then(|s| {
        rules
            .table::<crate::rules::CapacitorSubclasses>()
            .subclasses
            .iter()
            .find(|e| e.subclass == s)
    });
    let series_test_decides = crate::standards::series_capacitors_test_decides(
        result,
        series_accepted,
        entry.map(|e| {
            (
                e.subclass.as_str(),
                e.impulse_test_v,
                rules
                    .table::<crate::rules::CapacitorSubclasses>()
                    .source
                    .as_str(),
            )
        }),
        r.count_in_series,
        &mut derivation,
    );
    let (required_test_v_rms, required_test_v_from) = match part.kind {
        // A named end-product standard sets the barrier's test voltage (crate::standards).
        PartKind::Optocoupler | PartKind::DigitalIsolator if result.standard != "iec60664-1" => {
            derivation.extend(result.derivation.electric_strength.iter().cloned());
            (
                result.test_v_rms,
                (result.test_v_state != "not-applicable").then(|| result.test_v_basis.clone()),
            )
        }
        PartKind::Optocoupler | PartKind::DigitalIsolator => test_voltage(
            rules.table::<crate::rules::TestVoltages>(),
            barrier.grade,
            working_peak_v,
            &mut derivation,
        ),
        _ => (None, None),
    };
    let thermal_class_max_c = r.thermal_class.as_deref().and_then(|c| {
        thermal_limit(
            rules.table::<crate::rules::ThermalClasses>(),
            c,
            &mut derivation,
        )
    });
    BridgeResult {
        barrier: barrier.id.clone(),
        part: part.reference.clone(),
        kind: part.kind,
        grade: barrier.grade,
        means_of_protection: barrier.means.map(crate::standards::Means::as_str),
        working_rms_v: barrier.working_rms_v,
        working_peak_v,
        to_accessible,
        required_clearance_mm: result.required_clearance_mm,
        required_creepage_mm: result.required_creepage_mm,
        subclass: r.subclass.clone(),
        count_in_series: r.count_in_series,
        rated_ac_v: r.rated_ac_v,
        capacitance_nf: r.capacitance_nf,
        subclass_bridges,
        subclass_allowed,
        series_accepted,
        series_test_decides,
        standard: result.standard,
        barrier_test_v_rms: result.test_v_rms,
        barrier_test_v_dc: result.test_v_dc,
        barrier_test_v_basis: result.test_v_basis.clone(),
        isolation_test_v_rms: r.isolation_test_v_rms,
        required_test_v_rms,
        required_test_v_from,
        external_clearance_mm: r.external_clearance_mm,
        external_creepage_mm: r.external_creepage_mm,
        distance_through_insulation_mm: r.distance_through_insulation_mm,
        thin_layer_rated: r.thin_layer_rated,
        min_distance_through_insulation_mm: rules
            .table::<crate::rules::SolidInsulation>()
            .min_distance_through_insulation_mm,
        insulation_system: r.insulation_system.clone(),
        tape_layers: r.tape_layers,
        min_tape_layers: rules
            .table::<crate::rules::SolidInsulation>()
            .min_tape_layers
            .get(barrier.grade)
            .round() as u32,
        margin_mm: r.margin_mm,
        thermal_class: r.thermal_class.clone(),
        thermal_class_max_c,
        hot_spot_c: r.hot_spot_c,
        derivation: crate::derivation::Derivation {
            steps: derivation,
            ..crate::derivation::Derivation::new(
                part.reference.clone(),
                format!("{} across {}", part.reference, barrier.id),
            )
        },
    }
}

/// Which grades a capacitor subclass may bridge, and whether this barrier is one of them.
fn capacitor_fit(
    table: &CapacitorSubclasses,
    subclass: Option<&str>,
    count_in_series: u32,
    grade: Grade,
    steps: &mut Vec<Step>,
) -> (Vec<String>, bool, bool) {
    let Some(entry) = subclass.and_then(|s| table.subclasses.iter().find(|e| e.subclass == s))
    else {
        return (Vec::new(), false, false);
    };
    let bridges = entry.bridges.clone();
    let allowed = bridges.iter().any(|g| g == grade.as_str());
    let basic_rated = bridges.iter().any(|g| g == "basic");
    let series_accepted = !allowed
        && basic_rated
        && matches!(grade, Grade::Reinforced | Grade::Double)
        && count_in_series >= table.series_count_for_reinforced;
    steps.push(Step {
        rule: Some(CapacitorSubclasses::ID.to_string()),
        text: format!(
            "{} may bridge: {} ({}){}.",
            entry.subclass,
            if bridges.is_empty() { "no insulation".to_string() } else { bridges.join(", ") },
            table.source,
            if series_accepted {
                format!("; {count_in_series} in series across {} insulation: accepted as common practice", grade.as_str())
            } else {
                String::new()
            }
        ),
    });
    (bridges, allowed || series_accepted, series_accepted)
}

/// Where the test voltage comes from above the test-voltage table's last row, in words.
pub fn beyond_test_table(table: &TestVoltages) -> String {
    table
        .above_last_row
        .clone()
        .unwrap_or_else(|| "the end-product standard that applies to the product".to_string())
}

/// Electric strength test voltage for a grade at a working peak, and where it comes from;
/// never beyond the table: above it the end-product standard is named instead.
fn test_voltage(
    table: &TestVoltages,
    grade: Grade,
    peak_v: f64,
    steps: &mut Vec<Step>,
) -> (Option<f64>, Option<String>) {
    if grade == Grade::Functional {
        return (None, None);
    }
    let Some(row) = table.rows.iter().find(|r| r.up_to_peak_v >= peak_v - EPS) else {
        let from = beyond_test_table(table);
        steps.push(Step {
            rule: Some(TestVoltages::ID.to_string()),
            text: format!(
                "Working peak {} V is above the last row of {} (up to {} V peak): the test voltage comes from {from}; not computed here (the table is never extrapolated).",
                crate::text::apart(
                    peak_v,
                    &table.rows.last().map(|r| r.up_to_peak_v).into_iter().collect::<Vec<_>>(),
                    show
                ),
                table.source,
                table.rows.last().map(|r| show(r.up_to_peak_v)).unwrap_or_default()
            ),
        });
        return (None, Some(from));
    };
    let reinforced = matches!(grade, Grade::Reinforced | Grade::Double);
    let v = if reinforced {
        row.reinforced_v_rms
    } else {
        row.basic_v_rms
    };
    steps.push(Step {
        rule: Some(TestVoltages::ID.to_string()),
        text: format!(
            "Electric strength test for {} insulation at {} V peak (row up to {} V peak): {} V rms ({}).",
            grade.as_str(),
            show(peak_v),
            show(row.up_to_peak_v),
            show(v),
            table.source
        ),
    });
    (
        Some(v),
        Some(format!(
            "{}, row up to {} V peak",
            table.source,
            show(row.up_to_peak_v)
        )),
    )
}

fn thermal_limit(table: &ThermalClasses, class: &str, steps: &mut Vec<Step>) -> Option<f64> {
    let entry = table.classes.iter().find(|c| c.class == class)?;
    steps.push(Step {
        rule: Some(ThermalClasses::ID.to_string()),
        text: format!(
            "Thermal class {class}: {} °C ({}).",
            show(entry.max_c),
            table.source
        ),
    });
    Some(entry.max_c)
}
