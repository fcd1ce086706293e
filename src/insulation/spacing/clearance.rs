//! Required clearance: the rated impulse voltage (Table F.1 or a declared transient), the
//! step up for reinforced insulation, Table F.2 by field case (the transient requirement),
//! Table F.8 at the steady-state or recurring peak (the steady-state requirement), the
//! larger of the two, the pollution-degree minimum and the altitude correction.

use super::{Conditions, Figure, OutOfTable, Step, round_up, show, tidy};
use crate::project::{Barrier, BetweenRows, Field, Grade};
use crate::rules::Table as _;
use crate::rules::{
    AltitudeTable, ClearanceTable, EPS, ImpulseTable, ReinforcedRule, RuleBook,
    SteadyStateClearanceTable,
};

pub struct Clearance {
    pub figure: Figure,
    pub rated_impulse_v: f64,
    pub clearance_impulse_v: f64,
    pub altitude_factor: f64,
    /// Table F.2 at the (stepped-up) impulse voltage, before minimums and altitude.
    pub transient_mm: f64,
    /// Table F.8 at the steady-state peak (160 % of it for reinforced).
    pub steady_state_mm: f64,
    /// The voltage at which Table F.8 was read.
    pub steady_state_peak_v: f64,
    /// "transient", "steady-state" or "pollution-degree-minimum".
    pub governed_by: &'static str,
}

/// Rated impulse voltage from the nominal supply voltage and overvoltage category (F.1).
pub fn rated_impulse(table: &ImpulseTable, cond: &Conditions) -> Result<(f64, Step), OutOfTable> {
    let (first, last) = match (table.rows.first(), table.rows.last()) {
        (Some(f), Some(l)) => (f.up_to_v, l.up_to_v),
        _ => {
            return Err(OutOfTable::new(
                "mains.nominal_v",
                "the impulse table has no rows",
            ));
        }
    };
    let Some(row) = table
        .rows
        .iter()
        .find(|r| r.up_to_v >= cond.nominal_v - EPS)
    else {
        return Err(OutOfTable::new(
            "mains.nominal_v",
            format!(
                "{} V is above the last row of {} (supply systems up to {} V, rows from {} V); the tool does not extrapolate",
                crate::text::apart(cond.nominal_v, &[first, last], show),
                table.source,
                show(last),
                show(first)
            ),
        ));
    };
    let category = cond.overvoltage_category;
    let v = row.by_category(category as usize);
    let provenance = if row.confirmed {
        "row confirmed against a reproduction"
    } else {
        "row from memory"
    };
    Ok((
        v,
        Step::new(
            Some(ImpulseTable::ID),
            format!(
                "Rated impulse voltage: {} V nominal falls in the row \"up to {} V\", overvoltage category {}: {} V ({}, {provenance}).",
                show(cond.nominal_v),
                show(row.up_to_v),
                category.as_str(),
                show(v),
                table.source
            ),
        ),
    ))
}

/// Reinforced insulation: one step higher in the preferred series, or 160 % off the series.
///
/// Off the series, 160 % is held between the steps of the preferred values on either side:
/// taken alone, 160 % of a value just below a preferred one would exceed the step of that
/// value itself (4000 V steps to 6000 V, but 160 % of 3900 V is 6240 V), and the
/// requirement would fall as the voltage rises. The series ends at its last value (12 kV):
/// from there on the step is 160 % of the basic voltage, read at the next row of the
/// clearance table; stepping to the table's next row instead (15 kV) would understate it.
pub fn step_up(rule: &ReinforcedRule, impulse_v: f64) -> (f64, Step) {
    let series = &rule.preferred_impulse_v;
    let factor = rule.non_preferred_impulse_factor;
    let top = series.last().copied().unwrap_or(0.0);
    // The step of the i-th preferred value: the next one, or 160 % of the last.
    let step_of = |i: usize| {
        series
            .get(i + 1)
            .copied()
            .or_else(|| series.get(i).map(|v| tidy(v * factor)))
    };
    if impulse_v >= top - EPS {
        let raised = tidy(impulse_v * factor);
        let at_top = if (impulse_v - top).abs() < EPS {
            format!("{} V is the top of the preferred impulse series", show(top))
        } else {
            format!(
                "{} V is above the top of the preferred impulse series ({} V)",
                show(impulse_v),
                show(top)
            )
        };
        return (
            raised,
            Step::new(
                Some(ReinforcedRule::ID),
                format!(
                    "Reinforced insulation: {at_top}, so {} % of the basic voltage is used: {} V, read at the clearance table's row for it (never a step to the table's next row) ({}).",
                    show(factor * 100.0),
                    show(raised),
                    rule.source
                ),
            ),
        );
    }
    if let Some(i) = series.iter().position(|v| (v - impulse_v).abs() < EPS)
        && let Some(next) = step_of(i)
    {
        return (
            next,
            Step::new(
                Some(ReinforcedRule::ID),
                format!(
                    "Reinforced insulation: one step higher in the preferred impulse series, from {} V to {} V ({}).",
                    show(impulse_v),
                    show(next),
                    rule.source
                ),
            ),
        );
    }
    let raised = tidy(impulse_v * factor);
    let below = series
        .iter()
        .rposition(|v| *v < impulse_v)
        .and_then(step_of);
    let above = series.iter().position(|v| *v > impulse_v).and_then(step_of);
    let mut held = raised;
    let mut why = String::new();
    if let Some(lo) = below
        && held < lo
    {
        held = lo;
        why = format!(
            ", raised to {} V, the step of the preferred value below",
            show(lo)
        );
    }
    if let Some(hi) = above
        && held > hi
    {
        held = hi;
        why = format!(
            ", held at {} V, the step of the preferred value above",
            show(hi)
        );
    }
    (
        held,
        Step::new(
            Some(ReinforcedRule::ID),
            format!(
                "Reinforced insulation: {} V is not a preferred impulse value, so {} % of it is used: {} V{why} ({}).",
                show(impulse_v),
                show(factor * 100.0),
                show(raised),
                rule.source
            ),
        ),
    )
}

/// Where a voltage falls in a table's rows, in words for a step.
fn row_words(kv: f64, row_kv: f64, first_kv: f64) -> String {
    if (row_kv - kv).abs() < EPS {
        format!("row {} kV", show(row_kv))
    } else if kv < first_kv {
        format!(
            "{} kV is below the first row; row {} kV",
            show(kv),
            show(row_kv)
        )
    } else {
        format!(
            "{} kV lies between rows; the next higher row {} kV",
            show(kv),
            show(row_kv)
        )
    }
}

fn provenance(confirmed: &[String], column: &str) -> &'static str {
    if confirmed.iter().any(|c| c == column) {
        "confirmed against a reproduction"
    } else {
        "from memory"
    }
}

/// Table F.2 at an impulse voltage: the row itself or the next higher row. In pollution
/// degree 2 a row may carry a larger Case A value of its own (the open point at 1.0 kV).
pub fn table_clearance(
    table: &ClearanceTable,
    volts: f64,
    field: Field,
    pollution_degree: u8,
    key: &str,
    what: &str,
) -> Result<(f64, Step), OutOfTable> {
    let kv = volts / 1000.0;
    let (first, last) = match (table.rows.first(), table.rows.last()) {
        (Some(f), Some(l)) => (f.impulse_kv, l.impulse_kv),
        _ => return Err(OutOfTable::new(key, "the clearance table has no rows")),
    };
    let Some(row) = table.rows.iter().find(|r| r.impulse_kv >= kv - EPS) else {
        return Err(OutOfTable::new(
            key,
            format!(
                "{what} of {} kV is above the last row of {} ({} to {} kV); the tool does not extrapolate",
                crate::text::apart(kv, &[first, last], show),
                table.source,
                show(first),
                show(last)
            ),
        ));
    };
    let (mut mm, case, column) = match field {
        Field::Inhomogeneous => (row.case_a_mm, "Case A (inhomogeneous field)", "case_a"),
        Field::Homogeneous => (row.case_b_mm, "Case B (homogeneous field)", "case_b"),
    };
    let mut pd2 = String::new();
    if field == Field::Inhomogeneous
        && pollution_degree == 2
        && let Some(v) = row.case_a_pd2_mm
        && v > mm
    {
        pd2 = format!(
            "; the pollution degree 2 column of this row shows {} mm (an open point of the reproduction; the larger is taken)",
            show(v)
        );
        mm = v;
    }
    Ok((
        mm,
        Step::new(
            Some(ClearanceTable::ID),
            format!(
                "{what}: {}, {}, {case}: {} mm ({}){pd2}.",
                table.source,
                row_words(kv, row.impulse_kv, first),
                show(mm),
                provenance(&row.confirmed, column)
            ),
        ),
    ))
}

/// Table F.8 at a steady-state or recurring peak voltage: the row itself or the next
/// higher row; past the last row of the field case (Case A ends at 50 kV) it refuses.
pub fn steady_state_clearance(
    table: &SteadyStateClearanceTable,
    volts: f64,
    field: Field,
    key: &str,
) -> Result<(f64, Step), OutOfTable> {
    let kv = volts / 1000.0;
    let (case, column) = match field {
        Field::Inhomogeneous => ("Case A (inhomogeneous field)", "case_a"),
        Field::Homogeneous => ("Case B (homogeneous field)", "case_b"),
    };
    let value = |r: &crate::rules::SteadyStateRow| match field {
        Field::Inhomogeneous => r.case_a_mm,
        Field::Homogeneous => Some(r.case_b_mm),
    };
    let rows: Vec<_> = table
        .rows
        .iter()
        .filter_map(|r| value(r).map(|mm| (r, mm)))
        .collect();
    let (Some((first, _)), Some((last, _))) = (rows.first(), rows.last()) else {
        return Err(OutOfTable::new(
            key,
            format!("{} has no rows for {case}", table.source),
        ));
    };
    let Some((row, mm)) = rows.iter().find(|(r, _)| r.peak_kv >= kv - EPS) else {
        return Err(OutOfTable::new(
            key,
            format!(
                "a steady-state peak of {} kV is above the last row of {} for {case} ({} to {} kV); the tool does not extrapolate",
                crate::text::apart(kv, &[first.peak_kv, last.peak_kv], show),
                table.source,
                show(first.peak_kv),
                show(last.peak_kv)
            ),
        ));
    };
    Ok((
        *mm,
        Step::new(
            Some(SteadyStateClearanceTable::ID),
            format!(
                "Steady-state peak requirement: {}, {}, {case}: {} mm ({}).",
                table.source,
                row_words(kv, row.peak_kv, first.peak_kv),
                show(*mm),
                provenance(&row.confirmed, column)
            ),
        ),
    ))
}

/// Altitude correction factor; 1 up to the first row. Between rows the next higher row,
/// or linear interpolation where the project switches it on.
pub fn altitude_factor(
    table: &AltitudeTable,
    altitude_m: f64,
    between: BetweenRows,
) -> Result<(f64, Step), OutOfTable> {
    let key = "environment.altitude_m";
    let (Some(first), Some(last)) = (table.rows.first(), table.rows.last()) else {
        return Err(OutOfTable::new(key, "the altitude table has no rows"));
    };
    if altitude_m <= first.altitude_m + EPS {
        return Ok((
            1.0,
            Step::new(
                Some(AltitudeTable::ID),
                format!(
                    "Altitude {} m: within the {} m the clearance table holds for; no correction.",
                    show(altitude_m),
                    show(first.altitude_m)
                ),
            ),
        ));
    }
    if altitude_m > last.altitude_m + EPS {
        return Err(OutOfTable::new(
            key,
            format!(
                "{} m is above the last row of {} ({} to {} m); the tool does not extrapolate",
                crate::text::apart(altitude_m, &[first.altitude_m, last.altitude_m], show),
                table.source,
                show(first.altitude_m),
                show(last.altitude_m)
            ),
        ));
    }
    let i = table
        .rows
        .iter()
        .position(|r| r.altitude_m >= altitude_m - EPS)
        .unwrap_or(table.rows.len() - 1);
    let hi = &table.rows[i];
    let how = |r: &crate::rules::AltitudeRow| {
        r.provenance
            .clone()
            .unwrap_or_else(|| table.provenance.clone())
    };
    if (hi.altitude_m - altitude_m).abs() < EPS || i == 0 {
        return Ok((
            hi.factor,
            Step::new(
                Some(AltitudeTable::ID),
                format!(
                    "Altitude {} m: correction factor {} ({}; row {}).",
                    show(altitude_m),
                    show(hi.factor),
                    table.source,
                    how(hi)
                ),
            ),
        ));
    }
    let lo = &table.rows[i - 1];
    match between {
        BetweenRows::NextRow => Ok((
            hi.factor,
            Step::new(
                Some(AltitudeTable::ID),
                format!(
                    "Altitude {} m lies between rows {} m and {} m: the next higher row is used (the default; altitude_between_rows = \"interpolate\" in [design] switches to linear interpolation): factor {} ({}; row {}).",
                    show(altitude_m),
                    show(lo.altitude_m),
                    show(hi.altitude_m),
                    show(hi.factor),
                    table.source,
                    how(hi)
                ),
            ),
        )),
        BetweenRows::Interpolate => {
            let factor = lo.factor
                + (hi.factor - lo.factor) * (altitude_m - lo.altitude_m)
                    / (hi.altitude_m - lo.altitude_m);
            Ok((
                factor,
                Step::new(
                    Some(AltitudeTable::ID),
                    format!(
                        "Altitude {} m: factor interpolated linearly between {} m ({}; {}) and {} m ({}; {}): {} (interpolation switched on by altitude_between_rows in [design]; {}).",
                        show(altitude_m),
                        show(lo.altitude_m),
                        show(lo.factor),
                        how(lo),
                        show(hi.altitude_m),
                        show(hi.factor),
                        how(hi),
                        show(factor),
                        table.source
                    ),
                ),
            ))
        }
    }
}

/// Required clearance for a basic (or supplementary) or a reinforced barrier: the larger of
/// the transient and the steady-state requirement, then the minimum and the altitude.
pub fn required(
    rules: &RuleBook,
    cond: &Conditions,
    barrier: &Barrier,
    grade: Grade,
) -> Result<Clearance, OutOfTable> {
    let mut steps = Vec::new();
    let rated_impulse_v = match barrier.transient_v {
        Some(v) => {
            steps.push(Step::new(None, format!(
                "Transient overvoltage declared for this barrier (transient_v): {} V, used instead of the rated impulse voltage from the mains.",
                show(v)
            )));
            v
        }
        None => {
            let (v, step) = rated_impulse(rules.table::<crate::rules::ImpulseTable>(), cond)?;
            steps.push(step);
            v
        }
    };
    let reinforced = grade == Grade::Reinforced;
    let clearance_impulse_v = if reinforced {
        let (v, step) = step_up(
            rules.table::<crate::rules::ReinforcedRule>(),
            rated_impulse_v,
        );
        steps.push(step);
        v
    } else {
        rated_impulse_v
    };
    let impulse_key = if barrier.transient_v.is_some() {
        "transient_v"
    } else {
        "mains.nominal_v"
    };
    let pd = cond.pollution_degree;
    let transient = table_clearance(
        rules.table::<crate::rules::ClearanceTable>(),
        clearance_impulse_v,
        barrier.field,
        pd,
        impulse_key,
        "Transient requirement",
    );

    // The steady-state (or recurring) peak: as declared, or the peak of a sinusoid.
    let steady_table = rules.table::<crate::rules::SteadyStateClearanceTable>();
    let peak = match barrier.working_peak_v {
        Some(p) => {
            steps.push(Step::new(
                None,
                format!(
                    "Steady-state or recurring peak voltage {} V as declared (working_peak_v).",
                    show(p)
                ),
            ));
            p
        }
        None => {
            let p = barrier.peak_v();
            steps.push(Step::new(None, format!(
                "Steady-state peak voltage not declared: {} V rms x sqrt(2) = {} V (sinusoidal; declare working_peak_v for a d.c. or other waveform).",
                show(barrier.working_rms_v),
                show(p)
            )));
            p
        }
    };
    let mut at_v = peak;
    if reinforced {
        at_v = tidy(peak * steady_table.reinforced_peak_factor);
        steps.push(Step::new(
            Some(SteadyStateClearanceTable::ID),
            format!(
                "Reinforced insulation: Table F.8 is read at {} % of the peak: {} V (from memory of IEC 60664-1 clause 5.1.6).",
                show(steady_table.reinforced_peak_factor * 100.0),
                show(at_v)
            ),
        ));
    }
    let peak_key = if barrier.working_peak_v.is_some() {
        "working_peak_v"
    } else {
        "working_rms_v"
    };
    let steady = steady_state_clearance(steady_table, at_v, barrier.field, peak_key);
    // Both lookups run before either is used; the first refusal is returned.
    let ((transient_mm, step_t), (steady_mm, step_s)) = match (transient, steady) {
        (Ok(t), Ok(s)) => (t, s),
        (Err(e), _) | (_, Err(e)) => return Err(e),
    };
    steps.push(step_t);
    steps.push(step_s);
    let mut governed_by = "transient";
    let mut mm = transient_mm;
    if steady_mm > transient_mm {
        steps.push(Step::new(None, format!(
            "The steady-state requirement {} mm governs over the transient requirement {} mm (the larger of the two).",
            show(steady_mm),
            show(transient_mm)
        )));
        mm = steady_mm;
        governed_by = "steady-state";
    } else {
        steps.push(Step::new(None, format!(
            "The transient requirement {} mm governs (the steady-state requirement is {} mm; the larger of the two).",
            show(transient_mm),
            show(steady_mm)
        )));
    }

    let index = (pd.clamp(1, 3) - 1) as usize;
    let minimum = rules
        .table::<crate::rules::ClearanceTable>()
        .pollution_degree_minimum_mm[index]
        .max(steady_table.pollution_degree_minimum_mm[index]);
    if mm < minimum {
        steps.push(Step::new(
            Some(ClearanceTable::ID),
            format!(
                "Raised to the pollution degree {pd} minimum of {} mm ({}; the same minimum applies to {}, from memory).",
                show(minimum),
                rules.table::<crate::rules::ClearanceTable>().source,
                steady_table.source
            ),
        ));
        mm = minimum;
        governed_by = "pollution-degree-minimum";
    }

    let (factor, step) = altitude_factor(
        rules.table::<crate::rules::AltitudeTable>(),
        cond.altitude_m,
        cond.altitude_between_rows,
    )?;
    steps.push(step);
    if factor > 1.0 {
        let corrected = round_up(mm * factor, 0.01);
        steps.push(Step::new(
            None,
            format!(
                "{} mm x {} = {} mm, rounded up to 0.01 mm.",
                show(mm),
                show(factor),
                show(corrected)
            ),
        ));
        mm = corrected;
    }
    steps.push(Step::new(
        None,
        format!(
            "Required clearance ({}): {} mm.",
            grade_label(barrier.grade),
            show(mm)
        ),
    ));
    Ok(Clearance {
        figure: Figure {
            mm: tidy(mm),
            steps,
        },
        rated_impulse_v,
        clearance_impulse_v,
        altitude_factor: tidy(factor),
        transient_mm,
        steady_state_mm: steady_mm,
        steady_state_peak_v: at_v,
        governed_by,
    })
}

/// How a figure's grade is named in the last step of its derivation.
pub fn grade_label(grade: Grade) -> &'static str {
    match grade {
        Grade::Double => "each part of double insulation",
        Grade::Supplementary => "supplementary, dimensioned as basic",
        Grade::Functional => "functional, dimensioned as basic",
        g => g.as_str(),
    }
}
