//! The bad-input matrix: every key of the project file (and the kinds of mistake a rule
//! file, a house check or a house template can hold) given a bad value, each expected to
//! stop the run with exit 2 and a message naming the file, the line, the key and the
//! expected form. Plausible but suspicious values must give an `input.suspicious_value`
//! finding rather than silence. House templates and house checks are untrusted: loops,
//! recursion and file access must end in a clear refusal, never a hang.
//!
//! The project cases start from the text of `examples/class2-adapter.toml` (it has every
//! table), change one key in one table, write the result to a scratch folder and run the
//! real binary there on `project.toml`. A new key joins the matrix with one line per case.

use std::path::{Path, PathBuf};
use std::process::Output;
use std::sync::atomic::{AtomicUsize, Ordering};

use assert_cmd::cargo::cargo_bin_cmd;
use serde_json::Value;

/// The base project: every table of the project file, valid, no error.
const BASE: &str = include_str!("../../examples/class2-adapter.toml");

/// Stands for a quoted string of 5000 characters (the reader allows 4000).
const LONG: &str = "<long-string>";
/// Removes the key from its table instead of setting it.
const REMOVE: &str = "<remove>";

// ---------------------------------------------------------------------------------------
// Helpers
// ---------------------------------------------------------------------------------------

/// A scratch folder under the system temp folder, removed when dropped.
struct Scratch(PathBuf);

impl Scratch {
    fn new(tag: &str) -> Self {
        static N: AtomicUsize = AtomicUsize::new(0);
        let n = N.fetch_add(1, Ordering::SeqCst);
        let dir = std::env::temp_dir().join(format!(
            "gapwarden-bad-inputs-{}-{tag}-{n}",
            std::process::id()
        ));
        let _ = std::fs::remove_dir_all(&dir);
        std::fs::create_dir_all(&dir).expect("scratch folder can be created");
        Scratch(dir)
    }

    fn path(&self, name: &str) -> PathBuf {
        self.0.join(name)
    }

    fn write(&self, name: &str, bytes: impl AsRef<[u8]>) -> PathBuf {
        let path = self.path(name);
        if let Some(parent) = path.parent() {
            std::fs::create_dir_all(parent).expect("scratch sub-folder can be created");
        }
        std::fs::write(&path, bytes).expect("scratch file can be written");
        path
    }
}

impl Drop for Scratch {
    fn drop(&mut self) {
        let _ = std::fs::remove_dir_all(&self.0);
    }
}

/// Runs the binary in `dir` with `args`.
fn run_in<S: AsRef<std::ffi::OsStr>>(dir: &Path, args: &[S]) -> Output {
    let mut cmd = cargo_bin_cmd!("gapwarden");
    cmd.current_dir(dir);
    cmd.args(args)
        .output()
        .expect("the binary could be started")
}

fn stdout(o: &Output) -> String {
    String::from_utf8_lossy(&o.stdout).to_string()
}

fn stderr(o: &Output) -> String {
    String::from_utf8_lossy(&o.stderr).to_string()
}

fn describe(o: &Output) -> String {
    let out: String = stdout(o).chars().take(1500).collect();
    let err: String = stderr(o).chars().take(3000).collect();
    format!(
        "exit {:?}\n--- stderr ---\n{err}\n--- stdout (start) ---\n{out}",
        o.status.code()
    )
}

/// Exit 2, no report on stdout, no panic.
fn refused(o: &Output) -> Result<(), String> {
    match o.status.code() {
        Some(2) => {}
        Some(c) => return Err(format!("exit {c}, expected 2\n{}", describe(o))),
        None => return Err(format!("killed by a signal\n{}", describe(o))),
    }
    if stderr(o).contains("panicked") {
        return Err(format!("the binary panicked\n{}", describe(o)));
    }
    if !o.stdout.is_empty() {
        return Err(format!(
            "a report was printed for refused input\n{}",
            describe(o)
        ));
    }
    Ok(())
}

/// The text of each diagnostic: its `error:` line and the help lines under it.
fn diagnostics(err: &str) -> Vec<String> {
    let mut out: Vec<String> = Vec::new();
    for line in err.lines() {
        if line.starts_with("error:") || out.is_empty() {
            out.push(line.to_string());
        } else if let Some(last) = out.last_mut() {
            last.push('\n');
            last.push_str(line);
        }
    }
    out
}

/// The key a diagnostic names: the text between the first pair of backticks after the
/// location (`file:line:column: `key`: message`).
fn named_key(diagnostic: &str, located: &str) -> Option<String> {
    let mut rest = diagnostic[diagnostic.find(located)? + located.len()..].trim_start();
    if !rest.starts_with('`') {
        // Past the column number.
        rest = rest.split_once(": ").map_or(rest, |(_, r)| r).trim_start();
    }
    let rest = rest.strip_prefix('`')?;
    Some(rest[..rest.find('`')?].to_string())
}

/// Some diagnostic is located at `file:line:`, names `key` and contains `expected`. The
/// key is looked for in the diagnostic's key (`file:line:column: `key`: ...`), or with
/// `key_in_text` anywhere in its text (rule files are read by serde, whose messages name
/// a key in the text when they name one at all).
fn located_diagnostic(
    err: &str,
    file: &str,
    line: Option<usize>,
    key: &str,
    expected: &str,
    key_in_text: bool,
) -> Result<(), String> {
    let located = match line {
        Some(line) => format!("{file}:{line}:"),
        None => format!("{file}:"),
    };
    let all = diagnostics(err);
    let at: Vec<&String> = all.iter().filter(|d| d.contains(&located)).collect();
    if at.is_empty() {
        return Err(format!("no message located at {located}\n{err}"));
    }
    let keyed: Vec<&&String> = at
        .iter()
        .filter(|d| {
            key.is_empty()
                || if key_in_text {
                    d.contains(key)
                } else {
                    named_key(d, &located).is_some_and(|k| k.contains(key))
                }
        })
        .collect();
    if keyed.is_empty() {
        return Err(format!(
            "no message at {located} names the key `{key}`\n{err}"
        ));
    }
    if !keyed.iter().any(|d| d.contains(expected)) {
        return Err(format!(
            "the message at {located} about `{key}` lacks {expected:?}\n{err}"
        ));
    }
    Ok(())
}

/// Runs the cases on a few threads (the binary does the work; each case is a process).
fn run_parallel<T: Sync>(
    cases: &[T],
    one: impl Fn(&T) -> Result<(), String> + Sync,
) -> Vec<String> {
    let threads = std::thread::available_parallelism().map_or(1, |n| n.get().min(4));
    let chunk = cases.len().div_ceil(threads).max(1);
    std::thread::scope(|s| {
        let handles: Vec<_> = cases
            .chunks(chunk)
            .map(|part| s.spawn(|| part.iter().filter_map(|c| one(c).err()).collect::<Vec<_>>()))
            .collect();
        handles
            .into_iter()
            .flat_map(|h| h.join().expect("a matrix thread panicked"))
            .collect()
    })
}

/// Fails with every failing case listed, so one run shows the whole picture.
fn report_failures(what: &str, total: usize, failures: &[String]) {
    println!("{what}: {total} cases, {} failed", failures.len());
    assert!(
        failures.is_empty(),
        "{} of {total} {what} cases failed:\n\n{}",
        failures.len(),
        failures.join("\n\n----------\n\n")
    );
}

// ---------------------------------------------------------------------------------------
// Editing the base project
// ---------------------------------------------------------------------------------------

/// A table header as written (`[design]`, `[[barrier]]`) and which occurrence (from 1);
/// `"[[barrier]]#3"` is the third `[[barrier]]`.
fn parse_section(section: &str) -> (&str, usize) {
    match section.split_once('#') {
        Some((header, n)) => (header, n.parse().expect("occurrence is a number")),
        None => (section, 1),
    }
}

fn expand(value: &str) -> String {
    value.replace(LONG, &format!("\"{}\"", "x".repeat(5000)))
}

/// The base text with `key` in `section` set to `value` (replacing the key's line, or
/// inserted just under the header when absent) or removed (`REMOVE`). Returns the text
/// and the 1-based line a message about it must point at: the value's line, or for a
/// removed key the table's header (`[x]`) or its first key (`[[x]]`).
fn edit(base: &str, section: &str, key: &str, value: &str) -> (String, usize) {
    let (header, occurrence) = parse_section(section);
    let mut lines: Vec<String> = base.lines().map(str::to_string).collect();
    let header_at = lines
        .iter()
        .enumerate()
        .filter(|(_, l)| l.split('#').next().unwrap_or("").trim() == header)
        .map(|(i, _)| i)
        .nth(occurrence - 1)
        .unwrap_or_else(|| panic!("the base project has no {section}"));
    let mut key_at = None;
    for (i, line) in lines.iter().enumerate().skip(header_at + 1) {
        let t = line.trim_start();
        if t.starts_with('[') {
            break;
        }
        if t.strip_prefix(key)
            .is_some_and(|rest| rest.trim_start().starts_with('='))
        {
            key_at = Some(i);
            break;
        }
    }
    let line = if value == REMOVE {
        let at = key_at.unwrap_or_else(|| panic!("{section} has no {key} to remove"));
        lines.remove(at);
        if header.starts_with("[[") {
            header_at + 2
        } else {
            header_at + 1
        }
    } else {
        let text = format!("{key} = {}", expand(value));
        match key_at {
            Some(at) => {
                lines[at] = text;
                at + 1
            }
            None => {
                lines.insert(header_at + 1, text);
                header_at + 2
            }
        }
    };
    let mut text = lines.join("\n");
    text.push('\n');
    (text, line)
}

/// The 1-based line of `key` in `section` of `text`.
fn line_of(text: &str, section: &str, key: &str) -> usize {
    let (header, occurrence) = parse_section(section);
    let lines: Vec<&str> = text.lines().collect();
    let header_at = lines
        .iter()
        .enumerate()
        .filter(|(_, l)| l.split('#').next().unwrap_or("").trim() == header)
        .map(|(i, _)| i)
        .nth(occurrence - 1)
        .unwrap_or_else(|| panic!("no {section}"));
    lines
        .iter()
        .enumerate()
        .skip(header_at + 1)
        .take_while(|(_, l)| !l.trim_start().starts_with('['))
        .find(|(_, l)| {
            l.trim_start()
                .strip_prefix(key)
                .is_some_and(|r| r.trim_start().starts_with('='))
        })
        .map(|(i, _)| i + 1)
        .unwrap_or_else(|| panic!("{section} has no {key}"))
}

/// Checks one project text in a fresh folder: refused, with a message at `line` naming
/// `key` and containing `expected`.
fn assert_project_refused(
    what: &str,
    text: impl AsRef<[u8]>,
    line: Option<usize>,
    key: &str,
    expected: &str,
) -> Result<(), String> {
    let scratch = Scratch::new("case");
    scratch.write("project.toml", text);
    let o = run_in(&scratch.0, &["check", "project.toml"]);
    refused(&o)
        .and_then(|()| located_diagnostic(&stderr(&o), "project.toml", line, key, expected, false))
        .map_err(|e| format!("[{what}]\n{e}"))
}

// ---------------------------------------------------------------------------------------
// 1. Every key: (table, key, bad value, expected text in the message)
// ---------------------------------------------------------------------------------------

/// One line per case. The table is a header of the base project (`#N`: its N-th
/// occurrence); the value is TOML text (`<long-string>`: 5000 characters in quotes,
/// `<remove>`: the key is taken out); the expected text is what the message must say
/// (the expected form, mostly).
#[rustfmt::skip]
const KEY_CASES: &[(&str, &str, &str, &str)] = &[
    ("[design]", "name", "<remove>", "missing"),
    ("[design]", "name", "5", "expected a string"),
    ("[design]", "name", "true", "expected a string"),
    ("[design]", "name", r#""""#, "is empty"),
    ("[design]", "name", r#""   ""#, "is empty"),
    ("[design]", "name", "<long-string>", "longer than 4000 characters"),
    ("[design]", "revision", "5", "expected a string"),
    ("[design]", "revision", "true", "expected a string"),
    ("[design]", "revision", r#""""#, "is empty"),
    ("[design]", "revision", r#""   ""#, "is empty"),
    ("[design]", "revision", "<long-string>", "longer than 4000 characters"),
    ("[design]", "protection_class", "<remove>", "missing"),
    ("[design]", "protection_class", "5", "\"I\", \"II\" or \"III\""),
    ("[design]", "protection_class", r#""""#, "\"I\", \"II\" or \"III\""),
    ("[design]", "protection_class", r#""bogus""#, "\"I\", \"II\" or \"III\""),
    ("[design]", "protection_class", "<long-string>", "\"I\", \"II\" or \"III\""),
    ("[design]", "protection_class", r#""iii""#, "did you mean"),
    ("[design]", "standard", "5", "\"iec60335-1\" or \"iec60664-1\""),
    ("[design]", "standard", r#""""#, "\"iec62368-1\", \"iec60601-1\""),
    ("[design]", "standard", r#""iec61010-1""#, "\"iec62368-1\", \"iec60601-1\""),
    ("[design]", "standard", r#""iec62368""#, "did you mean"),
    ("[design]", "standard", "<long-string>", "\"iec62368-1\""),
    ("[design]", "creepage_between_rows", "5", "\"next-row\" or \"interpolate\""),
    ("[design]", "creepage_between_rows", r#""""#, "\"next-row\" or \"interpolate\""),
    ("[design]", "creepage_between_rows", r#""bogus""#, "\"next-row\" or \"interpolate\""),
    ("[design]", "creepage_between_rows", "<long-string>", "\"next-row\" or \"interpolate\""),
    ("[design]", "creepage_between_rows", r#""interpolat""#, "did you mean"),
    ("[design]", "altitude_between_rows", "5", "\"next-row\" or \"interpolate\""),
    ("[design]", "altitude_between_rows", r#""""#, "\"next-row\" or \"interpolate\""),
    ("[design]", "altitude_between_rows", r#""bogus""#, "\"next-row\" or \"interpolate\""),
    ("[design]", "altitude_between_rows", "<long-string>", "\"next-row\" or \"interpolate\""),
    ("[design]", "altitude_between_rows", r#""interpolat""#, "did you mean"),
    ("[environment]", "pollution_degree", r#""abc""#, "1, 2 or 3"),
    ("[environment]", "pollution_degree", r#""12""#, "write it without quotes"),
    ("[environment]", "pollution_degree", "true", "1, 2 or 3"),
    ("[environment]", "pollution_degree", "[1, 2]", "1, 2 or 3"),
    ("[environment]", "pollution_degree", "nan", "1, 2 or 3"),
    ("[environment]", "pollution_degree", "inf", "1, 2 or 3"),
    ("[environment]", "pollution_degree", "-inf", "1, 2 or 3"),
    ("[environment]", "pollution_degree", "1e300", "1, 2 or 3"),
    ("[environment]", "pollution_degree", "-1e300", "1, 2 or 3"),
    ("[environment]", "pollution_degree", "-1", "1, 2 or 3"),
    ("[environment]", "pollution_degree", "0", "1, 2 or 3"),
    ("[environment]", "pollution_degree", "2.5", "1, 2 or 3"),
    ("[environment]", "pollution_degree", "99999999999999999999", "1, 2 or 3"),
    ("[environment]", "pollution_degree", "4", "1, 2 or 3"),
    ("[environment]", "overvoltage_category", "5", "\"I\", \"II\", \"III\" or \"IV\""),
    ("[environment]", "overvoltage_category", r#""""#, "\"I\", \"II\", \"III\" or \"IV\""),
    ("[environment]", "overvoltage_category", r#""bogus""#, "\"I\", \"II\", \"III\" or \"IV\""),
    ("[environment]", "overvoltage_category", "<long-string>", "\"I\", \"II\", \"III\" or \"IV\""),
    ("[environment]", "overvoltage_category", r#""iv""#, "did you mean"),
    ("[environment]", "altitude_m", r#""abc""#, "an altitude in metres"),
    ("[environment]", "altitude_m", r#""12""#, "write it without quotes"),
    ("[environment]", "altitude_m", "true", "an altitude in metres"),
    ("[environment]", "altitude_m", "[1, 2]", "an altitude in metres"),
    ("[environment]", "altitude_m", "nan", "an altitude in metres"),
    ("[environment]", "altitude_m", "inf", "an altitude in metres"),
    ("[environment]", "altitude_m", "-inf", "an altitude in metres"),
    ("[environment]", "altitude_m", "1e300", "an altitude in metres"),
    ("[environment]", "altitude_m", "-1e300", "an altitude in metres"),
    ("[environment]", "altitude_m", "-1", "an altitude in metres"),
    ("[environment]", "altitude_m", "99999999999999999999", "an altitude in metres"),
    ("[mains]", "nominal_v", "<remove>", "missing"),
    ("[mains]", "nominal_v", r#""abc""#, "a voltage in volts"),
    ("[mains]", "nominal_v", r#""12""#, "write it without quotes"),
    ("[mains]", "nominal_v", "true", "a voltage in volts"),
    ("[mains]", "nominal_v", "[1, 2]", "a voltage in volts"),
    ("[mains]", "nominal_v", "nan", "a voltage in volts"),
    ("[mains]", "nominal_v", "inf", "a voltage in volts"),
    ("[mains]", "nominal_v", "-inf", "a voltage in volts"),
    ("[mains]", "nominal_v", "1e300", "a voltage in volts"),
    ("[mains]", "nominal_v", "-1e300", "a voltage in volts"),
    ("[mains]", "nominal_v", "-1", "a voltage in volts"),
    ("[mains]", "nominal_v", "0", "a voltage in volts"),
    ("[mains]", "nominal_v", "99999999999999999999", "a voltage in volts"),
    ("[mains]", "max_v", r#""abc""#, "a voltage in volts"),
    ("[mains]", "max_v", r#""12""#, "write it without quotes"),
    ("[mains]", "max_v", "true", "a voltage in volts"),
    ("[mains]", "max_v", "[1, 2]", "a voltage in volts"),
    ("[mains]", "max_v", "nan", "a voltage in volts"),
    ("[mains]", "max_v", "inf", "a voltage in volts"),
    ("[mains]", "max_v", "-inf", "a voltage in volts"),
    ("[mains]", "max_v", "1e300", "a voltage in volts"),
    ("[mains]", "max_v", "-1e300", "a voltage in volts"),
    ("[mains]", "max_v", "-1", "a voltage in volts"),
    ("[mains]", "max_v", "0", "a voltage in volts"),
    ("[mains]", "max_v", "99999999999999999999", "a voltage in volts"),
    ("[mains]", "min_v", r#""abc""#, "a voltage in volts"),
    ("[mains]", "min_v", r#""12""#, "write it without quotes"),
    ("[mains]", "min_v", "true", "a voltage in volts"),
    ("[mains]", "min_v", "[1, 2]", "a voltage in volts"),
    ("[mains]", "min_v", "nan", "a voltage in volts"),
    ("[mains]", "min_v", "inf", "a voltage in volts"),
    ("[mains]", "min_v", "-inf", "a voltage in volts"),
    ("[mains]", "min_v", "1e300", "a voltage in volts"),
    ("[mains]", "min_v", "-1e300", "a voltage in volts"),
    ("[mains]", "min_v", "-1", "a voltage in volts"),
    ("[mains]", "min_v", "0", "a voltage in volts"),
    ("[mains]", "min_v", "99999999999999999999", "a voltage in volts"),
    ("[mains]", "frequency_hz", r#""abc""#, "a mains frequency in hertz"),
    ("[mains]", "frequency_hz", r#""12""#, "write it without quotes"),
    ("[mains]", "frequency_hz", "true", "a mains frequency in hertz"),
    ("[mains]", "frequency_hz", "[1, 2]", "a mains frequency in hertz"),
    ("[mains]", "frequency_hz", "nan", "a mains frequency in hertz"),
    ("[mains]", "frequency_hz", "inf", "a mains frequency in hertz"),
    ("[mains]", "frequency_hz", "-inf", "a mains frequency in hertz"),
    ("[mains]", "frequency_hz", "1e300", "a mains frequency in hertz"),
    ("[mains]", "frequency_hz", "-1e300", "a mains frequency in hertz"),
    ("[mains]", "frequency_hz", "-1", "a mains frequency in hertz"),
    ("[mains]", "frequency_hz", "0", "a mains frequency in hertz"),
    ("[mains]", "frequency_hz", "99999999999999999999", "a mains frequency in hertz"),
    ("[[circuit]]", "id", "<remove>", "missing"),
    ("[[circuit]]", "id", "5", "expected a string"),
    ("[[circuit]]", "id", "true", "expected a string"),
    ("[[circuit]]", "id", r#""""#, "is empty"),
    ("[[circuit]]", "id", r#""   ""#, "is empty"),
    ("[[circuit]]", "id", "<long-string>", "longer than 4000 characters"),
    ("[[circuit]]", "kind", "<remove>", "missing"),
    ("[[circuit]]", "kind", "5", "\"mains\", \"hazardous\" or \"safe\""),
    ("[[circuit]]", "kind", r#""""#, "\"mains\", \"hazardous\" or \"safe\""),
    ("[[circuit]]", "kind", r#""bogus""#, "\"mains\", \"hazardous\" or \"safe\""),
    ("[[circuit]]", "kind", "<long-string>", "\"mains\", \"hazardous\" or \"safe\""),
    ("[[circuit]]", "kind", r#""main""#, "did you mean"),
    ("[[circuit]]", "accessible", r#""yes""#, "expected true or false"),
    ("[[circuit]]", "accessible", "1", "expected true or false"),
    ("[[circuit]]", "earthed", r#""yes""#, "expected true or false"),
    ("[[circuit]]", "earthed", "1", "expected true or false"),
    ("[[circuit]]", "description", "5", "expected a string"),
    ("[[circuit]]", "description", "true", "expected a string"),
    ("[[circuit]]", "description", r#""""#, "is empty"),
    ("[[circuit]]", "description", r#""   ""#, "is empty"),
    ("[[circuit]]", "description", "<long-string>", "longer than 4000 characters"),
    ("[[barrier]]", "id", "<remove>", "missing"),
    ("[[barrier]]", "id", "5", "expected a string"),
    ("[[barrier]]", "id", "true", "expected a string"),
    ("[[barrier]]", "id", r#""""#, "is empty"),
    ("[[barrier]]", "id", r#""   ""#, "is empty"),
    ("[[barrier]]", "id", "<long-string>", "longer than 4000 characters"),
    ("[[barrier]]", "between", "<remove>", "missing"),
    ("[[barrier]]", "between", r#""primary""#, "expected an array of strings"),
    ("[[barrier]]", "between", "[1, 2]", "expected a string"),
    ("[[barrier]]", "between", r#"["", "output"]"#, "non-empty string"),
    ("[[barrier]]", "between", "[<long-string>, \"output\"]", "at most 4000 characters"),
    ("[[barrier]]", "grade", "<remove>", "missing"),
    ("[[barrier]]", "grade", "5", "\"reinforced\" or \"double\""),
    ("[[barrier]]", "grade", r#""""#, "\"reinforced\" or \"double\""),
    ("[[barrier]]", "grade", r#""bogus""#, "\"reinforced\" or \"double\""),
    ("[[barrier]]", "grade", "<long-string>", "\"reinforced\" or \"double\""),
    ("[[barrier]]", "grade", r#""reinforcd""#, "did you mean"),
    ("[[barrier]]", "working_rms_v", "<remove>", "missing"),
    ("[[barrier]]", "working_rms_v", r#""abc""#, "a voltage in volts"),
    ("[[barrier]]", "working_rms_v", r#""12""#, "write it without quotes"),
    ("[[barrier]]", "working_rms_v", "true", "a voltage in volts"),
    ("[[barrier]]", "working_rms_v", "[1, 2]", "a voltage in volts"),
    ("[[barrier]]", "working_rms_v", "nan", "a voltage in volts"),
    ("[[barrier]]", "working_rms_v", "inf", "a voltage in volts"),
    ("[[barrier]]", "working_rms_v", "-inf", "a voltage in volts"),
    ("[[barrier]]", "working_rms_v", "1e300", "a voltage in volts"),
    ("[[barrier]]", "working_rms_v", "-1e300", "a voltage in volts"),
    ("[[barrier]]", "working_rms_v", "-1", "a voltage in volts"),
    ("[[barrier]]", "working_rms_v", "0", "a voltage in volts"),
    ("[[barrier]]", "working_rms_v", "99999999999999999999", "a voltage in volts"),
    ("[[barrier]]", "working_peak_v", r#""abc""#, "a voltage in volts"),
    ("[[barrier]]", "working_peak_v", r#""12""#, "write it without quotes"),
    ("[[barrier]]", "working_peak_v", "true", "a voltage in volts"),
    ("[[barrier]]", "working_peak_v", "[1, 2]", "a voltage in volts"),
    ("[[barrier]]", "working_peak_v", "nan", "a voltage in volts"),
    ("[[barrier]]", "working_peak_v", "inf", "a voltage in volts"),
    ("[[barrier]]", "working_peak_v", "-inf", "a voltage in volts"),
    ("[[barrier]]", "working_peak_v", "1e300", "a voltage in volts"),
    ("[[barrier]]", "working_peak_v", "-1e300", "a voltage in volts"),
    ("[[barrier]]", "working_peak_v", "-1", "a voltage in volts"),
    ("[[barrier]]", "working_peak_v", "0", "a voltage in volts"),
    ("[[barrier]]", "working_peak_v", "99999999999999999999", "a voltage in volts"),
    ("[[barrier]]", "transient_v", r#""abc""#, "an impulse voltage in volts"),
    ("[[barrier]]", "transient_v", r#""12""#, "write it without quotes"),
    ("[[barrier]]", "transient_v", "true", "an impulse voltage in volts"),
    ("[[barrier]]", "transient_v", "[1, 2]", "an impulse voltage in volts"),
    ("[[barrier]]", "transient_v", "nan", "an impulse voltage in volts"),
    ("[[barrier]]", "transient_v", "inf", "an impulse voltage in volts"),
    ("[[barrier]]", "transient_v", "-inf", "an impulse voltage in volts"),
    ("[[barrier]]", "transient_v", "1e300", "an impulse voltage in volts"),
    ("[[barrier]]", "transient_v", "-1e300", "an impulse voltage in volts"),
    ("[[barrier]]", "transient_v", "-1", "an impulse voltage in volts"),
    ("[[barrier]]", "transient_v", "0", "an impulse voltage in volts"),
    ("[[barrier]]", "transient_v", "99999999999999999999", "an impulse voltage in volts"),
    ("[[barrier]]", "working_frequency_hz", r#""abc""#, "a frequency in hertz, 0 (dc) or more"),
    ("[[barrier]]", "working_frequency_hz", r#""12""#, "write it without quotes"),
    ("[[barrier]]", "working_frequency_hz", "true", "a frequency in hertz, 0 (dc) or more"),
    ("[[barrier]]", "working_frequency_hz", "[1, 2]", "a frequency in hertz, 0 (dc) or more"),
    ("[[barrier]]", "working_frequency_hz", "nan", "a frequency in hertz, 0 (dc) or more"),
    ("[[barrier]]", "working_frequency_hz", "inf", "a frequency in hertz, 0 (dc) or more"),
    ("[[barrier]]", "working_frequency_hz", "-inf", "a frequency in hertz, 0 (dc) or more"),
    ("[[barrier]]", "working_frequency_hz", "1e300", "a frequency in hertz, 0 (dc) or more"),
    ("[[barrier]]", "working_frequency_hz", "-1e300", "a frequency in hertz, 0 (dc) or more"),
    ("[[barrier]]", "working_frequency_hz", "-1", "a frequency in hertz, 0 (dc) or more"),
    ("[[barrier]]", "working_frequency_hz", "99999999999999999999", "a frequency in hertz, 0 (dc) or more"),
    ("[[barrier]]", "material_group", "5", "\"IIIa\" or \"IIIb\""),
    ("[[barrier]]", "material_group", r#""""#, "\"IIIa\" or \"IIIb\""),
    ("[[barrier]]", "material_group", r#""bogus""#, "\"IIIa\" or \"IIIb\""),
    ("[[barrier]]", "material_group", "<long-string>", "\"IIIa\" or \"IIIb\""),
    ("[[barrier]]", "material_group", r#""IIIc""#, "did you mean"),
    ("[[barrier]]#3", "cti", r#""abc""#, "a comparative tracking index"),
    ("[[barrier]]#3", "cti", r#""12""#, "write it without quotes"),
    ("[[barrier]]#3", "cti", "true", "a comparative tracking index"),
    ("[[barrier]]#3", "cti", "[1, 2]", "a comparative tracking index"),
    ("[[barrier]]#3", "cti", "nan", "a comparative tracking index"),
    ("[[barrier]]#3", "cti", "inf", "a comparative tracking index"),
    ("[[barrier]]#3", "cti", "-inf", "a comparative tracking index"),
    ("[[barrier]]#3", "cti", "1e300", "a comparative tracking index"),
    ("[[barrier]]#3", "cti", "-1e300", "a comparative tracking index"),
    ("[[barrier]]#3", "cti", "-1", "a comparative tracking index"),
    ("[[barrier]]#3", "cti", "99999999999999999999", "a comparative tracking index"),
    ("[[barrier]]", "printed_board", r#""yes""#, "expected true or false"),
    ("[[barrier]]", "printed_board", "1", "expected true or false"),
    ("[[barrier]]", "field", "5", "\"inhomogeneous\" or \"homogeneous\""),
    ("[[barrier]]", "field", r#""""#, "\"inhomogeneous\" or \"homogeneous\""),
    ("[[barrier]]", "field", r#""bogus""#, "\"inhomogeneous\" or \"homogeneous\""),
    ("[[barrier]]", "field", "<long-string>", "\"inhomogeneous\" or \"homogeneous\""),
    ("[[barrier]]", "field", r#""homogenous""#, "did you mean"),
    ("[[barrier]]", "board_conductor", "5", "\"component-lead\""),
    ("[[barrier]]", "board_conductor", r#""""#, "\"component-lead\""),
    ("[[barrier]]", "board_conductor", r#""bogus""#, "\"component-lead\""),
    ("[[barrier]]", "board_conductor", "<long-string>", "\"component-lead\""),
    ("[[barrier]]", "board_conductor", r#""outer""#, "did you mean"),
    ("[[barrier]]", "board_coating", "5", "\"conformal\""),
    ("[[barrier]]", "board_coating", r#""""#, "\"conformal\""),
    ("[[barrier]]", "board_coating", r#""bogus""#, "\"conformal\""),
    ("[[barrier]]", "board_coating", "<long-string>", "\"conformal\""),
    ("[[barrier]]", "board_coating", r#""conformall""#, "did you mean"),
    ("[[barrier]]", "clearance_mm", r#""abc""#, "a distance in millimetres"),
    ("[[barrier]]", "clearance_mm", r#""12""#, "write it without quotes"),
    ("[[barrier]]", "clearance_mm", "true", "a distance in millimetres"),
    ("[[barrier]]", "clearance_mm", "[1, 2]", "a distance in millimetres"),
    ("[[barrier]]", "clearance_mm", "nan", "a distance in millimetres"),
    ("[[barrier]]", "clearance_mm", "inf", "a distance in millimetres"),
    ("[[barrier]]", "clearance_mm", "-inf", "a distance in millimetres"),
    ("[[barrier]]", "clearance_mm", "1e300", "a distance in millimetres"),
    ("[[barrier]]", "clearance_mm", "-1e300", "a distance in millimetres"),
    ("[[barrier]]", "clearance_mm", "-1", "a distance in millimetres"),
    ("[[barrier]]", "clearance_mm", "99999999999999999999", "a distance in millimetres"),
    ("[[barrier]]", "creepage_mm", r#""abc""#, "a distance in millimetres"),
    ("[[barrier]]", "creepage_mm", r#""12""#, "write it without quotes"),
    ("[[barrier]]", "creepage_mm", "true", "a distance in millimetres"),
    ("[[barrier]]", "creepage_mm", "[1, 2]", "a distance in millimetres"),
    ("[[barrier]]", "creepage_mm", "nan", "a distance in millimetres"),
    ("[[barrier]]", "creepage_mm", "inf", "a distance in millimetres"),
    ("[[barrier]]", "creepage_mm", "-inf", "a distance in millimetres"),
    ("[[barrier]]", "creepage_mm", "1e300", "a distance in millimetres"),
    ("[[barrier]]", "creepage_mm", "-1e300", "a distance in millimetres"),
    ("[[barrier]]", "creepage_mm", "-1", "a distance in millimetres"),
    ("[[barrier]]", "creepage_mm", "99999999999999999999", "a distance in millimetres"),
    ("[[barrier]]", "slot_width_mm", r#""abc""#, "a slot width in millimetres"),
    ("[[barrier]]", "slot_width_mm", r#""12""#, "write it without quotes"),
    ("[[barrier]]", "slot_width_mm", "true", "a slot width in millimetres"),
    ("[[barrier]]", "slot_width_mm", "[1, 2]", "a slot width in millimetres"),
    ("[[barrier]]", "slot_width_mm", "nan", "a slot width in millimetres"),
    ("[[barrier]]", "slot_width_mm", "inf", "a slot width in millimetres"),
    ("[[barrier]]", "slot_width_mm", "-inf", "a slot width in millimetres"),
    ("[[barrier]]", "slot_width_mm", "1e300", "a slot width in millimetres"),
    ("[[barrier]]", "slot_width_mm", "-1e300", "a slot width in millimetres"),
    ("[[barrier]]", "slot_width_mm", "-1", "a slot width in millimetres"),
    ("[[barrier]]", "slot_width_mm", "0", "a slot width in millimetres"),
    ("[[barrier]]", "slot_width_mm", "99999999999999999999", "a slot width in millimetres"),
    ("[[barrier]]", "bridged_by", r#""primary""#, "expected an array of strings"),
    ("[[barrier]]", "bridged_by", "[1, 2]", "expected a string"),
    ("[[barrier]]", "bridged_by", r#"["", "output"]"#, "non-empty string"),
    ("[[barrier]]", "bridged_by", "[<long-string>, \"output\"]", "at most 4000 characters"),
    ("[[barrier]]", "description", "5", "expected a string"),
    ("[[barrier]]", "description", "true", "expected a string"),
    ("[[barrier]]", "description", r#""""#, "is empty"),
    ("[[barrier]]", "description", r#""   ""#, "is empty"),
    ("[[barrier]]", "description", "<long-string>", "longer than 4000 characters"),
    ("[[part]]", "ref", "<remove>", "missing"),
    ("[[part]]", "ref", "5", "expected a string"),
    ("[[part]]", "ref", "true", "expected a string"),
    ("[[part]]", "ref", r#""""#, "is empty"),
    ("[[part]]", "ref", r#""   ""#, "is empty"),
    ("[[part]]", "ref", "<long-string>", "longer than 4000 characters"),
    ("[[part]]", "kind", "<remove>", "missing"),
    ("[[part]]", "kind", "5", "\"digital-isolator\""),
    ("[[part]]", "kind", r#""""#, "\"digital-isolator\""),
    ("[[part]]", "kind", r#""bogus""#, "\"digital-isolator\""),
    ("[[part]]", "kind", "<long-string>", "\"digital-isolator\""),
    ("[[part]]", "kind", r#""transformr""#, "did you mean"),
    ("[[part]]", "description", "5", "expected a string"),
    ("[[part]]", "description", "true", "expected a string"),
    ("[[part]]", "description", r#""""#, "is empty"),
    ("[[part]]", "description", r#""   ""#, "is empty"),
    ("[[part]]", "description", "<long-string>", "longer than 4000 characters"),
    ("[[part]]", "subclass", "5", "\"X1\", \"X2\", \"Y1\", \"Y2\" or \"Y4\""),
    ("[[part]]", "subclass", r#""""#, "\"X1\", \"X2\", \"Y1\", \"Y2\" or \"Y4\""),
    ("[[part]]", "subclass", r#""bogus""#, "\"X1\", \"X2\", \"Y1\", \"Y2\" or \"Y4\""),
    ("[[part]]", "subclass", "<long-string>", "\"X1\", \"X2\", \"Y1\", \"Y2\" or \"Y4\""),
    ("[[part]]", "subclass", r#""y1""#, "did you mean"),
    ("[[part]]", "capacitance_nf", r#""abc""#, "a capacitance in nanofarads"),
    ("[[part]]", "capacitance_nf", r#""12""#, "write it without quotes"),
    ("[[part]]", "capacitance_nf", "true", "a capacitance in nanofarads"),
    ("[[part]]", "capacitance_nf", "[1, 2]", "a capacitance in nanofarads"),
    ("[[part]]", "capacitance_nf", "nan", "a capacitance in nanofarads"),
    ("[[part]]", "capacitance_nf", "inf", "a capacitance in nanofarads"),
    ("[[part]]", "capacitance_nf", "-inf", "a capacitance in nanofarads"),
    ("[[part]]", "capacitance_nf", "1e300", "a capacitance in nanofarads"),
    ("[[part]]", "capacitance_nf", "-1e300", "a capacitance in nanofarads"),
    ("[[part]]", "capacitance_nf", "-1", "a capacitance in nanofarads"),
    ("[[part]]", "capacitance_nf", "0", "a capacitance in nanofarads"),
    ("[[part]]", "capacitance_nf", "99999999999999999999", "a capacitance in nanofarads"),
    ("[[part]]", "rated_ac_v", r#""abc""#, "a voltage in volts"),
    ("[[part]]", "rated_ac_v", r#""12""#, "write it without quotes"),
    ("[[part]]", "rated_ac_v", "true", "a voltage in volts"),
    ("[[part]]", "rated_ac_v", "[1, 2]", "a voltage in volts"),
    ("[[part]]", "rated_ac_v", "nan", "a voltage in volts"),
    ("[[part]]", "rated_ac_v", "inf", "a voltage in volts"),
    ("[[part]]", "rated_ac_v", "-inf", "a voltage in volts"),
    ("[[part]]", "rated_ac_v", "1e300", "a voltage in volts"),
    ("[[part]]", "rated_ac_v", "-1e300", "a voltage in volts"),
    ("[[part]]", "rated_ac_v", "-1", "a voltage in volts"),
    ("[[part]]", "rated_ac_v", "0", "a voltage in volts"),
    ("[[part]]", "rated_ac_v", "99999999999999999999", "a voltage in volts"),
    ("[[part]]", "count_in_series", r#""abc""#, "a whole number of capacitors in series"),
    ("[[part]]", "count_in_series", r#""12""#, "write it without quotes"),
    ("[[part]]", "count_in_series", "true", "a whole number of capacitors in series"),
    ("[[part]]", "count_in_series", "[1, 2]", "a whole number of capacitors in series"),
    ("[[part]]", "count_in_series", "nan", "a whole number of capacitors in series"),
    ("[[part]]", "count_in_series", "inf", "a whole number of capacitors in series"),
    ("[[part]]", "count_in_series", "-inf", "a whole number of capacitors in series"),
    ("[[part]]", "count_in_series", "1e300", "a whole number of capacitors in series"),
    ("[[part]]", "count_in_series", "-1e300", "a whole number of capacitors in series"),
    ("[[part]]", "count_in_series", "-1", "a whole number of capacitors in series"),
    ("[[part]]", "count_in_series", "0", "a whole number of capacitors in series"),
    ("[[part]]", "count_in_series", "2.5", "a whole number of capacitors in series"),
    ("[[part]]", "count_in_series", "99999999999999999999", "a whole number of capacitors in series"),
    ("[[part]]", "isolation_test_v_rms", r#""abc""#, "a test voltage in V rms"),
    ("[[part]]", "isolation_test_v_rms", r#""12""#, "write it without quotes"),
    ("[[part]]", "isolation_test_v_rms", "true", "a test voltage in V rms"),
    ("[[part]]", "isolation_test_v_rms", "[1, 2]", "a test voltage in V rms"),
    ("[[part]]", "isolation_test_v_rms", "nan", "a test voltage in V rms"),
    ("[[part]]", "isolation_test_v_rms", "inf", "a test voltage in V rms"),
    ("[[part]]", "isolation_test_v_rms", "-inf", "a test voltage in V rms"),
    ("[[part]]", "isolation_test_v_rms", "1e300", "a test voltage in V rms"),
    ("[[part]]", "isolation_test_v_rms", "-1e300", "a test voltage in V rms"),
    ("[[part]]", "isolation_test_v_rms", "-1", "a test voltage in V rms"),
    ("[[part]]", "isolation_test_v_rms", "0", "a test voltage in V rms"),
    ("[[part]]", "isolation_test_v_rms", "99999999999999999999", "a test voltage in V rms"),
    ("[[part]]", "external_clearance_mm", r#""abc""#, "a distance in millimetres"),
    ("[[part]]", "external_clearance_mm", r#""12""#, "write it without quotes"),
    ("[[part]]", "external_clearance_mm", "true", "a distance in millimetres"),
    ("[[part]]", "external_clearance_mm", "[1, 2]", "a distance in millimetres"),
    ("[[part]]", "external_clearance_mm", "nan", "a distance in millimetres"),
    ("[[part]]", "external_clearance_mm", "inf", "a distance in millimetres"),
    ("[[part]]", "external_clearance_mm", "-inf", "a distance in millimetres"),
    ("[[part]]", "external_clearance_mm", "1e300", "a distance in millimetres"),
    ("[[part]]", "external_clearance_mm", "-1e300", "a distance in millimetres"),
    ("[[part]]", "external_clearance_mm", "-1", "a distance in millimetres"),
    ("[[part]]", "external_clearance_mm", "99999999999999999999", "a distance in millimetres"),
    ("[[part]]", "external_creepage_mm", r#""abc""#, "a distance in millimetres"),
    ("[[part]]", "external_creepage_mm", r#""12""#, "write it without quotes"),
    ("[[part]]", "external_creepage_mm", "true", "a distance in millimetres"),
    ("[[part]]", "external_creepage_mm", "[1, 2]", "a distance in millimetres"),
    ("[[part]]", "external_creepage_mm", "nan", "a distance in millimetres"),
    ("[[part]]", "external_creepage_mm", "inf", "a distance in millimetres"),
    ("[[part]]", "external_creepage_mm", "-inf", "a distance in millimetres"),
    ("[[part]]", "external_creepage_mm", "1e300", "a distance in millimetres"),
    ("[[part]]", "external_creepage_mm", "-1e300", "a distance in millimetres"),
    ("[[part]]", "external_creepage_mm", "-1", "a distance in millimetres"),
    ("[[part]]", "external_creepage_mm", "99999999999999999999", "a distance in millimetres"),
    ("[[part]]", "distance_through_insulation_mm", r#""abc""#, "a thickness in millimetres"),
    ("[[part]]", "distance_through_insulation_mm", r#""12""#, "write it without quotes"),
    ("[[part]]", "distance_through_insulation_mm", "true", "a thickness in millimetres"),
    ("[[part]]", "distance_through_insulation_mm", "[1, 2]", "a thickness in millimetres"),
    ("[[part]]", "distance_through_insulation_mm", "nan", "a thickness in millimetres"),
    ("[[part]]", "distance_through_insulation_mm", "inf", "a thickness in millimetres"),
    ("[[part]]", "distance_through_insulation_mm", "-inf", "a thickness in millimetres"),
    ("[[part]]", "distance_through_insulation_mm", "1e300", "a thickness in millimetres"),
    ("[[part]]", "distance_through_insulation_mm", "-1e300", "a thickness in millimetres"),
    ("[[part]]", "distance_through_insulation_mm", "-1", "a thickness in millimetres"),
    ("[[part]]", "distance_through_insulation_mm", "0", "a thickness in millimetres"),
    ("[[part]]", "distance_through_insulation_mm", "99999999999999999999", "a thickness in millimetres"),
    ("[[part]]", "thin_layer_rated", r#""yes""#, "expected true or false"),
    ("[[part]]", "thin_layer_rated", "1", "expected true or false"),
    ("[[part]]", "insulation_system", "5", "\"margin-tape\""),
    ("[[part]]", "insulation_system", r#""""#, "\"margin-tape\""),
    ("[[part]]", "insulation_system", r#""bogus""#, "\"margin-tape\""),
    ("[[part]]", "insulation_system", "<long-string>", "\"margin-tape\""),
    ("[[part]]", "insulation_system", r#""tap""#, "did you mean"),
    ("[[part]]", "tape_layers", r#""abc""#, "a whole number of tape layers"),
    ("[[part]]", "tape_layers", r#""12""#, "write it without quotes"),
    ("[[part]]", "tape_layers", "true", "a whole number of tape layers"),
    ("[[part]]", "tape_layers", "[1, 2]", "a whole number of tape layers"),
    ("[[part]]", "tape_layers", "nan", "a whole number of tape layers"),
    ("[[part]]", "tape_layers", "inf", "a whole number of tape layers"),
    ("[[part]]", "tape_layers", "-inf", "a whole number of tape layers"),
    ("[[part]]", "tape_layers", "1e300", "a whole number of tape layers"),
    ("[[part]]", "tape_layers", "-1e300", "a whole number of tape layers"),
    ("[[part]]", "tape_layers", "-1", "a whole number of tape layers"),
    ("[[part]]", "tape_layers", "2.5", "a whole number of tape layers"),
    ("[[part]]", "tape_layers", "99999999999999999999", "a whole number of tape layers"),
    ("[[part]]", "margin_mm", r#""abc""#, "a distance in millimetres"),
    ("[[part]]", "margin_mm", r#""12""#, "write it without quotes"),
    ("[[part]]", "margin_mm", "true", "a distance in millimetres"),
    ("[[part]]", "margin_mm", "[1, 2]", "a distance in millimetres"),
    ("[[part]]", "margin_mm", "nan", "a distance in millimetres"),
    ("[[part]]", "margin_mm", "inf", "a distance in millimetres"),
    ("[[part]]", "margin_mm", "-inf", "a distance in millimetres"),
    ("[[part]]", "margin_mm", "1e300", "a distance in millimetres"),
    ("[[part]]", "margin_mm", "-1e300", "a distance in millimetres"),
    ("[[part]]", "margin_mm", "-1", "a distance in millimetres"),
    ("[[part]]", "margin_mm", "99999999999999999999", "a distance in millimetres"),
    ("[[part]]", "thermal_class", "5", "\"A\", \"E\", \"B\", \"F\", \"H\", \"N\" or \"R\""),
    ("[[part]]", "thermal_class", r#""""#, "\"A\", \"E\", \"B\", \"F\", \"H\", \"N\" or \"R\""),
    ("[[part]]", "thermal_class", r#""bogus""#, "\"A\", \"E\", \"B\", \"F\", \"H\", \"N\" or \"R\""),
    ("[[part]]", "thermal_class", "<long-string>", "\"A\", \"E\", \"B\", \"F\", \"H\", \"N\" or \"R\""),
    ("[[part]]", "thermal_class", r#""h""#, "did you mean"),
    ("[[part]]", "hot_spot_c", r#""abc""#, "a temperature in degrees Celsius"),
    ("[[part]]", "hot_spot_c", r#""12""#, "write it without quotes"),
    ("[[part]]", "hot_spot_c", "true", "a temperature in degrees Celsius"),
    ("[[part]]", "hot_spot_c", "[1, 2]", "a temperature in degrees Celsius"),
    ("[[part]]", "hot_spot_c", "nan", "a temperature in degrees Celsius"),
    ("[[part]]", "hot_spot_c", "inf", "a temperature in degrees Celsius"),
    ("[[part]]", "hot_spot_c", "-inf", "a temperature in degrees Celsius"),
    ("[[part]]", "hot_spot_c", "1e300", "a temperature in degrees Celsius"),
    ("[[part]]", "hot_spot_c", "-1e300", "a temperature in degrees Celsius"),
    ("[[part]]", "hot_spot_c", "-300", "a temperature in degrees Celsius"),
    ("[[part]]", "hot_spot_c", "99999999999999999999", "a temperature in degrees Celsius"),
    ("[input]", "bulk_capacitance_uf", "<remove>", "missing"),
    ("[input]", "bulk_capacitance_uf", r#""abc""#, "a capacitance in microfarads, above 0"),
    ("[input]", "bulk_capacitance_uf", r#""12""#, "write it without quotes"),
    ("[input]", "bulk_capacitance_uf", "true", "a capacitance in microfarads, above 0"),
    ("[input]", "bulk_capacitance_uf", "[1, 2]", "a capacitance in microfarads, above 0"),
    ("[input]", "bulk_capacitance_uf", "nan", "a capacitance in microfarads, above 0"),
    ("[input]", "bulk_capacitance_uf", "inf", "a capacitance in microfarads, above 0"),
    ("[input]", "bulk_capacitance_uf", "-inf", "a capacitance in microfarads, above 0"),
    ("[input]", "bulk_capacitance_uf", "1e300", "a capacitance in microfarads, above 0"),
    ("[input]", "bulk_capacitance_uf", "-1e300", "a capacitance in microfarads, above 0"),
    ("[input]", "bulk_capacitance_uf", "-1", "a capacitance in microfarads, above 0"),
    ("[input]", "bulk_capacitance_uf", "0", "a capacitance in microfarads, above 0"),
    ("[input]", "bulk_capacitance_uf", "99999999999999999999", "a capacitance in microfarads, above 0"),
    ("[input]", "series_resistance_ohm", "<remove>", "missing"),
    ("[input]", "series_resistance_ohm", r#""abc""#, "a resistance in ohms, at least 0.000001"),
    ("[input]", "series_resistance_ohm", r#""12""#, "write it without quotes"),
    ("[input]", "series_resistance_ohm", "true", "a resistance in ohms, at least 0.000001"),
    ("[input]", "series_resistance_ohm", "[1, 2]", "a resistance in ohms, at least 0.000001"),
    ("[input]", "series_resistance_ohm", "nan", "a resistance in ohms, at least 0.000001"),
    ("[input]", "series_resistance_ohm", "inf", "a resistance in ohms, at least 0.000001"),
    ("[input]", "series_resistance_ohm", "-inf", "a resistance in ohms, at least 0.000001"),
    ("[input]", "series_resistance_ohm", "1e300", "a resistance in ohms, at least 0.000001"),
    ("[input]", "series_resistance_ohm", "-1e300", "a resistance in ohms, at least 0.000001"),
    ("[input]", "series_resistance_ohm", "-1", "a resistance in ohms, at least 0.000001"),
    ("[input]", "series_resistance_ohm", "0", "a resistance in ohms, at least 0.000001"),
    ("[input]", "series_resistance_ohm", "99999999999999999999", "a resistance in ohms, at least 0.000001"),
    ("[input]", "bridge_surge_a", r#""abc""#, "a current in amperes"),
    ("[input]", "bridge_surge_a", r#""12""#, "write it without quotes"),
    ("[input]", "bridge_surge_a", "true", "a current in amperes"),
    ("[input]", "bridge_surge_a", "[1, 2]", "a current in amperes"),
    ("[input]", "bridge_surge_a", "nan", "a current in amperes"),
    ("[input]", "bridge_surge_a", "inf", "a current in amperes"),
    ("[input]", "bridge_surge_a", "-inf", "a current in amperes"),
    ("[input]", "bridge_surge_a", "1e300", "a current in amperes"),
    ("[input]", "bridge_surge_a", "-1e300", "a current in amperes"),
    ("[input]", "bridge_surge_a", "-1", "a current in amperes"),
    ("[input]", "bridge_surge_a", "0", "a current in amperes"),
    ("[input]", "bridge_surge_a", "99999999999999999999", "a current in amperes"),
    ("[input]", "bridge_drop_v", r#""abc""#, "the total forward drop of two bridge diodes"),
    ("[input]", "bridge_drop_v", r#""12""#, "write it without quotes"),
    ("[input]", "bridge_drop_v", "true", "the total forward drop of two bridge diodes"),
    ("[input]", "bridge_drop_v", "[1, 2]", "the total forward drop of two bridge diodes"),
    ("[input]", "bridge_drop_v", "nan", "the total forward drop of two bridge diodes"),
    ("[input]", "bridge_drop_v", "inf", "the total forward drop of two bridge diodes"),
    ("[input]", "bridge_drop_v", "-inf", "the total forward drop of two bridge diodes"),
    ("[input]", "bridge_drop_v", "1e300", "the total forward drop of two bridge diodes"),
    ("[input]", "bridge_drop_v", "-1e300", "the total forward drop of two bridge diodes"),
    ("[input]", "bridge_drop_v", "-1", "the total forward drop of two bridge diodes"),
    ("[input]", "bridge_drop_v", "99999999999999999999", "the total forward drop of two bridge diodes"),
    ("[input]", "x_capacitance_uf", r#""abc""#, "a capacitance in microfarads, 0 or more"),
    ("[input]", "x_capacitance_uf", r#""12""#, "write it without quotes"),
    ("[input]", "x_capacitance_uf", "true", "a capacitance in microfarads, 0 or more"),
    ("[input]", "x_capacitance_uf", "[1, 2]", "a capacitance in microfarads, 0 or more"),
    ("[input]", "x_capacitance_uf", "nan", "a capacitance in microfarads, 0 or more"),
    ("[input]", "x_capacitance_uf", "inf", "a capacitance in microfarads, 0 or more"),
    ("[input]", "x_capacitance_uf", "-inf", "a capacitance in microfarads, 0 or more"),
    ("[input]", "x_capacitance_uf", "1e300", "a capacitance in microfarads, 0 or more"),
    ("[input]", "x_capacitance_uf", "-1e300", "a capacitance in microfarads, 0 or more"),
    ("[input]", "x_capacitance_uf", "-1", "a capacitance in microfarads, 0 or more"),
    ("[input]", "x_capacitance_uf", "99999999999999999999", "a capacitance in microfarads, 0 or more"),
    ("[input]", "bleeder_ohm", r#""abc""#, "a resistance in ohms, above 0"),
    ("[input]", "bleeder_ohm", r#""12""#, "write it without quotes"),
    ("[input]", "bleeder_ohm", "true", "a resistance in ohms, above 0"),
    ("[input]", "bleeder_ohm", "[1, 2]", "a resistance in ohms, above 0"),
    ("[input]", "bleeder_ohm", "nan", "a resistance in ohms, above 0"),
    ("[input]", "bleeder_ohm", "inf", "a resistance in ohms, above 0"),
    ("[input]", "bleeder_ohm", "-inf", "a resistance in ohms, above 0"),
    ("[input]", "bleeder_ohm", "1e300", "a resistance in ohms, above 0"),
    ("[input]", "bleeder_ohm", "-1e300", "a resistance in ohms, above 0"),
    ("[input]", "bleeder_ohm", "-1", "a resistance in ohms, above 0"),
    ("[input]", "bleeder_ohm", "0", "a resistance in ohms, above 0"),
    ("[input]", "bleeder_ohm", "99999999999999999999", "a resistance in ohms, above 0"),
    ("[input]", "bleeder_fault_tolerant", r#""yes""#, "expected true or false"),
    ("[input]", "bleeder_fault_tolerant", "1", "expected true or false"),
    ("[input]", "connection", "5", "\"industrial-plug\""),
    ("[input]", "connection", r#""""#, "\"industrial-plug\""),
    ("[input]", "connection", r#""bogus""#, "\"industrial-plug\""),
    ("[input]", "connection", "<long-string>", "\"industrial-plug\""),
    ("[input]", "connection", r#""plugg""#, "did you mean"),
    ("[input]", "prospective_fault_a", r#""abc""#, "in amperes, above 0"),
    ("[input]", "prospective_fault_a", r#""12""#, "write it without quotes"),
    ("[input]", "prospective_fault_a", "true", "in amperes, above 0"),
    ("[input]", "prospective_fault_a", "[1, 2]", "in amperes, above 0"),
    ("[input]", "prospective_fault_a", "nan", "in amperes, above 0"),
    ("[input]", "prospective_fault_a", "inf", "in amperes, above 0"),
    ("[input]", "prospective_fault_a", "-inf", "in amperes, above 0"),
    ("[input]", "prospective_fault_a", "1e300", "in amperes, above 0"),
    ("[input]", "prospective_fault_a", "-1e300", "in amperes, above 0"),
    ("[input]", "prospective_fault_a", "-1", "in amperes, above 0"),
    ("[input]", "prospective_fault_a", "0", "in amperes, above 0"),
    ("[input]", "prospective_fault_a", "99999999999999999999", "in amperes, above 0"),
    ("[input]", "end_product_standard", "5", "expected a string"),
    ("[input]", "end_product_standard", "true", "expected a string"),
    ("[input]", "end_product_standard", r#""""#, "is empty"),
    ("[input]", "end_product_standard", r#""   ""#, "is empty"),
    ("[input]", "end_product_standard", "<long-string>", "longer than 4000 characters"),
    ("[input]", "bulk_rated_v", r#""abc""#, "a rated voltage in volts"),
    ("[input]", "bulk_rated_v", "true", "a rated voltage in volts"),
    ("[input]", "bulk_rated_v", "nan", "a rated voltage in volts"),
    ("[input]", "bulk_rated_v", "inf", "a rated voltage in volts"),
    ("[input]", "bulk_rated_v", "-1", "a rated voltage in volts"),
    ("[input]", "bulk_rated_v", "0", "a rated voltage in volts"),
    ("[input]", "bulk_rated_v", "1e300", "a rated voltage in volts"),
    ("[input]", "bulk_rated_v", r#""12""#, "write it without quotes"),
    ("[input]", "highest_rated_v", r#""abc""#, "a rated voltage in volts"),
    ("[input]", "highest_rated_v", "true", "a rated voltage in volts"),
    ("[input]", "highest_rated_v", "nan", "a rated voltage in volts"),
    ("[input]", "highest_rated_v", "inf", "a rated voltage in volts"),
    ("[input]", "highest_rated_v", "-1", "a rated voltage in volts"),
    ("[input]", "highest_rated_v", "0", "a rated voltage in volts"),
    ("[input]", "highest_rated_v", "1e300", "a rated voltage in volts"),
    ("[input]", "highest_rated_v", r#""12""#, "write it without quotes"),
    ("[input]", "hand_held", r#""yes""#, "expected true or false"),
    ("[input]", "hand_held", "1", "expected true or false"),
    ("[input]", "min_frequency_hz", r#""abc""#, "a mains frequency in hertz"),
    ("[input]", "min_frequency_hz", r#""12""#, "write it without quotes"),
    ("[input]", "min_frequency_hz", "true", "a mains frequency in hertz"),
    ("[input]", "min_frequency_hz", "[1, 2]", "a mains frequency in hertz"),
    ("[input]", "min_frequency_hz", "nan", "a mains frequency in hertz"),
    ("[input]", "min_frequency_hz", "inf", "a mains frequency in hertz"),
    ("[input]", "min_frequency_hz", "-inf", "a mains frequency in hertz"),
    ("[input]", "min_frequency_hz", "1e300", "a mains frequency in hertz"),
    ("[input]", "min_frequency_hz", "-1e300", "a mains frequency in hertz"),
    ("[input]", "min_frequency_hz", "-1", "a mains frequency in hertz"),
    ("[input]", "min_frequency_hz", "0", "a mains frequency in hertz"),
    ("[input]", "min_frequency_hz", "99999999999999999999", "a mains frequency in hertz"),
    ("[input]", "max_frequency_hz", r#""abc""#, "a mains frequency in hertz"),
    ("[input]", "max_frequency_hz", r#""12""#, "write it without quotes"),
    ("[input]", "max_frequency_hz", "true", "a mains frequency in hertz"),
    ("[input]", "max_frequency_hz", "[1, 2]", "a mains frequency in hertz"),
    ("[input]", "max_frequency_hz", "nan", "a mains frequency in hertz"),
    ("[input]", "max_frequency_hz", "inf", "a mains frequency in hertz"),
    ("[input]", "max_frequency_hz", "-inf", "a mains frequency in hertz"),
    ("[input]", "max_frequency_hz", "1e300", "a mains frequency in hertz"),
    ("[input]", "max_frequency_hz", "-1e300", "a mains frequency in hertz"),
    ("[input]", "max_frequency_hz", "-1", "a mains frequency in hertz"),
    ("[input]", "max_frequency_hz", "0", "a mains frequency in hertz"),
    ("[input]", "max_frequency_hz", "99999999999999999999", "a mains frequency in hertz"),
    ("[input.limiter]", "kind", "<remove>", "missing"),
    ("[input.limiter]", "kind", "5", "\"ntc\", \"resistor\" or \"none\""),
    ("[input.limiter]", "kind", r#""""#, "\"ntc\", \"resistor\" or \"none\""),
    ("[input.limiter]", "kind", r#""bogus""#, "\"ntc\", \"resistor\" or \"none\""),
    ("[input.limiter]", "kind", "<long-string>", "\"ntc\", \"resistor\" or \"none\""),
    ("[input.limiter]", "kind", r#""ntcc""#, "did you mean"),
    ("[input.limiter]", "cold_ohm", "<remove>", "missing"),
    ("[input.limiter]", "cold_ohm", r#""abc""#, "a resistance in ohms, above 0"),
    ("[input.limiter]", "cold_ohm", r#""12""#, "write it without quotes"),
    ("[input.limiter]", "cold_ohm", "true", "a resistance in ohms, above 0"),
    ("[input.limiter]", "cold_ohm", "[1, 2]", "a resistance in ohms, above 0"),
    ("[input.limiter]", "cold_ohm", "nan", "a resistance in ohms, above 0"),
    ("[input.limiter]", "cold_ohm", "inf", "a resistance in ohms, above 0"),
    ("[input.limiter]", "cold_ohm", "-inf", "a resistance in ohms, above 0"),
    ("[input.limiter]", "cold_ohm", "1e300", "a resistance in ohms, above 0"),
    ("[input.limiter]", "cold_ohm", "-1e300", "a resistance in ohms, above 0"),
    ("[input.limiter]", "cold_ohm", "-1", "a resistance in ohms, above 0"),
    ("[input.limiter]", "cold_ohm", "0", "a resistance in ohms, above 0"),
    ("[input.limiter]", "cold_ohm", "99999999999999999999", "a resistance in ohms, above 0"),
    ("[input.limiter]", "hot_ohm", "<remove>", "missing"),
    ("[input.limiter]", "hot_ohm", r#""abc""#, "a resistance in ohms, above 0"),
    ("[input.limiter]", "hot_ohm", r#""12""#, "write it without quotes"),
    ("[input.limiter]", "hot_ohm", "true", "a resistance in ohms, above 0"),
    ("[input.limiter]", "hot_ohm", "[1, 2]", "a resistance in ohms, above 0"),
    ("[input.limiter]", "hot_ohm", "nan", "a resistance in ohms, above 0"),
    ("[input.limiter]", "hot_ohm", "inf", "a resistance in ohms, above 0"),
    ("[input.limiter]", "hot_ohm", "-inf", "a resistance in ohms, above 0"),
    ("[input.limiter]", "hot_ohm", "1e300", "a resistance in ohms, above 0"),
    ("[input.limiter]", "hot_ohm", "-1e300", "a resistance in ohms, above 0"),
    ("[input.limiter]", "hot_ohm", "-1", "a resistance in ohms, above 0"),
    ("[input.limiter]", "hot_ohm", "0", "a resistance in ohms, above 0"),
    ("[input.limiter]", "hot_ohm", "99999999999999999999", "a resistance in ohms, above 0"),
    ("[input.limiter]", "energy_rating_j", r#""abc""#, "an energy in joules"),
    ("[input.limiter]", "energy_rating_j", r#""12""#, "write it without quotes"),
    ("[input.limiter]", "energy_rating_j", "true", "an energy in joules"),
    ("[input.limiter]", "energy_rating_j", "[1, 2]", "an energy in joules"),
    ("[input.limiter]", "energy_rating_j", "nan", "an energy in joules"),
    ("[input.limiter]", "energy_rating_j", "inf", "an energy in joules"),
    ("[input.limiter]", "energy_rating_j", "-inf", "an energy in joules"),
    ("[input.limiter]", "energy_rating_j", "1e300", "an energy in joules"),
    ("[input.limiter]", "energy_rating_j", "-1e300", "an energy in joules"),
    ("[input.limiter]", "energy_rating_j", "-1", "an energy in joules"),
    ("[input.limiter]", "energy_rating_j", "0", "an energy in joules"),
    ("[input.limiter]", "energy_rating_j", "99999999999999999999", "an energy in joules"),
    ("[input.fuse]", "rated_a", r#""abc""#, "a rated current in amperes"),
    ("[input.fuse]", "rated_a", r#""12""#, "write it without quotes"),
    ("[input.fuse]", "rated_a", "true", "a rated current in amperes"),
    ("[input.fuse]", "rated_a", "[1, 2]", "a rated current in amperes"),
    ("[input.fuse]", "rated_a", "nan", "a rated current in amperes"),
    ("[input.fuse]", "rated_a", "inf", "a rated current in amperes"),
    ("[input.fuse]", "rated_a", "-inf", "a rated current in amperes"),
    ("[input.fuse]", "rated_a", "1e300", "a rated current in amperes"),
    ("[input.fuse]", "rated_a", "-1e300", "a rated current in amperes"),
    ("[input.fuse]", "rated_a", "-1", "a rated current in amperes"),
    ("[input.fuse]", "rated_a", "0", "a rated current in amperes"),
    ("[input.fuse]", "rated_a", "99999999999999999999", "a rated current in amperes"),
    ("[input.fuse]", "melting_i2t_a2s", r#""abc""#, "a melting I2t in A2s"),
    ("[input.fuse]", "melting_i2t_a2s", r#""12""#, "write it without quotes"),
    ("[input.fuse]", "melting_i2t_a2s", "true", "a melting I2t in A2s"),
    ("[input.fuse]", "melting_i2t_a2s", "[1, 2]", "a melting I2t in A2s"),
    ("[input.fuse]", "melting_i2t_a2s", "nan", "a melting I2t in A2s"),
    ("[input.fuse]", "melting_i2t_a2s", "inf", "a melting I2t in A2s"),
    ("[input.fuse]", "melting_i2t_a2s", "-inf", "a melting I2t in A2s"),
    ("[input.fuse]", "melting_i2t_a2s", "1e300", "a melting I2t in A2s"),
    ("[input.fuse]", "melting_i2t_a2s", "-1e300", "a melting I2t in A2s"),
    ("[input.fuse]", "melting_i2t_a2s", "-1", "a melting I2t in A2s"),
    ("[input.fuse]", "melting_i2t_a2s", "0", "a melting I2t in A2s"),
    ("[input.fuse]", "melting_i2t_a2s", "99999999999999999999", "a melting I2t in A2s"),
    ("[input.fuse]", "breaking_a", r#""abc""#, "a breaking capacity in amperes"),
    ("[input.fuse]", "breaking_a", r#""12""#, "write it without quotes"),
    ("[input.fuse]", "breaking_a", "true", "a breaking capacity in amperes"),
    ("[input.fuse]", "breaking_a", "[1, 2]", "a breaking capacity in amperes"),
    ("[input.fuse]", "breaking_a", "nan", "a breaking capacity in amperes"),
    ("[input.fuse]", "breaking_a", "inf", "a breaking capacity in amperes"),
    ("[input.fuse]", "breaking_a", "-inf", "a breaking capacity in amperes"),
    ("[input.fuse]", "breaking_a", "1e300", "a breaking capacity in amperes"),
    ("[input.fuse]", "breaking_a", "-1e300", "a breaking capacity in amperes"),
    ("[input.fuse]", "breaking_a", "-1", "a breaking capacity in amperes"),
    ("[input.fuse]", "breaking_a", "0", "a breaking capacity in amperes"),
    ("[input.fuse]", "breaking_a", "99999999999999999999", "a breaking capacity in amperes"),
    ("[input.fuse]", "rated_v", r#""abc""#, "a rated voltage in volts"),
    ("[input.fuse]", "rated_v", r#""12""#, "write it without quotes"),
    ("[input.fuse]", "rated_v", "true", "a rated voltage in volts"),
    ("[input.fuse]", "rated_v", "[1, 2]", "a rated voltage in volts"),
    ("[input.fuse]", "rated_v", "nan", "a rated voltage in volts"),
    ("[input.fuse]", "rated_v", "inf", "a rated voltage in volts"),
    ("[input.fuse]", "rated_v", "-inf", "a rated voltage in volts"),
    ("[input.fuse]", "rated_v", "1e300", "a rated voltage in volts"),
    ("[input.fuse]", "rated_v", "-1e300", "a rated voltage in volts"),
    ("[input.fuse]", "rated_v", "-1", "a rated voltage in volts"),
    ("[input.fuse]", "rated_v", "0", "a rated voltage in volts"),
    ("[input.fuse]", "rated_v", "99999999999999999999", "a rated voltage in volts"),
    ("[input.fuse]", "speed", "5", "\"fast\" or \"time-lag\""),
    ("[input.fuse]", "speed", r#""""#, "\"fast\" or \"time-lag\""),
    ("[input.fuse]", "speed", r#""bogus""#, "\"fast\" or \"time-lag\""),
    ("[input.fuse]", "speed", "<long-string>", "\"fast\" or \"time-lag\""),
    ("[input.fuse]", "speed", r#""timelag""#, "did you mean"),
    ("[converter]", "output_w", "<remove>", "missing"),
    ("[converter]", "output_w", r#""abc""#, "an output power in watts"),
    ("[converter]", "output_w", r#""12""#, "write it without quotes"),
    ("[converter]", "output_w", "true", "an output power in watts"),
    ("[converter]", "output_w", "[1, 2]", "an output power in watts"),
    ("[converter]", "output_w", "nan", "an output power in watts"),
    ("[converter]", "output_w", "inf", "an output power in watts"),
    ("[converter]", "output_w", "-inf", "an output power in watts"),
    ("[converter]", "output_w", "1e300", "an output power in watts"),
    ("[converter]", "output_w", "-1e300", "an output power in watts"),
    ("[converter]", "output_w", "-1", "an output power in watts"),
    ("[converter]", "output_w", "0", "an output power in watts"),
    ("[converter]", "output_w", "99999999999999999999", "an output power in watts"),
    ("[converter]", "efficiency", "<remove>", "missing"),
    ("[converter]", "efficiency", r#""abc""#, "an efficiency as a fraction"),
    ("[converter]", "efficiency", r#""12""#, "write it without quotes"),
    ("[converter]", "efficiency", "true", "an efficiency as a fraction"),
    ("[converter]", "efficiency", "[1, 2]", "an efficiency as a fraction"),
    ("[converter]", "efficiency", "nan", "an efficiency as a fraction"),
    ("[converter]", "efficiency", "inf", "an efficiency as a fraction"),
    ("[converter]", "efficiency", "-inf", "an efficiency as a fraction"),
    ("[converter]", "efficiency", "1e300", "an efficiency as a fraction"),
    ("[converter]", "efficiency", "-1e300", "an efficiency as a fraction"),
    ("[converter]", "efficiency", "-1", "an efficiency as a fraction"),
    ("[converter]", "efficiency", "0", "an efficiency as a fraction"),
    ("[converter]", "efficiency", "99999999999999999999", "an efficiency as a fraction"),
    ("[converter]", "efficiency", "86", "an efficiency as a fraction"),
    ("[converter]", "min_bulk_v", "<remove>", "missing"),
    ("[converter]", "min_bulk_v", r#""abc""#, "the lowest bulk voltage"),
    ("[converter]", "min_bulk_v", r#""12""#, "write it without quotes"),
    ("[converter]", "min_bulk_v", "true", "the lowest bulk voltage"),
    ("[converter]", "min_bulk_v", "[1, 2]", "the lowest bulk voltage"),
    ("[converter]", "min_bulk_v", "nan", "the lowest bulk voltage"),
    ("[converter]", "min_bulk_v", "inf", "the lowest bulk voltage"),
    ("[converter]", "min_bulk_v", "-inf", "the lowest bulk voltage"),
    ("[converter]", "min_bulk_v", "1e300", "the lowest bulk voltage"),
    ("[converter]", "min_bulk_v", "-1e300", "the lowest bulk voltage"),
    ("[converter]", "min_bulk_v", "-1", "the lowest bulk voltage"),
    ("[converter]", "min_bulk_v", "0", "the lowest bulk voltage"),
    ("[converter]", "min_bulk_v", "99999999999999999999", "the lowest bulk voltage"),
    ("[converter]", "switching_hz", "<remove>", "missing"),
    ("[converter]", "switching_hz", r#""abc""#, "a switching frequency in hertz"),
    ("[converter]", "switching_hz", r#""12""#, "write it without quotes"),
    ("[converter]", "switching_hz", "true", "a switching frequency in hertz"),
    ("[converter]", "switching_hz", "[1, 2]", "a switching frequency in hertz"),
    ("[converter]", "switching_hz", "nan", "a switching frequency in hertz"),
    ("[converter]", "switching_hz", "inf", "a switching frequency in hertz"),
    ("[converter]", "switching_hz", "-inf", "a switching frequency in hertz"),
    ("[converter]", "switching_hz", "1e300", "a switching frequency in hertz"),
    ("[converter]", "switching_hz", "-1e300", "a switching frequency in hertz"),
    ("[converter]", "switching_hz", "-1", "a switching frequency in hertz"),
    ("[converter]", "switching_hz", "0", "a switching frequency in hertz"),
    ("[converter]", "switching_hz", "99999999999999999999", "a switching frequency in hertz"),
    ("[converter]", "max_duty", "<remove>", "missing"),
    ("[converter]", "max_duty", r#""abc""#, "a duty cycle as a fraction"),
    ("[converter]", "max_duty", r#""12""#, "write it without quotes"),
    ("[converter]", "max_duty", "true", "a duty cycle as a fraction"),
    ("[converter]", "max_duty", "[1, 2]", "a duty cycle as a fraction"),
    ("[converter]", "max_duty", "nan", "a duty cycle as a fraction"),
    ("[converter]", "max_duty", "inf", "a duty cycle as a fraction"),
    ("[converter]", "max_duty", "-inf", "a duty cycle as a fraction"),
    ("[converter]", "max_duty", "1e300", "a duty cycle as a fraction"),
    ("[converter]", "max_duty", "-1e300", "a duty cycle as a fraction"),
    ("[converter]", "max_duty", "-1", "a duty cycle as a fraction"),
    ("[converter]", "pfc_stage", r#""yes""#, "expected true or false"),
    ("[converter]", "pfc_stage", "1", "expected true or false"),
    ("[converter]", "max_duty", "0", "a duty cycle as a fraction"),
    ("[converter]", "max_duty", "99999999999999999999", "a duty cycle as a fraction"),
    ("[converter]", "max_duty", "45", "a duty cycle as a fraction"),
    ("[emc]", "limit_class", "5", "\"A\" or \"B\""),
    ("[emc]", "limit_class", r#""""#, "\"A\" or \"B\""),
    ("[emc]", "limit_class", r#""bogus""#, "\"A\" or \"B\""),
    ("[emc]", "limit_class", "<long-string>", "\"A\" or \"B\""),
    ("[emc]", "limit_class", r#""b""#, "did you mean"),
    ("[emc]", "margin_db", r#""abc""#, "a margin in dB"),
    ("[emc]", "margin_db", r#""12""#, "write it without quotes"),
    ("[emc]", "margin_db", "true", "a margin in dB"),
    ("[emc]", "margin_db", "[1, 2]", "a margin in dB"),
    ("[emc]", "margin_db", "nan", "a margin in dB"),
    ("[emc]", "margin_db", "inf", "a margin in dB"),
    ("[emc]", "margin_db", "-inf", "a margin in dB"),
    ("[emc]", "margin_db", "1e300", "a margin in dB"),
    ("[emc]", "margin_db", "-1e300", "a margin in dB"),
    ("[emc]", "margin_db", "-1", "a margin in dB"),
    ("[emc]", "margin_db", "99999999999999999999", "a margin in dB"),
    ("[emc]", "parasitic_capacitance_pf", r#""abc""#, "a capacitance in picofarads"),
    ("[emc]", "parasitic_capacitance_pf", r#""12""#, "write it without quotes"),
    ("[emc]", "parasitic_capacitance_pf", "true", "a capacitance in picofarads"),
    ("[emc]", "parasitic_capacitance_pf", "[1, 2]", "a capacitance in picofarads"),
    ("[emc]", "parasitic_capacitance_pf", "nan", "a capacitance in picofarads"),
    ("[emc]", "parasitic_capacitance_pf", "inf", "a capacitance in picofarads"),
    ("[emc]", "parasitic_capacitance_pf", "-inf", "a capacitance in picofarads"),
    ("[emc]", "parasitic_capacitance_pf", "1e300", "a capacitance in picofarads"),
    ("[emc]", "parasitic_capacitance_pf", "-1e300", "a capacitance in picofarads"),
    ("[emc]", "parasitic_capacitance_pf", "-1", "a capacitance in picofarads"),
    ("[emc]", "parasitic_capacitance_pf", "0", "a capacitance in picofarads"),
    ("[emc]", "parasitic_capacitance_pf", "99999999999999999999", "a capacitance in picofarads"),
    ("[emc]", "switch_node_rise_time_ns", r#""abc""#, "a rise time in nanoseconds"),
    ("[emc]", "switch_node_rise_time_ns", "true", "a rise time in nanoseconds"),
    ("[emc]", "switch_node_rise_time_ns", "nan", "a rise time in nanoseconds"),
    ("[emc]", "switch_node_rise_time_ns", "inf", "a rise time in nanoseconds"),
    ("[emc]", "switch_node_rise_time_ns", "-1", "a rise time in nanoseconds"),
    ("[emc]", "switch_node_rise_time_ns", "0", "a rise time in nanoseconds"),
    ("[emc]", "switch_node_rise_time_ns", "1e300", "a rise time in nanoseconds"),
    ("[emc]", "switch_node_swing_v", r#""abc""#, "a voltage swing in volts"),
    ("[emc]", "switch_node_swing_v", r#""12""#, "write it without quotes"),
    ("[emc]", "switch_node_swing_v", "true", "a voltage swing in volts"),
    ("[emc]", "switch_node_swing_v", "[1, 2]", "a voltage swing in volts"),
    ("[emc]", "switch_node_swing_v", "nan", "a voltage swing in volts"),
    ("[emc]", "switch_node_swing_v", "inf", "a voltage swing in volts"),
    ("[emc]", "switch_node_swing_v", "-inf", "a voltage swing in volts"),
    ("[emc]", "switch_node_swing_v", "1e300", "a voltage swing in volts"),
    ("[emc]", "switch_node_swing_v", "-1e300", "a voltage swing in volts"),
    ("[emc]", "switch_node_swing_v", "-1", "a voltage swing in volts"),
    ("[emc]", "switch_node_swing_v", "0", "a voltage swing in volts"),
    ("[emc]", "switch_node_swing_v", "99999999999999999999", "a voltage swing in volts"),
    ("[[emc.prescan]]", "frequency_hz", "<remove>", "missing"),
    ("[[emc.prescan]]", "frequency_hz", r#""abc""#, "a frequency in hertz, above 0"),
    ("[[emc.prescan]]", "frequency_hz", r#""12""#, "write it without quotes"),
    ("[[emc.prescan]]", "frequency_hz", "true", "a frequency in hertz, above 0"),
    ("[[emc.prescan]]", "frequency_hz", "[1, 2]", "a frequency in hertz, above 0"),
    ("[[emc.prescan]]", "frequency_hz", "nan", "a frequency in hertz, above 0"),
    ("[[emc.prescan]]", "frequency_hz", "inf", "a frequency in hertz, above 0"),
    ("[[emc.prescan]]", "frequency_hz", "-inf", "a frequency in hertz, above 0"),
    ("[[emc.prescan]]", "frequency_hz", "1e300", "a frequency in hertz, above 0"),
    ("[[emc.prescan]]", "frequency_hz", "-1e300", "a frequency in hertz, above 0"),
    ("[[emc.prescan]]", "frequency_hz", "-1", "a frequency in hertz, above 0"),
    ("[[emc.prescan]]", "frequency_hz", "0", "a frequency in hertz, above 0"),
    ("[[emc.prescan]]", "frequency_hz", "99999999999999999999", "a frequency in hertz, above 0"),
    ("[[emc.prescan]]", "level_dbuv", "<remove>", "missing"),
    ("[[emc.prescan]]", "level_dbuv", r#""abc""#, "a level in dBuV, -100 to 250"),
    ("[[emc.prescan]]", "level_dbuv", r#""12""#, "write it without quotes"),
    ("[[emc.prescan]]", "level_dbuv", "true", "a level in dBuV, -100 to 250"),
    ("[[emc.prescan]]", "level_dbuv", "[1, 2]", "a level in dBuV, -100 to 250"),
    ("[[emc.prescan]]", "level_dbuv", "nan", "a level in dBuV, -100 to 250"),
    ("[[emc.prescan]]", "level_dbuv", "inf", "a level in dBuV, -100 to 250"),
    ("[[emc.prescan]]", "level_dbuv", "-inf", "a level in dBuV, -100 to 250"),
    ("[[emc.prescan]]", "level_dbuv", "1e300", "a level in dBuV, -100 to 250"),
    ("[[emc.prescan]]", "level_dbuv", "-1e300", "a level in dBuV, -100 to 250"),
    ("[[emc.prescan]]", "level_dbuv", "-1000", "a level in dBuV, -100 to 250"),
    ("[[emc.prescan]]", "level_dbuv", "99999999999999999999", "a level in dBuV, -100 to 250"),
    ("[[emc.prescan]]", "detector", "<remove>", "missing"),
    ("[[emc.prescan]]", "detector", "5", "\"quasi-peak\", \"average\" or \"peak\""),
    ("[[emc.prescan]]", "detector", r#""""#, "\"quasi-peak\", \"average\" or \"peak\""),
    ("[[emc.prescan]]", "detector", r#""bogus""#, "\"quasi-peak\", \"average\" or \"peak\""),
    ("[[emc.prescan]]", "detector", "<long-string>", "\"quasi-peak\", \"average\" or \"peak\""),
    ("[[emc.prescan]]", "detector", r#""quasipeak""#, "did you mean"),
    ("[emc.filter]", "dm_inductance_uh", r#""abc""#, "an inductance in microhenries"),
    ("[emc.filter]", "dm_inductance_uh", r#""12""#, "write it without quotes"),
    ("[emc.filter]", "dm_inductance_uh", "true", "an inductance in microhenries"),
    ("[emc.filter]", "dm_inductance_uh", "[1, 2]", "an inductance in microhenries"),
    ("[emc.filter]", "dm_inductance_uh", "nan", "an inductance in microhenries"),
    ("[emc.filter]", "dm_inductance_uh", "inf", "an inductance in microhenries"),
    ("[emc.filter]", "dm_inductance_uh", "-inf", "an inductance in microhenries"),
    ("[emc.filter]", "dm_inductance_uh", "1e300", "an inductance in microhenries"),
    ("[emc.filter]", "dm_inductance_uh", "-1e300", "an inductance in microhenries"),
    ("[emc.filter]", "dm_inductance_uh", "-1", "an inductance in microhenries"),
    ("[emc.filter]", "dm_inductance_uh", "0", "an inductance in microhenries"),
    ("[emc.filter]", "dm_inductance_uh", "99999999999999999999", "an inductance in microhenries"),
    ("[emc.filter]", "dm_inductor_resistance_ohm", r#""abc""#, "a resistance in ohms, above 0"),
    ("[emc.filter]", "dm_inductor_resistance_ohm", r#""12""#, "write it without quotes"),
    ("[emc.filter]", "dm_inductor_resistance_ohm", "true", "a resistance in ohms, above 0"),
    ("[emc.filter]", "dm_inductor_resistance_ohm", "[1, 2]", "a resistance in ohms, above 0"),
    ("[emc.filter]", "dm_inductor_resistance_ohm", "nan", "a resistance in ohms, above 0"),
    ("[emc.filter]", "dm_inductor_resistance_ohm", "inf", "a resistance in ohms, above 0"),
    ("[emc.filter]", "dm_inductor_resistance_ohm", "-inf", "a resistance in ohms, above 0"),
    ("[emc.filter]", "dm_inductor_resistance_ohm", "1e300", "a resistance in ohms, above 0"),
    ("[emc.filter]", "dm_inductor_resistance_ohm", "-1e300", "a resistance in ohms, above 0"),
    ("[emc.filter]", "dm_inductor_resistance_ohm", "-1", "a resistance in ohms, above 0"),
    ("[emc.filter]", "dm_inductor_resistance_ohm", "0", "a resistance in ohms, above 0"),
    ("[emc.filter]", "dm_inductor_resistance_ohm", "99999999999999999999", "a resistance in ohms, above 0"),
    ("[emc.filter]", "x_capacitance_uf", r#""abc""#, "a capacitance in microfarads, above 0"),
    ("[emc.filter]", "x_capacitance_uf", r#""12""#, "write it without quotes"),
    ("[emc.filter]", "x_capacitance_uf", "true", "a capacitance in microfarads, above 0"),
    ("[emc.filter]", "x_capacitance_uf", "[1, 2]", "a capacitance in microfarads, above 0"),
    ("[emc.filter]", "x_capacitance_uf", "nan", "a capacitance in microfarads, above 0"),
    ("[emc.filter]", "x_capacitance_uf", "inf", "a capacitance in microfarads, above 0"),
    ("[emc.filter]", "x_capacitance_uf", "-inf", "a capacitance in microfarads, above 0"),
    ("[emc.filter]", "x_capacitance_uf", "1e300", "a capacitance in microfarads, above 0"),
    ("[emc.filter]", "x_capacitance_uf", "-1e300", "a capacitance in microfarads, above 0"),
    ("[emc.filter]", "x_capacitance_uf", "-1", "a capacitance in microfarads, above 0"),
    ("[emc.filter]", "x_capacitance_uf", "0", "a capacitance in microfarads, above 0"),
    ("[emc.filter]", "x_capacitance_uf", "99999999999999999999", "a capacitance in microfarads, above 0"),
    ("[emc.filter]", "damping_resistance_ohm", r#""abc""#, "a resistance in ohms, above 0"),
    ("[emc.filter]", "damping_resistance_ohm", r#""12""#, "write it without quotes"),
    ("[emc.filter]", "damping_resistance_ohm", "true", "a resistance in ohms, above 0"),
    ("[emc.filter]", "damping_resistance_ohm", "[1, 2]", "a resistance in ohms, above 0"),
    ("[emc.filter]", "damping_resistance_ohm", "nan", "a resistance in ohms, above 0"),
    ("[emc.filter]", "damping_resistance_ohm", "inf", "a resistance in ohms, above 0"),
    ("[emc.filter]", "damping_resistance_ohm", "-inf", "a resistance in ohms, above 0"),
    ("[emc.filter]", "damping_resistance_ohm", "1e300", "a resistance in ohms, above 0"),
    ("[emc.filter]", "damping_resistance_ohm", "-1e300", "a resistance in ohms, above 0"),
    ("[emc.filter]", "damping_resistance_ohm", "-1", "a resistance in ohms, above 0"),
    ("[emc.filter]", "damping_resistance_ohm", "0", "a resistance in ohms, above 0"),
    ("[emc.filter]", "damping_resistance_ohm", "99999999999999999999", "a resistance in ohms, above 0"),
    ("[emc.filter]", "damping_capacitance_uf", r#""abc""#, "a capacitance in microfarads, above 0"),
    ("[emc.filter]", "damping_capacitance_uf", r#""12""#, "write it without quotes"),
    ("[emc.filter]", "damping_capacitance_uf", "true", "a capacitance in microfarads, above 0"),
    ("[emc.filter]", "damping_capacitance_uf", "[1, 2]", "a capacitance in microfarads, above 0"),
    ("[emc.filter]", "damping_capacitance_uf", "nan", "a capacitance in microfarads, above 0"),
    ("[emc.filter]", "damping_capacitance_uf", "inf", "a capacitance in microfarads, above 0"),
    ("[emc.filter]", "damping_capacitance_uf", "-inf", "a capacitance in microfarads, above 0"),
    ("[emc.filter]", "damping_capacitance_uf", "1e300", "a capacitance in microfarads, above 0"),
    ("[emc.filter]", "damping_capacitance_uf", "-1e300", "a capacitance in microfarads, above 0"),
    ("[emc.filter]", "damping_capacitance_uf", "-1", "a capacitance in microfarads, above 0"),
    ("[emc.filter]", "damping_capacitance_uf", "0", "a capacitance in microfarads, above 0"),
    ("[emc.filter]", "damping_capacitance_uf", "99999999999999999999", "a capacitance in microfarads, above 0"),
    ("[emc.filter]", "cm_inductance_mh", r#""abc""#, "an inductance in millihenries"),
    ("[emc.filter]", "cm_inductance_mh", r#""12""#, "write it without quotes"),
    ("[emc.filter]", "cm_inductance_mh", "true", "an inductance in millihenries"),
    ("[emc.filter]", "cm_inductance_mh", "[1, 2]", "an inductance in millihenries"),
    ("[emc.filter]", "cm_inductance_mh", "nan", "an inductance in millihenries"),
    ("[emc.filter]", "cm_inductance_mh", "inf", "an inductance in millihenries"),
    ("[emc.filter]", "cm_inductance_mh", "-inf", "an inductance in millihenries"),
    ("[emc.filter]", "cm_inductance_mh", "1e300", "an inductance in millihenries"),
    ("[emc.filter]", "cm_inductance_mh", "-1e300", "an inductance in millihenries"),
    ("[emc.filter]", "cm_inductance_mh", "-1", "an inductance in millihenries"),
    ("[emc.filter]", "cm_inductance_mh", "0", "an inductance in millihenries"),
    ("[emc.filter]", "cm_inductance_mh", "99999999999999999999", "an inductance in millihenries"),
    ("[emc.filter]", "y_capacitance_nf", r#""abc""#, "a capacitance in nanofarads"),
    ("[emc.filter]", "y_capacitance_nf", r#""12""#, "write it without quotes"),
    ("[emc.filter]", "y_capacitance_nf", "true", "a capacitance in nanofarads"),
    ("[emc.filter]", "y_capacitance_nf", "[1, 2]", "a capacitance in nanofarads"),
    ("[emc.filter]", "y_capacitance_nf", "nan", "a capacitance in nanofarads"),
    ("[emc.filter]", "y_capacitance_nf", "inf", "a capacitance in nanofarads"),
    ("[emc.filter]", "y_capacitance_nf", "-inf", "a capacitance in nanofarads"),
    ("[emc.filter]", "y_capacitance_nf", "1e300", "a capacitance in nanofarads"),
    ("[emc.filter]", "y_capacitance_nf", "-1e300", "a capacitance in nanofarads"),
    ("[emc.filter]", "y_capacitance_nf", "-1", "a capacitance in nanofarads"),
    ("[emc.filter]", "y_capacitance_nf", "0", "a capacitance in nanofarads"),
    ("[emc.filter]", "y_capacitance_nf", "99999999999999999999", "a capacitance in nanofarads"),
    ("[emc.filter]", "y_arrangement", "5", "\"each-line\" or \"single\""),
    ("[emc.filter]", "y_arrangement", r#""""#, "\"each-line\" or \"single\""),
    ("[emc.filter]", "y_arrangement", r#""bogus""#, "\"each-line\" or \"single\""),
    ("[emc.filter]", "y_arrangement", "<long-string>", "\"each-line\" or \"single\""),
    ("[emc.filter]", "y_arrangement", r#""singel""#, "did you mean"),
];

/// Cases that need a value of a key to be read against another key or a declaration:
/// duplicates, dangling references, values that contradict each other, and values a
/// rule table refuses (never extrapolated). Same form as `KEY_CASES`.
#[rustfmt::skip]
const CROSS_CASES: &[(&str, &str, &str, &str)] = &[
    // Duplicate ids: the message points at the second declaration.
    ("[[circuit]]#2", "id", r#""ac-input""#, "declared twice"),
    ("[[barrier]]#2", "id", r#""pri-sec""#, "declared twice"),
    ("[[part]]#2", "ref", r#""T1""#, "declared twice"),
    // Dangling references and malformed lists.
    ("[[barrier]]", "between", r#"["primary", "nowhere"]"#, "not declared"),
    ("[[barrier]]", "between", r#"["primary", "outptu"]"#, "did you mean \"output\""),
    ("[[barrier]]", "between", r#"["primary", "primary"]"#, "twice"),
    ("[[barrier]]", "between", r#"["primary"]"#, "expected exactly two circuit ids"),
    ("[[barrier]]", "between", r#"["primary", "output", "ac-input"]"#, "expected exactly two circuit ids"),
    ("[[barrier]]", "between", "[]", "expected exactly two circuit ids"),
    ("[[barrier]]", "bridged_by", r#"["T1", "U9"]"#, "not declared"),
    ("[[barrier]]", "bridged_by", r#"["T1", "T1"]"#, "listed twice"),
    ("[[barrier]]", "bridged_by", r#"["t1"]"#, "did you mean \"T1\""),
    // Values that contradict another key.
    ("[[barrier]]", "working_peak_v", "100", "never below the rms value"),
    ("[[barrier]]", "cti", "175", "both material_group"),
    ("[mains]", "max_v", "200", "below nominal_v"),
    ("[mains]", "min_v", "240", "above nominal_v"),
    ("[input.limiter]", "hot_ohm", "20", "falls as it warms"),
    ("[input]", "min_frequency_hz", "60\nmax_frequency_hz = 50", "above max_frequency_hz"),
    // Beyond a rule table: refused with the table's range, never extrapolated.
    ("[environment]", "altitude_m", "12000", "2000 to 10000 m"),
    ("[[barrier]]#2", "working_rms_v", "1200", "10 to 1000 V"),
    ("[[barrier]]", "transient_v", "100000", "0.33 to 100 kV"),
    ("[[emc.prescan]]", "frequency_hz", "100", "150 kHz to 30 MHz"),
    ("[[emc.prescan]]", "frequency_hz", "1e11", "150 kHz to 30 MHz"),
    ("[input]", "end_product_standard", r#""iec99999""#, "\"iec62368-1\""),
    // Unknown keys, one per table, with a suggestion.
    ("[design]", "nmae", r#""x""#, "did you mean `name`"),
    ("[environment]", "pollution_degre", "2", "did you mean `pollution_degree`"),
    ("[mains]", "nominal", "230", "did you mean `nominal_v`"),
    ("[[circuit]]", "accesible", "true", "did you mean `accessible`"),
    ("[[barrier]]", "clearance", "6.2", "did you mean `clearance_mm`"),
    ("[[part]]", "capacitance_uf", "1.0", "did you mean `capacitance_nf`"),
    ("[input]", "bulk_capacitance", "47", "did you mean `bulk_capacitance_uf`"),
    ("[input.limiter]", "cold_ohms", "10", "did you mean `cold_ohm`"),
    ("[input.fuse]", "rated_amps", "2", "did you mean `rated_a`"),
    ("[converter]", "efficency", "0.86", "did you mean `efficiency`"),
    ("[emc]", "limit", r#""B""#, "did you mean `limit_class`"),
    ("[[emc.prescan]]", "level_dbu", "90", "did you mean `level_dbuv`"),
    ("[emc.filter]", "y_capacitance_pf", "1000", "did you mean `y_capacitance_nf`"),
    ("[emc.filter]", "zzzz", "1", "known keys here"),
];

fn key_case(c: &(&str, &str, &str, &str)) -> Result<(), String> {
    let (section, key, value, expected) = *c;
    let (text, line) = edit(BASE, section, key, value);
    let what = format!(
        "{section} {key} = {}",
        value.chars().take(60).collect::<String>()
    );
    assert_project_refused(&what, text, Some(line), key, expected)
}

#[test]
fn every_bad_value_of_every_key_is_refused_with_file_line_key_and_expected_form() {
    let failures = run_parallel(KEY_CASES, key_case);
    report_failures("bad value of a key", KEY_CASES.len(), &failures);
}

#[test]
fn duplicates_dangling_references_and_contradictions_are_refused_at_their_line() {
    let failures = run_parallel(CROSS_CASES, key_case);
    report_failures("cross-key", CROSS_CASES.len(), &failures);
}

// ---------------------------------------------------------------------------------------
// 2. Plausible but suspicious values: a warning finding, never silence
// ---------------------------------------------------------------------------------------

/// (table, key, value above the plausible range but inside the hard limits). Each must be
/// accepted (exit 0 or 1) with an `input.suspicious_value` finding about that key and line.
#[rustfmt::skip]
const SUSPICIOUS_CASES: &[(&str, &str, &str)] = &[
    ("[mains]", "max_v", "1500"),
    ("[mains]", "frequency_hz", "1000"),
    ("[[barrier]]", "working_peak_v", "1500"),
    ("[[barrier]]", "transient_v", "15000"),
    ("[[barrier]]", "working_frequency_hz", "2e8"),
    ("[[barrier]]#3", "cti", "700"),
    ("[[barrier]]", "clearance_mm", "6000"),
    ("[[barrier]]", "creepage_mm", "6400"),
    ("[[barrier]]", "slot_width_mm", "50"),
    ("[[part]]#3", "capacitance_nf", "2e5"),
    ("[[part]]#3", "rated_ac_v", "5000"),
    ("[[part]]#3", "count_in_series", "5"),
    ("[[part]]#2", "isolation_test_v_rms", "30000"),
    ("[[part]]#2", "external_clearance_mm", "500"),
    ("[[part]]#2", "external_creepage_mm", "500"),
    ("[[part]]#2", "distance_through_insulation_mm", "20"),
    ("[[part]]", "tape_layers", "30"),
    ("[[part]]", "margin_mm", "500"),
    ("[[part]]", "hot_spot_c", "300"),
    ("[input]", "bulk_capacitance_uf", "20000"),
    ("[input]", "series_resistance_ohm", "200"),
    ("[input]", "bridge_surge_a", "20000"),
    ("[input]", "bridge_drop_v", "10"),
    ("[input]", "x_capacitance_uf", "20"),
    ("[input]", "bleeder_ohm", "1e10"),
    ("[input]", "prospective_fault_a", "2e5"),
    ("[input]", "max_frequency_hz", "500"),
    ("[input.limiter]", "cold_ohm", "20000"),
    ("[input.limiter]", "energy_rating_j", "2000"),
    ("[input.fuse]", "rated_a", "200"),
    ("[input.fuse]", "melting_i2t_a2s", "2e5"),
    ("[input.fuse]", "breaking_a", "2e5"),
    ("[input.fuse]", "rated_v", "2000"),
    ("[converter]", "output_w", "20000"),
    ("[converter]", "min_bulk_v", "2000"),
    ("[converter]", "switching_hz", "2e7"),
    ("[emc]", "margin_db", "30"),
    ("[emc]", "parasitic_capacitance_pf", "20000"),
    ("[emc]", "switch_node_rise_time_ns", "50000"),
    ("[input]", "bulk_rated_v", "5000"),
    ("[emc]", "switch_node_swing_v", "3000"),
    ("[[emc.prescan]]", "level_dbuv", "200"),
    ("[emc.filter]", "dm_inductance_uh", "2e5"),
    ("[emc.filter]", "dm_inductor_resistance_ohm", "2e4"),
    ("[emc.filter]", "x_capacitance_uf", "200"),
    ("[emc.filter]", "damping_resistance_ohm", "2e4"),
    ("[emc.filter]", "damping_capacitance_uf", "200"),
    ("[emc.filter]", "cm_inductance_mh", "300"),
    ("[emc.filter]", "y_capacitance_nf", "2000"),
];

/// Values written in the wrong unit by a factor of a million or more on the small side
/// (farads in a nanofarad key, farads in a microfarad key). Each would make a safety
/// figure look better than it is (touch current, X-capacitor discharge, inrush), so each
/// must at least be flagged as suspicious.
#[rustfmt::skip]
const TOO_SMALL_CASES: &[(&str, &str, &str)] = &[
    // 1 nF Y-capacitor written in farads: touch current becomes 1e-9 of its value.
    ("[[part]]#3", "capacitance_nf", "1e-9"),
    // 0.1 uF X-capacitor written in farads: no discharge resistor looks needed.
    ("[input]", "x_capacitance_uf", "1e-7"),
    // 47 uF bulk capacitor written in farads: the inrush I2t becomes a millionth.
    ("[input]", "bulk_capacitance_uf", "4.7e-5"),
    // 1 nF of Y-capacitance in the filter written in farads.
    ("[emc.filter]", "y_capacitance_nf", "1e-9"),
];

fn assert_warned(section: &str, key: &str, value: &str) -> Result<(), String> {
    // Under the IEC 60664-1 basics, whose tables reach furthest: the example names IEC
    // 62368-1, which refuses (exit 2) a 15 kV transient or a frequency above 30 kHz outright
    // (tests/it/standards.rs). The line stays, so the line numbers do too.
    let basics = BASE.replacen("standard = \"iec62368-1\"", "", 1);
    let (text, line) = edit(&basics, section, key, value);
    let what = format!("{section} {key} = {value}");
    let scratch = Scratch::new("suspicious");
    scratch.write("project.toml", text);
    let o = run_in(&scratch.0, &["check", "project.toml", "--format", "json"]);
    match o.status.code() {
        Some(0 | 1) => {}
        _ => return Err(format!("[{what}] expected exit 0 or 1\n{}", describe(&o))),
    }
    let report: Value = serde_json::from_slice(&o.stdout)
        .map_err(|e| format!("[{what}] stdout is not JSON: {e}\n{}", describe(&o)))?;
    let found = report["findings"].as_array().is_some_and(|findings| {
        findings.iter().any(|f| {
            f["id"] == "input.suspicious_value"
                && f["severity"] == "warning"
                && f["subject"].as_str().is_some_and(|s| s.ends_with(key))
                && f["message"]
                    .as_str()
                    .is_some_and(|m| m.contains(&format!("line {line},")))
        })
    });
    if found {
        Ok(())
    } else {
        Err(format!(
            "[{what}] no input.suspicious_value finding about {key} at line {line}; findings: {}",
            report["findings"]
        ))
    }
}

#[test]
fn plausible_but_suspicious_values_give_a_warning_finding_not_silence() {
    let failures = run_parallel(SUSPICIOUS_CASES, |(s, k, v)| assert_warned(s, k, v));
    report_failures("suspicious value", SUSPICIOUS_CASES.len(), &failures);
}

#[test]
fn values_a_million_times_too_small_are_flagged_as_suspicious() {
    let failures = run_parallel(TOO_SMALL_CASES, |(s, k, v)| assert_warned(s, k, v));
    report_failures(
        "too small by a unit factor",
        TOO_SMALL_CASES.len(),
        &failures,
    );
}

/// One quantity, one limit, whichever table the key is in. A capacitor across insulation
/// is picofarads to tens of nanofarads (IEC 60384-14 Y capacitors; common practice, no
/// published source for the bound), so 2 uF written as 2000 nF is most likely picofarads
/// meant, in a part as in the filter; 2 F (2e9 nF) is no such capacitor at all. A
/// resistance in the power or filter path above 1 Mohm (2e6 ohm) is refused in the filter
/// as in the inrush limiter (common practice, no published source).
#[test]
fn a_quantity_has_the_same_limits_in_every_table() {
    let warned: &[(&str, &str, &str)] = &[
        ("[[part]]#3", "capacitance_nf", "2000"),
        ("[emc.filter]", "y_capacitance_nf", "2000"),
    ];
    let mut failures = run_parallel(warned, |(s, k, v)| assert_warned(s, k, v));
    let refused: &[(&str, &str, &str, &str)] = &[
        (
            "[[part]]#3",
            "capacitance_nf",
            "2e9",
            "a capacitance in nanofarads",
        ),
        (
            "[emc.filter]",
            "y_capacitance_nf",
            "2e9",
            "a capacitance in nanofarads",
        ),
        (
            "[input.limiter]",
            "cold_ohm",
            "2e6",
            "a resistance in ohms, above 0",
        ),
        (
            "[emc.filter]",
            "damping_resistance_ohm",
            "2e6",
            "a resistance in ohms, above 0",
        ),
        (
            "[emc.filter]",
            "dm_inductor_resistance_ohm",
            "2e6",
            "a resistance in ohms, above 0",
        ),
    ];
    failures.extend(run_parallel(refused, key_case));
    report_failures("shared limit", warned.len() + refused.len(), &failures);
}

// ---------------------------------------------------------------------------------------
// 3. Whole files: shape, encoding, the file system
// ---------------------------------------------------------------------------------------

/// The base project without the table `header` (its header and keys, up to the next one).
fn without_table(base: &str, header: &str) -> String {
    let mut out = String::new();
    let mut skipping = false;
    for line in base.lines() {
        let t = line.split('#').next().unwrap_or("").trim();
        if t.starts_with('[') {
            skipping = t == header;
        }
        if !skipping {
            out.push_str(line);
            out.push('\n');
        }
    }
    out
}

/// (what, file text, line of the message or 0 for none, key, expected text)
fn shape_cases() -> Vec<(String, Vec<u8>, usize, String, String)> {
    let case = |what: &str, text: String, line: usize, key: &str, expected: &str| {
        (
            what.to_string(),
            text.into_bytes(),
            line,
            key.to_string(),
            expected.to_string(),
        )
    };
    let mut cases = vec![
        case("empty file", String::new(), 1, "design", "missing"),
        case(
            "only blanks",
            "\n   \n\t\n".to_string(),
            1,
            "mains",
            "missing",
        ),
        case(
            "only comments",
            "# a project\n# to come\n".to_string(),
            1,
            "circuit",
            "missing",
        ),
        case(
            "no [design]",
            without_table(BASE, "[design]"),
            1,
            "design",
            "missing",
        ),
        case(
            "no [mains]",
            without_table(BASE, "[mains]"),
            1,
            "mains",
            "missing",
        ),
        case(
            "design is a number",
            format!("design = 5\n{}", without_table(BASE, "[design]")),
            1,
            "design",
            "expected a table [design]",
        ),
        case(
            "circuit is a string",
            format!(
                "circuit = \"primary\"\n{}",
                without_table(BASE, "[[circuit]]")
            ),
            1,
            "circuit",
            "expected an array of tables [[circuit]]",
        ),
        case(
            "input is a list",
            format!(
                "input = [1, 2]\n{}",
                without_table(
                    without_table(without_table(BASE, "[input]").as_str(), "[input.limiter]")
                        .as_str(),
                    "[input.fuse]"
                )
            ),
            1,
            "input",
            "expected a table [input]",
        ),
        case(
            "emc is true",
            format!(
                "emc = true\n{}",
                without_table(
                    &without_table(&without_table(BASE, "[emc]"), "[[emc.prescan]]"),
                    "[emc.filter]"
                )
            ),
            1,
            "emc",
            "expected a table [emc]",
        ),
        case(
            "a circuit that is not a table",
            format!("circuit = [1]\n{}", without_table(BASE, "[[circuit]]")),
            1,
            "circuit[1]",
            "expected a table",
        ),
        case(
            "unknown top-level table",
            format!("{BASE}\n[desgin]\nname = \"x\"\n"),
            BASE.lines().count() + 2,
            "desgin",
            "did you mean `design`",
        ),
    ];
    // TOML syntax: the parser's own message, at the line where the parser sees the fault
    // (`lines_later`: a list or a key may run on, so some faults show on a later line).
    let syntax = |what: &str, section: &str, key: &str, value: &str, lines_later: usize| {
        let (text, line) = edit(BASE, section, key, value);
        let line = line + lines_later;
        (
            what.to_string(),
            text.into_bytes(),
            line,
            String::new(),
            "not valid TOML".to_string(),
        )
    };
    cases.push(syntax("unclosed string", "[design]", "revision", "\"B", 0));
    cases.push(syntax(
        "unclosed list",
        "[[barrier]]",
        "bridged_by",
        "[\"T1\", \"U3\"",
        1,
    ));
    cases.push(syntax("bare word", "[mains]", "nominal_v", "two-thirty", 0));
    cases.push(syntax("no value", "[mains]", "nominal_v", "", 0));
    cases.push(syntax(
        "duplicate key",
        "[mains]",
        "nominal_v",
        "230\nnominal_v = 240",
        1,
    ));
    cases.push(syntax(
        "NUL byte in a string",
        "[design]",
        "name",
        "\"Wall\u{0}adapter\"",
        0,
    ));
    {
        // A date is valid TOML, but not a number.
        let (text, line) = edit(BASE, "[mains]", "nominal_v", "1979-05-27");
        cases.push((
            "date for a number".to_string(),
            text.into_bytes(),
            line,
            "nominal_v".to_string(),
            "found datetime".to_string(),
        ));
    }
    {
        // A second [design] header: the line of the repeated header.
        let text = format!("{BASE}\n[design]\nname = \"again\"\n");
        let line = BASE.lines().count() + 2;
        cases.push((
            "table declared twice".to_string(),
            text.into_bytes(),
            line,
            String::new(),
            "not valid TOML".to_string(),
        ));
    }
    cases
}

#[test]
fn malformed_files_are_refused_with_file_line_and_what_is_missing() {
    let cases = shape_cases();
    let failures = run_parallel(&cases, |(what, text, line, key, expected)| {
        assert_project_refused(what, text, (*line > 0).then_some(*line), key, expected)
    });
    report_failures("malformed file", cases.len(), &failures);
}

#[test]
fn non_utf8_bytes_are_refused_naming_the_file_and_the_line() {
    // An invalid byte (0xFF) inside the design name, on line 6 of the base project.
    let (text, line) = edit(BASE, "[design]", "name", "\"Wall adapter XX\"");
    let bytes = text.replacen("XX", "\u{0}", 1).into_bytes();
    let bytes: Vec<u8> = bytes
        .into_iter()
        .map(|b| if b == 0 { 0xFF } else { b })
        .collect();
    let scratch = Scratch::new("utf8");
    scratch.write("project.toml", &bytes);
    let o = run_in(&scratch.0, &["check", "project.toml"]);
    refused(&o).unwrap();
    let err = stderr(&o);
    assert!(
        err.contains("UTF-8"),
        "the message does not say what is wrong\n{err}"
    );
    assert!(
        err.contains(&format!("project.toml:{line}:")),
        "the message does not give the line of the bad byte ({line})\n{err}"
    );
}

#[test]
fn a_missing_file_a_folder_and_an_unreadable_file_are_refused_naming_them() {
    let scratch = Scratch::new("files");
    // Missing.
    let o = run_in(&scratch.0, &["check", "nowhere.toml"]);
    refused(&o).unwrap();
    assert!(
        stderr(&o).contains("nowhere.toml: no such file"),
        "{}",
        describe(&o)
    );
    // A folder in place of a file, with a .toml name so that it is taken as one design.
    std::fs::create_dir(scratch.path("folder.toml")).unwrap();
    let o = run_in(&scratch.0, &["check", "folder.toml", "-o", "out.md"]);
    assert_ne!(o.status.code(), Some(0), "{}", describe(&o));
    assert!(!stderr(&o).contains("panicked"), "{}", describe(&o));
    assert!(!scratch.path("out.md").exists(), "a report was written");
}

/// Whether this process can read a file whose permissions forbid it (root can).
fn permissions_are_enforced(scratch: &Scratch) -> bool {
    use std::os::unix::fs::PermissionsExt;
    let probe = scratch.write("probe", "x");
    std::fs::set_permissions(&probe, std::fs::Permissions::from_mode(0o000)).unwrap();
    let enforced = std::fs::read(&probe).is_err();
    std::fs::set_permissions(&probe, std::fs::Permissions::from_mode(0o600)).unwrap();
    enforced
}

/// The user id and group id of `nobody` on Debian-like systems and most others.
const NOBODY: u32 = 65534;

/// Runs the binary in `dir` as a user for whom permissions count. Root (as in CI) reads
/// and writes whatever the permission bits say, so there the binary runs as `nobody`,
/// and `owned` (the scratch folder and what the test made in it) is given to `nobody`,
/// so that only the permission bits stand in the way, as for an ordinary user who owns
/// the files. Not root: runs as itself.
fn run_where_permissions_count(scratch: &Scratch, owned: &[&Path], args: &[&str]) -> Output {
    use std::os::unix::process::CommandExt;
    if permissions_are_enforced(scratch) {
        return run_in(&scratch.0, args);
    }
    for path in std::iter::once(scratch.0.as_path()).chain(owned.iter().copied()) {
        std::os::unix::fs::chown(path, Some(NOBODY), Some(NOBODY))
            .unwrap_or_else(|e| panic!("cannot give {} to nobody: {e}", path.display()));
    }
    std::process::Command::new(env!("CARGO_BIN_EXE_gapwarden"))
        .current_dir(&scratch.0)
        .args(args)
        .uid(NOBODY)
        .gid(NOBODY)
        .output()
        .expect("the binary could be started as nobody (uid 65534)")
}

#[test]
fn a_file_without_read_permission_is_refused_naming_it() {
    use std::os::unix::fs::PermissionsExt;
    let scratch = Scratch::new("perm");
    let path = scratch.write("project.toml", BASE);
    std::fs::set_permissions(&path, std::fs::Permissions::from_mode(0o000)).unwrap();
    let o = run_where_permissions_count(&scratch, &[&path], &["check", "project.toml"]);
    std::fs::set_permissions(&path, std::fs::Permissions::from_mode(0o600)).unwrap();
    refused(&o).unwrap();
    assert!(
        stderr(&o).contains("project.toml: permission denied"),
        "{}",
        describe(&o)
    );
}

#[test]
fn a_report_into_a_read_only_folder_fails_with_exit_2_and_leaves_nothing() {
    use std::os::unix::fs::PermissionsExt;
    let scratch = Scratch::new("readonly");
    let project = scratch.write("project.toml", BASE);
    let locked = scratch.path("locked");
    std::fs::create_dir(&locked).unwrap();
    std::fs::set_permissions(&locked, std::fs::Permissions::from_mode(0o500)).unwrap();
    let o = run_where_permissions_count(
        &scratch,
        &[&project, &locked],
        &["check", "project.toml", "-o", "locked/report.md"],
    );
    let left: Vec<_> = std::fs::read_dir(&locked).unwrap().collect();
    std::fs::set_permissions(&locked, std::fs::Permissions::from_mode(0o700)).unwrap();
    assert_eq!(o.status.code(), Some(2), "{}", describe(&o));
    assert!(stderr(&o).contains("locked/report.md"), "{}", describe(&o));
    assert!(
        left.is_empty(),
        "something was left in the read-only folder"
    );
}

// ---------------------------------------------------------------------------------------
// 4. Rule files in a house folder (`--rules DIR`)
// ---------------------------------------------------------------------------------------

/// A house table replacing the shipped altitude factors (invented figures; the example
/// design sits at 2000 m, so the run itself does not depend on them).
const HOUSE_ALTITUDE: &str = r#"id = "iec60664-1.altitude"
title = "House altitude factors"
source = "invented for the tests"
provenance = "House rule, no published source."
overrides = true
rows = [
  { altitude_m = 2000, factor = 1.00 },
  { altitude_m = 3000, factor = 1.14 },
  { altitude_m = 4000, factor = 1.29 },
]
"#;

/// A house table replacing the shipped minimum distances (all floors at 0 mm).
const HOUSE_MINIMUMS: &str = r#"id = "limits.minimum-distances"
title = "House minimum distances"
source = "invented for the tests"
provenance = "House rule, no published source."
overrides = true
clearance_mm = { functional = 0, basic = 0, supplementary = 0, reinforced = 0, double = 0 }
creepage_mm = { functional = 0, basic = 0, supplementary = 0, reinforced = 0, double = 0 }
"#;

/// A new house check (an invented policy).
const HOUSE_CHECK: &str = r#"id = "house.checks"
title = "House checks"
source = "invented for the tests"
provenance = "House rule, no published source."

[[check]]
id = "house.y_too_big"
title = "Y-capacitance within the house limit"
severity = "blocking"
over = "bridges"
applies = "item.kind == 'y-capacitor' and item.capacitance_nf is not none"
condition = "item.capacitance_nf > 1.0"
message = "{{ item.part }} is {{ item.capacitance_nf | num }} nF"
rationale = "A house limit."
source = "invented for the tests"
"#;

/// A house table replacing the capacitor subclasses (an invented, reduced copy).
const HOUSE_CAPACITORS: &str = r#"id = "iec60384-14.subclasses"
title = "House capacitor subclasses"
source = "invented for the tests"
provenance = "House rule, no published source."
overrides = true
subclasses = [
  { subclass = "X2", bridges = ["functional"], impulse_test_v = 2500 },
  { subclass = "Y1", bridges = ["functional", "basic", "supplementary", "reinforced", "double"], max_rated_ac_v = 500, impulse_test_v = 8000 },
  { subclass = "Y2", bridges = ["functional", "basic", "supplementary"], max_rated_ac_v = 300, impulse_test_v = 5000 },
]
series_count_for_reinforced = 2
"#;

/// One line per case: (file in the house folder, its base text, text to replace, the
/// replacement, line of the message, key it names, expected text).
#[rustfmt::skip]
const RULE_CASES: &[(&str, &str, &str, &str, usize, &str, &str)] = &[
    // Tables: a wrong type in a row, rows out of order, a negative figure, an unknown key.
    ("alt.toml", HOUSE_ALTITUDE, "factor = 1.14", "factor = \"x\"", 8, "factor", "invalid type"),
    ("alt.toml", HOUSE_ALTITUDE, "altitude_m = 3000, factor = 1.14", "altitude_m = 5000, factor = 1.14", 9, "altitude_m", "ascending"),
    ("alt.toml", HOUSE_ALTITUDE, "factor = 1.14", "factor = -1.14", 8, "factor", "at least 1"),
    ("alt.toml", HOUSE_ALTITUDE, "factor = 1.14 }", "factor = 1.14, fudge = 2 }", 8, "fudge", "unknown field"),
    ("alt.toml", HOUSE_ALTITUDE, "factor = 1.14", "factor = nan", 8, "factor", "at least 1"),
    ("alt.toml", HOUSE_ALTITUDE, "overrides = true\n", "overrides = true\ncolour = \"red\"\n", 6, "colour", "unknown field"),
    ("min.toml", HOUSE_MINIMUMS, "reinforced = 0, double = 0 }\ncreepage", "reinforced = -1, double = 0 }\ncreepage", 6, "clearance_mm", "0 or more"),
    ("min.toml", HOUSE_MINIMUMS, "reinforced = 0, double = 0 }\ncreepage", "reinforced = \"3\", double = 0 }\ncreepage", 6, "reinforced", "invalid type"),
    ("min.toml", HOUSE_MINIMUMS, "reinforced = 0, double = 0 }\ncreepage", "reinforced = inf, double = 0 }\ncreepage", 6, "reinforced", "finite"),
    ("min.toml", HOUSE_MINIMUMS, "basic = 0, supplementary = 0, reinforced = 0, double = 0 }\ncreepage", "basic = 0, reinforced = 0, double = 0 }\ncreepage", 6, "supplementary", "missing field"),
    ("cap.toml", HOUSE_CAPACITORS, "max_rated_ac_v = 500", "max_rated_ac_v = -500", 8, "max_rated_ac_v", "0 or more"),
    ("cap.toml", HOUSE_CAPACITORS, "max_rated_ac_v = 500", "max_rated_ac_v = nan", 8, "max_rated_ac_v", "finite"),
    ("cap.toml", HOUSE_CAPACITORS, "series_count_for_reinforced = 2", "series_count_for_reinforced = 0", 11, "series_count_for_reinforced", "at least"),
    ("cap.toml", HOUSE_CAPACITORS, "\"reinforced\", \"double\"]", "\"reinforcd\", \"double\"]", 8, "reinforcd", "not an insulation grade"),
    // The header every rule file carries.
    ("min.toml", HOUSE_MINIMUMS, "overrides = true\n", "", 1, "id", "already used"),
    ("min.toml", HOUSE_MINIMUMS, "overrides = true", "overrides = \"yes\"", 5, "overrides", "invalid type"),
    ("min.toml", HOUSE_MINIMUMS, "id = \"limits.minimum-distances\"", "id = \"house.nothing-to-override\"", 5, "overrides", "no loaded rule file"),
    ("min.toml", HOUSE_MINIMUMS, "provenance = \"House rule, no published source.\"\n", "", 1, "provenance", "missing field"),
    // Checks.
    ("checks/c.toml", HOUSE_CHECK, "severity = \"blocking\"", "severity = \"urgent\"", 6, "severity", "\"blocking\", \"warning\" or \"note\""),
    ("checks/c.toml", HOUSE_CHECK, "severity = \"blocking\"", "severity = 3", 9, "severity", "invalid type"),
    ("checks/c.toml", HOUSE_CHECK, "over = \"bridges\"", "over = \"bridge\"", 6, "over", "did you mean \"bridges\""),
    ("checks/c.toml", HOUSE_CHECK, "condition = \"item.capacitance_nf > 1.0\"", "condition = \"item.capacitance_nf >\"", 6, "condition", "cannot be read as an expression"),
    ("checks/c.toml", HOUSE_CHECK, "condition = \"item.capacitance_nf > 1.0\"", "condition = \"item.capacitnce_nf > 1.0\"", 6, "house.y_too_big", "does not exist"),
    ("checks/c.toml", HOUSE_CHECK, "condition = \"item.capacitance_nf > 1.0\"\n", "", 6, "condition", "is missing"),
    ("checks/c.toml", HOUSE_CHECK, "rationale = \"A house limit.\"", "rationale = \"A house limit.\"\ncolour = \"red\"", 15, "colour", "unknown field"),
    ("checks/c.toml", HOUSE_CHECK, "message = \"{{ item.part }} is", "message = \"{{ item.part is", 6, "message", "cannot be read as a template"),
    ("checks/c.toml", HOUSE_CHECK, "id = \"house.y_too_big\"", "id = \"input.suspicious_value\"", 6, "id", "already defined"),
    ("checks/c.toml", HOUSE_CHECK, "id = \"house.y_too_big\"", "id = \"house.y_too_big\"\noverrides = true", 6, "overrides", "no check \"house.y_too_big\""),
    // Whole files.
    ("empty.toml", "", "", "", 1, "", "missing field"),
];

fn rule_case(c: &(&str, &str, &str, &str, usize, &str, &str)) -> Result<(), String> {
    let (file, base, from, to, line, key, expected) = *c;
    assert!(
        from.is_empty() || base.contains(from),
        "case text {from:?} is not in the base of {file}"
    );
    let text = if from.is_empty() {
        base.to_string()
    } else {
        base.replacen(from, to, 1)
    };
    let scratch = Scratch::new("rules");
    scratch.write("project.toml", BASE);
    scratch.write(&format!("house/{file}"), &text);
    let o = run_in(&scratch.0, &["check", "project.toml", "--rules", "house"]);
    let what = format!("{file}: {from:?} -> {to:?}");
    refused(&o)
        .and_then(|()| {
            located_diagnostic(
                &stderr(&o),
                &format!("house/{file}"),
                Some(line),
                key,
                expected,
                true,
            )
        })
        .map_err(|e| format!("[{what}]\n{e}"))
}

#[test]
fn bad_house_rule_files_are_refused_with_file_line_and_key() {
    let failures = run_parallel(RULE_CASES, rule_case);
    report_failures("house rule file", RULE_CASES.len(), &failures);
}

#[test]
fn a_valid_house_folder_of_the_matrix_is_accepted() {
    // The bases of the rule cases are themselves valid: a refusal above is the case's doing.
    let scratch = Scratch::new("rules-ok");
    scratch.write("project.toml", BASE);
    scratch.write("house/alt.toml", HOUSE_ALTITUDE);
    scratch.write("house/min.toml", HOUSE_MINIMUMS);
    scratch.write("house/checks/c.toml", HOUSE_CHECK);
    scratch.write("house/cap.toml", HOUSE_CAPACITORS);
    let o = run_in(
        &scratch.0,
        &[
            "check",
            "project.toml",
            "--rules",
            "house",
            "--format",
            "json",
        ],
    );
    assert!(matches!(o.status.code(), Some(0 | 1)), "{}", describe(&o));
    let report: Value = serde_json::from_slice(&o.stdout).unwrap();
    let origins: Vec<&str> = report["rules"]
        .as_array()
        .unwrap()
        .iter()
        .filter(|r| r["origin"] == "house")
        .filter_map(|r| r["id"].as_str())
        .collect();
    for id in [
        "iec60664-1.altitude",
        "limits.minimum-distances",
        "house.checks",
        "iec60384-14.subclasses",
    ] {
        assert!(
            origins.contains(&id),
            "{id} not loaded from the house folder: {origins:?}"
        );
    }
}

#[test]
fn a_house_rule_file_with_non_utf8_bytes_is_refused_naming_it() {
    let scratch = Scratch::new("rules-utf8");
    scratch.write("project.toml", BASE);
    let mut bytes = HOUSE_MINIMUMS.as_bytes().to_vec();
    bytes.extend_from_slice(b"# caf\xe9\n");
    scratch.write("house/min.toml", bytes);
    let o = run_in(&scratch.0, &["check", "project.toml", "--rules", "house"]);
    refused(&o).unwrap();
    let err = stderr(&o);
    assert!(
        err.contains("house/min.toml") && err.contains("UTF-8"),
        "{err}"
    );
}

// ---------------------------------------------------------------------------------------
// 5. Untrusted house templates and house checks: they end, and touch no file
// ---------------------------------------------------------------------------------------

/// Runs `check` on the base project with `report.md.j2` replaced by `template`.
fn with_house_template(template: &str) -> Output {
    let scratch = Scratch::new("template");
    scratch.write("project.toml", BASE);
    scratch.write("tmpl/report.md.j2", template);
    run_in(
        &scratch.0,
        &["check", "project.toml", "--templates", "tmpl"],
    )
}

fn assert_template_refused(o: &Output, expected: &str) {
    refused(o).unwrap();
    let err = stderr(o);
    assert!(
        err.contains("tmpl/report.md.j2:"),
        "the template is not named\n{err}"
    );
    assert!(
        err.contains(expected),
        "the message lacks {expected:?}\n{err}"
    );
}

#[test]
fn a_house_template_with_an_endless_loop_ends_with_exit_2() {
    // Far more iterations than could ever finish; minijinja refuses a range this long.
    let o = with_house_template(
        "{% for i in range(10000000) %}{% for j in range(10000000) %}x{% endfor %}{% endfor %}",
    );
    assert_template_refused(&o, "template error");
}

#[test]
fn a_house_template_looping_inside_the_range_limit_runs_out_of_fuel() {
    let o = with_house_template(
        "{% for i in range(100000) %}{% for j in range(100000) %}x{% endfor %}{% endfor %}",
    );
    assert_template_refused(&o, "work allowance");
}

#[test]
fn a_house_template_writing_without_end_runs_out_of_fuel() {
    // Each pass builds a 100 MB string: the memory bound on house templates (or, failing
    // that, the work allowance) must stop it at the first.
    let o = with_house_template(r#"{% for i in range(100000) %}{{ "x" * 100000000 }}{% endfor %}"#);
    refused(&o).unwrap();
    let err = stderr(&o);
    assert!(
        err.contains("tmpl/report.md.j2"),
        "the template is not named\n{err}"
    );
    assert!(
        err.contains("MB of memory") || err.contains("work allowance"),
        "the reason is lost\n{err}"
    );
}

#[test]
fn a_house_template_with_endless_recursion_hits_the_recursion_limit() {
    let o = with_house_template(
        "{% macro deeper(n) %}{{ deeper(n + 1) }}{% endmacro %}{{ deeper(0) }}",
    );
    assert_template_refused(&o, "recursion limit");
}

#[test]
fn a_house_template_including_itself_hits_the_recursion_limit() {
    let o = with_house_template("x{% include \"report.md.j2\" %}");
    assert_template_refused(&o, "recursion limit");
}

#[test]
fn a_house_template_cannot_include_a_file_from_the_machine() {
    for path in [
        "/etc/passwd",
        "../../../../../../etc/passwd",
        "../project.toml",
    ] {
        let o = with_house_template(&format!("{{% include \"{path}\" %}}"));
        assert_template_refused(&o, "non-existing template");
        assert!(!stdout(&o).contains("root:"), "{}", describe(&o));
    }
}

/// Runs `check` on the base project with one house check whose condition and message
/// are given (over the report, so it runs once).
fn with_house_check(condition: &str, message: &str) -> Output {
    let check = format!(
        "id = \"house.heavy\"\ntitle = \"Heavy\"\nsource = \"invented\"\nprovenance = \"House rule, no published source.\"\n\n\
         [[check]]\nid = \"house.heavy\"\ntitle = \"Heavy\"\nseverity = \"note\"\nover = \"report\"\n\
         condition = '''{condition}'''\nmessage = '''{message}'''\nrationale = \"none\"\nsource = \"invented\"\n"
    );
    let scratch = Scratch::new("house-check");
    scratch.write("project.toml", BASE);
    scratch.write("house/checks/heavy.toml", check);
    run_in(&scratch.0, &["check", "project.toml", "--rules", "house"])
}

#[test]
fn a_house_check_with_a_heavy_loop_in_its_condition_ends_with_exit_2() {
    let o = with_house_check(
        "(range(100000) | map('string') | join | length) * (range(100000) | map('string') | join | length) > 0",
        "never",
    );
    refused(&o).unwrap();
    let err = stderr(&o);
    assert!(err.contains("house/checks/heavy.toml:"), "{err}");
    assert!(err.contains("house.heavy"), "{err}");
}

#[test]
fn a_house_check_with_an_endless_loop_in_its_message_ends_with_exit_2() {
    let o = with_house_check(
        "true",
        "{% for i in range(100000) %}{% for j in range(100000) %}x{% endfor %}{% endfor %}",
    );
    refused(&o).unwrap();
    let err = stderr(&o);
    assert!(err.contains("house/checks/heavy.toml:"), "{err}");
    assert!(
        err.contains("fuel"),
        "the message does not say the work ran out\n{err}"
    );
}

#[test]
fn a_house_check_message_cannot_include_a_file_from_the_machine() {
    let o = with_house_check("true", "{% include '/etc/passwd' %}");
    assert!(!stdout(&o).contains("root:"), "{}", describe(&o));
    assert!(!stderr(&o).contains("root:"), "{}", describe(&o));
    assert_eq!(o.status.code(), Some(2), "{}", describe(&o));
}

/// (what, edits applied in turn as (table, key, value), the table and key the message
/// must point at, expected text): a value that is fine alone but not with another key.
#[rustfmt::skip]
const PAIR_CASES: &[(&str, &[(&str, &str, &str)], (&str, &str), &str)] = &[
    ("limiter of kind none with a resistance",
        &[("[input.limiter]", "kind", r#""none""#)], ("[input.limiter]", "cold_ohm"), "kind = \"none\""),
    ("damping resistor without its capacitor",
        &[("[emc.filter]", "damping_capacitance_uf", REMOVE)], ("[emc.filter]", "damping_resistance_ohm"), "without damping_capacitance_uf"),
    ("damping capacitor without its resistor",
        &[("[emc.filter]", "damping_resistance_ohm", REMOVE)], ("[emc.filter]", "damping_capacitance_uf"), "without damping_resistance_ohm"),
    ("damping without a differential-mode stage",
        &[("[emc.filter]", "dm_inductance_uh", REMOVE)], ("[emc.filter]", "damping_resistance_ohm"), "not declared"),
    ("fault-tolerant bleeder without a bleeder",
        &[("[input]", "bleeder_ohm", REMOVE), ("[input]", "bleeder_fault_tolerant", "true")], ("[input]", "bleeder_fault_tolerant"), "no bleeder_ohm"),
];

#[test]
fn a_value_that_contradicts_another_key_is_refused_at_the_key_in_fault() {
    let failures = run_parallel(PAIR_CASES, |(what, edits, (section, key), expected)| {
        let mut text = BASE.to_string();
        for (s, k, v) in *edits {
            text = edit(&text, s, k, v).0;
        }
        let line = line_of(&text, section, key);
        assert_project_refused(what, text, Some(line), key, expected)
    });
    report_failures("contradiction", PAIR_CASES.len(), &failures);
}

#[test]
fn a_house_section_template_that_fails_is_named_with_its_reason() {
    // The shipped report includes power_entry.md.j2; a house copy of it that loops must be
    // named in the message (not the shipped report that includes it), with the reason.
    let scratch = Scratch::new("section-template");
    scratch.write("project.toml", BASE);
    scratch.write(
        "tmpl/power_entry.md.j2",
        "{% for i in range(100000) %}{% for j in range(100000) %}x{% endfor %}{% endfor %}",
    );
    let o = run_in(
        &scratch.0,
        &["check", "project.toml", "--templates", "tmpl"],
    );
    refused(&o).unwrap();
    let err = stderr(&o);
    assert!(
        err.contains("tmpl/power_entry.md.j2"),
        "the failing house template is not named\n{err}"
    );
    assert!(
        err.contains("work allowance"),
        "the reason (out of fuel) is lost\n{err}"
    );
}

#[test]
fn a_tiny_filter_y_capacitance_never_prints_an_infinite_corner_frequency() {
    // 1e-9 nF (a value in farads written into a nanofarad key) is above 0, so it is read;
    // whatever the tool then says must be a finite figure, the same in JSON and Markdown.
    let (text, _) = edit(BASE, "[emc.filter]", "y_capacitance_nf", "1e-9");
    let scratch = Scratch::new("tiny-y");
    scratch.write("project.toml", text);
    let md = run_in(&scratch.0, &["check", "project.toml"]);
    assert!(
        matches!(md.status.code(), Some(0 | 1 | 2)),
        "{}",
        describe(&md)
    );
    let out = stdout(&md);
    for word in out.split(|c: char| c.is_whitespace() || c == '|') {
        assert!(
            !matches!(word, "inf" | "-inf" | "NaN"),
            "the Markdown report prints a non-finite figure ({word}):\n{}",
            out.lines()
                .filter(|l| l.contains(word))
                .collect::<Vec<_>>()
                .join("\n")
        );
    }
}

/// The base project with its noise estimated from the converter (no prescan points; the
/// switch node described in `[emc]`).
fn base_with_estimated_noise() -> String {
    let text = without_table(BASE, "[[emc.prescan]]");
    let text = edit(&text, "[emc]", "parasitic_capacitance_pf", "20").0;
    edit(&text, "[emc]", "switch_node_swing_v", "400").0
}

#[test]
fn converter_values_the_noise_estimate_cannot_use_are_refused_at_their_line() {
    // The reader accepts both values; the estimate refuses them later. The refusal must
    // still point at the key, with the value as written.
    let cases: &[(&str, &str, &str)] = &[
        ("max_duty", "1", "max_duty"),
        ("switching_hz", "1e-300", "1e-300"),
    ];
    let base = base_with_estimated_noise();
    let o = {
        let scratch = Scratch::new("estimate-ok");
        scratch.write("project.toml", &base);
        run_in(&scratch.0, &["check", "project.toml"])
    };
    assert!(
        matches!(o.status.code(), Some(0 | 1)),
        "the base with an estimate is valid\n{}",
        describe(&o)
    );
    let failures = run_parallel(cases, |(key, value, expected)| {
        let (text, line) = edit(&base, "[converter]", key, value);
        assert_project_refused(
            &format!("[converter] {key} = {value}"),
            text,
            Some(line),
            key,
            expected,
        )
    });
    report_failures("estimate input", cases.len(), &failures);
}
