//! Functional spacing between conductors on a printed board (IPC-2221B Table 6-1), by the
//! working peak voltage and the column for layer, coating and altitude.

use super::{Conditions, Figure, OutOfTable, Step, show, tidy};
use crate::project::{Barrier, BoardCoating, BoardConductor};
use crate::rules::Table as _;
use crate::rules::{BoardSpacingTable, EPS, RuleBook};

pub struct BoardFigure {
    pub figure: Figure,
    pub column: &'static str,
}

/// Above this altitude uncoated outer conductors move from column B2 to B3.
pub const B3_ABOVE_M: f64 = 3050.0;

/// The IPC-2221B column for a conductor position, coating and altitude.
pub fn column(conductor: BoardConductor, coating: BoardCoating, altitude_m: f64) -> &'static str {
    match (conductor, coating) {
        (BoardConductor::InnerLayer, _) => "B1",
        (BoardConductor::OuterLayer, BoardCoating::None) if altitude_m > B3_ABOVE_M => "B3",
        (BoardConductor::OuterLayer, BoardCoating::None) => "B2",
        (BoardConductor::OuterLayer, BoardCoating::Polymer) => "B4",
        (BoardConductor::OuterLayer, BoardCoating::Conformal) => "A5",
        (BoardConductor::ComponentLead, BoardCoating::Conformal) => "A7",
        (BoardConductor::ComponentLead, _) => "A6",
    }
}

/// IPC-2221B spacing at a peak voltage in one column, with the table's own rule above 500 V.
pub fn table_spacing(
    table: &BoardSpacingTable,
    peak_v: f64,
    column: &str,
) -> Result<(f64, Step), OutOfTable> {
    let col = BoardSpacingTable::COLUMNS
        .iter()
        .position(|c| *c == column)
        .unwrap_or(1);
    let Some(last) = table.rows.last() else {
        return Err(OutOfTable::new(
            "working_peak_v",
            "the board spacing table has no rows",
        ));
    };
    if let Some(i) = table
        .rows
        .iter()
        .position(|r| r.up_to_peak_v >= peak_v - EPS)
    {
        let row = &table.rows[i];
        let from = if i == 0 {
            0.0
        } else {
            table.rows[i - 1].up_to_peak_v
        };
        let label = if i == 0 {
            format!("0-{}", show(row.up_to_peak_v))
        } else {
            format!("{}-{}", show(from + 1.0), show(row.up_to_peak_v))
        };
        return Ok((
            row.mm[col],
            Step::new(
                Some(BoardSpacingTable::ID),
                format!(
                    "{}, row {label} V, column {column}: {} mm ({}).",
                    table.source,
                    show(row.mm[col]),
                    table.provenance
                ),
            ),
        ));
    }
    let per_v = table.above_last_row_mm_per_v[col];
    let base = last.mm[col];
    let mm = tidy(base + per_v * (peak_v - last.up_to_peak_v));
    Ok((
        mm,
        Step::new(
            Some(BoardSpacingTable::ID),
            format!(
                "{}, above {} V, column {column}: {} mm + {} mm/V x ({} V - {} V) = {} mm (the table's own rule above its last row; {}).",
                table.source,
                show(last.up_to_peak_v),
                show(base),
                show(per_v),
                show(peak_v),
                show(last.up_to_peak_v),
                show(mm),
                table.provenance
            ),
        ),
    ))
}

/// Functional spacing on a board: one figure for clearance and creepage alike.
pub fn functional_spacing(
    rules: &RuleBook,
    cond: &Conditions,
    barrier: &Barrier,
) -> Result<BoardFigure, OutOfTable> {
    let mut steps = vec![Step::new(
        None,
        "Functional insulation on a printed board: IPC-2221B conductor spacing applies (not IEC 60664-1).",
    )];
    let peak =
        match barrier.working_peak_v {
            Some(p) => {
                steps.push(Step::new(
                    None,
                    format!("Working peak voltage {} V as declared.", show(p)),
                ));
                p
            }
            None => {
                let p = barrier.peak_v();
                steps.push(Step::new(None, format!(
                "Working peak voltage not declared: {} V rms x sqrt(2) = {} V (sinusoidal).",
                show(barrier.working_rms_v),
                show(p)
            )));
                p
            }
        };
    let column = column(
        barrier.board.conductor,
        barrier.board.coating,
        cond.altitude_m,
    );
    steps.push(Step::new(
        None,
        format!(
            "Column {column}: {} conductor, coating {}, altitude {} m (B3 replaces B2 above {} m).",
            match barrier.board.conductor {
                BoardConductor::OuterLayer => "outer-layer",
                BoardConductor::InnerLayer => "inner-layer",
                BoardConductor::ComponentLead => "component-lead",
            },
            match barrier.board.coating {
                BoardCoating::None => "none",
                BoardCoating::Polymer => "permanent polymer",
                BoardCoating::Conformal => "conformal",
            },
            show(cond.altitude_m),
            show(B3_ABOVE_M)
        ),
    ));
    let (mm, step) = table_spacing(
        rules.table::<crate::rules::BoardSpacingTable>(),
        peak,
        column,
    )?;
    steps.push(step);
    steps.push(Step::new(
        None,
        format!("Required spacing (functional): {} mm.", show(mm)),
    ));
    Ok(BoardFigure {
        figure: Figure { mm, steps },
        column,
    })
}
