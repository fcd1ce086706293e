//! The horizontal basics (IEC 60664-1): the distances are the `spacing` module's own; the
//! electric strength test is the shipped IEC 60950-1 Table 5B (withdrawn) up to its last
//! row, and not carried above it: IEC 60664-1 sets no product test voltage, the end-product
//! standard does.

use super::ElectricStrength;
use crate::project::{Barrier, Grade};
use crate::rules::{EPS, RuleBook, Table, TestVoltages};
use crate::spacing::{Step, show};

pub(super) fn electric_strength(rules: &RuleBook, barrier: &Barrier) -> ElectricStrength {
    let table = rules.table::<crate::rules::TestVoltages>();
    let peak = barrier.peak_v();
    let mut steps = vec![Step::new(
        None,
        "IEC 60664-1 sets no electric strength test for a product: the shipped table of a withdrawn end-product standard stands in for one until [design] standard names the standard the lab applies.",
    )];
    let Some(row) = table.rows.iter().find(|r| r.up_to_peak_v >= peak - EPS) else {
        let last = table.rows.last().map(|r| r.up_to_peak_v).unwrap_or(0.0);
        return ElectricStrength::not_carried(
            format!(
                "a working peak of {} V is above the last row of {} (up to {} V peak); name the end-product standard ([design] standard) to get its test voltage",
                crate::text::apart(peak, &[last], show),
                table.source,
                show(last)
            ),
            steps,
        );
    };
    let reinforced = matches!(barrier.grade, Grade::Reinforced | Grade::Double);
    let v = if reinforced {
        row.reinforced_v_rms
    } else {
        row.basic_v_rms
    };
    steps.push(Step::new(
        Some(TestVoltages::ID),
        format!(
            "Electric strength test for {} insulation at {} V peak (row up to {} V peak): {} V rms ({}; {}).",
            barrier.grade.as_str(),
            show(peak),
            show(row.up_to_peak_v),
            show(v),
            table.source,
            table.provenance
        ),
    ));
    ElectricStrength::from_rms(
        v,
        format!(
            "{}, row up to {} V peak",
            table.source,
            show(row.up_to_peak_v)
        ),
        steps,
    )
}
