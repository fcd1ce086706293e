//! Many designs at once: finding project files in folders, checking them on several
//! threads with results in a fixed order, writing one report each and a summary table.

use std::io::{IsTerminal, Write};
use std::path::{Path, PathBuf};
use std::sync::Mutex;
use std::sync::atomic::{AtomicUsize, Ordering};

use crate::commands::{Format, check_file, render, write_atomically};
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
pub fn find_projects(paths: &[PathBuf]) -> Result<Vec<Found>, Problems> {
    let mut found = Vec::new();
    let mut problems = Vec::new();
    for path in paths {
        if path.is_dir() {
            let before = found.len();
            search(path, path, &mut found, 0);
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
    if problems.is_empty() {
        Ok(found)
    } else {
        Err(Problems(problems))
    }
}

/// Folders deeper than this are not searched (a guard against link loops).
const MAX_DEPTH: usize = 32;

fn search(root: &Path, dir: &Path, found: &mut Vec<Found>, depth: usize) {
    if depth > MAX_DEPTH {
        return;
    }
    let Ok(entries) = std::fs::read_dir(dir) else {
        return;
    };
    let mut paths: Vec<PathBuf> = entries.filter_map(|e| e.ok().map(|e| e.path())).collect();
    paths.sort();
    for path in paths {
        let name = path
            .file_name()
            .map(|n| n.to_string_lossy().to_string())
            .unwrap_or_default();
        if path.is_dir() {
            if !name.starts_with('.') && !SKIPPED_FOLDERS.contains(&name.as_str()) {
                search(root, &path, found, depth + 1);
            }
        } else if name.ends_with(".toml") && !name.starts_with('.') {
            let relative = path
                .strip_prefix(root)
                .map(Path::to_path_buf)
                .unwrap_or_else(|_| PathBuf::from(&name));
            found.push(Found { path, relative });
        }
    }
}

/// What became of one design.
#[derive(Debug)]
pub struct Outcome {
    pub found: Found,
    pub result: Result<(Report, String), Problems>,
}

impl Outcome {
    /// 0 ready for review, 1 not ready, 2 unusable; see `Report::exit_code`.
    pub fn exit_code(&self) -> u8 {
        self.exit_code_allowing(false)
    }

    /// As `exit_code`, with `--allow-incomplete` applied when `allow_incomplete`.
    pub fn exit_code_allowing(&self, allow_incomplete: bool) -> u8 {
        match &self.result {
            Ok((report, _)) => report.exit_code(allow_incomplete),
            Err(_) => 2,
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
                        render(&report, format, templates).map(|text| (report, text))
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

/// Runs longer than this many designs show a progress line on a terminal.
const PROGRESS_FROM: usize = 20;

/// Writes each rendered report into `out_dir`, mirroring the designs' relative paths.
pub fn write_reports(
    outcomes: &[Outcome],
    out_dir: &Path,
    format: Format,
) -> Result<Vec<PathBuf>, Problems> {
    let extension = match format {
        Format::Markdown => "md",
        Format::Html => "html",
        Format::Json => "json",
    };
    let inputs: Vec<&Path> = outcomes.iter().map(|o| o.found.path.as_path()).collect();
    let mut written = Vec::new();
    let mut problems = Vec::new();
    for outcome in outcomes {
        let Ok((_, text)) = &outcome.result else {
            continue;
        };
        let target = out_dir.join(outcome.found.relative.with_extension(extension));
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
            Ok(()) => written.push(target),
            Err(p) => problems.extend(p.0),
        }
    }
    if problems.is_empty() {
        Ok(written)
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
        "| design | revision | file | pass | fail | incomplete | blocking findings | status |\n|---|---|---|---:|---:|---:|---:|---|\n",
    );
    let cell = |s: &str| crate::report::md_escape(s);
    for o in outcomes {
        let file = cell(&o.found.relative.display().to_string());
        match &o.result {
            Ok((r, _)) => out.push_str(&format!(
                "| {} | {} | {file} | {} | {} | {} | {} | {} |\n",
                cell(&r.design.name),
                cell(r.design.revision.as_deref().unwrap_or("not stated")),
                r.summary.pass,
                r.summary.fail,
                r.summary.incomplete,
                r.summary.blocking,
                cell(&r.readiness.state)
            )),
            Err(p) => out.push_str(&format!(
                "| not read | | {file} | | | | | unusable input ({} problem{}) |\n",
                p.0.len(),
                if p.0.len() == 1 { "" } else { "s" }
            )),
        }
    }
    let worst = outcomes
        .iter()
        .map(|o| o.exit_code_allowing(allow_incomplete))
        .max()
        .unwrap_or(0);
    out.push_str(&format!(
        "\n{} design{} checked; exit status {worst}.\n",
        outcomes.len(),
        if outcomes.len() == 1 { "" } else { "s" }
    ));
    out
}
