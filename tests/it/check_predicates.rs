//! End-to-end tests of checks written as predicates: house checks in the predicate form
//! raise findings on the shipped example, a check over an optional section has no item when
//! the project lacks that section, a misspelt field or section is refused at load with the
//! file, the entry's line and the key's own line, and a retired id cannot be taken again.
//!
//! The house rule folders are written to a scratch folder per test; the designs are the
//! shipped example (examples/class2-adapter.toml: barriers "pri-sec" 6.2 mm and
//! "input-output" 8.0 mm clearance as declared in that file, an [input] with a fuse) and
//! tests/fixtures/iso-class2-reinforced.toml (no [input], no [emc]).

use crate::common;
use common::*;

use std::path::{Path, PathBuf};

use serde_json::Value;

/// A fresh house rules folder holding `checks/house.toml` with the given [[check]] entries.
fn house(name: &str, entries: &str) -> PathBuf {
    let dir = std::env::temp_dir().join(format!(
        "gapwarden-predicates-{}-{name}",
        std::process::id()
    ));
    let _ = std::fs::remove_dir_all(&dir);
    std::fs::create_dir_all(dir.join("checks")).expect("scratch folder");
    let text = format!(
        "id = \"house.predicates\"\ntitle = \"House checks for the tests\"\nsource = \"invented for the tests\"\nprovenance = \"House rule, no published source.\"\n\n{entries}"
    );
    std::fs::write(dir.join("checks/house.toml"), text).expect("write house checks");
    dir
}

fn json_run(project: &str, rules: &Path) -> Value {
    let out = run(&[
        "check",
        project,
        "--format",
        "json",
        "--rules",
        rules.to_str().expect("utf-8 path"),
    ]);
    let text = stdout(&out);
    serde_json::from_str(&text).unwrap_or_else(|e| panic!("no JSON ({e})\n{}", describe(&out)))
}

fn outcome<'a>(report: &'a Value, id: &str) -> &'a Value {
    report["checks"]
        .as_array()
        .and_then(|c| c.iter().find(|c| c["id"] == id))
        .unwrap_or_else(|| panic!("no outcome for {id}"))
}

fn findings<'a>(report: &'a Value, id: &str) -> Vec<&'a Value> {
    report["findings"]
        .as_array()
        .map(|f| f.iter().filter(|f| f["id"] == id).collect())
        .unwrap_or_default()
}

#[test]
fn a_house_predicate_check_compares_a_field_with_a_constant_and_names_the_barrier() {
    // 7 mm lies between the example's 6.2 mm (pri-sec) and 8.0 mm (input-output).
    let dir = house(
        "constant",
        r#"[[check]]
id = "house.clearance_under_7mm"
title = "House floor of 7 mm clearance"
severity = "note"
over = "barriers"
applies = { all = [{ field = "clearance_mm", missing = false }, { field = "grade", is = "reinforced" }] }
condition = { field = "clearance_mm", lt = 7.0 }
message = "{{ item.id }} has {{ item.clearance_mm | num }} mm"
source = "invented for the tests"
"#,
    );
    let report = json_run("examples/class2-adapter.toml", &dir);
    let raised = findings(&report, "house.clearance_under_7mm");
    assert_eq!(raised.len(), 1, "{raised:?}");
    assert_eq!(raised[0]["subject"], "pri-sec");
    assert_eq!(raised[0]["message"], "pri-sec has 6.2 mm");
    assert_eq!(outcome(&report, "house.clearance_under_7mm")["judged"], 2);
}

#[test]
fn a_section_that_is_absent_yields_no_items() {
    let dir = house(
        "sections",
        r#"[[check]]
id = "house.input_present"
title = "The input section is there"
severity = "note"
over = "power_entry"
condition = true
message = "input described"
source = "invented for the tests"

[[check]]
id = "house.fuse_present"
title = "The fuse section is there"
severity = "note"
over = "power_entry.fuse"
condition = { field = "rated_a", missing = false }
message = "fuse described"
source = "invented for the tests"

[[check]]
id = "house.emc_points"
title = "Each EMC point is listed"
severity = "note"
over = "emc.points"
condition = true
message = "a point"
source = "invented for the tests"
"#,
    );
    let without = json_run("tests/fixtures/iso-class2-reinforced.toml", &dir);
    for id in [
        "house.input_present",
        "house.fuse_present",
        "house.emc_points",
    ] {
        assert_eq!(outcome(&without, id)["judged"], 0, "{id}");
        assert!(findings(&without, id).is_empty(), "{id}");
    }
    let with = json_run("examples/class2-adapter.toml", &dir);
    for id in ["house.input_present", "house.fuse_present"] {
        assert_eq!(outcome(&with, id)["judged"], 1, "{id}");
        assert_eq!(findings(&with, id).len(), 1, "{id}");
        assert_eq!(findings(&with, id)[0]["subject"], Value::Null, "{id}");
    }
}

#[test]
fn a_misspelt_predicate_field_is_refused_with_the_entry_line_and_the_key_line() {
    let dir = house(
        "misspelt",
        r#"[[check]]
id = "house.misspelt"
title = "A misspelt field"
severity = "note"
over = "barriers"
condition = { field = "clearence_mm", lt = 7.0 }
message = "never shown"
source = "invented for the tests"
"#,
    );
    let out = run(&[
        "check",
        "examples/class2-adapter.toml",
        "--rules",
        dir.to_str().expect("utf-8"),
    ]);
    assert_exit(&out, 2);
    let err = stderr(&out);
    // The header comment takes lines 1-4, a blank line 5: [[check]] is line 6, condition 11.
    assert!(err.contains("checks/house.toml:6:"), "{err}");
    assert!(err.contains("check \"house.misspelt\".condition"), "{err}");
    assert!(
        err.contains("field \"clearence_mm\" does not exist in an entry of \"barriers\""),
        "{err}"
    );
    assert!(err.contains("did you mean \"clearance_mm\"?"), "{err}");
    assert!(err.contains("`condition` at line 11, column 23"), "{err}");
}

#[test]
fn a_predicate_with_a_wrong_test_or_section_is_refused_naming_the_key() {
    let dir = house(
        "wrong",
        r#"[[check]]
id = "house.wrong_test"
title = "A test on a string field that needs a number"
severity = "note"
over = "barriers"
condition = { field = "grade", gt = 2 }
message = "never shown"
source = "invented for the tests"

[[check]]
id = "house.wrong_section"
title = "A section that does not exist"
severity = "note"
over = "power_entri"
condition = true
message = "never shown"
source = "invented for the tests"

[[check]]
id = "house.two_tests"
title = "Two tests in one table"
severity = "note"
over = "barriers"
applies = { field = "clearance_mm", missing = false, set = true }
condition = true
message = "never shown"
source = "invented for the tests"
"#,
    );
    let out = run(&[
        "check",
        "examples/class2-adapter.toml",
        "--rules",
        dir.to_str().expect("utf-8"),
    ]);
    assert_exit(&out, 2);
    let err = stderr(&out);
    assert!(
        err.contains("field \"grade\" is a string, but this test needs a number"),
        "{err}"
    );
    assert!(err.contains("`condition` at line 11"), "{err}");
    assert!(err.contains("check \"house.wrong_section\".over"), "{err}");
    assert!(err.contains("did you mean \"power_entry\"?"), "{err}");
    assert!(err.contains("`over` at line 19"), "{err}");
    assert!(err.contains("check \"house.two_tests\".applies"), "{err}");
    assert!(err.contains("needs exactly one test"), "{err}");
}

#[test]
fn a_retired_check_id_cannot_be_taken_again() {
    let dir = house(
        "retired",
        r#"[[check]]
id = "house.old_check"
title = "Takes a retired id"
severity = "note"
over = "report"
condition = true
message = "never shown"
source = "invented for the tests"
"#,
    );
    std::fs::write(
        dir.join("retired.toml"),
        "id = \"house.retired\"\ntitle = \"Retired house check ids\"\nsource = \"invented for the tests\"\nprovenance = \"House rule.\"\n\n[[retired]]\nid = \"house.old_check\"\nreason = \"replaced by house.new_check\"\n",
    )
    .expect("write retired list");
    let out = run(&[
        "check",
        "examples/class2-adapter.toml",
        "--rules",
        dir.to_str().expect("utf-8"),
    ]);
    assert_exit(&out, 2);
    let err = stderr(&out);
    assert!(
        err.contains("check id \"house.old_check\" is retired (replaced by house.new_check)"),
        "{err}"
    );
    assert!(err.contains("check \"house.old_check\".id"), "{err}");
}

#[test]
fn an_expression_condition_still_works_beside_predicates() {
    let dir = house(
        "expression",
        r#"[[check]]
id = "house.expression_form"
title = "Old form"
severity = "note"
over = "barriers"
applies = "item.clearance_mm is not none"
condition = "item.clearance_mm < 7.0 and item.grade == 'reinforced'"
message = "{{ item.id }}"
source = "invented for the tests"
"#,
    );
    let report = json_run("examples/class2-adapter.toml", &dir);
    let raised = findings(&report, "house.expression_form");
    assert_eq!(raised.len(), 1);
    assert_eq!(raised[0]["subject"], "pri-sec");
}

#[test]
fn a_misspelt_field_in_a_house_expression_or_message_is_named_with_a_suggestion() {
    let dir = house(
        "expression-misspelt",
        r#"[[check]]
id = "house.expression_misspelt"
title = "Old form, misspelt"
severity = "note"
over = "barriers"
condition = "item.clearance_mm < 7.0"
message = "{{ item.id }} at {{ item.creepge_mm }} mm"
source = "invented for the tests"
"#,
    );
    let out = run(&[
        "check",
        "examples/class2-adapter.toml",
        "--rules",
        dir.to_str().expect("utf-8"),
    ]);
    assert_exit(&out, 2);
    let err = stderr(&out);
    assert!(err.contains("checks/house.toml:6:"), "{err}");
    assert!(
        err.contains("check \"house.expression_misspelt\".message"),
        "{err}"
    );
    assert!(
        err.contains("field \"item.creepge_mm\" does not exist in an entry of \"barriers\""),
        "{err}"
    );
    assert!(err.contains("did you mean \"creepage_mm\"?"), "{err}");
    assert!(err.contains("`message` at line 12"), "{err}");
}

/// The checks' context leaves out the report fields no shipped check reads
/// (`checks::UNREAD_BY_SHIPPED_CHECKS`): no shipped check names one, in a condition, an
/// `over` path, or inside the tags of its message or subject (prose outside the tags may
/// say "derivation"; it reads nothing).
#[test]
fn no_shipped_check_reads_a_field_the_checks_context_leaves_out() {
    use gapwarden::checks::UNREAD_BY_SHIPPED_CHECKS as OMITTED;
    use gapwarden::rules::Cond;
    let rules = gapwarden::rules::RuleBook::shipped().expect("the shipped rules load");
    assert_eq!(gapwarden::checks::context_omits(&rules), OMITTED);
    // Every word of a text: a field name can only be read by being written.
    let words = |text: &str| -> Vec<String> {
        text.split(|c: char| !(c.is_alphanumeric() || c == '_'))
            .filter(|w| !w.is_empty())
            .map(str::to_string)
            .collect()
    };
    // The text inside `{{ }}` and `{% %}` tags of a template.
    let tags = |template: &str| -> String {
        let mut inside = String::new();
        let mut rest = template;
        while let Some(open) = rest.find(['{']) {
            let after = &rest[open + 1..];
            let close = match after.chars().next() {
                Some('{') => "}}",
                Some('%') => "%}",
                _ => {
                    rest = after;
                    continue;
                }
            };
            let end = after.find(close).expect("every tag is closed");
            inside.push_str(&after[1..end]);
            inside.push(' ');
            rest = &after[end + 2..];
        }
        inside
    };
    let mut read = 0;
    for check in &rules.checks {
        let mut names: Vec<String> = check.over.parts().map(str::to_string).collect();
        for cond in check.applies.iter().chain([&check.condition]) {
            match cond {
                Cond::Predicate(p) => {
                    let mut fields = Vec::new();
                    p.fields(&mut fields);
                    names.extend(
                        fields
                            .into_iter()
                            .flat_map(|(f, _)| f.parts.into_iter().map(String::from)),
                    );
                }
                Cond::Expression(e) => names.extend(words(e)),
            }
        }
        names.extend(words(check.subject.as_deref().unwrap_or("")));
        names.extend(words(&tags(&check.message)));
        read += names.len();
        for name in OMITTED {
            assert!(
                !names.iter().any(|n| n == name),
                "shipped check {} reads `{name}`, which the checks' context leaves out",
                check.id
            );
        }
    }
    assert!(
        read > 500,
        "only {read} names were read from the shipped checks"
    );
}

/// Leaving those fields out changes no finding and no count of judged and raised items, on
/// every fixture and example that evaluates.
#[test]
fn the_checks_context_without_unread_fields_raises_the_same_findings() {
    use gapwarden::checks::{context, context_omits, run_checks};
    let rules = gapwarden::rules::RuleBook::shipped().expect("the shipped rules load");
    let mut compared = 0;
    for (path, report) in fixture_reports(&rules) {
        let outcome = |omit: &[&'static str]| {
            let (findings, checks) = run_checks(&rules, &context(&report, omit))
                .unwrap_or_else(|p| panic!("{}: the checks run: {p}", path.display()));
            serde_json::to_value((findings, checks)).expect("findings serialise")
        };
        assert_eq!(
            outcome(context_omits(&rules)),
            outcome(&[]),
            "{}",
            path.display()
        );
        compared += 1;
    }
    assert!(compared >= 30, "only {compared} reports were compared");
}

/// Plain messages written without the template engine read as the engine writes them: every
/// finding of every fixture and example, the same either way, and enough of them plain for
/// the comparison to mean something.
#[test]
fn plain_messages_are_written_as_the_engine_writes_them() {
    use gapwarden::checks::{Messages, context, context_omits, message, run_checks_with};
    let rules = gapwarden::rules::RuleBook::shipped().expect("the shipped rules load");
    let plain_ids: Vec<&str> = rules
        .checks
        .iter()
        .filter(|c| message::fits(&c.message))
        .map(|c| &*c.id)
        .collect();
    let (mut findings_compared, mut plain_findings) = (0, 0);
    for (path, report) in fixture_reports(&rules) {
        let ctx = context(&report, context_omits(&rules));
        let run = |messages| {
            run_checks_with(&rules, &ctx, messages)
                .unwrap_or_else(|p| panic!("{}: the checks run: {p}", path.display()))
        };
        let (native, _) = run(Messages::PlainWithoutEngine);
        let (engine, _) = run(Messages::AllByEngine);
        assert_eq!(native, engine, "{}", path.display());
        findings_compared += engine.len();
        plain_findings += engine
            .iter()
            .filter(|f| plain_ids.contains(&f.id.as_str()))
            .count();
    }
    assert!(
        plain_findings >= 100 && findings_compared > plain_findings,
        "{plain_findings} plain findings of {findings_compared}"
    );
}

/// Every fixture and example whose figures can be computed, with its report (before checks).
fn fixture_reports(
    rules: &gapwarden::rules::RuleBook,
) -> Vec<(std::path::PathBuf, gapwarden::report::Report)> {
    let mut files = Vec::new();
    project_files(&root().join("tests/fixtures"), &mut files);
    project_files(&root().join("examples"), &mut files);
    files
        .into_iter()
        .filter_map(|path| {
            let text = std::fs::read_to_string(&path).ok()?;
            let source = gapwarden::diag::Source::new(path.display().to_string(), text);
            let report = gapwarden::report::figures(&source, rules).ok()?;
            Some((path, report))
        })
        .collect()
}

/// Expression conditions and subjects evaluated without the template engine hold exactly
/// where the engine says they do: on every fixture and example, the same findings
/// (subjects included) and the same items judged and raised by every check, and enough
/// expression checks judged for the comparison to mean something.
#[test]
fn expression_conditions_hold_as_the_engine_says_on_every_fixture() {
    use gapwarden::checks::{Messages, context, context_omits, expression, run_checks_with};
    use gapwarden::rules::Cond;
    let rules = gapwarden::rules::RuleBook::shipped().expect("the shipped rules load");
    let expression_ids: Vec<&str> = rules
        .checks
        .iter()
        .filter(|c| {
            matches!(c.condition, Cond::Expression(_))
                || matches!(c.applies, Some(Cond::Expression(_)))
        })
        .map(|c| &*c.id)
        .collect();
    assert!(expression_ids.len() >= 5, "{expression_ids:?}");
    let (mut judged, mut natively) = (0, 0);
    for (path, report) in fixture_reports(&rules) {
        let ctx = context(&report, context_omits(&rules));
        let run = |messages| {
            run_checks_with(&rules, &ctx, messages)
                .unwrap_or_else(|p| panic!("{}: the checks run: {p}", path.display()))
        };
        let native = run(Messages::PlainWithoutEngine);
        let engine = run(Messages::AllByEngine);
        assert_eq!(native, engine, "{}", path.display());
        judged += engine
            .1
            .iter()
            .filter(|o| expression_ids.contains(&o.id.as_str()))
            .map(|o| o.judged)
            .sum::<usize>();
        // How many of the shipped expressions this report's values are evaluated natively.
        let power_entry = ctx.get_attr("power_entry").expect("a power_entry field");
        if !power_entry.is_none() {
            for check in rules
                .checks
                .iter()
                .filter(|c| &*c.over.word == "power_entry")
            {
                if let Cond::Expression(e) = &check.condition {
                    natively += usize::from(expression::holds(e, &power_entry, &ctx).is_some());
                }
            }
        }
    }
    assert!(
        judged >= 50,
        "only {judged} items judged by expression checks"
    );
    assert!(
        natively >= 30,
        "only {natively} expressions evaluated natively"
    );
}
