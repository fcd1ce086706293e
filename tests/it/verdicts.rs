//! Verdicts that cannot mislead, and text that cannot act on a terminal or a page, run
//! through the binary: the "check-input" verdict, readiness for review and the exit status
//! (with --allow-incomplete), house rules and templates named with their SHA-256 in the
//! report's first lines, control and bidi characters made visible, the EMC chart's place
//! out of reach of project strings, and numbers in messages that read true.
//!
//! Projects are built in the test from the shipped examples by replacing one line, so each
//! test shows the one change it is about. Expected values are worked out here (SHA-256 with
//! the sha2 crate over the file's bytes, the readiness rule from DESIGN.md), never read
//! back from the tool's rule files.

use crate::common;
use common::*;

use std::path::{Path, PathBuf};
use std::process::Output;

use serde_json::Value;

const CLASS2: &str = "examples/class2-adapter.toml";
const CLASS1: &str = "examples/class1-appliance.toml";

/// A fresh folder under the system temp dir, removed at the end.
struct Scratch(PathBuf);

impl Scratch {
    fn new(name: &str) -> Self {
        let dir =
            std::env::temp_dir().join(format!("gapwarden-verdicts-{name}-{}", std::process::id()));
        let _ = std::fs::remove_dir_all(&dir);
        std::fs::create_dir_all(&dir).expect("temp folder");
        Scratch(dir)
    }

    /// Writes `text` to NAME in the folder and returns its path as a string.
    fn write(&self, name: &str, text: &str) -> String {
        let p = self.0.join(name);
        if let Some(parent) = p.parent() {
            std::fs::create_dir_all(parent).expect("folder");
        }
        std::fs::write(&p, text).expect("written");
        p.display().to_string()
    }
}

impl Drop for Scratch {
    fn drop(&mut self) {
        let _ = std::fs::remove_dir_all(&self.0);
    }
}

/// The shipped example's text with one exact line replaced (the line must exist).
fn example_with(example: &str, line: &str, replacement: &str) -> String {
    let text = std::fs::read_to_string(root().join(example)).expect("example");
    let found = text.lines().any(|l| l.trim_start().starts_with(line));
    assert!(found, "{example} has no line starting with {line:?}");
    text.lines()
        .map(|l| {
            if l.trim_start().starts_with(line) {
                replacement.to_string()
            } else {
                l.to_string()
            }
        })
        .collect::<Vec<_>>()
        .join("\n")
        + "\n"
}

fn json(o: &Output) -> Value {
    serde_json::from_slice(&o.stdout)
        .unwrap_or_else(|e| panic!("stdout is not JSON: {e}\n{}", describe(o)))
}

fn barrier<'a>(report: &'a Value, id: &str) -> &'a Value {
    report["barriers"]
        .as_array()
        .expect("barriers")
        .iter()
        .find(|b| b["id"] == id)
        .unwrap_or_else(|| panic!("no barrier {id}"))
}

fn sha256_file(path: &Path) -> String {
    use sha2::{Digest, Sha256};
    let bytes = std::fs::read(path).expect("readable");
    Sha256::digest(&bytes)
        .iter()
        .map(|b| format!("{b:02x}"))
        .collect()
}

/// The first `n` lines of a text.
fn head(text: &str, n: usize) -> String {
    text.lines().take(n).collect::<Vec<_>>().join("\n")
}

// ---------------------------------------------------------------------------------------
// 10.18: an implausible input never yields "pass"
// ---------------------------------------------------------------------------------------

#[test]
fn implausible_clearance_gives_check_input_not_pass() {
    let s = Scratch::new("check-input");
    // 6000 mm for a board clearance is a unit slip (metres for millimetres?); the distance
    // is large enough to pass, and that is exactly what must not be reported as a pass.
    let p = s.write(
        "p.toml",
        &example_with(CLASS2, "clearance_mm = 6.2", "clearance_mm = 6000"),
    );
    let o = run(&["check", &p, "--format", "json"]);
    assert_exit(&o, 1);
    let r = json(&o);
    assert_eq!(barrier(&r, "pri-sec")["verdict"], "check-input");
    // The other barriers rest on nothing implausible and still pass.
    assert_eq!(barrier(&r, "input-output")["verdict"], "pass");
    assert_eq!(r["summary"]["check_input"], 1);
    assert_eq!(r["summary"]["pass"], 2);
    let suspicious =
        r["findings"].as_array().unwrap().iter().any(|f| {
            f["id"] == "input.suspicious_value" && f["subject"] == "barrier[1].clearance_mm"
        });
    assert!(suspicious, "the suspicious value is still a finding");
    // --allow-incomplete does not relax an implausible input.
    assert_exit(&run(&["check", &p, "--allow-incomplete"]), 1);
    // The Markdown row says so too.
    let md = stdout(&run(&["check", &p]));
    let row = md
        .lines()
        .find(|l| l.starts_with("| pri-sec |"))
        .expect("barrier row");
    assert!(row.contains("**CHECK-INPUT**"), "{row}");
}

#[test]
fn spacing_command_with_an_implausible_distance_says_check_input() {
    // The same engine as check: 6000 mm would pass any requirement, but is not a pass.
    let o = run(&[
        "spacing",
        "--format",
        "json",
        "--working-rms-v",
        "250",
        "--clearance-mm",
        "6000",
        "--creepage-mm",
        "6000",
    ]);
    assert_exit(&o, 1);
    assert_eq!(json(&o)["verdict"], "check-input");
    let o = run(&[
        "spacing",
        "--format",
        "json",
        "--working-rms-v",
        "250",
        "--clearance-mm",
        "60",
        "--creepage-mm",
        "60",
    ]);
    assert_exit(&o, 0);
    assert_eq!(json(&o)["verdict"], "pass");
}

/// `spacing` with the flags of a passing reinforced barrier at 250 V (IEC 60664-1:2020
/// Table F.1, 230 V OVC II: 2500 V; one step up 4000 V; Table F.2 Case A 3.0 mm; creepage
/// 250 V PD2 printed wiring 1.0 mm x 2 = 2.0 mm, raised to the clearance: rules/SOURCES.md),
/// laid out at 4 / 4 mm, plus `extra`, which must give the material (group I to IIIa: the
/// printed-wiring column; IIIb would read the general column, 2.5 mm x 2 = 5.0 mm).
fn spacing_reinforced_with(extra: &[&str]) -> Output {
    let mut args = vec![
        "spacing",
        "--format",
        "json",
        "--working-rms-v",
        "250",
        "--grade",
        "reinforced",
        "--printed-board",
        "--clearance-mm",
        "4",
        "--creepage-mm",
        "4",
    ];
    args.extend_from_slice(extra);
    run(&args)
}

#[test]
fn spacing_command_with_an_implausible_cti_says_check_input_not_pass() {
    // Regression: --cti was only checked for being a number, so a CTI of 6000 (no material
    // has one; IEC 60112 tests up to 600 V: material group I is CTI >= 600, rules/SOURCES.md)
    // gave "pass" where the same cti in a project file is input.suspicious_value.
    let o = spacing_reinforced_with(&["--cti", "6000"]);
    assert_exit(&o, 1);
    assert_eq!(json(&o)["verdict"], "check-input");
    assert!(stderr(&o).contains("--cti"), "{}", stderr(&o));
    // A plausible CTI passes, and 1e9 is out of range as in a project file (exit 2).
    let o = spacing_reinforced_with(&["--cti", "600"]);
    assert_exit(&o, 0);
    assert_eq!(json(&o)["verdict"], "pass");
    assert!(stderr(&o).is_empty(), "{}", stderr(&o));
    assert_exit(&spacing_reinforced_with(&["--cti", "1e9"]), 2);
}

#[test]
fn spacing_command_with_a_plausible_transient_is_not_check_input() {
    // Regression: --transient-v was judged as a working voltage (implausible above 1000 V),
    // so every real impulse voltage (2500 V is Table F.1's 230 V OVC II value, rules/SOURCES.md)
    // turned a pass into "check-input" and exit 1. As a project file's transient_v it is
    // plausible up to 12 kV (the top of the preferred impulse series).
    let o = spacing_reinforced_with(&["--material-group", "IIIa", "--transient-v", "2500"]);
    assert_exit(&o, 0);
    assert_eq!(json(&o)["verdict"], "pass");
    assert!(stderr(&o).is_empty(), "{}", stderr(&o));
    // 20 kV is beyond the preferred series: implausible, never a pass.
    let o = run(&[
        "spacing",
        "--format",
        "json",
        "--working-rms-v",
        "250",
        "--transient-v",
        "20000",
        "--clearance-mm",
        "90",
        "--creepage-mm",
        "90",
    ]);
    assert_exit(&o, 1);
    assert_eq!(json(&o)["verdict"], "check-input");
}

#[test]
fn spacing_command_with_an_implausible_altitude_says_check_input() {
    // Regression: --altitude-m had no plausibility check; 1e-300 m reads as sea level and
    // would pass, where altitude_m = 1e-300 in a project file is input.suspicious_value.
    let o = spacing_reinforced_with(&["--material-group", "IIIa", "--altitude-m", "1e-300"]);
    assert_exit(&o, 1);
    assert_eq!(json(&o)["verdict"], "check-input");
    assert!(stderr(&o).contains("--altitude-m"), "{}", stderr(&o));
}

#[test]
fn spacing_command_warns_of_an_implausible_value_even_without_a_verdict() {
    // Regression: with no distances declared (a pure look-up, verdict "incomplete") an
    // implausible value left no trace at all: the figure looked as good as any other.
    let o = run(&[
        "spacing",
        "--format",
        "json",
        "--working-rms-v",
        "250",
        "--working-peak-v",
        "5000",
    ]);
    assert_exit(&o, 0);
    assert_eq!(json(&o)["verdict"], "incomplete");
    let err = stderr(&o);
    assert!(err.starts_with("warning:"), "{err}");
    assert!(
        err.contains("--working-peak-v") && err.contains("5000"),
        "{err}"
    );
}

// ---------------------------------------------------------------------------------------
// 10.19: ready for review, and the exit status
// ---------------------------------------------------------------------------------------

#[test]
fn exit_status_is_0_only_when_ready_for_review() {
    let s = Scratch::new("readiness");
    // Ready: the Class II example is complete, nothing blocking, nothing implausible.
    let o = run(&["check", CLASS2, "--format", "json"]);
    assert_exit(&o, 0);
    let r = json(&o);
    assert_eq!(r["readiness"]["ready"], true);
    assert_eq!(r["readiness"]["state"], "ready");
    assert_eq!(r["readiness"]["reasons"].as_array().unwrap().len(), 0);

    // Blocking: a 1 mm clearance across reinforced insulation on 230 V mains is short
    // (IEC 60664-1 Table F.2: 2500 V impulse, one step up for reinforced -> 4000 V,
    // 3.0 mm in Case A; from memory of the published table, rules/SOURCES.md).
    let blocking = s.write(
        "blocking.toml",
        &example_with(CLASS2, "clearance_mm = 6.2", "clearance_mm = 1.0"),
    );
    let o = run(&["check", &blocking, "--format", "json"]);
    assert_exit(&o, 1);
    let r = json(&o);
    assert_eq!(r["readiness"]["state"], "not ready: blocking");
    assert_eq!(r["readiness"]["blocking"], true);
    assert_exit(&run(&["check", &blocking, "--allow-incomplete"]), 1);

    // Incomplete: the Class I example leaves one creepage undeclared.
    let o = run(&["check", CLASS1, "--format", "json"]);
    assert_exit(&o, 1);
    let r = json(&o);
    assert_eq!(r["readiness"]["state"], "not ready: incomplete");
    let reasons = r["readiness"]["reasons"].as_array().unwrap();
    assert_eq!(reasons.len(), 1);
    assert!(reasons[0].as_str().unwrap().contains("pri-control"));
    // The flag relaxes the exit status only; the report still says "not ready".
    let o = run(&["check", CLASS1, "--allow-incomplete"]);
    assert_exit(&o, 0);
    assert!(
        head(&stdout(&o), 5).contains("Ready for review: no (not ready: incomplete)"),
        "{}",
        head(&stdout(&o), 5)
    );

    // All three at once: each named, in the order of DESIGN.md.
    // (a 0.1 mm clearance on another barrier is blocking; pri-control stays incomplete;
    // 2.2 mF written as nanofarads is implausible for a Y capacitor).
    let all = example_with(CLASS1, "clearance_mm = 2.6", "clearance_mm = 0.1")
        .replace("capacitance_nf = 2.2", "capacitance_nf = 2200000");
    let all = s.write("all.toml", &all);
    let o = run(&["check", &all, "--format", "json"]);
    assert_exit(&o, 1);
    let r = json(&o);
    assert_eq!(
        r["readiness"]["state"], "not ready: blocking, incomplete, check inputs",
        "{}",
        r["readiness"]
    );
    let conditions = r["readiness"]["conditions"].as_array().unwrap();
    assert_eq!(conditions.len(), 3);
    assert!(conditions.iter().all(|c| c["holds"] == false));

    // Unusable input: 2, whatever the flag.
    assert_exit(
        &run(&[
            "check",
            "tests/fixtures/bad-syntax.toml",
            "--allow-incomplete",
        ]),
        2,
    );
}

#[test]
fn a_design_without_barriers_is_not_ready() {
    // Absence of information is never a pass: nothing declared is incomplete.
    let s = Scratch::new("no-barrier");
    let p = s.write(
        "p.toml",
        r#"[design]
name = "Nothing declared yet"
protection_class = "II"

[mains]
nominal_v = 230

[[circuit]]
id = "primary"
kind = "hazardous"
accessible = false
earthed = false
"#,
    );
    let o = run(&["check", &p, "--format", "json"]);
    assert_exit(&o, 1);
    let r = json(&o);
    assert_eq!(r["readiness"]["state"], "not ready: incomplete");
    assert!(
        r["readiness"]["reasons"][0]
            .as_str()
            .unwrap()
            .contains("no [[barrier]] is declared")
    );
}

#[test]
fn allow_incomplete_does_not_let_a_design_without_barriers_exit_0() {
    // Regression: --allow-incomplete relaxed "no barrier is declared" as if it were a
    // barrier whose distances are not yet known, so a file with one circuit and nothing
    // else passed a CI job run with the flag. The flag is for distances not yet declared.
    let s = Scratch::new("no-barrier-allowed");
    let p = s.write(
        "p.toml",
        r#"[design]
name = "Nothing declared yet"
protection_class = "II"

[mains]
nominal_v = 230

[[circuit]]
id = "primary"
kind = "hazardous"
accessible = false
earthed = false
"#,
    );
    let o = run(&["check", &p, "--allow-incomplete", "--format", "json"]);
    assert_exit(&o, 1);
    let r = json(&o);
    assert_eq!(r["readiness"]["no_barrier"], true);
    assert_eq!(r["readiness"]["state"], "not ready: incomplete");
    // In a batch and in compare too.
    let out = s.0.join("out").display().to_string();
    let o = run(&["check", &p, CLASS2, "--out-dir", &out, "--allow-incomplete"]);
    assert_exit(&o, 1);
    assert_exit(&run(&["compare", CLASS2, &p, "--allow-incomplete"]), 1);
    // A barrier whose distances are not yet declared is still relaxed.
    assert_exit(&run(&["check", CLASS1, "--allow-incomplete"]), 0);
}

#[test]
fn summaries_count_check_input_barriers_so_the_counts_add_up() {
    // Regression: the batch summary and the compare summary had columns pass, fail and
    // incomplete only, so a design with a barrier resting on an implausible distance
    // (6000 mm: a unit slip) read "3 barriers: 2 pass, 0 fail, 0 incomplete".
    let s = Scratch::new("summary-check-input");
    let implausible = s.write(
        "designs/implausible.toml",
        &example_with(CLASS2, "clearance_mm = 6.2", "clearance_mm = 6000"),
    );
    let out = s.0.join("out").display().to_string();
    let o = run(&["check", &implausible, "--out-dir", &out]);
    assert_exit(&o, 1);
    let summary = stdout(&o);
    let header = summary
        .lines()
        .find(|l| l.starts_with("| design |"))
        .expect("header");
    let row = summary
        .lines()
        .find(|l| l.contains("| implausible.toml |"))
        .expect("row");
    let cells = |l: &str| -> Vec<String> {
        l.trim_matches('|')
            .split('|')
            .map(|c| c.trim().to_string())
            .collect()
    };
    let (h, r) = (cells(header), cells(row));
    let at = |name: &str| {
        let i = h.iter().position(|c| c == name).unwrap_or_else(|| {
            panic!("no column {name}: {header}");
        });
        r[i].parse::<u32>().expect("a count")
    };
    // The Class II example has three barriers; one now rests on 6000 mm.
    assert_eq!(at("check input"), 1, "{summary}");
    assert_eq!(
        at("pass") + at("fail") + at("incomplete") + at("check input"),
        3,
        "{summary}"
    );
    let md = stdout(&run(&["compare", CLASS2, &implausible]));
    let new_row = md
        .lines()
        .find(|l| l.starts_with("| new |"))
        .expect("the new revision's summary row");
    let header = md
        .lines()
        .find(|l| l.starts_with("| | barriers |"))
        .expect("the summary header");
    assert!(header.contains("| check input |"), "{header}");
    let (h, r) = (cells(header), cells(new_row));
    let i = h.iter().position(|c| c == "check input").expect("column");
    assert_eq!(r[i], "1", "{md}");
}

#[test]
fn the_first_lines_say_whether_ready_and_which_conditions_fail() {
    for format in ["md", "html"] {
        let o = run(&["check", CLASS1, "--format", format]);
        let text = stdout(&o);
        let start = if format == "html" {
            text.find("<body>").expect("body")
        } else {
            0
        };
        let first = head(&text[start..], 8);
        assert!(first.contains("Ready for review: no"), "{format}: {first}");
        assert!(
            first.contains("no incomplete barrier (fails)"),
            "{format}: {first}"
        );
        assert!(
            first.contains("no blocking finding (holds)"),
            "{format}: {first}"
        );
        assert!(
            first.contains("no implausible input (holds)"),
            "{format}: {first}"
        );
        assert!(first.contains("pri-control"), "{format}: {first}");
    }
    let first = head(&stdout(&run(&["check", CLASS2])), 4);
    assert!(first.contains("Ready for review: yes"), "{first}");
    // explain readiness: the three conditions, one a line.
    let o = run(&["explain", CLASS1, "readiness"]);
    assert_exit(&o, 0);
    let text = stdout(&o);
    assert!(
        text.starts_with("readiness: not ready: incomplete\n"),
        "{text}"
    );
    assert!(
        text.contains("no incomplete barrier: fails (pri-control)"),
        "{text}"
    );
    assert!(text.contains("no blocking finding: holds (none)"), "{text}");
}

#[test]
fn batch_summary_status_is_readiness_never_clean() {
    let s = Scratch::new("batch-status");
    let blocking = s.write(
        "designs/blocking.toml",
        &example_with(CLASS2, "clearance_mm = 6.2", "clearance_mm = 1.0"),
    );
    let implausible = s.write(
        "designs/implausible.toml",
        &example_with(CLASS2, "clearance_mm = 6.2", "clearance_mm = 6000"),
    );
    let out = s.0.join("out");
    let o = run(&[
        "check",
        CLASS2,
        CLASS1,
        &blocking,
        &implausible,
        "--out-dir",
        &out.display().to_string(),
    ]);
    assert_exit(&o, 1);
    let summary = stdout(&o);
    let status = |file: &str| -> String {
        let row = summary
            .lines()
            .find(|l| l.contains(&format!("| {file} |")))
            .unwrap_or_else(|| panic!("no row for {file}:\n{summary}"));
        row.trim_end_matches('|')
            .rsplit('|')
            .next()
            .unwrap()
            .trim()
            .to_string()
    };
    assert_eq!(status("class2-adapter.toml"), "ready");
    assert_eq!(status("class1-appliance.toml"), "not ready: incomplete");
    assert_eq!(status("blocking.toml"), "not ready: blocking");
    assert_eq!(status("implausible.toml"), "not ready: check inputs");
    assert!(!summary.contains("clean"), "{summary}");

    // With the flag, only the incomplete design stops counting against the exit status.
    let o = run(&[
        "check",
        CLASS2,
        CLASS1,
        "--out-dir",
        &s.0.join("out2").display().to_string(),
        "--allow-incomplete",
    ]);
    assert_exit(&o, 0);
    assert!(stdout(&o).contains("not ready: incomplete"));
}

#[test]
fn compare_exit_status_follows_readiness_of_the_new_revision() {
    // New revision incomplete: not ready.
    let o = run(&["compare", CLASS2, CLASS1]);
    assert_exit(&o, 1);
    assert!(stdout(&o).contains("new revision **not ready: incomplete**"));
    assert_exit(&run(&["compare", CLASS2, CLASS1, "--allow-incomplete"]), 0);
    // New revision ready.
    let o = run(&["compare", CLASS1, CLASS2]);
    assert_exit(&o, 0);
    assert!(stdout(&o).contains("new revision **ready**"));
}

// ---------------------------------------------------------------------------------------
// 10.20: house rules and templates named with their SHA-256 in the first lines
// ---------------------------------------------------------------------------------------

#[test]
fn house_rules_are_named_with_their_sha256_and_what_they_changed() {
    // A house table replacing a shipped one (limits.minimum-distances).
    let dir = root().join("tests/fixtures/house-min-creepage");
    let file = dir.join("minimum-distances.toml");
    let sha = sha256_file(&file);
    let o = run(&["check", CLASS2, "--rules", &dir.display().to_string()]);
    let first = head(&stdout(&o), 12);
    assert!(first.contains("House rules in force"), "{first}");
    assert!(first.contains("minimum-distances.toml"), "{first}");
    assert!(first.contains(&sha), "{first}");
    assert!(first.contains("1 table replaced, 0 added"), "{first}");

    let o = run(&[
        "check",
        CLASS2,
        "--rules",
        &dir.display().to_string(),
        "--format",
        "json",
    ]);
    let h = &json(&o)["house"];
    assert_eq!(h["in_force"], true);
    assert_eq!(h["tables_replaced"], 1);
    assert_eq!(h["tables_added"], 0);
    assert_eq!(h["rules"][0]["sha256"], sha.as_str());
    assert_eq!(h["rules"][0]["effect"], "replaced");
    assert_eq!(h["rules"][0]["kind"], "table");

    // A house check that changes a shipped check, and one that adds a check.
    for (folder, changed, added) in [
        ("house-creepage-missing-blocking", 1, 0),
        ("house-new-check", 0, 1),
    ] {
        let dir = root().join("tests/fixtures").join(folder);
        let o = run(&[
            "check",
            CLASS2,
            "--rules",
            &dir.display().to_string(),
            "--format",
            "json",
        ]);
        let h = &json(&o)["house"];
        assert_eq!(h["checks_changed"], changed, "{folder}: {h}");
        assert_eq!(h["checks_added"], added, "{folder}: {h}");
        // A file of checks is counted by its checks, not as a table.
        assert_eq!(h["tables_added"], 0, "{folder}: {h}");
        assert_eq!(h["tables_replaced"], 0, "{folder}: {h}");
        let listed = h["rules"].as_array().unwrap();
        assert_eq!(listed.len(), 1, "{folder}: {h}");
        assert_eq!(listed[0]["kind"], "checks", "{folder}: {h}");
        let path = dir.join(listed[0]["file"].as_str().unwrap());
        assert_eq!(listed[0]["sha256"], sha256_file(&path).as_str());
        // HTML: the same lines, near the top of the body.
        let html = stdout(&run(&[
            "check",
            CLASS2,
            "--rules",
            &dir.display().to_string(),
            "--format",
            "html",
        ]));
        let body = &html[html.find("<body>").unwrap()..];
        let first = head(body, 14);
        assert!(first.contains("House rules in force"), "{folder}: {first}");
        assert!(first.contains(&sha256_file(&path)), "{folder}: {first}");
    }

    // Shipped rules only: nothing in force, no such line.
    let o = run(&["check", CLASS2, "--format", "json"]);
    assert_eq!(json(&o)["house"]["in_force"], false);
    assert!(!stdout(&run(&["check", CLASS2])).contains("House rules in force"));
}

#[test]
fn a_house_file_replacing_a_shipped_file_of_checks_counts_the_checks_it_removes() {
    // Regression: a house file with the id of the shipped barrier checks
    // (`checks.barrier`, overrides = true) and no [[check]] at all silently dropped every
    // shipped barrier check, and the first lines said "1 table replaced; 0 checks changed,
    // 0 added": a reinforced barrier with a third of its clearance then read "Ready for
    // review: yes" with nothing in the header to say the clearance check was gone.
    let s = Scratch::new("house-removes-checks");
    let house = s.write(
        "house/barrier.toml",
        "id = \"checks.barrier\"\noverrides = true\ntitle = \"No barrier checks\"\nsource = \"invented for the test\"\nprovenance = \"House rule, no published source.\"\n",
    );
    let folder = Path::new(&house).parent().unwrap().display().to_string();
    // 1 mm across reinforced insulation on 230 V mains: 3.0 mm is required (Table F.1
    // 2500 V, one step up 4000 V, Table F.2 Case A 3.0 mm; rules/SOURCES.md).
    let short = s.write(
        "short.toml",
        &example_with(CLASS2, "clearance_mm = 6.2", "clearance_mm = 1.0"),
    );
    let o = run(&["check", &short, "--rules", &folder, "--format", "json"]);
    let r = json(&o);
    let h = &r["house"];
    assert_eq!(barrier(&r, "pri-sec")["verdict"], "fail");
    assert!(
        h["checks_removed"].as_u64().unwrap_or(0) >= 2,
        "at least the clearance and creepage shortfall checks are gone: {h}"
    );
    assert_eq!(h["tables_replaced"], 0, "{h}");
    assert_eq!(h["rules"][0]["kind"], "checks", "{h}");
    let first = head(&stdout(&run(&["check", &short, "--rules", &folder])), 8);
    assert!(first.contains("removed**"), "{first}");
}

#[test]
fn a_house_template_is_named_with_its_sha256_and_cannot_hide_readiness() {
    let s = Scratch::new("house-template");
    // A house template that prints almost nothing: the first lines are gapwarden's own.
    let path = s.write(
        "templates/report.md.j2",
        "# House checklist {{ design.name }}\n\nNothing else.\n",
    );
    let sha = sha256_file(Path::new(&path));
    let dir = s.0.join("templates").display().to_string();
    for format in ["md", "html", "json"] {
        let o = run(&["check", CLASS1, "--templates", &dir, "--format", format]);
        assert_exit(&o, 1);
        let text = stdout(&o);
        if format == "json" {
            let h = &json(&o)["house"];
            assert_eq!(h["in_force"], true);
            assert_eq!(h["templates"][0]["file"], "report.md.j2");
            assert_eq!(h["templates"][0]["sha256"], sha.as_str());
            assert_eq!(h["templates"][0]["kind"], "template");
            continue;
        }
        let start = text.find("<body>").unwrap_or(0);
        let first = head(&text[start..], 10);
        assert!(
            first.contains("House templates in force"),
            "{format}: {first}"
        );
        assert!(first.contains(&sha), "{format}: {first}");
        assert!(first.contains("Ready for review: no"), "{format}: {first}");
    }
}

// ---------------------------------------------------------------------------------------
// 11.12, 11.13: control characters, bidi overrides and zero-width characters
// ---------------------------------------------------------------------------------------

/// True when the text holds a C0 control other than newline and tab, DEL or a C1 control.
fn has_raw_control(text: &str) -> bool {
    text.chars()
        .any(|c| (c.is_control() && c != '\n' && c != '\t') || ('\u{80}'..='\u{9f}').contains(&c))
}

/// True when the text holds a bidi override, isolate or mark, or a zero-width character.
fn has_raw_invisible(text: &str) -> bool {
    text.chars().any(|c| {
        matches!(c, '\u{202a}'..='\u{202e}' | '\u{2066}'..='\u{2069}' | '\u{200b}'..='\u{200f}' | '\u{feff}' | '\u{2060}')
    })
}

#[test]
fn control_characters_from_the_project_never_reach_terminal_or_page() {
    let s = Scratch::new("controls");
    // ESC ] 0 ; ... BEL sets a terminal's title; ESC [ 2 J clears the screen; U+009B is
    // the 8-bit CSI.
    let text = example_with(
        CLASS2,
        "name = ",
        r#"name = "Adapter \u001B]0;owned\u0007 \u001B[2J \u009B2J""#,
    )
    .replace(
        r#"description = "Board gap under the transformer, optocoupler and Y-capacitor""#,
        r#"description = "gap \u001B[31mred\u001B[0m \u007F end""#,
    )
    .replace(r#"id = "pri-sec""#, "id = \"pri\\u001B[2Jsec\"");
    let p = s.write("p.toml", &text);
    for format in ["md", "html", "json"] {
        let o = run(&["check", &p, "--format", format]);
        let out = stdout(&o);
        assert!(
            !has_raw_control(&out),
            "{format}: raw control character in the report"
        );
        if format != "json" {
            assert!(
                out.contains("<U+001B>") || out.contains("&lt;U+001B&gt;"),
                "{format}"
            );
        }
    }
    let html = stdout(&run(&["check", &p, "--format", "html"]));
    let title = &html[html.find("<title>").unwrap()..html.find("</title>").unwrap()];
    assert!(
        title.contains("&lt;U+001B&gt;]0;owned&lt;U+0007&gt;"),
        "{title}"
    );
    assert!(title.contains("&lt;U+009B&gt;"), "{title}");
    // JSON keeps the data (escaped, decoded back to the same characters).
    let r = json(&run(&["check", &p, "--format", "json"]));
    assert_eq!(
        r["design"]["name"],
        "Adapter \u{1b}]0;owned\u{7} \u{1b}[2J \u{9b}2J"
    );
    // explain prints the id.
    let o = run(&["explain", &p, "pri\u{1b}[2Jsec"]);
    assert_exit(&o, 0);
    assert!(!has_raw_control(&stdout(&o)));
    assert!(stdout(&o).contains("pri<U+001B>[2Jsec"), "{}", stdout(&o));
    // stderr: an error message quoting a project string.
    let bad = s.write(
        "bad.toml",
        &example_with(
            CLASS2,
            "between = [\"primary\", \"output\"]",
            "between = [\"primary\", \"out\\u001B]0;x\\u0007\"]",
        ),
    );
    let o = run(&["check", &bad]);
    assert_exit(&o, 2);
    let err = stderr(&o);
    assert!(!has_raw_control(&err), "raw control on stderr: {err:?}");
    assert!(err.contains("<U+001B>"), "{err}");
    // explain of an unknown item echoes it: made visible too.
    let o = run(&["explain", &p, "x\u{1b}[2J"]);
    assert!(!has_raw_control(&stderr(&o)), "{:?}", stderr(&o));
}

#[test]
fn bidi_overrides_and_zero_width_characters_are_made_visible() {
    let s = Scratch::new("bidi");
    // U+202E turns "pri-sec" + "cba" into a spoofed look; U+200B hides a difference
    // between two ids that look alike.
    let text = example_with(
        CLASS2,
        "id = \"input-output\"",
        "id = \"input\\u200B-output\"",
    )
    .replace(r#"id = "pri-sec""#, "id = \"pri-sec\\u202Ecba\"")
    .replace(
        r#"description = "Board gap under the transformer, optocoupler and Y-capacitor""#,
        r#"description = "free text \u2066isolated\u2069 \uFEFF \u2060""#,
    )
    .replace("name = \"Wall", "name = \"\\u202DWall");
    let p = s.write("p.toml", &text);
    let md = stdout(&run(&["check", &p]));
    assert!(
        !has_raw_invisible(&md),
        "raw bidi or zero-width in Markdown"
    );
    assert!(
        md.contains("pri-sec<U+202E>cba"),
        "the id shows the override"
    );
    assert!(md.contains("input<U+200B>-output"));
    let html = stdout(&run(&["check", &p, "--format", "html"]));
    assert!(!has_raw_invisible(&html), "raw bidi or zero-width in HTML");
    assert!(html.contains("pri-sec&lt;U+202E&gt;cba"));
    let title = &html[html.find("<title>").unwrap()..html.find("</title>").unwrap()];
    assert!(title.contains("&lt;U+202D&gt;Wall"), "{title}");
    // JSON: escaped for the terminal, the same characters for a JSON reader.
    let o = run(&["check", &p, "--format", "json"]);
    let raw = stdout(&o);
    assert!(
        !has_raw_invisible(&raw),
        "raw bidi or zero-width in JSON text"
    );
    assert!(raw.contains("\\u202e"), "escaped in the JSON text");
    assert!(
        json(&o)["barriers"]
            .as_array()
            .unwrap()
            .iter()
            .any(|b| b["id"] == "pri-sec\u{202e}cba")
    );
    // Terminal: explain and errors.
    let o = run(&["explain", &p, "pri-sec\u{202e}cba"]);
    assert_exit(&o, 0);
    assert!(!has_raw_invisible(&stdout(&o)));
    let o = run(&["explain", &p, "nothing\u{202e}here"]);
    assert_exit(&o, 2);
    assert!(!has_raw_invisible(&stderr(&o)));
    assert!(stderr(&o).contains("<U+202E>"));
}

#[test]
fn batch_summary_compare_and_rules_never_pass_control_or_bidi_characters() {
    // Pins three more paths to a terminal: the batch summary (design name, file name),
    // compare (design name) and `rules` (a house table's title, and a raw bidi character
    // in a comment, which TOML allows).
    let s = Scratch::new("controls-other-paths");
    let text = example_with(
        CLASS2,
        "name = ",
        r#"name = "Adapter \u001B]0;owned\u0007 \u202Eevil""#,
    );
    let p = s.write("designs/p\u{1b}[2J\u{202e}.toml", &text);
    let out = s.0.join("out").display().to_string();
    let o = run(&["check", &p, CLASS2, "--out-dir", &out]);
    let summary = stdout(&o);
    assert!(summary.contains("| ready |"), "{summary}");
    assert!(!has_raw_control(&summary) && !has_raw_invisible(&summary));
    assert!(summary.contains("p<U+001B>"), "{summary}");
    assert!(!has_raw_control(&stderr(&o)) && !has_raw_invisible(&stderr(&o)));
    let o = run(&["compare", CLASS2, &p]);
    let md = stdout(&o);
    assert!(md.contains("<U+202E>evil"), "{md}");
    assert!(!has_raw_control(&md) && !has_raw_invisible(&md));
    let house = s.write(
        "house/extra.toml",
        "# a comment with a raw \u{202e} override\nid = \"house.x\"\ntitle = \"T \\u001B[2J \\u202E\"\nsource = \"s\"\nprovenance = \"p\"\n",
    );
    let folder = Path::new(&house)
        .parent()
        .expect("folder")
        .display()
        .to_string();
    for args in [
        vec!["rules", "--rules", folder.as_str()],
        vec!["rules", "house.x", "--rules", folder.as_str()],
    ] {
        let o = run(&args);
        let text = format!("{}{}", stdout(&o), stderr(&o));
        assert!(text.contains("house.x"), "{args:?}: {text}");
        assert!(
            !has_raw_control(&text) && !has_raw_invisible(&text),
            "{args:?}: {text:?}"
        );
    }
}

#[test]
fn a_newline_in_a_key_or_file_name_cannot_forge_a_line_on_stderr() {
    // Regression: a quoted TOML key (or a file name) may hold a newline; printed as it was,
    // an unknown key "x\nerror: none; all good" put a line of its own on the terminal that
    // reads as another diagnostic. The key and the file name of a diagnostic stay on one
    // line; the newline is shown as <U+000A>.
    let s = Scratch::new("newline-key");
    let bad = s.write(
        "bad.toml",
        &example_with(
            CLASS2,
            "[environment]",
            "[environment]\n\"x\\nforged: all good\" = 1",
        ),
    );
    let o = run(&["check", &bad]);
    assert_exit(&o, 2);
    let err = stderr(&o);
    assert!(
        !err.lines().any(|l| l.starts_with("forged")),
        "a line was forged: {err}"
    );
    assert!(err.contains("x<U+000A>forged: all good"), "{err}");
    let o = run(&["check", "no\nforged: such.toml"]);
    assert_exit(&o, 2);
    let err = stderr(&o);
    assert!(
        !err.lines().any(|l| l.starts_with("forged")),
        "a line was forged: {err}"
    );
    assert!(err.contains("no<U+000A>forged"), "{err}");
}

// ---------------------------------------------------------------------------------------
// 11.14: the EMC chart's place
// ---------------------------------------------------------------------------------------

#[test]
fn a_barrier_id_equal_to_the_chart_marker_stays_text() {
    let s = Scratch::new("chart-marker");
    // The third tries to leave the structure diagram's code block (which prints ids as
    // they are) and stand as raw HTML on a line of its own.
    for id in [
        "gapwarden-emc-chart",
        "<!-- gapwarden-emc-chart -->",
        "x\n```\n\n<!-- gapwarden-emc-chart -->\n\n```\n",
    ] {
        let text = example_with(
            CLASS2,
            "id = \"pri-sec\"",
            &format!("id = {}", toml_string(id)),
        )
        .replace("\"pri-sec\"", &toml_string(id));
        let p = s.write("p.toml", &text);
        let html = stdout(&run(&["check", &p, "--format", "html"]));
        // Exactly one chart, and it is not inside a table cell.
        assert_eq!(html.matches("<svg").count(), 1, "{id}: one chart only");
        for cell in html.split("<td>").skip(1) {
            let cell = &cell[..cell.find("</td>").unwrap_or(cell.len())];
            assert!(!cell.contains("<svg"), "{id}: SVG in a table cell");
        }
        if id.contains('\n') {
            continue;
        }
        // The id is shown as text in the barrier table.
        let shown = id.replace('<', "&lt;").replace('>', "&gt;");
        assert!(
            html.contains(&format!("<td>{shown}</td>")),
            "{id}: the id is not shown in its cell"
        );
    }
}

fn toml_string(s: &str) -> String {
    format!(
        "\"{}\"",
        s.replace('\\', "\\\\")
            .replace('"', "\\\"")
            .replace('\n', "\\n")
    )
}

// ---------------------------------------------------------------------------------------
// 11.16, 11.17, 11.18: numbers that read true
// ---------------------------------------------------------------------------------------

#[test]
fn a_prescan_just_below_the_band_is_not_called_150_khz() {
    // CISPR 32 Table A.10/A.11 (class B conducted limits) begin at 150 kHz (rules/SOURCES.md;
    // from memory of the published tables): 149,999.999 Hz is outside, and the message must
    // not round it onto the edge.
    let s = Scratch::new("band-edge");
    let text = std::fs::read_to_string(root().join("tests/fixtures/emc-out-of-band.toml"))
        .unwrap()
        .replace("frequency_hz = 100000", "frequency_hz = 149999.999");
    let p = s.write("p.toml", &text);
    let o = run(&["check", &p]);
    assert_exit(&o, 2);
    let err = stderr(&o);
    assert!(err.contains("149999.999 Hz is outside the band"), "{err}");
    assert!(!err.contains("150 kHz is outside the band"), "{err}");
}

#[test]
fn a_nominal_voltage_just_above_the_table_is_not_printed_as_its_last_row() {
    // IEC 60664-1:2020 Table F.1 covers supply systems up to 1000 V (rules/SOURCES.md, from
    // memory of the published table): 1000.00001 V is refused, and said as itself.
    let o = run(&[
        "spacing",
        "--format",
        "json",
        "--working-rms-v",
        "250",
        "--nominal-v",
        "1000.00001",
    ]);
    assert_exit(&o, 2);
    let err = stderr(&o);
    assert!(err.contains("1000.00001 V is above the last row"), "{err}");
}

#[test]
fn a_steady_state_peak_just_above_case_a_is_not_printed_as_its_last_row() {
    // Regression: the Table F.8 refusal printed the peak rounded, "a steady-state peak of
    // 50 kV is above the last row ... (0.04 to 50 kV)". IEC 60664-1:2020 Table F.8 Case A
    // ends at 50 kV (rules/SOURCES.md, [N20]); reinforced reads it at 160 % of the peak (from
    // memory of clause 5.1.6): 31250.00001 V x 1.6 = 50000.000016 V, just above.
    let o = run(&[
        "spacing",
        "--format",
        "json",
        "--working-rms-v",
        "250",
        "--working-peak-v",
        "31250.00001",
        "--grade",
        "reinforced",
    ]);
    assert_exit(&o, 2);
    let err = stderr(&o);
    assert!(!err.contains("peak of 50 kV"), "{err}");
    assert!(err.contains("peak of 50.0000000"), "{err}");
}

#[test]
fn absurdly_small_values_are_flagged_and_huge_ones_print_in_scientific_notation() {
    let s = Scratch::new("tiny");
    // 5e-324 Hz is the smallest subnormal double: no mains runs at it, and it printed as 0.
    let p = s.write(
        "p.toml",
        &example_with(CLASS2, "frequency_hz = 50", "frequency_hz = 5e-324"),
    );
    let o = run(&["check", &p, "--format", "json"]);
    let r = json(&o);
    let f = r["findings"]
        .as_array()
        .unwrap()
        .iter()
        .find(|f| f["id"] == "input.suspicious_value" && f["subject"] == "mains.frequency_hz")
        .unwrap_or_else(|| panic!("no suspicious_value for 5e-324 Hz: {}", r["findings"]));
    assert!(
        f["message"].as_str().unwrap().contains("5e-324"),
        "{}",
        f["message"]
    );
    assert_eq!(r["readiness"]["implausible_inputs"], true);
    assert_ne!(code(&o), 0);

    // A working voltage of 1e-300 V on a barrier: flagged the same way, and that barrier
    // is not a pass.
    let p = s.write(
        "q.toml",
        &example_with(CLASS2, "working_rms_v = 264", "working_rms_v = 1e-300"),
    );
    let r = json(&run(&["check", &p, "--format", "json"]));
    assert!(
        r["findings"]
            .as_array()
            .unwrap()
            .iter()
            .any(|f| f["id"] == "input.suspicious_value"
                && f["message"].as_str().unwrap().contains("1e-300"))
    );
    assert_ne!(barrier(&r, "input-bulk")["verdict"], "pass");

    // 1e300 V is refused in scientific notation, not 301 digits.
    let p = s.write(
        "r.toml",
        &example_with(CLASS2, "nominal_v = 230", "nominal_v = 1e300"),
    );
    let o = run(&["check", &p]);
    assert_exit(&o, 2);
    let err = stderr(&o);
    assert!(err.contains("1e300 is out of range"), "{err}");
    assert!(!err.contains("0000000000"), "{err}");
}

#[test]
fn negative_zero_prints_as_zero_in_json() {
    let s = Scratch::new("negzero");
    // A declared distance of -0.0 mm is accepted (it equals zero) and must read as 0.
    let p = s.write(
        "p.toml",
        &example_with(CLASS2, "clearance_mm = 2.6", "clearance_mm = -0.0"),
    );
    let o = run(&["check", &p, "--format", "json"]);
    let text = stdout(&o);
    assert!(!text.contains("-0.0"), "a negative zero in the JSON");
    assert!(!text.contains(": -0,") && !text.contains(": -0\n"));
    let r = json(&o);
    assert_eq!(
        barrier(&r, "input-bulk")["clearance_mm"].as_f64(),
        Some(0.0)
    );
    assert!(
        barrier(&r, "input-bulk")["clearance_mm"]
            .as_f64()
            .is_some_and(|x| x.is_sign_positive())
    );
    // The spacing command writes JSON the same way.
    let o = run(&[
        "spacing",
        "--format",
        "json",
        "--working-rms-v",
        "250",
        "--clearance-mm=-0.0",
    ]);
    assert!(!stdout(&o).contains("-0.0"), "{}", stdout(&o));
}
