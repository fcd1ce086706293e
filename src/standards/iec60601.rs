//! IEC 60601-1: a barrier is a means of protection. MOPP creepage and clearance by working
//! voltage alone (pollution degree 2 and material group III fixed by the standard, no
//! overvoltage category); MOOP only at the one row the sources give; test voltages of Table 6
//! at that row. Outside what is carried the figure is refused, never guessed.

use super::{Dimensioned, ElectricStrength, Means, Standard, StandardRules, refuse_above_2000_m};
use crate::project::{Barrier, OvervoltageCategory};
use crate::spacing::{Conditions, Figure, OutOfTable, Step, show};

pub const MOPP: &str = "iec60601-1.mopp";
pub const MOOP: &str = "iec60601-1.moop";
pub const TEST_VOLTAGES: &str = "iec60601-1.test-voltages";

pub(super) fn dimension(
    t: &StandardRules,
    cond: &Conditions,
    barrier: &Barrier,
) -> Result<Dimensioned, Vec<OutOfTable>> {
    // Checked by the caller: only a functional barrier has no means, and it never gets here.
    let Some(means) = barrier.means else {
        return Err(vec![OutOfTable::new(
            "grade",
            "under IEC 60601-1 a barrier's grade is a means of protection",
        )]);
    };
    let mut refusals = Vec::new();
    if let Err(e) = refuse_above_2000_m(Standard::Iec60601, cond) {
        refusals.push(e);
    }
    if cond.pollution_degree > 2 {
        refusals.push(OutOfTable::new(
            "environment.pollution_degree",
            format!(
                "pollution degree {}: the IEC 60601-1 figures carried are for pollution degree 2: not carried for this standard",
                cond.pollution_degree
            ),
        ));
    }
    let (table_id, what) = if means.for_patient() {
        (MOPP, "patient")
    } else {
        (MOOP, "operator")
    };
    let mut head = vec![Step::new(
        None,
        format!(
            "{} means of {what} protection ({}), dimensioned by IEC 60601-1.",
            means.count(),
            means.as_str()
        ),
    )];
    if means.for_patient() {
        head.push(Step::new(
            None,
            format!(
                "MOPP: the standard fixes pollution degree 2 and material group III and uses no overvoltage category; the project's pollution degree {} and overvoltage category {} do not enter these figures.",
                cond.pollution_degree,
                cond.overvoltage_category.as_str()
            ),
        ));
    } else {
        let table = t.table(MOOP).map_err(|e| vec![e])?;
        let (max_peak, why_peak) = table.constant("max_peak_v").map_err(|e| vec![e])?;
        let (max_mains, why_mains) = table.constant("max_mains_v").map_err(|e| vec![e])?;
        let peak = barrier.peak_v();
        if peak > max_peak {
            refusals.push(OutOfTable::new(
                if barrier.working_peak_v.is_some() {
                    "working_peak_v"
                } else {
                    "working_rms_v"
                },
                format!(
                    "a peak working voltage of {} V is above {} V, where the MOOP clearance rises ({why_peak}): not carried for this standard",
                    show(peak),
                    show(max_peak)
                ),
            ));
        }
        if cond.nominal_v > max_mains {
            refusals.push(OutOfTable::new(
                "mains.nominal_v",
                format!(
                    "{} V mains is above {} V ({why_mains}): the MOOP figures for higher mains voltages are not carried for this standard",
                    show(cond.nominal_v),
                    show(max_mains)
                ),
            ));
        }
        if cond.overvoltage_category > OvervoltageCategory::II {
            refusals.push(OutOfTable::new(
                "environment.overvoltage_category",
                format!(
                    "overvoltage category {}: the MOOP figures carried are for mains of overvoltage category II: not carried for this standard",
                    cond.overvoltage_category.as_str()
                ),
            ));
        }
        head.push(Step::new(
            None,
            format!(
                "MOOP: the row carried is for pollution degree 2, material group IIIa/b, mains up to {} V and peaks up to {} V; groups I and II would allow less (conservative).",
                show(max_mains),
                show(max_peak)
            ),
        ));
    }
    let table = t.table(table_id).map_err(|e| vec![e])?;
    let n = means.count();
    let clearance = table.read(
        barrier.working_rms_v,
        &format!("clearance_{n}_mm"),
        "working_rms_v",
        &format!("Clearance, {}", means.as_str()),
    );
    let creepage = table.read(
        barrier.working_rms_v,
        &format!("creepage_{n}_mm"),
        "working_rms_v",
        &format!("Creepage, {}", means.as_str()),
    );
    let (clearance, creepage) = match (clearance, creepage) {
        (Ok(c), Ok(p)) if refusals.is_empty() => (c, p),
        (c, p) => {
            refusals.extend(c.err());
            refusals.extend(p.err());
            // The same refusal from both lookups is reported once.
            refusals.dedup_by(|a, b| a.key == b.key && a.message == b.message);
            return Err(refusals);
        }
    };
    let mut clearance_steps = head.clone();
    clearance_steps.push(clearance.step);
    clearance_steps.push(Step::new(
        None,
        format!(
            "Required clearance ({}): {} mm (up to 2000 m).",
            means.as_str(),
            show(clearance.value)
        ),
    ));
    let mut creepage_steps = head;
    creepage_steps.push(creepage.step);
    let mut creepage_mm = creepage.value;
    let mut creepage_governed_by = "creepage-table";
    if creepage_mm < clearance.value {
        creepage_mm = clearance.value;
        creepage_governed_by = "clearance";
        creepage_steps.push(Step::new(
            None,
            "Raised to the required clearance (a creepage distance is never less than its clearance; common practice).",
        ));
    }
    creepage_steps.push(Step::new(
        None,
        format!(
            "Required creepage ({}): {} mm.",
            means.as_str(),
            show(creepage_mm)
        ),
    ));
    Ok(Dimensioned {
        clearance: Figure {
            mm: clearance.value,
            steps: clearance_steps,
        },
        creepage: Figure {
            mm: creepage_mm,
            steps: creepage_steps,
        },
        method: "iec60601-1",
        clearance_governed_by: if means.for_patient() {
            "mopp-table"
        } else {
            "moop-table"
        },
        creepage_governed_by,
        rated_impulse_v: None,
        clearance_impulse_v: None,
        altitude_factor: 1.0,
        creepage_column: format!("{}_{n}", if means.for_patient() { "mopp" } else { "moop" }),
        material_group: Some("III"),
        double_parts: None,
        transient_clearance_mm: None,
        steady_state_clearance_mm: None,
        steady_state_peak_v: None,
    })
}

/// Table 6 at the one row carried (a.c. rms), by means of protection.
pub(super) fn electric_strength(t: &StandardRules, barrier: &Barrier) -> ElectricStrength {
    let mut steps = Vec::new();
    let Some(means) = barrier.means else {
        return ElectricStrength::not_carried(
            "the barrier has no means of protection".to_string(),
            steps,
        );
    };
    let column = match means {
        Means::OneMoop => "moop_1_v_rms",
        Means::TwoMoop => "moop_2_v_rms",
        Means::OneMopp => "mopp_1_v_rms",
        Means::TwoMopp => "mopp_2_v_rms",
    };
    let peak = barrier.peak_v();
    let read = t.table(TEST_VOLTAGES).and_then(|table| {
        table.read(
            peak,
            column,
            "working_peak_v",
            &format!("Electric strength test, {}", means.as_str()),
        )
    });
    match read {
        Ok(r) => {
            steps.push(r.step);
            if peak < r.up_to {
                steps.push(Step::new(
                    None,
                    "The standard's rows for lower working voltages are not carried; its test voltages rise with the working voltage (from memory), so the figure of the row carried is used (conservative).",
                ));
            }
            ElectricStrength::from_rms(
                r.value,
                format!(
                    "IEC 60601-1 Table 6, {} at working peaks up to {} V",
                    means.as_str(),
                    show(r.up_to)
                ),
                steps,
            )
        }
        Err(e) => ElectricStrength::not_carried(e.message, steps),
    }
}
