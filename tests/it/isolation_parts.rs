//! End-to-end tests of the isolation analysis (hazardous to accessible paths by protection
//! class), of the parts that bridge a barrier (capacitor subclasses and ratings, isolator
//! test voltage and package, transformer insulation and thermal class), and of house rules
//! (`--rules DIR`: overriding a table or a check, adding a check, refusing malformed files,
//! and `gapwarden rules` listing the checks).
//!
//! The binary runs with the crate root as its working folder and is given paths relative to
//! it. Fixtures in tests/fixtures/iso-*.toml, part-*.toml and house-*/ are invented design
//! scenarios, not real products; each says in a comment what it shows. Their barriers are
//! laid out generously (reinforced 8 mm, basic 4 mm) so that only the behaviour under test
//! raises a finding.

use crate::common;
use common::*;

use std::ops::RangeInclusive;
use std::process::Output;

use serde_json::Value;

// ---------------------------------------------------------------------------------------
// Helpers
// ---------------------------------------------------------------------------------------

fn fixture(name: &str) -> String {
    format!("tests/fixtures/{name}")
}

fn json(o: &Output) -> Value {
    serde_json::from_slice(&o.stdout)
        .unwrap_or_else(|e| panic!("stdout is not JSON: {e}\n{}", describe(o)))
}

/// `check FIXTURE --format json` with the shipped rules.
fn check_json(name: &str) -> (Output, Value) {
    let o = run(&["check", &fixture(name), "--format", "json"]);
    let v = json(&o);
    (o, v)
}

/// `check FIXTURE --format json --rules tests/fixtures/HOUSE`.
fn check_json_with_rules(name: &str, house: &str) -> (Output, Value) {
    let o = run(&[
        "check",
        &fixture(name),
        "--format",
        "json",
        "--rules",
        &fixture(house),
    ]);
    let v = json(&o);
    (o, v)
}

fn approx(v: &Value, expected: f64) -> bool {
    v.as_f64().is_some_and(|x| (x - expected).abs() < 1e-9)
}

fn findings(report: &Value) -> &Vec<Value> {
    report["findings"].as_array().expect("findings is an array")
}

/// Every finding with this id.
fn findings_with<'a>(report: &'a Value, id: &str) -> Vec<&'a Value> {
    findings(report).iter().filter(|f| f["id"] == id).collect()
}

/// The one finding with this id about this subject.
fn finding<'a>(report: &'a Value, id: &str, subject: &str) -> &'a Value {
    let matching: Vec<&Value> = findings_with(report, id)
        .into_iter()
        .filter(|f| f["subject"] == subject)
        .collect();
    assert_eq!(
        matching.len(),
        1,
        "expected exactly one {id} about {subject}; findings:\n{:#}",
        report["findings"]
    );
    matching[0]
}

fn blocking(report: &Value) -> Vec<&Value> {
    findings(report)
        .iter()
        .filter(|f| f["severity"] == "blocking")
        .collect()
}

fn message(f: &Value) -> &str {
    f["message"].as_str().expect("a finding has a message")
}

fn pair<'a>(report: &'a Value, hazardous: &str, accessible: &str) -> &'a Value {
    report["isolation"]["pairs"]
        .as_array()
        .expect("isolation.pairs is an array")
        .iter()
        .find(|p| p["hazardous"] == hazardous && p["accessible"] == accessible)
        .unwrap_or_else(|| {
            panic!(
                "no isolation pair {hazardous} -> {accessible}: {:#}",
                report["isolation"]["pairs"]
            )
        })
}

fn strings(v: &Value) -> Vec<&str> {
    v.as_array()
        .unwrap_or_else(|| panic!("not an array: {v}"))
        .iter()
        .map(|s| s.as_str().unwrap_or_else(|| panic!("not a string: {s}")))
        .collect()
}

fn barrier<'a>(report: &'a Value, id: &str) -> &'a Value {
    report["barriers"]
        .as_array()
        .expect("barriers is an array")
        .iter()
        .find(|b| b["id"] == id)
        .unwrap_or_else(|| panic!("no barrier {id} in the report"))
}

fn bridge<'a>(report: &'a Value, part: &str) -> &'a Value {
    report["bridges"]
        .as_array()
        .expect("bridges is an array")
        .iter()
        .find(|b| b["part"] == part)
        .unwrap_or_else(|| panic!("no bridge for part {part}: {:#}", report["bridges"]))
}

/// The `checks[]` entry for one check id.
fn check_outcome<'a>(report: &'a Value, id: &str) -> &'a Value {
    report["checks"]
        .as_array()
        .expect("checks is an array")
        .iter()
        .find(|c| c["id"] == id)
        .unwrap_or_else(|| panic!("no check {id} in checks[]"))
}

/// Asserts that no isolation.* finding blocks.
fn assert_no_isolation_blocking(report: &Value) {
    let bad: Vec<&Value> = blocking(report)
        .into_iter()
        .filter(|f| f["id"].as_str().unwrap_or("").starts_with("isolation."))
        .collect();
    assert!(
        bad.is_empty(),
        "unexpected blocking isolation findings: {bad:#?}"
    );
}

/// Asserts that no part.* finding blocks.
fn assert_no_part_blocking(report: &Value) {
    let bad: Vec<&Value> = blocking(report)
        .into_iter()
        .filter(|f| f["id"].as_str().unwrap_or("").starts_with("part."))
        .collect();
    assert!(
        bad.is_empty(),
        "unexpected blocking part findings: {bad:#?}"
    );
}

/// 1-based number of the first line of `text` that satisfies `pred`.
fn line_of(text: &str, pred: impl Fn(&str) -> bool) -> usize {
    text.lines()
        .position(|l| pred(l.trim()))
        .map(|i| i + 1)
        .expect("the line is in the fixture")
}

/// The lines of a house check file's only `[[check]]` block: its header to the end.
fn check_block(file: &str) -> RangeInclusive<usize> {
    let text = std::fs::read_to_string(root().join(file)).expect("fixture is readable");
    let start = line_of(&text, |l| l == "[[check]]");
    start..=text.lines().count()
}

/// The line numbers that stderr gives after `file:`.
fn lines_reported_for(err: &str, file: &str) -> Vec<usize> {
    let needle = format!("{file}:");
    err.match_indices(&needle)
        .filter_map(|(i, _)| {
            let digits: String = err[i + needle.len()..]
                .chars()
                .take_while(|c| c.is_ascii_digit())
                .collect();
            digits.parse().ok()
        })
        .collect()
}

/// `check` with a malformed house folder: exit 2, no report, and stderr names the file
/// as `file.toml:LINE` with LINE inside `lines`.
fn assert_house_refused(house: &str, file: &str, lines: RangeInclusive<usize>) -> String {
    let project = fixture("iso-class2-reinforced.toml");
    let folder = fixture(house);
    let o = run(&["check", &project, "--format", "json", "--rules", &folder]);
    assert_exit(&o, 2);
    assert!(
        o.stdout.is_empty(),
        "no report from unusable house rules\n{}",
        describe(&o)
    );
    let err = stderr(&o);
    let path = format!("{folder}/{file}");
    let reported = lines_reported_for(&err, &path);
    assert!(
        !reported.is_empty(),
        "stderr does not name {path}:LINE\n{err}"
    );
    assert!(
        reported.iter().any(|l| lines.contains(l)),
        "stderr names {path} at lines {reported:?}, expected one in {lines:?}\n{err}"
    );
    err
}

/// The line of `gapwarden rules` output that lists the check `id` (its first token).
fn rules_line<'a>(text: &'a str, id: &str) -> &'a str {
    text.lines()
        .find(|l| l.split_whitespace().next() == Some(id))
        .unwrap_or_else(|| panic!("`gapwarden rules` does not list the check {id}\n{text}"))
}

// ---------------------------------------------------------------------------------------
// 1. Isolation paths by protection class
// ---------------------------------------------------------------------------------------

#[test]
fn class2_with_only_basic_insulation_to_the_accessible_output_blocks_naming_the_path() {
    let (o, report) = check_json("iso-class2-basic-only.toml");
    assert_exit(&o, 1);

    let f = finding(&report, "isolation.insufficient", "output");
    assert_eq!(f["severity"], "blocking");
    let p = pair(&report, "primary", "output");
    let path_barriers = strings(&p["path"]["barriers"]);
    assert_eq!(path_barriers, ["pri-out"]);
    for b in &path_barriers {
        assert!(
            message(f).contains(b),
            "the message names the path's barrier {b}: {}",
            message(f)
        );
    }
    assert_eq!(p["provides_level"], 1);
    assert_eq!(p["needs_level"], 2, "Class II needs double or reinforced");
    assert!(p["earth"].is_null(), "Class II relies on no earth: {p}");
}

#[test]
fn class2_basic_plus_supplementary_through_an_inaccessible_circuit_is_double_insulation() {
    let (o, report) = check_json("iso-class2-basic-plus-supplementary.toml");
    assert_exit(&o, 0);
    assert_no_isolation_blocking(&report);
    assert!(
        findings_with(&report, "isolation.insufficient").is_empty(),
        "{:#}",
        report["findings"]
    );

    let p = pair(&report, "primary", "output");
    assert_eq!(
        p["provides_level"], 2,
        "basic + supplementary = double: {p}"
    );
    assert_eq!(p["needs_level"], 2);
    assert_eq!(
        strings(&p["path"]["circuits"]),
        ["primary", "aux", "output"]
    );
    assert_eq!(strings(&p["path"]["barriers"]), ["pri-aux", "aux-out"]);
    let description = p["path"]["description"].as_str().unwrap();
    let first = description
        .find("pri-aux")
        .expect("description names pri-aux");
    let second = description
        .find("aux-out")
        .expect("description names aux-out");
    assert!(first < second, "barriers in path order: {description}");
    // The intermediate circuit is not itself judged: it is not accessible.
    assert_eq!(report["isolation"]["pairs"].as_array().unwrap().len(), 1);
}

#[test]
fn class1_basic_insulation_to_an_earthed_accessible_chassis_is_clean_and_notes_the_earth() {
    let (o, report) = check_json("iso-class1-earthed-chassis.toml");
    assert_exit(&o, 0);
    assert!(blocking(&report).is_empty(), "{:#}", report["findings"]);

    let p = pair(&report, "primary", "chassis");
    assert_eq!(p["provides_level"], 1);
    assert_eq!(
        p["needs_level"], 1,
        "basic to an earthed part is enough in Class I"
    );
    assert_eq!(p["earth"], "chassis");

    let note = finding(&report, "isolation.relies_on_earth", "chassis");
    assert_eq!(note["severity"], "note");
    assert!(
        message(note).contains("protective earth of chassis"),
        "the note names the earthed circuit: {}",
        message(note)
    );
}

#[test]
fn class1_basic_insulation_to_an_unearthed_accessible_output_blocks() {
    let (o, report) = check_json("iso-class1-unearthed-output.toml");
    assert_exit(&o, 1);

    let f = finding(&report, "isolation.insufficient", "output");
    assert_eq!(f["severity"], "blocking");
    assert!(message(f).contains("pri-out"), "{}", message(f));
    let p = pair(&report, "primary", "output");
    assert_eq!(
        p["needs_level"], 2,
        "an unearthed accessible part needs double: {p}"
    );
    assert_eq!(p["provides_level"], 1);
    assert!(p["earth"].is_null(), "{p}");

    // The earthed chassis of the same design is still fine.
    let chassis = pair(&report, "primary", "chassis");
    assert_eq!(chassis["needs_level"], 1);
    assert_eq!(chassis["earth"], "chassis");
    assert!(
        findings_with(&report, "isolation.insufficient")
            .iter()
            .all(|f| f["subject"] != "chassis"),
        "{:#}",
        report["findings"]
    );
}

#[test]
fn class1_unearthed_accessible_circuit_behind_an_earthed_circuit_is_judged_to_that_earth() {
    let (o, report) = check_json("iso-class1-through-earthed.toml");
    assert_exit(&o, 0);
    assert_no_isolation_blocking(&report);

    let p = pair(&report, "primary", "knob");
    assert_eq!(
        p["earth"], "control",
        "held at earth by the control board: {p}"
    );
    assert_eq!(
        p["needs_level"], 1,
        "basic insulation to the earthed board: {p}"
    );
    assert_eq!(p["provides_level"], 1);
    assert_eq!(strings(&p["path"]["circuits"]), ["primary", "control"]);
    assert_eq!(strings(&p["path"]["barriers"]), ["pri-control"]);
    assert!(
        p["needs"].as_str().unwrap().contains("control"),
        "the need names the earthed circuit: {}",
        p["needs"]
    );
    let note = finding(&report, "isolation.relies_on_earth", "knob");
    assert!(message(note).contains("control"), "{}", message(note));
}

#[test]
fn hazardous_and_accessible_circuits_with_no_barrier_between_them_block_with_a_null_path() {
    let (o, report) = check_json("iso-no-barrier.toml");
    assert_exit(&o, 1);

    let p = pair(&report, "primary", "panel");
    assert!(
        p["path"].is_null(),
        "no declared barrier reaches panel: {p}"
    );
    assert_eq!(p["provides_level"], 0);
    let f = finding(&report, "isolation.no_barrier", "panel");
    assert_eq!(f["severity"], "blocking");
    assert!(message(f).contains("primary"), "{}", message(f));
    // Without a path there is nothing to weigh: no_barrier, not insufficient.
    assert!(
        findings_with(&report, "isolation.insufficient").is_empty(),
        "{:#}",
        report["findings"]
    );
}

#[test]
fn a_circuit_both_hazardous_and_accessible_blocks() {
    let (o, report) = check_json("iso-hazardous-accessible.toml");
    assert_exit(&o, 1);

    let p = pair(&report, "terminals", "terminals");
    assert_eq!(p["provides_level"], 0, "{p}");
    assert_eq!(p["needs_level"], 2);
    let on_terminals: Vec<&Value> = blocking(&report)
        .into_iter()
        .filter(|f| {
            f["subject"] == "terminals" && f["id"].as_str().unwrap().starts_with("isolation.")
        })
        .collect();
    assert!(
        !on_terminals.is_empty(),
        "a blocking isolation finding about terminals: {:#}",
        report["findings"]
    );
}

#[test]
fn class3_with_a_mains_circuit_blocks_and_notes_the_selv_supply() {
    let (o, report) = check_json("iso-class3-mains.toml");
    assert_exit(&o, 1);

    let f = finding(&report, "isolation.mains_in_class_iii", "supply");
    assert_eq!(f["severity"], "blocking");
    let notes = findings_with(&report, "isolation.class_iii_supply");
    assert_eq!(notes.len(), 1, "{:#}", report["findings"]);
    assert_eq!(notes[0]["severity"], "note");
    assert!(notes[0]["subject"].is_null());
}

#[test]
fn functional_insulation_in_parallel_with_reinforced_gives_the_weakest_path_and_blocks() {
    let (o, report) = check_json("iso-functional-parallel.toml");
    assert_exit(&o, 1);

    let p = pair(&report, "primary", "output");
    assert_eq!(
        p["provides_level"], 0,
        "functional insulation adds nothing: {p}"
    );
    assert_eq!(strings(&p["path"]["barriers"]), ["sense-trace"]);
    let f = finding(&report, "isolation.insufficient", "output");
    assert_eq!(f["severity"], "blocking");
    assert!(message(f).contains("sense-trace"), "{}", message(f));
}

#[test]
fn functional_insulation_in_series_with_basic_adds_nothing() {
    let (o, report) = check_json("iso-basic-plus-functional-series.toml");
    assert_exit(&o, 1);

    let p = pair(&report, "primary", "output");
    assert_eq!(
        p["provides_level"], 1,
        "basic + functional is still basic: {p}"
    );
    assert_eq!(strings(&p["path"]["barriers"]), ["pri-aux", "aux-out"]);
    let f = finding(&report, "isolation.insufficient", "output");
    assert_eq!(f["severity"], "blocking");
}

// ---------------------------------------------------------------------------------------
// 2. Capacitors across a barrier (IEC 60384-14 subclasses)
// ---------------------------------------------------------------------------------------

#[test]
fn y2_capacitor_across_reinforced_insulation_blocks() {
    // IEC 60384-14 (mostly confirmed): Y2 may bridge basic or supplementary insulation only.
    let (o, report) = check_json("part-y2-across-reinforced.toml");
    assert_exit(&o, 1);

    let f = finding(&report, "part.y_subclass_not_allowed", "CY1");
    assert_eq!(f["severity"], "blocking");
    assert!(
        message(f).contains("Y2") && message(f).contains("pri-sec"),
        "{}",
        message(f)
    );
    let b = bridge(&report, "CY1");
    assert_eq!(b["barrier"], "pri-sec");
    assert_eq!(b["subclass_allowed"], false);
    assert_eq!(b["series_accepted"], false);
}

#[test]
fn y1_capacitor_across_reinforced_insulation_raises_no_blocking_part_finding() {
    // IEC 60384-14 (mostly confirmed): Y1 may bridge double or reinforced insulation.
    let (o, report) = check_json("part-y1-across-reinforced.toml");
    assert_exit(&o, 0);
    assert_no_part_blocking(&report);
    assert!(findings_with(&report, "part.y_subclass_not_allowed").is_empty());
    assert_eq!(bridge(&report, "CY1")["subclass_allowed"], true);
    assert_eq!(
        check_outcome(&report, "part.y_subclass_not_allowed")["judged"],
        1
    );
}

#[test]
fn two_y2_in_series_across_reinforced_insulation_are_accepted_with_a_note() {
    // Two Y2 in series across reinforced insulation: common practice, no published source.
    let (o, report) = check_json("part-y2-series-across-reinforced.toml");
    assert_exit(&o, 0);
    assert!(blocking(&report).is_empty(), "{:#}", report["findings"]);

    let note = finding(&report, "part.y_series_accepted", "CY1");
    assert_eq!(note["severity"], "note");
    let b = bridge(&report, "CY1");
    assert_eq!(b["count_in_series"], 2);
    assert_eq!(b["series_accepted"], true);
    assert!(findings_with(&report, "part.y_subclass_not_allowed").is_empty());
}

#[test]
fn y_capacitor_rated_below_the_working_voltage_blocks() {
    let (o, report) = check_json("part-y-voltage-low.toml");
    assert_exit(&o, 1);

    let f = finding(&report, "part.capacitor_voltage_low", "CY2");
    assert_eq!(f["severity"], "blocking");
    assert!(
        message(f).contains("150") && message(f).contains("250"),
        "rated and working voltages in the message: {}",
        message(f)
    );
    // Y2 across basic insulation is allowed: only the rating is wrong.
    assert!(findings_with(&report, "part.y_subclass_not_allowed").is_empty());
}

#[test]
fn x_capacitor_bridging_a_barrier_to_an_accessible_circuit_blocks() {
    let (o, report) = check_json("part-x-to-accessible.toml");
    assert_exit(&o, 1);

    let f = finding(&report, "part.x_capacitor_to_accessible", "CX1");
    assert_eq!(f["severity"], "blocking");
    assert!(message(f).contains("pri-sec"), "{}", message(f));
    assert_eq!(bridge(&report, "CX1")["to_accessible"], true);
}

// ---------------------------------------------------------------------------------------
// 3. Optocouplers across reinforced insulation
// ---------------------------------------------------------------------------------------

#[test]
fn optocoupler_tested_below_3000_v_rms_across_reinforced_at_340_v_peak_blocks() {
    // IEC 60950-1 Table 5B (from memory, partly confirmed): working voltage above 184 V up
    // to 354 V peak, reinforced insulation -> 3000 V rms electric strength test.
    let (o, report) = check_json("part-opto-test-voltage-low.toml");
    assert_exit(&o, 1);

    let b = bridge(&report, "U1");
    assert!(
        approx(&b["working_peak_v"], 340.0),
        "{}",
        b["working_peak_v"]
    );
    assert!(
        approx(&b["required_test_v_rms"], 3000.0),
        "required test voltage {}",
        b["required_test_v_rms"]
    );
    let f = finding(&report, "part.isolation_test_low", "U1");
    assert_eq!(f["severity"], "blocking");
    assert!(
        message(f).contains("2500") && message(f).contains("3000"),
        "declared and required test voltages: {}",
        message(f)
    );
}

#[test]
fn optocoupler_package_creepage_below_the_barrier_requirement_blocks() {
    let (o, report) = check_json("part-opto-package-creepage-short.toml");
    assert_exit(&o, 1);

    // IEC 60664-1 Table F.4 (2007; F.5 in 2020), 250 V, PD2, material group III -> 2.5 mm
    // (confirmed); reinforced twice that (from memory for 60664-1) -> 5 mm.
    let required = &barrier(&report, "pri-sec")["required_creepage_mm"];
    assert!(approx(required, 5.0), "required creepage {required}");
    let b = bridge(&report, "U1");
    assert!(
        approx(&b["required_creepage_mm"], 5.0),
        "{}",
        b["required_creepage_mm"]
    );
    assert!(approx(&b["external_creepage_mm"], 4.0));

    let f = finding(&report, "part.package_creepage_short", "U1");
    assert_eq!(f["severity"], "blocking");
    assert!(
        message(f).contains("4 mm") && message(f).contains("5 mm"),
        "{}",
        message(f)
    );
    // Its 4 mm clearance reaches the 3 mm required clearance.
    assert!(findings_with(&report, "part.package_clearance_short").is_empty());
}

#[test]
fn optocoupler_with_0_2_mm_through_insulation_on_reinforced_without_thin_layer_rating_blocks() {
    // IEC 60950-1:2005 clause 2.10.5.1 (from memory): 0.4 mm least distance through
    // supplementary or reinforced insulation, unless the thin-layer rules are met.
    let (o, report) = check_json("part-opto-thin-insulation.toml");
    assert_exit(&o, 1);

    let f = finding(&report, "part.insulation_thickness_short", "U1");
    assert_eq!(f["severity"], "blocking");
    assert!(message(f).contains("0.2 mm"), "{}", message(f));
    let b = bridge(&report, "U1");
    assert_eq!(b["thin_layer_rated"], false);
    assert!(approx(&b["min_distance_through_insulation_mm"], 0.4));
}

#[test]
fn optocoupler_with_0_2_mm_through_insulation_rated_for_thin_layers_is_not_raised() {
    let (o, report) = check_json("part-opto-thin-layer-rated.toml");
    assert_exit(&o, 0);
    assert_no_part_blocking(&report);

    assert!(findings_with(&report, "part.insulation_thickness_short").is_empty());
    assert!(findings_with(&report, "part.insulation_thickness_missing").is_empty());
    assert_eq!(bridge(&report, "U1")["thin_layer_rated"], true);
    assert_eq!(
        check_outcome(&report, "part.insulation_thickness_short")["raised"],
        0
    );
    // 5000 V rms reaches the 3000 V rms test (IEC 60950-1 Table 5B, from memory).
    assert!(findings_with(&report, "part.isolation_test_low").is_empty());
}

// ---------------------------------------------------------------------------------------
// 4. Transformers
// ---------------------------------------------------------------------------------------

#[test]
fn transformer_with_two_tape_layers_across_reinforced_insulation_blocks() {
    // IEC 60950-1:2005 clause 2.10.5.2 (from memory): three thin-sheet layers for
    // reinforced insulation.
    let (o, report) = check_json("part-transformer-tape-layers.toml");
    assert_exit(&o, 1);

    let b = bridge(&report, "T1");
    assert_eq!(b["tape_layers"], 2);
    assert_eq!(b["min_tape_layers"], 3);
    let f = finding(&report, "part.transformer_layers_short", "T1");
    assert_eq!(f["severity"], "blocking");
    assert!(
        message(f).contains("2 tape layers") && message(f).contains("at least 3"),
        "{}",
        message(f)
    );
    // 110 C is within class B.
    assert!(findings_with(&report, "part.thermal_class_exceeded").is_empty());
}

#[test]
fn transformer_class_b_with_a_140_c_hot_spot_blocks() {
    // IEC 60085 (from memory): thermal class B, 130 C.
    let (o, report) = check_json("part-transformer-hot-spot.toml");
    assert_exit(&o, 1);

    let b = bridge(&report, "T1");
    assert!(
        approx(&b["thermal_class_max_c"], 130.0),
        "{}",
        b["thermal_class_max_c"]
    );
    assert!(approx(&b["hot_spot_c"], 140.0));
    let f = finding(&report, "part.thermal_class_exceeded", "T1");
    assert_eq!(f["severity"], "blocking");
    assert!(
        message(f).contains("140") && message(f).contains("130"),
        "{}",
        message(f)
    );
    // Triple-insulated wire has no tape layers to count.
    assert!(findings_with(&report, "part.transformer_layers_short").is_empty());
}

// ---------------------------------------------------------------------------------------
// 5. House rules
// ---------------------------------------------------------------------------------------

#[test]
fn house_minimum_creepage_of_10_mm_fails_a_reinforced_barrier_laid_out_at_8_mm() {
    let project = "iso-class2-reinforced.toml";
    let (o, shipped) = check_json(project);
    assert_exit(&o, 0);
    let b = barrier(&shipped, "pri-out");
    assert_eq!(b["verdict"], "pass");
    assert_eq!(b["house_minimum_applied"], false);

    let (o, house) = check_json_with_rules(project, "house-min-creepage");
    assert_exit(&o, 1);
    let b = barrier(&house, "pri-out");
    assert_eq!(b["verdict"], "fail", "{b:#}");
    assert_eq!(b["house_minimum_applied"], true);
    assert!(
        approx(&b["required_creepage_mm"], 10.0),
        "{}",
        b["required_creepage_mm"]
    );
    assert!(approx(&b["creepage_mm"], 8.0));
    let f = finding(&house, "barrier.creepage_short", "pri-out");
    assert_eq!(f["severity"], "blocking");
    // The report says which table was replaced, and by whom.
    let table = house["rules"]
        .as_array()
        .unwrap()
        .iter()
        .find(|r| r["id"] == "limits.minimum-distances")
        .expect("the minimum-distances table is listed");
    assert_eq!(table["origin"], "house");
}

#[test]
fn house_check_override_makes_a_missing_creepage_blocking() {
    let project = "iso-class2-creepage-not-measured.toml";
    let (o, shipped) = check_json(project);
    // An incomplete barrier is not ready for review (DESIGN.md, readiness), but with the
    // shipped checks nothing is blocking: --allow-incomplete gives exit 0.
    assert_exit(&o, 1);
    assert_eq!(shipped["readiness"]["state"], "not ready: incomplete");
    assert_exit(&run(&["check", &fixture(project), "--allow-incomplete"]), 0);
    assert_eq!(
        finding(&shipped, "barrier.creepage_missing", "pri-out")["severity"],
        "warning"
    );
    assert_eq!(
        check_outcome(&shipped, "barrier.creepage_missing")["origin"],
        "shipped"
    );

    let (o, house) = check_json_with_rules(project, "house-creepage-missing-blocking");
    assert_exit(&o, 1);
    assert_eq!(
        house["readiness"]["state"],
        "not ready: blocking, incomplete"
    );
    // Blocking is not relaxed by --allow-incomplete.
    assert_exit(
        &run(&[
            "check",
            &fixture(project),
            "--rules",
            &fixture("house-creepage-missing-blocking"),
            "--allow-incomplete",
        ]),
        1,
    );
    assert_eq!(barrier(&house, "pri-out")["verdict"], "incomplete");
    let f = finding(&house, "barrier.creepage_missing", "pri-out");
    assert_eq!(f["severity"], "blocking");
    // The override keeps the shipped message.
    assert!(message(f).contains("creepage_mm"), "{}", message(f));
    let c = check_outcome(&house, "barrier.creepage_missing");
    assert_eq!(c["origin"], "shipped, changed by house");
    assert_eq!(c["severity"], "blocking");
    assert_eq!(c["judged"], 1);
    assert_eq!(c["raised"], 1);
}

#[test]
fn house_folder_adding_a_new_check_raises_it() {
    let project = "part-y2-series-across-reinforced.toml";
    let (o, shipped) = check_json(project);
    assert_exit(&o, 0);
    assert!(findings_with(&shipped, "house.y_capacitance_high").is_empty());

    let (o, house) = check_json_with_rules(project, "house-new-check");
    assert_exit(&o, 1);
    let f = finding(&house, "house.y_capacitance_high", "CY1");
    assert_eq!(f["severity"], "blocking");
    assert!(message(f).contains("2.2 nF"), "{}", message(f));
    let c = check_outcome(&house, "house.y_capacitance_high");
    assert_eq!(c["origin"], "house");
    assert_eq!(c["judged"], 1);
    assert_eq!(c["raised"], 1);
    // The shipped checks still run beside it.
    finding(&house, "part.y_series_accepted", "CY1");
}

// ---------------------------------------------------------------------------------------
// 6. Malformed house rules: exit 2, file:LINE on stderr
// ---------------------------------------------------------------------------------------

#[test]
fn house_check_reusing_a_shipped_id_without_overrides_is_refused_with_file_and_line() {
    let file = "checks/dup.toml";
    let lines = check_block(&fixture(&format!("house-bad-reused-check-id/{file}")));
    let err = assert_house_refused("house-bad-reused-check-id", file, lines);
    assert!(err.contains("barrier.clearance_short"), "{err}");
    assert!(err.contains("overrides"), "the fix is suggested: {err}");
}

#[test]
fn house_check_with_an_unknown_field_is_refused_with_file_and_line() {
    let file = "checks/colour.toml";
    let lines = check_block(&fixture(&format!("house-bad-unknown-check-field/{file}")));
    let err = assert_house_refused("house-bad-unknown-check-field", file, lines);
    assert!(err.contains("colour"), "the unknown field is named: {err}");
}

#[test]
fn house_check_with_a_condition_syntax_error_is_refused_with_file_and_line() {
    let file = "checks/syntax.toml";
    let lines = check_block(&fixture(&format!("house-bad-condition-syntax/{file}")));
    let err = assert_house_refused("house-bad-condition-syntax", file, lines);
    assert!(err.contains("condition"), "{err}");
}

#[test]
fn house_condition_on_an_unknown_item_field_is_refused_even_without_items_to_check() {
    // The project checked has no [[part]], so no bridge: the condition never meets an item
    // of the checked design, and must still be refused.
    let (_, report) = check_json("iso-class2-reinforced.toml");
    assert!(report["bridges"].as_array().unwrap().is_empty());

    let file = "checks/field.toml";
    let lines = check_block(&fixture(&format!("house-bad-unknown-item-field/{file}")));
    let err = assert_house_refused("house-bad-unknown-item-field", file, lines);
    assert!(err.contains("no_such_field"), "the field is named: {err}");
}

#[test]
fn house_condition_on_an_unknown_input_warning_field_is_refused_though_no_design_has_warnings() {
    // Same defect class as above, over a collection (input_warnings) that is empty both
    // for the checked project and for ordinary designs.
    let file = "checks/field.toml";
    let lines = check_block(&fixture(&format!(
        "house-bad-unknown-field-unseen-kind/{file}"
    )));
    let err = assert_house_refused("house-bad-unknown-field-unseen-kind", file, lines);
    assert!(err.contains("no_such_field"), "the field is named: {err}");
}

#[test]
fn house_table_reusing_a_shipped_table_id_without_overrides_is_refused_with_file_and_line() {
    let file = "minimum-distances.toml";
    let path = fixture(&format!("house-bad-reused-table-id/{file}"));
    let text = std::fs::read_to_string(root().join(&path)).unwrap();
    let id_line = line_of(&text, |l| l.starts_with("id ="));
    let err = assert_house_refused("house-bad-reused-table-id", file, id_line..=id_line);
    assert!(err.contains("limits.minimum-distances"), "{err}");
    assert!(err.contains("overrides"), "the fix is suggested: {err}");
}

// ---------------------------------------------------------------------------------------
// 7. `gapwarden rules` lists the checks
// ---------------------------------------------------------------------------------------

#[test]
fn rules_lists_check_ids_with_severity_and_origin() {
    let o = run(&["rules"]);
    assert_exit(&o, 0);
    let text = stdout(&o);
    for (id, severity) in [
        ("barrier.clearance_short", "blocking"),
        ("barrier.creepage_missing", "warning"),
        ("isolation.insufficient", "blocking"),
        ("isolation.relies_on_earth", "note"),
        ("part.y_subclass_not_allowed", "blocking"),
        ("part.thermal_class_exceeded", "blocking"),
    ] {
        let line = rules_line(&text, id);
        assert!(
            line.contains(severity),
            "{id} should show {severity}: {line}"
        );
        assert!(
            line.contains("shipped"),
            "{id} should show its origin: {line}"
        );
        assert!(!line.contains("house"), "{id} is not a house check: {line}");
    }
}

#[test]
fn rules_with_a_house_folder_shows_changed_and_added_checks_with_their_origin() {
    let strict = fixture("house-creepage-missing-blocking");
    let o = run(&["rules", "--rules", &strict]);
    assert_exit(&o, 0);
    let text = stdout(&o);
    let line = rules_line(&text, "barrier.creepage_missing");
    assert!(line.contains("blocking"), "overridden severity: {line}");
    assert!(line.contains("shipped, changed by house"), "{line}");
    let untouched = rules_line(&text, "barrier.clearance_missing");
    assert!(
        untouched.contains("warning") && !untouched.contains("house"),
        "{untouched}"
    );

    let added = fixture("house-new-check");
    let o = run(&["rules", "--rules", &added]);
    assert_exit(&o, 0);
    let text = stdout(&o);
    let line = rules_line(&text, "house.y_capacitance_high");
    assert!(line.contains("blocking"), "{line}");
    assert!(
        line.contains("house") && !line.contains("shipped"),
        "{line}"
    );
}
