//! `gapwarden schema`: the JSON Schema of the project file. The keys it must describe are
//! found independently of it, by walking every key of the shipped examples and the test
//! fixtures that the reader accepts; the allowed words and numbers are the ones DESIGN.md
//! and the standards name, written out here, and each is tried on the reader too.

use std::path::{Path, PathBuf};

use serde_json::Value;

use crate::common::{root, run, stdout};
use gapwarden::diag::Source;
use gapwarden::project::read_project;

fn schema() -> Value {
    let out = run(&["schema"]);
    assert!(out.status.success(), "gapwarden schema failed: {out:?}");
    serde_json::from_str(&stdout(&out)).expect("gapwarden schema prints valid JSON")
}

/// The subschema at a dotted key path (`barrier.grade`, arrays of tables stepped through),
/// or `None` where the schema has no such key.
fn at<'a>(schema: &'a Value, path: &[&str]) -> Option<&'a Value> {
    let mut here = schema;
    for key in path {
        here = step_into_tables(here);
        here = here.get("properties")?.get(*key)?;
    }
    Some(here)
}

/// An array of tables is described by its items.
fn step_into_tables(s: &Value) -> &Value {
    if s["type"] == "array" && s["items"]["type"] == "object" {
        &s["items"]
    } else {
        s
    }
}

/// A small JSON Schema (draft 7) validator for what the project schema uses: `type`,
/// `enum`, `minimum`, `exclusiveMinimum`, `maximum`, `minLength`, `maxLength`,
/// `properties`, `additionalProperties: false` and `items`. Returns the problems found.
fn validate(schema: &Value, value: &Value, path: &str, problems: &mut Vec<String>) {
    if let Some(t) = schema.get("type").and_then(Value::as_str) {
        let ok = match t {
            "object" => value.is_object(),
            "array" => value.is_array(),
            "string" => value.is_string(),
            "boolean" => value.is_boolean(),
            "number" => value.is_number(),
            // As draft 7 says: a number with a zero fractional part is an integer.
            "integer" => value.as_f64().is_some_and(|v| v.fract() == 0.0),
            other => panic!("type {other} is not handled by this test's validator"),
        };
        if !ok {
            problems.push(format!("{path}: expected {t}, found {value}"));
            return;
        }
    }
    if let Some(words) = schema.get("enum").and_then(Value::as_array)
        && !words.contains(value)
    {
        problems.push(format!("{path}: {value} is not one of {words:?}"));
    }
    if let Some(v) = value.as_f64() {
        if let Some(min) = schema.get("minimum").and_then(Value::as_f64)
            && v < min
        {
            problems.push(format!("{path}: {v} below minimum {min}"));
        }
        if let Some(min) = schema.get("exclusiveMinimum").and_then(Value::as_f64)
            && v <= min
        {
            problems.push(format!("{path}: {v} not above {min}"));
        }
        if let Some(max) = schema.get("maximum").and_then(Value::as_f64)
            && v > max
        {
            problems.push(format!("{path}: {v} above maximum {max}"));
        }
    }
    if let Some(s) = value.as_str() {
        let n = s.chars().count() as u64;
        if schema
            .get("minLength")
            .and_then(Value::as_u64)
            .is_some_and(|m| n < m)
        {
            problems.push(format!("{path}: string too short"));
        }
        if schema
            .get("maxLength")
            .and_then(Value::as_u64)
            .is_some_and(|m| n > m)
        {
            problems.push(format!("{path}: string too long"));
        }
    }
    if let Some(map) = value.as_object() {
        let props = schema.get("properties").and_then(Value::as_object);
        for (k, v) in map {
            match props.and_then(|p| p.get(k)) {
                Some(sub) => validate(sub, v, &format!("{path}.{k}"), problems),
                None if schema["additionalProperties"] == false => {
                    problems.push(format!("{path}.{k}: not allowed (additionalProperties)"))
                }
                None => {}
            }
        }
    }
    if let (Some(items), Some(list)) = (schema.get("items"), value.as_array()) {
        for (i, v) in list.iter().enumerate() {
            validate(items, v, &format!("{path}[{i}]"), problems);
        }
    }
}

fn problems_of(schema: &Value, value: &Value) -> Vec<String> {
    let mut problems = Vec::new();
    validate(schema, value, "", &mut problems);
    problems
}

/// A TOML text as the JSON value an editor checks against the schema.
fn toml_as_json(text: &str) -> Value {
    let table: toml::Table = toml::from_str(text).expect("the test's TOML parses");
    serde_json::to_value(table).expect("TOML converts to JSON")
}

/// Every dotted key path of a TOML document (arrays of tables stepped through).
fn key_paths(value: &toml::Value, prefix: &mut Vec<String>, out: &mut Vec<Vec<String>>) {
    match value {
        toml::Value::Table(t) => {
            for (k, v) in t {
                prefix.push(k.clone());
                out.push(prefix.clone());
                key_paths(v, prefix, out);
                prefix.pop();
            }
        }
        toml::Value::Array(items) => {
            for item in items.iter().filter(|i| i.is_table()) {
                key_paths(item, prefix, out);
            }
        }
        _ => {}
    }
}

fn toml_files(dir: &Path) -> Vec<PathBuf> {
    let mut files: Vec<PathBuf> = std::fs::read_dir(dir)
        .expect("folder readable")
        .filter_map(|e| e.ok().map(|e| e.path()))
        .filter(|p| p.extension().is_some_and(|e| e == "toml") && p.is_file())
        .collect();
    files.sort();
    files
}

/// The shipped examples and every fixture project file.
fn project_files() -> Vec<PathBuf> {
    let mut files = toml_files(&root().join("examples"));
    files.extend(toml_files(&root().join("tests/fixtures")));
    files.extend(toml_files(&root().join("tests/fixtures/hardening")));
    files
}

fn read(text: &str) -> Result<(), String> {
    read_project(&Source::new("test.toml", text))
        .map(|_| ())
        .map_err(|p| {
            p.0.iter()
                .map(|d| format!("{}: {}", d.key.clone().unwrap_or_default(), d.message))
                .collect::<Vec<_>>()
                .join("\n")
        })
}

#[test]
fn schema_is_json_and_a_draft_7_json_schema_of_a_table() {
    let s = schema();
    assert_eq!(s["$schema"], "http://json-schema.org/draft-07/schema#");
    assert_eq!(s["type"], "object");
    let props = s["properties"].as_object().expect("properties");
    for table in [
        "design",
        "environment",
        "mains",
        "circuit",
        "barrier",
        "part",
    ] {
        assert!(props.contains_key(table), "{table} missing");
    }
    assert_eq!(s["properties"]["circuit"]["type"], "array");
    assert_eq!(s["properties"]["circuit"]["items"]["type"], "object");
    // TOML has no null: no key may be described as one.
    assert!(!s.to_string().contains("null"), "a null in the schema");
    // Every table is written inline: an editor follows no reference.
    assert!(!s.to_string().contains("$ref"));
    // Descriptions are whole sentences, not the doc comments' source lines.
    assert!(
        !s.to_string().contains("\\n"),
        "a line break in a description"
    );
}

#[test]
fn every_key_the_reader_accepts_in_examples_and_fixtures_is_in_the_schema() {
    let s = schema();
    let mut files_walked = 0;
    let mut keys_checked = 0;
    for file in project_files() {
        let text = std::fs::read_to_string(&file).expect("readable");
        let Ok(doc) = toml::from_str::<toml::Value>(&text) else {
            continue; // a syntax-error fixture has no keys to speak of
        };
        // Only keys the reader accepts: a fixture of an unknown key is the other test.
        if let Err(e) = read(&text)
            && e.contains("unknown key")
        {
            continue;
        }
        files_walked += 1;
        let mut paths = Vec::new();
        key_paths(&doc, &mut Vec::new(), &mut paths);
        for path in paths {
            let parts: Vec<&str> = path.iter().map(String::as_str).collect();
            let found = at(&s, &parts);
            assert!(
                found.is_some(),
                "{}: key {} is not in the schema",
                file.display(),
                path.join(".")
            );
            let description = found.and_then(|f| f.get("description"));
            assert!(
                description
                    .and_then(Value::as_str)
                    .is_some_and(|d| !d.is_empty()),
                "{}: key {} has no description",
                file.display(),
                path.join(".")
            );
            keys_checked += 1;
        }
        // A file the reader takes without any problem is valid against the schema too.
        if read(&text).is_ok() {
            let problems = problems_of(&s, &toml_as_json(&text));
            assert!(
                problems.is_empty(),
                "{} is read but the schema refuses it: {problems:?}",
                file.display()
            );
        }
    }
    // Two examples and dozens of fixtures; hundreds of keys.
    assert!(files_walked >= 40, "only {files_walked} files walked");
    assert!(keys_checked >= 500, "only {keys_checked} keys checked");
}

#[test]
fn power_entry_and_emc_keys_are_in_the_schema() {
    // The tables of DESIGN.md "Power entry and EMC, core keys", written out here.
    let s = schema();
    for path in [
        "input.bulk_capacitance_uf",
        "input.series_resistance_ohm",
        "input.bridge_surge_a",
        "input.x_capacitance_uf",
        "input.bleeder_ohm",
        "input.connection",
        "input.limiter.kind",
        "input.limiter.cold_ohm",
        "input.limiter.hot_ohm",
        "input.limiter.energy_rating_j",
        "input.fuse.rated_a",
        "input.fuse.melting_i2t_a2s",
        "input.fuse.breaking_a",
        "input.fuse.rated_v",
        "input.fuse.speed",
        "converter.output_w",
        "converter.efficiency",
        "converter.min_bulk_v",
        "converter.switching_hz",
        "converter.max_duty",
        "emc.limit_class",
        "emc.margin_db",
        "emc.prescan.frequency_hz",
        "emc.prescan.level_dbuv",
        "emc.prescan.detector",
    ] {
        let parts: Vec<&str> = path.split('.').collect();
        assert!(at(&s, &parts).is_some(), "{path} is not in the schema");
    }
    assert_eq!(
        at(&s, &["input", "connection"]).unwrap()["enum"],
        serde_json::json!(["plug", "industrial-plug", "permanent"])
    );
    assert_eq!(
        at(&s, &["emc", "limit_class"]).unwrap()["enum"],
        serde_json::json!(["A", "B"])
    );
}

/// The Class II example with one line replaced, for trying a value on the reader.
fn example_with(line_start: &str, replacement: &str) -> String {
    let text = std::fs::read_to_string(root().join("examples/class2-adapter.toml")).unwrap();
    let mut found = false;
    let out: Vec<String> = text
        .lines()
        .map(|l| {
            if !found && l.trim_start().starts_with(line_start) {
                found = true;
                replacement.to_string()
            } else {
                l.to_string()
            }
        })
        .collect();
    assert!(found, "the example has a line starting {line_start}");
    out.join("\n") + "\n"
}

#[test]
fn allowed_values_match_the_words_the_reader_accepts() {
    let s = schema();
    // Pollution degree: IEC 60664-1 defines 1 to 4; DESIGN.md covers 1, 2 and 3.
    let pd = at(&s, &["environment", "pollution_degree"]).unwrap();
    assert_eq!(pd["type"], "integer");
    for (value, accepted) in [
        ("1", true),
        ("2", true),
        ("3", true),
        ("0", false),
        ("4", false),
        ("2.5", false),
    ] {
        let text = example_with("pollution_degree", &format!("pollution_degree = {value}"));
        assert_eq!(
            read(&text).is_ok(),
            accepted,
            "reader, pollution_degree = {value}"
        );
        let json: Value = serde_json::from_str(value).unwrap();
        assert_eq!(
            problems_of(pd, &json).is_empty(),
            accepted,
            "schema, pollution_degree = {value}"
        );
        assert_eq!(
            problems_of(&s, &toml_as_json(&text)).is_empty(),
            accepted,
            "schema on the whole file, pollution_degree = {value}"
        );
    }

    // Material groups by CTI, IEC 60664-1 clause 4.8.1.3: I, II, IIIa, IIIb.
    let mg = at(&s, &["barrier", "material_group"]).unwrap();
    assert_eq!(mg["enum"], serde_json::json!(["I", "II", "IIIa", "IIIb"]));
    for (value, accepted) in [("\"IIIa\"", true), ("\"IIIb\"", true), ("\"3a\"", false)] {
        let text = example_with("material_group", &format!("material_group = {value}"));
        assert_eq!(
            read(&text).is_ok(),
            accepted,
            "reader, material_group = {value}"
        );
        assert_eq!(
            problems_of(&s, &toml_as_json(&text)).is_empty(),
            accepted,
            "schema, material_group = {value}"
        );
    }

    // Protection classes, IEC 61140: I, II, III (as a word, not a number).
    let pc = at(&s, &["design", "protection_class"]).unwrap();
    assert_eq!(pc["enum"], serde_json::json!(["I", "II", "III"]));
    for (value, accepted) in [
        ("\"II\"", true),
        ("\"I\"", true),
        ("2", false),
        ("\"2\"", false),
    ] {
        let text = example_with("protection_class", &format!("protection_class = {value}"));
        assert_eq!(
            read(&text).is_ok(),
            accepted,
            "reader, protection_class = {value}"
        );
        assert_eq!(
            problems_of(&s, &toml_as_json(&text)).is_empty(),
            accepted,
            "schema, protection_class = {value}"
        );
    }

    // Insulation grades of DESIGN.md's project file.
    let grade = at(&s, &["barrier", "grade"]).unwrap();
    let words: Vec<&str> = grade["enum"]
        .as_array()
        .unwrap()
        .iter()
        .filter_map(Value::as_str)
        .collect();
    for w in [
        "functional",
        "basic",
        "supplementary",
        "reinforced",
        "double",
    ] {
        assert!(words.contains(&w), "grade {w} missing from {words:?}");
    }
}

#[test]
fn an_unknown_key_is_refused_by_the_reader_and_by_the_schema() {
    let s = schema();
    for (line_start, replacement, key) in [
        ("name", "name = \"x\"\ncolour = \"red\"", "design.colour"),
        (
            "working_rms_v",
            "working_rms_v = 250\nvoltage = 250",
            "barrier[1].voltage",
        ),
        (
            "nominal_v",
            "nominal_v = 230\nnominal = 230",
            "mains.nominal",
        ),
    ] {
        let text = example_with(line_start, replacement);
        let e = read(&text).expect_err("the reader refuses an unknown key");
        assert!(e.contains("unknown key"), "{e}");
        assert!(e.contains(key), "{e}");
        let problems = problems_of(&s, &toml_as_json(&text));
        assert!(
            problems.iter().any(|p| p.contains("additionalProperties")),
            "the schema accepts {key}: {problems:?}"
        );
    }
    let top = format!(
        "extra_table_key = 1\n{}",
        std::fs::read_to_string(root().join("examples/class2-adapter.toml")).unwrap()
    );
    assert!(read(&top).unwrap_err().contains("unknown key"));
    assert!(!problems_of(&s, &toml_as_json(&top)).is_empty());

    // Every table of the schema refuses keys it does not list, as the reader does.
    fn all_tables_closed(s: &Value, path: &str) {
        if s["type"] == "object" {
            assert_eq!(s["additionalProperties"], false, "{path} is open");
        }
        if let Some(props) = s.get("properties").and_then(Value::as_object) {
            for (k, v) in props {
                all_tables_closed(v, &format!("{path}.{k}"));
            }
        }
        if let Some(items) = s.get("items") {
            all_tables_closed(items, &format!("{path}[]"));
        }
    }
    all_tables_closed(&s, "");
}

#[test]
fn every_key_with_a_unit_in_its_name_states_the_unit_in_its_description() {
    // The unit suffixes of the project file's keys and the words a reader looks for.
    let units = [
        ("_mm", "millimetres"),
        ("_m", "metres"),
        ("_v", "volts"),
        ("_hz", "hertz"),
        ("_uf", "microfarads"),
        ("_nf", "nanofarads"),
        ("_pf", "picofarads"),
        ("_uh", "microhenries"),
        ("_mh", "millihenries"),
        ("_ohm", "ohms"),
        ("_a", "amperes"),
        ("_j", "joules"),
        ("_w", "watts"),
        ("_c", "Celsius"),
        ("_db", "decibels"),
        ("_ns", "nanoseconds"),
        ("_a2s", "A²s"),
        ("_dbuv", "dBµV"),
    ];
    fn walk(s: &Value, path: &str, units: &[(&str, &str)], checked: &mut usize) {
        let s = step_into_tables(s);
        let Some(props) = s.get("properties").and_then(Value::as_object) else {
            return;
        };
        for (k, v) in props {
            let here = format!("{path}.{k}");
            // The longest matching suffix names the unit (`_a2s` before `_s`).
            if let Some((suffix, word)) = units
                .iter()
                .filter(|(suffix, _)| k.ends_with(suffix))
                .max_by_key(|(suffix, _)| suffix.len())
            {
                let d = v["description"].as_str().unwrap_or("");
                assert!(
                    d.contains(word),
                    "{here} ({suffix}): \"{d}\" does not say {word}"
                );
                *checked += 1;
            }
            walk(v, &here, units, checked);
        }
    }
    let mut checked = 0;
    walk(&schema(), "", &units, &mut checked);
    assert!(checked >= 50, "only {checked} keys with units");
}

#[test]
fn defaults_are_stated_in_the_descriptions() {
    // The defaults README's key list gives, each looked for in its key's description.
    let s = schema();
    for (path, default) in [
        ("environment.pollution_degree", "default 2"),
        ("environment.overvoltage_category", "default \"II\""),
        ("environment.altitude_m", "2000 m"),
        ("barrier.material_group", "default \"IIIb\""),
        ("barrier.printed_board", "default false"),
        ("barrier.field", "default"),
        ("part.count_in_series", "default 1"),
        ("input.bridge_drop_v", "default 0"),
        ("converter.pfc_stage", "default false"),
        ("emc.limit_class", "default \"B\""),
    ] {
        let parts: Vec<&str> = path.split('.').collect();
        let d = at(&s, &parts).unwrap()["description"]
            .as_str()
            .unwrap_or("");
        assert!(d.contains(default), "{path}: \"{d}\" lacks {default}");
    }
}

/// One key of a document: its path as the reader names it (`barrier[1].id`), its path in
/// the schema (`barrier`, `id`), and the document without it.
struct Removal {
    reader_path: String,
    schema_path: Vec<String>,
    without: toml::Value,
}

fn removals(doc: &toml::Value) -> Vec<Removal> {
    fn walk(
        whole: &toml::Value,
        here: &toml::Value,
        steps: &mut Vec<(String, Option<usize>)>,
        out: &mut Vec<Removal>,
    ) {
        let toml::Value::Table(t) = here else { return };
        for (k, v) in t {
            let mut without = whole.clone();
            let mut cur = &mut without;
            for (key, index) in steps.iter() {
                cur = &mut cur[key.as_str()];
                if let Some(i) = index {
                    cur = &mut cur[*i];
                }
            }
            if let toml::Value::Table(t) = cur {
                t.remove(k);
            }
            let mut reader_path = String::new();
            for (key, index) in steps.iter() {
                reader_path.push_str(key);
                if let Some(i) = index {
                    reader_path.push_str(&format!("[{}]", i + 1));
                }
                reader_path.push('.');
            }
            reader_path.push_str(k);
            let mut schema_path: Vec<String> = steps.iter().map(|(k, _)| k.clone()).collect();
            schema_path.push(k.clone());
            out.push(Removal {
                reader_path,
                schema_path,
                without,
            });
            match v {
                toml::Value::Table(_) => {
                    steps.push((k.clone(), None));
                    walk(whole, v, steps, out);
                    steps.pop();
                }
                // The first table of an array of tables stands for all.
                toml::Value::Array(items) if items.first().is_some_and(|i| i.is_table()) => {
                    steps.push((k.clone(), Some(0)));
                    walk(whole, &items[0], steps, out);
                    steps.pop();
                }
                _ => {}
            }
        }
    }
    let mut out = Vec::new();
    walk(doc, doc, &mut Vec::new(), &mut out);
    out
}

#[test]
fn a_key_is_required_in_the_schema_exactly_where_the_reader_reports_it_missing() {
    let s = schema();
    let mut tried = 0;
    let mut required_seen = std::collections::BTreeSet::new();
    for file in project_files() {
        let text = std::fs::read_to_string(&file).expect("readable");
        if read(&text).is_err() {
            continue;
        }
        let doc: toml::Value = toml::from_str(&text).expect("read, so it parses");
        for r in removals(&doc) {
            let text = toml::to_string(&r.without).expect("TOML writes back");
            let missing = match read(&text) {
                Ok(()) => false,
                Err(e) => e
                    .lines()
                    .any(|l| l.starts_with(&format!("{}: missing", r.reader_path))),
            };
            let parts: Vec<&str> = r.schema_path.iter().map(String::as_str).collect();
            let (parent, key) = parts.split_at(parts.len() - 1);
            let table = if parent.is_empty() {
                &s
            } else {
                step_into_tables(at(&s, parent).expect("the key's table is in the schema"))
            };
            let required = table["required"]
                .as_array()
                .is_some_and(|r| r.iter().any(|k| k == key[0]));
            let description = at(&s, &parts).unwrap()["description"]
                .as_str()
                .unwrap_or("");
            if missing {
                // A key that is required only with another's value ("cold_ohm" for an
                // NTC) cannot be required in the schema, but its description says so.
                assert!(
                    required || description.contains("required"),
                    "{}: the reader requires {} but the schema does not say so",
                    file.display(),
                    r.reader_path
                );
            } else {
                assert!(
                    !required,
                    "{}: the schema requires {} but the reader reads the file without it",
                    file.display(),
                    r.reader_path
                );
            }
            if required {
                required_seen.insert(r.schema_path.join("."));
            }
            tried += 1;
        }
    }
    assert!(tried >= 500, "only {tried} keys removed");
    // DESIGN.md's required core keys, among those the walk met.
    for key in [
        "design",
        "design.name",
        "design.protection_class",
        "mains",
        "mains.nominal_v",
    ] {
        assert!(required_seen.contains(key), "{key} not seen as required");
    }
}

#[test]
fn schema_is_listed_in_help_completions_and_the_man_page() {
    let help = stdout(&run(&["--help"]));
    assert!(help.contains("schema"), "{help}");
    let bash = stdout(&run(&["completions", "bash"]));
    assert!(bash.contains("schema"), "bash completions lack schema");
    let man = stdout(&run(&["man"]));
    assert!(man.contains("schema"), "the man page lacks schema");
}
