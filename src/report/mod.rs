//! The report model: everything a reviewer reads, built once and then rendered as
//! Markdown, HTML or JSON, so the three cannot disagree.

mod render;

use serde::Serialize;

use crate::checks::{CheckOutcome, Finding, Severity, run_checks};
use crate::diag::{Problems, Source};
use crate::isolation::{IsolationReport, analyse};
use crate::parts::{BridgeResult, bridges};
use crate::project::{
    BetweenRows, CircuitKind, OvervoltageCategory, ProtectionClass, read_project,
};
use crate::rules::{RuleBook, RuleInfo};
use crate::spacing::{BarrierResult, Conditions, Verdict, evaluate};

pub use render::{
    Templates, house_template_files, md_escape, render_html, render_json, render_markdown,
};

/// Cautions printed in every report.
pub const CAUTIONS: &[&str] = &[
    "This checklist is advisory. Defer to the applicable end-product standard, local electrical codes and licensed or accredited review; it does not certify anything.",
    "The rule tables were copied out by hand, partly from memory of the published standards, and may carry copying errors. Each table below says how it was checked: compare every figure with a licensed copy of the standard before relying on it.",
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

#[derive(Debug, Clone, Serialize)]
pub struct Report {
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
    pub cautions: Vec<&'static str>,
    /// Power entry; null when the project has no `[input]`.
    pub power_entry: Option<crate::power_entry::PowerEntryReport>,
    /// The input EMC filter; null when the project has no `[emc]`.
    pub emc: Option<crate::emc::EmcReport>,
}

impl Report {
    pub fn has_blocking(&self) -> bool {
        self.summary.blocking > 0
    }
}

/// Reads, evaluates and judges one project file's text.
pub fn check_source(source: &Source, rules: &RuleBook) -> Result<Report, Problems> {
    let mut report = figures(source, rules)?;
    // The checks see the report as the JSON shows it, before any finding.
    let context = minijinja::Value::from(minijinja::value::Serde(&report));
    let (findings, checks) = run_checks(rules, &context)?;
    report.findings = findings;
    report.checks = checks;
    report.summary = summarise(&report);
    Ok(report)
}

/// Reads a project and computes every figure, without running the checklist.
pub fn figures(source: &Source, rules: &RuleBook) -> Result<Report, Problems> {
    let project = read_project(source)?;
    let cond = Conditions {
        pollution_degree: project.environment.pollution_degree,
        overvoltage_category: project.environment.overvoltage_category,
        altitude_m: project.environment.altitude_m,
        nominal_v: project.mains.nominal_v,
        creepage_between_rows: project.design.creepage_between_rows,
        altitude_between_rows: project.design.altitude_between_rows,
    };
    let mut barriers = Vec::new();
    let mut problems = Vec::new();
    for barrier in &project.barriers {
        match evaluate(rules, &cond, barrier) {
            Ok(result) => barriers.push(result),
            Err(errors) => {
                for out in errors {
                    let (key, span) = if out.key.contains('.') {
                        (out.key.clone(), project.key_spans.get(&out.key).cloned())
                    } else {
                        (
                            format!("barrier \"{}\".{}", barrier.id, out.key),
                            Some(barrier.span_of(&out.key)),
                        )
                    };
                    let d = match span {
                        Some(span) => source.diag(&span, out.message),
                        None => crate::diag::Diagnostic::new(&source.name, out.message),
                    };
                    let d = d.with_key(key);
                    // A project-wide input out of range is reported once, not per barrier.
                    if !problems.contains(&d) {
                        problems.push(d);
                    }
                }
            }
        }
    }
    if !problems.is_empty() {
        problems.sort_by_key(|d| (d.line, d.column));
        return Err(Problems(problems));
    }
    let bridges = bridges(rules, &project, &barriers);
    let isolation = analyse(&project);
    let power_entry = crate::power_entry::evaluate(&project, rules, &barriers, source)?;
    let emc = crate::emc::evaluate(&project, rules, power_entry.as_ref(), source)?;

    Ok(Report {
        tool: ToolInfo {
            name: "gapwarden",
            version: env!("CARGO_PKG_VERSION"),
        },
        design: DesignInfo {
            name: project.design.name.clone(),
            revision: project.design.revision.clone(),
            protection_class: project.design.protection_class,
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
                description: c.description.clone(),
            })
            .collect(),
        barriers,
        bridges,
        isolation: Some(isolation),
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
        cautions: CAUTIONS.to_vec(),
        power_entry,
        emc,
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
            Verdict::Incomplete => summary.incomplete += 1,
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
