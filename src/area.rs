//! The areas of evaluation (insulation, power entry, EMC, and whatever comes next) and the
//! one trait each implements. The rule book, the report's assembly and `explain` go over
//! [`AREAS`] instead of keeping their own lists of tables, sections and items.
//!
//! To add an area: a module that owns its raw and checked input types and their reader,
//! its rule tables (each a struct implementing `rules::Table`, read with
//! `rules.table::<T>()`), its calculations returning [`crate::derivation::Derivation`]s,
//! and an `impl Area`; then a field for its table in `RawProject`, one for its checked
//! input in [`AreaInputs`] and `Project`, one for its section in [`Sections`] (and the
//! report), and an entry in [`AREAS`]. Its checks are TOML in
//! `rules/checks/`, with finding ids grouped by area (DESIGN.md: `barrier.*`, `isolation.*`
//! and `part.*` for insulation, `power_entry.*`, `emc.*`).

use std::collections::BTreeMap;

use crate::derivation::Suspicious;
use crate::diag::{Problems, Source};
use crate::emc::EmcReport;
use crate::insulation::isolation::IsolationReport;
use crate::insulation::parts::BridgeResult;
use crate::insulation::spacing::BarrierResult;
use crate::power_entry::PowerEntryReport;
use crate::project::RawProject;
use crate::project::{Barrier, BoardSpec, Circuit, Design, Environment, Mains, Part, Project};
use crate::raw::{Reader, Span, TableAt};
use crate::report::Report;
use crate::rules::{RuleBook, Validation};

/// An item `gapwarden explain` takes, with what it shows.
#[derive(Debug, Clone, PartialEq, Eq, PartialOrd, Ord)]
pub struct ExplainItem {
    pub id: String,
    pub shows: String,
}

impl ExplainItem {
    pub fn new(id: impl Into<String>, shows: impl Into<String>) -> Self {
        ExplainItem {
            id: id.into(),
            shows: shows.into(),
        }
    }
}

/// The project file as it is being validated: the one pass's [`Reader`] (every problem of
/// every area goes there), the raw file, what the project-wide tables (`[design]`,
/// `[environment]`, `[mains]`) left to say, and each area's checked input as it is read.
pub struct ProjectPart<'a, 's> {
    pub r: Reader<'s>,
    /// The file's top level, for `r.table(&part.root, key!(part.raw.name))`.
    pub root: TableAt,
    pub raw: &'a RawProject,
    /// Every default applied, in words for the report.
    pub assumptions: Vec<String>,
    /// Where the project-wide keys were written (`mains.nominal_v`, ...).
    pub key_spans: BTreeMap<String, Span>,
    /// Tables present in the file that this version reads but does not evaluate.
    pub not_evaluated: Vec<String>,
    /// Each area's checked part, filled by its [`Area::read`].
    pub inputs: AreaInputs,
}

/// Each area's checked part of the project, as the project file is being read (each area
/// fills its own; [`ProjectPart::into_project`] moves them into the [`Project`]).
#[derive(Debug, Default)]
pub struct AreaInputs {
    pub circuits: Vec<Circuit>,
    pub barriers: Vec<Barrier>,
    pub parts: Vec<Part>,
    pub board: Option<BoardSpec>,
    pub input: Option<crate::power_entry::InputSpec>,
    pub converter: Option<crate::power_entry::ConverterSpec>,
    pub emc: Option<crate::emc::EmcSpec>,
}

impl<'a, 's> ProjectPart<'a, 's> {
    pub fn new(r: Reader<'s>, root: TableAt, raw: &'a RawProject) -> Self {
        ProjectPart {
            r,
            root,
            raw,
            assumptions: Vec::new(),
            key_spans: BTreeMap::new(),
            not_evaluated: Vec::new(),
            inputs: AreaInputs::default(),
        }
    }

    /// The checked project, once every area has read its part without a problem.
    pub fn into_project(
        mut self,
        design: Design,
        environment: Environment,
        mains: Mains,
    ) -> Project {
        let AreaInputs {
            circuits,
            barriers,
            parts,
            board,
            input,
            converter,
            emc,
        } = self.inputs;
        Project {
            design,
            environment,
            mains,
            circuits,
            barriers,
            parts,
            assumptions: self.assumptions,
            warnings: std::mem::take(&mut self.r.warnings),
            input,
            converter,
            emc,
            board,
            not_evaluated: self.not_evaluated,
            key_spans: self.key_spans,
        }
    }
}

/// What the areas contribute to the report: each area writes its own section.
#[derive(Debug, Clone, Default)]
pub struct Sections {
    pub barriers: Vec<BarrierResult>,
    pub bridges: Vec<BridgeResult>,
    pub isolation: Option<IsolationReport>,
    /// Null when the project has no `[input]`.
    pub power_entry: Option<PowerEntryReport>,
    /// Null when the project has no `[emc]`.
    pub emc: Option<EmcReport>,
    /// Distances measured from the board's fabrication files; null without `[board]`.
    pub board: Option<crate::board::BoardReport>,
}

/// One evaluation run: the checked project, the rules, and the sections written so far
/// (an area may read the sections of the areas before it in [`AREAS`]).
pub struct Evaluation<'a> {
    pub project: &'a Project,
    pub rules: &'a RuleBook,
    pub source: &'a Source,
    /// The inputs flagged implausible: a verdict resting on one is never `pass`.
    pub suspicious: Suspicious,
    pub sections: Sections,
}

/// An area of evaluation. Each area reads and validates its own part of the project file
/// ([`Area::read`]), all in one pass that reports every problem of the file before any area
/// runs; an area then takes its part of the checked project, and an area whose tables are
/// absent writes no section (its JSON section is null and its `*.not_evaluated` note
/// appears).
pub trait Area: Sync {
    /// `insulation`, `power_entry`, `emc`. Power entry's and EMC's explain items start
    /// with it; insulation's are the barrier ids, `isolation`, `bridges` and part refs.
    fn name(&self) -> &'static str;

    /// Reads and validates the area's tables of the raw project (`part.raw`) into its field
    /// of `part.inputs`, through `part.r`: every problem is recorded there with its
    /// position and key (none stops the reading), and a table with a problem is left out.
    /// Called for each area in [`AREAS`] order, after the project-wide tables.
    fn read(&self, part: &mut ProjectPart);

    /// Whether the project describes this area (its part of the project is present).
    fn described(&self, project: &Project) -> bool;

    /// Requires and checks, when the rule book is loaded, the area's tables that are not
    /// `rules::Table` types (read under several ids into one type); every problem goes to
    /// `tables`. Tables that implement `rules::Table` need nothing here: every one is
    /// required, and a house one checked, by the rule book itself.
    fn load_rules(&self, _tables: &mut Validation) {}

    /// Computes the area's figures, each with its derivation and settled verdict, and
    /// writes its section into `run.sections`. Inputs outside a table are problems.
    fn evaluate(&self, run: &mut Evaluation) -> Result<(), Problems>;

    /// The items `explain` takes for this area in this report.
    fn explain_items(&self, report: &Report) -> Vec<ExplainItem>;

    /// Text for `explain ITEM`, if the item is this area's.
    fn explain(&self, report: &Report, item: &str) -> Option<String>;
}

/// Every area, in evaluation order: power entry reads the barriers, EMC power entry.
pub static AREAS: &[&dyn Area] = &[
    &crate::insulation::Insulation,
    &crate::power_entry::PowerEntry,
    &crate::emc::Emc,
];

/// Every area reads its part of the project file, in [`AREAS`] order.
pub fn read_all(part: &mut ProjectPart) {
    for area in AREAS {
        area.read(part);
    }
}

/// Runs every area over a checked project.
pub fn evaluate_all(
    project: &Project,
    rules: &RuleBook,
    source: &Source,
) -> Result<Sections, Problems> {
    let mut run = Evaluation {
        project,
        rules,
        source,
        suspicious: Suspicious::of(&project.warnings),
        sections: Sections::default(),
    };
    for area in AREAS.iter().filter(|a| a.described(project)) {
        area.evaluate(&mut run)?;
    }
    Ok(run.sections)
}

/// Every explain item of every area for this report.
pub fn explain_items(report: &Report) -> Vec<ExplainItem> {
    AREAS.iter().flat_map(|a| a.explain_items(report)).collect()
}
