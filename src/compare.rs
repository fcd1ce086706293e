//! Comparing two revisions of a design: what changed in the inputs and, above all, in the
//! required figures, margins, verdicts and findings, as Markdown for a review record.

use std::collections::BTreeMap;
use std::path::Path;

use serde::Serialize;

use crate::ExitStatus;
use crate::commands::Format;
use crate::diag::{Problems, Source};
use crate::report::{Report, check_source, md_escape};
use crate::rules::RuleBook;
use crate::spacing::show;

/// Two revisions read, evaluated and compared.
pub struct Comparison {
    /// The comparison as Markdown (see [`compare`]).
    pub markdown: String,
    /// The comparison as data: what `--format json` prints and the Markdown shows.
    pub model: ComparisonModel,
    /// The later revision's report: its readiness is the comparison's exit status.
    pub new: Report,
}

impl Comparison {
    /// Ready when the later revision is ready for review; `allow_incomplete` as for `check`.
    pub fn exit_status(&self, allow_incomplete: bool) -> ExitStatus {
        self.new.exit_status(allow_incomplete)
    }

    /// The comparison in `format`: the Markdown, a self-contained HTML page made from it,
    /// or the model as JSON.
    pub fn render(&self, format: Format) -> String {
        match format {
            Format::Markdown => self.markdown.clone(),
            Format::Html => html_page(
                &format!("Revision comparison: {}", self.new.design.name),
                &self.markdown,
            ),
            Format::Json => crate::report::to_json(&self.model),
        }
    }
}

/// Reads and evaluates both project files and compares them. Both are read before any
/// problem is returned, so the designer sees what is wrong in either file at once.
pub fn compare_files(old: &Path, new: &Path, rules: &RuleBook) -> Result<Comparison, Problems> {
    let read = |path: &Path| -> Result<(String, Report), Problems> {
        let name = path.display().to_string();
        let text = crate::read_text(path, &name)?;
        let report = check_source(&Source::new(name, text.clone()), rules)?;
        Ok((text, report))
    };
    match (read(old), read(new)) {
        (Ok((old_text, old_report)), Ok((new_text, new_report))) => {
            let model = comparison_model(&old_text, &old_report, &new_text, &new_report);
            Ok(Comparison {
                markdown: model_markdown(&model),
                model,
                new: new_report,
            })
        }
        (a, b) => Err(Problems(
            a.err()
                .into_iter()
                .chain(b.err())
                .flat_map(|p| p.0)
                .collect(),
        )),
    }
}

/// One revision as the comparison names it.
#[derive(Debug, Clone, Serialize)]
pub struct RevisionInfo {
    pub revision: Option<String>,
    pub project_file: String,
    pub inputs_sha256: String,
    pub readiness: String,
    pub ready: bool,
    pub summary: crate::report::Summary,
}

/// A figure, margin or verdict that differs between the revisions. `old` and `new` are
/// as printed; `old_value` and `new_value` keep full precision where the figure is a
/// number.
#[derive(Debug, Clone, Serialize)]
pub struct FigureChange {
    /// A barrier id, `power_entry` or `emc`.
    pub subject: String,
    /// "required clearance, mm", a report field such as `inrush_peak_a`, or `verdict`.
    pub figure: String,
    pub old: String,
    pub new: String,
    pub old_value: Option<f64>,
    pub new_value: Option<f64>,
}

/// A finding that appeared ("new"), went ("gone") or whose message or severity changed
/// ("changed") between the revisions; findings are matched by id and subject.
#[derive(Debug, Clone, Serialize)]
pub struct FindingChange {
    pub change: &'static str,
    pub id: String,
    pub subject: Option<String>,
    pub severity: crate::checks::Severity,
    pub message: String,
    /// For "changed": the old revision's severity and message.
    pub old_severity: Option<crate::checks::Severity>,
    pub old_message: Option<String>,
}

/// A hazardous-to-accessible pair whose isolation changed.
#[derive(Debug, Clone, Serialize)]
pub struct IsolationChange {
    pub hazardous: String,
    pub accessible: String,
    /// What the old revision provided, or null where the pair was not judged.
    pub old: Option<String>,
    /// What the new one provides, or null where it is no longer a pair.
    pub new: Option<String>,
    pub needs_level: Option<u8>,
}

/// An input value that changed (keys as `barrier[pri-sec].creepage_mm`; values as TOML).
#[derive(Debug, Clone, Serialize)]
pub struct InputChange {
    pub key: String,
    pub old: Option<String>,
    pub new: Option<String>,
}

/// Everything the comparison says, as data.
#[derive(Debug, Clone, Serialize)]
pub struct ComparisonModel {
    pub design: String,
    pub old: RevisionInfo,
    pub new: RevisionInfo,
    /// House rule files in force (both revisions are evaluated with the same rules).
    pub house_rules: Vec<crate::report::HouseFile>,
    /// Where the two revisions name different standards: the sentence saying that the
    /// figures follow the new one (a figure may change with no change of layout).
    pub standard_change: Option<String>,
    pub figures: Vec<FigureChange>,
    pub findings: Vec<FindingChange>,
    pub isolation: Vec<IsolationChange>,
    pub inputs: Vec<InputChange>,
    pub caution: &'static str,
}

const CAUTION: &str = "Advisory only: defer to the applicable end-product standard, local electrical codes and licensed or accredited review.";

fn revision_info(r: &Report) -> RevisionInfo {
    RevisionInfo {
        revision: r.design.revision.clone(),
        project_file: r.project_file.clone(),
        inputs_sha256: r.inputs_sha256.clone(),
        readiness: r.readiness.state.clone(),
        ready: r.readiness.ready,
        summary: r.summary.clone(),
    }
}

/// Every input value by a readable key path (`barrier[pri-sec].creepage_mm`).
pub fn flatten_inputs(text: &str) -> BTreeMap<String, String> {
    let mut out = BTreeMap::new();
    if let Ok(table) = toml::from_str::<toml::Table>(text) {
        flatten(&mut out, "", &toml::Value::Table(table));
    }
    out
}

fn flatten(out: &mut BTreeMap<String, String>, path: &str, value: &toml::Value) {
    match value {
        toml::Value::Table(t) => {
            for (k, v) in t {
                let key = if path.is_empty() {
                    k.clone()
                } else {
                    format!("{path}.{k}")
                };
                flatten(out, &key, v);
            }
        }
        // Arrays of tables are keyed by their id (or ref), so a reordering is no change.
        toml::Value::Array(items)
            if items.iter().all(toml::Value::is_table) && !items.is_empty() =>
        {
            for (i, item) in items.iter().enumerate() {
                let name = ["id", "ref"]
                    .iter()
                    .find_map(|k| item.get(k).and_then(toml::Value::as_str))
                    .map(str::to_string)
                    .unwrap_or_else(|| (i + 1).to_string());
                flatten(out, &format!("{path}[{name}]"), item);
            }
        }
        other => {
            out.insert(path.to_string(), other.to_string());
        }
    }
}

fn mm(x: Option<f64>) -> String {
    x.map(show).unwrap_or_else(|| "not declared".to_string())
}

/// The comparison as Markdown.
pub fn compare(old_text: &str, old: &Report, new_text: &str, new: &Report) -> String {
    model_markdown(&comparison_model(old_text, old, new_text, new))
}

/// What changed between two revisions, as data.
pub fn comparison_model(
    old_text: &str,
    old: &Report,
    new_text: &str,
    new: &Report,
) -> ComparisonModel {
    ComparisonModel {
        design: new.design.name.clone(),
        old: revision_info(old),
        new: revision_info(new),
        house_rules: new.house.rules.clone(),
        standard_change: (old.design.standard != new.design.standard).then(|| {
            format!(
                "The standard changed from {} to {}: the required figures and test voltages below follow the new standard's tables and method, so a figure may change with no change of layout.",
                old.design.standard_title, new.design.standard_title
            )
        }),
        figures: figure_changes(old, new),
        findings: finding_changes(old, new),
        isolation: isolation_changes(old, new),
        inputs: input_changes(old_text, new_text),
        caution: CAUTION,
    }
}

fn figure(
    subject: &str,
    what: &str,
    old: String,
    new: String,
    values: (Option<f64>, Option<f64>),
) -> FigureChange {
    FigureChange {
        subject: subject.to_string(),
        figure: what.to_string(),
        old,
        new,
        old_value: values.0,
        new_value: values.1,
    }
}

fn figure_changes(old: &Report, new: &Report) -> Vec<FigureChange> {
    let mut rows = Vec::new();
    let old_barriers: BTreeMap<&str, _> = old.barriers.iter().map(|b| (b.id.as_str(), b)).collect();
    let new_barriers: BTreeMap<&str, _> = new.barriers.iter().map(|b| (b.id.as_str(), b)).collect();
    for (id, b) in &new_barriers {
        match old_barriers.get(id) {
            None => rows.push(figure(
                id,
                "barrier",
                "added".to_string(),
                format!(
                    "{} {}, verdict {:?}",
                    b.grade.as_str(),
                    b.working_rms_v,
                    b.verdict
                ),
                (None, None),
            )),
            Some(a) => {
                for (what, before, after) in [
                    (
                        "required clearance, mm",
                        Some(a.required_clearance_mm),
                        Some(b.required_clearance_mm),
                    ),
                    (
                        "required creepage, mm",
                        Some(a.required_creepage_mm),
                        Some(b.required_creepage_mm),
                    ),
                    ("clearance laid out, mm", a.clearance_mm, b.clearance_mm),
                    ("creepage laid out, mm", a.creepage_mm, b.creepage_mm),
                    (
                        "clearance margin, mm",
                        a.clearance_margin_mm,
                        b.clearance_margin_mm,
                    ),
                    (
                        "creepage margin, mm",
                        a.creepage_margin_mm,
                        b.creepage_margin_mm,
                    ),
                    ("electric strength test, V rms", a.test_v_rms, b.test_v_rms),
                ] {
                    if before != after {
                        rows.push(figure(id, what, mm(before), mm(after), (before, after)));
                    }
                }
                if a.grade != b.grade {
                    rows.push(figure(
                        id,
                        "grade",
                        a.grade.as_str().to_string(),
                        b.grade.as_str().to_string(),
                        (None, None),
                    ));
                }
                if a.verdict != b.verdict {
                    rows.push(figure(
                        id,
                        "verdict",
                        format!("{:?}", a.verdict),
                        format!("{:?}", b.verdict),
                        (None, None),
                    ));
                }
            }
        }
    }
    for (id, a) in &old_barriers {
        if !new_barriers.contains_key(id) {
            rows.push(figure(
                id,
                "barrier",
                format!("removed (was {:?})", a.verdict),
                String::new(),
                (None, None),
            ));
        }
    }
    let value = |x: Option<serde_json::Result<serde_json::Value>>| x.and_then(Result::ok);
    section_changes(
        &mut rows,
        "power_entry",
        value(old.power_entry.as_ref().map(serde_json::to_value)),
        value(new.power_entry.as_ref().map(serde_json::to_value)),
    );
    section_changes(
        &mut rows,
        "emc",
        value(old.emc.as_ref().map(serde_json::to_value)),
        value(new.emc.as_ref().map(serde_json::to_value)),
    );
    rows
}

/// Every top-level number of a section (`inrush_peak_a`, `dm_corner_hz`, ...) and every
/// entry of its `verdicts` that differs; a section evaluated in one revision only is one
/// row.
fn section_changes(
    rows: &mut Vec<FigureChange>,
    subject: &str,
    old: Option<serde_json::Value>,
    new: Option<serde_json::Value>,
) {
    use serde_json::Value;
    let evaluated = |v: &Option<Value>| v.as_ref().is_some_and(|v| v.is_object());
    match (evaluated(&old), evaluated(&new)) {
        (false, false) => return,
        (true, true) => {}
        (was, is) => {
            let words = |e: bool| if e { "evaluated" } else { "not evaluated" };
            rows.push(figure(
                subject,
                "section",
                words(was).to_string(),
                words(is).to_string(),
                (None, None),
            ));
            return;
        }
    }
    let (Some(Value::Object(a)), Some(Value::Object(b))) = (old, new) else {
        return;
    };
    let shown = |v: Option<&Value>| match v {
        Some(Value::Number(n)) => n.as_f64().map(show).unwrap_or_else(|| n.to_string()),
        Some(Value::String(s)) => s.clone(),
        Some(Value::Bool(x)) => x.to_string(),
        _ => "not computed".to_string(),
    };
    let keys: std::collections::BTreeSet<&String> = a.keys().chain(b.keys()).collect();
    for key in keys {
        let (x, y) = (a.get(key), b.get(key));
        let numeric = |v: Option<&Value>| v.is_some_and(|v| v.is_number());
        if !(numeric(x) || numeric(y)) || !x.is_none_or(|v| v.is_number() || v.is_null()) {
            continue;
        }
        if !y.is_none_or(|v| v.is_number() || v.is_null()) || x == y {
            continue;
        }
        rows.push(figure(
            subject,
            key,
            shown(x),
            shown(y),
            (x.and_then(Value::as_f64), y.and_then(Value::as_f64)),
        ));
    }
    let verdicts = |m: &serde_json::Map<String, Value>| -> BTreeMap<String, Value> {
        m.get("verdicts")
            .and_then(Value::as_object)
            .map(|o| o.iter().map(|(k, v)| (k.clone(), v.clone())).collect())
            .unwrap_or_default()
    };
    let (va, vb) = (verdicts(&a), verdicts(&b));
    let names: std::collections::BTreeSet<&String> = va.keys().chain(vb.keys()).collect();
    for name in names {
        let (x, y) = (va.get(name), vb.get(name));
        if x != y {
            let word = |v: Option<&Value>| match v {
                Some(Value::String(s)) => s.clone(),
                _ => "not judged".to_string(),
            };
            rows.push(figure(
                subject,
                &format!("verdict {name}"),
                word(x),
                word(y),
                (None, None),
            ));
        }
    }
}

/// Findings matched by id and subject: the same message is no change; a different
/// message or severity is "changed"; the rest "new" or "gone".
fn finding_changes(old: &Report, new: &Report) -> Vec<FindingChange> {
    use crate::checks::Finding;
    type Key = (String, Option<String>);
    let group = |fs: &[Finding]| -> BTreeMap<Key, Vec<Finding>> {
        let mut m: BTreeMap<Key, Vec<Finding>> = BTreeMap::new();
        for f in fs {
            m.entry((f.id.clone(), f.subject.clone()))
                .or_default()
                .push(f.clone());
        }
        m
    };
    let (mut a, mut b) = (group(&old.findings), group(&new.findings));
    // Identical findings first: they are no change, whatever their order.
    for (key, olds) in a.iter_mut() {
        if let Some(news) = b.get_mut(key) {
            olds.retain(|o| {
                match news
                    .iter()
                    .position(|n| n.message == o.message && n.severity == o.severity)
                {
                    Some(i) => {
                        news.remove(i);
                        false
                    }
                    None => true,
                }
            });
        }
    }
    let change = |word: &'static str, f: &Finding, was: Option<&Finding>| FindingChange {
        change: word,
        id: f.id.clone(),
        subject: f.subject.clone(),
        severity: f.severity,
        message: f.message.clone(),
        old_severity: was.map(|w| w.severity),
        old_message: was.map(|w| w.message.clone()),
    };
    let mut changed = Vec::new();
    let mut added = Vec::new();
    let mut gone = Vec::new();
    // In the new report's order, so the list reads like the new checklist.
    let mut seen: std::collections::BTreeSet<Key> = std::collections::BTreeSet::new();
    for f in &new.findings {
        let key = (f.id.clone(), f.subject.clone());
        if !seen.insert(key.clone()) {
            continue;
        }
        let news = b.get(&key).cloned().unwrap_or_default();
        let olds = a.get(&key).cloned().unwrap_or_default();
        for (i, n) in news.iter().enumerate() {
            match olds.get(i) {
                Some(o) => changed.push(change("changed", n, Some(o))),
                None => added.push(change("new", n, None)),
            }
        }
    }
    let mut seen_old: std::collections::BTreeSet<Key> = std::collections::BTreeSet::new();
    for f in &old.findings {
        let key = (f.id.clone(), f.subject.clone());
        if !seen_old.insert(key.clone()) {
            continue;
        }
        let news = b.get(&key).map(Vec::len).unwrap_or(0);
        for o in a.get(&key).into_iter().flatten().skip(news) {
            gone.push(change("gone", o, None));
        }
    }
    added.into_iter().chain(gone).chain(changed).collect()
}

fn isolation_changes(old: &Report, new: &Report) -> Vec<IsolationChange> {
    let pairs = |r: &Report| -> BTreeMap<(String, String), (u8, u8, String)> {
        r.isolation
            .iter()
            .flat_map(|i| &i.pairs)
            .map(|p| {
                (
                    (p.hazardous.clone(), p.accessible.clone()),
                    (p.provides_level, p.needs_level, p.provides.clone()),
                )
            })
            .collect()
    };
    let (old_p, new_p) = (pairs(old), pairs(new));
    let mut out = Vec::new();
    for (k, v) in &new_p {
        if old_p.get(k) != Some(v) {
            out.push(IsolationChange {
                hazardous: k.0.clone(),
                accessible: k.1.clone(),
                old: old_p.get(k).map(|o| o.2.clone()),
                new: Some(v.2.clone()),
                needs_level: Some(v.1),
            });
        }
    }
    for k in old_p.keys() {
        if !new_p.contains_key(k) {
            out.push(IsolationChange {
                hazardous: k.0.clone(),
                accessible: k.1.clone(),
                old: old_p.get(k).map(|o| o.2.clone()),
                new: None,
                needs_level: None,
            });
        }
    }
    out
}

fn input_changes(old_text: &str, new_text: &str) -> Vec<InputChange> {
    let (a, b) = (flatten_inputs(old_text), flatten_inputs(new_text));
    let mut out = Vec::new();
    for (k, v) in &b {
        match a.get(k) {
            Some(old_v) if old_v == v => {}
            old_v => out.push(InputChange {
                key: k.clone(),
                old: old_v.cloned(),
                new: Some(v.clone()),
            }),
        }
    }
    for (k, v) in &a {
        if !b.contains_key(k) {
            out.push(InputChange {
                key: k.clone(),
                old: Some(v.clone()),
                new: None,
            });
        }
    }
    out
}

fn severity_name(s: crate::checks::Severity) -> String {
    format!("{s:?}")
}

/// The comparison's Markdown, from the model.
pub fn model_markdown(m: &ComparisonModel) -> String {
    let e = |s: &str| md_escape(s);
    let rev = |r: &RevisionInfo| {
        r.revision
            .clone()
            .unwrap_or_else(|| "not stated".to_string())
    };
    let mut out = format!(
        "# Revision comparison: {}\n\nFrom revision {} ({}, SHA-256 {}) to revision {} ({}, SHA-256 {}).\n\n",
        e(&m.design),
        e(&rev(&m.old)),
        e(&m.old.project_file),
        m.old.inputs_sha256,
        e(&rev(&m.new)),
        e(&m.new.project_file),
        m.new.inputs_sha256
    );
    out.push_str(&format!(
        "Readiness for review: old revision {}; new revision **{}**.\n\n",
        e(&m.old.readiness),
        e(&m.new.readiness)
    ));
    if let Some(change) = &m.standard_change {
        out.push_str(&format!("**{}**\n\n", e(change)));
    }
    // House rules apply to both revisions alike; say so first, with each file's hash.
    if !m.house_rules.is_empty() {
        let files: Vec<String> = m
            .house_rules
            .iter()
            .map(|f| format!("{} (SHA-256 {})", e(&f.file), f.sha256))
            .collect();
        out.push_str(&format!(
            "**House rules in force: the shipped rules were changed.** {}.\n\n",
            files.join(", ")
        ));
    }
    out.push_str(&format!("> {CAUTION}\n\n"));

    out.push_str("## Summary\n\n| | barriers | pass | fail | incomplete | check input | blocking | warnings | notes |\n|---|---:|---:|---:|---:|---:|---:|---:|---:|\n");
    for (label, r) in [("old", &m.old), ("new", &m.new)] {
        let s = &r.summary;
        out.push_str(&format!(
            "| {label} | {} | {} | {} | {} | {} | {} | {} | {} |\n",
            s.barriers, s.pass, s.fail, s.incomplete, s.check_input, s.blocking, s.warning, s.note
        ));
    }

    out.push_str("\n## Required figures, margins and verdicts\n\n");
    if m.figures.is_empty() {
        out.push_str("No required figure, margin or verdict changed.\n");
    } else {
        out.push_str("| barrier | figure | old | new |\n|---|---|---|---|\n");
        for f in &m.figures {
            // A verdict is the row a reviewer looks for: bold, as it always was.
            let row = if f.figure == "verdict" || f.figure.starts_with("verdict ") {
                format!(
                    "| {} | **{}** | {} | **{}** |\n",
                    e(&f.subject),
                    e(&f.figure),
                    e(&f.old),
                    e(&f.new)
                )
            } else if f.figure == "barrier" && f.new.is_empty() {
                format!("| {} | barrier | {} | |\n", e(&f.subject), e(&f.old))
            } else {
                format!(
                    "| {} | {} | {} | {} |\n",
                    e(&f.subject),
                    e(&f.figure),
                    e(&f.old),
                    e(&f.new)
                )
            };
            out.push_str(&row);
        }
    }

    out.push_str("\n## Findings\n\n");
    // "new" in bold, "gone" struck through, "changed" with the old message struck through.
    for f in &m.findings {
        let subject = f
            .subject
            .as_deref()
            .map(|s| format!(" ({})", e(s)))
            .unwrap_or_default();
        let line = match f.change {
            "new" => format!(
                "- new {}: **{}**{subject}: {}\n",
                severity_name(f.severity),
                e(&f.id),
                e(&f.message)
            ),
            "gone" => format!(
                "- gone {}: ~~{}~~{subject}: {}\n",
                severity_name(f.severity),
                e(&f.id),
                e(&f.message)
            ),
            _ => {
                let severity = match f.old_severity {
                    Some(o) if o != f.severity => {
                        format!("{} (was {})", severity_name(f.severity), severity_name(o))
                    }
                    _ => severity_name(f.severity),
                };
                format!(
                    "- changed {severity}: {}{subject}: ~~{}~~ now: {}\n",
                    e(&f.id),
                    e(f.old_message.as_deref().unwrap_or("")),
                    e(&f.message)
                )
            }
        };
        out.push_str(&line);
    }
    if m.findings.is_empty() {
        out.push_str("No finding appeared or went.\n");
    }

    out.push_str("\n## Isolation\n\n");
    if m.isolation.is_empty() {
        out.push_str("No hazardous-to-accessible path changed.\n");
    } else {
        out.push_str("| hazardous | accessible | old | new |\n|---|---|---|---|\n");
        for i in &m.isolation {
            match (&i.new, i.needs_level) {
                (Some(now), Some(level)) => out.push_str(&format!(
                    "| {} | {} | {} | {} (needs level {level}) |\n",
                    e(&i.hazardous),
                    e(&i.accessible),
                    i.old
                        .as_deref()
                        .map(e)
                        .unwrap_or_else(|| "not judged".to_string()),
                    e(now)
                )),
                _ => out.push_str(&format!(
                    "| {} | {} | judged | no longer a pair |\n",
                    e(&i.hazardous),
                    e(&i.accessible)
                )),
            }
        }
    }

    out.push_str("\n## Inputs changed\n\n");
    if m.inputs.is_empty() {
        out.push_str("No input value changed (comments and order aside).\n");
    } else {
        out.push_str("| key | old | new |\n|---|---|---|\n");
        for i in &m.inputs {
            out.push_str(&format!(
                "| {} | {} | {} |\n",
                e(&i.key),
                i.old
                    .as_deref()
                    .map(e)
                    .unwrap_or_else(|| "not set".to_string()),
                i.new
                    .as_deref()
                    .map(e)
                    .unwrap_or_else(|| "not set".to_string())
            ));
        }
    }
    out
}

/// A Markdown text as a self-contained HTML page (no external resource). Raw HTML in the
/// Markdown is shown as text: every project string in it was escaped for Markdown only.
pub fn html_page(title: &str, markdown: &str) -> String {
    use pulldown_cmark::{Event, Options, Parser, html};
    let options = Options::ENABLE_TABLES | Options::ENABLE_STRIKETHROUGH;
    let events = Parser::new_ext(markdown, options).map(|event| match event {
        Event::Html(text) | Event::InlineHtml(text) => Event::Text(text),
        other => other,
    });
    let mut body = String::new();
    html::push_html(&mut body, events);
    let title = crate::text::visible_line(title)
        .replace('&', "&amp;")
        .replace('<', "&lt;")
        .replace('>', "&gt;");
    format!(
        "<!DOCTYPE html>\n<html lang=\"en\">\n<head>\n<meta charset=\"utf-8\">\n<title>{title}</title>\n<style>\n{PAGE_STYLE}</style>\n</head>\n<body>\n{}</body>\n</html>\n",
        crate::text::visible(&body)
    )
}

const PAGE_STYLE: &str = "body { font-family: system-ui, sans-serif; max-width: 72rem; margin: 2rem auto; padding: 0 1rem; line-height: 1.45; color: #1d2327; }
table { border-collapse: collapse; margin: 1rem 0; }
th, td { border: 1px solid #c3c4c7; padding: 0.25rem 0.5rem; text-align: left; }
th { background: #f0f0f1; }
blockquote { border-left: 4px solid #c3c4c7; margin: 1rem 0; padding: 0.25rem 1rem; }
del { color: #8a2424; }
";

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn problems_in_both_revisions_are_reported_together() {
        let rules = RuleBook::load(None).expect("shipped rules load");
        let old = Path::new("no-such-old-revision.toml");
        let new = Path::new("no-such-new-revision.toml");
        let Err(problems) = compare_files(old, new, &rules) else {
            panic!("two missing files compared");
        };
        let text = problems.to_string();
        assert_eq!(problems.0.len(), 2, "{text}");
        assert!(text.contains("no-such-old-revision.toml"), "{text}");
        assert!(text.contains("no-such-new-revision.toml"), "{text}");
    }

    #[test]
    fn the_status_is_the_new_revisions_readiness() {
        let rules = RuleBook::load(None).expect("shipped rules load");
        let root = Path::new(env!("CARGO_MANIFEST_DIR"));
        let fixture = root.join("tests/fixtures/short-clearance.toml");
        let example = root.join("examples/class2-adapter.toml");
        // The fixture declares 2.4 mm across reinforced insulation on a 230 V, OVC II
        // system, which needs 3.0 mm: 2500 V (IEC 60664-1 Table F.1), one step up for
        // reinforced -> 4000 V, Table F.2 Case A -> 3.0 mm (REFERENCES.md, Table F.2).
        // The shipped Class II example is ready for review (tests/it/cli.rs pins its exit 0).
        let worse = compare_files(&example, &fixture, &rules).expect("both read");
        assert_eq!(worse.exit_status(false), ExitStatus::NotReady);
        assert!(worse.markdown.starts_with("# Revision comparison"));
        let better = compare_files(&fixture, &example, &rules).expect("both read");
        assert_eq!(better.exit_status(false), ExitStatus::Ready);
    }
}
