//! The insulation area: each barrier's required clearance and creepage (`spacing`), the
//! weakest isolation path to each accessible circuit (`isolation`), the parts that bridge
//! a barrier against what it needs (`parts`), their rule tables (`tables`) and their
//! `explain` items. It reads `[[circuit]]`, `[[barrier]]`, `[[part]]` and `[board]` of the
//! project file (`read`), and takes `[environment]` and `[mains]` from the checked project.

pub mod isolation;
pub mod parts;
mod read;
pub mod spacing;
pub mod tables;

use crate::area::{Area, Evaluation, ExplainItem, ProjectPart};
use crate::derivation::{Step, Suspicious};
use crate::diag::{Diagnostic, Problems};
use crate::project::Project;
use crate::report::Report;
use crate::rules::Validation;
use isolation::IsolationReport;
use parts::BridgeResult;
use spacing::{BarrierResult, Conditions, show};

pub use read::{RawBarrier, RawBoard, RawCircuit, RawPart};

/// The insulation area.
pub struct Insulation;

/// The conditions every barrier of the project shares.
pub fn conditions(project: &Project) -> Conditions {
    Conditions {
        pollution_degree: project.environment.pollution_degree,
        overvoltage_category: project.environment.overvoltage_category,
        altitude_m: project.environment.altitude_m,
        nominal_v: project.mains.nominal_v,
        creepage_between_rows: project.design.creepage_between_rows,
        altitude_between_rows: project.design.altitude_between_rows,
    }
}

impl Area for Insulation {
    fn name(&self) -> &'static str {
        "insulation"
    }

    /// `[[circuit]]`, `[[part]]`, `[[barrier]]` (whose references to circuits and parts
    /// are checked against the ids declared) and `[board]`.
    fn read(&self, part: &mut ProjectPart) {
        read::read_part(part);
    }

    /// Barriers are the core of every project: always evaluated (none declared is a
    /// readiness finding, not an absent section).
    fn described(&self, _project: &Project) -> bool {
        true
    }

    fn load_rules(&self, tables: &mut Validation) {
        // The end-product standards' tables (`rules/<standard>/`) dimension barriers too.
        crate::standards::StandardRules::require(tables);
    }

    fn evaluate(&self, run: &mut Evaluation) -> Result<(), Problems> {
        let (project, rules, source) = (run.project, run.rules, run.source);
        let cond = conditions(project);
        // The named end-product standard, or the IEC 60664-1 basics (`crate::standards`).
        let standard = project
            .design
            .standard
            .unwrap_or(crate::standards::Standard::Iec60664);
        let mut barriers = Vec::with_capacity(project.barriers.len());
        let mut problems: Vec<Diagnostic> = Vec::new();
        for barrier in &project.barriers {
            match crate::standards::evaluate(rules, &cond, standard, barrier) {
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
                            None => Diagnostic::new(&source.name, out.message),
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
        // Measured distances join the declared ones before any verdict is settled.
        run.sections.board = crate::board::apply(project, source, rules, &mut barriers)?;
        mark_check_input(&mut barriers, &run.suspicious);
        run.sections.bridges = parts::bridges(rules, project, &barriers);
        run.sections.isolation = Some(isolation::analyse(project));
        run.sections.barriers = barriers;
        Ok(())
    }

    fn explain_items(&self, report: &Report) -> Vec<ExplainItem> {
        let mut items = Vec::new();
        for b in &report.barriers {
            items.push(ExplainItem::new(
                &b.id,
                "the barrier's clearance and creepage, and its findings",
            ));
            for d in [&b.derivation.clearance, &b.derivation.creepage] {
                items.push(ExplainItem::new(&d.id, d.title.to_lowercase()));
            }
            // The test voltage the report shows beside the distances (`test_v_rms`,
            // `test_v_dc`), or why there is none.
            items.push(ExplainItem::new(
                format!("{}.electric_strength", b.id),
                format!("{}: electric strength test voltage", b.id),
            ));
        }
        if report.isolation.is_some() {
            items.push(ExplainItem::new(
                "isolation",
                "the weakest isolation path to each accessible circuit",
            ));
        }
        if !report.bridges.is_empty() {
            items.push(ExplainItem::new(
                "bridges",
                "every part bridging a barrier, against what the barrier needs",
            ));
        }
        let mut parts: Vec<&str> = report.bridges.iter().map(|b| b.part.as_str()).collect();
        parts.sort_unstable();
        parts.dedup();
        for p in parts {
            items.push(ExplainItem::new(
                p,
                "the part against each barrier it bridges",
            ));
        }
        items
    }

    fn explain(&self, report: &Report, item: &str) -> Option<String> {
        let mut out = String::new();
        let (barrier_id, figure) = match item.rsplit_once('.') {
            Some((b, f @ ("clearance" | "creepage" | "electric_strength"))) => (b, Some(f)),
            _ => (item, None),
        };
        if let Some(b) = report.barriers.iter().find(|b| b.id == barrier_id) {
            explain_barrier(&mut out, b, figure);
            for f in report
                .findings
                .iter()
                .filter(|f| f.subject.as_deref() == Some(b.id.as_str()))
            {
                out.push_str(&format!(
                    "finding {} ({}): {}\n",
                    f.id,
                    f.severity.as_str(),
                    f.message
                ));
            }
            return Some(out);
        }
        if item == "isolation" {
            explain_isolation(&mut out, report.isolation.as_ref()?);
            return Some(out);
        }
        if item == "bridges" && !report.bridges.is_empty() {
            for b in &report.bridges {
                explain_bridge(&mut out, b);
            }
            return Some(out);
        }
        // A part by its reference (after the barriers: a barrier's id comes first).
        let mut found = false;
        for b in report.bridges.iter().filter(|b| b.part == item) {
            explain_bridge(&mut out, b);
            found = true;
        }
        if found {
            return Some(out);
        }
        None
    }
}

/// Each barrier's figures rest on the shared inputs and on its own `[[barrier]]` table: a
/// barrier that would pass on an implausible one says "check-input" instead.
pub(crate) fn mark_check_input(barriers: &mut [BarrierResult], suspicious: &Suspicious) {
    for (i, b) in barriers.iter_mut().enumerate() {
        // The reader names the n-th [[barrier]] table `barrier[n]`, from 1, in file order,
        // which is the order of `project.barriers` and so of the results.
        let own = format!("barrier[{}]", i + 1);
        for d in [&mut b.derivation.clearance, &mut b.derivation.creepage] {
            d.rests_on.push(own.clone().into());
            suspicious.settle_derivation(d);
        }
        b.verdict = suspicious.settle(b.verdict, &b.derivation.clearance.rests_on);
    }
}

/// A barrier's two figures (or one), with what set them and every step.
pub fn explain_barrier(out: &mut String, b: &BarrierResult, figure: Option<&str>) {
    let declared = |d: Option<f64>| {
        d.map(|d| format!("{} mm", show(d)))
            .unwrap_or_else(|| "not declared".to_string())
    };
    for (what, required, laid_out, derivation) in [
        (
            "clearance",
            b.required_clearance_mm,
            b.clearance_mm,
            &b.derivation.clearance,
        ),
        (
            "creepage",
            b.required_creepage_mm,
            b.creepage_mm,
            &b.derivation.creepage,
        ),
    ] {
        if figure.is_some_and(|f| f != what) {
            continue;
        }
        out.push_str(&format!(
            "{}.{what}: required {} mm, laid out {} ({} insulation, verdict {})\n",
            b.id,
            show(required),
            declared(laid_out),
            b.grade.as_str(),
            b.verdict.as_str()
        ));
        let governed_by = if what == "clearance" {
            b.clearance_governed_by
        } else {
            b.creepage_governed_by
        };
        out.push_str(&format!("  set by: {}\n", governed_by_words(governed_by)));
        if what == "clearance"
            && b.standard == "iec62368-1"
            && let (Some(t), Some(s), Some(v)) = (
                b.transient_clearance_mm,
                b.steady_state_clearance_mm,
                b.steady_state_peak_v,
            )
        {
            out.push_str(&format!(
                "  procedure 1 (IEC 62368-1 Table 10 at {} V peak) {} mm; procedure 2 (Table 14 by the withstand voltage) {} mm; the larger governs\n",
                show(v),
                show(s),
                show(t)
            ));
        } else if what == "clearance"
            && let (Some(t), Some(s), Some(v)) = (
                b.transient_clearance_mm,
                b.steady_state_clearance_mm,
                b.steady_state_peak_v,
            )
        {
            out.push_str(&format!(
                "  transient requirement (Table F.2) {} mm; steady-state requirement (Table F.8, read at {} V) {} mm; the larger governs\n",
                show(t),
                show(v),
                show(s)
            ));
        }
        if what == "creepage"
            && let Some(f) = &b.functional_figures
        {
            out.push_str(&format!(
                "  functional insulation: creepage table {} mm, IPC-2221B column {} {} mm; the larger governs; a shortfall is a warning (the end-product standard may accept a passed fault test instead)\n",
                show(f.creepage_table_mm),
                f.ipc2221b_column,
                show(f.ipc2221b_spacing_mm)
            ));
        }
        numbered_steps(out, &derivation.steps);
    }
    if figure.is_none_or(|f| f == "electric_strength") {
        let shown = |v: Option<f64>, unit: &str| {
            v.map(|v| format!("{} {unit}", show(v)))
                .unwrap_or_else(|| "none".to_string())
        };
        out.push_str(&format!(
            "{}.electric_strength: {} a.c., {} peak or d.c. ({}; {})\n",
            b.id,
            shown(b.test_v_rms, "V rms"),
            shown(b.test_v_dc, "V"),
            b.standard_title,
            b.test_v_basis
        ));
        numbered_steps(out, &b.derivation.electric_strength);
    }
}

/// Steps numbered from 1, each with the rule table it read.
pub fn numbered_steps(out: &mut String, steps: &[Step]) {
    for (i, s) in steps.iter().enumerate() {
        let rule = s
            .rule
            .as_deref()
            .map(|r| format!(" [{r}]"))
            .unwrap_or_default();
        out.push_str(&format!("  {}. {}{rule}\n", i + 1, s.text));
    }
}

/// What a `*_governed_by` value means, for `explain`.
fn governed_by_words(value: &str) -> String {
    let words = match value {
        "transient" => "the transient requirement (IEC 60664-1 Table F.2 at the impulse voltage)",
        "steady-state" => {
            "the steady-state requirement (IEC 60664-1 Table F.8 at the working peak voltage)"
        }
        "pollution-degree-minimum" => "the pollution-degree minimum",
        "ipc2221b" => "IPC-2221B conductor spacing (functional insulation on a board)",
        "creepage-table" => "the creepage table (IEC 60664-1 Table F.5)",
        "clearance" => "the required clearance (creepage is never less)",
        "house-minimum" => "a house minimum",
        "procedure-1" => "IEC 62368-1 procedure 1 (Table 10 by the peak working voltage)",
        "procedure-2" => "IEC 62368-1 procedure 2 (Table 14 by the required withstand voltage)",
        "mopp-table" => "the IEC 60601-1 MOPP table (by working voltage)",
        "moop-table" => "the IEC 60601-1 MOOP row carried",
        other => other,
    };
    format!("{words} [{value}]")
}

fn explain_isolation(out: &mut String, iso: &IsolationReport) {
    out.push_str(&format!(
        "isolation (protection class {}): {} hazardous and {} accessible circuit(s), {} pair(s), {} without a declared barrier\n",
        match iso.protection_class {
            crate::project::ProtectionClass::I => "I",
            crate::project::ProtectionClass::II => "II",
            crate::project::ProtectionClass::III => "III",
        },
        iso.hazardous_count,
        iso.accessible_count,
        iso.pair_count,
        iso.pairs_without_barrier
    ));
    for p in &iso.pairs {
        let path = p
            .path
            .as_ref()
            .map(|path| path.description.clone())
            .unwrap_or_else(|| "no declared barrier".to_string());
        out.push_str(&format!(
            "  {} -> {}: {path}; provides {}, needs {}{}\n",
            p.hazardous,
            p.accessible,
            p.provides,
            p.needs,
            p.earth
                .as_deref()
                .map(|e| format!(" (protective earth through {e})"))
                .unwrap_or_default()
        ));
    }
    explain_means(out, iso);
}

/// IEC 60601-1: the means of protection counted toward each applied part and accessible
/// circuit, for `explain isolation`.
pub fn explain_means(out: &mut String, iso: &IsolationReport) {
    if let Some(means) = &iso.means {
        out.push_str(&format!(
            "means of protection (IEC 60601-1), {} circuit(s) reached from the mains: an applied part needs 2 MOPP, another accessible circuit 2 MOOP or 1 MOOP plus protective earth; a MOPP counts as a MOOP too\n",
            means.len()
        ));
        for m in means {
            out.push_str(&format!(
                "  {} -> {}{}: {}; provides {}, needs {}\n",
                m.mains,
                m.circuit,
                if m.applied_part {
                    " (applied part)"
                } else {
                    ""
                },
                m.description,
                m.provides_words,
                m.needs_words
            ));
        }
    }
}

fn explain_bridge(out: &mut String, b: &BridgeResult) {
    out.push_str(&format!(
        "{} across {} ({} insulation, {} V rms, {} V peak{})\n",
        b.part,
        b.barrier,
        b.grade.as_str(),
        show(b.working_rms_v),
        show(b.working_peak_v),
        if b.to_accessible {
            ", to an accessible circuit"
        } else {
            ""
        }
    ));
    numbered_steps(out, &b.derivation.steps);
}
