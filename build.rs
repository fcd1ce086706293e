//! Embeds every shipped rule file (`rules/**/*.toml`) and template (`templates/*.j2`) in
//! the binary, so a new file needs no list kept by hand. Each rule file is also written out
//! as a static value tree (`Node`, read by serde without parsing text), hashed (SHA-256 of its text) and, for check files, the line of each `[[check]]`
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
        // A check file is read from its `checks` entries; its value tree would be unused.
        let values = if value.get("check").is_some() {
            "Node::Table(&[])".to_string()
        } else {
            let mut out = String::new();
            node(&value, &path.display().to_string(), &mut out);
            out
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
            "    ShippedRule {{ name: {:?}, path: {:?}, text: include_str!({:?}), values: {}, sha256: {:?}, check_lines: &[{}], checks: &[{}], id: {:?}, title: {:?}, source: {:?}, provenance: {:?}, is_checks: {} }},",
            inside(root, &path),
            format!("rules/{}", inside(root, &path)),
            absolute(&path),
            values,
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

/// A TOML value as a `Node` literal (src/rules/node.rs): every string, integer, float,
/// boolean, array and table as the TOML parser gives it, so that a run reads a shipped
/// table through serde without parsing any text. Floats are written with `{:?}`, which
/// reads back as the same `f64`; integers stay integers. A value TOML has but a table
/// cannot use (a date, an infinite or NaN float) fails the build.
fn node(value: &toml::Value, at: &str, out: &mut String) {
    match value {
        toml::Value::String(s) => {
            let _ = write!(out, "Node::Str({s:?})");
        }
        toml::Value::Integer(i) => {
            let _ = write!(out, "Node::Int({i}i64)");
        }
        toml::Value::Float(f) if f.is_finite() => {
            let _ = write!(out, "Node::Float({f:?}f64)");
        }
        toml::Value::Float(f) => panic!("{at}: {f} is not a finite number"),
        toml::Value::Boolean(b) => {
            let _ = write!(out, "Node::Bool({b})");
        }
        toml::Value::Datetime(d) => panic!("{at}: a date ({d}) is not read by any rule table"),
        toml::Value::Array(items) => {
            out.push_str("Node::Array(&[");
            for item in items {
                node(item, at, out);
                out.push_str(", ");
            }
            out.push_str("])");
        }
        toml::Value::Table(table) => {
            out.push_str("Node::Table(&[");
            for (key, item) in table {
                let _ = write!(out, "({key:?}, ");
                node(item, at, out);
                out.push_str("), ");
            }
            out.push_str("])");
        }
    }
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
/// are, its conditions as Rust code (see [`condition`]), so that a run reads no check
/// file. An unknown key or a value of the wrong kind fails the build.
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
        let cond = |key: &str| match table.get(key) {
            None => "None".to_string(),
            Some(v) => {
                let at = format!("{}: check[{}].{key}", path.display(), i + 1);
                format!("Some({})", condition(v, &at))
            }
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
            cond("applies"),
            cond("condition"),
            text("subject"),
            text("message"),
            text("rationale"),
            text("source"),
            lines.get(i).map(String::as_str).unwrap_or("0"),
        );
    }
    code
}

/// A shipped check's condition as Rust code: a quoted expression as
/// `ShippedCond::Expression`, a predicate table as the constructor calls of the
/// `Predicate` it reads as, so that a run parses no shipped condition. The unit test
/// `rules::check_defs::tests::shipped_conditions_are_built_as_the_parser_reads_them` proves
/// each equal to what `Predicate::parse` makes of the same table; a shape this does not
/// know fails the build.
fn condition(value: &toml::Value, at: &str) -> String {
    match value {
        toml::Value::String(e) => format!("ShippedCond::Expression({e:?})"),
        other => format!("ShippedCond::Predicate(|| {})", predicate(other, at)),
    }
}

fn predicate(value: &toml::Value, at: &str) -> String {
    let table = match value {
        toml::Value::Boolean(b) => return format!("P::Always({b})"),
        toml::Value::Table(t) => t,
        _ => panic!("{at}: a condition is an expression or a table"),
    };
    let list = |items: &toml::Value| -> String {
        let Some(items) = items.as_array() else {
            panic!("{at}: all and any take a list")
        };
        let parts: Vec<String> = items.iter().map(|p| predicate(p, at)).collect();
        format!("vec![{}]", parts.join(", "))
    };
    if table.len() == 1 {
        if let Some(items) = table.get("all") {
            return format!("P::All({})", list(items));
        }
        if let Some(items) = table.get("any") {
            return format!("P::Any({})", list(items));
        }
        if let Some(inner) = table.get("not") {
            return format!("P::Not(Box::new({}))", predicate(inner, at));
        }
    }
    let field = match (table.get("field"), table.get("verdict")) {
        (Some(toml::Value::String(f)), None) => field_ref(f, false),
        (None, Some(toml::Value::String(v))) => field_ref(v, true),
        _ => panic!("{at}: a condition table needs field or verdict"),
    };
    let tests: Vec<(&String, &toml::Value)> = table
        .iter()
        .filter(|(k, _)| k.as_str() != "field" && k.as_str() != "verdict")
        .collect();
    let [(test, arg)] = tests.as_slice() else {
        panic!("{at}: a condition on a field takes exactly one test")
    };
    let flag = || match arg {
        toml::Value::Boolean(b) => *b,
        _ => panic!("{at}: {test} takes true or false"),
    };
    match test.as_str() {
        "missing" => format!("P::Missing({field}, {})", flag()),
        "set" => format!("P::Set({field}, {})", flag()),
        "not_empty" => format!("P::NotEmpty({field}, {})", flag()),
        "one_of" => {
            let Some(values) = arg.as_array() else {
                panic!("{at}: one_of takes a list")
            };
            let values: Vec<String> = values.iter().map(|v| constant(v, at)).collect();
            format!("P::OneOf({field}, vec![{}])", values.join(", "))
        }
        op @ ("is" | "is_not" | "lt" | "le" | "gt" | "ge") => {
            let op = match op {
                "is" => "Is",
                "is_not" => "IsNot",
                "lt" => "Lt",
                "le" => "Le",
                "gt" => "Gt",
                _ => "Ge",
            };
            let operand = match arg {
                toml::Value::Table(t) => match (t.get("field"), t.len()) {
                    (Some(toml::Value::String(f)), 1) => {
                        format!("Operand::Field({})", field_ref(f, false))
                    }
                    _ => panic!("{at}: {test} takes a value or {{ field = ... }}"),
                },
                v => format!("Operand::Constant({})", constant(v, at)),
            };
            format!("P::Compare({field}, Op::{op}, {operand})")
        }
        other => panic!("{at}: unknown test `{other}`"),
    }
}

/// `FieldRef::built(...)` for a field path (`verdict = "name"` reads `verdicts.<name>`).
fn field_ref(path: &str, verdict: bool) -> String {
    let (from_report, rest) = match path.strip_prefix("report.") {
        Some(rest) => (true, rest),
        None => (false, path),
    };
    let (parts, written): (Vec<&str>, String) = if verdict {
        (vec!["verdicts", rest], format!("verdicts['{rest}']"))
    } else {
        (rest.split('.').collect(), path.to_string())
    };
    format!("FieldRef::built({from_report}, &{parts:?}, {written:?})")
}

fn constant(value: &toml::Value, at: &str) -> String {
    match value {
        toml::Value::Boolean(b) => format!("Value::from({b})"),
        toml::Value::String(s) => format!("Value::from({s:?})"),
        toml::Value::Integer(i) => format!("Value::from({i}i64)"),
        toml::Value::Float(f) if f.is_finite() => format!("Value::from({f:?}f64)"),
        _ => panic!("{at}: a constant is a number, a string or true/false"),
    }
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
    // The tool is linked at a fixed address (not position-independent): the loader then has
    // no pointers to relocate at start, about 15,500 of them (the static rule trees, vtables),
    // which cost a run about 0.2 million instructions and 70 of its 480 page faults (README,
    // "Performance"). The price is that the executable's own code is not placed at a random
    // address; the tool reads local files only and never the network. The examples are
    // linked the same way, so that the parse-only baseline of `scripts/bench-process.sh`
    // starts as cheaply and the comparison is of the work done.
    if std::env::var("CARGO_CFG_TARGET_OS").as_deref() == Ok("linux") {
        println!("cargo:rustc-link-arg-bins=-no-pie");
        println!("cargo:rustc-link-arg-examples=-no-pie");
    }
    let hot = manifest.join("scripts/hot-functions.txt");
    if hot.is_file() && links_with_rust_lld() {
        println!(
            "cargo:rustc-link-arg-bins=-Wl,--symbol-ordering-file={}",
            hot.display()
        );
        println!("cargo:rustc-link-arg-bins=-Wl,--no-warn-symbol-ordering");
    }
    println!("cargo:rerun-if-changed=rules");
    println!("cargo:rerun-if-changed=templates");
    println!("cargo:rerun-if-changed=src");
    println!("cargo:rerun-if-changed=scripts/hot-functions.txt");
    println!("cargo:rerun-if-env-changed=RUSTC_LINKER");
}

/// Whether the binary is linked by the toolchain's own LLD, which can place the functions a
/// check runs together (`scripts/hot-functions.txt`, written by `scripts/hot-functions.sh`):
/// a run then maps a few dozen pages of code instead of most of the binary (page faults per
/// run 229 -> 144 on the Class II example, README "Performance"). Rust links
/// x86_64-unknown-linux-gnu with its LLD by default since 1.90; any other target, an older
/// compiler or a linker chosen in the configuration gets no ordering (the flag would not be
/// understood), which changes nothing but the layout.
fn links_with_rust_lld() -> bool {
    let var = |name: &str| std::env::var(name).unwrap_or_default();
    if var("TARGET") != "x86_64-unknown-linux-gnu" || !var("RUSTC_LINKER").is_empty() {
        return false;
    }
    let flags = var("CARGO_ENCODED_RUSTFLAGS");
    if ["linker", "fuse-ld", "link-self-contained", "link-arg"]
        .iter()
        .any(|word| flags.contains(word))
    {
        return false;
    }
    let rustc = std::env::var_os("RUSTC").unwrap_or_else(|| "rustc".into());
    let Ok(out) = std::process::Command::new(rustc).arg("--version").output() else {
        return false;
    };
    // "rustc 1.95.0 (59807616e 2026-04-14)"
    let version = String::from_utf8_lossy(&out.stdout);
    let mut numbers = version
        .split_whitespace()
        .nth(1)
        .unwrap_or("")
        .split('.')
        .map(|n| n.parse::<u32>().unwrap_or(0));
    let (major, minor) = (numbers.next().unwrap_or(0), numbers.next().unwrap_or(0));
    (major, minor) >= (1, 90)
}
