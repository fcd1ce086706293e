//! Positions of problems in house rule files and house checks: each is reported at the line
//! and key of the value at fault, as the TOML parser located it (never by searching the text
//! for the figure a message quotes). The tables below are invented for the tests; no value
//! in them is a published figure.

use std::path::PathBuf;

use gapwarden::diag::Diagnostic;
use gapwarden::rules::RuleBook;

use crate::common::{run_in, stderr};

/// A house folder under the system temp folder, removed when dropped.
struct House(PathBuf);

impl House {
    fn new(tag: &str, files: &[(&str, &str)]) -> Self {
        let dir =
            std::env::temp_dir().join(format!("gapwarden-positions-{}-{tag}", std::process::id()));
        let _ = std::fs::remove_dir_all(&dir);
        for (name, text) in files {
            let path = dir.join("house").join(name);
            std::fs::create_dir_all(path.parent().unwrap()).unwrap();
            std::fs::write(&path, text).unwrap();
        }
        House(dir)
    }

    fn rules(&self) -> PathBuf {
        self.0.join("house")
    }

    /// The problems loading the shipped rules with this house folder gives.
    fn problems(&self) -> Vec<Diagnostic> {
        match RuleBook::load(Some(&self.rules())) {
            Ok(_) => panic!("the house folder was accepted"),
            Err(p) => p.0,
        }
    }
}

impl Drop for House {
    fn drop(&mut self) {
        let _ = std::fs::remove_dir_all(&self.0);
    }
}

/// An invented house impulse table, one row a line; `rows` replaces the six rows.
fn impulse_table(rows: &[&str]) -> String {
    let mut text = String::from(
        "id = \"iec60664-1.impulse\"\n\
         title = \"House impulse table\"\n\
         source = \"invented for the tests\"\n\
         provenance = \"House rule, no published source.\"\n\
         overrides = true\n\
         rows = [\n",
    );
    for row in rows {
        text.push_str("  ");
        text.push_str(row);
        text.push('\n');
    }
    text.push_str("]\n");
    text
}

const ROW_50: &str =
    "{ up_to_v = 50, ovc_i = 330, ovc_ii = 500, ovc_iii = 800, ovc_iv = 1500, confirmed = false },";
const ROW_100: &str = "{ up_to_v = 100, ovc_i = 500, ovc_ii = 800, ovc_iii = 1500, ovc_iv = 2500, confirmed = false },";
const ROW_150: &str = "{ up_to_v = 150, ovc_i = 800, ovc_ii = 1500, ovc_iii = 2500, ovc_iv = 4000, confirmed = false },";
const ROW_300: &str = "{ up_to_v = 300, ovc_i = 1500, ovc_ii = 2500, ovc_iii = 4000, ovc_iv = 6000, confirmed = false },";
const ROW_1000: &str = "{ up_to_v = 1000, ovc_i = 4000, ovc_ii = 6000, ovc_iii = 8000, ovc_iv = 12000, confirmed = false },";

fn only(problems: &[Diagnostic]) -> &Diagnostic {
    assert_eq!(problems.len(), 1, "{problems:#?}");
    &problems[0]
}

#[test]
fn an_impulse_row_out_of_order_is_reported_at_its_own_line_and_key() {
    // Regression: the 600 V row's category IV figure (500 V) is below the 300 V row's
    // (6000 V). It used to be reported at the 50 V row (the first line that holds "500")
    // with a made-up key; it belongs to line 11 (the 600 V row, the fifth) and `ovc_iv`.
    let row_600 = "{ up_to_v = 600, ovc_i = 2500, ovc_ii = 4000, ovc_iii = 6000, ovc_iv = 500, confirmed = false },";
    let text = impulse_table(&[ROW_50, ROW_100, ROW_150, ROW_300, row_600, ROW_1000]);
    assert_eq!(text.lines().nth(10), Some(format!("  {row_600}").as_str()));
    let house = House::new("impulse-category", &[("impulse.toml", &text)]);
    let problems = house.problems();
    let d = only(&problems);
    assert_eq!(d.line, Some(11), "{d}");
    assert_eq!(d.key.as_deref(), Some("rows[5].ovc_iv"), "{d}");
    // The column of the value 500 on that line (counted in characters from 1).
    let column = format!("  {row_600}").find("ovc_iv = 500").unwrap() + "ovc_iv = ".len() + 1;
    assert_eq!(d.column, Some(column), "{d}");
    assert!(d.message.contains("ascending"), "{d}");
}

#[test]
fn an_impulse_row_moved_after_a_higher_one_is_reported_at_its_line() {
    // The 600 V row written after the 1000 V row: the 600 V row (line 12) is out of order.
    let row_600 = "{ up_to_v = 600, ovc_i = 2500, ovc_ii = 4000, ovc_iii = 6000, ovc_iv = 8000, confirmed = false },";
    let text = impulse_table(&[ROW_50, ROW_100, ROW_150, ROW_300, ROW_1000, row_600]);
    let house = House::new("impulse-order", &[("impulse.toml", &text)]);
    let problems = house.problems();
    let d = only(&problems);
    assert_eq!(d.line, Some(12), "{d}");
    assert_eq!(d.key.as_deref(), Some("rows[6].up_to_v"), "{d}");
    assert!(d.message.contains("600 follows 1000"), "{d}");
}

#[test]
fn an_unknown_key_in_a_house_table_is_reported_at_its_line_with_its_name() {
    // `confirmd` on the 150 V row (line 9).
    let row_150 = ROW_150.replace("confirmed", "confirmd");
    let text = impulse_table(&[ROW_50, ROW_100, &row_150, ROW_300, ROW_1000]);
    let house = House::new("impulse-unknown", &[("impulse.toml", &text)]);
    let problems = house.problems();
    let d = only(&problems);
    assert_eq!(d.line, Some(9), "{d}");
    assert!(d.message.contains("unknown field `confirmd`"), "{d}");
    assert!(d.key.as_deref().is_some_and(|k| k.contains("rows")), "{d}");
}

/// An invented house check; line 6 is its `[[check]]` header, line 9 its `over`.
const HOUSE_CHECK: &str = r#"id = "house.checks"
title = "House checks"
source = "invented for the tests"
provenance = "House rule, no published source."

[[check]]
id = "house.y_too_big"
title = "Y-capacitance within the house limit"
over = "bridges"
severity = "blocking"
condition = { field = "capacitance_nf", gt = 1.0 }
message = "{{ item.part }} is above the house limit"
rationale = "A house limit."
source = "invented for the tests"
"#;

#[test]
fn a_bad_check_field_is_reported_at_the_key_and_names_the_check_entry() {
    // `over = "bridge"` (line 9, the value from column 8): the entry starts at line 6.
    let text = HOUSE_CHECK.replace("over = \"bridges\"", "over = \"bridge\"");
    let house = House::new("check-over", &[("checks/c.toml", &text)]);
    let problems = house.problems();
    let d = only(&problems);
    assert_eq!((d.line, d.column), (Some(9), Some(8)), "{d}");
    assert_eq!(
        d.key.as_deref(),
        Some("check \"house.y_too_big\".over"),
        "{d}"
    );
    let shown = d.to_string();
    assert!(shown.contains("c.toml:6:1"), "{shown}");
    assert!(shown.contains("did you mean \"bridges\""), "{shown}");
}

#[test]
fn a_misspelt_predicate_field_is_reported_at_the_condition() {
    // `capacitnce_nf` in the condition (line 11).
    let text = HOUSE_CHECK.replace("\"capacitance_nf\"", "\"capacitnce_nf\"");
    let house = House::new("check-field", &[("checks/c.toml", &text)]);
    let problems = house.problems();
    let d = only(&problems);
    assert_eq!(d.line, Some(11), "{d}");
    assert_eq!(
        d.key.as_deref(),
        Some("check \"house.y_too_big\".condition"),
        "{d}"
    );
    assert!(d.to_string().contains("capacitance_nf"), "{d}");
}

#[test]
fn a_diagnostic_shows_the_source_line_with_a_marker_beneath_the_message() {
    let row_600 = "{ up_to_v = 600, ovc_i = 2500, ovc_ii = 4000, ovc_iii = 6000, ovc_iv = 500, confirmed = false },";
    let text = impulse_table(&[ROW_50, ROW_100, ROW_150, ROW_300, row_600, ROW_1000]);
    let house = House::new("snippet", &[("impulse.toml", &text)]);
    std::fs::write(
        house.0.join("project.toml"),
        include_str!("../../examples/class2-adapter.toml"),
    )
    .unwrap();
    let o = run_in(&house.0, &["check", "project.toml", "--rules", "house"]);
    assert_eq!(o.status.code(), Some(2));
    let err = stderr(&o);
    let lines: Vec<&str> = err.lines().collect();
    // The message first, as before: file, line, column, key.
    assert!(
        lines[0].starts_with("error: house/impulse.toml:11:")
            && lines[0].contains("`rows[5].ovc_iv`"),
        "{err}"
    );
    // Beneath it the line itself, numbered, and a marker under the figure at fault.
    let source = lines
        .iter()
        .position(|l| l.contains("11 |") && l.contains("ovc_iv = 500"))
        .unwrap_or_else(|| panic!("no source line\n{err}"));
    let marker = lines[source + 1];
    let at = lines[source].find("ovc_iv = 500").unwrap() + "ovc_iv = ".len();
    assert_eq!(marker.find('^'), Some(at), "{err}");
    assert_eq!(marker.matches('^').count(), 3, "{err}");
    // One `error:` line per problem: the snippet adds none.
    assert_eq!(
        lines.iter().filter(|l| l.starts_with("error:")).count(),
        1,
        "{err}"
    );
}

/// An invented project, one key a line, with an unknown key (line 25), a value out of range
/// (line 6) and an unknown key in a nested table (line 29).
const PROJECT: &str = r#"[design]
name = "Positions"
protection_class = "II"

[environment]
pollution_degree = 5

[mains]
nominal_v = 230

[[circuit]]
id = "primary"
kind = "mains"

[[circuit]]
id = "output"
kind = "safe"
accessible = true

[[barrier]]
id = "pri-sec"
between = ["primary", "output"]
grade = "reinforced"
working_rms_v = 250
clearence_mm = 6.2

[input.limiter]
kind = "ntc"
cold_ohms = 10
"#;

#[test]
fn unknown_project_keys_and_bad_values_are_all_reported_at_their_lines() {
    use gapwarden::diag::Source;
    let Err(problems) = gapwarden::project::read_project(&Source::new("p.toml", PROJECT)) else {
        panic!("the project was accepted");
    };
    let at: Vec<(Option<usize>, Option<&str>)> = problems
        .0
        .iter()
        .map(|d| (d.line, d.key.as_deref()))
        .collect();
    // [input] without its required keys is reported too (at its header, line 27).
    assert!(
        at.contains(&(Some(6), Some("environment.pollution_degree"))),
        "{problems}"
    );
    assert!(
        at.contains(&(Some(25), Some("barrier[1].clearence_mm"))),
        "{problems}"
    );
    assert!(
        at.contains(&(Some(29), Some("input.limiter.cold_ohms"))),
        "{problems}"
    );
    let unknown = problems
        .0
        .iter()
        .find(|d| d.key.as_deref() == Some("barrier[1].clearence_mm"))
        .unwrap();
    assert_eq!(unknown.column, Some(1));
    assert_eq!(unknown.message, "unknown key in [barrier[1]]");
    assert_eq!(
        unknown.help.as_deref(),
        Some("did you mean `clearance_mm`?")
    );
    let nested = problems
        .0
        .iter()
        .find(|d| d.key.as_deref() == Some("input.limiter.cold_ohms"))
        .unwrap();
    assert_eq!(nested.help.as_deref(), Some("did you mean `cold_ohm`?"));
    // In file order.
    let lines: Vec<usize> = problems.0.iter().filter_map(|d| d.line).collect();
    assert!(lines.windows(2).all(|w| w[0] <= w[1]), "{problems}");
}

#[test]
fn a_date_where_a_table_belongs_is_reported_at_its_line_and_key() {
    use gapwarden::diag::Source;
    let text = PROJECT.replace("[design]\n", "design = 1979-05-27\n[old_design]\n");
    let Err(problems) = gapwarden::project::read_project(&Source::new("p.toml", text)) else {
        panic!("the project was accepted");
    };
    let d = only(&problems.0);
    assert_eq!((d.line, d.column), (Some(1), Some(10)), "{d}");
    assert_eq!(d.key.as_deref(), Some("design"), "{d}");
    assert_eq!(d.message, "expected a table, found datetime");
}

/// An invented project with a problem in the project-wide tables and in each area's part:
/// insulation (`[board]`, `[[circuit]]`, `[[barrier]]`), power entry (`[input]`,
/// `[converter]`) and EMC (`[[emc.prescan]]`, `[emc.filter]`).
const EVERY_AREA: &str = r#"[design]
name = "Every area"
protection_class = "II"

[environment]
pollution_degree = 5

[mains]
nominal_v = 230

[board]
files = []
thickness_mm = 1.6

[[circuit]]
id = "primary"
kind = "mains"

[[circuit]]
id = "output"
kind = "saef"
accessible = true

[[barrier]]
id = "pri-sec"
between = ["primary", "outptu"]
grade = "reinforced"
working_rms_v = 250

[input]
bulk_capacitance_uf = "47"
series_resistance_ohm = 0.5

[converter]
output_w = 24
efficiency = 1.5
min_bulk_v = 70
switching_hz = 65000
max_duty = 0.45

[emc]
limit_class = "B"
margin_db = 6

[[emc.prescan]]
frequency_hz = 195000
level_dbuv = 90
detectr = "quasi-peak"

[emc.filter]
damping_resistance_ohm = 47
"#;

/// Line and column (from 1) of the first `needle` after `anchor` in `text`: where the test's
/// own text has the value at fault (the text is ASCII, so a byte is a column).
fn written_at(text: &str, anchor: &str, needle: &str) -> (usize, usize) {
    let from = text.find(anchor).expect("the anchor is in the text");
    let at = from
        + text[from..]
            .find(needle)
            .expect("the needle is in the text");
    let line_start = text[..at].rfind('\n').map_or(0, |i| i + 1);
    (text[..at].matches('\n').count() + 1, at - line_start + 1)
}

#[test]
fn every_area_reads_its_own_part_and_all_their_problems_come_in_one_pass() {
    use gapwarden::diag::Source;
    let Err(problems) = gapwarden::project::read_project(&Source::new("p.toml", EVERY_AREA)) else {
        panic!("the project was accepted");
    };
    // (key, the line the value stands under, the value): each problem at the value at fault,
    // a missing key at the first key of its table, an unknown key at itself.
    let expected = [
        ("environment.pollution_degree", "[environment]", "5"),
        ("board.files", "[board]", "[]"),
        ("circuit[2].kind", "id = \"output\"", "\"saef\""),
        ("barrier[1].between", "[[barrier]]", "\"outptu\""),
        ("input.bulk_capacitance_uf", "[input]", "\"47\""),
        ("converter.efficiency", "[converter]", "1.5"),
        ("emc.prescan[1].detector", "[[emc.prescan]]", "frequency_hz"),
        ("emc.prescan[1].detectr", "[[emc.prescan]]", "detectr"),
        ("emc.filter.damping_resistance_ohm", "[emc.filter]", "47"),
    ];
    let want: Vec<(Option<usize>, Option<usize>, Option<&str>)> = expected
        .iter()
        .map(|(key, anchor, needle)| {
            let (line, column) = written_at(EVERY_AREA, anchor, needle);
            (Some(line), Some(column), Some(*key))
        })
        .collect();
    let got: Vec<(Option<usize>, Option<usize>, Option<&str>)> = problems
        .0
        .iter()
        .map(|d| (d.line, d.column, d.key.as_deref()))
        .collect();
    // Every area's problems, none lost to another's, in file order and nothing else.
    assert_eq!(got, want, "{problems}");
    let help = |key: &str| {
        problems
            .0
            .iter()
            .find(|d| d.key.as_deref() == Some(key))
            .and_then(|d| d.help.clone())
    };
    // The id of a circuit with a problem of its own (circuit[2]'s kind) is still declared:
    // a misspelt reference to it from a barrier suggests it.
    assert_eq!(
        help("barrier[1].between").as_deref(),
        Some("did you mean \"output\"?")
    );
    assert_eq!(
        help("emc.prescan[1].detectr").as_deref(),
        Some("did you mean `detector`?")
    );
    assert_eq!(
        help("circuit[2].kind").as_deref(),
        Some("did you mean \"safe\"?")
    );
}
