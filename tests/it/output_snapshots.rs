//! Snapshots (insta) of what the binary prints: the HTML (class1 example; the class2 page is
//! pinned in report_layout.rs) and JSON reports, `compare`,
//! `explain`, and the error output for typical bad project files and a bad house table.
//! The snapshots pin the shape and wording of the output; the figures in them are pinned
//! against published values by the check-value tests, never by these.
//!
//! Machine-dependent parts are normalised before the comparison, so the `.snap` files hold
//! on a clean clone in CI (where `CI=true` makes a missing snapshot fail):
//! * every 64-digit hex string (SHA-256 of the inputs, of the rule tables, of a temporary
//!   file) becomes `[sha256]`: rule files change under other work, and a hash says nothing
//!   a reader of the snapshot could check by eye;
//! * a temporary folder's path becomes `[tmp]`;
//! * in the JSON report every number is rounded to 6 significant digits (what the Markdown
//!   prints), so a last-bit difference of a platform's libm cannot fail the snapshot.
//!
//! After an intended change to the output: `INSTA_UPDATE=always cargo test --test it
//! output_snapshots::`, read the diff of the `.snap` files, commit them.

use crate::common;
use common::*;

use std::path::PathBuf;

use serde_json::Value;

const CLASS2: &str = "examples/class2-adapter.toml";
const CLASS1: &str = "examples/class1-appliance.toml";

/// A scratch folder removed when dropped.
struct Scratch(PathBuf);

impl Scratch {
    fn new(tag: &str) -> Self {
        let dir =
            std::env::temp_dir().join(format!("gapwarden-snapshots-{}-{tag}", std::process::id()));
        let _ = std::fs::remove_dir_all(&dir);
        std::fs::create_dir_all(&dir).expect("scratch folder");
        Scratch(dir)
    }

    fn path(&self, name: &str) -> String {
        self.0.join(name).display().to_string()
    }
}

impl Drop for Scratch {
    fn drop(&mut self) {
        let _ = std::fs::remove_dir_all(&self.0);
    }
}

/// Replaces every run of exactly 64 hex digits with `[sha256]`.
fn hide_hashes(text: &str) -> String {
    let bytes = text.as_bytes();
    let mut out = String::with_capacity(text.len());
    let mut i = 0;
    while i < bytes.len() {
        let run = bytes[i..]
            .iter()
            .take_while(|b| b.is_ascii_hexdigit())
            .count();
        let bounded_before = i == 0 || !bytes[i - 1].is_ascii_alphanumeric();
        let bounded_after = bytes
            .get(i + run)
            .is_none_or(|b| !b.is_ascii_alphanumeric());
        if run == 64 && bounded_before && bounded_after {
            out.push_str("[sha256]");
            i += run;
        } else if run > 0 {
            out.push_str(&text[i..i + run]);
            i += run;
        } else {
            // Not a hex digit: copy one whole character.
            let ch = text[i..].chars().next().expect("inside the text");
            out.push(ch);
            i += ch.len_utf8();
        }
    }
    out
}

/// Output with temporary paths and hashes made machine-independent.
fn normalise(text: &str, scratch: Option<&Scratch>) -> String {
    let mut text = text.to_string();
    if let Some(s) = scratch {
        text = text.replace(&s.0.display().to_string(), "[tmp]");
    }
    hide_hashes(&text)
}

/// Rounds a number to 6 significant digits, as text that serde_json prints back unchanged.
fn round6(x: f64) -> Value {
    if x == 0.0 || !x.is_finite() {
        return serde_json::json!(x);
    }
    let rounded: f64 = format!("{x:.5e}")
        .parse()
        .expect("a formatted float parses");
    if rounded.fract() == 0.0 && rounded.abs() < 1e15 {
        serde_json::json!(rounded as i64)
    } else {
        serde_json::json!(rounded)
    }
}

fn round_numbers(v: &mut Value) {
    match v {
        Value::Number(n) if !(n.is_i64() || n.is_u64()) => {
            if let Some(x) = n.as_f64() {
                *v = round6(x);
            }
        }
        Value::Array(items) => items.iter_mut().for_each(round_numbers),
        Value::Object(map) => map.values_mut().for_each(round_numbers),
        _ => {}
    }
}

// ---------------------------------------------------------------------------------------
// Reports
// ---------------------------------------------------------------------------------------

#[test]
fn html_report_of_class1_appliance_matches_snapshot() {
    // The class2 example's page is pinned in report_layout.rs; this one is the Class I
    // example (earthed chassis, permanent connection, no EMC table), with hashes hidden.
    // Exit 1: its pri-control barrier has no declared creepage yet (incomplete).
    let o = run(&["check", CLASS1, "--format", "html"]);
    assert_exit(&o, 1);
    let html = stdout(&o);
    assert!(
        html.to_ascii_lowercase().starts_with("<!doctype html>"),
        "{}",
        describe(&o)
    );
    insta::assert_snapshot!("class1_appliance_report_html", normalise(&html, None));
}

#[test]
fn json_report_of_class2_adapter_matches_snapshot() {
    let o = run(&["check", CLASS2, "--format", "json"]);
    assert_exit(&o, 0);
    let mut v: Value = serde_json::from_slice(&o.stdout).expect("JSON report");
    round_numbers(&mut v);
    let text = serde_json::to_string_pretty(&v).expect("JSON prints");
    insta::assert_snapshot!("class2_adapter_report_json", normalise(&text, None));
}

// ---------------------------------------------------------------------------------------
// compare and explain
// ---------------------------------------------------------------------------------------

#[test]
fn compare_of_two_revisions_matches_snapshot() {
    // Revision C of the adapter, written to a temporary file: a creepage cut below the
    // requirement and a smaller fuse. Its path and its hash are normalised.
    let scratch = Scratch::new("compare");
    let text = std::fs::read_to_string(root().join(CLASS2)).expect("example");
    let changed = text
        .replacen("revision = \"B\"", "revision = \"C\"", 1)
        .replacen("creepage_mm = 6.4", "creepage_mm = 2.5", 1)
        .replacen("rated_a = 2.0", "rated_a = 1.6", 1);
    for edit in ["revision = \"C\"", "creepage_mm = 2.5", "rated_a = 1.6"] {
        assert!(
            changed.contains(edit),
            "the example no longer takes the edit {edit}"
        );
    }
    let new = scratch.path("rev-c.toml");
    std::fs::write(&new, changed).expect("write the new revision");
    let o = run(&["compare", CLASS2, &new]);
    assert_exit(&o, 1);
    insta::assert_snapshot!(
        "compare_class2_rev_b_to_c",
        normalise(&stdout(&o), Some(&scratch))
    );
}

#[test]
fn explain_output_matches_snapshots() {
    // A barrier (both figures), a power-entry figure, an EMC item and a raised finding.
    for (name, project, item) in [
        ("explain_class2_pri_sec", CLASS2, "pri-sec"),
        (
            "explain_class2_inrush_peak",
            CLASS2,
            "power_entry.inrush_peak_a",
        ),
        ("explain_class2_emc_corner", CLASS2, "emc.corner"),
        (
            "explain_class1_relies_on_earth",
            CLASS1,
            "isolation.relies_on_earth",
        ),
    ] {
        let o = run(&["explain", project, item]);
        assert_exit(&o, 0);
        assert!(!stdout(&o).trim().is_empty(), "{name}: nothing printed");
        insta::assert_snapshot!(name, normalise(&stdout(&o), None));
    }
}

// ---------------------------------------------------------------------------------------
// Errors
// ---------------------------------------------------------------------------------------

#[test]
fn errors_for_bad_project_files_match_snapshots() {
    for (name, fixture) in [
        ("error_unknown_key", "tests/fixtures/bad-unknown-key.toml"),
        (
            "error_value_out_of_range",
            "tests/fixtures/bad-pollution-degree.toml",
        ),
        ("error_bad_word", "tests/fixtures/bad-grade-word.toml"),
        (
            "error_above_the_table",
            "tests/fixtures/bad-voltage-above-table.toml",
        ),
        (
            "error_three_problems_at_once",
            "tests/fixtures/bad-three-problems.toml",
        ),
    ] {
        let o = run(&["check", fixture]);
        assert_exit(&o, 2);
        assert!(stdout(&o).is_empty(), "{name}: a report was printed");
        insta::assert_snapshot!(name, normalise(&stderr(&o), None));
    }
}

#[test]
fn errors_for_bad_house_tables_match_snapshots() {
    // A shipped table id taken without `overrides = true` (a committed fixture).
    let o = run(&[
        "check",
        CLASS2,
        "--rules",
        "tests/fixtures/house-bad-reused-table-id",
    ]);
    assert_exit(&o, 2);
    insta::assert_snapshot!("error_house_table_reused_id", normalise(&stderr(&o), None));

    // A house impulse table whose 600 V row comes before the 300 V row, written to a
    // temporary folder (its path is normalised). The values are those of IEC 60664-1
    // Table F.1 (confirmed against [N20]); only the order is wrong.
    let scratch = Scratch::new("house-impulse");
    std::fs::write(
        scratch.0.join("impulse.toml"),
        r#"# A house copy of the impulse table with two rows swapped.
id = "iec60664-1.impulse"
overrides = true
title = "Rated impulse voltage (house copy)"
source = "IEC 60664-1:2020, Table F.1"
provenance = "House copy for the tests; rows confirmed against a public reproduction [N20]."
rows = [
  { up_to_v = 50, ovc_i = 330, ovc_ii = 500, ovc_iii = 800, ovc_iv = 1500, confirmed = true },
  { up_to_v = 100, ovc_i = 500, ovc_ii = 800, ovc_iii = 1500, ovc_iv = 2500, confirmed = true },
  { up_to_v = 150, ovc_i = 800, ovc_ii = 1500, ovc_iii = 2500, ovc_iv = 4000, confirmed = true },
  { up_to_v = 600, ovc_i = 2500, ovc_ii = 4000, ovc_iii = 6000, ovc_iv = 8000, confirmed = true },
  { up_to_v = 300, ovc_i = 1500, ovc_ii = 2500, ovc_iii = 4000, ovc_iv = 6000, confirmed = true },
  { up_to_v = 1000, ovc_i = 4000, ovc_ii = 6000, ovc_iii = 8000, ovc_iv = 12000, confirmed = true },
]
"#,
    )
    .expect("write the house table");
    let o = run(&["check", CLASS2, "--rules", &scratch.0.display().to_string()]);
    assert_exit(&o, 2);
    let err = stderr(&o);
    assert!(
        err.contains("impulse.toml"),
        "the file is not named:\n{err}"
    );
    insta::assert_snapshot!(
        "error_house_table_rows_out_of_order",
        normalise(&err, Some(&scratch))
    );
}

#[test]
fn normalising_hides_hashes_and_temporary_paths_only() {
    let scratch = Scratch::new("normalise");
    let hash = "29f6dc8be32127eebb9aee84b99f2e1c5542240dbad53428ebf8f39285823d05";
    let text = format!(
        "{}/p.toml SHA-256 {hash}; id abc123; 65 digits {hash}0",
        scratch.0.display()
    );
    assert_eq!(
        normalise(&text, Some(&scratch)),
        format!("[tmp]/p.toml SHA-256 [sha256]; id abc123; 65 digits {hash}0")
    );
    assert_eq!(round6(25.70881157441408), serde_json::json!(25.7088));
    assert_eq!(round6(3.0), serde_json::json!(3));
    assert_eq!(round6(-0.4999999), serde_json::json!(-0.5));
}
