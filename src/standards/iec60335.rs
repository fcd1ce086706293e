//! IEC 60335-1: rated impulse voltage Table 15, clearance Table 16 (reinforced: the next
//! higher impulse voltage), creepage Table 17 (general columns; reinforced twice basic), the
//! electric strength test of clause 16.3 at the one row carried. The tables follow
//! IEC 60664-1 (from memory); IEC 60664-1 Table F.8 (steady-state peaks) is added as a
//! conservative floor, since whether IEC 60335-1 requires it is not carried. Table 18
//! (functional insulation) is not carried.

use super::{
    CreepageNotes, Dimensioned, ElectricStrength, Standard, StandardRules, overvoltage_column,
    refuse_above_2000_m, with_table_creepage,
};
use crate::project::{Barrier, Grade};
use crate::rules::RuleBook;
use crate::spacing::{BarrierResult, Conditions, Figure, OutOfTable, Step, show, tidy};

pub const TABLE_15: &str = "iec60335-1.table-15";
pub const TABLE_16: &str = "iec60335-1.table-16";
pub const TABLE_17: &str = "iec60335-1.table-17";
pub const TEST_VOLTAGES: &str = "iec60335-1.test-voltages";

fn clearance(
    t: &StandardRules,
    cond: &Conditions,
    barrier: &Barrier,
    reinforced: bool,
    basics: &BarrierResult,
) -> Result<(Figure, f64, f64, f64, &'static str), OutOfTable> {
    refuse_above_2000_m(Standard::Iec60335, cond)?;
    let mut steps = Vec::new();
    let (impulse_v, key) = match barrier.transient_v {
        Some(v) => {
            steps.push(Step::new(
                None,
                format!(
                    "Transient overvoltage declared for this barrier (transient_v): {} V, used instead of the rated impulse voltage of Table 15.",
                    show(v)
                ),
            ));
            (v, "transient_v")
        }
        None => {
            let r = t.table(TABLE_15)?.read(
                cond.nominal_v,
                overvoltage_column(cond.overvoltage_category),
                "mains.nominal_v",
                &format!(
                    "Rated impulse voltage (overvoltage category {})",
                    cond.overvoltage_category.as_str()
                ),
            )?;
            steps.push(r.step);
            (r.value, "mains.nominal_v")
        }
    };
    let pd = cond.pollution_degree.clamp(1, 3);
    let column = format!("pd{pd}_mm");
    let t16 = t.table(TABLE_16)?;
    let at = t16.read(impulse_v, &column, key, "Clearance, basic")?;
    let reading = if reinforced {
        let (step_rows, why) = t16.constant("reinforced_row_step")?;
        let index = at.index + step_rows.round().max(0.0) as usize;
        if index >= t16.rows.len() {
            return Err(OutOfTable::new(
                key,
                format!(
                    "reinforced insulation at a rated impulse voltage of {} V needs the row above {} V of {}: not carried for this standard",
                    show(impulse_v),
                    show(at.up_to),
                    t16.source
                ),
            ));
        }
        steps.push(Step::new(
            Some(TABLE_16),
            format!(
                "Reinforced insulation: the row of the next higher rated impulse voltage above {} V is read ({why}).",
                show(at.up_to)
            ),
        ));
        let clearance_impulse_v = t16.rows[index].up_to;
        (
            t16.at_row(index, &column, clearance_impulse_v, "Clearance, reinforced")?,
            clearance_impulse_v,
        )
    } else {
        let up_to = at.up_to;
        (at, up_to)
    };
    let (reading, clearance_impulse_v) = reading;
    if barrier.field == crate::project::Field::Homogeneous {
        steps.push(Step::new(
            None,
            "The field is declared homogeneous; Table 16 is read as carried (inhomogeneous-field values: conservative).",
        ));
    }
    steps.push(reading.step);
    let table_mm = reading.value;
    let mut mm = table_mm;
    let mut governed_by = "transient";
    // The basics' IEC 60664-1 Table F.8 figure, at the same grade (160 % of the peak for
    // reinforced), as a floor.
    let steady = basics.steady_state_clearance_mm.unwrap_or(0.0);
    steps.push(Step::new(
        None,
        format!(
            "Steady-state or recurring peak: IEC 60664-1 Table F.8 gives {} mm{} (confirmed for IEC 60664-1); whether IEC 60335-1 requires it is not carried, so it is applied as a floor (conservative).",
            show(steady),
            basics
                .steady_state_peak_v
                .map(|v| format!(" at {} V", show(v)))
                .unwrap_or_default()
        ),
    ));
    if steady > mm {
        mm = steady;
        governed_by = "steady-state";
    }
    steps.push(Step::new(
        None,
        format!(
            "The larger governs: {} mm (Table 16 {} mm, Table F.8 {} mm); up to 2000 m.",
            show(mm),
            show(table_mm),
            show(steady)
        ),
    ));
    Ok((
        Figure {
            mm: tidy(mm),
            steps,
        },
        impulse_v,
        clearance_impulse_v,
        table_mm,
        governed_by,
    ))
}

/// What this standard's creepage table is not carried for.
const CREEPAGE_NOTES: CreepageNotes = CreepageNotes {
    printed_board: "On a printed board: IEC 60335-1 Table 17 is carried with its general columns only; they are used on boards too (conservative).",
    interpolate: None,
};

pub(super) fn dimension(
    t: &StandardRules,
    rules: &RuleBook,
    cond: &Conditions,
    barrier: &Barrier,
    basics: &BarrierResult,
) -> Result<Dimensioned, Vec<OutOfTable>> {
    let reinforced = barrier.grade == Grade::Reinforced;
    let (d, (impulse_v, clearance_impulse_v, table_mm, governed_by)) = with_table_creepage(
        (t, TABLE_17, &CREEPAGE_NOTES),
        rules,
        cond,
        barrier,
        clearance(t, cond, barrier, reinforced, basics)
            .map(|(figure, impulse, at, table_mm, by)| (figure, (impulse, at, table_mm, by))),
    )?;
    Ok(Dimensioned {
        method: "iec60335-1",
        clearance_governed_by: governed_by,
        rated_impulse_v: Some(impulse_v),
        clearance_impulse_v: Some(clearance_impulse_v),
        altitude_factor: 1.0,
        transient_clearance_mm: Some(table_mm),
        steady_state_clearance_mm: basics.steady_state_clearance_mm,
        steady_state_peak_v: basics.steady_state_peak_v,
        ..d
    })
}

/// Clause 16.3 at the one row carried, by grade (double takes the reinforced figure).
pub(super) fn electric_strength(t: &StandardRules, barrier: &Barrier) -> ElectricStrength {
    let mut steps = Vec::new();
    let column = match barrier.grade {
        Grade::Supplementary => "supplementary_v_rms",
        Grade::Reinforced | Grade::Double => "reinforced_v_rms",
        _ => "basic_v_rms",
    };
    let read = t.table(TEST_VOLTAGES).and_then(|table| {
        table.read(
            barrier.working_rms_v,
            column,
            "working_rms_v",
            &format!("Electric strength test, {}", barrier.grade.as_str()),
        )
    });
    match read {
        Ok(r) => {
            steps.push(r.step);
            if barrier.working_rms_v < r.up_to {
                steps.push(Step::new(
                    None,
                    "The standard's rows for lower voltages are not carried; its test voltages rise with the voltage (from memory), so the figure of the row carried is used (conservative).",
                ));
            }
            ElectricStrength::from_rms(
                r.value,
                format!(
                    "IEC 60335-1 clause 16.3 Table 7, {} up to {} V (from memory)",
                    barrier.grade.as_str(),
                    show(r.up_to)
                ),
                steps,
            )
        }
        Err(e) => ElectricStrength::not_carried(e.message, steps),
    }
}
