//! The work behind each command, as library functions that return text and an outcome;
//! `main.rs` only parses the command line and prints.

use std::fs::OpenOptions;
use std::io::Write;
use std::path::{Path, PathBuf};

use crate::ExitStatus;
use crate::checks::Severity;
use crate::diag::{Diagnostic, Problems, Source, suggest};
use crate::input_limits::NumberRule;
use crate::project::{
    Barrier, BetweenRows, BoardCoating, BoardConductor, BoardSpacing, Field, Grade, Material,
    MaterialGroup, OvervoltageCategory,
};
use crate::report::{
    MarkdownOptions, Report, Templates, check_source, render_html, render_json, render_markdown,
    render_markdown_with,
};
use crate::rules::RuleBook;
use crate::spacing::{BarrierResult, Conditions};

/// Example projects that `gapwarden new --example NAME` writes.
pub const EXAMPLES: &[(&str, &str)] = &[
    (
        "class2-adapter",
        include_str!("../examples/class2-adapter.toml"),
    ),
    (
        "class1-appliance",
        include_str!("../examples/class1-appliance.toml"),
    ),
    (
        "medical-supply",
        include_str!("../examples/medical-supply.toml"),
    ),
];

/// The report's output format; the variants' names and docs are `--format`'s words and help.
#[derive(Debug, Clone, Copy, PartialEq, Eq, clap::ValueEnum)]
pub enum Format {
    /// Markdown checklist
    #[value(name = "md")]
    Markdown,
    /// Self-contained HTML page
    Html,
    /// The report model as JSON
    Json,
}

/// The templates a report in `format` needs: for Markdown and HTML the shipped ones (with
/// any house copies from `dir`) parsed now; for JSON none are parsed, and house copies are
/// only read and hashed, because the JSON names them in its `house` section.
pub fn templates_for(format: Format, dir: Option<&Path>) -> Result<Templates, Problems> {
    match format {
        Format::Markdown | Format::Html => Templates::load(dir),
        Format::Json => Templates::read(dir),
    }
}

/// What `gapwarden check` was asked to do (its command-line options).
#[derive(Debug, Clone, Copy)]
pub struct CheckRequest<'a> {
    /// Project files or folders of them.
    pub projects: &'a [PathBuf],
    pub format: Format,
    /// `-o`: the one design's report goes here instead of standard output.
    pub output: Option<&'a Path>,
    /// `--rules`: house rule tables.
    pub rules_dir: Option<&'a Path>,
    /// `--templates`: house templates.
    pub templates_dir: Option<&'a Path>,
    /// `--out-dir`: one report a design.
    pub out_dir: Option<&'a Path>,
    /// `--jobs`: designs checked at once; `None` for the number of cores.
    pub jobs: Option<usize>,
    /// `--allow-incomplete`: incomplete barriers do not make the run not ready.
    pub allow_incomplete: bool,
    /// One design on a terminal without `--format`: print the short summary instead of
    /// the report (`Some(colour)`); the report still goes to `-o` when given.
    pub terminal_summary: Option<bool>,
}

/// Runs `check`. One file: its report goes to `print` (or to `-o`). Several files or a
/// folder: one report each into `--out-dir`, the summary table to `print`, and each
/// design's problems to standard error as they come. The status is the worst over all
/// designs; problems that stop the whole run (rules, templates, `-o` with several
/// designs) are the `Err`. `print_styled` prints the terminal summary, which is already
/// safe for a terminal and may carry colour codes that `print` would show as text.
pub fn check(
    req: &CheckRequest,
    print: &mut dyn FnMut(&str),
    print_styled: &mut dyn FnMut(&str),
) -> Result<ExitStatus, Problems> {
    // Every file the run reads besides the designs: no report may replace one.
    let mut house_inputs: Vec<PathBuf> = Vec::new();
    if let Some(dir) = req.rules_dir {
        house_inputs.extend(crate::rules::house_rule_files(dir));
    }
    if let Some(dir) = req.templates_dir {
        house_inputs.extend(crate::report::house_template_files(dir));
    }
    // Not freed: the process ends after the command, and freeing the rule book's thousands
    // of small allocations one by one cost more than 0.7 million instructions a run.
    let rules = std::mem::ManuallyDrop::new(RuleBook::load(req.rules_dir)?);
    let templates = templates_for(req.format, req.templates_dir)?;
    let projects = req.projects;
    let single = projects.len() == 1 && !projects[0].is_dir() && req.out_dir.is_none();
    if single {
        let project = &projects[0];
        // Not freed either, as the rule book above.
        let report = std::mem::ManuallyDrop::new(check_file(project, &rules)?);
        // A Markdown report written to a file gets the EMC chart as an SVG file beside it.
        let chart = match (req.format, req.output) {
            (Format::Markdown, Some(out)) => chart_beside(out, &report),
            _ => None,
        };
        let chart_name = chart.as_ref().map(|(path, _)| chart_link(path));
        let text = render_with_chart(&report, req.format, &templates, chart_name.as_deref())?;
        use crate::terminal::{ReportPlace, terminal_summary};
        let shown_project = project.display().to_string();
        match req.output {
            Some(out) => {
                let protected: Vec<&Path> = std::iter::once(project.as_path())
                    .chain(house_inputs.iter().map(PathBuf::as_path))
                    .collect();
                // The report first: where it cannot be written, no chart is left behind.
                write_atomically(out, &text, &protected)?;
                if let Some((path, svg)) = &chart {
                    write_atomically(path, svg, &protected)?;
                }
                if let Some(colour) = req.terminal_summary {
                    let shown = out.display().to_string();
                    print_styled(&terminal_summary(
                        &report,
                        ReportPlace::Written(&shown),
                        colour,
                    ));
                }
            }
            None => match req.terminal_summary {
                Some(colour) => print_styled(&terminal_summary(
                    &report,
                    ReportPlace::NotWritten {
                        project: &shown_project,
                    },
                    colour,
                )),
                None => print(&text),
            },
        }
        return Ok(report.exit_status(req.allow_incomplete));
    }
    if req.output.is_some() {
        let why = if req.out_dir.is_some() {
            "give -o FILE (one design) or --out-dir DIR (one report each), not both; nothing was written"
        } else {
            "with several designs, give --out-dir DIR for one report each"
        };
        return Err(Diagnostic::new("-o", why).into());
    }
    let (designs, notes) = crate::batch::find_projects_noting(projects)?;
    for note in &notes {
        eprintln!("{note}");
    }
    let jobs = req
        .jobs
        .unwrap_or_else(|| std::thread::available_parallelism().map_or(1, |n| n.get()));
    let outcomes = crate::batch::check_many(&designs, &rules, &templates, req.format, jobs, true);
    for o in &outcomes {
        if let Err(problems) = &o.result {
            eprintln!("{problems}");
        }
    }
    let mut worst = outcomes
        .iter()
        .map(|o| o.exit_status_allowing(req.allow_incomplete))
        .max()
        .unwrap_or(ExitStatus::Ready);
    let mut closing = String::new();
    if let Some(dir) = req.out_dir {
        let (written, problems) =
            crate::batch::write_reports_noting(&outcomes, dir, req.format, &house_inputs);
        if !problems.is_empty() {
            eprintln!("{}", Problems(problems));
            worst = ExitStatus::Unusable;
        }
        match crate::batch::write_summary_files(
            &outcomes,
            dir,
            req.format,
            req.allow_incomplete,
            &written,
            &house_inputs,
        ) {
            Ok(files) => {
                // File names only: the same designs give the same output whatever the
                // folder (as the reports themselves carry no machine paths).
                let names: Vec<String> = files
                    .iter()
                    .filter_map(|f| f.file_name())
                    .map(|n| n.to_string_lossy().to_string())
                    .collect();
                closing = format!(
                    "{} report{} written into the output folder, with the summary beside them: {}.\n",
                    written.len(),
                    if written.len() == 1 { "" } else { "s" },
                    names.join(" and ")
                );
            }
            Err(problems) => {
                eprintln!("{problems}");
                worst = ExitStatus::Unusable;
            }
        }
    } else {
        closing = "No reports were written: give --out-dir DIR for one report each and a \
                   summary file.\n"
            .to_string();
    }
    print(&crate::batch::summary_with(&outcomes, req.allow_incomplete));
    print(&closing);
    Ok(worst)
}

/// Reads a project file and evaluates it.
pub fn check_file(path: &Path, rules: &RuleBook) -> Result<Report, Problems> {
    let name = path.display().to_string();
    let text = crate::read_text(path, &name)?;
    check_source(&Source::new(name, text), rules)
}

pub fn render(report: &Report, format: Format, templates: &Templates) -> Result<String, Problems> {
    render_with_chart(report, format, templates, None)
}

/// The file an EMC chart goes to beside a Markdown report written to `out` (named after
/// it: `report.md` -> `report.emc-chart.svg`), with the SVG; `None` when the report has no
/// chart or `out` is not an ordinary file path (a device, a pipe, standard output).
pub fn chart_beside(out: &Path, report: &Report) -> Option<(PathBuf, String)> {
    if out.starts_with("/dev") || out.starts_with("/proc") {
        return None;
    }
    if let Ok(meta) = std::fs::metadata(out)
        && !meta.is_file()
    {
        return None;
    }
    let svg = report.emc.as_ref().and_then(crate::emc::chart_svg)?;
    let stem = out.file_stem()?.to_str()?;
    Some((out.with_file_name(format!("{stem}.emc-chart.svg")), svg))
}

/// The link to a chart file from the report beside it: its name, percent-encoded where a
/// Markdown link destination would not take a character as it is.
pub fn chart_link(path: &Path) -> String {
    let name = path
        .file_name()
        .map(|n| n.to_string_lossy().into_owned())
        .unwrap_or_default();
    let mut out = String::new();
    for b in name.bytes() {
        if b.is_ascii_alphanumeric() || matches!(b, b'.' | b'-' | b'_') {
            out.push(b as char);
        } else {
            out.push_str(&format!("%{b:02X}"));
        }
    }
    out
}

/// As `render`, with a Markdown report linking the EMC chart's SVG file where one is
/// written beside it (`chart_file`, relative to the report).
pub fn render_with_chart(
    report: &Report,
    format: Format,
    templates: &Templates,
    chart_file: Option<&str>,
) -> Result<String, Problems> {
    match format {
        Format::Markdown if chart_file.is_some() => render_markdown_with(
            report,
            templates,
            &MarkdownOptions {
                chart_file: chart_file.map(str::to_string),
            },
        ),
        Format::Markdown => render_markdown(report, templates),
        Format::Html => render_html(report, templates),
        Format::Json => Ok(render_json(&crate::report::with_templates(
            report, templates,
        ))),
    }
}

/// Writes a report to `out` without ever replacing what the path names by something else:
///
/// - a new path, or a regular file: written atomically, through a temporary file in the
///   same folder and a rename (a reader never sees half a report); a new path is linked
///   into place, so a file that appears there meanwhile is not replaced either;
/// - a symbolic link: followed, and its target written by these same rules; the link
///   stays (a link to nothing is refused);
/// - a character device (`/dev/null`, a terminal) or a named pipe (FIFO): written through,
///   as a shell redirection would (a pipe waits for its reader);
/// - a read-only file (its owner's write permission bit is clear: the bits, not the
///   process's access, since root may write anything), a folder, a block device or a
///   socket: refused, and nothing is written;
/// - any of `protected` (the run's inputs), named by another path, through `..`, a
///   symbolic link or a hard link: refused (compared by canonical path and by device and
///   inode).
pub fn write_atomically(out: &Path, text: &str, protected: &[&Path]) -> Result<(), Problems> {
    let shown = out.display().to_string();
    let fail = |m: String| Problems(vec![Diagnostic::new(&shown, m)]);
    let refuse_input = || {
        fail(
            "is an input of this run; the report would overwrite it, so nothing was written"
                .to_string(),
        )
    };
    // Identity first: a path naming an input in any way is refused whatever else it is.
    let target = resolved(out);
    let target_id = file_id(out);
    for p in protected {
        if resolved(p) == target || (target_id.is_some() && file_id(p) == target_id) {
            return Err(refuse_input());
        }
    }
    // /dev/stdout, /dev/stderr, /dev/fd/N: a descriptor this process already holds, which
    // the shell may have opened for appending or as a pipe. Followed as a link, it would
    // name the file behind it (replaced by a rename: `-o /dev/stdout >> log.md` lost the
    // log) or nothing at all (a pipe), so it is written through the descriptor itself.
    if let Some(fd) = descriptor_named(out) {
        let written = match fd {
            1 => {
                let mut o = std::io::stdout().lock();
                o.write_all(text.as_bytes()).and_then(|()| o.flush())
            }
            2 => {
                let mut e = std::io::stderr().lock();
                e.write_all(text.as_bytes()).and_then(|()| e.flush())
            }
            n => {
                return Err(fail(format!(
                    "names the file descriptor {n}; only standard output (1) and standard \
                     error (2) are written through; nothing was written"
                )));
            }
        };
        return written.map_err(|e| fail(format!("cannot be written: {e}")));
    }
    let link = std::fs::symlink_metadata(out);
    let (path, meta) = match link {
        Err(e) if e.kind() == std::io::ErrorKind::NotFound => {
            return write_new(out, text).map_err(&fail);
        }
        Err(e) => {
            return Err(fail(format!(
                "cannot be looked at: {e}; nothing was written"
            )));
        }
        Ok(m) if m.file_type().is_symlink() => {
            // The link's final target, written in its place; the link itself stays.
            let Ok(real) = out.canonicalize() else {
                return Err(fail(
                    "is a symbolic link to nothing (its target does not exist); give the \
                     target's path instead; nothing was written"
                        .to_string(),
                ));
            };
            let meta = std::fs::metadata(&real).map_err(|e| {
                fail(format!(
                    "is a link to {} which cannot be looked at: {e}; nothing was written",
                    real.display()
                ))
            })?;
            (real, meta)
        }
        Ok(m) => (out.to_path_buf(), m),
    };
    write_existing(&path, &meta, text).map_err(fail)
}

/// The descriptor a path names through the kernel's descriptor links, followed one link
/// at a time: `/dev/stdout` (a link to `/proc/self/fd/1`), `/dev/fd/2`,
/// `/proc/self/fd/1`, `/proc/PID/fd/N` for this process. None for any other path.
fn descriptor_named(out: &Path) -> Option<u32> {
    let own = format!("/proc/{}/fd/", std::process::id());
    let prefixes = [
        "/dev/fd/",
        "/proc/self/fd/",
        "/proc/thread-self/fd/",
        own.as_str(),
    ];
    let mut path = out.to_path_buf();
    // As many hops as the kernel follows before it gives up on a chain of links.
    for _ in 0..40 {
        if let Some(text) = path.to_str()
            && let Some(n) = prefixes
                .iter()
                .find_map(|p| text.strip_prefix(p))
                .and_then(|rest| rest.parse::<u32>().ok())
        {
            return Some(n);
        }
        let target = std::fs::read_link(&path).ok()?;
        path = if target.is_absolute() {
            target
        } else {
            path.parent().unwrap_or(Path::new("/")).join(target)
        };
    }
    None
}

/// Writes onto something that exists, by what it is (see `write_atomically`).
fn write_existing(path: &Path, meta: &std::fs::Metadata, text: &str) -> Result<(), String> {
    use std::os::unix::fs::{FileTypeExt, PermissionsExt};
    let file_type = meta.file_type();
    if file_type.is_dir() {
        return Err("is a folder; give a file name for the report".to_string());
    }
    if file_type.is_char_device() || file_type.is_fifo() {
        // Written through: replacing /dev/null or a pipe by a file is never what was meant.
        let mut f = OpenOptions::new()
            .write(true)
            .open(path)
            .map_err(|e| format!("cannot be opened for writing: {e}"))?;
        return f
            .write_all(text.as_bytes())
            .and_then(|()| f.flush())
            .map_err(|e| format!("cannot be written: {e}"));
    }
    if !file_type.is_file() {
        return Err(format!(
            "is {}; a report is written only to a regular file, a new path, a character \
             device or a named pipe; nothing was written",
            crate::kind_of_special(&file_type)
        ));
    }
    if meta.permissions().mode() & 0o200 == 0 {
        return Err(format!(
            "is read-only (mode {:o}); make it writable or choose another name; nothing was \
             written",
            meta.permissions().mode() & 0o7777
        ));
    }
    // For a user other than root, whether the file may be written at all (ownership,
    // group, access lists): a rename alone would replace a file the user may not write.
    OpenOptions::new()
        .write(true)
        .open(path)
        .map_err(|e| format!("cannot be written: {e}; nothing was written"))?;
    let temp = TempFile::create(path).map_err(|e| format!("{e}; nothing was written"))?;
    // The new report keeps the permissions of the one it replaces.
    let _ = temp.file.set_permissions(std::fs::Permissions::from_mode(
        meta.permissions().mode() & 0o777,
    ));
    temp.fill(text)
        .and_then(|temp| temp.rename_onto(path))
        .map_err(|e| format!("cannot write the report: {e}; nothing was written"))
}

/// Writes a report to a path where nothing is yet: complete in a temporary file, then
/// linked into place (which fails, instead of replacing, if something appeared there).
fn write_new(path: &Path, text: &str) -> Result<(), String> {
    let temp = TempFile::create(path).map_err(|e| format!("{e}; nothing was written"))?;
    let temp = temp
        .fill(text)
        .map_err(|e| format!("cannot write the report: {e}; nothing was written"))?;
    match std::fs::hard_link(&temp.path, path) {
        Ok(()) => {
            drop(temp);
            Ok(())
        }
        Err(e) if e.kind() == std::io::ErrorKind::AlreadyExists => Err(
            "appeared while the report was being written; it was left alone and \
                 nothing was written"
                .to_string(),
        ),
        // A file system without hard links: a rename (which could replace a file that
        // appeared in the last instant, the best it offers).
        Err(_) => temp
            .rename_onto(path)
            .map_err(|e| format!("cannot write the report: {e}; nothing was written")),
    }
}

/// A temporary file this run created, removed when dropped unless renamed into place.
/// Only a file this run created is ever removed.
struct TempFile {
    path: PathBuf,
    file: std::fs::File,
    keep: bool,
}

impl TempFile {
    /// Creates `.NAME.RANDOM.tmp` beside `target`, with a fresh random part on each try, so
    /// a stale file left by a killed run (with the same process id) is never in the way.
    fn create(target: &Path) -> Result<TempFile, String> {
        let folder = match target.parent() {
            Some(p) if !p.as_os_str().is_empty() => p.to_path_buf(),
            _ => PathBuf::from("."),
        };
        let file_name = target
            .file_name()
            .map(|n| n.to_string_lossy().to_string())
            .unwrap_or_else(|| "report".to_string());
        let mut last = None;
        for _ in 0..TEMP_TRIES {
            let path = folder.join(format!(".{file_name}.{}.tmp", random_suffix()));
            match OpenOptions::new().write(true).create_new(true).open(&path) {
                Ok(file) => {
                    return Ok(TempFile {
                        path,
                        file,
                        keep: false,
                    });
                }
                Err(e) if e.kind() == std::io::ErrorKind::AlreadyExists => last = Some(e),
                Err(e) => {
                    return Err(format!(
                        "cannot create a temporary file in {}: {e}",
                        folder.display()
                    ));
                }
            }
        }
        Err(format!(
            "cannot create a temporary file in {} ({TEMP_TRIES} names taken: {})",
            folder.display(),
            last.map(|e| e.to_string()).unwrap_or_default()
        ))
    }

    fn fill(mut self, text: &str) -> std::io::Result<TempFile> {
        self.file.write_all(text.as_bytes())?;
        self.file.sync_all()?;
        Ok(self)
    }

    fn rename_onto(mut self, target: &Path) -> std::io::Result<()> {
        std::fs::rename(&self.path, target)?;
        self.keep = true;
        Ok(())
    }
}

impl Drop for TempFile {
    fn drop(&mut self) {
        if !self.keep {
            let _ = std::fs::remove_file(&self.path);
        }
    }
}

/// Names tried for a temporary file before giving up.
const TEMP_TRIES: usize = 16;

/// 16 hex digits that differ between runs and calls: the process id, the time and a
/// counter, hashed with the standard library's randomly keyed hasher.
fn random_suffix() -> String {
    use std::hash::{BuildHasher, Hasher};
    use std::sync::atomic::{AtomicU64, Ordering};
    static COUNTER: AtomicU64 = AtomicU64::new(0);
    let mut h = std::collections::hash_map::RandomState::new().build_hasher();
    h.write_u32(std::process::id());
    h.write_u64(COUNTER.fetch_add(1, Ordering::Relaxed));
    if let Ok(t) = std::time::SystemTime::now().duration_since(std::time::UNIX_EPOCH) {
        h.write_u128(t.as_nanos());
    }
    format!("{:016x}", h.finish())
}

/// The device and inode of the file a path names (links followed), if it exists.
fn file_id(path: &Path) -> Option<(u64, u64)> {
    use std::os::unix::fs::MetadataExt;
    std::fs::metadata(path).ok().map(|m| (m.dev(), m.ino()))
}

/// A path with its folder made canonical, for comparing two paths to the same file.
fn resolved(path: &Path) -> PathBuf {
    if let Ok(p) = path.canonicalize() {
        return p;
    }
    let parent = match path.parent() {
        Some(p) if !p.as_os_str().is_empty() => p,
        _ => Path::new("."),
    };
    match (parent.canonicalize(), path.file_name()) {
        (Ok(dir), Some(name)) => dir.join(name),
        _ => path.to_path_buf(),
    }
}

/// The blank template `gapwarden new` writes without `--example`; `{file}` stands for the
/// path written.
pub const BLANK_TEMPLATE: &str = include_str!("../templates/new-project.toml");

/// The text `gapwarden new` writes to `path`: the blank template, or the example named.
/// Either way the header comment names the file written (never the example's own path),
/// on one line whatever characters the path holds.
pub fn new_project_text(path: &Path, example: Option<&str>) -> Result<String, Problems> {
    let shown = path.display().to_string();
    let file = crate::text::visible_line(&shown);
    let Some(example) = example else {
        return Ok(BLANK_TEMPLATE.replace("{file}", &file));
    };
    let Some((name, text)) = EXAMPLES.iter().find(|(name, _)| *name == example) else {
        let names: Vec<&str> = EXAMPLES.iter().map(|(n, _)| *n).collect();
        let mut d = Diagnostic::new(
            "--example",
            format!(
                "no example called \"{example}\"; examples: {}",
                names.join(", ")
            ),
        );
        if let Some(best) = suggest(example, &names) {
            d = d.with_help(format!("did you mean \"{best}\"?"));
        }
        return Err(d.into());
    };
    Ok(format!(
        "# {file}: written by `gapwarden new --example {name}`. Check it with:  gapwarden check {file}\n{}",
        text.replace(&format!("examples/{name}.toml"), &file)
    ))
}

/// Writes a blank template, or the example named, to `path`; never overwrites anything.
pub fn new_project(path: &Path, example: Option<&str>) -> Result<(), Problems> {
    let shown = path.display().to_string();
    let text = new_project_text(path, example)?;
    let mut file = OpenOptions::new()
        .write(true)
        .create_new(true)
        .open(path)
        .map_err(|e| {
            let m = if e.kind() == std::io::ErrorKind::AlreadyExists {
                "already exists; gapwarden new never overwrites a file: choose another name"
                    .to_string()
            } else {
                format!("cannot be created: {e}")
            };
            Problems(vec![Diagnostic::new(&shown, m)])
        })?;
    file.write_all(text.as_bytes()).map_err(|e| {
        Problems(vec![Diagnostic::new(
            &shown,
            format!("cannot be written: {e}"),
        )])
    })
}

/// The derivation of one figure or finding, as plain text. Every area answers for its own
/// items (`Area::explain`); a finding is found by its id; `readiness` and `assumptions`
/// are the report's own.
pub fn explain(report: &Report, item: &str) -> Result<String, Problems> {
    explain_with_rules(report, None, item)
}

/// As [`explain`]; with `rules`, a finding also shows its check's rationale and source.
pub fn explain_with_rules(
    report: &Report,
    rules: Option<&RuleBook>,
    item: &str,
) -> Result<String, Problems> {
    let mut out = String::new();
    if report.bridges.iter().any(|b| b.part == item) {
        explain_part(&mut out, report, item);
        return Ok(out);
    }
    let matching: Vec<_> = report.findings.iter().filter(|f| f.id == item).collect();
    if !matching.is_empty() {
        explain_check(&mut out, report, rules, item);
        for f in matching {
            let subject = f
                .subject
                .as_deref()
                .map(|s| format!(" ({s})"))
                .unwrap_or_default();
            out.push_str(&format!(
                "{} [{}]{subject}: {}\n",
                f.id,
                severity_word(f.severity),
                f.message
            ));
            if let Some(b) = f
                .subject
                .as_deref()
                .and_then(|s| report.barriers.iter().find(|b| b.id == s))
            {
                let figure = if f.id.contains("clearance") && !f.id.contains("creepage") {
                    Some("clearance")
                } else if f.id.contains("creepage") {
                    Some("creepage")
                } else {
                    None
                };
                crate::insulation::explain_barrier(&mut out, b, figure);
            }
        }
        return Ok(out);
    }
    if item == "readiness" {
        let r = &report.readiness;
        out.push_str(&format!("readiness: {}\n", r.state));
        for c in &r.conditions {
            out.push_str(&format!(
                "  {}: {} ({})\n",
                c.condition,
                if c.holds { "holds" } else { "fails" },
                c.detail
            ));
        }
        return Ok(out);
    }
    if item == "isolation"
        && let Some(iso) = &report.isolation
    {
        out.push_str(&format!(
            "isolation: protection class {}, {} hazardous and {} accessible circuit(s)\n",
            format!("{:?}", iso.protection_class),
            iso.hazardous_count,
            iso.accessible_count
        ));
        for p in &iso.pairs {
            out.push_str(&format!(
                "  {} -> {}: provides {} (level {}), needs {} (level {}){}\n",
                p.hazardous,
                p.accessible,
                p.provides,
                p.provides_level,
                p.needs,
                p.needs_level,
                p.earth
                    .as_deref()
                    .map(|e| format!("; earth relied on: {e}"))
                    .unwrap_or_default()
            ));
        }
        crate::insulation::explain_means(&mut out, iso);
        out.push_str(&iso.diagram);
        if !iso.diagram.ends_with('\n') {
            out.push('\n');
        }
        return Ok(out);
    }
    if item == "assumptions" {
        let groups = all_assumptions(report);
        for (area, list) in &groups {
            out.push_str(&format!("{area}:\n"));
            for a in list {
                out.push_str(&format!("- {a}\n"));
            }
        }
        if groups.is_empty() {
            out.push_str("No defaults were applied.\n");
        }
        return Ok(out);
    }
    // The areas explain their own figures and sections; the items above (parts with their
    // ratings, findings with their checks, readiness, assumptions) are the commands' own.
    if let Some(text) = crate::area::AREAS
        .iter()
        .find_map(|area| area.explain(report, item))
    {
        return Ok(text);
    }
    let known = explain_items(report);
    let refs: Vec<&str> = known.iter().map(String::as_str).collect();
    let mut d = Diagnostic::new(
        "explain",
        format!("nothing called \"{item}\" in this report"),
    )
    .with_help(format!("items: {}", refs.join(", ")));
    if let Some(best) = suggest(item, &refs) {
        d = d.with_help(format!("did you mean \"{best}\"?"));
    }
    Err(d.into())
}

/// Every assumption the report shows, by where it shows it: the project's defaults, the
/// power entry's and the EMC evaluation's. Empty groups are left out.
pub fn all_assumptions(report: &Report) -> Vec<(&'static str, Vec<String>)> {
    let mut groups = vec![("project", report.assumptions.clone())];
    if let Some(p) = &report.power_entry {
        groups.push(("power entry", p.assumptions.clone()));
    }
    if let Some(e) = &report.emc {
        groups.push(("EMC", e.assumptions.clone()));
    }
    groups.retain(|(_, list)| !list.is_empty());
    groups
}

/// The check behind a finding id: its title, rationale and source (from the rule book
/// when given, else the title and source the report lists for it).
fn explain_check(out: &mut String, report: &Report, rules: Option<&RuleBook>, id: &str) {
    if let Some(c) = rules.and_then(|r| r.checks.iter().find(|c| c.id == id)) {
        out.push_str(&format!(
            "check {}: {}\n  rationale: {}\n  source: {}\n  defined in {} ({}:{})\n",
            c.id, c.title, c.rationale, c.source, c.origin, c.file, c.line
        ));
    } else if let Some(c) = report.checks.iter().find(|c| c.id == id) {
        out.push_str(&format!(
            "check {}: {}\n  source: {}\n",
            c.id, c.title, c.source
        ));
    }
}

/// A part that bridges barriers: its ratings against each barrier it bridges, the steps
/// that judged them, and the findings about it.
fn explain_part(out: &mut String, report: &Report, part: &str) {
    for b in report.bridges.iter().filter(|b| b.part == part) {
        out.push_str(&format!(
            "{} ({}) across {} ({} insulation, {} V rms, {} V peak{})\n",
            b.part,
            serde_json::to_value(b.kind)
                .ok()
                .and_then(|v| v.as_str().map(str::to_string))
                .unwrap_or_default(),
            b.barrier,
            b.grade.as_str(),
            crate::spacing::show(b.working_rms_v),
            crate::spacing::show(b.working_peak_v),
            if b.to_accessible {
                ", to an accessible circuit"
            } else {
                ""
            }
        ));
        // Every rating and requirement the report holds for the part, by its JSON name, so
        // a field added to the report is explained without code here.
        if let Ok(serde_json::Value::Object(fields)) = serde_json::to_value(b) {
            for (name, value) in &fields {
                // A minimum is shown beside the rating it is held against, where the part
                // declares one (a capacitor has no tape layers to count).
                let absent = |rating: &str| fields.get(rating).is_none_or(|v| v.is_null());
                let rating_absent = name.strip_prefix("min_").is_some_and(absent)
                    || (name.starts_with("subclass_") && absent("subclass"));
                if matches!(
                    name.as_str(),
                    "barrier" | "part" | "kind" | "grade" | "derivation"
                ) || value.is_null()
                    || rating_absent
                {
                    continue;
                }
                let shown = match value {
                    serde_json::Value::Number(n) => n
                        .as_f64()
                        .map(crate::spacing::show)
                        .unwrap_or_else(|| n.to_string()),
                    serde_json::Value::String(s) => s.clone(),
                    other => other.to_string(),
                };
                out.push_str(&format!("  {name} = {shown}\n"));
            }
        }
        crate::insulation::numbered_steps(out, &b.derivation.steps);
    }
    for f in report
        .findings
        .iter()
        .filter(|f| f.subject.as_deref() == Some(part))
    {
        out.push_str(&format!(
            "finding {} ({}): {}\n",
            f.id,
            severity_word(f.severity),
            f.message
        ));
    }
}

/// Every item `explain` takes for this report, sorted: the report's own (`assumptions`,
/// `readiness`), every area's, and every finding id.
pub fn explain_items(report: &Report) -> Vec<String> {
    let mut known: Vec<String> = vec!["assumptions".to_string(), "readiness".to_string()];
    known.extend(crate::area::explain_items(report).into_iter().map(|i| i.id));
    // Items the commands explain themselves: each bridging part by its reference, every
    // power-entry figure and every EMC figure by its JSON name.
    known.extend(report.bridges.iter().map(|b| b.part.clone()));
    if let Some(p) = &report.power_entry {
        known.extend(crate::power_entry::explain_items(p));
    }
    if report.emc.is_some() {
        use crate::emc::explain::{FIGURES, ITEMS};
        known.extend(ITEMS.iter().map(|(name, _)| name.to_string()));
        known.extend(FIGURES.iter().map(|(field, _)| format!("emc.{field}")));
    }
    known.extend(report.findings.iter().map(|f| f.id.clone()));
    known.sort();
    known.dedup();
    known
}

fn severity_word(s: Severity) -> &'static str {
    s.as_str()
}

/// A list of the loaded tables, or the full text of one.
pub fn describe_rules(rules: &RuleBook, id: Option<&str>) -> Result<String, Problems> {
    let mut out = String::new();
    let Some(id) = id else {
        out.push_str("Rule files, by standard\n");
        // The standards' own folders first, then the basics and what every standard shares
        // (a house file sits with the shared ones unless it is in a standard's folder).
        let groups = crate::standards::Standard::WORDS
            .iter()
            .filter(|w| **w != "iec60664-1")
            .map(|w| {
                let title = crate::standards::Standard::from_word(w)
                    .map(crate::standards::Standard::title)
                    .unwrap_or("");
                (*w, format!("{title} [{w}]"))
            })
            .chain(std::iter::once((
                "shared",
                "IEC 60664-1 basics and the tables every standard shares (parts, power entry, EMC)"
                    .to_string(),
            )));
        for (word, heading) in groups {
            out.push_str(&format!("\n{heading}\n\n"));
            for r in rules
                .info
                .iter()
                .filter(|r| crate::standards::StandardRules::standard_of(&r.file) == word)
            {
                out.push_str(&format!(
                    "{}\n  {}\n  source: {}\n  provenance: {}\n  {} ({}), sha256 {}\n",
                    r.id, r.title, r.source, r.provenance, r.origin, r.file, r.sha256
                ));
            }
        }
        out.push_str("\nChecks (id, severity, origin, defined at)\n\n");
        for c in &rules.checks {
            out.push_str(&format!(
                "{}  [{}]  {}  {}:{}\n  {}\n  source: {}\n",
                c.id,
                severity_word(c.severity),
                c.origin,
                c.file,
                c.line,
                c.title,
                c.source
            ));
        }
        return Ok(out);
    };
    if let Some(r) = rules.info(id) {
        out.push_str(&format!(
            "# {} ({} {}, sha256 {})\n",
            r.id, r.origin, r.file, r.sha256
        ));
        out.push_str(&r.text);
        return Ok(out);
    }
    if let Some(c) = rules.checks.iter().find(|c| c.id == id) {
        out.push_str(&format!(
            "{} [{}], {} ({}:{})\n{}\nover: {}\n",
            c.id,
            severity_word(c.severity),
            c.origin,
            c.file,
            c.line,
            c.title,
            c.over.path()
        ));
        if let Some(applies) = &c.applies {
            out.push_str(&format!("applies: {applies}\n"));
        }
        out.push_str(&format!(
            "condition: {}\nmessage: {}\nrationale: {}\nsource: {}\n",
            c.condition, c.message, c.rationale, c.source
        ));
        return Ok(out);
    }
    let ids: Vec<&str> = rules
        .info
        .iter()
        .map(|r| &*r.id)
        .chain(rules.checks.iter().map(|c| &*c.id))
        .collect();
    let mut d = Diagnostic::new("rules", format!("no rule table or check \"{id}\""))
        .with_help("`gapwarden rules` lists them all");
    if let Some(best) = suggest(id, &ids) {
        d = d.with_help(format!("did you mean \"{best}\"?"));
    }
    Err(d.into())
}

/// One barrier described by command-line flags, for `gapwarden spacing`.
#[derive(Debug, Clone)]
pub struct SpacingQuery {
    pub working_rms_v: f64,
    pub working_peak_v: Option<f64>,
    pub grade: Grade,
    pub pollution_degree: u8,
    pub overvoltage_category: OvervoltageCategory,
    pub nominal_v: f64,
    pub transient_v: Option<f64>,
    pub altitude_m: f64,
    pub material_group: Option<MaterialGroup>,
    pub cti: Option<f64>,
    pub printed_board: bool,
    pub field: Field,
    pub board_conductor: BoardConductor,
    pub board_coating: BoardCoating,
    pub creepage_between_rows: BetweenRows,
    pub altitude_between_rows: BetweenRows,
    pub clearance_mm: Option<f64>,
    pub creepage_mm: Option<f64>,
}

/// The flags of `gapwarden spacing` that describe the barrier (`--rules` is the command
/// line's own); `query` turns them into a `SpacingQuery`.
#[derive(Debug, Clone, clap::Args)]
pub struct SpacingFlags {
    /// Working voltage across the barrier, V rms.
    #[arg(long, value_name = "V")]
    pub working_rms_v: f64,
    /// Steady-state or recurring peak working voltage, V.
    #[arg(long, value_name = "V")]
    pub working_peak_v: Option<f64>,
    /// Insulation grade.
    #[arg(long, value_enum, default_value_t = Grade::Basic)]
    pub grade: Grade,
    /// Pollution degree (1, 2 or 3).
    #[arg(long, default_value_t = 2, value_parser = clap::value_parser!(u8).range(1..=3))]
    pub pollution_degree: u8,
    /// Overvoltage category (I, II, III or IV).
    #[arg(long, value_enum, default_value = "II")]
    pub overvoltage_category: OvervoltageCategory,
    /// Nominal line-to-neutral voltage of the supply system, V.
    #[arg(long, default_value_t = 230.0, value_name = "V")]
    pub nominal_v: f64,
    /// Transient overvoltage that replaces the rated impulse voltage from the mains, V.
    #[arg(long, value_name = "V")]
    pub transient_v: Option<f64>,
    /// Altitude above sea level, m.
    #[arg(long, default_value_t = 2000.0, value_name = "M")]
    pub altitude_m: f64,
    /// Material group (I, II, IIIa, IIIb); IIIb is assumed when neither this nor --cti is given.
    #[arg(long, value_enum)]
    pub material_group: Option<MaterialGroup>,
    /// Comparative tracking index of the insulating material.
    #[arg(long)]
    pub cti: Option<f64>,
    /// The barrier is on a printed board (printed-wiring creepage columns where allowed).
    #[arg(long)]
    pub printed_board: bool,
    /// The field is homogeneous (Case B); inhomogeneous (Case A) otherwise.
    #[arg(long)]
    pub homogeneous: bool,
    /// For functional spacing on a board: where the conductors are.
    #[arg(long, value_enum, default_value_t = BoardConductor::OuterLayer)]
    pub board_conductor: BoardConductor,
    /// For functional spacing on a board: the coating.
    #[arg(long, value_enum, default_value_t = BoardCoating::None)]
    pub board_coating: BoardCoating,
    /// Interpolate creepage between table rows (rounded up to 0.1 mm) instead of taking the next row.
    #[arg(long)]
    pub interpolate: bool,
    /// Interpolate the altitude correction factor between table rows instead of taking the next row.
    #[arg(long)]
    pub interpolate_altitude: bool,
    /// Clearance as laid out, mm (to get a verdict).
    #[arg(long, value_name = "MM")]
    pub clearance_mm: Option<f64>,
    /// Creepage as laid out, mm (to get a verdict).
    #[arg(long, value_name = "MM")]
    pub creepage_mm: Option<f64>,
    /// End-product standard whose tables and method apply (iec60664-1: the horizontal basics).
    #[arg(long, value_enum, default_value = "iec60664-1")]
    pub standard: crate::standards::Standard,
    /// Under --standard iec60601-1: the means of protection (replaces --grade).
    #[arg(long, value_enum)]
    pub means: Option<crate::standards::Means>,
}

impl SpacingFlags {
    /// The barrier the flags describe; a switch that is absent is the conservative reading
    /// (inhomogeneous field, next table row).
    pub fn query(&self) -> SpacingQuery {
        let between_rows = |interpolate: bool| {
            if interpolate {
                BetweenRows::Interpolate
            } else {
                BetweenRows::NextRow
            }
        };
        SpacingQuery {
            working_rms_v: self.working_rms_v,
            working_peak_v: self.working_peak_v,
            grade: self.grade,
            pollution_degree: self.pollution_degree,
            overvoltage_category: self.overvoltage_category,
            nominal_v: self.nominal_v,
            transient_v: self.transient_v,
            altitude_m: self.altitude_m,
            material_group: self.material_group,
            cti: self.cti,
            printed_board: self.printed_board,
            field: if self.homogeneous {
                Field::Homogeneous
            } else {
                Field::Inhomogeneous
            },
            board_conductor: self.board_conductor,
            board_coating: self.board_coating,
            creepage_between_rows: between_rows(self.interpolate),
            altitude_between_rows: between_rows(self.interpolate_altitude),
            clearance_mm: self.clearance_mm,
            creepage_mm: self.creepage_mm,
        }
    }
}

/// `gapwarden spacing --format`: a table for a person, or JSON for a script.
#[derive(Debug, Clone, Copy, PartialEq, Eq, clap::ValueEnum)]
pub enum SpacingFormat {
    /// A readable table of the required and declared distances
    Table,
    /// One report barrier's fields as JSON
    Json,
}

/// The spacing look-up as `format` asks. The JSON is one report barrier's fields, except
/// that `between` is null: a look-up from flags has no circuits, and a made-up pair of
/// names would read as if it had.
pub fn render_spacing(result: &BarrierResult, format: SpacingFormat) -> String {
    match format {
        SpacingFormat::Json => {
            let mut value = serde_json::to_value(result).unwrap_or(serde_json::Value::Null);
            if let Some(entry) = value.as_object_mut() {
                entry.insert("between".to_string(), serde_json::Value::Null);
            }
            crate::report::to_json(&value)
        }
        SpacingFormat::Table => spacing_table(result),
    }
}

/// The look-up as a small plain-text table, with what set each figure and its steps.
fn spacing_table(b: &BarrierResult) -> String {
    use crate::spacing::show;
    let v = |x: Option<f64>, unit: &str| {
        x.map(|x| format!("{} {unit}", show(x)))
            .unwrap_or_else(|| "-".to_string())
    };
    let mut out = format!(
        "{} insulation, {} V rms{}, pollution degree {}, material group {}, altitude factor {}\n",
        b.grade.as_str(),
        show(b.working_rms_v),
        b.working_peak_v
            .map(|p| format!(" ({} V peak)", show(p)))
            .unwrap_or_default(),
        b.pollution_degree,
        b.material_group.unwrap_or("from the CTI"),
        show(b.altitude_factor)
    );
    if let (Some(rated), Some(read_at)) = (b.rated_impulse_v, b.clearance_impulse_v) {
        out.push_str(&format!(
            "rated impulse {} V; clearance read at {} V; creepage column {}\n",
            show(rated),
            show(read_at),
            b.creepage_column
        ));
    }
    let margin = |m: Option<f64>| {
        m.map(|m| {
            if m >= 0.0 {
                format!("+{} mm", show(m))
            } else {
                format!("{} mm", show(m))
            }
        })
        .unwrap_or_else(|| "-".to_string())
    };
    let rows = [
        [
            "".to_string(),
            "required".to_string(),
            "laid out".to_string(),
            "margin".to_string(),
            "set by".to_string(),
        ],
        [
            "clearance".to_string(),
            v(Some(b.required_clearance_mm), "mm"),
            v(b.clearance_mm, "mm"),
            margin(b.clearance_margin_mm),
            b.clearance_governed_by.to_string(),
        ],
        [
            "creepage".to_string(),
            v(Some(b.required_creepage_mm), "mm"),
            v(b.creepage_mm, "mm"),
            margin(b.creepage_margin_mm),
            b.creepage_governed_by.to_string(),
        ],
    ];
    let widths: Vec<usize> = (0..5)
        .map(|c| rows.iter().map(|r| r[c].chars().count()).max().unwrap_or(0))
        .collect();
    out.push('\n');
    for r in &rows {
        let line: Vec<String> = r
            .iter()
            .zip(&widths)
            .map(|(cell, w)| format!("{cell:<w$}"))
            .collect();
        out.push_str(line.join("  ").trim_end());
        out.push('\n');
    }
    let verdict_words = match b.verdict {
        crate::spacing::Verdict::Pass => "PASS: both distances meet the requirement",
        crate::spacing::Verdict::Fail => "FAIL: a distance falls short",
        crate::spacing::Verdict::Incomplete => {
            "INCOMPLETE: give --clearance-mm and --creepage-mm for a verdict"
        }
        crate::spacing::Verdict::CheckInput => {
            "CHECK-INPUT: it would pass only on an implausible value (see the warnings)"
        }
        crate::spacing::Verdict::NotJudged => "NOT JUDGED: nothing to compare",
    };
    out.push_str(&format!("\nverdict: {verdict_words}\n"));
    for (what, steps) in [
        ("clearance", &b.derivation.clearance),
        ("creepage", &b.derivation.creepage),
    ] {
        out.push_str(&format!("\n{what}:\n"));
        crate::insulation::numbered_steps(&mut out, &steps.steps);
    }
    out.push_str("\n(--format json prints these fields as JSON)\n");
    out
}

/// The exit status of `gapwarden spacing`: not ready when the declared distances fall
/// short or would pass only on an implausible value.
pub fn spacing_exit_status(result: &BarrierResult) -> ExitStatus {
    use crate::spacing::Verdict;
    match result.verdict {
        Verdict::Fail | Verdict::CheckInput => ExitStatus::NotReady,
        Verdict::Pass | Verdict::Incomplete | Verdict::NotJudged => ExitStatus::Ready,
    }
}

/// Required figures for one barrier from flags; the same engine and JSON as `check`.
pub fn spacing(rules: &RuleBook, q: &SpacingQuery) -> Result<BarrierResult, Problems> {
    spacing_with_warnings(rules, q).map(|(result, _)| result)
}

/// As [`spacing`], with the warnings for flags whose values look implausible (the
/// `input.suspicious_value` cases of a project file), for the command to print: a figure
/// resting on such a value must say so even where there is no verdict to mark.
pub fn spacing_with_warnings(
    rules: &RuleBook,
    q: &SpacingQuery,
) -> Result<(BarrierResult, Vec<Diagnostic>), Problems> {
    spacing_under(rules, q, crate::standards::Standard::Iec60664, None)
}

/// As [`spacing_with_warnings`], under an end-product standard (`--standard`), with a means
/// of protection in place of the grade under IEC 60601-1 (`--means`).
pub fn spacing_under(
    rules: &RuleBook,
    q: &SpacingQuery,
    standard: crate::standards::Standard,
    means: Option<crate::standards::Means>,
) -> Result<(BarrierResult, Vec<Diagnostic>), Problems> {
    use crate::project::{ALTITUDE_M, CTI, DISTANCE_MM, TRANSIENT_V, VOLTAGE_V};
    let mut problems = Vec::new();
    let mut warnings = Vec::new();
    // Each flag is judged by the rule of the project key it stands for, so the command and
    // a report agree on what is out of range and what is implausible.
    let mut judge = |flag: &str, value: Option<f64>, rule: &NumberRule| {
        if let Some(v) = value {
            match rule.judge(v) {
                Err(reason) => {
                    problems.push(Diagnostic::new("command line", reason).with_key(flag))
                }
                Ok(Some(warning)) => {
                    warnings.push(Diagnostic::new("command line", warning).with_key(flag))
                }
                Ok(None) => {}
            }
        }
    };
    judge("--working-rms-v", Some(q.working_rms_v), &VOLTAGE_V);
    judge("--working-peak-v", q.working_peak_v, &VOLTAGE_V);
    judge("--nominal-v", Some(q.nominal_v), &VOLTAGE_V);
    judge("--transient-v", q.transient_v, &TRANSIENT_V);
    judge("--clearance-mm", q.clearance_mm, &DISTANCE_MM);
    judge("--creepage-mm", q.creepage_mm, &DISTANCE_MM);
    judge("--altitude-m", Some(q.altitude_m), &ALTITUDE_M);
    judge("--cti", q.cti, &CTI);
    let implausible = !warnings.is_empty();
    if q.material_group.is_some() && q.cti.is_some() {
        problems.push(
            Diagnostic::new("command line", "give --material-group or --cti, not both")
                .with_key("--cti"),
        );
    }
    if let Some(peak) = q.working_peak_v
        && peak < q.working_rms_v
    {
        problems.push(
            Diagnostic::new("command line", "a peak is never below the rms value")
                .with_key("--working-peak-v"),
        );
    }
    if !problems.is_empty() {
        return Err(Problems(problems));
    }
    let barrier = Barrier {
        id: "spacing".to_string(),
        between: ["a".to_string(), "b".to_string()],
        grade: means.map(crate::standards::Means::grade).unwrap_or(q.grade),
        means,
        working_rms_v: q.working_rms_v,
        working_peak_v: q.working_peak_v,
        transient_v: q.transient_v,
        working_frequency_hz: None,
        material: match (q.material_group, q.cti) {
            (Some(g), _) => Material::Group(g),
            (None, Some(c)) => Material::Cti(c),
            (None, None) => Material::Unstated,
        },
        printed_board: q.printed_board,
        field: q.field,
        board: BoardSpacing {
            conductor: q.board_conductor,
            coating: q.board_coating,
        },
        clearance_mm: q.clearance_mm,
        creepage_mm: q.creepage_mm,
        slot_width_mm: None,
        bridged_by: Vec::new(),
        description: None,
        span: 0..0,
        key_spans: Default::default(),
    };
    let cond = Conditions {
        pollution_degree: q.pollution_degree,
        overvoltage_category: q.overvoltage_category,
        altitude_m: q.altitude_m,
        nominal_v: q.nominal_v,
        creepage_between_rows: q.creepage_between_rows,
        altitude_between_rows: q.altitude_between_rows,
    };
    let result = crate::standards::evaluate(rules, &cond, standard, &barrier).map_err(|errors| {
        Problems(
            errors
                .into_iter()
                .map(|e| {
                    let flag = match e.key.as_str() {
                        "mains.nominal_v" => "--nominal-v".to_string(),
                        "environment.altitude_m" => "--altitude-m".to_string(),
                        "environment.pollution_degree" => "--pollution-degree".to_string(),
                        "environment.overvoltage_category" => "--overvoltage-category".to_string(),
                        "grade" if means.is_some() => "--means".to_string(),
                        k => format!("--{}", k.replace('_', "-")),
                    };
                    Diagnostic::new("command line", e.message).with_key(flag)
                })
                .collect(),
        )
    });
    // As in a report: distances that would pass on an implausible value are not a pass.
    result.map(|mut r| {
        if implausible && r.verdict == crate::spacing::Verdict::Pass {
            r.verdict = crate::spacing::Verdict::CheckInput;
        }
        (r, warnings)
    })
}

#[cfg(test)]
mod tests {
    use super::*;
    use clap::Parser;

    /// `SpacingFlags` as the binary flattens it into `gapwarden spacing`.
    #[derive(Parser)]
    struct Cli {
        #[command(flatten)]
        flags: SpacingFlags,
    }

    fn query(args: &[&str]) -> SpacingQuery {
        let argv = std::iter::once("spacing").chain(args.iter().copied());
        Cli::try_parse_from(argv)
            .unwrap_or_else(|e| panic!("{args:?} should parse: {e}"))
            .flags
            .query()
    }

    #[test]
    fn absent_switches_give_the_conservative_reading() {
        let q = query(&["--working-rms-v", "230"]);
        assert_eq!(q.grade, Grade::Basic);
        assert_eq!(q.pollution_degree, 2);
        assert_eq!(q.overvoltage_category, OvervoltageCategory::II);
        assert_eq!(q.nominal_v, 230.0);
        assert_eq!(q.altitude_m, 2000.0);
        assert_eq!(q.material_group, None);
        assert_eq!(q.cti, None);
        assert_eq!(q.field, Field::Inhomogeneous);
        assert_eq!(q.board_conductor, BoardConductor::OuterLayer);
        assert_eq!(q.board_coating, BoardCoating::None);
        assert_eq!(q.creepage_between_rows, BetweenRows::NextRow);
        assert_eq!(q.altitude_between_rows, BetweenRows::NextRow);
        assert!(!q.printed_board);
    }

    #[test]
    fn every_flag_reaches_its_field_with_the_project_files_words() {
        let q = query(&[
            "--working-rms-v",
            "300",
            "--working-peak-v",
            "450",
            "--grade",
            "reinforced",
            "--pollution-degree",
            "3",
            "--overvoltage-category",
            "III",
            "--nominal-v",
            "120",
            "--transient-v",
            "1500",
            "--altitude-m",
            "3000",
            "--material-group",
            "IIIa",
            "--printed-board",
            "--homogeneous",
            "--board-conductor",
            "component-lead",
            "--board-coating",
            "conformal",
            "--interpolate",
            "--interpolate-altitude",
            "--clearance-mm",
            "5.5",
            "--creepage-mm",
            "6.5",
        ]);
        assert_eq!(q.working_rms_v, 300.0);
        assert_eq!(q.working_peak_v, Some(450.0));
        assert_eq!(q.grade, Grade::Reinforced);
        assert_eq!(q.pollution_degree, 3);
        assert_eq!(q.overvoltage_category, OvervoltageCategory::III);
        assert_eq!(q.nominal_v, 120.0);
        assert_eq!(q.transient_v, Some(1500.0));
        assert_eq!(q.altitude_m, 3000.0);
        assert_eq!(q.material_group, Some(MaterialGroup::IIIa));
        assert!(q.printed_board);
        assert_eq!(q.field, Field::Homogeneous);
        assert_eq!(q.board_conductor, BoardConductor::ComponentLead);
        assert_eq!(q.board_coating, BoardCoating::Conformal);
        assert_eq!(q.creepage_between_rows, BetweenRows::Interpolate);
        assert_eq!(q.altitude_between_rows, BetweenRows::Interpolate);
        assert_eq!(q.clearance_mm, Some(5.5));
        assert_eq!(q.creepage_mm, Some(6.5));
        assert_eq!(
            query(&["--working-rms-v", "1", "--cti", "175"]).cti,
            Some(175.0)
        );
    }

    #[test]
    fn enum_words_are_the_project_files_words_exactly() {
        // The words a project file uses (README's key list); clap takes them verbatim.
        for (word, grade) in [
            ("functional", Grade::Functional),
            ("supplementary", Grade::Supplementary),
            ("double", Grade::Double),
        ] {
            assert_eq!(
                query(&["--working-rms-v", "1", "--grade", word]).grade,
                grade
            );
        }
        for word in ["I", "II", "III", "IV"] {
            let q = query(&["--working-rms-v", "1", "--overvoltage-category", word]);
            assert_eq!(q.overvoltage_category.as_str(), word);
        }
        for word in ["I", "II", "IIIa", "IIIb"] {
            let q = query(&["--working-rms-v", "1", "--material-group", word]);
            assert_eq!(q.material_group.map(MaterialGroup::as_str), Some(word));
        }
        let coating = query(&["--working-rms-v", "1", "--board-coating", "polymer"]);
        assert_eq!(coating.board_coating, BoardCoating::Polymer);
        let layer = query(&["--working-rms-v", "1", "--board-conductor", "inner-layer"]);
        assert_eq!(layer.board_conductor, BoardConductor::InnerLayer);
        // Case matters, as it does in the project file.
        for bad in [
            ["--overvoltage-category", "ii"],
            ["--material-group", "iiia"],
            ["--grade", "Basic"],
        ] {
            let argv = ["spacing", "--working-rms-v", "1", bad[0], bad[1]];
            assert!(Cli::try_parse_from(argv).is_err(), "{bad:?} was accepted");
        }
    }

    #[test]
    fn json_output_parses_no_template_and_still_names_a_house_one() {
        let dir =
            std::env::temp_dir().join(format!("gapwarden-templates-for-{}", std::process::id()));
        let _ = std::fs::remove_dir_all(&dir);
        std::fs::create_dir_all(&dir).expect("scratch folder");
        // Not a template minijinja can parse.
        let broken = "{% if %}\n";
        std::fs::write(dir.join("report.md.j2"), broken).expect("written");
        let json = templates_for(Format::Json, Some(&dir));
        let markdown = templates_for(Format::Markdown, Some(&dir)).err();
        let html = templates_for(Format::Html, Some(&dir)).err();
        let _ = std::fs::remove_dir_all(&dir);

        let json = json.unwrap_or_else(|p| panic!("JSON needs no template parsed: {p}"));
        let house = json.house();
        assert_eq!(house.len(), 1);
        assert_eq!(house[0].file, "report.md.j2");
        let expected: String = {
            use sha2::{Digest, Sha256};
            Sha256::digest(broken.as_bytes())
                .iter()
                .map(|b| format!("{b:02x}"))
                .collect()
        };
        assert_eq!(house[0].sha256, expected);
        for (format, refused) in [("md", markdown), ("html", html)] {
            let refused = refused.unwrap_or_else(|| panic!("{format}: a broken template is used"));
            assert!(
                refused.to_string().contains("report.md.j2"),
                "{format}: {refused}"
            );
        }
    }
}
