//! Required clearance and creepage of one insulation barrier, each with the steps that
//! produced it. Pure functions over the checked project types and the rule book; nothing
//! here reads files or extrapolates a table.

mod board;
mod clearance;
mod creepage;

use serde::Serialize;

use crate::project::{Barrier, BetweenRows, Grade, OvervoltageCategory};
use crate::rules::RuleBook;

/// One step of a derivation: what was done, and the rule table it came from.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct Step {
    pub rule: Option<String>,
    pub text: String,
}

impl Step {
    fn from(rule: &str, text: impl Into<String>) -> Step {
        Step {
            rule: Some(rule.to_string()),
            text: text.into(),
        }
    }

    fn plain(text: impl Into<String>) -> Step {
        Step {
            rule: None,
            text: text.into(),
        }
    }
}

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
    fn new(key: &str, message: impl Into<String>) -> Self {
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
}

#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize)]
#[serde(rename_all = "lowercase")]
pub enum Verdict {
    Pass,
    Fail,
    Incomplete,
    /// The distances would pass, but an input they rest on looks implausible (an
    /// `input.suspicious_value`): the input must be checked before the barrier can pass.
    #[serde(rename = "check-input")]
    CheckInput,
}

impl Verdict {
    /// The word the JSON and the reports use.
    pub fn as_str(self) -> &'static str {
        match self {
            Verdict::Pass => "pass",
            Verdict::Fail => "fail",
            Verdict::Incomplete => "incomplete",
            Verdict::CheckInput => "check-input",
        }
    }
}

/// For double insulation: the basic and supplementary parts, each dimensioned on its own.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct DoubleParts {
    pub basic_clearance_mm: f64,
    pub basic_creepage_mm: f64,
    pub supplementary_clearance_mm: f64,
    pub supplementary_creepage_mm: f64,
}

#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct Derivation {
    pub clearance: Vec<Step>,
    pub creepage: Vec<Step>,
}

/// Everything the report says about one barrier. The field names are the JSON contract.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct BarrierResult {
    pub id: String,
    pub between: [String; 2],
    pub grade: Grade,
    /// "iec60664-1" (insulation coordination) or "ipc2221b" (functional spacing on a board).
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
    pub clearance_margin_mm: Option<f64>,
    pub creepage_margin_mm: Option<f64>,
    pub verdict: Verdict,
    pub double_parts: Option<DoubleParts>,
    /// A house minimum (rule table limits.minimum-distances) raised a required figure.
    pub house_minimum_applied: bool,
    pub working_frequency_hz: Option<f64>,
    pub slot_width_mm: Option<f64>,
    /// The narrowest slot or groove that counts toward creepage at this pollution degree.
    pub narrowest_slot_mm: f64,
    pub bridged_by: Vec<String>,
    pub derivation: Derivation,
}

/// Rounds away floating-point noise for output (micrometre resolution).
pub fn tidy(x: f64) -> f64 {
    (x * 1e6).round() / 1e6
}

/// Rounds up to the next multiple of `step`, ignoring floating-point noise below 1 nm.
pub fn round_up(x: f64, step: f64) -> f64 {
    tidy((x / step - 1e-9).ceil() * step)
}

/// A number as a designer writes it: no trailing zeros.
pub fn show(x: f64) -> String {
    // Rounded to 4 decimals, then printed in the shortest form that reads back the same.
    if !x.is_finite() {
        // A figure that could not be computed is never printed as inf or NaN.
        return "not computed".to_string();
    }
    let rounded = (x * 1e4).round() / 1e4;
    if rounded == 0.0 {
        return "0".to_string();
    }
    if rounded.abs() >= 1e15 {
        // 1e300 as 1e300, not as 301 digits.
        return format!("{rounded:e}");
    }
    format!("{rounded}")
}

/// Required clearance and creepage of one barrier, judged against its declared distances.
/// Every input outside a table is returned, not only the first.
pub fn evaluate(
    rules: &RuleBook,
    cond: &Conditions,
    barrier: &Barrier,
) -> Result<BarrierResult, Vec<OutOfTable>> {
    let on_board_functional = barrier.grade == Grade::Functional && barrier.printed_board;
    let (clearance, creepage, meta) = if on_board_functional {
        let figure = board::functional_spacing(rules, cond, barrier).map_err(|e| vec![e])?;
        let meta = Meta {
            method: "ipc2221b",
            rated_impulse_v: None,
            clearance_impulse_v: None,
            material_group: None,
            creepage_column: figure.column.to_string(),
            altitude_factor: 1.0,
            double_parts: None,
        };
        let mut creepage_steps = figure.figure.steps.clone();
        creepage_steps.push(Step::plain(
            "The same figure serves as creepage for functional spacing on a board.",
        ));
        let creepage = Figure {
            mm: figure.figure.mm,
            steps: creepage_steps,
        };
        (figure.figure, creepage, meta)
    } else {
        insulation_coordination(rules, cond, barrier)?
    };
    let (clearance, creepage, house_minimum_applied) =
        house_minimums(rules, barrier.grade, clearance, creepage);
    let margin = |declared: Option<f64>, required: f64| declared.map(|d| tidy(d - required));
    let clearance_margin_mm = margin(barrier.clearance_mm, clearance.mm);
    let creepage_margin_mm = margin(barrier.creepage_mm, creepage.mm);
    let verdict = verdict(clearance_margin_mm, creepage_margin_mm);
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
        double_parts: meta.double_parts,
        house_minimum_applied,
        working_frequency_hz: barrier.working_frequency_hz,
        slot_width_mm: barrier.slot_width_mm,
        narrowest_slot_mm: rules.grooves.min_width_mm
            [(cond.pollution_degree.clamp(1, 3) - 1) as usize],
        bridged_by: barrier.bridged_by.clone(),
        derivation: Derivation {
            clearance: clearance.steps,
            creepage: creepage.steps,
        },
    })
}

/// Applies a team's own floors (shipped at zero) and keeps creepage at least the clearance.
fn house_minimums(
    rules: &RuleBook,
    grade: Grade,
    mut clearance: Figure,
    mut creepage: Figure,
) -> (Figure, Figure, bool) {
    let table = &rules.minimums;
    let mut applied = false;
    for (figure, floor, what) in [
        (&mut clearance, table.clearance_mm.get(grade), "clearance"),
        (&mut creepage, table.creepage_mm.get(grade), "creepage"),
    ] {
        if floor > figure.mm {
            figure.steps.push(Step::from(
                crate::rules::MinimumDistances::ID,
                format!(
                    "Raised to the house minimum {what} for {} insulation: {} mm ({}).",
                    grade.as_str(),
                    show(floor),
                    table.source
                ),
            ));
            figure.mm = tidy(floor);
            applied = true;
        }
    }
    if applied && creepage.mm < clearance.mm {
        creepage.steps.push(Step::plain(format!(
            "Raised to the required clearance {} mm.",
            show(clearance.mm)
        )));
        creepage.mm = clearance.mm;
    }
    (clearance, creepage, applied)
}

/// A shortfall fails; otherwise a distance not yet declared leaves the barrier incomplete.
fn verdict(clearance_margin: Option<f64>, creepage_margin: Option<f64>) -> Verdict {
    let short = |m: Option<f64>| m.is_some_and(|m| m < 0.0);
    if short(clearance_margin) || short(creepage_margin) {
        Verdict::Fail
    } else if clearance_margin.is_none() || creepage_margin.is_none() {
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
}

/// IEC 60664-1 dimensioning for basic, supplementary, reinforced and double insulation
/// (and for functional insulation off a board, which gets the basic figures).
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
        let note = "Functional insulation off a printed board: the basic figures are applied (conservative); the end-product standard may allow less.";
        clearance.steps.insert(0, Step::plain(note));
        creepage.steps.insert(0, Step::plain(note));
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
            figure.steps.push(Step::plain(format!(
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
        },
    ))
}
