//! The report model: everything a reviewer reads, built once and then rendered as
//! Markdown, HTML or JSON, so the three cannot disagree.

mod html;
mod json;
mod page;
mod render;
pub mod view;

use serde::Serialize;

use crate::ExitStatus;
use crate::checks::{CheckOutcome, Finding, Severity, run_checks};
use crate::diag::{Problems, Source};
use crate::isolation::IsolationReport;
use crate::parts::BridgeResult;
use crate::project::{
    BetweenRows, CircuitKind, OvervoltageCategory, ProtectionClass, read_project,
};
use crate::rules::{RuleBook, RuleInfo};
use crate::spacing::{BarrierResult, Verdict};

pub(crate) use render::number as value_number;
pub use render::{
    Templates, Writer, house_template_files, md_escape, render_html, render_json, render_markdown,
    render_markdown_with, render_page_with, to_json, with_templates,
};
pub use view::MarkdownOptions;

/// Cautions printed in every report.
pub const CAUTIONS: &[&str] = &[
    "This checklist is advisory. Defer to the applicable end-product standard, local electrical codes and licensed or accredited review; it does not certify anything.",
    "The rule tables were copied out by hand, partly from memory of the published standards, and may carry copying errors. The list of rule tables in this report says how each was checked: compare every figure with a licensed copy of the standard before relying on it.",
    "Figures cover only what the project file declares. A barrier, circuit or part that is not described is not evaluated, and the absence of a finding is not evidence that a design is safe.",
    "No table is extrapolated: an input beyond a table's range is refused rather than estimated.",
];

#[derive(Debug, Clone, Serialize)]
pub struct ToolInfo {
    pub name: &'static str,
    pub version: &'static str,
}

#[derive(Debug, Clone, Serialize)]
pub struct DesignInfo {
    pub name: String,
    pub revision: Option<String>,
    pub protection_class: ProtectionClass,
    /// The standard the figures follow ("iec60664-1" when none is named).
    pub standard: &'static str,
    /// That standard with its edition, and what it covers.
    pub standard_title: &'static str,
    pub standard_scope: &'static str,
    /// Whether the project file names the standard (`[design] standard`).
    pub standard_named: bool,
}

#[derive(Debug, Clone, Serialize)]
pub struct ConditionsInfo {
    pub pollution_degree: u8,
    pub overvoltage_category: OvervoltageCategory,
    pub altitude_m: f64,
    pub mains_nominal_v: f64,
    pub creepage_between_rows: BetweenRows,
    pub altitude_between_rows: BetweenRows,
}

#[derive(Debug, Clone, Default, Serialize)]
pub struct Summary {
    pub barriers: usize,
    pub pass: usize,
    pub fail: usize,
    pub incomplete: usize,
    /// Barriers whose distances would pass but rest on an implausible input.
    pub check_input: usize,
    pub blocking: usize,
    pub warning: usize,
    pub note: usize,
}

#[derive(Debug, Clone, Serialize)]
pub struct CircuitInfo {
    pub id: String,
    pub kind: CircuitKind,
    pub accessible: bool,
    pub earthed: bool,
    /// An applied part (IEC 60601-1).
    pub applied_part: bool,
    pub description: Option<String>,
}

/// A value the reader accepted but that looks implausible.
#[derive(Debug, Clone, Serialize)]
pub struct InputWarning {
    pub key: Option<String>,
    pub message: String,
    pub line: Option<usize>,
    pub column: Option<usize>,
}

/// One of the three conditions of readiness for review (DESIGN.md, "Severity, readiness
/// and exit status"), whether it holds, and why not.
#[derive(Debug, Clone, Serialize)]
pub struct ReadinessCondition {
    /// "no blocking finding", "no incomplete barrier" or "no implausible input".
    pub condition: &'static str,
    pub holds: bool,
    /// What fails it (finding ids, barrier ids, input keys), or "none".
    pub detail: String,
}

/// Whether the design is ready for review: nothing blocking, no barrier incomplete, no
/// input implausible. The report's first lines say it; `check` exits 0 only when ready.
#[derive(Debug, Clone, Default, Serialize)]
pub struct Readiness {
    pub ready: bool,
    /// "ready", or "not ready: " followed by what fails ("blocking", "incomplete",
    /// "check inputs"), joined with ", " when several do.
    pub state: String,
    /// One sentence per failing condition.
    pub reasons: Vec<String>,
    /// All three conditions, each with whether it holds.
    pub conditions: Vec<ReadinessCondition>,
    pub blocking: bool,
    pub incomplete: bool,
    pub implausible_inputs: bool,
    /// No barrier is declared at all (also counted in `incomplete`): nothing was
    /// evaluated, which `--allow-incomplete` does not relax.
    pub no_barrier: bool,
}

/// A house rule file or house template in force, with its hash.
#[derive(Debug, Clone, Serialize)]
pub struct HouseFile {
    /// Path inside the house folder (never a machine path).
    pub file: String,
    pub sha256: String,
    /// For rule files: the id, and whether it replaced a shipped file ("replaced") or was
    /// added ("added"). For templates: the shipped template it replaced.
    pub id: String,
    pub effect: &'static str,
    /// "table" (a rule table), "checks" (a file of `[[check]]` entries) or "template".
    pub kind: &'static str,
}

/// What house rules and house templates changed: a reader must see at once that the
/// shipped rules or report were not used as shipped.
#[derive(Debug, Clone, Default, Serialize)]
pub struct HouseInfo {
    /// True when any house rule file or house template is in force.
    pub in_force: bool,
    pub rules: Vec<HouseFile>,
    pub templates: Vec<HouseFile>,
    pub tables_replaced: usize,
    pub tables_added: usize,
    pub checks_changed: usize,
    pub checks_added: usize,
    /// Shipped checks no longer in force: a house file that replaces a whole shipped file
    /// of checks drops every shipped check it does not define again.
    pub checks_removed: usize,
}

#[derive(Debug, Clone, Serialize)]
pub struct Report {
    /// Ready for review, and why not: first, because a reader needs it first.
    pub readiness: Readiness,
    /// House rules and house templates in force, with their SHA-256.
    pub house: HouseInfo,
    pub tool: ToolInfo,
    pub design: DesignInfo,
    /// The project file's name as given on the command line, without its folder.
    pub project_file: String,
    pub inputs_sha256: String,
    pub conditions: ConditionsInfo,
    pub assumptions: Vec<String>,
    pub summary: Summary,
    pub circuits: Vec<CircuitInfo>,
    pub barriers: Vec<BarrierResult>,
    pub bridges: Vec<BridgeResult>,
    pub isolation: Option<IsolationReport>,
    pub input_warnings: Vec<InputWarning>,
    /// Tables present in the project file that this version does not evaluate.
    pub tables_not_evaluated: Vec<String>,
    pub findings: Vec<Finding>,
    /// Every check that ran, with how many items it judged and raised.
    pub checks: Vec<CheckOutcome>,
    pub rules: Vec<RuleInfo>,
    pub cautions: Vec<String>,
    /// Power entry; null when the project has no `[input]`.
    pub power_entry: Option<crate::power_entry::PowerEntryReport>,
    /// The input EMC filter; null when the project has no `[emc]`.
    pub emc: Option<crate::emc::EmcReport>,
    /// Distances measured from the board's fabrication files; null without `[board]`.
    pub board: Option<crate::board::BoardReport>,
    /// Parallel to `findings`: what the check that raised each one ran over and the
    /// verdicts its condition reads, so the report can link the finding to its figure.
    /// Not part of the JSON.
    #[serde(skip)]
    pub finding_context: Vec<FindingContext>,
}

/// What a finding's check ran over and the verdict names its condition reads.
#[derive(Debug, Clone, Default)]
pub struct FindingContext {
    pub over: String,
    pub verdicts: Vec<String>,
}

/// The context of each finding, from the check that raised it.
fn finding_context(findings: &[Finding], rules: &RuleBook) -> Vec<FindingContext> {
    findings
        .iter()
        .map(|f| {
            let Some(check) = rules.checks.iter().find(|c| c.id == f.id) else {
                return FindingContext::default();
            };
            let mut fields = Vec::new();
            for cond in [Some(&check.condition), check.applies.as_ref()]
                .into_iter()
                .flatten()
            {
                if let crate::rules::Cond::Predicate(p) = cond {
                    p.fields(&mut fields);
                }
            }
            let verdicts = fields
                .iter()
                .filter(|(field, _)| field.parts.len() == 2 && field.parts[0] == "verdicts")
                .map(|(field, _)| field.parts[1].to_string())
                .collect();
            FindingContext {
                over: check.over.word.to_string(),
                verdicts,
            }
        })
        .collect()
}

impl Report {
    pub fn has_blocking(&self) -> bool {
        self.summary.blocking > 0
    }

    /// The exit status of `check`: ready for review or not. `allow_incomplete` (early
    /// layout work) does not count incomplete barriers against the exit status; the
    /// report still says "not ready". A design without any barrier is not early layout
    /// work but no design at all: the flag does not relax that.
    pub fn exit_status(&self, allow_incomplete: bool) -> ExitStatus {
        let r = &self.readiness;
        let not_ready = r.blocking
            || r.implausible_inputs
            || r.no_barrier
            || (r.incomplete && !allow_incomplete);
        ExitStatus::ready_unless(not_ready)
    }
}

/// Readiness for review from the judged report.
fn readiness(report: &Report) -> Readiness {
    let blocking: Vec<String> = report
        .findings
        .iter()
        .filter(|f| f.severity == Severity::Blocking)
        .map(|f| match &f.subject {
            Some(s) => format!("{} ({s})", f.id),
            None => f.id.clone(),
        })
        .collect();
    let mut incomplete: Vec<String> = report
        .barriers
        .iter()
        .filter(|b| b.verdict == Verdict::Incomplete)
        .map(|b| b.id.clone())
        .collect();
    // A design that declares no barrier has not been described, which is not "ready".
    let no_barrier = report.barriers.is_empty();
    if no_barrier {
        incomplete.push("no barrier is declared".to_string());
    }
    let implausible: Vec<String> = report
        .input_warnings
        .iter()
        .map(|w| match (&w.key, w.line) {
            (Some(k), Some(l)) => format!("{k} (line {l})"),
            (Some(k), None) => k.clone(),
            (None, Some(l)) => format!("line {l}"),
            (None, None) => w.message.clone(),
        })
        .collect();
    let list = |v: &[String]| {
        if v.is_empty() {
            "none".to_string()
        } else {
            v.join(", ")
        }
    };
    let conditions = vec![
        ReadinessCondition {
            condition: "no blocking finding",
            holds: blocking.is_empty(),
            detail: list(&blocking),
        },
        ReadinessCondition {
            condition: "no incomplete barrier",
            holds: incomplete.is_empty(),
            detail: list(&incomplete),
        },
        ReadinessCondition {
            condition: "no implausible input",
            holds: implausible.is_empty(),
            detail: list(&implausible),
        },
    ];
    let mut words = Vec::new();
    let mut reasons = Vec::new();
    if !blocking.is_empty() {
        words.push("blocking");
        reasons.push(format!(
            "{} blocking finding{}: {}",
            blocking.len(),
            if blocking.len() == 1 { "" } else { "s" },
            blocking.join(", ")
        ));
    }
    if no_barrier {
        words.push("incomplete");
        reasons
            .push("no [[barrier]] is declared: no clearance or creepage was evaluated".to_string());
    } else if !incomplete.is_empty() {
        words.push("incomplete");
        reasons.push(format!(
            "{} barrier{} incomplete (a clearance or creepage not yet declared): {}",
            incomplete.len(),
            if incomplete.len() == 1 {
                " is"
            } else {
                "s are"
            },
            incomplete.join(", ")
        ));
    }
    if !implausible.is_empty() {
        words.push("check inputs");
        reasons.push(format!(
            "{} input{} implausible (input.suspicious_value; a unit slip?): {}",
            implausible.len(),
            if implausible.len() == 1 {
                " looks"
            } else {
                "s look"
            },
            implausible.join(", ")
        ));
    }
    let ready = words.is_empty();
    Readiness {
        ready,
        state: if ready {
            "ready".to_string()
        } else {
            format!("not ready: {}", words.join(", "))
        },
        reasons,
        conditions,
        blocking: !blocking.is_empty(),
        incomplete: !incomplete.is_empty(),
        implausible_inputs: !implausible.is_empty(),
        no_barrier,
    }
}

/// The house rule files in force and what they changed.
fn house_info(rules: &RuleBook) -> HouseInfo {
    let shipped_ids: Vec<&str> = crate::rules::SHIPPED_RULES.iter().map(|r| r.id).collect();
    let shipped_check_files: Vec<&str> = crate::rules::SHIPPED_RULES
        .iter()
        .filter(|r| r.is_checks)
        .map(|r| r.id)
        .collect();
    let mut info = HouseInfo::default();
    for r in rules.info.iter().filter(|r| r.origin == "house") {
        let replaced = shipped_ids.contains(&&*r.id);
        // A file of checks is counted by its checks below, not as a table; so is a house
        // file that replaces a shipped file of checks, even one holding no check at all
        // (it removes them).
        let is_checks = shipped_check_files.contains(&&*r.id)
            || rules
                .checks
                .iter()
                .any(|c| c.origin != "shipped" && c.file == r.file);
        match (is_checks, replaced) {
            (true, _) => {}
            (false, true) => info.tables_replaced += 1,
            (false, false) => info.tables_added += 1,
        }
        info.rules.push(HouseFile {
            file: r.file.to_string(),
            sha256: r.sha256.to_string(),
            id: r.id.to_string(),
            effect: if replaced { "replaced" } else { "added" },
            kind: if is_checks { "checks" } else { "table" },
        });
    }
    if info.rules.is_empty() {
        return info;
    }
    let shipped = shipped_check_ids();
    for c in &rules.checks {
        match &*c.origin {
            "shipped" => {}
            // A check under a shipped id, in a house file that replaced the shipped
            // file, changes that check; it adds nothing.
            "house" if !shipped.iter().any(|id| *id == c.id) => info.checks_added += 1,
            _ => info.checks_changed += 1,
        }
    }
    info.checks_removed = shipped
        .iter()
        .filter(|id| !rules.checks.iter().any(|c| &c.id == *id))
        .count();
    info.in_force = true;
    info
}

/// The ids of the shipped checks, read once.
fn shipped_check_ids() -> &'static [String] {
    static IDS: std::sync::OnceLock<Vec<String>> = std::sync::OnceLock::new();
    IDS.get_or_init(|| {
        RuleBook::shipped()
            .map(|book| book.checks.iter().map(|c| c.id.to_string()).collect())
            .unwrap_or_default()
    })
}

/// Reads, evaluates and judges one project file's text.
pub fn check_source(source: &Source, rules: &RuleBook) -> Result<Report, Problems> {
    let mut report = figures(source, rules)?;
    // The checks see the report as the JSON shows it, before any finding, less what no
    // check reads.
    let context = crate::checks::context(&report, crate::checks::context_omits(rules));
    let (findings, checks) = run_checks(rules, &context)?;
    report.finding_context = finding_context(&findings, rules);
    report.findings = findings;
    report.checks = checks;
    report.summary = summarise(&report);
    report.readiness = readiness(&report);
    Ok(report)
}

/// Reads a project and computes every figure, without running the checklist.
pub fn figures(source: &Source, rules: &RuleBook) -> Result<Report, Problems> {
    let project = read_project(source)?;
    let cond = crate::insulation::conditions(&project);
    let sections = crate::area::evaluate_all(&project, rules, source)?;
    let standard = project
        .design
        .standard
        .unwrap_or(crate::standards::Standard::Iec60664);

    Ok(Report {
        readiness: Readiness::default(),
        house: house_info(rules),
        tool: ToolInfo {
            name: "gapwarden",
            version: env!("CARGO_PKG_VERSION"),
        },
        design: DesignInfo {
            name: project.design.name.clone(),
            revision: project.design.revision.clone(),
            protection_class: project.design.protection_class,
            standard: standard.as_str(),
            standard_title: standard.title(),
            standard_scope: standard.scope(),
            standard_named: project.design.standard.is_some(),
        },
        project_file: file_name(&source.name),
        inputs_sha256: crate::sha256_hex(source.text.as_bytes()),
        conditions: ConditionsInfo {
            pollution_degree: cond.pollution_degree,
            overvoltage_category: cond.overvoltage_category,
            altitude_m: cond.altitude_m,
            mains_nominal_v: cond.nominal_v,
            creepage_between_rows: cond.creepage_between_rows,
            altitude_between_rows: cond.altitude_between_rows,
        },
        assumptions: project.assumptions.clone(),
        summary: Summary::default(),
        circuits: project
            .circuits
            .iter()
            .map(|c| CircuitInfo {
                id: c.id.clone(),
                kind: c.kind,
                accessible: c.accessible,
                earthed: c.earthed,
                applied_part: c.applied_part,
                description: c.description.clone(),
            })
            .collect(),
        barriers: sections.barriers,
        bridges: sections.bridges,
        isolation: sections.isolation,
        input_warnings: project
            .warnings
            .iter()
            .map(|w| InputWarning {
                key: w.key.clone(),
                message: w.message.clone(),
                line: w.line,
                column: w.column,
            })
            .collect(),
        tables_not_evaluated: project.not_evaluated.clone(),
        findings: Vec::new(),
        checks: Vec::new(),
        rules: rules.info.clone(),
        cautions: std::iter::once(standard.caution(project.design.standard.is_some()))
            .chain(CAUTIONS.iter().map(|c| c.to_string()))
            .collect(),
        power_entry: sections.power_entry,
        emc: sections.emc,
        board: sections.board,
        finding_context: Vec::new(),
    })
}

fn summarise(report: &Report) -> Summary {
    let mut summary = Summary {
        barriers: report.barriers.len(),
        ..Summary::default()
    };
    for b in &report.barriers {
        match b.verdict {
            Verdict::Pass => summary.pass += 1,
            Verdict::Fail => summary.fail += 1,
            // A barrier is never "not judged"; were one, it would not be complete.
            Verdict::Incomplete | Verdict::NotJudged => summary.incomplete += 1,
            Verdict::CheckInput => summary.check_input += 1,
        }
    }
    for f in &report.findings {
        match f.severity {
            Severity::Blocking => summary.blocking += 1,
            Severity::Warning => summary.warning += 1,
            Severity::Note => summary.note += 1,
        }
    }
    summary
}

/// The last component of a path as written, so reports carry no machine paths.
pub fn file_name(path: &str) -> String {
    path.rsplit(['/', '\\']).next().unwrap_or(path).to_string()
}

#[cfg(test)]
mod tests {
    use super::*;

    fn class2_barriers() -> Vec<BarrierResult> {
        let source = Source::new(
            "class2-adapter.toml",
            include_str!("../../examples/class2-adapter.toml"),
        );
        let rules = RuleBook::shipped().expect("shipped rules load");
        let report = figures(&source, &rules).expect("the example evaluates");
        // Every barrier of the shipped example passes; the marking is seen against that.
        let barriers: Vec<BarrierResult> = report.barriers;
        assert!(barriers.iter().all(|b| b.verdict == Verdict::Pass));
        barriers
    }

    fn warning(key: &str) -> crate::diag::Diagnostic {
        crate::diag::Diagnostic::new("p.toml", "looks implausible").with_key(key)
    }

    /// The barriers' check-input marking (`insulation::mark_check_input`), from warnings.
    fn mark_check_input(barriers: &mut [BarrierResult], warnings: &[crate::diag::Diagnostic]) {
        crate::insulation::mark_check_input(barriers, &crate::derivation::Suspicious::of(warnings));
    }

    #[test]
    fn an_implausible_shared_input_makes_every_passing_barrier_check_input() {
        // No shipped table accepts an implausible altitude or nominal voltage (both are
        // refused above the tables' last rows), so the shared path is pinned here.
        for key in ["environment.altitude_m", "mains.nominal_v"] {
            let mut barriers = class2_barriers();
            mark_check_input(&mut barriers, &[warning(key)]);
            assert!(
                barriers.iter().all(|b| b.verdict == Verdict::CheckInput),
                "{key}"
            );
        }
    }

    #[test]
    fn an_implausible_barrier_key_marks_only_that_barrier() {
        let mut barriers = class2_barriers();
        mark_check_input(&mut barriers, &[warning("barrier[2].creepage_mm")]);
        let verdicts: Vec<Verdict> = barriers.iter().map(|b| b.verdict).collect();
        assert_eq!(
            verdicts,
            [Verdict::Pass, Verdict::CheckInput, Verdict::Pass],
            "the second [[barrier]] table only"
        );
        // Keys that no barrier rests on leave them alone.
        let mut barriers = class2_barriers();
        mark_check_input(
            &mut barriers,
            &[
                warning("part[1].capacitance_nf"),
                warning("barrier[12].creepage_mm"),
            ],
        );
        assert!(barriers.iter().all(|b| b.verdict == Verdict::Pass));
    }
}
