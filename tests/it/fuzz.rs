//! A fuzzer for the two kinds of text a user hands the tool: project files and house
//! rule files. cargo-fuzz needs a nightly toolchain and a cargo-fuzz install that CI does
//! not have, so this is a proptest-driven generator on stable Rust: it mutates valid texts
//! (deletes, duplicates and swaps lines, puts keys into other tables, replaces values with
//! fragments of TOML from a dictionary, inserts raw bytes, cuts the file short) and runs
//! the library on each. Whatever the input, no panic, and every run ends in a report that
//! renders to Markdown, HTML and JSON, or in a refusal with a message.
//!
//! The run is deterministic (a fixed seed), so CI sees the same cases every time. For a
//! longer run by hand:
//!
//! ```sh
//! GAPWARDEN_FUZZ_CASES=20000 GAPWARDEN_FUZZ_SEED=7 GAPWARDEN_FUZZ_KEEP_GOING=1 \
//!     cargo test --release --test fuzz -- --nocapture --test-threads 1
//! ```
//!
//! `GAPWARDEN_FUZZ_KEEP_GOING=1` records every distinct failure and goes on (without
//! shrinking) instead of stopping at the first, and keeps the slowest input in a file;
//! `GAPWARDEN_FUZZ_SECONDS=600` ends each target after ten minutes.
//!
//! The small corpus in `tests/fuzz-corpus/` (inputs that once found something, or reach
//! rarely visited code) is replayed first and seeds the mutations.

use std::panic::{AssertUnwindSafe, catch_unwind};
use std::path::{Path, PathBuf};
use std::sync::LazyLock;
use std::sync::atomic::{AtomicUsize, Ordering};
use std::time::Instant;

use gapwarden::diag::{Problems, Source};
use gapwarden::report::{Templates, check_source, render_html, render_json, render_markdown};
use gapwarden::rules::{RuleBook, SHIPPED_RULES};
use proptest::prelude::*;
use proptest::test_runner::{Config, RngSeed, TestCaseError, TestRunner};

/// Cases per fuzz target when `GAPWARDEN_FUZZ_CASES` is not set: small enough for CI.
const DEFAULT_PROJECT_CASES: u32 = 3_000;
const DEFAULT_FIGURE_CASES: u32 = 1_500;
const DEFAULT_RULE_CASES: u32 = 600;

static RULES: LazyLock<RuleBook> = LazyLock::new(|| {
    RuleBook::shipped().unwrap_or_else(|p| panic!("the shipped rule tables do not load:\n{p}"))
});
static TEMPLATES: LazyLock<Templates> = LazyLock::new(Templates::shipped);

fn root() -> &'static Path {
    Path::new(env!("CARGO_MANIFEST_DIR"))
}

fn env_number(name: &str) -> Option<u64> {
    std::env::var(name).ok().and_then(|v| v.trim().parse().ok())
}

/// The runner for one target: `cases` from the environment when given, a fixed seed (a
/// different one per target, so that two targets do not walk the same cases).
fn runner(default_cases: u32, target: u64) -> TestRunner {
    let cases = env_number("GAPWARDEN_FUZZ_CASES").map_or(default_cases, |n| n as u32);
    let seed = env_number("GAPWARDEN_FUZZ_SEED").unwrap_or(20_260_601) + target;
    TestRunner::new(Config {
        cases,
        failure_persistence: None,
        rng_seed: RngSeed::Fixed(seed),
        max_shrink_iters: 2_000,
        ..Config::default()
    })
}

// ---------------------------------------------------------------------------------------
// Seeds and the dictionary
// ---------------------------------------------------------------------------------------

/// Valid (or interesting) texts to mutate: the examples, the corpus, and a few fixtures
/// that reach the power-entry and EMC paths in other ways.
fn project_seeds() -> Vec<String> {
    let mut seeds: Vec<String> = gapwarden::commands::EXAMPLES
        .iter()
        .map(|(_, text)| text.to_string())
        .collect();
    for name in [
        "pe-adapter.toml",
        "pe-no-converter.toml",
        "emc-estimate.toml",
        "emc-prescan.toml",
        "iso-class1-earthed-chassis.toml",
        "part-y2-series-across-reinforced.toml",
    ] {
        if let Ok(text) = std::fs::read_to_string(root().join("tests/fixtures").join(name)) {
            seeds.push(text);
        }
    }
    seeds.extend(
        corpus("project")
            .into_iter()
            .filter_map(|(_, b)| String::from_utf8(b).ok()),
    );
    seeds
}

/// Files of the committed corpus in `tests/fuzz-corpus/<kind>/`, sorted by name.
fn corpus(kind: &str) -> Vec<(PathBuf, Vec<u8>)> {
    let dir = root().join("tests/fuzz-corpus").join(kind);
    let mut files: Vec<(PathBuf, Vec<u8>)> = std::fs::read_dir(&dir)
        .map(|entries| {
            entries
                .filter_map(|e| e.ok().map(|e| e.path()))
                .filter(|p| p.is_file())
                .filter_map(|p| std::fs::read(&p).ok().map(|b| (p, b)))
                .collect()
        })
        .unwrap_or_default();
    files.sort();
    files
}

/// Every key of the project file, so that a mutation can move a key to another table.
const KEYS: &[&str] = &[
    "name",
    "revision",
    "protection_class",
    "creepage_between_rows",
    "altitude_between_rows",
    "pollution_degree",
    "overvoltage_category",
    "altitude_m",
    "nominal_v",
    "max_v",
    "min_v",
    "frequency_hz",
    "id",
    "kind",
    "accessible",
    "earthed",
    "description",
    "between",
    "grade",
    "working_rms_v",
    "working_peak_v",
    "transient_v",
    "working_frequency_hz",
    "material_group",
    "cti",
    "printed_board",
    "field",
    "board_conductor",
    "board_coating",
    "clearance_mm",
    "creepage_mm",
    "slot_width_mm",
    "bridged_by",
    "ref",
    "subclass",
    "capacitance_nf",
    "rated_ac_v",
    "count_in_series",
    "isolation_test_v_rms",
    "external_clearance_mm",
    "external_creepage_mm",
    "distance_through_insulation_mm",
    "thin_layer_rated",
    "insulation_system",
    "tape_layers",
    "margin_mm",
    "thermal_class",
    "hot_spot_c",
    "bulk_capacitance_uf",
    "series_resistance_ohm",
    "bridge_surge_a",
    "bridge_drop_v",
    "x_capacitance_uf",
    "bleeder_ohm",
    "bleeder_fault_tolerant",
    "connection",
    "prospective_fault_a",
    "end_product_standard",
    "hand_held",
    "min_frequency_hz",
    "max_frequency_hz",
    "cold_ohm",
    "hot_ohm",
    "energy_rating_j",
    "rated_a",
    "melting_i2t_a2s",
    "breaking_a",
    "rated_v",
    "speed",
    "output_w",
    "efficiency",
    "min_bulk_v",
    "switching_hz",
    "max_duty",
    "limit_class",
    "margin_db",
    "parasitic_capacitance_pf",
    "switch_node_swing_v",
    "level_dbuv",
    "detector",
    "dm_inductance_uh",
    "dm_inductor_resistance_ohm",
    "damping_resistance_ohm",
    "damping_capacitance_uf",
    "cm_inductance_mh",
    "y_capacitance_nf",
    "y_arrangement",
    // Keys of rule files, and nonsense.
    "rows",
    "factor",
    "overrides",
    "condition",
    "severity",
    "over",
    "message",
    "zz",
];

/// Fragments of TOML a value can be replaced with: edge numbers, every word the project
/// file knows, strings that are markup elsewhere, other types.
const VALUES: &[&str] = &[
    "0",
    "-0.0",
    "-1",
    "1",
    "2",
    "3",
    "4",
    "0.001",
    "1e-9",
    "1e-300",
    "5e-324",
    "0.45",
    "0.86",
    "1.0",
    "2.5",
    "10",
    "47",
    "50",
    "60",
    "100",
    "230",
    "250",
    "264",
    "400",
    "1000",
    "1200",
    "5000",
    "12000",
    "65000",
    "1e5",
    "1e6",
    "3e7",
    "1e9",
    "1e12",
    "1e300",
    "-1e300",
    "nan",
    "+nan",
    "-nan",
    "inf",
    "+inf",
    "-inf",
    "9223372036854775807",
    "-9223372036854775808",
    "99999999999999999999",
    "0x7fffffff",
    "0o777",
    "0b101",
    "1_000",
    "1979-05-27",
    "07:32:00",
    "true",
    "false",
    "[]",
    "[1, 2]",
    "[\"primary\", \"output\"]",
    "[\"primary\", \"primary\"]",
    "[\"T1\", \"U3\", \"CY1\"]",
    "[[1]]",
    "{}",
    "{ a = 1 }",
    "\"\"",
    "\" \"",
    "\"x\"",
    "\"I\"",
    "\"II\"",
    "\"III\"",
    "\"IV\"",
    "\"IIIa\"",
    "\"IIIb\"",
    "\"primary\"",
    "\"output\"",
    "\"ac-input\"",
    "\"T1\"",
    "\"U3\"",
    "\"CY1\"",
    "\"mains\"",
    "\"hazardous\"",
    "\"safe\"",
    "\"functional\"",
    "\"basic\"",
    "\"supplementary\"",
    "\"reinforced\"",
    "\"double\"",
    "\"y-capacitor\"",
    "\"x-capacitor\"",
    "\"optocoupler\"",
    "\"transformer\"",
    "\"tape\"",
    "\"margin-tape\"",
    "\"Y1\"",
    "\"Y2\"",
    "\"X2\"",
    "\"ntc\"",
    "\"resistor\"",
    "\"none\"",
    "\"fast\"",
    "\"time-lag\"",
    "\"plug\"",
    "\"permanent\"",
    "\"iec62368-1\"",
    "\"iec60950-1\"",
    "\"A\"",
    "\"B\"",
    "\"quasi-peak\"",
    "\"average\"",
    "\"peak\"",
    "\"single\"",
    "\"each-line\"",
    "\"interpolate\"",
    "\"homogeneous\"",
    "\"inner-layer\"",
    "\"conformal\"",
    "\"{{ 7 * 7 }}\"",
    "\"{% raw %}\"",
    "\"<b>x</b>\"",
    "\"| a | b |\"",
    "\"Ω µF ±\"",
    "\"\\u0000\"",
    "\"line\\nbreak\"",
    "'''a\nb'''",
    "\"\"\"\nmulti\n\"\"\"",
];

/// Whole lines to insert: table headers (some repeated or misplaced) and stray text.
const LINES: &[&str] = &[
    "[design]",
    "[environment]",
    "[mains]",
    "[[circuit]]",
    "[[barrier]]",
    "[[part]]",
    "[input]",
    "[input.limiter]",
    "[input.fuse]",
    "[converter]",
    "[emc]",
    "[[emc.prescan]]",
    "[emc.filter]",
    "[[input]]",
    "[input.limiter.x]",
    "[emc.prescan]",
    "[[emc.filter]]",
    "[x]",
    "",
    "# comment",
    "=",
    "[",
    "]]",
    "\"",
    "a.b.c = 1",
    "input.fuse.rated_a = 2",
    "id = \"primary\"\nkind = \"safe\"",
    "between = [\"primary\", \"output\"]\ngrade = \"basic\"\nworking_rms_v = 250",
];

#[derive(Debug, Clone)]
enum Mutation {
    DeleteLine(usize),
    DuplicateLine(usize),
    SwapLines(usize, usize),
    /// The value of a `key = value` line becomes `VALUES[j]`.
    ReplaceValue(usize, usize),
    /// The key of a `key = value` line becomes `KEYS[j]`.
    RenameKey(usize, usize),
    /// `KEYS[k] = VALUES[v]` inserted before a line.
    InsertPair(usize, usize, usize),
    /// `LINES[j]` inserted before a line.
    InsertLine(usize, usize),
    /// The i-th number in the text multiplied by `FACTORS[j]` (mostly keeps the file
    /// valid, so the calculations behind the reader are reached with odd figures).
    ScaleNumber(usize, usize),
    /// The i-th number in the text replaced by a figure anywhere from 1e-12 to 1e12.
    SetNumber(usize, f64),
    /// Raw bytes inserted at a byte position (may leave the text invalid UTF-8).
    InsertBytes(usize, Vec<u8>),
    /// The text cut at a byte position.
    Truncate(usize),
}

/// Factors a number is scaled by: unit slips (1e-9 to 1e9) and small nudges.
const FACTORS: &[f64] = &[
    1e-9, 1e-6, 1e-3, 0.01, 0.1, 0.5, 0.9, 0.99, 1.01, 1.1, 2.0, 10.0, 100.0, 1e3, 1e6, 1e9, -1.0,
    0.0,
];

/// Mutations that mostly keep a file readable, so the calculations behind the reader
/// see odd but accepted figures.
fn soft_mutation() -> impl Strategy<Value = Mutation> {
    let n = || 0usize..10_000;
    prop_oneof![
        6 => (n(), 0..FACTORS.len()).prop_map(|(a, b)| Mutation::ScaleNumber(a, b)),
        4 => (n(), -12.0..12.0f64).prop_map(|(a, e)| Mutation::SetNumber(a, 10f64.powf(e))),
        1 => n().prop_map(Mutation::DeleteLine),
    ]
}

/// A list of mutations: half the time soft ones only, otherwise any.
fn mutations(max: usize) -> impl Strategy<Value = Vec<Mutation>> {
    prop_oneof![
        prop::collection::vec(soft_mutation(), 1..max),
        prop::collection::vec(mutation(), 1..max),
    ]
}

fn mutation() -> impl Strategy<Value = Mutation> {
    let n = || 0usize..10_000;
    prop_oneof![
        10 => (n(), 0..FACTORS.len()).prop_map(|(a, b)| Mutation::ScaleNumber(a, b)),
        4 => (n(), -12.0..12.0f64).prop_map(|(a, e)| Mutation::SetNumber(a, 10f64.powf(e))),
        3 => n().prop_map(Mutation::DeleteLine),
        2 => n().prop_map(Mutation::DuplicateLine),
        2 => (n(), n()).prop_map(|(a, b)| Mutation::SwapLines(a, b)),
        8 => (n(), 0..VALUES.len()).prop_map(|(a, b)| Mutation::ReplaceValue(a, b)),
        2 => (n(), 0..KEYS.len()).prop_map(|(a, b)| Mutation::RenameKey(a, b)),
        3 => (n(), 0..KEYS.len(), 0..VALUES.len()).prop_map(|(a, k, v)| Mutation::InsertPair(a, k, v)),
        2 => (n(), 0..LINES.len()).prop_map(|(a, b)| Mutation::InsertLine(a, b)),
        1 => (0usize..1_000_000, prop::collection::vec(any::<u8>(), 1..4)).prop_map(|(a, b)| Mutation::InsertBytes(a, b)),
        1 => (0usize..1_000_000).prop_map(Mutation::Truncate),
    ]
}

/// The lines of `text` that hold `key = value` (not comments, not headers).
fn pair_lines(lines: &[String]) -> Vec<usize> {
    lines
        .iter()
        .enumerate()
        .filter(|(_, l)| {
            let t = l.trim_start();
            !t.starts_with('#') && !t.starts_with('[') && t.contains('=')
        })
        .map(|(i, _)| i)
        .collect()
}

/// Byte ranges of the number literals in a line (a digit, or a sign before one, up to
/// the end of the run of number characters).
fn numbers_in(line: &str) -> Vec<std::ops::Range<usize>> {
    let b = line.as_bytes();
    let mut out = Vec::new();
    let mut i = 0;
    while i < b.len() {
        let starts = b[i].is_ascii_digit()
            || (matches!(b[i], b'-' | b'+') && b.get(i + 1).is_some_and(u8::is_ascii_digit));
        let inside_word = i > 0 && (b[i - 1].is_ascii_alphanumeric() || b[i - 1] == b'_');
        if starts && !inside_word {
            let start = i;
            i += 1;
            while i < b.len()
                && (b[i].is_ascii_alphanumeric() || matches!(b[i], b'.' | b'_' | b'+' | b'-'))
            {
                i += 1;
            }
            out.push(start..i);
        } else {
            i += 1;
        }
    }
    out
}

/// Replaces the `index`-th number of the text (counting over all lines, comments aside)
/// with what `f` makes of it.
fn change_number(lines: &mut [String], index: usize, f: impl Fn(f64) -> f64) {
    let spots: Vec<(usize, std::ops::Range<usize>)> = lines
        .iter()
        .enumerate()
        .flat_map(|(i, l)| {
            let code = l.split('#').next().unwrap_or("");
            numbers_in(code).into_iter().map(move |r| (i, r))
        })
        .collect();
    if spots.is_empty() {
        return;
    }
    let (line, range) = spots[index % spots.len()].clone();
    let old: f64 = lines[line][range.clone()]
        .replace('_', "")
        .parse()
        .unwrap_or(1.0);
    let new = f(old);
    let text = if new.is_finite() && new == new.trunc() && new.abs() < 1e15 {
        format!("{}", new as i64)
    } else {
        format!("{new:e}")
    };
    lines[line].replace_range(range, &text);
}

/// Applies the mutations in turn; returns bytes, since some mutations break UTF-8.
fn mutate(seed: &str, mutations: &[Mutation]) -> Vec<u8> {
    let mut lines: Vec<String> = seed.lines().map(str::to_string).collect();
    let mut raw: Vec<(usize, Vec<u8>)> = Vec::new();
    let mut cut: Option<usize> = None;
    for m in mutations {
        let len = lines.len().max(1);
        match m {
            Mutation::DeleteLine(i) if !lines.is_empty() => {
                lines.remove(i % len);
            }
            Mutation::DuplicateLine(i) if !lines.is_empty() => {
                let l = lines[i % len].clone();
                lines.insert(i % len, l);
            }
            Mutation::SwapLines(a, b) if !lines.is_empty() => lines.swap(a % len, b % len),
            Mutation::ReplaceValue(i, v) => {
                let pairs = pair_lines(&lines);
                if let Some(&at) = pairs.get(i % pairs.len().max(1)) {
                    let key = lines[at].split('=').next().unwrap_or("").trim().to_string();
                    lines[at] = format!("{key} = {}", VALUES[*v]);
                }
            }
            Mutation::RenameKey(i, k) => {
                let pairs = pair_lines(&lines);
                if let Some(&at) = pairs.get(i % pairs.len().max(1)) {
                    let value = lines[at].split_once('=').map_or("", |(_, v)| v).to_string();
                    lines[at] = format!("{} ={value}", KEYS[*k]);
                }
            }
            Mutation::InsertPair(i, k, v) => lines.insert(
                i % (lines.len() + 1),
                format!("{} = {}", KEYS[*k], VALUES[*v]),
            ),
            Mutation::InsertLine(i, j) => {
                lines.insert(i % (lines.len() + 1), LINES[*j].to_string())
            }
            Mutation::ScaleNumber(i, j) => change_number(&mut lines, *i, |x| x * FACTORS[*j]),
            Mutation::SetNumber(i, x) => change_number(&mut lines, *i, |_| *x),
            Mutation::InsertBytes(at, bytes) => raw.push((*at, bytes.clone())),
            Mutation::Truncate(at) => cut = Some(*at),
            _ => {}
        }
    }
    let mut bytes = lines.join("\n").into_bytes();
    bytes.push(b'\n');
    for (at, inserted) in raw {
        let at = at % (bytes.len() + 1);
        bytes.splice(at..at, inserted);
    }
    if let Some(at) = cut {
        bytes.truncate(at % (bytes.len() + 1));
    }
    bytes
}

// ---------------------------------------------------------------------------------------
// The oracle
// ---------------------------------------------------------------------------------------

/// A refusal must say something: at least one problem, each with a message and a file.
fn assert_refusal_speaks(problems: &Problems, what: &str) -> Result<(), String> {
    if problems.0.is_empty() {
        return Err(format!("{what} was refused with no problem listed"));
    }
    for d in &problems.0 {
        if d.message.trim().is_empty() || d.file.trim().is_empty() {
            return Err(format!(
                "{what} was refused with an empty message or file: {d:?}"
            ));
        }
    }
    if problems.to_string().trim().is_empty() {
        return Err(format!("{what} was refused with an empty text"));
    }
    Ok(())
}

/// Words a report must never print as a figure.
fn non_finite_word(text: &str) -> Option<String> {
    text.split(|c: char| c.is_whitespace() || matches!(c, '|' | '(' | ')' | ',' | ';' | '"'))
        .find(|w| matches!(*w, "inf" | "-inf" | "NaN" | "-NaN"))
        .map(|w| {
            let line = text
                .lines()
                .find(|l| {
                    l.split(|c: char| c.is_whitespace() || c == '|')
                        .any(|t| t == w)
                })
                .unwrap_or("");
            format!("{w} in: {}", line.chars().take(300).collect::<String>())
        })
}

/// What one project text led to, for the tallies.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
enum Outcome {
    Report,
    Refused,
}

/// Checks one project file's bytes with the shipped rules, then renders the report in
/// every format. Panics are caught and returned as failures. With `figures`, a report
/// that prints a non-finite figure (inf, NaN) is a failure too.
fn check_project_bytes(bytes: &[u8], figures: bool) -> Result<Outcome, String> {
    let run = || -> Result<Outcome, String> {
        let report = match std::str::from_utf8(bytes) {
            Ok(text) => check_source(&Source::new("fuzz.toml", text), &RULES),
            // The reader path: bytes that are not UTF-8 go through the file reader.
            Err(_) => {
                let dir = scratch_dir("bytes");
                let path = dir.join("fuzz.toml");
                std::fs::write(&path, bytes).map_err(|e| e.to_string())?;
                let result = gapwarden::commands::check_file(&path, &RULES);
                let _ = std::fs::remove_dir_all(&dir);
                result
            }
        };
        let report = match report {
            Ok(r) => r,
            Err(problems) => {
                assert_refusal_speaks(&problems, "the project")?;
                return Ok(Outcome::Refused);
            }
        };
        let md = render_markdown(&report, &TEMPLATES);
        let html = render_html(&report, &TEMPLATES);
        for (format, result) in [("Markdown", &md), ("HTML", &html)] {
            match result {
                Ok(text) if text.trim().is_empty() => {
                    return Err(format!("the {format} report is empty"));
                }
                Ok(_) => {}
                Err(problems) => assert_refusal_speaks(problems, "rendering")?,
            }
        }
        if figures
            && let Ok(text) = &md
            && let Some(word) = non_finite_word(text)
        {
            return Err(format!(
                "the Markdown report prints a non-finite figure: {word}"
            ));
        }
        let json = render_json(&report);
        serde_json::from_str::<serde_json::Value>(&json)
            .map_err(|e| format!("the JSON report does not parse: {e}"))?;
        Ok(Outcome::Report)
    };
    match catch_unwind(AssertUnwindSafe(run)) {
        Ok(result) => result,
        Err(payload) => Err(format!("panicked: {}", panic_text(&*payload))),
    }
}

fn panic_text(payload: &(dyn std::any::Any + Send)) -> String {
    payload
        .downcast_ref::<String>()
        .cloned()
        .or_else(|| payload.downcast_ref::<&str>().map(|s| s.to_string()))
        .unwrap_or_else(|| "(no message)".to_string())
}

fn scratch_dir(tag: &str) -> PathBuf {
    static N: AtomicUsize = AtomicUsize::new(0);
    let dir = std::env::temp_dir().join(format!(
        "gapwarden-fuzz-{}-{tag}-{}",
        std::process::id(),
        N.fetch_add(1, Ordering::SeqCst)
    ));
    let _ = std::fs::remove_dir_all(&dir);
    std::fs::create_dir_all(&dir).expect("scratch folder can be created");
    dir
}

/// Shows a failing input in full, bytes escaped where they are not text.
fn show_input(bytes: &[u8]) -> String {
    String::from_utf8_lossy(bytes).to_string()
}

/// Tallies printed at the end of a run (executions, outcomes, time, slowest case), and
/// in a run by hand with `GAPWARDEN_FUZZ_KEEP_GOING=1` every distinct failure instead of
/// only the first.
#[derive(Default)]
struct Tally {
    runs: usize,
    reports: usize,
    refusals: usize,
    slowest_ms: f64,
    slowest_input: Vec<u8>,
    /// Distinct failures (by their first line) with the first input that showed each.
    failures: Vec<(String, String)>,
}

impl Tally {
    fn add(&mut self, outcome: Outcome, ms: f64, input: &[u8]) {
        self.runs += 1;
        match outcome {
            Outcome::Report => self.reports += 1,
            Outcome::Refused => self.refusals += 1,
        }
        if ms > self.slowest_ms {
            self.slowest_ms = ms;
            self.slowest_input = input.to_vec();
        }
    }

    fn fail(&mut self, failure: String) {
        self.runs += 1;
        let first = failure.lines().next().unwrap_or("").to_string();
        if !self.failures.iter().any(|(f, _)| *f == first) {
            self.failures.push((first, failure));
        }
    }

    /// The summary line; in a long run the slowest input is kept in a file to look at.
    fn summary(&self, what: &str, started: Instant) -> String {
        let mut line = format!(
            "{what}: {} executions ({} reports, {} refusals, {} distinct failures) in {:.1} s, slowest case {:.0} ms",
            self.runs,
            self.reports,
            self.refusals,
            self.failures.len(),
            started.elapsed().as_secs_f64(),
            self.slowest_ms
        );
        if keep_going() {
            let path = std::env::temp_dir().join(format!(
                "gapwarden-fuzz-slowest-{}.toml",
                what.replace(|c: char| !c.is_ascii_alphanumeric(), "-")
            ));
            if std::fs::write(&path, &self.slowest_input).is_ok() {
                line.push_str(&format!(" (input: {})", path.display()));
            }
        }
        line
    }
}

/// In a run by hand, `GAPWARDEN_FUZZ_SECONDS` ends a target after that long: the
/// remaining cases are drawn but not run (and not counted).
fn past_deadline(started: Instant) -> bool {
    env_number("GAPWARDEN_FUZZ_SECONDS").is_some_and(|s| started.elapsed().as_secs() >= s)
}

/// A run by hand that records every distinct failure and goes on.
fn keep_going() -> bool {
    std::env::var("GAPWARDEN_FUZZ_KEEP_GOING").is_ok_and(|v| v == "1")
}

/// Ends a target: the first failure (shrunk by proptest), or every distinct one.
fn finish(what: &str, tally: &Tally, started: Instant, result: Result<(), String>) {
    println!("{}", tally.summary(what, started));
    if !tally.failures.is_empty() {
        let all: Vec<&str> = tally.failures.iter().map(|(_, f)| f.as_str()).collect();
        panic!(
            "{what}: {} distinct failures:\n\n{}",
            all.len(),
            all.join("\n\n==========\n\n")
        );
    }
    if let Err(e) = result {
        panic!("{e}");
    }
}

// ---------------------------------------------------------------------------------------
// Project files
// ---------------------------------------------------------------------------------------

/// Runs `cases` mutated project files through `check_project_bytes`.
fn fuzz_projects(what: &str, default_cases: u32, figures: bool) {
    let seeds = project_seeds();
    let strategy = (0..seeds.len(), mutations(5));
    let tally = std::sync::Mutex::new(Tally::default());
    let started = Instant::now();
    let result = runner(default_cases, u64::from(figures)).run(&strategy, |(seed, mutations)| {
        if past_deadline(started) {
            return Ok(());
        }
        let bytes = mutate(&seeds[seed], &mutations);
        let t = Instant::now();
        let checked = check_project_bytes(&bytes, figures);
        let ms = t.elapsed().as_secs_f64() * 1e3;
        let mut tally = tally.lock().unwrap();
        match checked {
            Ok(outcome) => tally.add(outcome, ms, &bytes),
            Err(e) => {
                let failure = format!("{e}\n--- input ---\n{}", show_input(&bytes));
                if !keep_going() {
                    return Err(TestCaseError::fail(failure));
                }
                tally.fail(failure);
            }
        }
        Ok(())
    });
    let tally = tally.lock().unwrap();
    finish(what, &tally, started, result.map_err(|e| e.to_string()));
}

#[test]
fn mutated_project_files_never_panic_and_always_end_in_a_report_or_a_message() {
    fuzz_projects("project fuzz", DEFAULT_PROJECT_CASES, false);
}

#[test]
fn mutated_project_files_never_print_a_non_finite_figure() {
    fuzz_projects("project fuzz (figures)", DEFAULT_FIGURE_CASES, true);
}

#[test]
fn the_committed_project_corpus_never_panics() {
    let files = corpus("project");
    assert!(
        !files.is_empty(),
        "tests/fuzz-corpus/project/ holds no file"
    );
    for (path, bytes) in &files {
        if let Err(e) = check_project_bytes(bytes, false) {
            panic!("{}: {e}", path.display());
        }
    }
    println!("replayed {} project corpus files", files.len());
}

// ---------------------------------------------------------------------------------------
// House rule files
// ---------------------------------------------------------------------------------------

/// A shipped rule file made into a house file: the same id with `overrides = true`.
fn as_house_override(text: &str) -> String {
    let mut out = String::new();
    let mut done = false;
    for line in text.lines() {
        out.push_str(line);
        out.push('\n');
        if !done && line.trim_start().starts_with("id =") && !line.starts_with(' ') {
            out.push_str("overrides = true\n");
            done = true;
        }
    }
    out
}

/// Seeds for house rule files: every shipped table and check file as an override, the
/// rule corpus, and a new house check.
fn rule_seeds() -> Vec<(String, String)> {
    let mut seeds: Vec<(String, String)> = SHIPPED_RULES
        .iter()
        .map(|r| {
            let name = r.name.rsplit('/').next().unwrap_or(r.name).to_string();
            let name = if r.is_checks {
                format!("checks/{name}")
            } else {
                name
            };
            (name, as_house_override(r.text))
        })
        .collect();
    for (path, bytes) in corpus("rules") {
        if let Ok(text) = String::from_utf8(bytes) {
            let name = path.file_name().unwrap().to_string_lossy().to_string();
            let name = if text.contains("[[check]]") {
                format!("checks/{name}")
            } else {
                name
            };
            seeds.push((name, text));
        }
    }
    seeds
}

/// Loads the shipped rules with one house file; when they load, checks the Class II
/// example with them and renders it. Panics are caught and returned as failures.
fn check_house_rule_bytes(file: &str, bytes: &[u8]) -> Result<Outcome, String> {
    let dir = scratch_dir("rules");
    let result = catch_unwind(AssertUnwindSafe(|| -> Result<Outcome, String> {
        let path = dir.join(file);
        std::fs::create_dir_all(path.parent().unwrap()).map_err(|e| e.to_string())?;
        std::fs::write(&path, bytes).map_err(|e| e.to_string())?;
        let rules = match RuleBook::load(Some(&dir)) {
            Ok(r) => r,
            Err(problems) => {
                assert_refusal_speaks(&problems, "the house rules")?;
                return Ok(Outcome::Refused);
            }
        };
        for (name, text) in gapwarden::commands::EXAMPLES {
            match check_source(&Source::new(format!("{name}.toml"), *text), &rules) {
                Ok(report) => {
                    if let Err(p) = render_markdown(&report, &TEMPLATES) {
                        assert_refusal_speaks(&p, "rendering")?;
                    }
                    serde_json::from_str::<serde_json::Value>(&render_json(&report))
                        .map_err(|e| format!("the JSON report does not parse: {e}"))?;
                }
                Err(p) => assert_refusal_speaks(&p, "the example under house rules")?,
            }
        }
        Ok(Outcome::Report)
    }));
    let _ = std::fs::remove_dir_all(&dir);
    match result {
        Ok(r) => r,
        Err(payload) => Err(format!("panicked: {}", panic_text(&*payload))),
    }
}

#[test]
fn mutated_house_rule_files_never_panic_and_always_load_or_give_a_message() {
    let seeds = rule_seeds();
    let strategy = (0..seeds.len(), mutations(4));
    let tally = std::sync::Mutex::new(Tally::default());
    let started = Instant::now();
    let result = runner(DEFAULT_RULE_CASES, 2).run(&strategy, |(seed, mutations)| {
        if past_deadline(started) {
            return Ok(());
        }
        let (file, text) = &seeds[seed];
        let bytes = mutate(text, &mutations);
        let t = Instant::now();
        let checked = check_house_rule_bytes(file, &bytes);
        let ms = t.elapsed().as_secs_f64() * 1e3;
        let mut tally = tally.lock().unwrap();
        match checked {
            Ok(outcome) => tally.add(outcome, ms, &bytes),
            Err(e) => {
                let failure = format!("{e}\n--- house/{file} ---\n{}", show_input(&bytes));
                if !keep_going() {
                    return Err(TestCaseError::fail(failure));
                }
                tally.fail(failure);
            }
        }
        Ok(())
    });
    let tally = tally.lock().unwrap();
    finish(
        "house rule fuzz",
        &tally,
        started,
        result.map_err(|e| e.to_string()),
    );
}

#[test]
fn the_committed_rule_corpus_never_panics() {
    let files = corpus("rules");
    assert!(!files.is_empty(), "tests/fuzz-corpus/rules/ holds no file");
    for (path, bytes) in &files {
        let name = path.file_name().unwrap().to_string_lossy().to_string();
        let name = if bytes.windows(9).any(|w| w == b"[[check]]") {
            format!("checks/{name}")
        } else {
            name
        };
        if let Err(e) = check_house_rule_bytes(&name, bytes) {
            panic!("{}: {e}", path.display());
        }
    }
    println!("replayed {} rule corpus files", files.len());
}

#[test]
fn mutations_change_the_text_and_keep_it_whole_otherwise() {
    // The generator itself: no mutation leaves the seed as it was; a value replacement
    // keeps the key and puts the fragment after `=`.
    let seed = "[mains]\nnominal_v = 230\n";
    let bytes = mutate(seed, &[Mutation::ReplaceValue(0, 0)]);
    assert_eq!(
        String::from_utf8(bytes).unwrap(),
        "[mains]\nnominal_v = 0\n"
    );
    let bytes = mutate(seed, &[Mutation::InsertBytes(0, vec![0xFF])]);
    assert!(std::str::from_utf8(&bytes).is_err());
    let bytes = mutate(seed, &[Mutation::Truncate(3)]);
    assert_eq!(bytes, b"[ma");
    let bytes = mutate(seed, &[Mutation::ScaleNumber(0, 5)]);
    assert_eq!(
        String::from_utf8(bytes).unwrap(),
        "[mains]\nnominal_v = 115\n"
    );
    let bytes = mutate(
        "rows = [{ a_1 = 2000, f = -1.5e3 }]",
        &[Mutation::SetNumber(1, 0.25)],
    );
    assert_eq!(
        String::from_utf8(bytes).unwrap(),
        "rows = [{ a_1 = 2000, f = 2.5e-1 }]\n"
    );
}
