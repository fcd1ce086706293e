//! Findings: what the reviewer must act on, drawn from the computed figures and the
//! project. Ids are permanent and dotted by area (`barrier.*`, `input.*`, ...).

use serde::Serialize;

use crate::project::{Barrier, Project};
use crate::rules::RuleBook;
use crate::spacing::{BarrierResult, show};

#[derive(Debug, Clone, Copy, PartialEq, Eq, PartialOrd, Ord, Serialize)]
#[serde(rename_all = "lowercase")]
pub enum Severity {
    Blocking,
    Warning,
    Note,
}

#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct Finding {
    pub id: String,
    pub severity: Severity,
    /// The barrier, part or circuit id the finding is about, or null.
    pub subject: Option<String>,
    pub message: String,
}

impl Finding {
    fn new(
        id: &str,
        severity: Severity,
        subject: Option<&str>,
        message: impl Into<String>,
    ) -> Self {
        Finding {
            id: id.to_string(),
            severity,
            subject: subject.map(str::to_string),
            message: message.into(),
        }
    }
}

/// Above this frequency the spacing tables do not hold (IEC 60664-4 applies).
pub const TABLE_FREQUENCY_LIMIT_HZ: f64 = 30_000.0;

/// Findings about one barrier and its figures.
pub fn barrier_findings(
    rules: &RuleBook,
    pollution_degree: u8,
    barrier: &Barrier,
    result: &BarrierResult,
) -> Vec<Finding> {
    let mut out = Vec::new();
    let subject = Some(barrier.id.as_str());
    let grade = barrier.grade.as_str();
    for (what, declared, required, margin) in [
        (
            "clearance",
            barrier.clearance_mm,
            result.required_clearance_mm,
            result.clearance_margin_mm,
        ),
        (
            "creepage",
            barrier.creepage_mm,
            result.required_creepage_mm,
            result.creepage_margin_mm,
        ),
    ] {
        match (declared, margin) {
            (Some(d), Some(m)) if m < 0.0 => out.push(Finding::new(
                &format!("barrier.{what}_short"),
                Severity::Blocking,
                subject,
                format!(
                    "{what} {} mm is {} mm short of the {} mm required for {grade} insulation",
                    show(d),
                    show(-m),
                    show(required)
                ),
            )),
            (None, _) => out.push(Finding::new(
                &format!("barrier.{what}_missing"),
                Severity::Warning,
                subject,
                format!("{what} as laid out is not declared ({what}_mm); {} mm is required, so the barrier cannot be judged", show(required)),
            )),
            _ => {}
        }
    }
    if let (Some(clearance), Some(creepage)) = (barrier.clearance_mm, barrier.creepage_mm)
        && creepage < clearance
    {
        out.push(Finding::new(
            "barrier.creepage_below_clearance",
            Severity::Warning,
            subject,
            format!(
                "declared creepage {} mm is less than declared clearance {} mm; a path along a surface is never shorter than the straight line: check both measurements",
                show(creepage),
                show(clearance)
            ),
        ));
    }
    if let Some(f) = barrier.working_frequency_hz
        && f > TABLE_FREQUENCY_LIMIT_HZ
    {
        out.push(Finding::new(
            "barrier.high_frequency",
            Severity::Warning,
            subject,
            format!(
                "the working voltage has a frequency of {} kHz; the figures assume up to 30 kHz, and IEC 60664-4 applies above that",
                show(f / 1000.0)
            ),
        ));
    }
    if let Some(slot) = barrier.slot_width_mm {
        let pd = pollution_degree.clamp(1, 3);
        let narrowest = rules.grooves.min_width_mm[(pd - 1) as usize];
        if slot < narrowest {
            out.push(Finding::new(
                "barrier.slot_too_narrow",
                Severity::Warning,
                subject,
                format!(
                    "a slot of {} mm is narrower than the {} mm that counts in pollution degree {pd} ({}); the creepage path crosses it straight and the declared creepage must not include its depth",
                    show(slot),
                    show(narrowest),
                    rules.grooves.source
                ),
            ));
        }
    }
    if !barrier.bridged_by.is_empty() {
        out.push(Finding::new(
            "part.not_evaluated",
            Severity::Note,
            subject,
            format!(
                "parts bridging this barrier ({}) are listed, but their ratings are not judged by this version: check each against the barrier's grade and working voltage by hand",
                barrier.bridged_by.join(", ")
            ),
        ));
    }
    out
}

/// Findings about the project as a whole: suspicious inputs and topics not evaluated.
pub fn project_findings(project: &Project) -> Vec<Finding> {
    let mut out = Vec::new();
    for w in &project.warnings {
        let at = match (w.line, w.column) {
            (Some(l), Some(c)) => format!(" (line {l}, column {c})"),
            _ => String::new(),
        };
        out.push(Finding::new(
            "input.suspicious_value",
            Severity::Warning,
            w.key.as_deref(),
            format!("{}{at}", w.message),
        ));
    }
    if project.barriers.is_empty() {
        out.push(Finding::new(
            "barrier.none_declared",
            Severity::Warning,
            None,
            "the project declares no [[barrier]]: no clearance or creepage was evaluated",
        ));
    }
    out.push(Finding::new(
        "isolation.not_evaluated",
        Severity::Note,
        None,
        "isolation paths from hazardous to accessible circuits are not analysed by this version: check by hand that every such path has the insulation its protection class needs",
    ));
    for (table, id, topic) in [
        (
            "input",
            "power_entry.not_evaluated",
            "power entry (inrush, fuse, discharge, touch current)",
        ),
        ("emc", "emc.not_evaluated", "the input EMC filter"),
    ] {
        let message = if project.not_evaluated.iter().any(|t| t == table) {
            format!(
                "[{table}] is present but {topic} is not evaluated by this version; its keys were not checked"
            )
        } else {
            format!("no [{table}] table: {topic} not evaluated")
        };
        out.push(Finding::new(id, Severity::Note, None, message));
    }
    out
}
