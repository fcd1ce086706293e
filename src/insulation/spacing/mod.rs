//! Required clearance and creepage of one insulation barrier, each with the steps that
//! produced it. Pure functions over the checked project types and the rule book; nothing
//! here reads files or extrapolates a table.

mod board;
mod clearance;
mod creepage;

use crate::rules::Table as _;
use serde::Serialize;

pub(crate) use clearance::grade_label;
pub(crate) use creepage::material_group;

use crate::project::{Barrier, BetweenRows, Grade, OvervoltageCategory};
use crate::rules::RuleBook;

use crate::derivation::{Derivation, steps_only};
pub use crate::derivation::{Step, Verdict};

/// A required distance and how it was found.
#[derive(Debug, Clone, PartialEq)]
pub struct Figure {
    pub mm: f64,
    pub steps: Vec<Step>,
}

/// A figure the tables cannot give: the input lies outside a table, which is never
/// extrapolated. `key` names the input (a barrier key, or `mains.nominal_v` and the like).
#[derive(Debug, Clone, PartialEq)]
pub struct OutOfTable {
    pub key: String,
    pub message: String,
}

impl OutOfTable {
    pub(crate) fn new(key: &str, message: impl Into<String>) -> Self {
        OutOfTable {
            key: key.to_string(),
            message: message.into(),
        }
    }
}

/// The conditions shared by every barrier of a design.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Conditions {
    pub pollution_degree: u8,
    pub overvoltage_category: OvervoltageCategory,
    pub altitude_m: f64,
    pub nominal_v: f64,
    pub creepage_between_rows: BetweenRows,
    /// How the altitude factor is read between rows: the next higher row unless switched.
    pub altitude_between_rows: BetweenRows,
}

/// For double insulation: the basic and supplementary parts, each dimensioned on its own.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct DoubleParts {
    pub basic_clearance_mm: f64,
    pub basic_creepage_mm: f64,
    pub supplementary_clearance_mm: f64,
    pub supplementary_creepage_mm: f64,
}

/// For functional insulation on a printed board: both figures that apply, side by side.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct FunctionalFigures {
    /// IEC 60664-1 Table F.5 (F.4 in 2007), which applies to functional insulation too.
    pub creepage_table_mm: f64,
    /// The creepage table's column (`printed_pd2`, `pd2_group_iii`, ...).
    pub creepage_table_column: String,
    /// IPC-2221B Table 6-1: a figure for correct operation, not for safety.
    pub ipc2221b_spacing_mm: f64,
    pub ipc2221b_column: String,
}

/// The barrier's two figures, each a [`Derivation`]; the JSON shows each as its list of
/// steps, as it always has.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct BarrierDerivation {
    #[serde(serialize_with = "steps_only")]
    pub clearance: Derivation,
    #[serde(serialize_with = "steps_only")]
    pub creepage: Derivation,
    /// How the electric strength test voltage was found (`crate::standards`).
    pub electric_strength: Vec<Step>,
}

/// The input keys every barrier's figures rest on (as the reader names them); a barrier's
/// own table adds `barrier[n]` (see `insulation`).
pub const SHARED_BARRIER_INPUTS: &[&str] = &["environment.", "mains.nominal_v", "board."];

/// Everything the report says about one barrier. The field names are the JSON contract.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct BarrierResult {
    pub id: String,
    pub between: [String; 2],
    pub grade: Grade,
    /// "iec60664-1" (insulation coordination), "ipc2221b" (functional spacing on a board), or
    /// the end-product standard whose method set the figures ("iec62368-1", "iec60601-1",
    /// "iec60335-1").
    pub method: &'static str,
    pub working_rms_v: f64,
    pub working_peak_v: Option<f64>,
    /// Rated impulse voltage of the circuit (from the mains, or the declared transient_v).
    pub rated_impulse_v: Option<f64>,
    /// Impulse voltage at which the clearance was read (one step higher for reinforced).
    pub clearance_impulse_v: Option<f64>,
    pub pollution_degree: u8,
    pub material_group: Option<&'static str>,
    pub creepage_column: String,
    pub altitude_factor: f64,
    pub required_clearance_mm: f64,
    pub required_creepage_mm: f64,
    pub clearance_mm: Option<f64>,
    pub creepage_mm: Option<f64>,
    /// Declared minus required, never rounded to zero when short (the verdict compares
    /// the exact figures, not these).
    pub clearance_margin_mm: Option<f64>,
    pub creepage_margin_mm: Option<f64>,
    pub verdict: Verdict,
    /// What sets the required clearance: "transient" (Table F.2), "steady-state"
    /// (Table F.8), "pollution-degree-minimum", "ipc2221b" or "house-minimum"; under IEC
    /// 62368-1 "procedure-1" or "procedure-2", under IEC 60601-1 "mopp-table" or "moop-table".
    pub clearance_governed_by: &'static str,
    /// What sets the required creepage: "creepage-table" (Table F.5), "clearance" (raised
    /// to the required clearance), "ipc2221b" or "house-minimum".
    pub creepage_governed_by: &'static str,
    /// Table F.2 at the clearance impulse voltage (null for a board's functional spacing).
    pub transient_clearance_mm: Option<f64>,
    /// Table F.8 at the steady-state peak (null for a board's functional spacing).
    pub steady_state_clearance_mm: Option<f64>,
    /// The voltage at which Table F.8 was read (160 % of the peak for reinforced).
    pub steady_state_peak_v: Option<f64>,
    /// Functional insulation on a board: the creepage table's and IPC-2221B's figures.
    pub functional_figures: Option<FunctionalFigures>,
    pub double_parts: Option<DoubleParts>,
    /// A house minimum (rule table limits.minimum-distances) raised a required figure.
    pub house_minimum_applied: bool,
    pub working_frequency_hz: Option<f64>,
    pub slot_width_mm: Option<f64>,
    /// The narrowest slot or groove that counts toward creepage at this pollution degree
    /// (reduced to a third of the required clearance where that is under 3 mm).
    pub narrowest_slot_mm: f64,
    pub bridged_by: Vec<String>,
    /// The standard whose tables and method gave the figures: "iec60664-1" (the basics),
    /// "iec62368-1", "iec60601-1" or "iec60335-1".
    pub standard: &'static str,
    /// That standard with the edition whose table numbers are cited.
    pub standard_title: &'static str,
    /// Under IEC 60601-1: the means of protection ("1-moop", "2-moop", "1-mopp", "2-mopp");
    /// `grade` is then the insulation it counts as (one means basic, two reinforced).
    pub means_of_protection: Option<&'static str>,
    /// Electric strength test voltage as a.c. rms; null where no test applies (functional
    /// insulation) or the standard's table is not carried, with the reason in `test_v_basis`.
    pub test_v_rms: Option<f64>,
    /// The same test as peak or d.c. volts.
    pub test_v_dc: Option<f64>,
    /// Where the test voltage comes from, or why there is none.
    pub test_v_basis: String,
    /// "computed", "not-applicable" (functional insulation) or "not-carried".
    pub test_v_state: &'static str,
    /// Clearance measured on the board's fabrication files (`[board]`); null where not
    /// measured (no `[board]`, a circuit without `nets`, or no copper of one circuit on an
    /// outer layer).
    pub measured_clearance_mm: Option<f64>,
    /// Creepage measured on the board's fabrication files; null where not measured.
    pub measured_creepage_mm: Option<f64>,
    /// The distances the verdict rests on: the smaller of the declared and the measured
    /// one (either where only one is known).
    pub judged_clearance_mm: Option<f64>,
    pub judged_creepage_mm: Option<f64>,
    /// "clearance" and/or "creepage" where the declared and the measured figure differ by
    /// more than 5 % (or 0.1 mm, whichever is larger).
    pub measured_differs: Vec<&'static str>,
    /// The measurement's witness: paths with their layers and points, inner layers.
    pub board: Option<crate::board::BarrierMeasurement>,
    pub derivation: BarrierDerivation,
}

/// Rounds away floating-point noise for output (micrometre resolution).
pub fn tidy(x: f64) -> f64 {
    (x * 1e6).round() / 1e6
}

/// Rounds up to the next multiple of `step`, ignoring floating-point noise below 1 nm.
pub fn round_up(x: f64, step: f64) -> f64 {
    tidy((x / step - 1e-9).ceil() * step)
}

/// The report's number form, here for the modules that print figures with it.
pub use crate::text::show;

/// Required clearance and creepage of one barrier, judged against its declared distances.
/// Every input outside a table is returned, not only the first.
pub fn evaluate(
    rules: &RuleBook,
    cond: &Conditions,
    barrier: &Barrier,
) -> Result<BarrierResult, Vec<OutOfTable>> {
    let on_board_functional = barrier.grade == Grade::Functional && barrier.printed_board;
    let (clearance, creepage, meta) = if on_board_functional {
        functional_on_board(rules, cond, barrier)?
    } else {
        insulation_coordination(rules, cond, barrier)?
    };
    let (clearance, mut creepage, house) =
        house_minimums(rules, barrier.grade, clearance, creepage);
    let clearance_governed_by = if house.clearance {
        "house-minimum"
    } else {
        meta.clearance_governed_by
    };
    let creepage_governed_by = if house.creepage {
        "house-minimum"
    } else if house.raised_to_clearance {
        "clearance"
    } else {
        meta.creepage_governed_by
    };
    let (narrowest_slot_mm, groove_step) = narrowest_groove(rules, cond, clearance.mm);
    if barrier.slot_width_mm.is_some() {
        creepage.steps.push(groove_step);
    }
    let clearance_margin_mm = barrier.clearance_mm.map(|d| margin(d, clearance.mm));
    let creepage_margin_mm = barrier.creepage_mm.map(|d| margin(d, creepage.mm));
    let verdict = verdict(
        barrier.clearance_mm,
        clearance.mm,
        barrier.creepage_mm,
        creepage.mm,
    );
    Ok(BarrierResult {
        id: barrier.id.clone(),
        between: barrier.between.clone(),
        grade: barrier.grade,
        method: meta.method,
        working_rms_v: barrier.working_rms_v,
        working_peak_v: barrier.working_peak_v,
        rated_impulse_v: meta.rated_impulse_v,
        clearance_impulse_v: meta.clearance_impulse_v,
        pollution_degree: cond.pollution_degree,
        material_group: meta.material_group,
        creepage_column: meta.creepage_column,
        altitude_factor: meta.altitude_factor,
        required_clearance_mm: clearance.mm,
        required_creepage_mm: creepage.mm,
        clearance_mm: barrier.clearance_mm,
        creepage_mm: barrier.creepage_mm,
        clearance_margin_mm,
        creepage_margin_mm,
        verdict,
        clearance_governed_by,
        creepage_governed_by,
        transient_clearance_mm: meta.transient_clearance_mm,
        steady_state_clearance_mm: meta.steady_state_clearance_mm,
        steady_state_peak_v: meta.steady_state_peak_v,
        functional_figures: meta.functional_figures,
        double_parts: meta.double_parts,
        house_minimum_applied: house.clearance || house.creepage,
        working_frequency_hz: barrier.working_frequency_hz,
        slot_width_mm: barrier.slot_width_mm,
        narrowest_slot_mm,
        bridged_by: barrier.bridged_by.clone(),
        // Filled in by `crate::standards::evaluate`, which every caller goes through.
        standard: "iec60664-1",
        standard_title: "IEC 60664-1",
        means_of_protection: None,
        test_v_rms: None,
        test_v_dc: None,
        test_v_basis: String::new(),
        test_v_state: "not-carried",
        measured_clearance_mm: None,
        measured_creepage_mm: None,
        judged_clearance_mm: barrier.clearance_mm,
        judged_creepage_mm: barrier.creepage_mm,
        measured_differs: Vec::new(),
        board: None,
        derivation: BarrierDerivation {
            clearance: figure_derivation(barrier, "clearance", clearance, barrier.clearance_mm),
            creepage: figure_derivation(barrier, "creepage", creepage, barrier.creepage_mm),
            electric_strength: Vec::new(),
        },
    })
}

/// A required distance as a derivation: `<barrier>.clearance` or `<barrier>.creepage`,
/// judged against the declared distance (incomplete where none is declared). Its words are
/// fixed text, so a design of many barriers allocates only the id and the steps.
pub(crate) fn figure_derivation(
    barrier: &Barrier,
    what: &str,
    figure: Figure,
    declared_mm: Option<f64>,
) -> Derivation {
    Derivation {
        id: [barrier.id.as_str(), ".", what].concat(),
        title: if what == "clearance" {
            "Required clearance".into()
        } else {
            "Required creepage".into()
        },
        value: Some(figure.mm),
        unit: "mm".into(),
        verdict: Some(match declared_mm {
            Some(d) => Verdict::of(Some(d < figure.mm)),
            None => Verdict::Incomplete,
        }),
        rests_on: SHARED_BARRIER_INPUTS.iter().map(|k| (*k).into()).collect(),
        steps: figure.steps,
        ..Derivation::default()
    }
}

/// Declared minus required. Rounding to micrometres hides floating-point noise, but a
/// shortfall smaller than that keeps its sign: a distance short of the requirement never
/// shows a margin of zero.
pub(crate) fn margin(declared: f64, required: f64) -> f64 {
    let exact = declared - required;
    let rounded = tidy(exact);
    if exact < 0.0 && rounded >= 0.0 {
        exact
    } else {
        rounded
    }
}

/// The narrowest groove that counts toward creepage: X by pollution degree, reduced to a
/// fraction of the associated clearance (the barrier's required clearance) where that is
/// small.
pub(crate) fn narrowest_groove(
    rules: &RuleBook,
    cond: &Conditions,
    clearance_mm: f64,
) -> (f64, Step) {
    let table = rules.table::<crate::rules::GrooveTable>();
    let pd = cond.pollution_degree.clamp(1, 3);
    let x = table.min_width_mm[(pd - 1) as usize];
    let head = format!(
        "Narrow grooves: in pollution degree {pd} a groove narrower than X = {} mm is bridged ({})",
        show(x),
        table.source
    );
    if let (Some(below), Some(divisor)) = (table.reduce_below_clearance_mm, table.reduced_divisor)
        && clearance_mm < below
    {
        let reduced = clearance_mm / divisor;
        if reduced < x {
            return (
                reduced,
                Step::new(
                    Some(crate::rules::GrooveTable::ID),
                    format!(
                        "{head}; the required clearance {} mm is under {} mm, so X is reduced to it divided by {}: {} mm.",
                        show(clearance_mm),
                        show(below),
                        show(divisor),
                        show(reduced)
                    ),
                ),
            );
        }
    }
    (
        x,
        Step::new(Some(crate::rules::GrooveTable::ID), head + "."),
    )
}

/// Functional insulation on a printed board: IEC 60664-1's creepage table applies to it as
/// well as to basic insulation, and IPC-2221B gives a spacing for correct operation. Both
/// are given; the larger is the required creepage. The clearance is IPC-2221B's figure.
fn functional_on_board(
    rules: &RuleBook,
    cond: &Conditions,
    barrier: &Barrier,
) -> Result<(Figure, Figure, Meta), Vec<OutOfTable>> {
    let ipc = board::functional_spacing(rules, cond, barrier);
    let table = creepage::from_table(rules, cond, barrier, Grade::Basic);
    let (ipc, table) = match (ipc, table) {
        (Ok(i), Ok(t)) => (i, t),
        (i, t) => return Err(i.err().into_iter().chain(t.err()).collect()),
    };
    let ipc_mm = ipc.figure.mm;
    let table_mm = table.figure.mm;
    let mut steps = vec![Step::new(
        None,
        "Functional insulation on a printed board: IEC 60664-1 Table F.5 (F.4 in 2007) applies to functional insulation too, and IPC-2221B gives a spacing for correct operation; both are given and the larger is the required creepage.",
    )];
    steps.extend(table.figure.steps);
    steps.push(Step::new(
        Some(crate::rules::BoardSpacingTable::ID),
        format!(
            "IPC-2221B spacing, column {}: {} mm (see the clearance).",
            ipc.column,
            show(ipc_mm)
        ),
    ));
    let (mm, governed_by) = if table_mm > ipc_mm {
        (table_mm, "creepage-table")
    } else {
        (ipc_mm, "ipc2221b")
    };
    steps.push(Step::new(
        None,
        format!(
            "The {} governs: {} mm (creepage table {} mm, IPC-2221B {} mm).",
            if governed_by == "ipc2221b" {
                "IPC-2221B figure"
            } else {
                "creepage table"
            },
            show(mm),
            show(table_mm),
            show(ipc_mm)
        ),
    ));
    steps.push(Step::new(None, format!(
        "Required creepage (functional): {} mm. A shortfall is a warning: the end-product standard may accept functional insulation that passes a fault test (the insulation short-circuited) instead.",
        show(mm)
    )));
    let creepage = Figure { mm, steps };
    let meta = Meta {
        method: "ipc2221b",
        rated_impulse_v: None,
        clearance_impulse_v: None,
        material_group: Some(table.group.as_str()),
        creepage_column: ipc.column.to_string(),
        altitude_factor: 1.0,
        double_parts: None,
        clearance_governed_by: "ipc2221b",
        creepage_governed_by: governed_by,
        transient_clearance_mm: None,
        steady_state_clearance_mm: None,
        steady_state_peak_v: None,
        functional_figures: Some(FunctionalFigures {
            creepage_table_mm: table_mm,
            creepage_table_column: table.column.to_string(),
            ipc2221b_spacing_mm: ipc_mm,
            ipc2221b_column: ipc.column.to_string(),
        }),
    };
    Ok((ipc.figure, creepage, meta))
}

/// Which figures a house minimum raised, and whether creepage was then raised to clearance.
pub(crate) struct HouseApplied {
    pub(crate) clearance: bool,
    pub(crate) creepage: bool,
    pub(crate) raised_to_clearance: bool,
}

/// Applies a team's own floors (shipped at zero) and keeps creepage at least the clearance.
pub(crate) fn house_minimums(
    rules: &RuleBook,
    grade: Grade,
    mut clearance: Figure,
    mut creepage: Figure,
) -> (Figure, Figure, HouseApplied) {
    let table = rules.table::<crate::rules::MinimumDistances>();
    let mut applied = [false, false];
    for (i, (figure, floor, what)) in [
        (&mut clearance, table.clearance_mm.get(grade), "clearance"),
        (&mut creepage, table.creepage_mm.get(grade), "creepage"),
    ]
    .into_iter()
    .enumerate()
    {
        if floor > figure.mm {
            figure.steps.push(Step::new(
                Some(crate::rules::MinimumDistances::ID),
                format!(
                    "Raised to the house minimum {what} for {} insulation: {} mm ({}).",
                    grade.as_str(),
                    show(floor),
                    table.source
                ),
            ));
            figure.mm = tidy(floor);
            applied[i] = true;
        }
    }
    let mut raised_to_clearance = false;
    if (applied[0] || applied[1]) && creepage.mm < clearance.mm {
        creepage.steps.push(Step::new(
            None,
            format!(
                "Raised to the required clearance {} mm.",
                show(clearance.mm)
            ),
        ));
        creepage.mm = clearance.mm;
        raised_to_clearance = true;
    }
    (
        clearance,
        creepage,
        HouseApplied {
            clearance: applied[0],
            creepage: applied[1] && !raised_to_clearance,
            raised_to_clearance,
        },
    )
}

/// A shortfall fails; otherwise a distance not yet declared leaves the barrier incomplete.
/// The declared distances are compared with the exact required figures, never with a
/// rounded margin or the printed figure.
pub(crate) fn verdict(
    clearance_mm: Option<f64>,
    required_clearance_mm: f64,
    creepage_mm: Option<f64>,
    required_creepage_mm: f64,
) -> Verdict {
    let short = |declared: Option<f64>, required: f64| declared.is_some_and(|d| d < required);
    if short(clearance_mm, required_clearance_mm) || short(creepage_mm, required_creepage_mm) {
        Verdict::Fail
    } else if clearance_mm.is_none() || creepage_mm.is_none() {
        Verdict::Incomplete
    } else {
        Verdict::Pass
    }
}

struct Meta {
    method: &'static str,
    rated_impulse_v: Option<f64>,
    clearance_impulse_v: Option<f64>,
    material_group: Option<&'static str>,
    creepage_column: String,
    altitude_factor: f64,
    double_parts: Option<DoubleParts>,
    clearance_governed_by: &'static str,
    creepage_governed_by: &'static str,
    transient_clearance_mm: Option<f64>,
    steady_state_clearance_mm: Option<f64>,
    steady_state_peak_v: Option<f64>,
    functional_figures: Option<FunctionalFigures>,
}

/// IEC 60664-1 dimensioning for basic, supplementary, reinforced and double insulation
/// (and for functional insulation off a board: the creepage table applies to it as well,
/// and the clearance is dimensioned as basic).
fn insulation_coordination(
    rules: &RuleBook,
    cond: &Conditions,
    barrier: &Barrier,
) -> Result<(Figure, Figure, Meta), Vec<OutOfTable>> {
    let grade = barrier.grade;
    // Double insulation is a basic and a supplementary part, each dimensioned as basic.
    let as_grade = match grade {
        Grade::Reinforced => Grade::Reinforced,
        _ => Grade::Basic,
    };
    let clear = clearance::required(rules, cond, barrier, as_grade);
    // Creepage is still looked up when the clearance failed, so that every input outside
    // a table is reported at once; the result is discarded in that case.
    let no_floor = Figure {
        mm: 0.0,
        steps: Vec::new(),
    };
    let creep = creepage::required(
        rules,
        cond,
        barrier,
        as_grade,
        clear.as_ref().map(|c| &c.figure).unwrap_or(&no_floor),
    );
    let (clear, creep) = match (clear, creep) {
        (Ok(clear), Ok(creep)) => (clear, creep),
        (clear, creep) => return Err(clear.err().into_iter().chain(creep.err()).collect()),
    };
    let mut clearance = clear.figure;
    let mut creepage = creep.figure;
    if grade == Grade::Functional {
        let note = "Functional insulation off a printed board: IEC 60664-1 Table F.5 (F.4 in 2007) applies to functional insulation too, and the clearance is dimensioned as basic (conservative). A shortfall is a warning: the end-product standard may accept functional insulation that passes a fault test (the insulation short-circuited) instead.";
        clearance.steps.insert(0, Step::new(None, note));
        creepage.steps.insert(0, Step::new(None, note));
    }
    let mut double_parts = None;
    if grade == Grade::Double {
        double_parts = Some(DoubleParts {
            basic_clearance_mm: clearance.mm,
            basic_creepage_mm: creepage.mm,
            supplementary_clearance_mm: clearance.mm,
            supplementary_creepage_mm: creepage.mm,
        });
        for (figure, what) in [(&mut clearance, "clearance"), (&mut creepage, "creepage")] {
            let part = figure.mm;
            figure.mm = tidy(part * 2.0);
            figure.steps.push(Step::new(None, format!(
                "Double insulation: basic {what} {} mm + supplementary {what} {} mm (each dimensioned as basic) = {} mm.",
                show(part),
                show(part),
                show(figure.mm)
            )));
        }
    }
    Ok((
        clearance,
        creepage,
        Meta {
            method: "iec60664-1",
            rated_impulse_v: Some(clear.rated_impulse_v),
            clearance_impulse_v: Some(clear.clearance_impulse_v),
            material_group: Some(creep.group.as_str()),
            creepage_column: creep.column.to_string(),
            altitude_factor: clear.altitude_factor,
            double_parts,
            clearance_governed_by: clear.governed_by,
            creepage_governed_by: creep.governed_by,
            transient_clearance_mm: Some(clear.transient_mm),
            steady_state_clearance_mm: Some(clear.steady_state_mm),
            steady_state_peak_v: Some(clear.steady_state_peak_v),
            functional_figures: None,
        },
    ))
}
