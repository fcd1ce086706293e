//! IEC 62368-1: clearance as the larger of procedure 1 (Table 10 by the peak working voltage,
//! with its minimums) and procedure 2 (Table 14 by the required withstand voltage, the mains
//! transient of Table 12 or the barrier's own); altitude Table 16; creepage Table 17 (general
//! columns), reinforced twice basic; electric strength the highest of Tables 25 and 27 (Table
//! 26 is not carried). Tables 11 and 18 (above 30 kHz) are not carried: such a barrier is
//! refused.

use super::{
    CreepageNotes, Dimensioned, ElectricStrength, StandardRules, overvoltage_column,
    times_reinforced_factor, with_table_creepage,
};
use crate::project::{Barrier, Grade};
use crate::rules::RuleBook;
use crate::spacing::{Conditions, Figure, OutOfTable, Step, round_up, show, tidy};

pub const TABLE_10: &str = "iec62368-1.table-10";
pub const TABLE_10_MINIMUMS: &str = "iec62368-1.table-10-minimums";
pub const TABLE_12: &str = "iec62368-1.table-12";
pub const TABLE_14: &str = "iec62368-1.table-14";
pub const TABLE_16: &str = "iec62368-1.table-16";
pub const TABLE_17: &str = "iec62368-1.table-17";
pub const TABLE_25: &str = "iec62368-1.table-25";
pub const TABLE_27: &str = "iec62368-1.table-27";

/// The required withstand voltage: the barrier's own transient, or the mains transient of
/// Table 12 by nominal voltage and overvoltage category.
fn withstand(
    t: &StandardRules,
    cond: &Conditions,
    barrier: &Barrier,
) -> Result<(f64, Step, &'static str), OutOfTable> {
    if let Some(v) = barrier.transient_v {
        return Ok((
            v,
            Step::new(
                None,
                format!(
                    "Required withstand voltage: the transient declared for this barrier (transient_v), {} V peak.",
                    show(v)
                ),
            ),
            "transient_v",
        ));
    }
    let r = t.table(TABLE_12)?.read(
        cond.nominal_v,
        overvoltage_column(cond.overvoltage_category),
        "mains.nominal_v",
        &format!(
            "Required withstand voltage = mains transient voltage (overvoltage category {})",
            cond.overvoltage_category.as_str()
        ),
    )?;
    Ok((r.value, r.step, "mains.nominal_v"))
}

fn frequency_in_range(t: &StandardRules, barrier: &Barrier) -> Result<(), OutOfTable> {
    let (max_hz, _) = t.table(TABLE_10)?.constant("max_frequency_hz")?;
    match barrier.working_frequency_hz {
        Some(f) if f > max_hz => Err(OutOfTable::new(
            "working_frequency_hz",
            format!(
                "{} Hz is above {} Hz: IEC 62368-1 Tables 11 and 18 (clearance and creepage above 30 kHz) are not carried for this standard",
                show(f),
                show(max_hz)
            ),
        )),
        _ => Ok(()),
    }
}

/// The figures behind the clearance.
struct Clearance {
    withstand_v: f64,
    /// The withstand voltage of the Table 14 row read (one row up for reinforced).
    table_v: f64,
    procedure_1_mm: f64,
    procedure_2_mm: f64,
    peak_v: f64,
    altitude_factor: f64,
    governed_by: &'static str,
}

/// Procedure 1 and procedure 2, the larger, then the altitude factor.
fn clearance(
    t: &StandardRules,
    cond: &Conditions,
    barrier: &Barrier,
    reinforced: bool,
) -> Result<(Figure, Clearance), OutOfTable> {
    let mut steps = Vec::new();
    let pd = cond.pollution_degree.clamp(1, 3);
    // Procedure 1: Table 10 by the peak working voltage.
    let peak = barrier.peak_v();
    let peak_key = if barrier.working_peak_v.is_some() {
        "working_peak_v"
    } else {
        "working_rms_v"
    };
    steps.push(Step::new(
        None,
        match barrier.working_peak_v {
            Some(p) => format!("Procedure 1: peak working voltage {} V as declared (working_peak_v).", show(p)),
            None => format!(
                "Procedure 1: peak working voltage not declared: {} V rms × √2 = {} V (sinusoidal; declare working_peak_v for another waveform).",
                show(barrier.working_rms_v),
                show(peak)
            ),
        },
    ));
    let t10 = t.table(TABLE_10)?;
    let basic = t10.read(peak, "basic_mm", peak_key, "Procedure 1, basic clearance")?;
    steps.push(basic.step);
    let mut p1 = if reinforced {
        times_reinforced_factor(t10, basic.value, &mut steps)?
    } else {
        basic.value
    };
    if barrier.field == crate::project::Field::Homogeneous {
        steps.push(Step::new(
            None,
            "The field is declared homogeneous; Table 10 is read as carried (its values are those of an inhomogeneous field: conservative).",
        ));
    }
    let minimum = t.table(TABLE_10_MINIMUMS)?.read(
        pd as f64,
        if reinforced {
            "reinforced_mm"
        } else {
            "basic_mm"
        },
        "environment.pollution_degree",
        &format!("Procedure 1 minimum, pollution degree {pd}"),
    )?;
    steps.push(minimum.step);
    if minimum.value > p1 {
        p1 = minimum.value;
        steps.push(Step::new(
            None,
            format!("Procedure 1 raised to the minimum: {} mm.", show(p1)),
        ));
    }
    // Procedure 2: Table 14 by the required withstand voltage.
    let (withstand_v, step, withstand_key) = withstand(t, cond, barrier)?;
    steps.push(step);
    let t14 = t.table(TABLE_14)?;
    let column = format!("pd{pd}_mm");
    let at = t14.read(
        withstand_v,
        &column,
        withstand_key,
        "Procedure 2, basic clearance",
    )?;
    let p2_reading = if reinforced {
        let (step_rows, why) = t14.constant("reinforced_row_step")?;
        let index = at.index + step_rows.round().max(0.0) as usize;
        if index >= t14.rows.len() {
            return Err(OutOfTable::new(
                withstand_key,
                format!(
                    "reinforced insulation at a withstand voltage of {} V peak needs the row above {} V of {}: not carried for this standard",
                    show(withstand_v),
                    show(at.up_to),
                    t14.source
                ),
            ));
        }
        steps.push(Step::new(
            Some(TABLE_14),
            format!(
                "Reinforced insulation: the row one step above the withstand voltage's row ({} V) is read ({why}).",
                show(at.up_to)
            ),
        ));
        t14.at_row(
            index,
            &column,
            t14.rows[index].up_to,
            "Procedure 2, reinforced clearance",
        )?
    } else {
        at
    };
    let table_v = p2_reading.up_to;
    steps.push(p2_reading.step);
    let p2 = p2_reading.value;
    let (mut mm, governed_by) = if p1 > p2 {
        (p1, "procedure-1")
    } else {
        (p2, "procedure-2")
    };
    steps.push(Step::new(
        None,
        format!(
            "The larger of procedure 1 ({} mm) and procedure 2 ({} mm) governs: {} mm.",
            show(p1),
            show(p2),
            show(mm)
        ),
    ));
    let altitude = t.table(TABLE_16)?.read(
        cond.altitude_m.max(0.0),
        "factor",
        "environment.altitude_m",
        &format!("Altitude {} m", show(cond.altitude_m)),
    )?;
    steps.push(altitude.step);
    let factor = altitude.value;
    if factor > 1.0 {
        let corrected = round_up(mm * factor, 0.01);
        steps.push(Step::new(
            None,
            format!(
                "{} mm × {} = {} mm, rounded up to 0.01 mm (the factor applied to the governing procedure; conservative).",
                show(mm),
                show(factor),
                show(corrected)
            ),
        ));
        mm = corrected;
    }
    Ok((
        Figure {
            mm: tidy(mm),
            steps,
        },
        Clearance {
            withstand_v,
            table_v,
            procedure_1_mm: p1,
            procedure_2_mm: p2,
            peak_v: peak,
            altitude_factor: factor,
            governed_by,
        },
    ))
}

/// What this standard's creepage table is not carried for.
const CREEPAGE_NOTES: CreepageNotes = CreepageNotes {
    printed_board: "On a printed board: the printed-wiring columns are not confirmed for IEC 62368-1, so the general columns are used (conservative).",
    interpolate: Some(
        "creepage_between_rows = \"interpolate\" is not applied to IEC 62368-1 Table 17 here: whether the standard allows it is not confirmed, so the next higher row is used (conservative).",
    ),
};

pub(super) fn dimension(
    t: &StandardRules,
    rules: &RuleBook,
    cond: &Conditions,
    barrier: &Barrier,
) -> Result<Dimensioned, Vec<OutOfTable>> {
    frequency_in_range(t, barrier).map_err(|e| vec![e])?;
    let reinforced = barrier.grade == Grade::Reinforced;
    let (d, c) = with_table_creepage(
        (t, TABLE_17, &CREEPAGE_NOTES),
        rules,
        cond,
        barrier,
        clearance(t, cond, barrier, reinforced),
    )?;
    Ok(Dimensioned {
        method: "iec62368-1",
        clearance_governed_by: c.governed_by,
        rated_impulse_v: Some(c.withstand_v),
        clearance_impulse_v: Some(c.table_v),
        altitude_factor: c.altitude_factor,
        transient_clearance_mm: Some(c.procedure_2_mm),
        steady_state_clearance_mm: Some(c.procedure_1_mm),
        steady_state_peak_v: Some(c.peak_v),
        ..d
    })
}

/// The highest of Table 25 (by the required withstand voltage) and Table 27 (temporary
/// overvoltages, for a barrier dimensioned against the mains); Table 26 is not carried.
pub(super) fn electric_strength(
    t: &StandardRules,
    cond: &Conditions,
    barrier: &Barrier,
) -> ElectricStrength {
    let mut steps = Vec::new();
    let column = if matches!(barrier.grade, Grade::Reinforced | Grade::Double) {
        "reinforced_peak_v"
    } else {
        "basic_peak_v"
    };
    let computed = (|| -> Result<(f64, String), OutOfTable> {
        let (withstand_v, step, key) = withstand(t, cond, barrier)?;
        steps.push(step);
        let t25 = t.table(TABLE_25)?.read(
            withstand_v,
            column,
            key,
            "Table 25 (by the required withstand voltage)",
        )?;
        steps.push(t25.step);
        let mut peak = t25.value;
        let mut from = format!("{TABLE_25} row up to {} V", show(t25.up_to));
        if barrier.transient_v.is_none() {
            let t27 = t.table(TABLE_27)?.read(
                cond.nominal_v,
                column,
                "mains.nominal_v",
                "Table 27 (temporary overvoltages of the mains)",
            )?;
            steps.push(t27.step);
            if t27.value > peak {
                peak = t27.value;
                from = format!("{TABLE_27} row up to {} V mains", show(t27.up_to));
            }
        } else {
            steps.push(Step::new(
                None,
                "Table 27 (temporary overvoltages of the mains) is not applied: the barrier has its own transient (transient_v), so it is taken as not connected to the mains.",
            ));
        }
        steps.push(Step::new(
            None,
            "Table 26 (by the peak working voltage) is not carried: no trustworthy reproduction was found. For a high working voltage it can exceed Tables 25 and 27: verify against a licensed copy.",
        ));
        steps.push(Step::new(
            None,
            format!(
                "The highest of the tables carried: {} V peak or d.c. ({from}).",
                show(peak)
            ),
        ));
        Ok((
            peak,
            format!("IEC 62368-1:2018 {from}; Table 26 not carried"),
        ))
    })();
    match computed {
        Ok((peak, basis)) => ElectricStrength::from_peak(peak, basis, steps),
        Err(e) => ElectricStrength::not_carried(e.message, steps),
    }
}
