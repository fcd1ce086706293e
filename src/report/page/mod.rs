//! The page written natively: the same Markdown the shipped templates (`templates/*.md.j2`)
//! write, without parsing and interpreting them, used whenever no house template is in
//! force. The templates stay the documented definition of the layout; the test
//! `tests/it/native_page.rs` renders every fixture both ways and demands the same text.
//!
//! Each function below follows one part of a template, in its order. A `{{ value }}` of
//! the template is a call of [`Md::text`] (strings), [`Md::fig`] (figures), [`Md::int`]
//! (counts) or [`Md::id`] (the `id` filter); the template's own text is [`Md::s`]. Blank
//! lines need not match the template's: both pages are tidied afterwards.

mod board;
mod emc;
mod insulation;
mod power_entry;

use std::collections::BTreeMap;
use std::fmt::Display;
use std::fmt::Write as _;

use super::Report;
use super::render::{anchor_html, link_text, md_escape_rounded_to, md_escape_to, signed};
use super::view::{self, Place, View};
use crate::checks::Severity;
use crate::derivation::Verdict;
use crate::text::write_figure;

/// The page's Markdown before tidying, as `report.md.j2` writes it, with `preamble` after
/// the title (where the template's page gets it from `render::finish`).
pub(super) fn write(report: &Report, view: &View, preamble: &str) -> String {
    let mut md = Md {
        out: String::with_capacity(64 * 1024),
        view,
    };
    title(&mut md, report, preamble);
    open_items(&mut md, report);
    insulation::barriers(&mut md, report);
    insulation::strength_tests(&mut md, report);
    conditions(&mut md, report);
    if let Some(board) = &report.board {
        board::section(&mut md, report, board);
        md.s("\n");
    }
    insulation::isolation(&mut md, report);
    insulation::bridges(&mut md, report);
    power_entry::section(&mut md, report);
    md.s("\n");
    emc::section(&mut md, report);
    md.s("\n");
    notes(&mut md, report);
    checks_run(&mut md, report);
    insulation::derivations(&mut md, report);
    rule_tables(&mut md, report);
    cautions(&mut md, report);
    if view.html {
        appendix(&mut md, report);
    }
    md.out
}

/// The page being written, with the view (anchors, links, verdicts of derived rows).
pub(super) struct Md<'a> {
    out: String,
    view: &'a View,
}

impl Md<'_> {
    /// Text of the template itself, as it stands.
    fn s(&mut self, literal: &str) {
        self.out.push_str(literal);
    }

    /// A string value: figures in it rounded, then escaped (the templates' formatter).
    fn text(&mut self, value: &str) {
        // Writing to a String cannot fail.
        let _ = md_escape_rounded_to(value, &mut self.out);
    }

    /// A name or id from the project file: escaped, never rounded (the `id` filter).
    fn id(&mut self, value: &str) {
        let _ = md_escape_to(value, &mut self.out);
    }

    /// A figure, to four significant digits.
    fn fig(&mut self, x: f64) {
        write_figure(&mut self.out, x);
    }

    /// A figure, or "not declared" where there is none (the formatter's word for null).
    fn opt_fig(&mut self, x: Option<f64>) {
        match x {
            Some(x) => self.fig(x),
            None => self.s("not declared"),
        }
    }

    /// The distance a barrier was judged on (the template's `laid_out` macro): the declared
    /// one, or the board's, marked, where it is the only one or the smaller.
    fn laid_out(&mut self, declared: Option<f64>, measured: Option<f64>, judged: Option<f64>) {
        match (measured, judged) {
            (Some(m), Some(j)) if declared.is_none_or(|d| m < d) => {
                self.fig(j);
                self.s(" (measured)");
            }
            _ => self.opt_fig(declared),
        }
    }

    /// A figure with a space and its unit, or `missing` (the EMC template's `val`).
    fn val(&mut self, x: Option<f64>, unit: &str, missing: &str) {
        match x {
            Some(x) => {
                self.fig(x);
                self.s(" ");
                self.text(unit);
            }
            None => self.text(missing),
        }
    }

    /// A count, as it is.
    fn int(&mut self, n: impl Display) {
        let _ = write!(self.out, "{n}");
    }

    /// A margin with its sign (the `signed` filter).
    fn signed(&mut self, x: Option<f64>) {
        self.text(&signed(x));
    }

    /// A verdict word with its symbol (the `verdict` filter).
    fn verdict(&mut self, word: &str) {
        self.text(&view::verdict_label(word));
    }

    /// The verdict named `key` in a map of verdicts, or "–" where it has none.
    fn verdict_in(&mut self, verdicts: &BTreeMap<String, Verdict>, key: &str) {
        match verdicts.get(key) {
            Some(v) => self.verdict(v.as_str()),
            None => self.s("–"),
        }
    }

    /// An anchor on the HTML page; nothing in Markdown.
    fn anchor(&mut self, name: &str) {
        if self.view.html {
            self.out.push_str(&anchor_html(name));
        }
    }

    /// A place: a live link on the HTML page, its title in Markdown.
    fn link(&mut self, place: &Place) {
        self.out
            .push_str(&link_text(&place.title, &place.anchor, self.view.html));
    }

    /// Numbered steps of a derivation, each after a blank line: `1. text (rule id)`.
    fn steps<'s>(
        &mut self,
        steps: impl IntoIterator<Item = &'s crate::derivation::Step>,
        id: bool,
    ) {
        for (i, step) in steps.into_iter().enumerate() {
            self.s("\n");
            self.int(i + 1);
            self.s(". ");
            self.text(&step.text);
            if let Some(rule) = step.rule.as_deref().filter(|r| !r.is_empty()) {
                self.s(" (rule ");
                if id {
                    self.id(rule);
                } else {
                    self.text(rule);
                }
                self.s(")");
            }
        }
    }

    /// A bulleted list, one line per item.
    fn bullets(&mut self, items: &[String]) {
        for item in items {
            self.s("- ");
            self.text(item);
            self.s("\n");
        }
    }
}

/// A template's truth of an optional string: present and not empty.
fn present(value: &Option<String>) -> Option<&str> {
    value.as_deref().filter(|s| !s.is_empty())
}

fn title(md: &mut Md, r: &Report, preamble: &str) {
    md.s("# Pre-review checklist: ");
    md.id(&r.design.name);
    // The name is escaped, so it holds no line break: this is the end of the first line.
    md.s("\n\n");
    md.s(preamble);
    md.s("\n\nRevision ");
    match present(&r.design.revision) {
        Some(rev) => md.id(rev),
        None => md.s("not stated"),
    }
    md.s(" · protection class ");
    md.text(r.design.protection_class.as_str());
    md.s(" · project file ");
    md.id(&r.project_file);
    md.s("\\\nInputs SHA-256: ");
    md.id(&r.inputs_sha256);
    md.s(" · ");
    md.text(r.tool.name);
    md.s(" ");
    md.id(r.tool.version);
    md.s("\n\n> **Advisory only.** Defer to the applicable end-product standard, local electrical codes and licensed or accredited review. The tables behind these figures may carry copying errors; see \"Cautions\" at the end.\n\n");
}

fn open_items(md: &mut Md, r: &Report) {
    let s = &r.summary;
    md.s("## Open items\n\n| barriers | pass | fail | incomplete | check input | blocking findings | warnings | notes |\n|---:|---:|---:|---:|---:|---:|---:|---:|\n");
    for n in [
        s.barriers,
        s.pass,
        s.fail,
        s.incomplete,
        s.check_input,
        s.blocking,
        s.warning,
        s.note,
    ] {
        md.s("| ");
        md.int(n);
        md.s(" ");
    }
    md.s("|\n\nEvery blocking finding and warning, each with the section that shows it and the figure or derivation behind it; the notes are under \"Notes\" further down.\n");
    for (level, heading, badge) in [
        (Severity::Blocking, "Blocking", "✗ blocking"),
        (Severity::Warning, "Warnings", "⚠ warning"),
    ] {
        let count = r.findings.iter().filter(|f| f.severity == level).count();
        md.s("\n### ");
        md.s(heading);
        md.s(" (");
        md.int(count);
        md.s(")\n\n");
        for (i, f) in r.findings.iter().enumerate() {
            if f.severity != level {
                continue;
            }
            md.s("- [ ] ");
            md.s(badge);
            md.s(": ");
            finding_head(md, r, i);
            md.s(": ");
            md.text(&f.message);
            md.s(". See ");
            let places = &md.view.findings[i];
            md.link(&places.section);
            if let Some(derivation) = &places.derivation {
                md.s("; ");
                md.link(derivation);
            }
            md.s(".\n");
        }
        if count == 0 {
            md.s("None.\n");
        }
        md.s("\n");
    }
}

/// A finding's anchor, id and subject: `**id** (subject)`.
fn finding_head(md: &mut Md, r: &Report, i: usize) {
    let f = &r.findings[i];
    md.anchor(&md.view.findings[i].anchor);
    md.s("**");
    md.id(&f.id);
    md.s("**");
    if let Some(subject) = present(&f.subject) {
        md.s(" (");
        md.id(subject);
        md.s(")");
    }
}

fn conditions(md: &mut Md, r: &Report) {
    let d = &r.design;
    let c = &r.conditions;
    md.s("\n\n## Conditions\n\n- Standard: ");
    md.text(d.standard_title);
    md.s(", ");
    md.text(d.standard_scope);
    if !d.standard_named {
        md.s(" (the project file names no standard: the basics apply; the lab will judge against an end-product standard)");
    }
    md.s("\n- Pollution degree ");
    md.int(c.pollution_degree);
    md.s(", overvoltage category ");
    md.text(c.overvoltage_category.as_str());
    md.s(", altitude ");
    md.fig(c.altitude_m);
    md.s(" m\n- Mains nominal voltage (line to neutral) ");
    md.fig(c.mains_nominal_v);
    md.s(" V\n- Creepage between table rows: ");
    md.text(
        if c.creepage_between_rows == crate::project::BetweenRows::Interpolate {
            "linear interpolation, rounded up to 0.1 mm"
        } else {
            "the next higher row"
        },
    );
    md.s("\n- Altitude correction factor between table rows: ");
    md.text(
        if c.altitude_between_rows == crate::project::BetweenRows::Interpolate {
            "linear interpolation"
        } else {
            "the next higher row"
        },
    );
    md.s("\n\n## Assumptions\n\n");
    if r.assumptions.is_empty() {
        md.s("None: every setting was stated in the project file.\n");
    } else {
        md.bullets(&r.assumptions);
    }
    md.s("\n");
}

fn notes(md: &mut Md, r: &Report) {
    let count = r
        .findings
        .iter()
        .filter(|f| f.severity == Severity::Note)
        .count();
    md.s("## Findings\n\n### Notes (");
    md.int(count);
    md.s(")\n\nContext and assumptions, for the reviewer; blocking findings and warnings are under \"Open items\" at the top.\n\n");
    for (i, f) in r.findings.iter().enumerate() {
        if f.severity != Severity::Note {
            continue;
        }
        md.s("- [ ] ");
        finding_head(md, r, i);
        md.s(": ");
        md.text(&f.message);
        md.s("\n");
    }
    // The template's `else` of the loop: no finding at all (not merely no note).
    if r.findings.is_empty() {
        md.s("None.\n");
    }
    md.s("\n");
}

const CHECKS_TABLE_HEAD: &str =
    "| check | severity | judged | outcome | origin |\n|---|---|---:|---|---|\n";

fn checks_run(md: &mut Md, r: &Report) {
    let quiet = md.view.quiet_checks;
    md.s("## Checks run\n\nThe checks that judged or raised something (");
    md.int(r.checks.len() - quiet);
    md.s(" of ");
    md.int(r.checks.len());
    md.s("; from `rules/checks/` and any house rules). ");
    if quiet > 0 {
        md.int(quiet);
        md.s(" had nothing to judge in this design");
        md.s(if md.view.html {
            ": the appendix lists every check"
        } else {
            ": the HTML report's appendix and the JSON report list every check"
        });
        md.s(".");
    }
    md.s("\n\n");
    md.s(CHECKS_TABLE_HEAD);
    for c in r.checks.iter().filter(|c| c.judged > 0 || c.raised > 0) {
        check_row(md, c, "clear");
    }
    md.s("\n");
}

/// One row of a table of checks; `idle` is the outcome of one that judged nothing.
fn check_row(md: &mut Md, c: &crate::checks::CheckOutcome, idle: &str) {
    md.s("| ");
    md.id(&c.id);
    md.s(": ");
    md.text(&c.title);
    md.s(" | ");
    md.text(c.severity.as_str());
    md.s(" | ");
    md.int(c.judged);
    md.s(" | ");
    if c.raised > 0 {
        md.s("**raised ");
        md.int(c.raised);
        md.s("**");
    } else if c.judged == 0 {
        md.s(idle);
    } else {
        md.s("clear");
    }
    md.s(" | ");
    md.text(&c.origin);
    md.s(" |\n");
}

fn rule_tables(md: &mut Md, r: &Report) {
    md.s("## Rule tables\n\n| id | title | source | provenance | origin | SHA-256 |\n|---|---|---|---|---|---|\n");
    for t in &r.rules {
        md.s("| ");
        md.id(&t.id);
        md.s(" | ");
        md.text(&t.title);
        md.s(" | ");
        md.text(&t.source);
        md.s(" | ");
        md.text(&t.provenance);
        md.s(" | ");
        md.text(&t.origin);
        md.s(" (");
        md.id(&t.file);
        md.s(") | `");
        md.id(&t.sha256);
        md.s("` |\n");
    }
    md.s("\n");
}

fn cautions(md: &mut Md, r: &Report) {
    md.s("## Cautions\n\n");
    md.bullets(&r.cautions);
}

/// The HTML page's list of every check, those with nothing to judge too.
fn appendix(md: &mut Md, r: &Report) {
    md.s("\n## Appendix: every check of the checklist\n\nEvery check that ran, including those with nothing to judge in this design (the JSON report's `checks` lists the same).\n\n");
    md.s(CHECKS_TABLE_HEAD);
    for c in &r.checks {
        check_row(md, c, "nothing to judge");
    }
}

/// `items` joined by `sep`, each written by `each`; `empty` where there are none.
fn joined<T>(md: &mut Md, items: &[T], sep: &str, empty: &str, mut each: impl FnMut(&mut Md, &T)) {
    if items.is_empty() {
        md.s(empty);
    }
    for (i, item) in items.iter().enumerate() {
        if i > 0 {
            md.s(sep);
        }
        each(md, item);
    }
}

/// Inputs of a figure, `symbol = value unit (from)`, joined by "; ".
fn inputs(md: &mut Md, inputs: &[crate::derivation::Input], empty: &str) {
    joined(md, inputs, "; ", empty, |md, i| {
        md.text(&i.symbol);
        md.s(" = ");
        md.fig(i.value);
        if !i.unit.is_empty() {
            md.s(" ");
            md.text(&i.unit);
        }
        md.s(" (");
        md.text(&i.from);
        md.s(")");
    });
}
