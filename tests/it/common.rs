//! Helpers shared by the end-to-end tests: run the real binary from the crate root and
//! read what it printed. Each test file uses the ones it needs.
#![allow(dead_code)]

use std::path::{Path, PathBuf};
use std::process::Output;

use assert_cmd::cargo::cargo_bin_cmd;
use gapwarden::commands::{SpacingQuery, spacing};
use gapwarden::project::{
    BetweenRows, BoardCoating, BoardConductor, Field, Grade, MaterialGroup, OvervoltageCategory,
};
use gapwarden::rules::RuleBook;
use gapwarden::spacing::BarrierResult;

/// The crate root: examples and fixtures are named relative to it.
pub fn root() -> &'static Path {
    Path::new(env!("CARGO_MANIFEST_DIR"))
}

/// Runs the binary in the crate root.
pub fn run<S: AsRef<std::ffi::OsStr>>(args: &[S]) -> Output {
    run_in(root(), args)
}

/// Runs the binary in another folder.
pub fn run_in<S: AsRef<std::ffi::OsStr>>(dir: &Path, args: &[S]) -> Output {
    let mut cmd = cargo_bin_cmd!("gapwarden");
    cmd.current_dir(dir);
    cmd.args(args)
        .output()
        .expect("the binary could be started")
}

pub fn stdout(o: &Output) -> String {
    String::from_utf8(o.stdout.clone()).expect("stdout is UTF-8")
}

pub fn stderr(o: &Output) -> String {
    String::from_utf8(o.stderr.clone()).expect("stderr is UTF-8")
}

/// The exit code; a process killed by a signal (or a panic abort) fails the test.
pub fn code(o: &Output) -> i32 {
    o.status
        .code()
        .unwrap_or_else(|| panic!("terminated by a signal; stderr:\n{}", stderr(o)))
}

/// Exit status, stderr and the start of stdout, for failure messages.
pub fn describe(o: &Output) -> String {
    format!(
        "exit {:?}\n--- stderr ---\n{}\n--- stdout (first 3000 bytes) ---\n{}",
        o.status.code(),
        stderr(o),
        stdout(o).chars().take(3000).collect::<String>()
    )
}

/// The exit status is `expected` and nothing panicked.
pub fn assert_exit(o: &Output, expected: i32) {
    assert_eq!(code(o), expected, "wrong exit status\n{}", describe(o));
    assert!(
        !stderr(o).contains("panicked"),
        "the binary panicked\n{}",
        describe(o)
    );
}

/// A basic barrier on a 230 V mains, overvoltage category II, pollution degree 2, at 2000 m,
/// material group I, off the board, inhomogeneous field; each test overrides what it pins down.
pub fn query() -> SpacingQuery {
    SpacingQuery {
        working_rms_v: 250.0,
        working_peak_v: None,
        grade: Grade::Basic,
        pollution_degree: 2,
        overvoltage_category: OvervoltageCategory::II,
        nominal_v: 230.0,
        transient_v: None,
        altitude_m: 2000.0,
        material_group: Some(MaterialGroup::I),
        cti: None,
        printed_board: false,
        field: Field::Inhomogeneous,
        board_conductor: BoardConductor::OuterLayer,
        board_coating: BoardCoating::None,
        creepage_between_rows: BetweenRows::NextRow,
        altitude_between_rows: BetweenRows::NextRow,
        clearance_mm: None,
        creepage_mm: None,
    }
}

/// The shipped rule book, which every spacing check value is read against.
pub fn shipped_rules() -> RuleBook {
    RuleBook::shipped().unwrap_or_else(|p| panic!("the shipped rule tables do not load:\n{p}"))
}

/// The engine's figures for a spacing query that lies inside every table.
pub fn spacing_of(q: &SpacingQuery) -> BarrierResult {
    spacing(&shipped_rules(), q)
        .unwrap_or_else(|p| panic!("a query inside the tables was refused:\n{p}\nquery: {q:?}"))
}

/// The message of a spacing query the engine must refuse.
pub fn spacing_refusal(q: &SpacingQuery) -> String {
    match spacing(&shipped_rules(), q) {
        Ok(r) => panic!(
            "expected a refusal, got clearance {} mm and creepage {} mm for {q:?}",
            r.required_clearance_mm, r.required_creepage_mm
        ),
        Err(p) => p.to_string(),
    }
}

/// Every `.toml` file under `dir`, in a stable order.
pub fn project_files(dir: &Path, out: &mut Vec<PathBuf>) {
    let Ok(entries) = std::fs::read_dir(dir) else {
        return;
    };
    let mut paths: Vec<PathBuf> = entries.filter_map(|e| e.ok().map(|e| e.path())).collect();
    paths.sort();
    for path in paths {
        if path.is_dir() {
            project_files(&path, out);
        } else if path.extension().is_some_and(|e| e == "toml") {
            out.push(path);
        }
    }
}
