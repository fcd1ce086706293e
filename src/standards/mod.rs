//! End-product standards: which standard's tables and method dimension a barrier and set its
//! electric strength test. The tables are data (`rules/<standard>/*.toml`, one generic row
//! form with a provenance per row); what differs in method (which tables combine and how) is
//! Rust, one module per standard. `evaluate` is the one entry point the report and the
//! `spacing` command call.

mod iec60335;
mod iec60601;
mod iec60664;
mod iec62368;

use serde::{Deserialize, Serialize};

use crate::project::{Barrier, Grade};
use crate::rules::{EPS, Validation};
use crate::spacing::{BarrierResult, Conditions, Figure, OutOfTable, Step, show, tidy};

/// The standard a design is judged against (`[design] standard`).
#[derive(Debug, Clone, Copy, PartialEq, Eq, clap::ValueEnum)]
pub enum Standard {
    #[value(name = "iec62368-1")]
    Iec62368,
    #[value(name = "iec60601-1")]
    Iec60601,
    #[value(name = "iec60335-1")]
    Iec60335,
    /// The horizontal basics (IEC 60664-1); the default.
    #[value(name = "iec60664-1")]
    Iec60664,
}

crate::domain_words!(Standard, Means, GradeWord);

impl Standard {
    /// The words of `[design] standard` and `spacing --standard`, in the order listed.
    pub const WORDS: [&'static str; 4] = ["iec62368-1", "iec60601-1", "iec60335-1", "iec60664-1"];

    pub fn from_word(word: &str) -> Option<Self> {
        crate::diag::word::<Standard>(word)
    }

    /// The standard and the edition whose table numbers the rule files cite.
    pub fn title(self) -> &'static str {
        match self {
            Self::Iec60664 => "IEC 60664-1:2020 (edition 3), the horizontal basics",
            Self::Iec62368 => "IEC 62368-1:2018 (edition 3)",
            Self::Iec60601 => "IEC 60601-1:2005+A1:2012+A2:2020 (edition 3.2)",
            Self::Iec60335 => "IEC 60335-1:2010+A1:2013+A2:2016 (edition 5.2)",
        }
    }

    /// What the standard covers, in a few words for the report.
    pub fn scope(self) -> &'static str {
        match self {
            Self::Iec60664 => {
                "insulation coordination for equipment within low-voltage supply systems (not an end-product standard)"
            }
            Self::Iec62368 => "information and communication technology and multimedia equipment",
            Self::Iec60601 => "medical electrical equipment",
            Self::Iec60335 => "household and similar electrical appliances",
        }
    }

    /// The caution every report under this standard carries.
    pub fn caution(self, named: bool) -> String {
        match (self, named) {
            (Self::Iec60664, false) => format!(
                "No end-product standard is named ([design] standard): the figures are the {} basics. The lab will judge the product against its end-product standard ({}); name it to get that standard's figures.",
                self.title(),
                Self::WORDS[..3].join(", ")
            ),
            (Self::Iec60664, true) => format!(
                "The figures are the {} basics, as the project file asks; the lab will judge the product against its end-product standard.",
                self.title()
            ),
            _ => format!(
                "Figures dimensioned by {} ({}), with the table numbers of that edition; each table says which values a public reproduction confirmed and which are from memory of the standard. A later edition may differ: verify against a licensed copy of the edition the lab applies.",
                self.title(),
                self.scope()
            ),
        }
    }
}

/// A means of protection under IEC 60601-1: for operators (MOOP) or patients (MOPP),
/// counted once or twice.
#[derive(Debug, Clone, Copy, PartialEq, Eq, clap::ValueEnum)]
pub enum Means {
    #[value(name = "1-moop")]
    OneMoop,
    #[value(name = "2-moop")]
    TwoMoop,
    #[value(name = "1-mopp")]
    OneMopp,
    #[value(name = "2-mopp")]
    TwoMopp,
}

impl Means {
    /// The insulation grade the isolation paths and part checks count it as: one means is
    /// one level of protection (basic), two are double or reinforced.
    pub fn grade(self) -> Grade {
        if self.count() == 2 {
            Grade::Reinforced
        } else {
            Grade::Basic
        }
    }

    pub fn count(self) -> u8 {
        match self {
            Self::OneMoop | Self::OneMopp => 1,
            Self::TwoMoop | Self::TwoMopp => 2,
        }
    }

    pub fn for_patient(self) -> bool {
        matches!(self, Self::OneMopp | Self::TwoMopp)
    }
}

/// IEC 60601-1: a capacitor across two means of patient protection must be two Y1 in series
/// (two Y2 do not withstand the 4000 V a.c. test of 2 MOPP; [SLP]). `Some(accepted)` for a
/// capacitor across 2 MOPP, with a step saying why; `None` where the rule does not apply.
pub fn two_mopp_capacitor(
    means: Option<Means>,
    kind: crate::project::PartKind,
    subclass: Option<&str>,
    count_in_series: u32,
    steps: &mut Vec<Step>,
) -> Option<bool> {
    use crate::project::PartKind;
    if means != Some(Means::TwoMopp) || !matches!(kind, PartKind::YCapacitor | PartKind::XCapacitor)
    {
        return None;
    }
    let subclass = subclass?;
    let accepted = subclass == "Y1" && count_in_series >= 2;
    steps.push(Step::new(
        None,
        format!(
            "IEC 60601-1, 2 MOPP: a capacitor across two means of patient protection must be two Y1 in series; Y2 is not enough (a medical power-supply maker's guideline [SLP], one source): {} × {subclass} is {}.",
            count_in_series,
            if accepted { "accepted" } else { "not accepted" }
        ),
    ));
    Some(accepted)
}

/// Basic-rated capacitors in series across double or reinforced insulation (two Y2, say)
/// under a named end-product standard. The published sources carried (rules/SOURCES.md,
/// "Safety capacitors") say that two Y2 in series is community practice under IEC 60950-1,
/// not universal, and that the end-product standard's electric strength test decides (under
/// IEC 60601-1 two Y2 do not withstand the 4000 V a.c. test of 2 MOPP). What they give of a
/// Y2 is its impulse test (5 kV, IEC 60384-14, confirmed against maker data sheets), which
/// is not that electric strength test; no rule of IEC 62368-1, IEC 60335-1 or IEC 60601-1
/// on capacitors in series is carried. So acceptance cannot be proven here: `true` (the
/// lab's test decides, a warning) with a step naming the standard and the barrier's test
/// voltage. `false` under the IEC 60664-1 basics (the IEC 60950-1 practice stands, with a
/// note) or where the series rule did not accept the string (`series_accepted`).
pub fn series_capacitors_test_decides(
    barrier: &crate::spacing::BarrierResult,
    series_accepted: bool,
    subclass: Option<(&str, f64, &str)>,
    count_in_series: u32,
    steps: &mut Vec<Step>,
) -> bool {
    if !series_accepted || barrier.standard == Standard::Iec60664.as_str() {
        return false;
    }
    let test = match (barrier.test_v_rms, barrier.test_v_dc) {
        (Some(rms), Some(dc)) => format!(
            "{} V rms a.c. or {} V peak or d.c. ({})",
            show(rms),
            show(dc),
            barrier.test_v_basis
        ),
        _ => format!("not computed here ({})", barrier.test_v_basis),
    };
    let impulse = subclass
        .map(|(name, v, source)| {
            format!(
                " A {name} is impulse-tested at {} V peak ({source}); an impulse test is not the electric strength test, and no a.c. or d.c. withstand figure of a {name} is carried.",
                show(v)
            )
        })
        .unwrap_or_default();
    steps.push(Step::new(
        None,
        format!(
            "{}: the common practice is not proof under this standard; {count_in_series} basic-rated capacitors in series across {} insulation are accepted only where the string withstands the barrier's electric strength test, {test}.{impulse} The sources carried do not prove it (two Y2 in series is community practice under IEC 60950-1, not universal: rules/SOURCES.md \"Safety capacitors\"), so the lab's electric strength test decides: a warning, not a pass.",
            barrier.standard_title,
            barrier.means_of_protection.unwrap_or(barrier.grade.as_str()),
        ),
    ));
    true
}

/// The words a barrier's `grade` may take: the means of protection (accepted only under
/// IEC 60601-1), then the insulation grades.
#[derive(Debug, Clone, Copy, PartialEq, Eq, clap::ValueEnum)]
pub enum GradeWord {
    #[value(name = "1-moop")]
    OneMoop,
    #[value(name = "2-moop")]
    TwoMoop,
    #[value(name = "1-mopp")]
    OneMopp,
    #[value(name = "2-mopp")]
    TwoMopp,
    Functional,
    Basic,
    Supplementary,
    Reinforced,
    Double,
}

impl GradeWord {
    /// The insulation grade, and the means of protection where the word names one.
    pub fn split(self) -> (Grade, Option<Means>) {
        let means = |m: Means| (m.grade(), Some(m));
        match self {
            Self::OneMoop => means(Means::OneMoop),
            Self::TwoMoop => means(Means::TwoMoop),
            Self::OneMopp => means(Means::OneMopp),
            Self::TwoMopp => means(Means::TwoMopp),
            Self::Functional => (Grade::Functional, None),
            Self::Basic => (Grade::Basic, None),
            Self::Supplementary => (Grade::Supplementary, None),
            Self::Reinforced => (Grade::Reinforced, None),
            Self::Double => (Grade::Double, None),
        }
    }
}

/// How far a row of a standard's table is known to be right.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Deserialize, Serialize)]
#[serde(rename_all = "kebab-case")]
pub enum RowStatus {
    /// Compared with a public reproduction.
    Confirmed,
    /// One credible source, not compared with a second.
    OneSource,
    /// Written down from memory of the standard.
    FromMemory,
}

#[derive(Debug, Clone, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct StandardRow {
    /// The row holds up to and including this value of the table's key.
    pub up_to: f64,
    pub values: Vec<f64>,
    pub status: RowStatus,
    /// Where the row comes from.
    pub note: String,
}

/// A named figure of a standard's method (a factor, a limit), with its provenance.
#[derive(Debug, Clone, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct Constant {
    pub name: String,
    pub value: f64,
    pub status: RowStatus,
    pub note: String,
}

/// One table of an end-product standard: rows keyed by a voltage (or altitude, or pollution
/// degree), one value per column, each row with its own provenance.
#[derive(Debug, Clone, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct StandardTable {
    pub id: String,
    pub title: String,
    pub source: String,
    pub provenance: String,
    #[serde(default)]
    pub overrides: bool,
    pub standard: String,
    /// What the rows are keyed by, in words with the unit.
    pub key: String,
    pub columns: Vec<String>,
    #[serde(default)]
    pub constants: Vec<Constant>,
    pub rows: Vec<StandardRow>,
}

impl StandardTable {
    /// Rejects a table the engine could not read safely (the loader locates the path).
    pub fn check(&self) -> Result<(), String> {
        if Standard::from_word(&self.standard).is_none() {
            return Err(format!(
                "standard: \"{}\" is not one of {}",
                self.standard,
                Standard::WORDS.join(", ")
            ));
        }
        let mut last = f64::NEG_INFINITY;
        for (i, row) in self.rows.iter().enumerate() {
            let n = i + 1;
            if !row.up_to.is_finite() || row.up_to < 0.0 {
                return Err(format!(
                    "rows[{n}].up_to: {} is not a finite figure of 0 or more",
                    row.up_to
                ));
            }
            if row.up_to <= last {
                return Err(format!(
                    "rows[{n}].up_to: rows must be in strictly ascending order ({} follows {last})",
                    row.up_to
                ));
            }
            last = row.up_to;
            if row.values.len() != self.columns.len() {
                return Err(format!(
                    "rows[{n}].values: the row up to {} has {} values for {} columns",
                    row.up_to,
                    row.values.len(),
                    self.columns.len()
                ));
            }
            if let Some(v) = row.values.iter().find(|v| !v.is_finite() || **v < 0.0) {
                return Err(format!(
                    "rows[{n}].values: {v} is not a finite figure of 0 or more"
                ));
            }
        }
        if self.rows.is_empty() {
            return Err("rows: the table has no rows".to_string());
        }
        if let Some(c) = self.constants.iter().find(|c| !c.value.is_finite()) {
            return Err(format!("constants: {} is not a finite figure", c.value));
        }
        Ok(())
    }
}

/// A value read from a standard's table, with the row it came from.
pub struct Reading {
    pub value: f64,
    pub index: usize,
    pub up_to: f64,
    pub step: Step,
}

impl StandardTable {
    fn title_of_standard(&self) -> &'static str {
        Standard::from_word(&self.standard)
            .map(Standard::title)
            .unwrap_or("the end-product standard")
    }

    /// A row's provenance in words for a derivation step.
    fn provenance_words(&self, status: RowStatus, note: &str) -> String {
        // Pieces joined rather than `format!`ted: the same text for less work, in one of
        // the most frequent derivation steps (tests::readings_read_as_formatted).
        match status {
            RowStatus::Confirmed => ["confirmed: ", note].concat(),
            RowStatus::OneSource => {
                ["one source: ", note, "; verify against a licensed copy"].concat()
            }
            RowStatus::FromMemory => [
                "from memory of ",
                self.title_of_standard(),
                "; verify against a licensed copy (",
                note,
                ")",
            ]
            .concat(),
        }
    }

    /// A named constant of the method, with a step citing it.
    pub fn constant(&self, name: &str) -> Result<(f64, String), OutOfTable> {
        match self.constants.iter().find(|c| c.name == name) {
            Some(c) => Ok((c.value, self.provenance_words(c.status, &c.note))),
            None => Err(OutOfTable::new(
                "rules",
                format!("rule table {} carries no constant \"{name}\"", self.id),
            )),
        }
    }

    /// The row for `x`: the first whose `up_to` is at or above it (the next higher row,
    /// never interpolated); above the last row the figure is not carried. `key` names the
    /// input for the message, `what` the figure for the step.
    pub fn read(&self, x: f64, column: &str, key: &str, what: &str) -> Result<Reading, OutOfTable> {
        let Some(col) = self.columns.iter().position(|c| c == column) else {
            return Err(OutOfTable::new(
                "rules",
                format!("rule table {} has no column \"{column}\"", self.id),
            ));
        };
        let Some(index) = self.rows.iter().position(|r| r.up_to >= x - EPS) else {
            let last = self.rows.last().map(|r| r.up_to).unwrap_or(0.0);
            return Err(OutOfTable::new(
                key,
                format!(
                    "{what}: {} ({}) is above the last row of {} (up to {}): not carried for this standard; the tool does not extrapolate",
                    crate::text::apart(x, &[last], show),
                    self.key,
                    self.source,
                    show(last)
                ),
            ));
        };
        self.reading(index, col, x, what)
    }

    /// The value of row `index` in `column`, as `read` would return it.
    pub fn at_row(
        &self,
        index: usize,
        column: &str,
        x: f64,
        what: &str,
    ) -> Result<Reading, OutOfTable> {
        let Some(col) = self.columns.iter().position(|c| c == column) else {
            return Err(OutOfTable::new(
                "rules",
                format!("rule table {} has no column \"{column}\"", self.id),
            ));
        };
        self.reading(index, col, x, what)
    }

    fn reading(&self, index: usize, col: usize, x: f64, what: &str) -> Result<Reading, OutOfTable> {
        let Some(row) = self.rows.get(index) else {
            return Err(OutOfTable::new(
                "rules",
                format!("rule table {} has no row {index}", self.id),
            ));
        };
        let value = row.values[col];
        // The step's text from its pieces (the same words as `format!` would write, with
        // less work: tests::readings_read_as_formatted).
        let up_to = show(row.up_to);
        let x_words = show(x);
        let at: [&str; 4] = if (row.up_to - x).abs() < EPS {
            ["row ", &up_to, "", ""]
        } else if index == 0 {
            [&x_words, " is below the first row; row up to ", &up_to, ""]
        } else {
            [
                &x_words,
                " falls in the row up to ",
                &up_to,
                " (the next higher row; never interpolated)",
            ]
        };
        let provenance = self.provenance_words(row.status, &row.note);
        let value_words = show(value);
        let text = [
            what,
            ": ",
            &self.source,
            ", ",
            at[0],
            at[1],
            at[2],
            at[3],
            " (",
            &self.key,
            "), column ",
            &self.columns[col],
            ": ",
            &value_words,
            " (",
            &provenance,
            ").",
        ]
        .concat();
        Ok(Reading {
            value,
            index,
            up_to: row.up_to,
            step: Step::new(Some(&self.id), text),
        })
    }
}

/// The end-product standards' tables (one generic form under many ids), read from the
/// rule book's store on first use.
#[derive(Debug, Clone, Copy)]
pub struct StandardRules<'a> {
    store: &'a crate::rules::TableStore,
}

impl<'a> StandardRules<'a> {
    /// The ids the methods read; each must be loaded (a house file may replace one).
    pub const IDS: &'static [&'static str] = &[
        iec62368::TABLE_10,
        iec62368::TABLE_10_MINIMUMS,
        iec62368::TABLE_12,
        iec62368::TABLE_14,
        iec62368::TABLE_16,
        iec62368::TABLE_17,
        iec62368::TABLE_25,
        iec62368::TABLE_27,
        iec60601::MOPP,
        iec60601::MOOP,
        iec60601::TEST_VOLTAGES,
        iec60335::TABLE_15,
        iec60335::TABLE_16,
        iec60335::TABLE_17,
        iec60335::TEST_VOLTAGES,
    ];

    pub(crate) fn new(store: &'a crate::rules::TableStore) -> Self {
        StandardRules { store }
    }

    /// When the rule book is loaded: every id is there, and a house table is read and
    /// checked now.
    pub(crate) fn require(tables: &mut Validation) {
        for id in Self::IDS {
            tables.require::<StandardTable>(id, StandardTable::check);
        }
    }

    fn table(&self, id: &str) -> Result<&'a StandardTable, OutOfTable> {
        self.store
            .by_id::<StandardTable>(id, StandardTable::check)
            .map_err(|d| OutOfTable::new("rules", d.message))
    }

    /// The standard each rule file belongs to, for `gapwarden rules`: the standards' own
    /// folders, then the basics and the tables every standard shares.
    pub fn standard_of(file: &str) -> &'static str {
        for word in Standard::WORDS {
            if file.starts_with(&format!("{word}/")) {
                return word;
            }
        }
        "shared"
    }
}

/// The electric strength test of one barrier: a.c. rms and peak or d.c., or why there is none.
#[derive(Debug, Clone, PartialEq)]
pub struct ElectricStrength {
    pub test_v_rms: Option<f64>,
    pub test_v_dc: Option<f64>,
    /// Where the figure comes from, or why there is none.
    pub basis: String,
    /// "computed", "not-applicable" (functional insulation) or "not-carried".
    pub state: &'static str,
    pub steps: Vec<Step>,
}

impl ElectricStrength {
    fn functional(standard: Standard) -> Self {
        ElectricStrength {
            test_v_rms: None,
            test_v_dc: None,
            basis: "no electric strength test applies to functional insulation".to_string(),
            state: "not-applicable",
            steps: vec![Step::new(
                None,
                format!(
                    "Functional insulation: no electric strength test applies ({}).",
                    standard.title()
                ),
            )],
        }
    }

    fn not_carried(reason: String, mut steps: Vec<Step>) -> Self {
        steps.push(Step::new(None, format!("No test voltage given: {reason}.")));
        ElectricStrength {
            test_v_rms: None,
            test_v_dc: None,
            basis: format!("not carried for this standard: {reason}"),
            state: "not-carried",
            steps,
        }
    }

    /// From a peak or d.c. test voltage: the a.c. test is its peak over √2, rounded up to
    /// the volt (rounding up never weakens a test).
    fn from_peak(peak_v: f64, basis: String, mut steps: Vec<Step>) -> Self {
        let rms = (peak_v / std::f64::consts::SQRT_2 - 1e-9).ceil();
        steps.push(Step::new(
            None,
            format!(
                "Test voltage {} V peak or d.c.; as an a.c. test {} V / √2 = {} V rms, rounded up to the volt (one source for the a.c. equivalence).",
                show(peak_v),
                show(peak_v),
                show(rms)
            ),
        ));
        ElectricStrength {
            test_v_rms: Some(rms),
            test_v_dc: Some(peak_v),
            basis,
            state: "computed",
            steps,
        }
    }

    /// From an a.c. test voltage: the peak of that a.c. voltage stands beside it.
    fn from_rms(rms_v: f64, basis: String, mut steps: Vec<Step>) -> Self {
        let peak = tidy(rms_v * std::f64::consts::SQRT_2);
        steps.push(Step::new(
            None,
            format!(
                "Test voltage {} V rms a.c.; its peak {} V × √2 = {} V stands as the peak figure (whether a d.c. test of that value is accepted is the standard's call).",
                show(rms_v),
                show(rms_v),
                show(peak)
            ),
        ));
        ElectricStrength {
            test_v_rms: Some(rms_v),
            test_v_dc: Some(peak),
            basis,
            state: "computed",
            steps,
        }
    }
}

/// What a standard's method found for one barrier, before house minimums and the verdict.
struct Dimensioned {
    clearance: Figure,
    creepage: Figure,
    method: &'static str,
    clearance_governed_by: &'static str,
    creepage_governed_by: &'static str,
    rated_impulse_v: Option<f64>,
    clearance_impulse_v: Option<f64>,
    altitude_factor: f64,
    creepage_column: String,
    material_group: Option<&'static str>,
    double_parts: Option<crate::spacing::DoubleParts>,
    /// Figures of the two clearance requirements, where the method has two.
    transient_clearance_mm: Option<f64>,
    steady_state_clearance_mm: Option<f64>,
    steady_state_peak_v: Option<f64>,
}

/// Required clearance, creepage and electric strength test of one barrier under `standard`.
/// The IEC 60664-1 basics are computed first (grooves, board spacing and the functional
/// rules come from there); a standard's method then replaces the required figures with its
/// own, and every input outside one of its tables is returned, not only the first.
pub fn evaluate(
    rules: &crate::rules::RuleBook,
    cond: &Conditions,
    standard: Standard,
    barrier: &Barrier,
) -> Result<BarrierResult, Vec<OutOfTable>> {
    let std_rules = &rules.standards();
    if barrier.means.is_some() && standard != Standard::Iec60601 {
        return Err(vec![OutOfTable::new(
            "grade",
            format!(
                "\"{}\" is a means of protection of IEC 60601-1; under {} a barrier's grade is one of functional, basic, supplementary, reinforced or double (or set [design] standard = \"iec60601-1\")",
                barrier.means.map(Means::as_str).unwrap_or_default(),
                standard.as_str()
            ),
        )]);
    }
    if standard == Standard::Iec60601
        && barrier.means.is_none()
        && barrier.grade != Grade::Functional
    {
        return Err(vec![OutOfTable::new(
            "grade",
            format!(
                "under IEC 60601-1 a barrier's grade is a means of protection: 1-moop, 2-moop, 1-mopp or 2-mopp (or functional), not \"{}\"",
                barrier.grade.as_str()
            ),
        )]);
    }
    let mut result = crate::spacing::evaluate(rules, cond, barrier)?;
    result.standard = standard.as_str();
    result.standard_title = standard.title();
    result.means_of_protection = barrier.means.map(Means::as_str);
    let dims = match standard {
        Standard::Iec60664 => None,
        // Functional insulation keeps the basics' figures under every standard: none of
        // the standards' functional tables is carried (see each module).
        _ if barrier.grade == Grade::Functional => {
            let note = match standard {
                Standard::Iec60335 => {
                    "IEC 60335-1 Table 18 (creepage of functional insulation) is not carried (its values are not confirmed): the IEC 60664-1 figures below stand in for it; they are not smaller than Table 18's (from memory). Verify against a licensed copy."
                }
                _ => {
                    "The standard's own rules for functional insulation are not carried: the IEC 60664-1 figures below stand in for them (functional insulation is usually accepted where a fault test with it short-circuited passes)."
                }
            };
            for steps in [
                &mut result.derivation.clearance,
                &mut result.derivation.creepage,
            ] {
                steps
                    .steps
                    .insert(0, Step::new(None, format!("{}: {note}", standard.title())));
            }
            None
        }
        Standard::Iec62368 => Some(iec62368::dimension(std_rules, rules, cond, barrier)?),
        Standard::Iec60601 => Some(iec60601::dimension(std_rules, cond, barrier)?),
        Standard::Iec60335 => Some(iec60335::dimension(
            std_rules, rules, cond, barrier, &result,
        )?),
    };
    if let Some(d) = dims {
        apply(rules, cond, barrier, &mut result, d);
    }
    let strength = if barrier.grade == Grade::Functional {
        ElectricStrength::functional(standard)
    } else {
        match standard {
            Standard::Iec60664 => iec60664::electric_strength(rules, barrier),
            Standard::Iec62368 => iec62368::electric_strength(std_rules, cond, barrier),
            Standard::Iec60601 => iec60601::electric_strength(std_rules, barrier),
            Standard::Iec60335 => iec60335::electric_strength(std_rules, barrier),
        }
    };
    result.test_v_rms = strength.test_v_rms;
    result.test_v_dc = strength.test_v_dc;
    result.test_v_basis = strength.basis;
    result.test_v_state = strength.state;
    result.derivation.electric_strength = strength.steps;
    Ok(result)
}

/// Puts a standard's figures into the result: house minimums, creepage never below
/// clearance, the narrowest groove, margins and the verdict, as the basics do.
fn apply(
    rules: &crate::rules::RuleBook,
    cond: &Conditions,
    barrier: &Barrier,
    r: &mut BarrierResult,
    d: Dimensioned,
) {
    let (clearance, mut creepage, house) =
        crate::spacing::house_minimums(rules, barrier.grade, d.clearance, d.creepage);
    let (narrowest, groove_step) = crate::spacing::narrowest_groove(rules, cond, clearance.mm);
    if barrier.slot_width_mm.is_some() {
        creepage.steps.push(groove_step);
    }
    r.method = d.method;
    r.rated_impulse_v = d.rated_impulse_v;
    r.clearance_impulse_v = d.clearance_impulse_v;
    r.altitude_factor = d.altitude_factor;
    r.creepage_column = d.creepage_column;
    r.material_group = d.material_group;
    r.double_parts = d.double_parts;
    r.functional_figures = None;
    r.transient_clearance_mm = d.transient_clearance_mm;
    r.steady_state_clearance_mm = d.steady_state_clearance_mm;
    r.steady_state_peak_v = d.steady_state_peak_v;
    r.clearance_governed_by = if house.clearance {
        "house-minimum"
    } else {
        d.clearance_governed_by
    };
    r.creepage_governed_by = if house.creepage {
        "house-minimum"
    } else if house.raised_to_clearance {
        "clearance"
    } else {
        d.creepage_governed_by
    };
    r.house_minimum_applied = house.clearance || house.creepage;
    r.narrowest_slot_mm = narrowest;
    r.required_clearance_mm = clearance.mm;
    r.required_creepage_mm = creepage.mm;
    r.clearance_margin_mm = barrier
        .clearance_mm
        .map(|v| crate::spacing::margin(v, clearance.mm));
    r.creepage_margin_mm = barrier
        .creepage_mm
        .map(|v| crate::spacing::margin(v, creepage.mm));
    r.verdict = crate::spacing::verdict(
        barrier.clearance_mm,
        clearance.mm,
        barrier.creepage_mm,
        creepage.mm,
    );
    r.derivation.clearance =
        crate::spacing::figure_derivation(barrier, "clearance", clearance, barrier.clearance_mm);
    r.derivation.creepage =
        crate::spacing::figure_derivation(barrier, "creepage", creepage, barrier.creepage_mm);
}

/// Collects two lookups that may both fail, so that every refusal is reported at once.
fn both<A, B>(
    a: Result<A, OutOfTable>,
    b: Result<B, OutOfTable>,
) -> Result<(A, B), Vec<OutOfTable>> {
    match (a, b) {
        (Ok(a), Ok(b)) => Ok((a, b)),
        (a, b) => Err(a.err().into_iter().chain(b.err()).collect()),
    }
}

/// Creepage never below the clearance (common practice in dimensioning; from memory).
fn at_least_clearance(creepage: &mut Figure, clearance_mm: f64) -> bool {
    if creepage.mm < clearance_mm {
        creepage.steps.push(Step::new(
            None,
            format!(
                "Raised to the required clearance {} mm: a creepage distance is never less than its clearance (common practice; from memory).",
                show(clearance_mm)
            ),
        ));
        creepage.mm = clearance_mm;
        true
    } else {
        false
    }
}

/// How the last step of a figure names its grade (after double insulation is summed).
fn figure_label(grade: Grade) -> &'static str {
    match grade {
        Grade::Double => "double insulation, basic plus supplementary",
        g => crate::spacing::grade_label(g),
    }
}

/// Double insulation: a basic and a supplementary part, each dimensioned as basic.
fn double_up(clearance: &mut Figure, creepage: &mut Figure) -> crate::spacing::DoubleParts {
    let parts = crate::spacing::DoubleParts {
        basic_clearance_mm: clearance.mm,
        basic_creepage_mm: creepage.mm,
        supplementary_clearance_mm: clearance.mm,
        supplementary_creepage_mm: creepage.mm,
    };
    for (figure, what) in [(clearance, "clearance"), (creepage, "creepage")] {
        let part = figure.mm;
        figure.mm = tidy(part * 2.0);
        figure.steps.push(Step::new(None, format!(
            "Double insulation: basic {what} {} mm + supplementary {what} {} mm (each dimensioned as basic) = {} mm.",
            show(part),
            show(part),
            show(figure.mm)
        )));
    }
    parts
}

/// The general creepage column for a pollution degree and material group (the standards'
/// creepage tables carry no printed-wiring columns here).
fn general_column(pollution_degree: u8, group: crate::project::MaterialGroup) -> &'static str {
    use crate::project::MaterialGroup as G;
    match (pollution_degree, group) {
        (1, _) => "pd1",
        (2, G::I) => "pd2_group_i",
        (2, G::II) => "pd2_group_ii",
        (2, _) => "pd2_group_iii",
        (_, G::I) => "pd3_group_i",
        (_, G::II) => "pd3_group_ii",
        (_, _) => "pd3_group_iii",
    }
}

/// The column of a mains-transient table (IEC 62368-1 Table 12, IEC 60335-1 Table 15) for
/// the project's overvoltage category.
fn overvoltage_column(category: crate::project::OvervoltageCategory) -> &'static str {
    use crate::project::OvervoltageCategory as C;
    match category {
        C::I => "ovc_i",
        C::II => "ovc_ii",
        C::III => "ovc_iii",
        C::IV => "ovc_iv",
    }
}

/// `basic` times the table's `reinforced_factor` constant, with a step citing it.
fn times_reinforced_factor(
    table: &StandardTable,
    basic: f64,
    steps: &mut Vec<Step>,
) -> Result<f64, OutOfTable> {
    let (factor, why) = table.constant("reinforced_factor")?;
    let mm = tidy(basic * factor);
    steps.push(Step::new(
        Some(&table.id),
        format!(
            "Reinforced insulation: {} × {} = {} mm ({why}).",
            show(basic),
            show(factor),
            show(mm)
        ),
    ));
    Ok(mm)
}

/// What a standard says about its creepage table where the project asks for something the
/// table is not carried for.
struct CreepageNotes {
    /// On a printed board: the table's general columns are used.
    printed_board: &'static str,
    /// With `creepage_between_rows = "interpolate"`, where the standard's table is read at
    /// the next higher row instead (None: said nowhere).
    interpolate: Option<&'static str>,
}

/// Creepage from a standard's creepage table by working voltage (IEC 62368-1 Table 17,
/// IEC 60335-1 Table 17): material group, the general column for the pollution degree,
/// the basic figure, and reinforced by the table's factor.
fn table_creepage(
    t: &StandardRules,
    table_id: &str,
    notes: &CreepageNotes,
    rules: &crate::rules::RuleBook,
    cond: &Conditions,
    barrier: &Barrier,
    reinforced: bool,
) -> Result<(Figure, &'static str, crate::project::MaterialGroup), OutOfTable> {
    let table = t.table(table_id)?;
    let mut steps = Vec::new();
    let (group, step) = crate::spacing::material_group(
        rules.table::<crate::rules::MaterialGroupTable>(),
        barrier.material,
    )?;
    steps.push(step);
    let column = general_column(cond.pollution_degree.clamp(1, 3), group);
    if barrier.printed_board {
        steps.push(Step::new(None, notes.printed_board));
    }
    if let Some(note) = notes.interpolate
        && cond.creepage_between_rows == crate::project::BetweenRows::Interpolate
    {
        steps.push(Step::new(None, note));
    }
    let basic = table.read(
        barrier.working_rms_v,
        column,
        "working_rms_v",
        "Basic creepage",
    )?;
    steps.push(basic.step);
    let mm = if reinforced {
        times_reinforced_factor(table, basic.value, &mut steps)?
    } else {
        basic.value
    };
    Ok((Figure { mm, steps }, column, group))
}

/// The method IEC 62368-1 and IEC 60335-1 share once their own clearance is found: the
/// creepage from the standard's creepage table (`creepage`: the rules, the table's id and
/// its notes), both refusals at once, then `finish`. Returns the figures with the fields
/// the clearance method sets left empty (the caller fills them), and what the clearance
/// method returned beside its figure.
fn with_table_creepage<C>(
    creepage: (&StandardRules, &str, &CreepageNotes),
    rules: &crate::rules::RuleBook,
    cond: &Conditions,
    barrier: &Barrier,
    clearance: Result<(Figure, C), OutOfTable>,
) -> Result<(Dimensioned, C), Vec<OutOfTable>> {
    let (t, table_id, notes) = creepage;
    let reinforced = barrier.grade == Grade::Reinforced;
    let ((mut clearance, found), (mut creepage, column, group)) = both(
        clearance,
        table_creepage(t, table_id, notes, rules, cond, barrier, reinforced),
    )?;
    let (creepage_governed_by, double_parts) = finish(&mut clearance, &mut creepage, barrier.grade);
    Ok((
        Dimensioned {
            clearance,
            creepage,
            method: "",
            clearance_governed_by: "",
            creepage_governed_by,
            rated_impulse_v: None,
            clearance_impulse_v: None,
            altitude_factor: 1.0,
            creepage_column: column.to_string(),
            material_group: Some(group.as_str()),
            double_parts,
            transient_clearance_mm: None,
            steady_state_clearance_mm: None,
            steady_state_peak_v: None,
        },
        found,
    ))
}

/// After a standard's tables: creepage never below the clearance, double insulation as
/// basic plus supplementary, and each figure's last step. Returns what governs the creepage
/// ("creepage-table" or "clearance") and the double insulation's parts.
fn finish(
    clearance: &mut Figure,
    creepage: &mut Figure,
    grade: Grade,
) -> (&'static str, Option<crate::spacing::DoubleParts>) {
    let creepage_governed_by = if at_least_clearance(creepage, clearance.mm) {
        "clearance"
    } else {
        "creepage-table"
    };
    let double_parts = (grade == Grade::Double).then(|| double_up(clearance, creepage));
    let label = figure_label(grade);
    for (figure, what) in [(clearance, "clearance"), (creepage, "creepage")] {
        let mm = figure.mm;
        figure.steps.push(Step::new(
            None,
            format!("Required {what} ({label}): {} mm.", show(mm)),
        ));
    }
    (creepage_governed_by, double_parts)
}

/// The altitude above which a standard whose tables hold to 2000 m carries no factor.
fn refuse_above_2000_m(standard: Standard, cond: &Conditions) -> Result<(), OutOfTable> {
    if cond.altitude_m > 2000.0 + EPS {
        Err(OutOfTable::new(
            "environment.altitude_m",
            format!(
                "{} m: the {} figures carried hold up to 2000 m and its altitude factors are not carried for this standard",
                show(cond.altitude_m),
                standard.title()
            ),
        ))
    } else {
        Ok(())
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    /// `provenance_words` as first written, with `format!`: the reference for the joined
    /// pieces.
    fn provenance_reference(table: &StandardTable, status: RowStatus, note: &str) -> String {
        match status {
            RowStatus::Confirmed => format!("confirmed: {note}"),
            RowStatus::OneSource => {
                format!("one source: {note}; verify against a licensed copy")
            }
            RowStatus::FromMemory => format!(
                "from memory of {}; verify against a licensed copy ({note})",
                table.title_of_standard()
            ),
        }
    }

    /// A reading's step text as first written, with `format!`.
    fn step_reference(
        table: &StandardTable,
        index: usize,
        col: usize,
        x: f64,
        what: &str,
    ) -> String {
        let row = &table.rows[index];
        let value = row.values[col];
        let at = if (row.up_to - x).abs() < EPS {
            format!("row {}", show(row.up_to))
        } else if index == 0 {
            format!(
                "{} is below the first row; row up to {}",
                show(x),
                show(row.up_to)
            )
        } else {
            format!(
                "{} falls in the row up to {} (the next higher row; never interpolated)",
                show(x),
                show(row.up_to)
            )
        };
        format!(
            "{what}: {}, {} ({}), column {}: {} ({}).",
            table.source,
            at,
            table.key,
            table.columns[col],
            show(value),
            provenance_reference(table, row.status, &row.note)
        )
    }

    /// Every row and column of every shipped standard table, read at its row, below the
    /// first row and between rows, and every provenance: the same text as `format!` wrote.
    #[test]
    fn readings_read_as_formatted() {
        let rules = crate::rules::RuleBook::shipped().expect("the shipped rules load");
        let standards = rules.standards();
        let mut compared = 0;
        for id in StandardRules::IDS {
            let table = standards.table(id).expect("a shipped table");
            for (index, row) in table.rows.iter().enumerate() {
                let below = if index == 0 {
                    row.up_to - 1.0
                } else {
                    (table.rows[index - 1].up_to + row.up_to) / 2.0
                };
                for col in 0..table.columns.len() {
                    for x in [row.up_to, below, row.up_to - 0.123_45] {
                        let Ok(reading) = table.reading(index, col, x, "figure (the test's)")
                        else {
                            continue;
                        };
                        assert_eq!(
                            reading.step.text,
                            step_reference(table, index, col, x, "figure (the test's)"),
                            "{id} row {index} column {col} at {x}"
                        );
                        compared += 1;
                    }
                }
                for status in [
                    RowStatus::Confirmed,
                    RowStatus::OneSource,
                    RowStatus::FromMemory,
                ] {
                    assert_eq!(
                        table.provenance_words(status, &row.note),
                        provenance_reference(table, status, &row.note)
                    );
                }
            }
        }
        assert!(compared > 100, "only {compared} readings compared");
    }
}
