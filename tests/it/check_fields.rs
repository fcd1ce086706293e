//! The field list every check is validated against is generated from the reports the
//! shipped examples and the test fixtures produce; this test regenerates it and fails when
//! the checked-in copy is stale (`GAPWARDEN_UPDATE_FIELDS=1` rewrites it).

use gapwarden::diag::Source;
use gapwarden::rules::predicate::{Fields, REPORT_FIELDS, field_list};
use gapwarden::rules::{Cond, RuleBook};

fn sample_reports() -> Vec<serde_json::Value> {
    // Not validated against the list being regenerated.
    let rules =
        RuleBook::load_with_fields(None, &Fields::default()).expect("the shipped rules load");
    let mut sources: Vec<Source> = gapwarden::commands::EXAMPLES
        .iter()
        .map(|(name, text)| Source::new(format!("examples/{name}.toml"), *text))
        .collect();
    let dir = concat!(env!("CARGO_MANIFEST_DIR"), "/tests/fixtures");
    let mut paths: Vec<_> = std::fs::read_dir(dir)
        .expect("fixtures folder")
        .filter_map(|e| e.ok().map(|e| e.path()))
        .filter(|p| p.extension().is_some_and(|x| x == "toml"))
        .collect();
    paths.sort();
    for p in paths {
        let text = std::fs::read_to_string(&p).expect("fixture text");
        sources.push(Source::new(p.display().to_string(), &text));
    }
    let mut reports = Vec::new();
    for s in &sources {
        if let Ok(mut report) = gapwarden::report::figures(s, &rules) {
            // One input warning, so its fields are listed even where no fixture has one.
            report.input_warnings.push(gapwarden::report::InputWarning {
                key: Some("barrier[1].clearance_mm".to_string()),
                message: "a sample warning".to_string(),
                line: Some(1),
                column: Some(1),
            });
            reports.push(serde_json::to_value(&report).expect("a report serialises"));
        }
    }
    reports
}

#[test]
fn report_field_list_is_current() {
    let reports = sample_reports();
    assert!(reports.len() > 20, "most fixtures produce a report");
    let generated = field_list(&reports);
    if std::env::var_os("GAPWARDEN_UPDATE_FIELDS").is_some() {
        let path = concat!(env!("CARGO_MANIFEST_DIR"), "/src/rules/report_fields.txt");
        std::fs::write(path, &generated).expect("write the field list");
        return;
    }
    assert_eq!(
        REPORT_FIELDS, generated,
        "src/rules/report_fields.txt is stale: run GAPWARDEN_UPDATE_FIELDS=1 cargo test --test check_fields"
    );
    // The sections the checks name are in it, with their types.
    for line in [
        "barriers list",
        "power_entry map",
        "power_entry.fuse map",
        "emc.points list",
        "barriers[].clearance_mm number",
    ] {
        assert!(generated.lines().any(|l| l == line), "{line} is listed");
    }
}

/// Every field a shipped check's expressions, subject and message read exists in the
/// report's field list (predicates are validated when the rules load; this covers the rest).
#[test]
fn shipped_check_expressions_and_messages_name_existing_fields() {
    let rules = RuleBook::shipped().expect("the shipped rules load");
    let fields = Fields::shipped();
    let env = gapwarden::checks::expression_environment();
    let mut problems = Vec::new();
    let mut seen = 0;
    for check in &rules.checks {
        let prefix = if check.over.is_report() {
            String::new()
        } else {
            fields.item_prefix(check.over.path())
        };
        let mut texts: Vec<String> = vec![check.message.to_string()];
        for cond in [check.applies.as_ref(), Some(&check.condition)]
            .into_iter()
            .flatten()
        {
            if let Cond::Expression(e) = cond {
                texts.push(format!("{{{{ {e} }}}}"));
            }
        }
        if let Some(s) = &check.subject {
            texts.push(format!("{{{{ {s} }}}}"));
        }
        for text in texts {
            let template = env
                .template_from_str(&text)
                .expect("shipped templates compile");
            for var in template.undeclared_variables(true) {
                let path = match (var.strip_prefix("item."), var.strip_prefix("report.")) {
                    (Some(rest), _) => format!("{prefix}.{rest}")
                        .trim_start_matches('.')
                        .to_string(),
                    (_, Some(rest)) => rest.to_string(),
                    _ => continue,
                };
                seen += 1;
                if fields.type_of(&path).is_none() {
                    problems.push(format!("{}: {var} ({path})", check.id));
                }
            }
        }
    }
    assert!(seen > 200, "the messages read many fields ({seen})");
    assert!(problems.is_empty(), "{problems:#?}");
}

/// A run validates only house checks; the shipped checks' `over` and predicate fields are
/// validated here, against the generated list, and a list that lacks their fields refuses
/// them (so the validation is real, not skipped).
#[test]
fn shipped_check_predicates_and_sections_are_valid_against_the_field_list() {
    if let Err(p) = RuleBook::load_with_fields(None, &Fields::shipped()) {
        panic!("the shipped checks name fields the report does not have:\n{p}");
    }
    let too_short = Fields::parse("barriers list\nbarriers[] map\nbarriers[].id string\n");
    let problems = match RuleBook::load_with_fields(None, &too_short) {
        Ok(_) => panic!("the shipped checks passed a field list without their fields"),
        Err(p) => p.0,
    };
    assert!(
        problems
            .iter()
            .any(|d| d.file.starts_with("rules/checks/") && d.key.is_some()),
        "{problems:#?}"
    );
}
