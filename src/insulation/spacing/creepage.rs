//! Required creepage: material group (stated or from the CTI), the column by pollution
//! degree and printed wiring, the row (next higher or interpolated), doubling for
//! reinforced insulation, and never less than the required clearance.

use super::clearance::grade_label;
use super::{Conditions, Figure, OutOfTable, Step, round_up, show, tidy};
use crate::project::{Barrier, BetweenRows, Grade, Material, MaterialGroup};
use crate::rules::Table as _;
use crate::rules::{CreepageTable, EPS, MaterialGroupTable, ReinforcedRule, RuleBook};

pub struct Creepage {
    pub figure: Figure,
    pub group: MaterialGroup,
    pub column: &'static str,
    /// "creepage-table" or "clearance" (raised to the required clearance).
    pub governed_by: &'static str,
}

/// The material group of a barrier, with the step that says how it was found.
pub fn material_group(
    table: &MaterialGroupTable,
    material: Material,
) -> Result<(MaterialGroup, Step), OutOfTable> {
    match material {
        Material::Group(g) => Ok((
            g,
            Step::new(None, format!("Material group {} as declared.", g.as_str())),
        )),
        Material::Unstated => Ok((
            MaterialGroup::IIIb,
            Step::new(
                None,
                "Material group IIIb assumed (neither material_group nor cti declared): the least favourable group.",
            ),
        )),
        Material::Cti(cti) => {
            let found = table
                .groups
                .iter()
                .filter(|g| cti >= g.min_cti - EPS)
                .max_by(|a, b| a.min_cti.total_cmp(&b.min_cti))
                .and_then(|g| crate::diag::word::<MaterialGroup>(&g.group).map(|m| (m, g.min_cti)));
            match found {
                Some((group, min)) => Ok((
                    group,
                    Step::new(
                        Some(MaterialGroupTable::ID),
                        format!(
                            "CTI {} falls in material group {} (CTI {} and above; {}).",
                            show(cti),
                            group.as_str(),
                            show(min),
                            table.source
                        ),
                    ),
                )),
                None => {
                    let lowest = table
                        .groups
                        .iter()
                        .map(|g| g.min_cti)
                        .fold(f64::INFINITY, f64::min);
                    Err(OutOfTable::new(
                        "cti",
                        format!(
                            "CTI {} is below the lowest material group of {} (CTI {} and above); such a material is not covered",
                            show(cti),
                            table.source,
                            show(lowest)
                        ),
                    ))
                }
            }
        }
    }
}

/// The creepage column for a pollution degree, material group and printed wiring.
pub fn column(
    pollution_degree: u8,
    group: MaterialGroup,
    printed_board: bool,
) -> (&'static str, Option<&'static str>) {
    let group_suffix = match group {
        MaterialGroup::I => "group_i",
        MaterialGroup::II => "group_ii",
        MaterialGroup::IIIa | MaterialGroup::IIIb => "group_iii",
    };
    match (pollution_degree, printed_board) {
        (1, true) => ("printed_pd1", None),
        (1, false) => ("pd1", None),
        (2, true) if group != MaterialGroup::IIIb => ("printed_pd2", None),
        (2, true) => (
            "pd2_group_iii",
            Some(
                "The printed-wiring columns do not serve material group IIIb in pollution degree 2; the general column applies.",
            ),
        ),
        (2, false) => (column_name(2, group_suffix), None),
        (_, true) => (
            column_name(3, group_suffix),
            Some(
                "The printed-wiring columns do not serve pollution degree 3; the general column applies.",
            ),
        ),
        (_, false) => (column_name(3, group_suffix), None),
    }
}

fn column_name(pd: u8, suffix: &str) -> &'static str {
    match (pd, suffix) {
        (2, "group_i") => "pd2_group_i",
        (2, "group_ii") => "pd2_group_ii",
        (2, _) => "pd2_group_iii",
        (_, "group_i") => "pd3_group_i",
        (_, "group_ii") => "pd3_group_ii",
        _ => "pd3_group_iii",
    }
}

/// Table F.5 (F.4 in 2007) at a working voltage in one column.
pub fn table_creepage(
    table: &CreepageTable,
    working_rms_v: f64,
    column: &str,
    between: BetweenRows,
) -> Result<(f64, Step), OutOfTable> {
    let col = CreepageTable::COLUMNS
        .iter()
        .position(|c| *c == column)
        .unwrap_or(0);
    let (Some(first), Some(last)) = (table.rows.first(), table.rows.last()) else {
        return Err(OutOfTable::new(
            "working_rms_v",
            "the creepage table has no rows",
        ));
    };
    let Some(i) = table
        .rows
        .iter()
        .position(|r| r.working_rms_v >= working_rms_v - EPS)
    else {
        return Err(OutOfTable::new(
            "working_rms_v",
            format!(
                "{} V rms is above the last row of {} ({} to {} V); the tool does not extrapolate",
                crate::text::apart(
                    working_rms_v,
                    &[first.working_rms_v, last.working_rms_v],
                    show
                ),
                table.source,
                show(first.working_rms_v),
                show(last.working_rms_v)
            ),
        ));
    };
    let hi = &table.rows[i];
    let provenance = |confirmed: bool| {
        if confirmed {
            "confirmed against a reproduction"
        } else {
            "from memory"
        }
    };
    let head = format!("{}, column {column}", table.source);
    if (hi.working_rms_v - working_rms_v).abs() < EPS || i == 0 {
        let at = if i == 0 && working_rms_v < hi.working_rms_v - EPS {
            format!(
                "{} V is below the first row; row {} V",
                show(working_rms_v),
                show(hi.working_rms_v)
            )
        } else {
            format!("row {} V", show(hi.working_rms_v))
        };
        return Ok((
            hi.mm[col],
            Step::new(
                Some(CreepageTable::ID),
                format!(
                    "{head}, {at}: {} mm ({}).",
                    show(hi.mm[col]),
                    provenance(hi.confirmed)
                ),
            ),
        ));
    }
    let lo = &table.rows[i - 1];
    match between {
        BetweenRows::NextRow => Ok((
            hi.mm[col],
            Step::new(
                Some(CreepageTable::ID),
                format!(
                    "{head}: {} V lies between rows {} V and {} V; the next higher row is used: {} mm ({}).",
                    show(working_rms_v),
                    show(lo.working_rms_v),
                    show(hi.working_rms_v),
                    show(hi.mm[col]),
                    provenance(hi.confirmed)
                ),
            ),
        )),
        BetweenRows::Interpolate => {
            let raw = lo.mm[col]
                + (hi.mm[col] - lo.mm[col]) * (working_rms_v - lo.working_rms_v)
                    / (hi.working_rms_v - lo.working_rms_v);
            let rounded = round_up(raw, table.interpolation_round_up_mm);
            // Rounding up never takes the figure past the next higher row itself.
            let mm = tidy(rounded.min(hi.mm[col]));
            let capped = if mm < rounded {
                format!(", capped at the next row's {} mm", show(hi.mm[col]))
            } else {
                String::new()
            };
            Ok((
                mm,
                Step::new(
                    Some(CreepageTable::ID),
                    format!(
                        "{head}: linear interpolation between {} V ({} mm, {}) and {} V ({} mm, {}): {} mm, rounded up to {} mm{capped}: {} mm (interpolation switched on in [design]).",
                        show(lo.working_rms_v),
                        show(lo.mm[col]),
                        provenance(lo.confirmed),
                        show(hi.working_rms_v),
                        show(hi.mm[col]),
                        provenance(hi.confirmed),
                        show(raw),
                        show(table.interpolation_round_up_mm),
                        show(mm)
                    ),
                ),
            ))
        }
    }
}

/// Required creepage for a basic (or supplementary) or a reinforced barrier.
pub fn required(
    rules: &RuleBook,
    cond: &Conditions,
    barrier: &Barrier,
    grade: Grade,
    clearance: &Figure,
) -> Result<Creepage, OutOfTable> {
    let Creepage {
        figure: Figure { mut mm, mut steps },
        group,
        column,
        ..
    } = from_table(rules, cond, barrier, grade)?;
    let mut governed_by = "creepage-table";
    if mm < clearance.mm {
        steps.push(Step::new(None, format!(
            "Raised to the required clearance {} mm: creepage is never less than clearance (common practice in IEC 60664-1 dimensioning; from memory).",
            show(clearance.mm)
        )));
        mm = clearance.mm;
        governed_by = "clearance";
    }
    steps.push(Step::new(
        None,
        format!(
            "Required creepage ({}): {} mm.",
            grade_label(barrier.grade),
            show(mm)
        ),
    ));
    Ok(Creepage {
        figure: Figure {
            mm: tidy(mm),
            steps,
        },
        group,
        column,
        governed_by,
    })
}

/// The creepage table's figure alone (material group, column, row, doubling for
/// reinforced), before it is set beside the clearance.
pub fn from_table(
    rules: &RuleBook,
    cond: &Conditions,
    barrier: &Barrier,
    grade: Grade,
) -> Result<Creepage, OutOfTable> {
    let mut steps = Vec::new();
    let (group, step) = material_group(
        rules.table::<crate::rules::MaterialGroupTable>(),
        barrier.material,
    )?;
    steps.push(step);
    let (column, note) = column(cond.pollution_degree, group, barrier.printed_board);
    if let Some(note) = note {
        steps.push(Step::new(None, note));
    }
    let (mut mm, step) = table_creepage(
        rules.table::<crate::rules::CreepageTable>(),
        barrier.working_rms_v,
        column,
        cond.creepage_between_rows,
    )?;
    steps.push(step);
    if grade == Grade::Reinforced {
        let doubled = tidy(
            mm * rules
                .table::<crate::rules::ReinforcedRule>()
                .creepage_factor,
        );
        steps.push(Step::new(
            Some(ReinforcedRule::ID),
            format!(
                "Reinforced insulation: {} x the basic creepage: {} mm ({}).",
                show(
                    rules
                        .table::<crate::rules::ReinforcedRule>()
                        .creepage_factor
                ),
                show(doubled),
                rules.table::<crate::rules::ReinforcedRule>().source
            ),
        ));
        mm = doubled;
    }
    Ok(Creepage {
        figure: Figure {
            mm: tidy(mm),
            steps,
        },
        group,
        column,
        governed_by: "creepage-table",
    })
}
