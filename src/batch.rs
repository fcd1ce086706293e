//! Many designs at once: finding project files in folders, checking them on several
//! threads with results in a fixed order, writing one report each and a summary table.

use std::collections::{HashMap, HashSet};
use std::io::{IsTerminal, Write};
use std::path::{Path, PathBuf};
use std::sync::Mutex;
use std::sync::atomic::{AtomicUsize, Ordering};

use crate::ExitStatus;
use crate::commands::{Format, check_file, write_atomically};
use crate::diag::{Diagnostic, Problems};
use crate::report::{Report, Templates};
use crate::rules::RuleBook;

/// Folders skipped while searching for project files.
const SKIPPED_FOLDERS: &[&str] = &["rules", "templates", "target", "node_modules"];

/// A project file found on the command line or in a folder, with the name its report
/// takes inside an output folder (its path relative to the folder searched).
#[derive(Debug, Clone, PartialEq)]
pub struct Found {
    pub path: PathBuf,
    pub relative: PathBuf,
}

/// Expands folders into the project files inside them: every `*.toml` file, searched
/// recursively, except in folders named `rules`, `templates`, `target` or starting with a
/// dot (house rules and build output live there). Files named on the command line are
/// taken as they are. The order is the command line's, then sorted by path in a folder.
/// See `find_projects_noting` for links and files named twice.
pub fn find_projects(paths: &[PathBuf]) -> Result<Vec<Found>, Problems> {
    find_projects_noting(paths).map(|(found, _)| found)
}

/// `find_projects`, with notes for the user about what was passed over. Inside a folder,
/// a link to a folder is not followed (a link to `.` or `..` would make the search endless
/// or find everything again), and no folder is searched twice (by device and inode, which
/// also stops bind-mount loops). A file met twice, under the same name or another (a
/// link, a hard link, a file also inside a folder named), is checked once, and a note
/// says so. Designs whose `relative` names clash (`a/x.toml` and `b/x.toml`) get as much
/// of their path as keeps them apart.
pub fn find_projects_noting(paths: &[PathBuf]) -> Result<(Vec<Found>, Vec<String>), Problems> {
    let mut found = Vec::new();
    let mut problems = Vec::new();
    let mut visited = HashSet::new();
    for path in paths {
        if path.is_dir() {
            // A folder named twice, or inside one named before: its files are found already.
            if file_id(path).is_some_and(|id| visited.contains(&id)) {
                continue;
            }
            let before = found.len();
            search(path, path, &mut found, &mut visited, 0);
            if found.len() == before {
                problems.push(Diagnostic::new(
                    &path.display().to_string(),
                    "is a folder holding no project file (*.toml)",
                ));
            }
        } else {
            let relative = path
                .file_name()
                .map(PathBuf::from)
                .unwrap_or_else(|| path.clone());
            found.push(Found {
                path: path.clone(),
                relative,
            });
        }
    }
    if !problems.is_empty() {
        return Err(Problems(problems));
    }
    let mut notes = Vec::new();
    let mut seen: HashMap<(u64, u64), PathBuf> = HashMap::new();
    found.retain(|f| {
        // A path that cannot be looked at is kept: checking it gives the error.
        let Some(id) = file_id(&f.path) else {
            return true;
        };
        match seen.get(&id) {
            Some(first) => {
                notes.push(format!(
                    "{}: the same file as {}; checked once",
                    f.path.display(),
                    first.display()
                ));
                false
            }
            None => {
                seen.insert(id, f.path.clone());
                true
            }
        }
    });
    keep_apart(&mut found);
    Ok((found, notes))
}

/// Folders deeper than this are not searched (links are not followed, so only a real
/// tree this deep reaches it).
const MAX_DEPTH: usize = 32;

/// The device and inode of what a path names, links followed.
fn file_id(path: &Path) -> Option<(u64, u64)> {
    use std::os::unix::fs::MetadataExt;
    std::fs::metadata(path).ok().map(|m| (m.dev(), m.ino()))
}

fn search(
    root: &Path,
    dir: &Path,
    found: &mut Vec<Found>,
    visited: &mut HashSet<(u64, u64)>,
    depth: usize,
) {
    if depth > MAX_DEPTH {
        return;
    }
    if let Some(id) = file_id(dir)
        && !visited.insert(id)
    {
        return;
    }
    let Ok(entries) = std::fs::read_dir(dir) else {
        return;
    };
    // The entry's own type: a link is a link here, never the folder it points to.
    let mut entries: Vec<(PathBuf, Option<std::fs::FileType>)> = entries
        .filter_map(|e| e.ok().map(|e| (e.path(), e.file_type().ok())))
        .collect();
    entries.sort_by(|a, b| a.0.cmp(&b.0));
    for (path, file_type) in entries {
        let name = path
            .file_name()
            .map(|n| n.to_string_lossy().to_string())
            .unwrap_or_default();
        let is_link = file_type.is_some_and(|t| t.is_symlink());
        if file_type.is_some_and(|t| t.is_dir()) {
            if !name.starts_with('.') && !SKIPPED_FOLDERS.contains(&name.as_str()) {
                search(root, &path, found, visited, depth + 1);
            }
        } else if is_link && path.is_dir() {
            // A link to a folder: not followed.
        } else if name.ends_with(".toml") && !name.starts_with('.') {
            // Also a named pipe or device with that name: checking it says what it is.
            let relative = path
                .strip_prefix(root)
                .map(Path::to_path_buf)
                .unwrap_or_else(|_| PathBuf::from(&name));
            found.push(Found { path, relative });
        }
    }
}

/// Lengthens clashing `relative` names (the same apart from letter case and extension)
/// with the folders above them in their path, one at a time, until they differ or no
/// folder is left; `write_reports` refuses whatever still clashes.
fn keep_apart(found: &mut [Found]) {
    let full: Vec<Vec<std::ffi::OsString>> = found.iter().map(|f| components(&f.path)).collect();
    let mut taken: Vec<usize> = found
        .iter()
        .zip(&full)
        .map(|(f, c)| f.relative.components().count().min(c.len()))
        .collect();
    let key = |c: &[std::ffi::OsString], n: usize| -> String {
        let tail: PathBuf = c[c.len() - n..].iter().collect();
        tail.with_extension("").to_string_lossy().to_lowercase()
    };
    // Two designs whose whole paths give one name (`x.toml` and `x.txt` side by side)
    // cannot be kept apart this way: they keep their short names.
    let whole: Vec<String> = full.iter().map(|c| key(c, c.len())).collect();
    // Each round lengthens at least one name or stops, so this ends.
    loop {
        let mut groups: HashMap<String, Vec<usize>> = HashMap::new();
        for (i, c) in full.iter().enumerate() {
            groups.entry(key(c, taken[i])).or_default().push(i);
        }
        let mut grew = false;
        for members in groups.values().filter(|m| m.len() > 1) {
            for &i in members {
                let separable = members.iter().any(|&j| whole[j] != whole[i]);
                if separable && taken[i] < full[i].len() {
                    taken[i] += 1;
                    grew = true;
                }
            }
        }
        if !grew {
            break;
        }
    }
    for (i, f) in found.iter_mut().enumerate() {
        let c = &full[i];
        if taken[i] > f.relative.components().count() {
            f.relative = c[c.len() - taken[i]..].iter().collect();
        }
    }
}

/// The path's names from the top, made absolute and with `.` and `..` worked out by
/// text (so a link keeps the name it was given), for mirroring into an output folder:
/// only plain names, nothing that could climb out of it.
fn components(path: &Path) -> Vec<std::ffi::OsString> {
    use std::path::Component;
    let absolute = if path.is_absolute() {
        path.to_path_buf()
    } else {
        std::env::current_dir()
            .map(|d| d.join(path))
            .unwrap_or_else(|_| path.to_path_buf())
    };
    let mut out: Vec<std::ffi::OsString> = Vec::new();
    for c in absolute.components() {
        match c {
            Component::Normal(n) => out.push(n.to_os_string()),
            Component::ParentDir => {
                out.pop();
            }
            Component::CurDir | Component::RootDir | Component::Prefix(_) => {}
        }
    }
    out
}

/// What became of one design.
#[derive(Debug)]
pub struct Outcome {
    pub found: Found,
    pub result: Result<(Report, String), Problems>,
}

impl Outcome {
    /// Ready for review, not ready, or unusable; see `Report::exit_status`.
    pub fn exit_status(&self) -> ExitStatus {
        self.exit_status_allowing(false)
    }

    /// As `exit_status`, with `--allow-incomplete` applied when `allow_incomplete`.
    pub fn exit_status_allowing(&self, allow_incomplete: bool) -> ExitStatus {
        match &self.result {
            Ok((report, _)) => report.exit_status(allow_incomplete),
            Err(_) => ExitStatus::Unusable,
        }
    }
}

/// Checks and renders every design on `jobs` threads. The outcomes come back in the
/// order of `designs`, whatever the number of threads.
pub fn check_many(
    designs: &[Found],
    rules: &RuleBook,
    templates: &Templates,
    format: Format,
    jobs: usize,
    progress: bool,
) -> Vec<Outcome> {
    let next = AtomicUsize::new(0);
    let done = AtomicUsize::new(0);
    let slots: Vec<Mutex<Option<Outcome>>> = designs.iter().map(|_| Mutex::new(None)).collect();
    let show_progress =
        progress && designs.len() >= PROGRESS_FROM && std::io::stderr().is_terminal();
    std::thread::scope(|scope| {
        for _ in 0..jobs.clamp(1, designs.len().max(1)) {
            scope.spawn(|| {
                loop {
                    let i = next.fetch_add(1, Ordering::Relaxed);
                    let Some(found) = designs.get(i) else { break };
                    let result = check_file(&found.path, rules).and_then(|report| {
                        // With --out-dir a Markdown report gets its EMC chart beside it
                        // (`write_reports` writes it), named after the report.
                        let chart = (format == Format::Markdown
                            && report.emc.as_ref().is_some_and(crate::emc::has_chart))
                        .then(|| chart_file_name(&found.relative));
                        crate::commands::render_with_chart(
                            &report,
                            format,
                            templates,
                            chart.as_deref(),
                        )
                        .map(|text| (report, text))
                    });
                    if let Ok(mut slot) = slots[i].lock() {
                        *slot = Some(Outcome {
                            found: found.clone(),
                            result,
                        });
                    }
                    let finished = done.fetch_add(1, Ordering::Relaxed) + 1;
                    if show_progress {
                        let mut err = std::io::stderr().lock();
                        let _ = write!(err, "\rchecked {finished}/{}", designs.len());
                        let _ = err.flush();
                    }
                }
            });
        }
    });
    if show_progress {
        eprintln!();
    }
    slots
        .into_iter()
        .zip(designs)
        .map(|(slot, found)| {
            slot.into_inner().ok().flatten().unwrap_or_else(|| Outcome {
                found: found.clone(),
                result: Err(Diagnostic::new(
                    &found.path.display().to_string(),
                    "was not checked (a worker stopped)",
                )
                .into()),
            })
        })
        .collect()
}

/// The name of a design's EMC chart file beside its Markdown report, percent-encoded for
/// the report's link.
fn chart_file_name(relative: &Path) -> String {
    crate::commands::chart_link(&relative.with_extension("emc-chart.svg"))
}

/// Runs longer than this many designs show a progress line on a terminal.
const PROGRESS_FROM: usize = 20;

/// Writes each rendered report into `out_dir`, mirroring the designs' relative paths.
pub fn write_reports(
    outcomes: &[Outcome],
    out_dir: &Path,
    format: Format,
) -> Result<Vec<PathBuf>, Problems> {
    write_reports_protecting(outcomes, out_dir, format, &[])
}

/// `write_reports`, never over a design or any of `also_protected` (the house rule and
/// template files), and never two reports to one file: designs whose reports would land
/// on the same name (letter case aside, for file systems that ignore it) are refused,
/// naming both, and neither is written.
pub fn write_reports_protecting(
    outcomes: &[Outcome],
    out_dir: &Path,
    format: Format,
    also_protected: &[PathBuf],
) -> Result<Vec<PathBuf>, Problems> {
    let (written, problems) = write_reports_noting(outcomes, out_dir, format, also_protected);
    if problems.is_empty() {
        Ok(written)
    } else {
        Err(Problems(problems))
    }
}

/// The report's file name inside the output folder (the design's relative path with the
/// format's extension).
pub fn report_name(o: &Outcome, format: Format) -> PathBuf {
    let extension = match format {
        Format::Markdown => "md",
        Format::Html => "html",
        Format::Json => "json",
    };
    o.found.relative.with_extension(extension)
}

/// `write_reports_protecting`, returning what was written and what was refused side by
/// side, so the summary can say which reports exist.
pub fn write_reports_noting(
    outcomes: &[Outcome],
    out_dir: &Path,
    format: Format,
    also_protected: &[PathBuf],
) -> (Vec<PathBuf>, Vec<Diagnostic>) {
    let inputs: Vec<&Path> = outcomes
        .iter()
        .map(|o| o.found.path.as_path())
        .chain(also_protected.iter().map(PathBuf::as_path))
        .collect();
    let target_of = |o: &Outcome| out_dir.join(report_name(o, format));
    let mut by_target: HashMap<String, Vec<&Path>> = HashMap::new();
    for o in outcomes.iter().filter(|o| o.result.is_ok()) {
        by_target
            .entry(target_of(o).to_string_lossy().to_lowercase())
            .or_default()
            .push(&o.found.path);
    }
    let mut written = Vec::new();
    let mut problems = Vec::new();
    for outcome in outcomes {
        let Ok((_, text)) = &outcome.result else {
            continue;
        };
        let target = target_of(outcome);
        if let Some(clash) = by_target.get(&target.to_string_lossy().to_lowercase())
            && clash.len() > 1
        {
            let others: Vec<String> = clash
                .iter()
                .filter(|p| **p != outcome.found.path.as_path())
                .map(|p| p.display().to_string())
                .collect();
            problems.push(Diagnostic::new(
                &outcome.found.path.display().to_string(),
                format!(
                    "its report would be {}, the same file as the report of {}; neither \
                     was written: rename one of the designs",
                    target.display(),
                    others.join(", ")
                ),
            ));
            continue;
        }
        if let Some(parent) = target.parent()
            && let Err(e) = std::fs::create_dir_all(parent)
        {
            problems.push(Diagnostic::new(
                &parent.display().to_string(),
                format!("cannot create the folder: {e}"),
            ));
            continue;
        }
        match write_atomically(&target, text, &inputs) {
            Ok(()) => {
                // The EMC chart of a Markdown report, beside it (the report links it).
                if format == Format::Markdown
                    && let Ok((report, _)) = &outcome.result
                    && let Some(svg) = report.emc.as_ref().and_then(crate::emc::chart_svg)
                    && let Err(p) =
                        write_atomically(&target.with_extension("emc-chart.svg"), &svg, &inputs)
                {
                    problems.extend(p.0);
                }
                written.push(target)
            }
            Err(p) => problems.extend(p.0),
        }
    }
    (written, problems)
}

/// The summary files written beside the reports: `gapwarden-summary.md` and
/// `gapwarden-summary.json`. The name is one no design's report is likely to take; one
/// that does is refused rather than overwritten (see `write_summary_files`).
pub const SUMMARY_STEM: &str = "gapwarden-summary";

/// The summary as JSON: one entry a design (its counts, readiness, exit status and the
/// report written for it, or null), and the run's exit status.
pub fn summary_json(
    outcomes: &[Outcome],
    allow_incomplete: bool,
    reports: &[Option<PathBuf>],
) -> String {
    let designs: Vec<serde_json::Value> = outcomes
        .iter()
        .enumerate()
        .map(|(i, o)| {
            let report = reports
                .get(i)
                .cloned()
                .flatten()
                .map(|p| serde_json::Value::String(p.display().to_string()))
                .unwrap_or(serde_json::Value::Null);
            let file = o.found.relative.display().to_string();
            let status = o.exit_status_allowing(allow_incomplete).code();
            match &o.result {
                Ok((r, _)) => serde_json::json!({
                    "file": file,
                    "design": r.design.name,
                    "revision": r.design.revision,
                    "ready": r.readiness.ready,
                    "readiness": r.readiness.state,
                    "barriers": r.summary.barriers,
                    "pass": r.summary.pass,
                    "fail": r.summary.fail,
                    "incomplete": r.summary.incomplete,
                    "check_input": r.summary.check_input,
                    "blocking": r.summary.blocking,
                    "warning": r.summary.warning,
                    "note": r.summary.note,
                    "inputs_sha256": r.inputs_sha256,
                    "exit_status": status,
                    "report": report,
                    "problems": serde_json::Value::Null,
                }),
                Err(p) => serde_json::json!({
                    "file": file,
                    "design": serde_json::Value::Null,
                    "revision": serde_json::Value::Null,
                    "ready": false,
                    "readiness": "unusable input",
                    "exit_status": status,
                    "report": serde_json::Value::Null,
                    "problems": p.0.iter().map(|d| d.to_string()).collect::<Vec<_>>(),
                }),
            }
        })
        .collect();
    let worst = outcomes
        .iter()
        .map(|o| o.exit_status_allowing(allow_incomplete))
        .max()
        .unwrap_or(ExitStatus::Ready);
    crate::report::to_json(&serde_json::json!({
        "designs_checked": outcomes.len(),
        "exit_status": worst.code(),
        "designs": designs,
    }))
}

/// Writes `gapwarden-summary.md` and `.json` into `out_dir`, by the same rules as the
/// reports (never over an input, atomically). `written` are the reports that were
/// written, so each design's entry names its report or says there is none.
pub fn write_summary_files(
    outcomes: &[Outcome],
    out_dir: &Path,
    format: Format,
    allow_incomplete: bool,
    written: &[PathBuf],
    protected: &[PathBuf],
) -> Result<Vec<PathBuf>, Problems> {
    let reports: Vec<Option<PathBuf>> = outcomes
        .iter()
        .map(|o| {
            let name = report_name(o, format);
            written.contains(&out_dir.join(&name)).then_some(name)
        })
        .collect();
    let markdown = format!(
        "# Summary of {} design{}\n\n{}",
        outcomes.len(),
        if outcomes.len() == 1 { "" } else { "s" },
        summary_with(outcomes, allow_incomplete)
    );
    let json = summary_json(outcomes, allow_incomplete, &reports);
    let mut inputs: Vec<&Path> = outcomes.iter().map(|o| o.found.path.as_path()).collect();
    inputs.extend(protected.iter().map(PathBuf::as_path));
    let mut problems = Vec::new();
    let mut done = Vec::new();
    for (extension, text) in [("md", &markdown), ("json", &json)] {
        let target = out_dir.join(format!("{SUMMARY_STEM}.{extension}"));
        if written.contains(&target) {
            problems.push(Diagnostic::new(
                &target.display().to_string(),
                "is a design's report; the summary was not written there (rename the design)",
            ));
            continue;
        }
        match write_atomically(&target, text, &inputs) {
            Ok(()) => done.push(target),
            Err(p) => problems.extend(p.0),
        }
    }
    if problems.is_empty() {
        Ok(done)
    } else {
        Err(Problems(problems))
    }
}

/// The summary table: one row a design, Markdown.
pub fn summary(outcomes: &[Outcome]) -> String {
    summary_with(outcomes, false)
}

/// The summary table, with the exit status as `--allow-incomplete` sets it. The status
/// column is the design's readiness ("ready", "not ready: blocking", ...), never "clean"
/// for a design that is not ready.
pub fn summary_with(outcomes: &[Outcome], allow_incomplete: bool) -> String {
    let mut out = String::from(
        "| design | revision | file | pass | fail | incomplete | check input | blocking findings | status |\n|---|---|---|---:|---:|---:|---:|---:|---|\n",
    );
    let cell = |s: &str| crate::report::md_escape(s);
    for o in outcomes {
        let file = cell(&o.found.relative.display().to_string());
        match &o.result {
            Ok((r, _)) => out.push_str(&format!(
                "| {} | {} | {file} | {} | {} | {} | {} | {} | {} |\n",
                cell(&r.design.name),
                cell(r.design.revision.as_deref().unwrap_or("not stated")),
                r.summary.pass,
                r.summary.fail,
                r.summary.incomplete,
                // Barriers that would pass on an implausible input: without this column
                // the counts of a design with one would not add up to its barriers.
                r.summary.check_input,
                r.summary.blocking,
                cell(&r.readiness.state)
            )),
            Err(p) => out.push_str(&format!(
                "| not read | | {file} | | | | | | unusable input ({} problem{}) |\n",
                p.0.len(),
                if p.0.len() == 1 { "" } else { "s" }
            )),
        }
    }
    let worst = outcomes
        .iter()
        .map(|o| o.exit_status_allowing(allow_incomplete))
        .max()
        .unwrap_or(ExitStatus::Ready);
    out.push_str(&format!(
        "\n{} design{} checked; exit status {worst}.\n",
        outcomes.len(),
        if outcomes.len() == 1 { "" } else { "s" }
    ));
    out
}
