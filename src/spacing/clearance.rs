//! Required clearance: the rated impulse voltage (Table F.1 or a declared transient), the
//! step up for reinforced insulation, Table F.2 by field case, the recurring peak, the
//! pollution-degree minimum and the altitude correction.

use super::{Conditions, Figure, OutOfTable, Step, round_up, show, tidy};
use crate::project::{Barrier, Field, Grade};
use crate::rules::{AltitudeTable, ClearanceTable, ImpulseTable, ReinforcedRule, RuleBook};

pub struct Clearance {
    pub figure: Figure,
    pub rated_impulse_v: f64,
    pub clearance_impulse_v: f64,
    pub altitude_factor: f64,
}

const EPS: f64 = 1e-9;

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
        Step::from(
            ImpulseTable::ID,
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
/// The series continues above its last value with the rows of the clearance table. Off the
/// series, 160 % is held between the steps of the preferred values on either side: taken
/// alone, 160 % of a value just below a preferred one would exceed the step of that value
/// itself (4000 V steps to 6000 V, but 160 % of 3900 V is 6240 V), and the requirement
/// would fall as the voltage rises.
pub fn step_up(rule: &ReinforcedRule, clearance: &ClearanceTable, impulse_v: f64) -> (f64, Step) {
    let mut series: Vec<f64> = rule.preferred_impulse_v.clone();
    let top = series.last().copied().unwrap_or(0.0);
    series.extend(
        clearance
            .rows
            .iter()
            .map(|r| tidy(r.impulse_kv * 1000.0))
            .filter(|v| *v > top + EPS),
    );
    let step_of = |i: usize| series.get(i + 1).copied();
    let factor = rule.non_preferred_impulse_factor;
    if let Some(i) = series.iter().position(|v| (v - impulse_v).abs() < EPS)
        && let Some(next) = step_of(i)
    {
        let beyond = if i + 1 >= rule.preferred_impulse_v.len() {
            " (above the preferred series, the rows of the clearance table are the steps)"
        } else {
            ""
        };
        return (
            next,
            Step::from(
                ReinforcedRule::ID,
                format!(
                    "Reinforced insulation: one step higher in the preferred impulse series, from {} V to {} V{beyond} ({}).",
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
        Step::from(
            ReinforcedRule::ID,
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

/// Table F.2 at an impulse (or peak) voltage: the row itself or the next higher row.
pub fn table_clearance(
    table: &ClearanceTable,
    volts: f64,
    field: Field,
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
    let (mm, case, column) = match field {
        Field::Inhomogeneous => (row.case_a_mm, "Case A (inhomogeneous field)", "case_a"),
        Field::Homogeneous => (row.case_b_mm, "Case B (homogeneous field)", "case_b"),
    };
    let provenance = if row.confirmed.iter().any(|c| c == column) {
        "confirmed against a reproduction"
    } else {
        "from memory"
    };
    let at = if (row.impulse_kv - kv).abs() < EPS {
        format!("row {} kV", show(row.impulse_kv))
    } else if kv < first {
        format!(
            "{} kV is below the first row; row {} kV",
            show(kv),
            show(row.impulse_kv)
        )
    } else {
        format!(
            "{} kV lies between rows; the next higher row {} kV",
            show(kv),
            show(row.impulse_kv)
        )
    };
    Ok((
        mm,
        Step::from(
            ClearanceTable::ID,
            format!(
                "{what}: {}, {at}, {case}: {} mm ({provenance}).",
                table.source,
                show(mm)
            ),
        ),
    ))
}

/// Altitude correction factor, interpolated between rows; 1 up to the first row.
pub fn altitude_factor(table: &AltitudeTable, altitude_m: f64) -> Result<(f64, Step), OutOfTable> {
    let key = "environment.altitude_m";
    let (Some(first), Some(last)) = (table.rows.first(), table.rows.last()) else {
        return Err(OutOfTable::new(key, "the altitude table has no rows"));
    };
    if altitude_m <= first.altitude_m + EPS {
        return Ok((
            1.0,
            Step::from(
                AltitudeTable::ID,
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
    if (hi.altitude_m - altitude_m).abs() < EPS || i == 0 {
        return Ok((
            hi.factor,
            Step::from(
                AltitudeTable::ID,
                format!(
                    "Altitude {} m: correction factor {} ({}).",
                    show(altitude_m),
                    show(hi.factor),
                    table.source
                ),
            ),
        ));
    }
    let lo = &table.rows[i - 1];
    let factor = lo.factor
        + (hi.factor - lo.factor) * (altitude_m - lo.altitude_m) / (hi.altitude_m - lo.altitude_m);
    Ok((
        factor,
        Step::from(
            AltitudeTable::ID,
            format!(
                "Altitude {} m: factor interpolated between {} m ({}) and {} m ({}): {} ({}).",
                show(altitude_m),
                show(lo.altitude_m),
                show(lo.factor),
                show(hi.altitude_m),
                show(hi.factor),
                show(factor),
                table.source
            ),
        ),
    ))
}

/// Required clearance for a basic (or supplementary) or a reinforced barrier.
pub fn required(
    rules: &RuleBook,
    cond: &Conditions,
    barrier: &Barrier,
    grade: Grade,
) -> Result<Clearance, OutOfTable> {
    let mut steps = Vec::new();
    let rated_impulse_v = match barrier.transient_v {
        Some(v) => {
            steps.push(Step::plain(format!(
                "Transient overvoltage declared for this barrier (transient_v): {} V, used instead of the rated impulse voltage from the mains.",
                show(v)
            )));
            v
        }
        None => {
            let (v, step) = rated_impulse(&rules.impulse, cond)?;
            steps.push(step);
            v
        }
    };
    let reinforced = grade == Grade::Reinforced;
    let clearance_impulse_v = if reinforced {
        let (v, step) = step_up(&rules.reinforced, &rules.clearance, rated_impulse_v);
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
    let (mut mm, step) = table_clearance(
        &rules.clearance,
        clearance_impulse_v,
        barrier.field,
        impulse_key,
        "Transient requirement",
    )?;
    steps.push(step);

    if let Some(peak) = barrier.working_peak_v {
        let mut at_v = peak;
        if reinforced {
            at_v = tidy(peak * rules.reinforced.non_preferred_impulse_factor);
            steps.push(Step::from(
                crate::rules::ReinforcedRule::ID,
                format!(
                    "Reinforced insulation: the recurring peak {} V is taken at {} %: {} V.",
                    show(peak),
                    show(rules.reinforced.non_preferred_impulse_factor * 100.0),
                    show(at_v)
                ),
            ));
        }
        let (peak_mm, step) = table_clearance(
            &rules.clearance,
            at_v,
            barrier.field,
            "working_peak_v",
            "Steady-state peak requirement",
        )?;
        steps.push(step);
        steps.push(Step::plain(
            "The shipped rules carry no separate table for steady-state and recurring peak voltages (IEC 60664-1 has one, from memory Table F.7 in 2007); Table F.2 is read at the peak voltage instead. Verify against a licensed copy.",
        ));
        if peak_mm > mm {
            steps.push(Step::plain(format!(
                "The peak requirement {} mm governs over the transient requirement {} mm.",
                show(peak_mm),
                show(mm)
            )));
            mm = peak_mm;
        } else {
            steps.push(Step::plain(format!(
                "The transient requirement {} mm governs.",
                show(mm)
            )));
        }
    }

    let pd = cond.pollution_degree;
    let minimum = rules.clearance.pollution_degree_minimum_mm[(pd.clamp(1, 3) - 1) as usize];
    if mm < minimum {
        steps.push(Step::from(
            ClearanceTable::ID,
            format!(
                "Raised to the pollution degree {pd} minimum of {} mm ({}).",
                show(minimum),
                rules.clearance.source
            ),
        ));
        mm = minimum;
    }

    let (factor, step) = altitude_factor(&rules.altitude, cond.altitude_m)?;
    steps.push(step);
    if factor > 1.0 {
        let corrected = round_up(mm * factor, 0.01);
        steps.push(Step::plain(format!(
            "{} mm x {} = {} mm, rounded up to 0.01 mm.",
            show(mm),
            show(factor),
            show(corrected)
        )));
        mm = corrected;
    }
    steps.push(Step::plain(format!(
        "Required clearance ({}): {} mm.",
        grade_label(barrier.grade),
        show(mm)
    )));
    Ok(Clearance {
        figure: Figure {
            mm: tidy(mm),
            steps,
        },
        rated_impulse_v,
        clearance_impulse_v,
        altitude_factor: tidy(factor),
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
