//! Power entry: the rectifier's operating point, inrush, fuse, X-capacitor discharge, touch
//! current and electric strength test voltages, from `[input]`, `[input.limiter]`,
//! `[input.fuse]` and `[converter]`. The figures are computed here, each with its formula,
//! inputs and rule references; the checks in `rules/checks/power_entry.toml` judge them.

mod figures;
pub mod inrush;
mod read;
pub mod rectifier;
pub mod series_rlc;
pub mod tables;

use serde::Serialize;

use crate::area::{Area, Evaluation, ExplainItem, ProjectPart};
use crate::diag::{Problems, Source};
use crate::project::Project;
use crate::raw::Located;
use crate::report::Report;
use crate::rules::RuleBook;
use crate::spacing::{BarrierResult, Step, show};
use crate::text::{Digits, number};

pub use crate::derivation::{Derivation as Derived, Input, Verdict};
pub use read::{RawConverter, RawFuse, RawInput, RawLimiter};
pub use rectifier::{Rectifier, SteadyState};
pub use tables::{DischargeRules, FuseRules, MainsDefaults, TouchRules};

/// How the equipment connects to the mains (`input.connection`).
#[derive(Debug, Clone, Copy, PartialEq, Eq, clap::ValueEnum)]
pub enum Connection {
    /// Pluggable equipment type A (a household plug).
    Plug,
    /// Pluggable equipment type B (an industrial plug).
    IndustrialPlug,
    /// Permanently connected.
    Permanent,
}

#[derive(Debug, Clone, Copy, PartialEq, Eq, clap::ValueEnum)]
pub enum LimiterKind {
    Ntc,
    Resistor,
    None,
}

#[derive(Debug, Clone, Copy, PartialEq, Eq, clap::ValueEnum)]
pub enum FuseSpeed {
    Fast,
    TimeLag,
}

crate::domain_words!(Connection, LimiterKind, FuseSpeed);

/// The checked `[input.limiter]` table. For a resistor, `hot_ohm` is `cold_ohm` unless
/// given; for `none`, both are absent.
#[derive(Debug, Clone, PartialEq)]
pub struct LimiterSpec {
    pub kind: LimiterKind,
    pub cold_ohm: Option<f64>,
    pub hot_ohm: Option<f64>,
    pub energy_rating_j: Option<f64>,
}

/// The checked `[input.fuse]` table; every rating may be missing (a warning).
#[derive(Debug, Clone, PartialEq)]
pub struct FuseSpec {
    pub rated_a: Option<f64>,
    pub melting_i2t_a2s: Option<f64>,
    pub breaking_a: Option<f64>,
    pub rated_v: Option<f64>,
    pub speed: Option<FuseSpeed>,
}

/// The checked `[input]` table with its limiter and fuse. Optional keys stay `None` here;
/// `evaluate` applies the defaults and lists them as assumptions.
#[derive(Debug, Clone, PartialEq)]
pub struct InputSpec {
    pub bulk_capacitance_uf: f64,
    pub series_resistance_ohm: f64,
    pub bridge_surge_a: Option<f64>,
    /// Total forward drop of the two conducting bridge diodes (default 0: ideal).
    pub bridge_drop_v: Option<f64>,
    pub x_capacitance_uf: Option<f64>,
    pub bleeder_ohm: Option<f64>,
    /// The bleeder still discharges after any one of its resistors opens (default false).
    pub bleeder_fault_tolerant: Option<bool>,
    pub connection: Option<Connection>,
    /// Prospective short-circuit current at the input, for the fuse's breaking capacity.
    pub prospective_fault_a: Option<f64>,
    /// The end-product standard whose touch-current limits apply (an id of the
    /// touch-current rule table), with where it was written.
    pub end_product_standard: Option<Located<String>>,
    /// Hand-held equipment (a lower touch-current limit for earthed parts of Class I).
    pub hand_held: Option<bool>,
    /// Mains frequency range, where it differs from `mains.frequency_hz`.
    pub min_frequency_hz: Option<f64>,
    pub max_frequency_hz: Option<f64>,
    /// Rated voltage of the bulk capacitor (judged against its highest simulated voltage).
    pub bulk_rated_v: Option<f64>,
    /// The equipment's highest rated supply voltage (240 for a 100-240 V rating), for the
    /// fuse's voltage rating; default `mains.nominal_v`.
    pub highest_rated_v: Option<f64>,
    /// `None` when the project has no `[input.limiter]` (then: no limiter, stated).
    pub limiter: Option<LimiterSpec>,
    /// `None` when the project has no `[input.fuse]` (a blocking finding).
    pub fuse: Option<FuseSpec>,
}

/// The checked `[converter]` table: the load the bulk capacitor feeds.
#[derive(Debug, Clone, PartialEq)]
pub struct ConverterSpec {
    pub output_w: f64,
    /// Fraction, above 0 and at most 1.
    pub efficiency: f64,
    /// Lowest bulk voltage at which the converter still regulates.
    pub min_bulk_v: f64,
    pub switching_hz: f64,
    pub max_duty: f64,
    /// The converter has an active power-factor-correction stage (a small capacitance
    /// after the bridge): Middlebrook's criterion applies to the input filter.
    pub pfc_stage: bool,
}

/// A topic of the power-entry section, as the report shows it.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct Section {
    /// `power_entry.inrush`, `power_entry.operating_point`, ...
    pub id: String,
    pub title: String,
    /// Inputs shared by every figure of the section (the simulation's circuit).
    pub inputs: Vec<Input>,
    pub figures: Vec<Derived>,
    pub notes: Vec<String>,
}

/// The mains range the figures use.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct MainsRange {
    pub min_v: f64,
    pub max_v: f64,
    pub min_frequency_hz: f64,
    pub max_frequency_hz: f64,
    /// Peak of the highest mains voltage, sqrt(2) * max_v.
    pub max_peak_v: f64,
}

#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct LimiterReport {
    /// "ntc", "resistor" or "none" (also when no `[input.limiter]` is given).
    pub kind: LimiterKind,
    pub declared: bool,
    pub cold_ohm: Option<f64>,
    pub hot_ohm: Option<f64>,
    pub energy_rating_j: Option<f64>,
}

#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct InrushReport {
    pub peak_v: f64,
    /// Limiter cold plus series resistance.
    pub cold_path_ohm: f64,
    /// Limiter hot plus series resistance.
    pub hot_path_ohm: f64,
    pub peak_a: f64,
    pub i2t_a2s: f64,
    pub time_constant_ms: f64,
    pub hot_restart_peak_a: f64,
    pub hot_restart_i2t_a2s: f64,
    pub hot_restart_time_constant_ms: f64,
    pub limiter_energy_j: Option<f64>,
    pub bridge_surge_a: Option<f64>,
    /// "r-c" (no filter inductance declared: closed form) or "l-r-c" (through
    /// `emc.filter.dm_inductance_uh`: simulated).
    pub model: &'static str,
    /// The filter's differential-mode inductance in the charging path (l-r-c only).
    pub filter_inductance_uh: Option<f64>,
    pub filter_inductor_resistance_ohm: Option<f64>,
    /// sqrt(L / C) of the l-r-c path: the peak current is about V_pk / this.
    pub characteristic_impedance_ohm: Option<f64>,
    /// V_pk / R, cold and hot (the r-c figure; an upper bound where L is declared).
    pub resistive_peak_a: f64,
    pub resistive_hot_restart_peak_a: f64,
    /// The bulk capacitor's highest voltage at switch-on and at a hot restart.
    pub bulk_peak_v: f64,
    pub hot_restart_bulk_peak_v: f64,
    #[serde(skip)]
    pub exact_peak_a: f64,
    #[serde(skip)]
    pub exact_hot_restart_peak_a: f64,
    #[serde(skip)]
    pub exact_i2t_a2s: f64,
    #[serde(skip)]
    pub exact_hot_restart_i2t_a2s: f64,
    #[serde(skip)]
    pub exact_bulk_peak_v: f64,
}

/// One simulated operating point.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct OperatingPoint {
    /// "low-line" (lowest voltage and frequency) or "high-line".
    pub name: String,
    pub v_rms: f64,
    pub frequency_hz: f64,
    pub series_ohm: f64,
    pub load_w: f64,
    pub bridge_drop_v: f64,
    pub sustained: bool,
    pub converged: bool,
    pub half_cycles: usize,
    pub steps_per_half_cycle: usize,
    pub input_rms_a: Option<f64>,
    pub repetitive_peak_a: Option<f64>,
    pub input_power_w: Option<f64>,
    pub power_factor: Option<f64>,
    pub bulk_valley_v: Option<f64>,
    pub bulk_peak_v: Option<f64>,
    pub bulk_ripple_v: Option<f64>,
    pub conduction_ms: Option<f64>,
    /// Dissipation in the limiter at its hot resistance, I_rms^2 * R.
    pub limiter_dissipation_w: Option<f64>,
    /// |P_in - (P + R I_rms² + V_d I_avg)| / P_in of the simulation (below 0.001 when
    /// the adaptive step converged).
    pub energy_balance_error: Option<f64>,
    #[serde(skip)]
    pub exact_input_rms_a: Option<f64>,
    #[serde(skip)]
    pub exact_bulk_valley_v: Option<f64>,
    #[serde(skip)]
    pub exact_bulk_peak_v: Option<f64>,
}

#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct FuseReport {
    pub rated_a: Option<f64>,
    pub melting_i2t_a2s: Option<f64>,
    pub breaking_a: Option<f64>,
    pub rated_v: Option<f64>,
    pub speed: Option<FuseSpeed>,
    pub derating: f64,
    /// Highest current the fuse should carry: derating * rated_a.
    pub max_operating_a: Option<f64>,
    /// Pulse factor for this speed from the rules; null when the rules give none.
    pub pulse_factor: Option<f64>,
    /// pulse_factor * inrush I2t (cold switch-on).
    pub required_i2t_a2s: Option<f64>,
    pub hot_restart_i2t_a2s: f64,
    pub prospective_fault_a: f64,
    /// The prospective fault current was declared (not the rules' default).
    pub prospective_declared: bool,
    pub mains_max_v: f64,
    /// The equipment's highest rated voltage (`input.highest_rated_v`, default
    /// `mains.nominal_v`): the fuse's voltage rating is judged against it.
    pub rated_supply_v: f64,
    pub rated_supply_declared: bool,
    /// The fuse's rating is below the highest mains voltage with tolerance (a note).
    pub rated_v_below_mains_max: Option<bool>,
}

#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct DischargeReport {
    pub connection: Connection,
    pub x_capacitance_uf: Option<f64>,
    /// The R-C damping network's capacitor (`emc.filter.damping_capacitance_uf`), across
    /// the line too.
    pub damping_capacitance_uf: Option<f64>,
    /// Every capacitance across the line: X capacitance plus the damping capacitor.
    pub across_line_uf: Option<f64>,
    pub bleeder_ohm: Option<f64>,
    pub bleeder_fault_tolerant: bool,
    pub threshold_uf: f64,
    /// The capacitance across the line is above the threshold: a discharge means is needed.
    pub required: bool,
    /// Above the threshold, but the rules apply no limit to this connection: why.
    pub not_applicable_reason: Option<String>,
    pub time_constant_s: Option<f64>,
    /// Limit for this connection; null where the rules give none (permanent).
    pub max_time_constant_s: Option<f64>,
    pub residual_after_s: f64,
    pub residual_v: Option<f64>,
    pub residual_limit_v: Option<f64>,
    #[serde(skip)]
    pub exact_residual_v: Option<f64>,
}

/// One Y-capacitor from a mains or hazardous circuit to an accessible circuit.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct TouchCapacitor {
    pub part: String,
    pub barrier: String,
    pub capacitance_nf: Option<f64>,
    pub count_in_series: u32,
    /// capacitance_nf / count_in_series.
    pub effective_nf: Option<f64>,
    pub current_ma: Option<f64>,
}

/// Touch current into one accessible circuit through the Y-capacitors that reach it.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct TouchCircuit {
    pub circuit: String,
    pub earthed: bool,
    /// How the Y capacitors sit (`emc.filter.y_arrangement`, or the protection class's
    /// default): "each-line" counts only the line side, "single" every capacitor.
    pub arrangement: crate::emc::YArrangement,
    /// The capacitance that drives the touch current under that model.
    pub counted_nf: Option<f64>,
    /// Which limit applies: "not-earthed", "earthed-hand-held" or "earthed".
    pub part: String,
    pub capacitors: Vec<TouchCapacitor>,
    /// 2 pi f V counted_nf; null when a capacitor's capacitance is not declared.
    pub current_ma: Option<f64>,
    /// Null when the rules give no limit for this standard and part.
    pub limit_ma: Option<f64>,
    pub limit_source: Option<String>,
    /// limit_ma - current_ma.
    pub margin_ma: Option<f64>,
}

/// The electric strength (hi-pot) test one barrier calls for.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct TestVoltage {
    pub barrier: String,
    pub grade: crate::project::Grade,
    pub working_peak_v: f64,
    /// False for functional insulation (no test from this table).
    pub required: bool,
    pub test_v_rms: Option<f64>,
    /// The table row used (working voltage up to this peak).
    pub row_up_to_peak_v: Option<f64>,
    /// The working voltage is above the table's last row (not extrapolated).
    pub beyond_table: bool,
    /// Where the test voltage comes from: the table row, or above the table the end-product
    /// standard that provides it; null where no test applies (functional insulation).
    pub test_v_from: Option<String>,
}

/// The `power_entry` section of the report. The first nine fields are the JSON core
/// fields of DESIGN.md (null where the inputs for one are absent).
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct PowerEntryReport {
    pub inrush_peak_a: f64,
    pub inrush_i2t_a2s: f64,
    /// Null when there is no limiter.
    pub limiter_energy_j: Option<f64>,
    pub hot_restart_peak_a: f64,
    pub input_rms_a: Option<f64>,
    pub power_factor: Option<f64>,
    pub bulk_valley_v: Option<f64>,
    pub discharge_time_constant_s: Option<f64>,
    /// The highest touch current into any accessible circuit.
    pub touch_current_ma: Option<f64>,

    pub repetitive_peak_a: Option<f64>,
    pub bulk_ripple_v: Option<f64>,
    /// From the low-line valley down to min_bulk_v at the converter's input power.
    pub hold_up_time_ms: Option<f64>,
    /// `[converter]` min_bulk_v; null without a converter.
    pub min_bulk_v: Option<f64>,
    pub converter_declared: bool,
    /// Every operating point was sustained and converged (true without a converter).
    pub operating_points_sustained: bool,
    pub operating_points_converged: bool,
    pub mains: MainsRange,
    pub limiter: LimiterReport,
    pub inrush: InrushReport,
    pub operating_points: Vec<OperatingPoint>,
    /// Null when the input has no fuse.
    pub fuse: Option<FuseReport>,
    pub discharge: DischargeReport,
    pub end_product_standard: String,
    pub end_product_standard_title: String,
    pub touch: Vec<TouchCircuit>,
    pub test_voltages: Vec<TestVoltage>,
    /// The bulk capacitor's highest voltage: switch-on and hot restart (through the
    /// filter's inductance where one is declared) and the operating points.
    pub bulk_peak_v: f64,
    /// `input.bulk_rated_v`, against which bulk_peak_v is judged; null when not declared.
    pub bulk_rated_v: Option<f64>,
    /// The verdict of every judged figure by its id (without `power_entry.`), e.g.
    /// `inrush_peak_a`, `fuse_rated_supply_v`, `touch.output`: pass, fail, not-judged or
    /// check-input. Made on the unrounded figures; the checks read these.
    pub verdicts: std::collections::BTreeMap<String, Verdict>,
    /// Ratings the described input stage leaves out, as `key (what it is needed for)`.
    pub missing_ratings: Vec<String>,
    /// Defaults applied to power entry, in words.
    pub assumptions: Vec<String>,
    /// The figures by topic, each with formula, inputs and steps.
    pub sections: Vec<Section>,
}

/// The power-entry figures; `None` when the project has no `[input]`.
pub fn evaluate(
    project: &Project,
    rules: &RuleBook,
    barriers: &[BarrierResult],
    source: &Source,
) -> Result<Option<PowerEntryReport>, Problems> {
    figures::evaluate(project, rules, barriers, source)
}

/// The power-entry area: `[input]` and `[converter]`.
pub struct PowerEntry;

impl Area for PowerEntry {
    fn name(&self) -> &'static str {
        "power_entry"
    }

    /// `[input]` (with `[input.limiter]` and `[input.fuse]`) and `[converter]`, with full
    /// validation. Both tables are evaluated, so nothing is added to `not_evaluated`.
    fn read(&self, part: &mut ProjectPart) {
        let (input, converter) = read::read_tables(&mut part.r, &part.root, part.raw);
        part.inputs.input = input;
        part.inputs.converter = converter;
    }

    fn described(&self, project: &Project) -> bool {
        project.input.is_some()
    }

    fn evaluate(&self, run: &mut Evaluation) -> Result<(), Problems> {
        run.sections.power_entry =
            evaluate(run.project, run.rules, &run.sections.barriers, run.source)?;
        Ok(())
    }

    fn explain_items(&self, report: &Report) -> Vec<ExplainItem> {
        let Some(pe) = &report.power_entry else {
            return Vec::new();
        };
        let mut items = vec![ExplainItem::new(
            "power_entry",
            "every power-entry figure and the defaults applied",
        )];
        for s in &pe.sections {
            items.push(ExplainItem::new(&s.id, &s.title));
            for f in &s.figures {
                items.push(ExplainItem::new(&f.id, f.title.as_ref()));
            }
        }
        items
    }

    fn explain(&self, report: &Report, item: &str) -> Option<String> {
        explain(report.power_entry.as_ref()?, item)
    }
}

/// Text for `gapwarden explain` about a power-entry item, if `item` names one:
/// `power_entry` (everything), a section (`power_entry.inrush`, `power_entry.fuse`, ...)
/// or a figure id (`power_entry.inrush_peak_a`, `power_entry.low_line.input_rms_a`, ...).
pub fn explain(report: &PowerEntryReport, item: &str) -> Option<String> {
    let mut out = String::new();
    if item == "power_entry" {
        for s in &report.sections {
            explain_section(&mut out, s);
        }
        if !report.assumptions.is_empty() {
            out.push_str("Assumptions:\n");
            for a in &report.assumptions {
                out.push_str(&format!("- {a}\n"));
            }
        }
        return Some(out);
    }
    if let Some(s) = report.sections.iter().find(|s| s.id == item) {
        explain_section(&mut out, s);
        return Some(out);
    }
    if let Some(figure) = report
        .sections
        .iter()
        .flat_map(|s| &s.figures)
        .find(|f| f.id == item)
    {
        explain_figure(&mut out, figure);
        return Some(out);
    }
    // A field of the JSON report (`power_entry.input_rms_a`) that the sections hold per
    // operating point (`power_entry.low_line.input_rms_a`, ...), or as a whole section.
    let field = item.strip_prefix("power_entry.")?;
    let suffix = format!(".{field}");
    let figures: Vec<&Derived> = report
        .sections
        .iter()
        .flat_map(|s| &s.figures)
        .filter(|f| f.id.ends_with(&suffix))
        .collect();
    if !figures.is_empty() {
        for f in figures {
            explain_figure(&mut out, f);
        }
        return Some(out);
    }
    let section = FIELD_SECTIONS
        .iter()
        .find(|(name, _)| *name == field)
        .and_then(|(_, id)| report.sections.iter().find(|s| s.id == *id))?;
    explain_section(&mut out, section);
    Some(out)
}

/// Fields of the JSON report whose derivation is a whole section rather than one figure.
pub const FIELD_SECTIONS: &[(&str, &str)] = &[
    ("touch_current_ma", "power_entry.touch"),
    ("min_bulk_v", "power_entry.operating_point"),
    ("bulk_rated_v", "power_entry.inrush"),
];

/// Every id `explain` takes for the power entry: the whole, each section, each figure,
/// and the JSON report's fields that map to them.
pub fn explain_items(report: &PowerEntryReport) -> Vec<String> {
    let mut items = vec!["power_entry".to_string()];
    for s in &report.sections {
        items.push(s.id.clone());
        items.extend(s.figures.iter().map(|f| f.id.clone()));
    }
    let figure_ids: Vec<String> = items.clone();
    if let Ok(serde_json::Value::Object(fields)) = serde_json::to_value(report) {
        for (name, value) in fields {
            let item = format!("power_entry.{name}");
            let suffix = format!(".{name}");
            let derivable = figure_ids
                .iter()
                .any(|id| *id == item || id.ends_with(&suffix))
                || FIELD_SECTIONS.iter().any(|(f, _)| *f == name);
            if value.is_number() && derivable && !items.contains(&item) {
                items.push(item);
            }
        }
    }
    items
}

fn explain_section(out: &mut String, s: &Section) {
    out.push_str(&format!("{} ({})\n", s.title, s.id));
    for i in &s.inputs {
        out.push_str(&format!(
            "  {} = {} {} ({})\n",
            i.symbol,
            number(i.value, Digits::SixSignificant),
            i.unit,
            i.from
        ));
    }
    for f in &s.figures {
        explain_figure(out, f);
    }
    for n in &s.notes {
        out.push_str(&format!("  note: {n}\n"));
    }
    out.push('\n');
}

fn explain_figure(out: &mut String, f: &Derived) {
    let value = f
        .value
        .map(|v| format!("{} {}", number(v, Digits::SixSignificant), f.unit))
        .unwrap_or_else(|| match &f.not_computed_because {
            Some(why) => format!("not computed: {why}"),
            None => "not computed".to_string(),
        });
    out.push_str(&format!("{}: {value} ({})\n", f.title, f.id));
    out.push_str(&format!("  formula: {}\n", f.formula));
    for i in &f.inputs {
        out.push_str(&format!(
            "  {} = {} {} ({})\n",
            i.symbol,
            number(i.value, Digits::SixSignificant),
            i.unit,
            i.from
        ));
    }
    for (n, s) in f.steps.iter().enumerate() {
        let rule = s
            .rule
            .as_deref()
            .map(|r| format!(" [{r}]"))
            .unwrap_or_default();
        out.push_str(&format!("  {}. {}{rule}\n", n + 1, s.text));
    }
    if let Some(j) = &f.judged_against {
        out.push_str(&format!("  judged against: {j}\n"));
    }
    if let Some(v) = f.verdict {
        out.push_str(&format!(
            "  verdict: {} (on the unrounded figures{})\n",
            v.as_str(),
            if v == Verdict::CheckInput {
                "; it rests on an input flagged implausible: check that input"
            } else {
                ""
            }
        ));
    }
}

/// A figure as the report model keeps it: exactly as computed. The checks in
/// `rules/checks/power_entry.toml` compare these fields, and a verdict compares exact
/// values, never a rounded figure (a limiter energy of 3.275712 J against a 3.275711 J
/// rating is over it, though both print as 3.27571); text rounds with
/// `text::number(x, Digits::SixSignificant)`.
pub fn significant(x: f64) -> f64 {
    x
}
