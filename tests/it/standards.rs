//! End-product standards (`[design] standard`, `spacing --standard`): check values for
//! IEC 62368-1, IEC 60601-1 and IEC 60335-1, each taken from the project's reference notes
//! (rules/SOURCES.md: IEC 62368-1, IEC 60601-1, IEC 60335-1 and [SLP]) and naming its source and how sure it is,
//! never read from `rules/`; the refusals; and the physical invariants per standard.

use crate::common;
use common::{assert_exit, describe, query, root, run, stderr, stdout};

use gapwarden::commands::{SpacingQuery, spacing_under};
use gapwarden::project::{Grade, MaterialGroup};
use gapwarden::spacing::BarrierResult;
use gapwarden::standards::{Means, Standard};

#[track_caller]
fn assert_mm(actual: f64, expected: f64) {
    assert!(
        (actual - expected).abs() < 1e-9,
        "expected {expected}, got {actual}"
    );
}

fn under(standard: Standard, q: &SpacingQuery, means: Option<Means>) -> BarrierResult {
    spacing_under(&common::shipped_rules(), q, standard, means)
        .unwrap_or_else(|p| panic!("refused under {standard:?}:\n{p}"))
        .0
}

fn refused(standard: Standard, q: &SpacingQuery, means: Option<Means>) -> String {
    match spacing_under(&common::shipped_rules(), q, standard, means) {
        Ok((r, _)) => panic!(
            "expected a refusal, got clearance {} mm",
            r.required_clearance_mm
        ),
        Err(p) => p.to_string(),
    }
}

/// 250 V rms on a 230 V mains, overvoltage category II, pollution degree 2, at 2000 m.
fn at_250(grade: Grade, group: MaterialGroup) -> SpacingQuery {
    SpacingQuery {
        working_rms_v: 250.0,
        grade,
        material_group: Some(group),
        ..query()
    }
}

// ---------------------------------------------------------------------------------------
// IEC 62368-1
// ---------------------------------------------------------------------------------------

#[test]
fn iec62368_reinforced_at_250_v_takes_the_larger_of_both_clearance_procedures() {
    let r = under(
        Standard::Iec62368,
        &at_250(Grade::Reinforced, MaterialGroup::IIIa),
        None,
    );
    assert_eq!(r.standard, "iec62368-1");
    // Procedure 2: the mains transient for 230 V, overvoltage category II, is 2500 V (Table 12
    // follows the IEC 60664-1 Table F.1 series: from memory of IEC 62368-1; F.1 confirmed
    // [N20]); Table 14, reinforced at 2500 Vp -> 3.0 mm (confirmed: a CB report,
    // "2500 Vp: 1.5 (BI), 3.0 (RI)").
    assert_mm(r.rated_impulse_v.expect("withstand voltage"), 2500.0);
    assert_mm(r.transient_clearance_mm.expect("procedure 2"), 3.0);
    // Procedure 1: 250 V x sqrt(2) = 353.6 V peak; Table 10 (= IEC 60664-1 Table F.8 Case A,
    // [TI1]) at 0.4 kV 0.02 mm, reinforced twice that (one source), raised to the pollution
    // degree 2 reinforced minimum 0.4 mm (one source).
    assert_mm(r.steady_state_clearance_mm.expect("procedure 1"), 0.4);
    // The larger governs.
    assert_mm(r.required_clearance_mm, 3.0);
    assert_eq!(r.clearance_governed_by, "procedure-2");
}

#[test]
fn iec62368_procedure_1_governs_at_a_high_working_peak() {
    let r = under(
        Standard::Iec62368,
        &SpacingQuery {
            working_peak_v: Some(4000.0),
            ..at_250(Grade::Basic, MaterialGroup::IIIa)
        },
        None,
    );
    // Table 10 basic at 4.0 kV peak: 3.8 mm (confirmed: [TI1] Table 5); procedure 2 basic at
    // 2500 Vp: 1.5 mm (confirmed: a CB report).
    assert_mm(r.steady_state_clearance_mm.expect("procedure 1"), 3.8);
    assert_mm(r.transient_clearance_mm.expect("procedure 2"), 1.5);
    assert_mm(r.required_clearance_mm, 3.8);
    assert_eq!(r.clearance_governed_by, "procedure-1");
}

#[test]
fn iec62368_reinforced_creepage_at_250_v_group_iii_is_5_mm() {
    let r = under(
        Standard::Iec62368,
        &at_250(Grade::Reinforced, MaterialGroup::IIIb),
        None,
    );
    // Table 17 = IEC 60664-1 Table F.5 general columns: PD2, group III, 250 V -> 2.5 mm;
    // reinforced twice basic -> 5.0 mm (confirmed: [TI1]; a CB report shows 5.0 = 2 x 2.5).
    assert_mm(r.required_creepage_mm, 5.0);
    // Group I at 250 V: 1.25 mm (confirmed: [TI1]), twice is 2.5 mm, below the 3.0 mm
    // clearance: creepage is never less than clearance (common practice; from memory).
    let r = under(
        Standard::Iec62368,
        &at_250(Grade::Reinforced, MaterialGroup::I),
        None,
    );
    assert_mm(r.required_creepage_mm, 3.0);
    // Basic, group II at 400 V: 2.8 mm (confirmed: [TI1]).
    let r = under(
        Standard::Iec62368,
        &SpacingQuery {
            working_rms_v: 400.0,
            ..at_250(Grade::Basic, MaterialGroup::II)
        },
        None,
    );
    assert_mm(r.required_creepage_mm, 2.8);
}

#[test]
fn iec62368_printed_board_uses_the_general_creepage_columns() {
    // The printed-wiring columns are not confirmed for IEC 62368-1: the general column applies
    // (conservative; REFERENCES). Basic, group IIIa, 250 V: 2.5 mm ([TI1]).
    let r = under(
        Standard::Iec62368,
        &SpacingQuery {
            printed_board: true,
            ..at_250(Grade::Basic, MaterialGroup::IIIa)
        },
        None,
    );
    assert_mm(r.required_creepage_mm, 2.5);
}

#[test]
fn iec62368_electric_strength_at_250_v_is_the_highest_of_tables_25_and_27() {
    let r = under(
        Standard::Iec62368,
        &at_250(Grade::Reinforced, MaterialGroup::IIIa),
        None,
    );
    // Table 25: reinforced at a 2500 V withstand voltage -> 4000 V peak (one source; a CB report
    // tests reinforced barriers at 4000 V d.c.); Table 27, mains up to 250 V, reinforced
    // -> 4000 V (one source). As a.c.: peak / sqrt(2) (one source), rounded up to the volt.
    assert_mm(r.test_v_dc.expect("d.c. test"), 4000.0);
    assert_mm(
        r.test_v_rms.expect("a.c. test"),
        (4000.0 / 2f64.sqrt()).ceil(),
    );
    assert_eq!(r.test_v_state, "computed");
    // Basic: Table 25 gives the withstand voltage 2500 V, Table 27 2000 V: 2500 V governs.
    let r = under(
        Standard::Iec62368,
        &at_250(Grade::Basic, MaterialGroup::IIIa),
        None,
    );
    assert_mm(r.test_v_dc.expect("d.c. test"), 2500.0);
    assert_mm(
        r.test_v_rms.expect("a.c. test"),
        (2500.0 / 2f64.sqrt()).ceil(),
    );
    // Table 26 is not carried: the derivation says so rather than staying silent.
    assert!(
        r.derivation
            .electric_strength
            .iter()
            .any(|s| s.text.contains("Table 26") && s.text.contains("not carried")),
        "{:?}",
        r.derivation.electric_strength
    );
}

#[test]
fn iec62368_a_barrier_at_520_v_peak_gets_a_test_voltage() {
    // IEC 60950-1 Table 5B stopped at 354 V peak; IEC 62368-1 Tables 25 and 27 depend on the
    // withstand voltage and the mains, not on the working peak: 4000 V peak, as above.
    let r = under(
        Standard::Iec62368,
        &SpacingQuery {
            working_peak_v: Some(520.0),
            ..at_250(Grade::Reinforced, MaterialGroup::IIIa)
        },
        None,
    );
    assert_mm(r.test_v_dc.expect("a test voltage at 520 V peak"), 4000.0);
    // The same through the shipped example, end to end.
    let o = run(&["check", "examples/class2-adapter.toml", "--format", "json"]);
    assert_exit(&o, 0);
    let report: serde_json::Value = serde_json::from_str(&stdout(&o)).expect("JSON");
    let b = report["barriers"]
        .as_array()
        .expect("barriers")
        .iter()
        .find(|b| b["id"] == "pri-sec")
        .expect("pri-sec");
    assert_eq!(b["standard"], "iec62368-1");
    assert_eq!(b["working_peak_v"], 520.0);
    assert_eq!(b["test_v_dc"], 4000.0);
    assert!(b["test_v_rms"].is_number());
    // Functional insulation: null, with the reason.
    let f = report["barriers"]
        .as_array()
        .expect("barriers")
        .iter()
        .find(|b| b["grade"] == "functional")
        .expect("a functional barrier");
    assert!(f["test_v_rms"].is_null() && f["test_v_dc"].is_null());
    assert!(
        f["test_v_basis"]
            .as_str()
            .unwrap_or("")
            .contains("functional"),
        "{}",
        f["test_v_basis"]
    );
    // No power-entry warning that a test voltage is missing.
    assert!(
        !report["findings"]
            .as_array()
            .expect("findings")
            .iter()
            .any(|f| f["id"] == "power_entry.test_voltage_beyond_table"),
        "a test voltage is missing"
    );
}

#[test]
fn iec62368_altitude_multiplies_the_clearance() {
    let at = |altitude_m: f64| {
        under(
            Standard::Iec62368,
            &SpacingQuery {
                altitude_m,
                ..at_250(Grade::Basic, MaterialGroup::IIIa)
            },
            None,
        )
    };
    // Basic at 2000 m: 1.5 mm (Table 14, 2500 Vp, confirmed). Table 16 factors 1.14 at 3000 m,
    // 1.29 at 4000 m, 1.48 at 5000 m (confirmed: [TI1]); rounded up to 0.01 mm.
    assert_mm(at(2000.0).required_clearance_mm, 1.5);
    assert_mm(at(3000.0).required_clearance_mm, 1.71);
    assert_mm(at(4000.0).required_clearance_mm, 1.94); // 1.935 rounded up
    assert_mm(at(5000.0).required_clearance_mm, 2.22);
    // Between rows the next higher row: 3500 m takes 1.29.
    assert_mm(at(3500.0).altitude_factor, 1.29);
    // Above the last row carried: refused, never extrapolated.
    let message = refused(
        Standard::Iec62368,
        &SpacingQuery {
            altitude_m: 6000.0,
            ..at_250(Grade::Basic, MaterialGroup::IIIa)
        },
        None,
    );
    assert!(message.contains("not carried"), "{message}");
}

#[test]
fn iec62368_refuses_above_30_khz() {
    // Tables 11 and 18 (above 30 kHz) could not be sourced: such a barrier is refused.
    let text =
        std::fs::read_to_string(root().join("examples/class2-adapter.toml")).expect("the example");
    let text = text.replacen(
        "working_peak_v = 520",
        "working_peak_v = 520\nworking_frequency_hz = 65000",
        1,
    );
    let (o, _) = check_text("hf.toml", &text);
    assert_exit(&o, 2);
    assert!(stderr(&o).contains("30000 Hz"), "{}", stderr(&o));
    assert!(stderr(&o).contains("not carried"), "{}", stderr(&o));
}

// ---------------------------------------------------------------------------------------
// IEC 60601-1
// ---------------------------------------------------------------------------------------

#[test]
fn iec60601_mopp_and_moop_at_250_v() {
    // [SLP], a medical power-supply maker's guideline, at 250 V rms (354 V peak), pollution
    // degree 2, material group III (one source):
    // 1 MOPP creepage 4 mm, clearance 2.5 mm, test 1500 V a.c.
    // 2 MOPP 8 mm, 5 mm, 4000 V a.c.
    // 1 MOOP 2.5 mm, 2.0 mm, 1500 V a.c.
    // 2 MOOP 5 mm, 4 mm, 3000 V a.c.
    for (means, creepage, clearance, test) in [
        (Means::OneMopp, 4.0, 2.5, 1500.0),
        (Means::TwoMopp, 8.0, 5.0, 4000.0),
        (Means::OneMoop, 2.5, 2.0, 1500.0),
        (Means::TwoMoop, 5.0, 4.0, 3000.0),
    ] {
        let r = under(
            Standard::Iec60601,
            &at_250(Grade::Basic, MaterialGroup::IIIa),
            Some(means),
        );
        assert_eq!(r.means_of_protection, Some(means.as_str()));
        assert_mm(r.required_creepage_mm, creepage);
        assert_mm(r.required_clearance_mm, clearance);
        assert_mm(r.test_v_rms.expect("test voltage"), test);
        // The peak of that a.c. test stands beside it.
        assert!((r.test_v_dc.expect("peak") - test * 2f64.sqrt()).abs() < 1e-3);
    }
}

#[test]
fn iec60601_mopp_between_rows_takes_the_next_carried_row() {
    // 200 V rms is between the 125 V row (one source of unknown quality) and the 250 V row
    // ([SLP]): never interpolated, the 250 V row (conservative): 2 MOPP 8 mm / 5 mm.
    let r = under(
        Standard::Iec60601,
        &SpacingQuery {
            working_rms_v: 200.0,
            ..query()
        },
        Some(Means::TwoMopp),
    );
    assert_mm(r.required_creepage_mm, 8.0);
    assert_mm(r.required_clearance_mm, 5.0);
    // 400 V rms (one source of unknown quality; verify): 2 MOPP 12 mm / 7 mm; its test
    // voltage is not carried (above 354 V peak): null, with the reason.
    let r = under(
        Standard::Iec60601,
        &SpacingQuery {
            working_rms_v: 400.0,
            ..query()
        },
        Some(Means::TwoMopp),
    );
    assert_mm(r.required_creepage_mm, 12.0);
    assert_mm(r.required_clearance_mm, 7.0);
    assert_eq!(r.test_v_rms, None);
    assert_eq!(r.test_v_state, "not-carried");
    assert!(r.test_v_basis.contains("not carried"), "{}", r.test_v_basis);
}

#[test]
fn iec60601_moop_outside_the_row_carried_is_refused() {
    // Only the 250 V row of MOOP is carried ([SLP]); 400 V rms is refused, not guessed.
    let message = refused(
        Standard::Iec60601,
        &SpacingQuery {
            working_rms_v: 400.0,
            ..query()
        },
        Some(Means::OneMoop),
    );
    assert!(message.contains("not carried"), "{message}");
}

#[test]
fn iec60601_grades_are_means_of_protection_and_only_there() {
    // Under IEC 60601-1 an insulation grade other than functional is refused...
    let message = refused(
        Standard::Iec60601,
        &at_250(Grade::Reinforced, MaterialGroup::I),
        None,
    );
    assert!(
        message.contains("1-moop") && message.contains("2-mopp"),
        "{message}"
    );
    // ...and a means of protection under another standard too.
    let message = refused(
        Standard::Iec62368,
        &at_250(Grade::Basic, MaterialGroup::I),
        Some(Means::TwoMopp),
    );
    assert!(message.contains("iec60601-1"), "{message}");
}

/// Writes `text` to a scratch file and runs `check --format json` on it.
fn check_text(name: &str, text: &str) -> (std::process::Output, serde_json::Value) {
    let dir = std::env::temp_dir().join(format!("gapwarden-standards-{}", std::process::id()));
    std::fs::create_dir_all(&dir).expect("scratch folder");
    let path = dir.join(name);
    std::fs::write(&path, text).expect("scratch file");
    let o = run(&[
        "check",
        path.to_str().expect("a UTF-8 path"),
        "--format",
        "json",
    ]);
    let report = serde_json::from_str(&stdout(&o)).unwrap_or(serde_json::Value::Null);
    (o, report)
}

fn medical() -> String {
    std::fs::read_to_string(root().join("examples/medical-supply.toml")).expect("the example")
}

/// The findings that `keep` keeps, as "id (subject)".
fn ids_where(report: &serde_json::Value, keep: fn(&serde_json::Value) -> bool) -> Vec<String> {
    report["findings"]
        .as_array()
        .expect("findings")
        .iter()
        .filter(|f| keep(f))
        .map(|f| format!("{} ({})", f["id"].as_str().unwrap_or(""), f["subject"]))
        .collect()
}

fn blocking_ids(report: &serde_json::Value) -> Vec<String> {
    ids_where(report, |f| f["severity"] == "blocking")
}

#[test]
fn iec60601_two_y2_across_2_mopp_are_blocking_and_two_y1_accepted() {
    // The shipped example: two Y1 in series across 2 MOPP, accepted ([SLP]: "2 MOPP across a
    // capacitor needs two Y1 in series; Y2 is not enough").
    let (o, report) = check_text("y1.toml", &medical());
    assert_exit(&o, 0);
    assert!(
        blocking_ids(&report).is_empty(),
        "{:?}",
        blocking_ids(&report)
    );
    // Two Y2 in series across the same barrier: blocking.
    let y2 = medical().replacen("subclass = \"Y1\"", "subclass = \"Y2\"", 1);
    let (o, report) = check_text("y2.toml", &y2);
    assert_exit(&o, 1);
    let blocking = blocking_ids(&report);
    assert!(
        blocking
            .iter()
            .any(|b| b.starts_with("part.y_subclass_not_allowed")),
        "{blocking:?}"
    );
    let finding = report["findings"]
        .as_array()
        .expect("findings")
        .iter()
        .find(|f| f["id"] == "part.y_subclass_not_allowed")
        .expect("the finding");
    assert!(
        finding["message"].as_str().unwrap_or("").contains("2 MOPP"),
        "{}",
        finding["message"]
    );
    // One Y1 alone across 2 MOPP is not enough either.
    let one = medical().replacen("count_in_series = 2", "count_in_series = 1", 1);
    let (o, report) = check_text("y1-single.toml", &one);
    assert_exit(&o, 1);
    assert!(
        blocking_ids(&report)
            .iter()
            .any(|b| b.starts_with("part.y_subclass_not_allowed")),
        "{:?}",
        blocking_ids(&report)
    );
}

/// Two Y2 in series across reinforced or double insulation: the finding, the bridge entry
/// and the readiness of a check on `text`.
fn two_y2(name: &str, text: &str) -> (serde_json::Value, serde_json::Value, serde_json::Value) {
    let (o, report) = check_text(name, text);
    // Not blocking: a design that was ready before stays ready (a warning does not change
    // readiness); the string was never proven wrong, only not proven right.
    assert_exit(&o, 0);
    assert!(
        blocking_ids(&report).is_empty(),
        "{:?}",
        blocking_ids(&report)
    );
    let find = |id: &str| {
        report["findings"]
            .as_array()
            .expect("findings")
            .iter()
            .find(|f| f["id"] == id && f["subject"] == "CY1")
            .cloned()
            .unwrap_or(serde_json::Value::Null)
    };
    let warning = find("part.y_series_test_decides");
    assert_eq!(warning["severity"], "warning", "{:#}", report["findings"]);
    // The IEC 60950-1 practice's note does not speak under a named end-product standard.
    assert!(find("part.y_series_accepted").is_null());
    let bridge = report["bridges"]
        .as_array()
        .expect("bridges")
        .iter()
        .find(|b| b["part"] == "CY1")
        .cloned()
        .expect("CY1 bridges a barrier");
    assert_eq!(bridge["series_test_decides"], true);
    assert_eq!(bridge["subclass_allowed"], true, "not blocking");
    (warning, bridge, report)
}

#[track_caller]
fn message_has(finding: &serde_json::Value, parts: &[&str]) {
    let message = finding["message"].as_str().unwrap_or("");
    for part in parts {
        assert!(message.contains(part), "{part} missing from: {message}");
    }
}

#[test]
fn iec62368_two_y2_across_reinforced_are_left_to_the_electric_strength_test() {
    // The Class II example (IEC 62368-1, 230 V mains, overvoltage category II) with two Y2 in
    // series across its reinforced pri-sec barrier instead of one Y1.
    let text = std::fs::read_to_string(root().join("examples/class2-adapter.toml"))
        .expect("the example")
        .replacen(
            "subclass = \"Y1\"",
            "subclass = \"Y2\"\ncount_in_series = 2",
            1,
        );
    let (warning, bridge, _) = two_y2("y2-62368.toml", &text);
    // The barrier's test: IEC 62368-1 Table 25, reinforced at a required withstand voltage
    // of 2500 V (the 230 V, category II mains transient: the IEC 60664-1 Table F.1 series,
    // confirmed [N20]) -> 4000 V peak (one source; a CB report tests reinforced barriers at
    // 4000 V d.c.); Table 27, mains up to 250 V, reinforced 4000 V (one source): the highest
    // is 4000 V peak or d.c.; as a.c. 4000 / sqrt(2) = 2828.4 V, rounded up to 2829 V rms.
    let peak = 4000.0_f64;
    let rms = (peak / 2f64.sqrt()).ceil();
    assert_eq!(rms, 2829.0);
    assert_eq!(bridge["barrier_test_v_dc"], peak);
    assert_eq!(bridge["barrier_test_v_rms"], rms);
    assert_eq!(bridge["standard"], "iec62368-1");
    message_has(
        &warning,
        &[
            "iec62368-1",
            "4000 V peak",
            "2829 V rms",
            "electric strength test",
            "lab",
        ],
    );
    // The explanation of the part names the Y2 impulse test (5 kV, IEC 60384-14, confirmed
    // against maker data sheets) as not being that test.
    let steps = bridge["derivation"].to_string();
    assert!(
        steps.contains("5000 V peak") && steps.contains("not the electric strength test"),
        "{steps}"
    );

    // The same string under the IEC 60664-1 basics keeps the IEC 60950-1 practice's note
    // (two Y2 in series: community practice under IEC 60950-1, rules/SOURCES.md "Safety
    // capacitors") and raises no warning.
    let basics = text.replacen("standard = \"iec62368-1\"", "standard = \"iec60664-1\"", 1);
    let (o, report) = check_text("y2-basics.toml", &basics);
    assert_exit(&o, 0);
    let ids: Vec<&str> = report["findings"]
        .as_array()
        .expect("findings")
        .iter()
        .filter_map(|f| f["id"].as_str())
        .collect();
    assert!(ids.contains(&"part.y_series_accepted"), "{ids:?}");
    assert!(!ids.contains(&"part.y_series_test_decides"), "{ids:?}");
}

#[test]
fn iec60335_two_y2_across_reinforced_are_left_to_the_electric_strength_test() {
    // The two-Y2 fixture (reinforced, 250 V rms, 230 V mains) judged under IEC 60335-1.
    let text = std::fs::read_to_string(
        root().join("tests/fixtures/part-y2-series-across-reinforced.toml"),
    )
    .expect("the fixture")
    .replacen(
        "protection_class = \"II\"",
        "protection_class = \"II\"\nstandard = \"iec60335-1\"",
        1,
    );
    let (warning, bridge, _) = two_y2("y2-60335.toml", &text);
    // IEC 60335-1 clause 16.3 Table 7, reinforced insulation, rated voltage above 150 V up
    // to 250 V: 3000 V a.c. (from memory of IEC 60335-1; verify against a licensed copy);
    // its peak 3000 x sqrt(2) = 4242.64 V.
    assert_eq!(bridge["barrier_test_v_rms"], 3000.0);
    let peak = bridge["barrier_test_v_dc"].as_f64().expect("a peak figure");
    assert!((peak - 3000.0 * 2f64.sqrt()).abs() < 1e-3, "{peak}");
    message_has(
        &warning,
        &["iec60335-1", "3000 V rms", "electric strength test", "lab"],
    );
}

#[test]
fn iec60601_two_y2_across_2_moop_are_left_to_the_electric_strength_test() {
    // The medical example with its pri-sec barrier as 2 MOOP and two Y2 in series: the
    // [SLP] rule (two Y1 across 2 MOPP) does not reach 2 MOOP, whose test is 3000 V a.c. at
    // 250 V rms ([SLP], one source); whether two Y2 withstand it is the lab's test.
    // The output is then no applied part (2 MOOP toward a patient would be short of MOPP:
    // isolation.means_short, pinned by iec60601_an_applied_part_needs_2_mopp_from_the_mains).
    let text = medical()
        .replacen("applied_part = true", "applied_part = false", 1)
        .replacen("grade = \"2-mopp\"", "grade = \"2-moop\"", 1)
        .replacen("subclass = \"Y1\"", "subclass = \"Y2\"", 1);
    let (warning, bridge, _) = two_y2("y2-moop.toml", &text);
    assert_eq!(bridge["barrier_test_v_rms"], 3000.0);
    message_has(&warning, &["iec60601-1", "2-moop", "3000 V rms", "lab"]);
}

#[test]
fn explain_lists_and_shows_each_barriers_electric_strength_test() {
    // An unknown item lists every item: each barrier's electric strength test among them.
    let o = run(&["explain", "examples/class2-adapter.toml", "no-such-item"]);
    assert_exit(&o, 2);
    let err = stderr(&o);
    for barrier in ["pri-sec", "input-output", "input-bulk"] {
        assert!(
            err.contains(&format!("{barrier}.electric_strength")),
            "{barrier}.electric_strength missing from: {err}"
        );
    }
    let o = run(&[
        "explain",
        "examples/class2-adapter.toml",
        "pri-sec.electric_strength",
    ]);
    assert_exit(&o, 0);
    let text = stdout(&o);
    // IEC 62368-1, reinforced, 230 V mains, category II: Table 25 at the 2500 V withstand
    // voltage -> 4000 V peak (one source), Table 27 mains up to 250 V -> 4000 V (one
    // source); a.c. 4000 / sqrt(2) = 2828.4, rounded up to 2829 V rms.
    let rms = (4000.0_f64 / 2f64.sqrt()).ceil();
    assert!(
        text.starts_with("pri-sec.electric_strength:")
            && text.contains(&format!("{rms} V rms"))
            && text.contains("4000 V peak or d.c.")
            && text.contains("Table 26 not carried"),
        "{text}"
    );
    // Only the test, not the distances.
    assert!(!text.contains("pri-sec.clearance"), "{text}");
    // Functional insulation: no test applies, and the item says why.
    let o = run(&[
        "explain",
        "examples/class2-adapter.toml",
        "input-bulk.electric_strength",
    ]);
    assert_exit(&o, 0);
    assert!(
        stdout(&o).contains("no electric strength test applies"),
        "{}",
        stdout(&o)
    );
}

// ---------------------------------------------------------------------------------------
// IEC 60601-1: means of protection counted along the isolation paths
// ---------------------------------------------------------------------------------------

/// The `isolation.means` entry for `circuit`.
fn means_to(report: &serde_json::Value, circuit: &str) -> serde_json::Value {
    report["isolation"]["means"]
        .as_array()
        .unwrap_or_else(|| panic!("no isolation.means: {:#}", report["isolation"]))
        .iter()
        .find(|m| m["circuit"] == circuit)
        .cloned()
        .unwrap_or_else(|| panic!("no means entry for {circuit}: {:#}", report["isolation"]))
}

fn finding_ids(report: &serde_json::Value) -> Vec<String> {
    ids_where(report, |_| true)
}

#[test]
fn iec60601_an_applied_part_needs_2_mopp_from_the_mains() {
    // Issue 13, from memory of IEC 60601-1 (rules/SOURCES.md "IEC 60601-1": means of
    // protection for operators and patients, each counted once or twice): an applied part
    // needs 2 MOPP from the mains; only means of patient protection count toward it.
    // The medical example: output is an applied part; both paths from the mains circuit
    // ac-input (directly across input-output, 2 MOPP; through the functional input-bulk and
    // pri-sec, 2 MOPP) give 2 MOPP.
    let (o, report) = check_text("means-2mopp.toml", &medical());
    assert_exit(&o, 0);
    let m = means_to(&report, "output");
    assert_eq!(m["mains"], "ac-input");
    assert_eq!(m["applied_part"], true);
    assert_eq!(m["counts"], "mopp");
    assert_eq!(
        (m["provides"].as_u64(), m["needs"].as_u64()),
        (Some(2), Some(2))
    );
    assert_eq!(report["circuits"][2]["applied_part"], true);

    // pri-sec as 2 MOOP: operator means do not count toward a patient, so the path through
    // the functional input-bulk (0) and pri-sec (0 MOPP) gives 0 MOPP: blocking. For the
    // protection class 2 MOOP is reinforced insulation, so only the new check speaks.
    let moop = medical().replacen("grade = \"2-mopp\"", "grade = \"2-moop\"", 1);
    let (o, report) = check_text("means-2moop.toml", &moop);
    assert_exit(&o, 1);
    let m = means_to(&report, "output");
    assert_eq!(
        (m["provides"].as_u64(), m["needs"].as_u64()),
        (Some(0), Some(2))
    );
    assert_eq!(
        m["description"],
        "ac-input -[input-bulk: functional]- primary -[pri-sec: 2-moop]- output"
    );
    assert_eq!(
        blocking_ids(&report),
        ["isolation.means_short (\"output\")"]
    );
    let f = report["findings"]
        .as_array()
        .expect("findings")
        .iter()
        .find(|f| f["id"] == "isolation.means_short")
        .expect("the finding");
    let message = f["message"].as_str().unwrap_or("");
    assert!(
        message.contains("applied part output")
            && message.contains("0 MOPP")
            && message.contains("2 MOPP"),
        "{message}"
    );

    // pri-sec as 1 MOPP: 1 of the 2 MOPP needed.
    let one = medical().replacen("grade = \"2-mopp\"", "grade = \"1-mopp\"", 1);
    let (o, report) = check_text("means-1mopp.toml", &one);
    assert_exit(&o, 1);
    let m = means_to(&report, "output");
    assert_eq!(
        (m["provides"].as_u64(), m["needs"].as_u64()),
        (Some(1), Some(2))
    );
    assert!(
        blocking_ids(&report).contains(&"isolation.means_short (\"output\")".to_string()),
        "{:?}",
        blocking_ids(&report)
    );
}

/// A mains circuit and one accessible circuit, one barrier between them graded `grade`,
/// under IEC 60601-1 at 250 V rms on 230 V mains (the row the MOOP figures carry: [SLP]):
/// tests/fixtures/iec60601-one-barrier.toml with its class, grade and flags replaced.
fn one_barrier(class: &str, grade: &str, earthed: bool, applied_part: bool) -> String {
    let text = std::fs::read_to_string(root().join("tests/fixtures/iec60601-one-barrier.toml"))
        .expect("the fixture");
    let replaced = text
        .replacen(
            "protection_class = \"II\"",
            &format!("protection_class = \"{class}\""),
            1,
        )
        .replacen("grade = \"2-moop\"", &format!("grade = \"{grade}\""), 1)
        .replacen(
            "earthed = false # enclosure",
            &format!("earthed = {earthed}"),
            1,
        )
        .replacen(
            "applied_part = false",
            &format!("applied_part = {applied_part}"),
            1,
        );
    for key in ["protection_class", "grade", "earthed", "applied_part"] {
        assert!(replaced.contains(key), "{key}");
    }
    replaced
}

#[test]
fn iec60601_an_accessible_circuit_needs_2_moop_or_1_moop_and_protective_earth() {
    // Issue 13, from memory of IEC 60601-1 (rules/SOURCES.md "IEC 60601-1"): an accessible
    // enclosure needs 2 MOOP, or 1 MOOP plus protective earth; a MOPP counts as a MOOP.
    // Distances are generous (10 mm, 20 mm: above the 2 MOPP 5 mm / 8 mm of [SLP]) so that
    // only the counting is judged.
    let judge = |name: &str, text: String| {
        let (o, report) = check_text(name, &text);
        let m = means_to(&report, "enclosure");
        (o, report, m)
    };
    // Class II, 2 MOOP: enough.
    let (o, _, m) = judge("moop2.toml", one_barrier("II", "2-moop", false, false));
    assert_exit(&o, 0);
    assert_eq!(m["counts"], "moop");
    assert_eq!(
        (m["provides"].as_u64(), m["needs"].as_u64()),
        (Some(2), Some(2))
    );
    // Class II, 1 MOOP: short.
    let (o, report, m) = judge("moop1.toml", one_barrier("II", "1-moop", false, false));
    assert_exit(&o, 1);
    assert_eq!(
        (m["provides"].as_u64(), m["needs"].as_u64()),
        (Some(1), Some(2))
    );
    assert!(
        finding_ids(&report).contains(&"isolation.means_short (\"enclosure\")".to_string()),
        "{:?}",
        finding_ids(&report)
    );
    // Class I with the enclosure at protective earth, 1 MOOP: enough (1 MOOP plus earth).
    let (o, report, m) = judge("moop1-pe.toml", one_barrier("I", "1-moop", true, false));
    assert_eq!(
        (m["provides"].as_u64(), m["needs"].as_u64()),
        (Some(1), Some(1))
    );
    assert_eq!(m["earth"], "enclosure");
    assert!(
        !finding_ids(&report)
            .iter()
            .any(|f| f.starts_with("isolation.means_short")),
        "{:?}",
        finding_ids(&report)
    );
    assert!(blocking_ids(&report).is_empty(), "{}", describe(&o));
    // A MOPP counts as a MOOP: 2 MOPP to an accessible (not applied) enclosure is 2 MOOP.
    let (o, _, m) = judge(
        "mopp-as-moop.toml",
        one_barrier("II", "2-mopp", false, false),
    );
    assert_exit(&o, 0);
    assert_eq!(m["counts"], "moop");
    assert_eq!(m["provides"].as_u64(), Some(2));
    // Not the other way round: 2 MOOP to an applied part is 0 MOPP.
    let (o, _, m) = judge(
        "moop-to-patient.toml",
        one_barrier("II", "2-moop", false, true),
    );
    assert_exit(&o, 1);
    assert_eq!(m["counts"], "mopp");
    assert_eq!(
        (m["provides"].as_u64(), m["needs"].as_u64()),
        (Some(0), Some(2))
    );
}

#[test]
fn applied_part_changes_nothing_under_the_other_standards() {
    // The Class II example under IEC 62368-1 with its output marked as an applied part: the
    // same findings, barriers and exit status; no means are counted.
    let text =
        std::fs::read_to_string(root().join("examples/class2-adapter.toml")).expect("the example");
    let marked = text.replacen("kind = \"safe\"", "kind = \"safe\"\napplied_part = true", 1);
    assert_ne!(marked, text);
    let (o1, plain) = check_text("plain.toml", &text);
    let (o2, applied) = check_text("applied.toml", &marked);
    assert_eq!(o1.status.code(), o2.status.code());
    assert_eq!(finding_ids(&plain), finding_ids(&applied));
    assert_eq!(plain["barriers"], applied["barriers"]);
    assert_eq!(plain["isolation"]["pairs"], applied["isolation"]["pairs"]);
    assert!(applied["isolation"]["means"].is_null());
    assert!(
        applied["circuits"]
            .as_array()
            .expect("circuits")
            .iter()
            .any(|c| c["applied_part"] == true)
    );
}

#[test]
fn iec60601_touch_current_limits_follow_the_design_standard() {
    // IEC 60601-1 touch current 100 uA in normal condition (one source: makers' service
    // manuals), judged on the Class II example's accessible output.
    let (o, report) = check_text("touch.toml", &medical());
    assert_exit(&o, 0);
    let touch = &report["power_entry"]["touch"][0];
    assert_eq!(touch["limit_ma"], 0.1, "{touch}");
}

// ---------------------------------------------------------------------------------------
// IEC 60335-1
// ---------------------------------------------------------------------------------------

#[test]
fn iec60335_basic_and_reinforced_at_230_v() {
    let q = |grade, group| SpacingQuery {
        working_rms_v: 230.0,
        grade,
        material_group: Some(group),
        ..query()
    };
    // Basic: rated impulse 2500 V (Table 15, the F.1 series, from memory); Table 16 at 2500 V
    // -> 1.5 mm (one reproduction of IEC 60335-1 agrees); Table 17 at 230 V takes the 250 V
    // row: PD2 group III 2.5 mm, group II 1.8 mm, group I 1.25 mm (one reproduction agrees).
    for (group, creepage) in [
        (MaterialGroup::IIIa, 2.5),
        (MaterialGroup::II, 1.8),
        (MaterialGroup::I, 1.5), // 1.25 raised to the 1.5 mm clearance (common practice)
    ] {
        let r = under(Standard::Iec60335, &q(Grade::Basic, group), None);
        assert_mm(r.required_clearance_mm, 1.5);
        assert_mm(r.required_creepage_mm, creepage);
        // Electric strength, basic: 1250 V (from memory of IEC 60335-1 Table 7).
        assert_mm(r.test_v_rms.expect("test voltage"), 1250.0);
    }
    // Reinforced: the next higher impulse voltage, 4000 V -> 3.0 mm (from memory of clause
    // 29.1; F.2 Case A); creepage twice basic, 5.0 mm (from memory of clause 29.2); test
    // voltage 3000 V (from memory of Table 7).
    let r = under(
        Standard::Iec60335,
        &q(Grade::Reinforced, MaterialGroup::IIIa),
        None,
    );
    assert_mm(r.required_clearance_mm, 3.0);
    assert_mm(r.required_creepage_mm, 5.0);
    assert_mm(r.test_v_rms.expect("test voltage"), 3000.0);
    // Supplementary: 1750 V (from memory of Table 7).
    let r = under(
        Standard::Iec60335,
        &q(Grade::Supplementary, MaterialGroup::IIIa),
        None,
    );
    assert_mm(r.test_v_rms.expect("test voltage"), 1750.0);
}

#[test]
fn iec60335_functional_insulation_is_marked_not_carried() {
    let r = under(
        Standard::Iec60335,
        &at_250(Grade::Functional, MaterialGroup::IIIa),
        None,
    );
    assert!(
        r.derivation
            .creepage
            .iter()
            .any(|s| s.text.contains("Table 18") && s.text.contains("not carried")),
        "{:?}",
        r.derivation.creepage
    );
    assert_eq!(r.test_v_rms, None);
    assert_eq!(r.test_v_state, "not-applicable");
}

// ---------------------------------------------------------------------------------------
// Choosing the standard
// ---------------------------------------------------------------------------------------

#[test]
fn an_unknown_standard_is_refused_with_the_list_carried() {
    let text = medical().replacen("standard = \"iec60601-1\"", "standard = \"iec61010-1\"", 1);
    let (o, _) = check_text("unknown.toml", &text);
    assert_exit(&o, 2);
    let err = stderr(&o);
    assert!(err.contains("design.standard"), "{err}");
    for word in ["iec62368-1", "iec60601-1", "iec60335-1", "iec60664-1"] {
        assert!(err.contains(word), "{word} missing from: {err}");
    }
    let o = run(&[
        "spacing",
        "--working-rms-v",
        "250",
        "--standard",
        "iec61010-1",
    ]);
    assert_exit(&o, 2);
    assert!(stderr(&o).contains("iec62368-1"), "{}", stderr(&o));
}

#[test]
fn without_a_standard_the_basics_apply_and_the_report_says_so() {
    let text = medical()
        .replacen("standard = \"iec60601-1\"", "", 1)
        .replace("\"2-mopp\"", "\"reinforced\"");
    let (o, report) = check_text("basics.toml", &text);
    assert_eq!(report["design"]["standard"], "iec60664-1", "{}", stderr(&o));
    assert_eq!(report["design"]["standard_named"], false);
    assert_eq!(report["barriers"][0]["standard"], "iec60664-1");
    let cautions = report["cautions"].to_string();
    assert!(cautions.contains("end-product standard"), "{cautions}");
    assert!(
        report["assumptions"]
            .to_string()
            .contains("No end-product standard named"),
        "{}",
        report["assumptions"]
    );
}

#[test]
fn the_examples_state_their_standard_and_keep_their_readiness() {
    for (file, standard, exit) in [
        ("examples/class2-adapter.toml", "iec62368-1", 0),
        ("examples/class1-appliance.toml", "iec60335-1", 1),
        ("examples/medical-supply.toml", "iec60601-1", 0),
    ] {
        let o = run(&["check", file, "--format", "json"]);
        assert_exit(&o, exit);
        let report: serde_json::Value = serde_json::from_str(&stdout(&o)).expect("JSON");
        assert_eq!(report["design"]["standard"], standard, "{file}");
        let title = report["design"]["standard_title"].as_str().unwrap_or("");
        // The cautions name the standard and its edition.
        assert!(
            report["cautions"][0].as_str().unwrap_or("").contains(title) && title.contains(':'),
            "{file}: {}",
            report["cautions"][0]
        );
    }
    // The medical example has a 2 MOPP barrier.
    assert!(medical().contains("grade = \"2-mopp\""));
}

#[test]
fn new_writes_the_standard_with_the_others_listed() {
    let dir = std::env::temp_dir().join(format!("gapwarden-new-std-{}", std::process::id()));
    std::fs::create_dir_all(&dir).expect("scratch folder");
    let path = dir.join("fresh.toml");
    let _ = std::fs::remove_file(&path);
    let o = run(&["new", path.to_str().expect("UTF-8 path")]);
    assert_exit(&o, 0);
    let text = std::fs::read_to_string(&path).expect("written");
    let line = text
        .lines()
        .find(|l| l.trim_start().starts_with("standard"))
        .expect("a standard line");
    assert!(line.contains("\"iec62368-1\""), "{line}");
    let around: String = text
        .lines()
        .skip_while(|l| !l.trim_start().starts_with("standard"))
        .take(3)
        .collect();
    for other in ["iec60601-1", "iec60335-1", "iec60664-1"] {
        assert!(around.contains(other), "{other} not listed: {around}");
    }
}

#[test]
fn rules_lists_tables_by_standard_with_from_memory_provenance() {
    let o = run(&["rules"]);
    assert_exit(&o, 0);
    let text = stdout(&o);
    let at = |needle: &str| {
        text.find(needle)
            .unwrap_or_else(|| panic!("{needle} not listed"))
    };
    // Each standard's heading comes before its tables.
    assert!(at("[iec62368-1]") < at("iec62368-1.table-14"));
    assert!(at("[iec60601-1]") < at("iec60601-1.mopp"));
    assert!(at("[iec60335-1]") < at("iec60335-1.table-16"));
    assert!(text.contains("from memory of IEC 62368-1; verify against a licensed copy"));
}

// ---------------------------------------------------------------------------------------
// Invariants per standard: more voltage never needs less; reinforced never less than basic
// ---------------------------------------------------------------------------------------

/// Voltages from 10 V to 1000 V rms in uneven steps (the rows and the points between them).
fn voltages() -> Vec<f64> {
    let mut v = Vec::new();
    let mut x = 10.0;
    while x <= 1000.0 {
        v.push(x);
        x = (x * 1.07 + 1.0_f64).round();
    }
    v
}

/// Clearance, creepage and (where both carry one) the test voltage: a test voltage that is
/// not carried above a table's last row is null, which is a refusal, not a smaller figure.
#[track_caller]
fn never_less(lower: &BarrierResult, higher: &BarrierResult, what: &str) {
    let pairs = [
        (
            "clearance",
            Some(lower.required_clearance_mm),
            Some(higher.required_clearance_mm),
        ),
        (
            "creepage",
            Some(lower.required_creepage_mm),
            Some(higher.required_creepage_mm),
        ),
        ("test voltage", lower.test_v_dc, higher.test_v_dc),
    ];
    for (name, low, high) in pairs {
        if let (Some(low), Some(high)) = (low, high) {
            assert!(
                high >= low - 1e-9,
                "{what}: {name} fell from {low} to {high}"
            );
        }
    }
}

fn try_under(standard: Standard, q: &SpacingQuery, means: Option<Means>) -> Option<BarrierResult> {
    spacing_under(&common::shipped_rules(), q, standard, means)
        .ok()
        .map(|(r, _)| r)
}

#[test]
fn more_voltage_never_needs_less_under_any_standard() {
    let cases: Vec<(Standard, Grade, Option<Means>)> = vec![
        (Standard::Iec62368, Grade::Basic, None),
        (Standard::Iec62368, Grade::Reinforced, None),
        (Standard::Iec62368, Grade::Double, None),
        (Standard::Iec60335, Grade::Basic, None),
        (Standard::Iec60335, Grade::Supplementary, None),
        (Standard::Iec60335, Grade::Reinforced, None),
        (Standard::Iec60601, Grade::Basic, Some(Means::OneMopp)),
        (Standard::Iec60601, Grade::Basic, Some(Means::TwoMopp)),
        (Standard::Iec60601, Grade::Basic, Some(Means::OneMoop)),
        (Standard::Iec60601, Grade::Basic, Some(Means::TwoMoop)),
    ];
    for (standard, grade, means) in cases {
        let mut judged = 0;
        let results: Vec<(f64, Option<BarrierResult>)> = voltages()
            .into_iter()
            .map(|v| {
                let q = SpacingQuery {
                    working_rms_v: v,
                    grade,
                    material_group: Some(MaterialGroup::IIIa),
                    ..query()
                };
                (v, try_under(standard, &q, means))
            })
            .collect();
        for pair in results.windows(2) {
            if let ((lv, Some(lower)), (hv, Some(higher))) = (&pair[0], &pair[1]) {
                never_less(
                    lower,
                    higher,
                    &format!("{standard:?} {grade:?} {means:?} {lv} -> {hv} V"),
                );
                judged += 1;
            }
        }
        // A refusal below never turns into a figure above: the carried range is one piece.
        let first_refused = results.iter().position(|(_, r)| r.is_none());
        if let Some(i) = first_refused {
            assert!(
                results[i..].iter().all(|(_, r)| r.is_none()),
                "{standard:?} {means:?}: refused at {} V but not above",
                results[i].0
            );
        }
        assert!(
            judged > 3,
            "{standard:?} {grade:?} {means:?}: too few judged"
        );
    }
    // Working peaks under IEC 62368-1 (procedure 1), and the mains voltage (procedure 2).
    let mut last = None::<BarrierResult>;
    for peak in [400.0, 600.0, 900.0, 1500.0, 2500.0, 4000.0, 8000.0, 20000.0] {
        let r = under(
            Standard::Iec62368,
            &SpacingQuery {
                working_peak_v: Some(peak),
                ..at_250(Grade::Basic, MaterialGroup::IIIa)
            },
            None,
        );
        if let Some(l) = &last {
            never_less(l, &r, &format!("IEC 62368-1 at {peak} V peak"));
        }
        last = Some(r);
    }
    for standard in [Standard::Iec62368, Standard::Iec60335] {
        let mut last = None::<BarrierResult>;
        for nominal_v in [48.0, 100.0, 120.0, 230.0, 277.0, 400.0, 480.0] {
            let r = under(
                standard,
                &SpacingQuery {
                    nominal_v,
                    working_rms_v: 200.0,
                    ..query()
                },
                None,
            );
            if let Some(l) = &last {
                never_less(l, &r, &format!("{standard:?} at {nominal_v} V mains"));
            }
            last = Some(r);
        }
    }
}

#[test]
fn reinforced_never_needs_less_than_basic_under_any_standard() {
    for v in voltages() {
        let q = |grade| SpacingQuery {
            working_rms_v: v,
            grade,
            material_group: Some(MaterialGroup::II),
            ..query()
        };
        for standard in [Standard::Iec62368, Standard::Iec60335] {
            let (Some(basic), Some(reinforced), Some(double)) = (
                try_under(standard, &q(Grade::Basic), None),
                try_under(standard, &q(Grade::Reinforced), None),
                try_under(standard, &q(Grade::Double), None),
            ) else {
                continue;
            };
            never_less(
                &basic,
                &reinforced,
                &format!("{standard:?} reinforced at {v} V"),
            );
            never_less(&basic, &double, &format!("{standard:?} double at {v} V"));
        }
        // Two means of protection never need less than one of the same kind.
        for (one, two) in [
            (Means::OneMopp, Means::TwoMopp),
            (Means::OneMoop, Means::TwoMoop),
        ] {
            let (Some(a), Some(b)) = (
                try_under(Standard::Iec60601, &q(Grade::Basic), Some(one)),
                try_under(Standard::Iec60601, &q(Grade::Basic), Some(two)),
            ) else {
                continue;
            };
            never_less(&a, &b, &format!("{one:?} -> {two:?} at {v} V"));
        }
    }
}

#[test]
fn iec62368_judges_the_voltage_2_s_after_disconnection_against_es1() {
    // IEC 62368-1 clause 5.5.2.2: the voltage 2 s after disconnection (confirmed in a CB
    // report) within ES1, 60 V d.c. (one source). The example: 1 Mohm across 0.1 uF + 0.47 uF,
    // tau = 0.57 s; at the 264 V crest, 264 x sqrt(2) x e^(-2 / 0.57) = 11.2 V: within 60 V.
    let o = run(&["check", "examples/class2-adapter.toml", "--format", "json"]);
    let report: serde_json::Value = serde_json::from_str(&stdout(&o)).expect("JSON");
    let d = &report["power_entry"]["discharge"];
    assert_eq!(d["residual_limit_v"], 60.0);
    let expected = 264.0 * 2f64.sqrt() * (-2.0_f64 / 0.57).exp();
    assert!((d["residual_v"].as_f64().expect("residual") - expected).abs() < 1e-3);
    // A 10 Mohm bleeder: tau = 5.7 s, 373.4 x e^(-2 / 5.7) = 263 V after 2 s: above ES1.
    let text = std::fs::read_to_string(root().join("examples/class2-adapter.toml"))
        .expect("the example")
        .replacen("bleeder_ohm = 1.0e6", "bleeder_ohm = 1.0e7", 1);
    let (o, report) = check_text("slow-bleeder.toml", &text);
    assert_exit(&o, 1);
    assert!(
        blocking_ids(&report)
            .iter()
            .any(|b| b.starts_with("power_entry.x_residual_high")),
        "{:?}",
        blocking_ids(&report)
    );
}

#[test]
fn compare_names_a_change_of_standard_as_the_cause_of_changed_figures() {
    let old = std::fs::read_to_string(root().join("examples/class2-adapter.toml"))
        .expect("the example")
        .replacen("standard = \"iec62368-1\"", "standard = \"iec60664-1\"", 1);
    let dir = std::env::temp_dir().join(format!("gapwarden-compare-std-{}", std::process::id()));
    std::fs::create_dir_all(&dir).expect("scratch folder");
    let path = dir.join("old.toml");
    std::fs::write(&path, old).expect("written");
    let o = run(&[
        "compare",
        path.to_str().expect("UTF-8 path"),
        "examples/class2-adapter.toml",
    ]);
    let text = stdout(&o);
    assert!(text.contains("The standard changed"), "{text}");
    assert!(text.contains("IEC 62368-1:2018"), "{text}");
    // The reinforced creepage rises from the basics' 3 mm (printed wiring, raised to the
    // clearance) to IEC 62368-1's 5 mm (2 x 2.5 mm, [TI1]).
    assert!(
        text.lines().any(|l| l.contains("pri-sec")
            && l.contains("required creepage")
            && l.ends_with("| 3 | 5 |")),
        "{text}"
    );
}
