//! Check values and regression tests for the spacing rules of issue 10: the steady-state
//! clearance table, the altitude table read between rows, reinforced insulation above the
//! preferred series, functional insulation, narrow grooves, the Table F.2 open point, exact
//! verdicts and electric strength tests above the shipped table. Every expected figure comes
//! from the reference notes (rules/SOURCES.md) or is worked out here, never from `rules/`.

use crate::common;
use common::{query, shipped_rules as rules, spacing_of as run, spacing_refusal as refusal};

use gapwarden::checks::Severity;
use gapwarden::commands::SpacingQuery;
use gapwarden::diag::Source;
use gapwarden::project::{
    BetweenRows, BoardCoating, BoardConductor, Field, Grade, MaterialGroup, OvervoltageCategory,
};
use gapwarden::report::{Report, Templates, check_source, render_markdown};
use gapwarden::spacing::{BarrierResult, Verdict};

#[track_caller]
fn assert_mm(actual: f64, expected: f64) {
    assert!(
        (actual - expected).abs() < 1e-9,
        "expected {expected} mm, got {actual} mm"
    );
}

/// Table F.8 alone: pollution degree 1 (no minimum), a 330 V transient (Table F.2 0.01 mm,
/// below every F.8 figure tested) and a small working voltage so the creepage table stays in range.
fn steady(peak_v: f64, field: Field) -> BarrierResult {
    run(&SpacingQuery {
        working_rms_v: 10.0,
        working_peak_v: Some(peak_v),
        transient_v: Some(330.0),
        pollution_degree: 1,
        field,
        ..query()
    })
}

/// A project file with one barrier (and any extra TOML for it and after it), evaluated
/// and judged by the shipped rules.
fn check(barrier: &str, extra: &str, design_extra: &str) -> Report {
    let text = format!(
        r#"[design]
name = "Invented test design"
revision = "A"
protection_class = "II"
{design_extra}

[environment]
pollution_degree = 2
overvoltage_category = "II"
altitude_m = 2000

[mains]
nominal_v = 230
max_v = 264
min_v = 90
frequency_hz = 50

[[circuit]]
id = "primary"
kind = "hazardous"
accessible = false
earthed = false

[[circuit]]
id = "output"
kind = "safe"
accessible = true
earthed = false

[[barrier]]
id = "b1"
between = ["primary", "output"]
{barrier}

{extra}
"#
    );
    check_source(&Source::new("test.toml", text), &rules())
        .unwrap_or_else(|p| panic!("the test project was refused:\n{p}"))
}

// ---------------------------------------------------------------------------------------
// Item 1: steady-state and recurring peaks (IEC 60664-1:2020 Table F.8, F.7 in 2007)
// ---------------------------------------------------------------------------------------

#[test]
fn steady_state_peak_reads_the_steady_state_table_not_the_transient_table() {
    let at3 = run(&SpacingQuery {
        transient_v: Some(1500.0),
        working_peak_v: Some(3000.0),
        ..query()
    });
    // IEC 60664-1:2020 Table F.8, Case A, 3.0 kV -> 2.4 mm (confirmed, [N20]);
    // Table F.2 at 3.0 kV would give 2.0 mm (the defect)
    assert_mm(at3.required_clearance_mm, 2.4);
    assert_eq!(at3.clearance_governed_by, "steady-state");
    // IEC 60664-1:2020 Table F.2, 1.5 kV, Case A -> 0.5 mm (confirmed [N20]) is the transient part
    assert_mm(at3.transient_clearance_mm.expect("a transient figure"), 0.5);
    assert_mm(
        at3.steady_state_clearance_mm
            .expect("a steady-state figure"),
        2.4,
    );

    let at5 = run(&SpacingQuery {
        transient_v: Some(1500.0),
        working_peak_v: Some(5000.0),
        working_rms_v: 250.0,
        ..query()
    });
    // IEC 60664-1:2020 Table F.8, Case A, 5.0 kV -> 5.7 mm (confirmed [N20]); F.2 would give 4.0 mm
    assert_mm(at5.required_clearance_mm, 5.7);
}

#[test]
fn steady_state_table_case_a_check_values() {
    // IEC 60664-1:2020 Table F.8, Case A (confirmed, [N20]); PD1, no minimum
    for (kv, mm) in [
        (0.8, 0.13),
        (1.0, 0.26),
        (1.2, 0.42),
        (1.5, 0.76),
        (2.0, 1.27),
        (2.5, 1.8),
        (4.0, 3.8),
        (6.0, 7.9),
        (8.0, 11.0),
        (10.0, 15.2),
        (12.0, 19.0),
        (15.0, 25.0),
        (20.0, 34.0),
        (30.0, 55.0),
        (40.0, 77.0),
        (50.0, 100.0),
    ] {
        let r = steady(kv * 1000.0, Field::Inhomogeneous);
        assert!(
            (r.required_clearance_mm - mm).abs() < 1e-9,
            "Table F.8 Case A at {kv} kV: expected {mm} mm, got {} mm",
            r.required_clearance_mm
        );
    }
}

#[test]
fn steady_state_table_case_b_check_values() {
    // IEC 60664-1:2020 Table F.8, Case B (confirmed, [N20]); PD1, no minimum
    for (kv, mm) in [
        (1.0, 0.15),
        (3.0, 0.8),
        (6.0, 2.0),
        (20.0, 8.0),
        (50.0, 22.0),
        (60.0, 27.0),
        (80.0, 35.0),
        (100.0, 45.0),
    ] {
        let r = steady(kv * 1000.0, Field::Homogeneous);
        assert!(
            (r.required_clearance_mm - mm).abs() < 1e-9,
            "Table F.8 Case B at {kv} kV: expected {mm} mm, got {} mm",
            r.required_clearance_mm
        );
    }
}

#[test]
fn steady_state_peak_between_rows_takes_the_next_higher_row() {
    // IEC 60664-1:2020 Table F.8, Case A: 2.6 kV lies between 2.5 and 3.0 kV -> 3.0 kV row, 2.4 mm (confirmed [N20])
    assert_mm(
        steady(2600.0, Field::Inhomogeneous).required_clearance_mm,
        2.4,
    );
}

#[test]
fn steady_state_peak_beyond_case_a_is_refused_never_extrapolated() {
    let message = refusal(&SpacingQuery {
        working_rms_v: 10.0,
        working_peak_v: Some(60000.0),
        transient_v: Some(330.0),
        ..query()
    });
    // IEC 60664-1:2020 Table F.8: Case A ends at 50 kV ([N20])
    assert!(
        message.contains("50") && message.contains("Case A"),
        "the refusal should name the end of Case A: {message}"
    );
    assert!(message.contains("working-peak-v"), "{message}");
}

#[test]
fn reinforced_reads_the_steady_state_table_at_160_percent_of_the_peak() {
    let r = run(&SpacingQuery {
        grade: Grade::Reinforced,
        transient_v: Some(330.0),
        working_peak_v: Some(1875.0),
        working_rms_v: 250.0,
        pollution_degree: 1,
        ..query()
    });
    // 1875 V x 160 % (from memory of IEC 60664-1 clause 5.1.6) = 3000 V;
    // IEC 60664-1:2020 Table F.8, Case A, 3.0 kV -> 2.4 mm (confirmed [N20])
    assert_mm(r.steady_state_peak_v.expect("a steady-state peak"), 3000.0);
    assert_mm(r.required_clearance_mm, 2.4);
}

#[test]
fn pollution_degree_minimums_apply_to_the_steady_state_figure() {
    let pd2 = run(&SpacingQuery {
        working_rms_v: 250.0,
        working_peak_v: Some(400.0),
        transient_v: Some(330.0),
        pollution_degree: 2,
        ..query()
    });
    // Table F.8, 0.4 kV -> 0.02 mm (confirmed [N20]) raised to the PD2 minimum 0.2 mm (rules/SOURCES.md: minimums apply, from memory)
    assert_mm(pd2.required_clearance_mm, 0.2);
    assert_eq!(pd2.clearance_governed_by, "pollution-degree-minimum");
    let pd3 = run(&SpacingQuery {
        pollution_degree: 3,
        working_rms_v: 10.0,
        working_peak_v: Some(1000.0),
        transient_v: Some(330.0),
        ..query()
    });
    // Table F.8, 1.0 kV -> 0.26 mm (confirmed [N20]) raised to the PD3 minimum 0.8 mm
    assert_mm(pd3.required_clearance_mm, 0.8);
}

#[test]
fn steady_state_peak_defaults_to_the_sinusoidal_peak_of_the_working_voltage() {
    let r = run(&SpacingQuery {
        working_rms_v: 1000.0,
        working_peak_v: None,
        transient_v: Some(330.0),
        pollution_degree: 1,
        ..query()
    });
    // 1000 V rms x sqrt(2) = 1414 V peak (circuit theory) -> Table F.8, Case A, next row 1.5 kV -> 0.76 mm (confirmed [N20])
    assert_mm(
        r.steady_state_peak_v.expect("a steady-state peak"),
        (1000.0f64 * 2f64.sqrt() * 1e6).round() / 1e6,
    );
    assert_mm(r.steady_state_clearance_mm.expect("a figure"), 0.76);
    assert_eq!(r.clearance_governed_by, "steady-state");
}

// ---------------------------------------------------------------------------------------
// Item 2: altitude between rows (IEC 60664-1:2020 Table F.10, 2007 Table A.2)
// ---------------------------------------------------------------------------------------

#[test]
fn altitude_between_rows_takes_the_next_higher_row_by_default() {
    let r = run(&SpacingQuery {
        altitude_m: 3500.0,
        ..query()
    });
    // rules/SOURCES.md: between rows makers apply the next higher row; 4000 m -> 1.29 (confirmed [TI2], [SE])
    assert_mm(r.altitude_factor, 1.29);
    // Table F.2, 2.5 kV, Case A 1.5 mm (confirmed) x 1.29 = 1.935 mm, rounded up to 0.01 mm -> 1.94 mm
    assert_mm(r.required_clearance_mm, 1.94);
    let text: String = r
        .derivation
        .clearance
        .iter()
        .map(|s| s.text.clone())
        .collect();
    assert!(text.contains("next higher row"), "{text}");
}

#[test]
fn altitude_3500_m_is_interpolated_only_when_the_project_switches_it_on() {
    let r = run(&SpacingQuery {
        altitude_m: 3500.0,
        altitude_between_rows: BetweenRows::Interpolate,
        ..query()
    });
    // Linear between 3000 m (1.14, indirectly confirmed [SE]) and 4000 m (1.29, confirmed): 1.215
    assert!(
        (r.altitude_factor - 1.215).abs() < 1e-6,
        "{}",
        r.altitude_factor
    );
    // 1.5 mm x 1.215 = 1.8225 mm, rounded up to 0.01 mm -> 1.83 mm
    assert_mm(r.required_clearance_mm, 1.83);
    let text: String = r
        .derivation
        .clearance
        .iter()
        .map(|s| s.text.clone())
        .collect();
    assert!(text.contains("interpolated"), "{text}");
}

#[test]
fn altitude_factors_at_every_row() {
    // IEC 60664-1:2020 Table F.10 / 2007 Table A.2 per rules/SOURCES.md: 3000 m 1.14 (indirect [SE]),
    // 4000 m 1.29 (confirmed [TI2], [SE]), 5000 m 1.48 (confirmed [TI1], [GM], [SE]),
    // 6000 m 1.70, 7000 m 1.95, 8000 m 2.25, 9000 m 2.62, 10000 m 3.02 (from memory)
    for (m, factor) in [
        (3000.0, 1.14),
        (4000.0, 1.29),
        (5000.0, 1.48),
        (6000.0, 1.70),
        (7000.0, 1.95),
        (8000.0, 2.25),
        (9000.0, 2.62),
        (10000.0, 3.02),
    ] {
        let r = run(&SpacingQuery {
            altitude_m: m,
            ..query()
        });
        assert!(
            (r.altitude_factor - factor).abs() < 1e-9,
            "{m} m: expected {factor}, got {}",
            r.altitude_factor
        );
    }
}

#[test]
fn altitude_between_rows_key_in_the_project_file_switches_interpolation_and_the_report_says_so() {
    let barrier = r#"grade = "basic"
working_rms_v = 250
material_group = "I"
clearance_mm = 3
creepage_mm = 3"#;
    // Up to 2000 m no correction applies (Table F.10: 2000 m 1.00, confirmed [N20]).
    assert_mm(check(barrier, "", "").barriers[0].altitude_factor, 1.0);
    // A project at 3500 m, with and without the switch.
    let at = |design: &str| {
        let source = Source::new(
            "alt.toml",
            format!(
                "[design]\nname = \"x\"\nrevision = \"A\"\nprotection_class = \"II\"\n{design}\n[environment]\naltitude_m = 3500\n[mains]\nnominal_v = 230\n[[circuit]]\nid = \"a\"\nkind = \"hazardous\"\n[[circuit]]\nid = \"b\"\nkind = \"safe\"\naccessible = true\n[[barrier]]\nid = \"b1\"\nbetween = [\"a\", \"b\"]\n{barrier}\n"
            ),
        );
        check_source(&source, &rules()).unwrap_or_else(|p| panic!("{p}"))
    };
    let next = at("");
    // 4000 m row: 1.29 (confirmed [TI2], [SE])
    assert_mm(next.barriers[0].altitude_factor, 1.29);
    let interpolated = at("altitude_between_rows = \"interpolate\"");
    // Linear between 1.14 and 1.29: 1.215
    assert!((interpolated.barriers[0].altitude_factor - 1.215).abs() < 1e-6);
    let md = render_markdown(&interpolated, &Templates::shipped()).expect("renders");
    assert!(
        md.contains("Altitude correction factor between table rows: linear interpolation"),
        "the report should say which reading applies"
    );
    let md = render_markdown(&next, &Templates::shipped()).expect("renders");
    assert!(md.contains("Altitude correction factor between table rows: the next higher row"));
}

// ---------------------------------------------------------------------------------------
// Item 3: reinforced above the preferred series (12 kV)
// ---------------------------------------------------------------------------------------

#[test]
fn reinforced_above_12_kv_is_160_percent_read_at_the_next_row_not_the_15_kv_row() {
    let r = run(&SpacingQuery {
        grade: Grade::Reinforced,
        nominal_v: 1000.0,
        overvoltage_category: OvervoltageCategory::IV,
        ..query()
    });
    // IEC 60664-1 Table F.1, up to 1000 V, OVC IV -> 12000 V (confirmed [N20])
    assert_eq!(r.rated_impulse_v, Some(12000.0));
    // 160 % of 12 kV = 19.2 kV (rules/SOURCES.md "Reinforced and double insulation", from memory of clause 5.1.6)
    assert_mm(r.clearance_impulse_v.expect("an impulse"), 19200.0);
    // IEC 60664-1:2020 Table F.2, next row 20 kV, Case A -> 25 mm (confirmed [N20]); never the 15 kV row's 18 mm
    assert_mm(r.required_clearance_mm, 25.0);
}

#[test]
fn reinforced_beyond_the_clearance_table_is_refused() {
    let message = refusal(&SpacingQuery {
        grade: Grade::Reinforced,
        transient_v: Some(70000.0),
        working_rms_v: 10.0,
        ..query()
    });
    // 70 kV x 160 % = 112 kV, above Table F.2's last row, 100 kV (confirmed [N20])
    assert!(message.contains("100"), "{message}");
}

// ---------------------------------------------------------------------------------------
// Item 4: functional insulation: Table F.5 applies too; IPC-2221B for correct operation
// ---------------------------------------------------------------------------------------

fn functional_board(peak_v: f64, group: MaterialGroup) -> BarrierResult {
    run(&SpacingQuery {
        grade: Grade::Functional,
        printed_board: true,
        working_rms_v: peak_v,
        working_peak_v: Some(peak_v),
        material_group: Some(group),
        board_conductor: BoardConductor::OuterLayer,
        board_coating: BoardCoating::None,
        ..query()
    })
}

#[test]
fn functional_insulation_on_a_board_gives_both_figures_and_the_larger_governs() {
    let r = functional_board(300.0, MaterialGroup::I);
    let both = r.functional_figures.clone().expect("both figures");
    // IEC 60664-1:2007 Table F.4 (2020: F.5), 300 V -> row 320 V, printed wiring PD2 -> 1.6 mm (confirmed [W])
    assert_mm(both.creepage_table_mm, 1.6);
    assert_eq!(both.creepage_table_column, "printed_pd2");
    // IPC-2221B Table 6-1, 251-300 V peak, B2 -> 1.25 mm (confirmed [SC], [BE], [SM])
    assert_mm(both.ipc2221b_spacing_mm, 1.25);
    assert_mm(r.required_creepage_mm, 1.6);
    assert_eq!(r.creepage_governed_by, "creepage-table");
    assert_mm(r.required_clearance_mm, 1.25);
    assert_eq!(r.clearance_governed_by, "ipc2221b");
}

#[test]
fn functional_insulation_on_a_board_with_group_iiib_reads_the_general_column() {
    let r = functional_board(250.0, MaterialGroup::IIIb);
    // IEC 60664-1:2007 Table F.4 (2020: F.5), 250 V, PD2, group III (printed columns do not serve IIIb) -> 2.5 mm (confirmed [W]);
    // IPC-2221B 171-250 V peak, B2 -> 1.25 mm (confirmed): the table governs
    assert_mm(r.required_creepage_mm, 2.5);
}

#[test]
fn functional_barrier_short_of_its_figure_is_a_warning_not_blocking() {
    let report = check(
        r#"grade = "functional"
working_rms_v = 250
material_group = "IIIa"
printed_board = true
clearance_mm = 2.0
creepage_mm = 2.0"#,
        "",
        "",
    );
    let b = &report.barriers[0];
    // Table F.5, 250 V, PD2, printed wiring (IIIa) -> 1.0 mm (confirmed [W]); IPC-2221B 251-500 V peak
    // (354 V), B2 -> 2.5 mm (confirmed): 2.5 mm, so 2.0 mm falls short
    assert_mm(b.required_creepage_mm, 2.5);
    assert_eq!(b.verdict, Verdict::Fail);
    let about: Vec<_> = report
        .findings
        .iter()
        .filter(|f| f.subject.as_deref() == Some("b1") && f.id.starts_with("barrier."))
        .collect();
    assert!(
        about.iter().all(|f| f.severity != Severity::Blocking),
        "a functional shortfall must not block by itself: {about:?}"
    );
    let warning = about
        .iter()
        .find(|f| f.id == "barrier.functional_creepage_short")
        .expect("a warning for the functional shortfall");
    assert_eq!(warning.severity, Severity::Warning);
    assert!(
        warning.message.contains("fault test"),
        "{}",
        warning.message
    );
    assert!(warning.message.contains("end-product standard"));
}

// ---------------------------------------------------------------------------------------
// Item 5: narrow grooves and the Table F.2 open point
// ---------------------------------------------------------------------------------------

#[test]
fn narrow_groove_width_is_one_third_of_a_clearance_under_3_mm() {
    // Required clearance 1.5 mm (Table F.2, 2.5 kV, Case A, confirmed)
    let pd2 = run(&query());
    assert_mm(pd2.required_clearance_mm, 1.5);
    // IEC 60664-1 clause 6.2: X = 1.0 mm in PD2 ([TI1], [HA]); clearance under 3 mm -> one third: 0.5 mm ([HA])
    assert_mm(pd2.narrowest_slot_mm, 0.5);
    let pd1 = run(&SpacingQuery {
        pollution_degree: 1,
        ..query()
    });
    // X = 0.25 mm in PD1 is already below a third of 1.5 mm
    assert_mm(pd1.narrowest_slot_mm, 0.25);
    let pd3 = run(&SpacingQuery {
        pollution_degree: 3,
        ..query()
    });
    // X = 1.5 mm in PD3, reduced to a third of the 1.5 mm clearance: 0.5 mm
    assert_mm(pd3.narrowest_slot_mm, 0.5);
}

#[test]
fn narrow_groove_width_is_not_reduced_at_a_clearance_of_3_mm_or_more() {
    let r = run(&SpacingQuery {
        grade: Grade::Reinforced,
        ..query()
    });
    // Reinforced: Table F.2, 4.0 kV, Case A -> 3.0 mm (confirmed); not under 3 mm, so X = 1.0 mm in PD2
    assert_mm(r.required_clearance_mm, 3.0);
    assert_mm(r.narrowest_slot_mm, 1.0);
}

#[test]
fn table_f2_case_a_at_1_kv_in_pollution_degree_2_is_0_25_mm() {
    let at = |pd: u8, field: Field| {
        run(&SpacingQuery {
            transient_v: Some(1000.0),
            working_rms_v: 50.0,
            pollution_degree: pd,
            field,
            ..query()
        })
        .required_clearance_mm
    };
    // IEC 60664-1:2020 Table F.2, Case A, 1.0 kV, PD2 column -> 0.25 mm (open point in [N20]; the larger taken)
    assert_mm(at(2, Field::Inhomogeneous), 0.25);
    // PD1: 0.15 mm (confirmed [N20])
    assert_mm(at(1, Field::Inhomogeneous), 0.15);
    // Case B in PD2: 0.15 mm raised to the 0.2 mm minimum (confirmed)
    assert_mm(at(2, Field::Homogeneous), 0.2);
}

// ---------------------------------------------------------------------------------------
// Item 16: verdicts compare exact values
// ---------------------------------------------------------------------------------------

#[test]
fn clearance_a_fraction_of_a_micrometre_short_fails_though_it_prints_equal() {
    // Required 1.5 mm (Table F.2, 2.5 kV, Case A, confirmed); 1.4999999 mm prints as "1.5"
    let r = run(&SpacingQuery {
        clearance_mm: Some(1.4999999),
        creepage_mm: Some(2.0),
        ..query()
    });
    assert_eq!(gapwarden::spacing::show(1.4999999), "1.5");
    assert_eq!(r.verdict, Verdict::Fail);
    assert!(
        r.clearance_margin_mm.expect("a margin") < 0.0,
        "a short distance never shows a margin of zero or more"
    );
    let creepage = run(&SpacingQuery {
        clearance_mm: Some(2.0),
        creepage_mm: Some(1.4999999),
        ..query()
    });
    assert_eq!(creepage.verdict, Verdict::Fail);
}

#[test]
fn check_findings_compare_the_exact_distance_not_the_rounded_margin() {
    let report = check(
        r#"grade = "basic"
working_rms_v = 250
material_group = "I"
clearance_mm = 1.4999999
creepage_mm = 2.0"#,
        "",
        "",
    );
    let short = report
        .findings
        .iter()
        .find(|f| f.id == "barrier.clearance_short")
        .expect("the shortfall is a finding");
    assert_eq!(short.severity, Severity::Blocking);
    assert!(short.message.contains("short"), "{}", short.message);
    assert!(!short.message.contains(" 0 mm short"), "{}", short.message);
    assert_eq!(report.barriers[0].verdict, Verdict::Fail);
    let md = render_markdown(&report, &Templates::shipped()).expect("renders");
    let row = md
        .lines()
        .find(|l| l.starts_with("| b1 |"))
        .expect("the barrier row");
    assert!(
        row.contains("<0.0001") && row.contains("FAIL"),
        "a margin too small to print must not read as zero: {row}"
    );
}

// ---------------------------------------------------------------------------------------
// Item 17: electric strength tests above the shipped table
// ---------------------------------------------------------------------------------------

#[test]
fn test_voltage_within_the_table_check_values() {
    let at = |peak: u32, grade: &str| {
        let report = check(
            &format!(
                "grade = \"{grade}\"\nworking_rms_v = 100\nworking_peak_v = {peak}\nmaterial_group = \"IIIa\"\nclearance_mm = 8\ncreepage_mm = 8\nbridged_by = [\"U1\"]"
            ),
            "[[part]]\nref = \"U1\"\nkind = \"optocoupler\"\nisolation_test_v_rms = 5000\nexternal_clearance_mm = 8\nexternal_creepage_mm = 8\ndistance_through_insulation_mm = 0.4",
            "",
        );
        report.bridges[0].required_test_v_rms
    };
    // IEC 60950-1 Table 5B (from memory, partly confirmed): up to 184 V peak basic 1000 V rms, reinforced 2000 V rms
    assert_eq!(at(184, "basic"), Some(1000.0));
    assert_eq!(at(184, "reinforced"), Some(2000.0));
    // above 184 up to 354 V peak: basic 1500 V rms (weakly confirmed), reinforced 3000 V rms (confirmed)
    assert_eq!(at(354, "basic"), Some(1500.0));
    assert_eq!(at(354, "reinforced"), Some(3000.0));
}

#[test]
fn test_voltage_above_354_v_peak_names_the_end_product_standard_not_a_bare_not_computed() {
    let report = check(
        r#"grade = "reinforced"
working_rms_v = 250
working_peak_v = 520
material_group = "IIIa"
clearance_mm = 8
creepage_mm = 8
bridged_by = ["U1"]"#,
        r#"[[part]]
ref = "U1"
kind = "optocoupler"
isolation_test_v_rms = 5000
external_clearance_mm = 8
external_creepage_mm = 8
distance_through_insulation_mm = 0.4

[input]
bulk_capacitance_uf = 47
series_resistance_ohm = 0.5
bridge_surge_a = 50
x_capacitance_uf = 0.1
bleeder_ohm = 1.0e6
connection = "plug"

[input.fuse]
rated_a = 2.0
melting_i2t_a2s = 8.0
breaking_a = 35
rated_v = 250
speed = "time-lag""#,
        "",
    );
    // IEC 60950-1 Table 5B carried up to 354 V peak only (rules/SOURCES.md); 520 V is above it
    let bridge = &report.bridges[0];
    assert_eq!(bridge.required_test_v_rms, None);
    let from = bridge
        .required_test_v_from
        .clone()
        .expect("the source of the test voltage is named");
    assert!(from.contains("end-product standard"), "{from}");
    assert!(from.contains("IEC 62368-1"), "{from}");
    let finding = report
        .findings
        .iter()
        .find(|f| f.id == "part.test_voltage_out_of_table")
        .expect("a finding for the test voltage");
    assert!(
        finding.message.contains("IEC 62368-1"),
        "{}",
        finding.message
    );

    let pe = report.power_entry.as_ref().expect("a power-entry section");
    let test = pe
        .test_voltages
        .iter()
        .find(|t| t.barrier == "b1")
        .expect("a test voltage entry");
    assert!(test.beyond_table);
    assert_eq!(test.test_v_rms, None);
    assert!(
        test.test_v_from
            .as_deref()
            .is_some_and(|f| f.contains("end-product standard")),
        "{:?}",
        test.test_v_from
    );
    let md = render_markdown(&report, &Templates::shipped()).expect("renders");
    let row = md
        .lines()
        .find(|l| l.contains("Electric strength test, b1"))
        .expect("a hi-pot row");
    assert!(
        row.contains("not computed: above the table") && row.contains("end-product standard"),
        "the figure must say where the value comes from: {row}"
    );
    assert!(
        md.contains("(up to 354 V peak): not extrapolated; the test voltage comes from the end-product standard"),
        "the step must name the table's end and the standard that provides the value"
    );
}

// ---------------------------------------------------------------------------------------
// The same rules through the command line
// ---------------------------------------------------------------------------------------

fn spacing_json(args: &[&str]) -> (i32, serde_json::Value) {
    let mut all = vec![
        "spacing",
        "--format",
        "json",
        "--working-rms-v",
        "250",
        "--material-group",
        "I",
    ];
    all.extend_from_slice(args);
    let out = common::run(&all);
    let json = serde_json::from_str(&common::stdout(&out))
        .unwrap_or_else(|e| panic!("not JSON ({e})\n{}", common::describe(&out)));
    (common::code(&out), json)
}

#[test]
fn spacing_command_reads_altitude_at_the_next_row_unless_asked_to_interpolate() {
    let (_, next) = spacing_json(&["--altitude-m", "3500"]);
    // 4000 m row: 1.29 (confirmed [TI2], [SE])
    assert_eq!(next["altitude_factor"], 1.29);
    let (_, interpolated) = spacing_json(&["--altitude-m", "3500", "--interpolate-altitude"]);
    // linear between 1.14 (3000 m) and 1.29 (4000 m): 1.215
    let f = interpolated["altitude_factor"].as_f64().expect("a number");
    assert!((f - 1.215).abs() < 1e-6, "{f}");
}

#[test]
fn spacing_command_fails_a_distance_that_prints_equal_but_is_short() {
    // Required 1.5 mm (Table F.2, 2.5 kV, Case A, confirmed); 1.4999999 mm is short
    let (code, json) = spacing_json(&["--clearance-mm", "1.4999999", "--creepage-mm", "2"]);
    assert_eq!(json["verdict"], "fail");
    assert_eq!(code, 1);
    assert!(json["clearance_margin_mm"].as_f64().expect("a margin") < 0.0);
    assert_eq!(json["clearance_governed_by"], "transient");
}
