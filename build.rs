//! Embeds every shipped rule file (`rules/**/*.toml`) and template (`templates/*.j2`) in
//! the binary, so a new file needs no list kept by hand. Each rule file is also converted
//! to JSON, hashed (SHA-256 of its text) and, for check files, the line of each `[[check]]`
//! noted: a run then reads the shipped rules without parsing TOML or hashing again. A file
//! that is not valid TOML fails the build. It also lists every type that implements the
//! rule book's `Table` trait (`impl Table for X` in `src/`), so that a new rule table is its
//! file and its struct, and a house table of any type is read and checked at load.

use std::fmt::Write as _;
use std::path::{Path, PathBuf};

use sha2::{Digest, Sha256};

fn files(dir: &Path, extension: &str, out: &mut Vec<PathBuf>) {
    let Ok(entries) = std::fs::read_dir(dir) else {
        return;
    };
    let mut paths: Vec<PathBuf> = entries.filter_map(|e| e.ok().map(|e| e.path())).collect();
    paths.sort();
    for path in paths {
        if path.is_dir() {
            files(&path, extension, out);
        } else if path.extension().is_some_and(|x| x == extension) {
            out.push(path);
        }
    }
}

fn inside(root: &Path, path: &Path) -> String {
    path.strip_prefix(root)
        .unwrap_or(path)
        .to_string_lossy()
        .replace('\\', "/")
}

fn absolute(path: &Path) -> String {
    std::fs::canonicalize(path)
        .unwrap_or(path.to_path_buf())
        .to_string_lossy()
        .to_string()
}

fn rules(root: &Path) -> String {
    let mut found = Vec::new();
    files(root, "toml", &mut found);
    let mut code = String::from("pub const SHIPPED_RULES: &[ShippedRule] = &[\n");
    for path in found {
        let text =
            std::fs::read_to_string(&path).unwrap_or_else(|e| panic!("{}: {e}", path.display()));
        let value: toml::Value = toml::from_str(&text)
            .unwrap_or_else(|e| panic!("{} is not valid TOML: {e}", path.display()));
        // A check file is read from its `checks` entries; its JSON form would be unused.
        let json = if value.get("check").is_some() {
            String::new()
        } else {
            serde_json::to_string(&value).unwrap_or_else(|e| panic!("{}: {e}", path.display()))
        };
        let hash: String = Sha256::digest(text.as_bytes())
            .iter()
            .map(|b| format!("{b:02x}"))
            .collect();
        // The line of each [[check]] entry, where the parser located it.
        let doc = toml::de::DeTable::parse(&text)
            .unwrap_or_else(|e| panic!("{} is not valid TOML: {e}", path.display()));
        let lines: Vec<String> = doc
            .get_ref()
            .iter()
            .find(|(k, _)| k.get_ref().as_ref() == "check")
            .and_then(|(_, v)| match v.get_ref() {
                toml::de::DeValue::Array(items) => Some(
                    items
                        .iter()
                        .map(|item| {
                            (text[..item.span().start].matches('\n').count() + 1).to_string()
                        })
                        .collect(),
                ),
                _ => None,
            })
            .unwrap_or_default();
        let checks = shipped_checks(&path, &value, &lines);
        let field = |key: &str| {
            value
                .get(key)
                .and_then(toml::Value::as_str)
                .unwrap_or_default()
                .to_string()
        };
        let _ = writeln!(
            code,
            "    ShippedRule {{ name: {:?}, text: include_str!({:?}), json: {:?}, sha256: {:?}, check_lines: &[{}], checks: &[{}], id: {:?}, title: {:?}, source: {:?}, provenance: {:?}, is_checks: {} }},",
            inside(root, &path),
            absolute(&path),
            json,
            hash,
            lines.join(", "),
            checks,
            field("id"),
            field("title"),
            field("source"),
            field("provenance"),
            value.get("check").is_some()
        );
    }
    code.push_str("];\n");
    code
}

/// The keys a `[[check]]` entry may have (`RawCheck` in src/rules/check_defs.rs).
const CHECK_KEYS: [&str; 11] = [
    "id",
    "overrides",
    "title",
    "severity",
    "over",
    "applies",
    "condition",
    "subject",
    "message",
    "rationale",
    "source",
];

/// A check file's `[[check]]` entries as `ShippedCheck` literals: its text fields as they
/// are, its conditions as JSON (a quoted expression or a predicate table), so that a run
/// reads no check file. An unknown key or a value of the wrong kind fails the build.
fn shipped_checks(path: &Path, value: &toml::Value, lines: &[String]) -> String {
    let Some(entries) = value.get("check").and_then(toml::Value::as_array) else {
        return String::new();
    };
    let mut code = String::new();
    for (i, entry) in entries.iter().enumerate() {
        let Some(table) = entry.as_table() else {
            panic!("{}: check[{}] is not a table", path.display(), i + 1);
        };
        for key in table.keys() {
            if !CHECK_KEYS.contains(&key.as_str()) {
                panic!(
                    "{}: check[{}] has an unknown key `{key}`",
                    path.display(),
                    i + 1
                );
            }
        }
        let text = |key: &str| match table.get(key) {
            None => "None".to_string(),
            Some(toml::Value::String(s)) => format!("Some({s:?})"),
            Some(_) => panic!("{}: check[{}].{key} is not a string", path.display(), i + 1),
        };
        let json = |key: &str| match table.get(key) {
            None => "None".to_string(),
            Some(v) => format!(
                "Some({:?})",
                serde_json::to_string(v).unwrap_or_else(|e| panic!("{}: {e}", path.display()))
            ),
        };
        let overrides = match table.get("overrides") {
            None => false,
            Some(toml::Value::Boolean(b)) => *b,
            Some(_) => panic!(
                "{}: check[{}].overrides is not true or false",
                path.display(),
                i + 1
            ),
        };
        let id = match table.get("id") {
            Some(toml::Value::String(s)) => s.clone(),
            _ => panic!("{}: check[{}] has no id", path.display(), i + 1),
        };
        let _ = write!(
            code,
            "ShippedCheck {{ id: {id:?}, overrides: {overrides}, title: {}, severity: {}, over: {}, applies: {}, condition: {}, subject: {}, message: {}, rationale: {}, source: {}, line: {} }}, ",
            text("title"),
            text("severity"),
            text("over"),
            json("applies"),
            json("condition"),
            text("subject"),
            text("message"),
            text("rationale"),
            text("source"),
            lines.get(i).map(String::as_str).unwrap_or("0"),
        );
    }
    code
}

fn templates(root: &Path) -> String {
    let mut found = Vec::new();
    files(root, "j2", &mut found);
    let mut code = String::from("pub const SHIPPED_TEMPLATES: &[(&str, &str)] = &[\n");
    for path in found {
        let _ = writeln!(
            code,
            "    ({:?}, include_str!({:?})),",
            inside(root, &path),
            absolute(&path)
        );
    }
    code.push_str("];\n");
    code
}

/// `crate::a::b` for `src/a/b.rs` (or `src/a/b/mod.rs`).
fn module_path(src: &Path, path: &Path) -> String {
    let inside = inside(src, path);
    let inside = inside.strip_suffix(".rs").unwrap_or(&inside);
    let inside = inside.strip_suffix("/mod").unwrap_or(inside);
    if inside == "lib" || inside == "main" {
        return "crate".to_string();
    }
    format!("crate::{}", inside.replace('/', "::"))
}

/// Every `impl Table for X` (the trait named as `Table` or by a path ending in it) at the
/// start of a line, as `TableType::of::<path::X>("path::X")` entries.
fn table_types(src: &Path) -> String {
    let mut found = Vec::new();
    files(src, "rs", &mut found);
    let mut code = String::from("&[\n");
    for path in found {
        let Ok(text) = std::fs::read_to_string(&path) else {
            continue;
        };
        for line in text.lines() {
            let Some(rest) = line.strip_prefix("impl ") else {
                continue;
            };
            let Some((trait_path, after)) = rest.split_once(" for ") else {
                continue;
            };
            if trait_path != "Table" && !trait_path.ends_with("::Table") {
                continue;
            }
            let name: String = after
                .chars()
                .take_while(|c| c.is_alphanumeric() || *c == '_')
                .collect();
            if name.is_empty() {
                continue;
            }
            let full = format!("{}::{name}", module_path(src, &path));
            let shown = full.strip_prefix("crate::").unwrap_or(&full);
            let _ = writeln!(code, "    TableType::of::<{full}>({shown:?}),");
        }
    }
    code.push(']');
    code
}

fn main() {
    let manifest =
        PathBuf::from(std::env::var("CARGO_MANIFEST_DIR").unwrap_or_else(|_| ".".into()));
    let out = PathBuf::from(std::env::var("OUT_DIR").unwrap_or_else(|_| ".".into()));
    for (file, code) in [
        ("shipped_rules.rs", rules(&manifest.join("rules"))),
        (
            "shipped_templates.rs",
            templates(&manifest.join("templates")),
        ),
        ("table_types.rs", table_types(&manifest.join("src"))),
    ] {
        if let Err(e) = std::fs::write(out.join(file), code) {
            panic!("cannot write the embedded file list {file}: {e}");
        }
    }
    println!("cargo:rerun-if-changed=rules");
    println!("cargo:rerun-if-changed=templates");
    println!("cargo:rerun-if-changed=src");
}
