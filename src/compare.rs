//! Comparing two revisions of a design: what changed in the inputs and, above all, in the
//! required figures, margins, verdicts and findings, as Markdown for a review record.

use std::collections::BTreeMap;
use std::path::Path;

use crate::ExitStatus;
use crate::diag::{Problems, Source};
use crate::report::{Report, check_source, md_escape};
use crate::rules::RuleBook;
use crate::spacing::show;

/// Two revisions read, evaluated and compared.
pub struct Comparison {
    /// The comparison as Markdown (see [`compare`]).
    pub markdown: String,
    /// The later revision's report: its readiness is the comparison's exit status.
    pub new: Report,
}

impl Comparison {
    /// Ready when the later revision is ready for review; `allow_incomplete` as for `check`.
    pub fn exit_status(&self, allow_incomplete: bool) -> ExitStatus {
        self.new.exit_status(allow_incomplete)
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
        (Ok((old_text, old_report)), Ok((new_text, new_report))) => Ok(Comparison {
            markdown: compare(&old_text, &old_report, &new_text, &new_report),
            new: new_report,
        }),
        (a, b) => Err(Problems(
            a.err()
                .into_iter()
                .chain(b.err())
                .flat_map(|p| p.0)
                .collect(),
        )),
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

fn revision(r: &Report) -> String {
    r.design
        .revision
        .clone()
        .unwrap_or_else(|| "not stated".to_string())
}

fn mm(x: Option<f64>) -> String {
    x.map(show).unwrap_or_else(|| "not declared".to_string())
}

/// The comparison as Markdown.
pub fn compare(old_text: &str, old: &Report, new_text: &str, new: &Report) -> String {
    let e = |s: &str| md_escape(s);
    let mut out = format!(
        "# Revision comparison: {}\n\nFrom revision {} ({}, SHA-256 {}) to revision {} ({}, SHA-256 {}).\n\n",
        e(&new.design.name),
        e(&revision(old)),
        e(&old.project_file),
        old.inputs_sha256,
        e(&revision(new)),
        e(&new.project_file),
        new.inputs_sha256
    );
    out.push_str(&format!(
        "Readiness for review: old revision {}; new revision **{}**.\n\n",
        e(&old.readiness.state),
        e(&new.readiness.state)
    ));
    // A change of standard changes figures with no change of layout: say so before them.
    if old.design.standard != new.design.standard {
        out.push_str(&format!(
            "**The standard changed** from {} to {}: the required figures and test voltages below follow the new standard's tables and method, so a figure may change with no change of layout.\n\n",
            old.design.standard_title, new.design.standard_title
        ));
    }
    // House rules apply to both revisions alike; say so first, with each file's hash.
    if !new.house.rules.is_empty() {
        let files: Vec<String> = new
            .house
            .rules
            .iter()
            .map(|f| format!("{} (SHA-256 {})", e(&f.file), f.sha256))
            .collect();
        out.push_str(&format!(
            "**House rules in force: the shipped rules were changed.** {}.\n\n",
            files.join(", ")
        ));
    }
    out.push_str("> Advisory only: defer to the applicable end-product standard, local electrical codes and licensed or accredited review.\n\n");

    out.push_str("## Summary\n\n| | barriers | pass | fail | incomplete | check input | blocking | warnings | notes |\n|---|---:|---:|---:|---:|---:|---:|---:|---:|\n");
    for (label, r) in [("old", old), ("new", new)] {
        let s = &r.summary;
        out.push_str(&format!(
            "| {label} | {} | {} | {} | {} | {} | {} | {} | {} |\n",
            s.barriers, s.pass, s.fail, s.incomplete, s.check_input, s.blocking, s.warning, s.note
        ));
    }

    out.push_str("\n## Required figures, margins and verdicts\n\n");
    let mut rows = String::new();
    let old_barriers: BTreeMap<&str, _> = old.barriers.iter().map(|b| (b.id.as_str(), b)).collect();
    let new_barriers: BTreeMap<&str, _> = new.barriers.iter().map(|b| (b.id.as_str(), b)).collect();
    for (id, b) in &new_barriers {
        match old_barriers.get(id) {
            None => rows.push_str(&format!(
                "| {} | barrier | added | {} {}, verdict {:?} |\n",
                e(id),
                b.grade.as_str(),
                b.working_rms_v,
                b.verdict
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
                        // A test voltage that is absent is none, not undeclared.
                        let shown = |x: Option<f64>| match x {
                            None if what.starts_with("electric") => "none".to_string(),
                            x => mm(x),
                        };
                        rows.push_str(&format!(
                            "| {} | {what} | {} | {} |\n",
                            e(id),
                            shown(before),
                            shown(after)
                        ));
                    }
                }
                if a.grade != b.grade {
                    rows.push_str(&format!(
                        "| {} | grade | {} | {} |\n",
                        e(id),
                        a.grade.as_str(),
                        b.grade.as_str()
                    ));
                }
                if a.verdict != b.verdict {
                    rows.push_str(&format!(
                        "| {} | **verdict** | {:?} | **{:?}** |\n",
                        e(id),
                        a.verdict,
                        b.verdict
                    ));
                }
            }
        }
    }
    for (id, a) in &old_barriers {
        if !new_barriers.contains_key(id) {
            rows.push_str(&format!(
                "| {} | barrier | removed (was {:?}) | |\n",
                e(id),
                a.verdict
            ));
        }
    }
    if rows.is_empty() {
        out.push_str("No required figure, margin or verdict changed.\n");
    } else {
        out.push_str("| barrier | figure | old | new |\n|---|---|---|---|\n");
        out.push_str(&rows);
    }

    out.push_str("\n## Findings\n\n");
    let key = |f: &crate::checks::Finding| (f.id.clone(), f.subject.clone(), f.message.clone());
    let old_f: Vec<_> = old.findings.iter().map(key).collect();
    let new_f: Vec<_> = new.findings.iter().map(key).collect();
    let mut any = false;
    // A finding in one revision and not the other: "new" in bold, "gone" struck through.
    let changes = [
        (&new.findings, &old_f, "new", "**"),
        (&old.findings, &new_f, "gone", "~~"),
    ];
    for (findings, other, word, mark) in changes {
        for f in findings.iter().filter(|f| !other.contains(&key(f))) {
            any = true;
            out.push_str(&format!(
                "- {word} {:?}: {mark}{}{mark}{}: {}\n",
                f.severity,
                e(&f.id),
                f.subject
                    .as_deref()
                    .map(|s| format!(" ({})", e(s)))
                    .unwrap_or_default(),
                e(&f.message)
            ));
        }
    }
    if !any {
        out.push_str("No finding appeared or went.\n");
    }

    out.push_str("\n## Isolation\n\n");
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
    let mut iso = String::new();
    for (k, v) in &new_p {
        if old_p.get(k) != Some(v) {
            let before = old_p
                .get(k)
                .map(|o| e(&o.2))
                .unwrap_or_else(|| "not judged".to_string());
            iso.push_str(&format!(
                "| {} | {} | {before} | {} (needs level {}) |\n",
                e(&k.0),
                e(&k.1),
                e(&v.2),
                v.1
            ));
        }
    }
    for k in old_p.keys() {
        if !new_p.contains_key(k) {
            iso.push_str(&format!(
                "| {} | {} | judged | no longer a pair |\n",
                e(&k.0),
                e(&k.1)
            ));
        }
    }
    if iso.is_empty() {
        out.push_str("No hazardous-to-accessible path changed.\n");
    } else {
        out.push_str("| hazardous | accessible | old | new |\n|---|---|---|---|\n");
        out.push_str(&iso);
    }

    out.push_str("\n## Inputs changed\n\n");
    let (a, b) = (flatten_inputs(old_text), flatten_inputs(new_text));
    let mut inputs = String::new();
    for (k, v) in &b {
        match a.get(k) {
            Some(old_v) if old_v == v => {}
            Some(old_v) => inputs.push_str(&format!("| {} | {} | {} |\n", e(k), e(old_v), e(v))),
            None => inputs.push_str(&format!("| {} | not set | {} |\n", e(k), e(v))),
        }
    }
    for (k, v) in &a {
        if !b.contains_key(k) {
            inputs.push_str(&format!("| {} | {} | not set |\n", e(k), e(v)));
        }
    }
    if inputs.is_empty() {
        out.push_str("No input value changed (comments and order aside).\n");
    } else {
        out.push_str("| key | old | new |\n|---|---|---|\n");
        out.push_str(&inputs);
    }
    out
}

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
