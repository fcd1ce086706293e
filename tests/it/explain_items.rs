//! `explain` answers for everything the report shows: every barrier and its two figures,
//! every power-entry section and figure, every EMC topic, the isolation paths, every
//! bridging part and every finding. The items are read from the JSON report (what a reader
//! sees), not from the areas' own lists, so an item an area forgets to list fails here.

use gapwarden::commands::{explain, explain_items};
use gapwarden::diag::Source;
use gapwarden::report::{check_source, render_json};
use gapwarden::rules::RuleBook;
use serde_json::Value;

use crate::common::root;

/// Every project file of the examples and fixtures that evaluates.
fn reports() -> Vec<(String, gapwarden::report::Report)> {
    let rules = RuleBook::shipped().expect("shipped rules load");
    let mut files: Vec<std::path::PathBuf> = Vec::new();
    for dir in ["examples", "tests/fixtures", "tests/fixtures/hardening"] {
        let Ok(entries) = std::fs::read_dir(root().join(dir)) else {
            continue;
        };
        files.extend(
            entries
                .filter_map(|e| e.ok().map(|e| e.path()))
                .filter(|p| p.extension().is_some_and(|x| x == "toml")),
        );
    }
    files.sort();
    let mut out = Vec::new();
    for path in files {
        let name = path.display().to_string();
        let Ok(text) = std::fs::read_to_string(&path) else {
            continue;
        };
        if let Ok(report) = check_source(&Source::new(name.clone(), text), &rules) {
            out.push((name, report));
        }
    }
    out
}

fn strings(v: &Value, pointer: &str, field: &str) -> Vec<String> {
    v.pointer(pointer)
        .and_then(Value::as_array)
        .map(|a| {
            a.iter()
                .filter_map(|x| x.get(field).and_then(Value::as_str))
                .map(str::to_string)
                .collect()
        })
        .unwrap_or_default()
}

/// What the report shows that a reader may ask `explain` about, from its JSON.
fn shown(json: &Value) -> Vec<String> {
    let mut items = vec!["readiness".to_string(), "assumptions".to_string()];
    for id in strings(json, "/barriers", "id") {
        items.push(format!("{id}.clearance"));
        items.push(format!("{id}.creepage"));
        // The electric strength test (test_v_rms, test_v_dc, or why there is none).
        items.push(format!("{id}.electric_strength"));
        items.push(id);
    }
    if !json["isolation"].is_null() {
        items.push("isolation".to_string());
    }
    let parts = strings(json, "/bridges", "part");
    if !parts.is_empty() {
        items.push("bridges".to_string());
    }
    // A bridging part by its reference.
    items.extend(parts);
    if let Some(sections) = json
        .pointer("/power_entry/sections")
        .and_then(Value::as_array)
    {
        items.push("power_entry".to_string());
        for s in sections {
            items.extend(s["id"].as_str().map(str::to_string));
            for f in s["figures"].as_array().into_iter().flatten() {
                items.extend(f["id"].as_str().map(str::to_string));
            }
        }
    }
    if let Some(topics) = json.pointer("/emc/derivation").and_then(Value::as_object) {
        items.push("emc".to_string());
        items.push("emc.points".to_string());
        items.push("emc.assumptions".to_string());
        items.extend(topics.keys().map(|k| format!("emc.{k}")));
    }
    items.extend(strings(json, "/findings", "id"));
    items
}

#[test]
fn every_figure_and_section_the_report_shows_has_an_explain_item() {
    let reports = reports();
    assert!(
        reports.len() >= 40,
        "the examples and fixtures should give many reports, got {}",
        reports.len()
    );
    let (mut with_power_entry, mut with_emc) = (0, 0);
    for (name, report) in &reports {
        let json: Value =
            serde_json::from_str(&render_json(report)).expect("the JSON report parses");
        with_power_entry += usize::from(!json["power_entry"].is_null());
        with_emc += usize::from(!json["emc"].is_null());
        let listed = explain_items(report);
        for item in shown(&json) {
            assert!(
                listed.contains(&item),
                "{name}: the report shows {item}, but explain does not list it"
            );
            let text = explain(report, &item)
                .unwrap_or_else(|e| panic!("{name}: explain {item} failed: {e:?}"));
            assert!(!text.trim().is_empty(), "{name}: explain {item} is empty");
        }
        for item in &listed {
            assert!(
                explain(report, item).is_ok(),
                "{name}: explain lists {item} but cannot explain it"
            );
        }
    }
    // The sweep must have covered every area, or it proves nothing about them.
    assert!(
        with_power_entry > 5 && with_emc > 5,
        "{with_power_entry} {with_emc}"
    );
}

#[test]
fn an_unknown_item_lists_every_area_item() {
    // These eight were missing from the hand-kept list before the areas listed their own.
    let out = crate::common::run(&["explain", "examples/class2-adapter.toml", "no-such-item"]);
    assert_eq!(out.status.code(), Some(2));
    let err = crate::common::stderr(&out);
    for item in [
        "emc.noise",
        "emc.dm_corner",
        "emc.cm_corner",
        "emc.y_capacitance",
        "emc.damping",
        "emc.assumptions",
        "power_entry.operating_point",
        "power_entry.inrush_peak_a",
        "isolation",
        "bridges",
    ] {
        assert!(err.contains(item), "{item} missing from: {err}");
    }
}
