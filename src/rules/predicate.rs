//! The small predicate language of checks: conditions written as TOML tables, read into
//! typed values once and evaluated natively (no template engine), plus the list of report
//! fields that every check is validated against at load.
//!
//! A predicate is one table: `{ field = "path", <test> }` or a combination
//! (`{ all = [...] }`, `{ any = [...] }`, `{ not = {...} }`); `verdict = "name"` stands
//! for the field `verdicts.<name>` (verdict names may contain dots). A path is relative to
//! the item the check runs over, or to the whole report when it starts with `report.`.
//! Tests: `is`, `is_not`, `lt`, `le`, `gt`, `ge` (against a constant or `{ field = ... }`),
//! `one_of = [...]`, `missing = true|false`, `set = true|false`, `not_empty = true|false`.
//! A missing (absent or null) field fails every comparison except `is_not`.

use std::borrow::Cow;
use std::collections::BTreeMap;
use std::fmt;

use minijinja::value::Value;
use serde_json::Value as Json;

use super::Text;
use crate::diag::{one_of, suggest};

/// A field named by a check: path segments from the item or from the report (a shipped
/// check's are lent by the binary, not copied).
#[derive(Debug, Clone, PartialEq)]
pub struct FieldRef {
    pub from_report: bool,
    pub parts: Vec<Text>,
    /// As written, for messages and `explain`.
    pub written: Text,
}

#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum Op {
    Is,
    IsNot,
    Lt,
    Le,
    Gt,
    Ge,
}

impl Op {
    const ALL: [(&'static str, Op); 6] = [
        ("is", Op::Is),
        ("is_not", Op::IsNot),
        ("lt", Op::Lt),
        ("le", Op::Le),
        ("gt", Op::Gt),
        ("ge", Op::Ge),
    ];
}

#[derive(Debug, Clone, PartialEq)]
pub enum Operand {
    Constant(Value),
    Field(FieldRef),
}

/// One condition, checked against the report's fields when it was read.
#[derive(Debug, Clone, PartialEq)]
pub enum Predicate {
    /// `condition = true`: raises on every item (a list of input warnings, say).
    Always(bool),
    Compare(FieldRef, Op, Operand),
    OneOf(FieldRef, Vec<Value>),
    Missing(FieldRef, bool),
    Set(FieldRef, bool),
    NotEmpty(FieldRef, bool),
    All(Vec<Predicate>),
    Any(Vec<Predicate>),
    Not(Box<Predicate>),
}

const KEYS: [&str; 15] = [
    "field",
    "verdict",
    "is",
    "is_not",
    "lt",
    "le",
    "gt",
    "ge",
    "one_of",
    "missing",
    "set",
    "not_empty",
    "all",
    "any",
    "not",
];

const TESTS: [&str; 10] = [
    "is",
    "is_not",
    "lt",
    "le",
    "gt",
    "ge",
    "one_of",
    "missing",
    "set",
    "not_empty",
];

fn field_ref(path: &str, verdict: bool) -> Result<FieldRef, String> {
    let (from_report, rest) = match path.strip_prefix("report.") {
        Some(rest) => (true, rest),
        None => (false, path),
    };
    if rest.is_empty() || (!verdict && rest.split('.').any(str::is_empty)) {
        return Err(format!(
            "\"{path}\" is not a field path (dotted names, e.g. \"fuse.rated_v\")"
        ));
    }
    let parts = if verdict {
        vec![Cow::Borrowed("verdicts"), Cow::Owned(rest.to_string())]
    } else {
        rest.split('.').map(|p| Cow::Owned(p.to_string())).collect()
    };
    Ok(FieldRef {
        from_report,
        parts,
        written: Cow::Owned(if verdict {
            format!("verdicts['{rest}']")
        } else {
            path.to_string()
        }),
    })
}

impl FieldRef {
    /// A field path as build.rs writes it for a shipped check (already split; see
    /// `field_ref` for the same from a check file).
    pub fn built(from_report: bool, parts: &[&'static str], written: &'static str) -> FieldRef {
        FieldRef {
            from_report,
            parts: parts.iter().map(|p| Cow::Borrowed(*p)).collect(),
            written: Cow::Borrowed(written),
        }
    }
}

/// How deep `all`, `any` and `not` may nest.
const MAX_DEPTH: usize = 16;

/// A constant from the check file as a template value, built directly (no serde pass).
fn constant(v: &Json) -> Value {
    match v {
        Json::Bool(b) => Value::from(*b),
        Json::String(s) => Value::from(s.as_str()),
        Json::Number(n) => match (n.as_i64(), n.as_f64()) {
            (Some(i), _) => Value::from(i),
            (None, Some(f)) => Value::from(f),
            (None, None) => Value::from(minijinja::value::Serde(v)),
        },
        other => Value::from(minijinja::value::Serde(other)),
    }
}

impl Predicate {
    /// Reads a predicate table (a house file's TOML, as a JSON value), naming the key at
    /// fault.
    pub fn parse(value: &Json) -> Result<Predicate, String> {
        Predicate::parse_at(value, 0)
    }

    fn parse_at(value: &Json, depth: usize) -> Result<Predicate, String> {
        // A house file could nest `not` without end; evaluation recurses as deep.
        if depth > MAX_DEPTH {
            return Err(format!("conditions nest more than {MAX_DEPTH} deep"));
        }
        if let Json::Bool(b) = value {
            return Ok(Predicate::Always(*b));
        }
        let Json::Object(map) = value else {
            return Err(format!(
                "a condition is an expression in quotes or a table such as {{ field = \"...\", is = ... }}, not {value}"
            ));
        };
        for key in map.keys() {
            if !KEYS.contains(&key.as_str()) {
                let mut m = format!(
                    "unknown key \"{key}\" in a condition; expected {}",
                    one_of(&KEYS)
                );
                if let Some(best) = suggest(key, &KEYS) {
                    m.push_str(&format!(" (did you mean \"{best}\"?)"));
                }
                return Err(m);
            }
        }
        let list = |key: &str| -> Result<Option<Vec<Predicate>>, String> {
            match map.get(key) {
                None => Ok(None),
                Some(Json::Array(items)) if !items.is_empty() => items
                    .iter()
                    .map(|p| Predicate::parse_at(p, depth + 1))
                    .collect::<Result<_, _>>()
                    .map(Some),
                Some(_) => Err(format!("{key} takes a non-empty list of conditions")),
            }
        };
        let combinators = ["all", "any", "not"]
            .iter()
            .filter(|k| map.contains_key(**k))
            .count();
        if combinators > 0 {
            if map.len() != 1 {
                return Err("all, any and not stand alone in their table".to_string());
            }
            if let Some(items) = list("all")? {
                return Ok(Predicate::All(items));
            }
            if let Some(items) = list("any")? {
                return Ok(Predicate::Any(items));
            }
            if let Some(inner) = map.get("not") {
                return Ok(Predicate::Not(Box::new(Predicate::parse_at(
                    inner,
                    depth + 1,
                )?)));
            }
        }
        let field = match (map.get("field"), map.get("verdict")) {
            (Some(Json::String(f)), None) => field_ref(f, false)?,
            (None, Some(Json::String(v))) => field_ref(v, true)?,
            (Some(_), Some(_)) => return Err("give field or verdict, not both".to_string()),
            (Some(_), None) | (None, Some(_)) => {
                return Err("field and verdict take a name in quotes".to_string());
            }
            (None, None) => {
                return Err(
                    "a condition table needs field (or verdict) and one test, or all/any/not"
                        .to_string(),
                );
            }
        };
        let tests: Vec<&str> = TESTS
            .iter()
            .copied()
            .filter(|t| map.contains_key(*t))
            .collect();
        let [test] = tests.as_slice() else {
            return Err(format!(
                "a condition on \"{}\" needs exactly one test of {}",
                field.written,
                one_of(&TESTS)
            ));
        };
        let arg = &map[*test];
        let flag = |what: &str| match arg {
            Json::Bool(b) => Ok(*b),
            _ => Err(format!("{what} takes true or false")),
        };
        Ok(match *test {
            "missing" => Predicate::Missing(field, flag("missing")?),
            "set" => Predicate::Set(field, flag("set")?),
            "not_empty" => Predicate::NotEmpty(field, flag("not_empty")?),
            "one_of" => match arg {
                Json::Array(values) if !values.is_empty() => {
                    Predicate::OneOf(field, values.iter().map(constant).collect())
                }
                _ => return Err("one_of takes a non-empty list of values".to_string()),
            },
            word => {
                let op = Op::ALL
                    .iter()
                    .find(|(w, _)| *w == word)
                    .map(|(_, o)| *o)
                    .unwrap_or(Op::Is);
                let operand = match arg {
                    Json::Object(inner) => match (inner.get("field"), inner.len()) {
                        (Some(Json::String(f)), 1) => Operand::Field(field_ref(f, false)?),
                        _ => return Err(format!("{word} takes a value or {{ field = \"...\" }}")),
                    },
                    Json::Array(_) => {
                        return Err(format!("{word} takes one value; use one_of for a list"));
                    }
                    Json::Null => {
                        return Err(format!("{word} takes a value; use missing = true for null"));
                    }
                    Json::Number(_) | Json::String(_) | Json::Bool(_) => {
                        Operand::Constant(constant(arg))
                    }
                };
                if matches!(op, Op::Lt | Op::Le | Op::Gt | Op::Ge)
                    && matches!(&operand, Operand::Constant(c) if f64::try_from(c.clone()).is_err())
                {
                    return Err(format!(
                        "{word} compares numbers; give a number or {{ field = \"...\" }}"
                    ));
                }
                Predicate::Compare(field, op, operand)
            }
        })
    }

    /// Every field the predicate reads, with what it needs the field to be.
    pub fn fields(&self, out: &mut Vec<(FieldRef, Need)>) {
        match self {
            Predicate::Compare(f, op, with) => {
                let need = if matches!(op, Op::Is | Op::IsNot) {
                    Need::Any
                } else {
                    Need::Number
                };
                out.push((f.clone(), need));
                if let Operand::Field(g) = with {
                    out.push((g.clone(), need));
                }
            }
            Predicate::OneOf(f, _) | Predicate::Missing(f, _) => out.push((f.clone(), Need::Any)),
            Predicate::Set(f, _) => out.push((f.clone(), Need::Bool)),
            Predicate::NotEmpty(f, _) => out.push((f.clone(), Need::List)),
            Predicate::All(ps) | Predicate::Any(ps) => ps.iter().for_each(|p| p.fields(out)),
            Predicate::Always(_) => {}
            Predicate::Not(p) => p.fields(out),
        }
    }

    /// True when the condition holds for this item of this report.
    pub fn holds(&self, item: &Value, report: &Value) -> bool {
        let get = |f: &FieldRef| resolve(if f.from_report { report } else { item }, &f.parts);
        match self {
            Predicate::Compare(f, op, with) => {
                let left = get(f);
                // A constant is compared where it stands, not copied first.
                let field;
                let right = match with {
                    Operand::Constant(c) => Some(c),
                    Operand::Field(g) => {
                        field = get(g);
                        field.as_ref()
                    }
                };
                let equal = match (&left, right) {
                    (Some(a), Some(b)) => a == b,
                    _ => false,
                };
                match op {
                    Op::Is => equal,
                    Op::IsNot => !equal,
                    _ => {
                        let number = |v: Option<&Value>| {
                            v.filter(|v| v.is_number())
                                .and_then(|v| f64::try_from(v.clone()).ok())
                        };
                        match (number(left.as_ref()), number(right)) {
                            (Some(a), Some(b)) => match op {
                                Op::Lt => a < b,
                                Op::Le => a <= b,
                                Op::Gt => a > b,
                                _ => a >= b,
                            },
                            _ => false,
                        }
                    }
                }
            }
            Predicate::OneOf(f, values) => get(f).is_some_and(|v| values.contains(&v)),
            Predicate::Missing(f, want) => get(f).is_none() == *want,
            Predicate::Set(f, want) => get(f).is_some_and(|v| v.is_true()) == *want,
            Predicate::NotEmpty(f, want) => {
                get(f).and_then(|v| v.len()).is_some_and(|n| n > 0) == *want
            }
            Predicate::Always(b) => *b,
            Predicate::All(ps) => ps.iter().all(|p| p.holds(item, report)),
            Predicate::Any(ps) => ps.iter().any(|p| p.holds(item, report)),
            Predicate::Not(p) => !p.holds(item, report),
        }
    }
}

/// The value at a path, or `None` where a step is absent or null.
pub fn resolve<S: AsRef<str>>(from: &Value, parts: &[S]) -> Option<Value> {
    // The first step read from `from` itself: the same value as from a copy of it, without
    // taking (and dropping) a copy.
    let Some((first, parts)) = parts.split_first() else {
        return (!from.is_none() && !from.is_undefined()).then(|| from.clone());
    };
    if from.is_none() || from.is_undefined() {
        return None;
    }
    let mut value = from.get_attr(first.as_ref()).ok()?;
    for part in parts {
        if value.is_none() || value.is_undefined() {
            return None;
        }
        // By name: a map the report serialised into looks the name up without making a
        // string value of it first (the same answer as `get_item` with one).
        value = value.get_attr(part.as_ref()).ok()?;
    }
    (!value.is_none() && !value.is_undefined()).then_some(value)
}

impl fmt::Display for Predicate {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        let word = |op: &Op| {
            Op::ALL
                .iter()
                .find(|(_, o)| o == op)
                .map(|(w, _)| *w)
                .unwrap_or("is")
        };
        let operand = |o: &Operand| match o {
            Operand::Constant(c) if c.as_str().is_some() => format!("'{c}'"),
            Operand::Constant(c) => c.to_string(),
            Operand::Field(g) => g.written.to_string(),
        };
        let join = |ps: &[Predicate], sep: &str| {
            ps.iter()
                .map(|p| format!("({p})"))
                .collect::<Vec<_>>()
                .join(sep)
        };
        match self {
            Predicate::Compare(g, op, with) => {
                write!(f, "{} {} {}", g.written, word(op), operand(with))
            }
            Predicate::OneOf(g, vs) => {
                let vs: Vec<String> = vs
                    .iter()
                    .map(|v| operand(&Operand::Constant(v.clone())))
                    .collect();
                write!(f, "{} one_of [{}]", g.written, vs.join(", "))
            }
            Predicate::Missing(g, w) => write!(
                f,
                "{} {}",
                g.written,
                if *w { "missing" } else { "present" }
            ),
            Predicate::Set(g, w) => {
                write!(f, "{} {}", g.written, if *w { "set" } else { "not set" })
            }
            Predicate::NotEmpty(g, w) => write!(
                f,
                "{} {}",
                g.written,
                if *w { "not empty" } else { "empty" }
            ),
            Predicate::Always(b) => write!(f, "{b}"),
            Predicate::All(ps) => write!(f, "{}", join(ps, " and ")),
            Predicate::Any(ps) => write!(f, "{}", join(ps, " or ")),
            Predicate::Not(p) => write!(f, "not ({p})"),
        }
    }
}

/// What a test needs a field to hold.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum Need {
    Any,
    Number,
    Bool,
    List,
}

/// The report's fields as the checks see them: `path type` per line, list entries under
/// `[]`, generated from the serialised reports of the shipped examples and test fixtures
/// (`tests/it/check_fields.rs` regenerates and compares it).
pub const REPORT_FIELDS: &str = include_str!("report_fields.txt");

/// The field list, read once per rule book: sorted `(path, type)` pairs borrowed from
/// the embedded text (generated in byte order), searched by bisection, so a run pays for
/// no allocation per field.
#[derive(Debug, Clone, Default)]
pub struct Fields {
    entries: Vec<(&'static str, &'static str)>,
}

impl Fields {
    pub fn shipped() -> Fields {
        Fields::parse(REPORT_FIELDS)
    }

    pub fn parse(text: &'static str) -> Fields {
        let mut entries: Vec<(&str, &str)> = text
            .lines()
            .filter(|l| !l.trim().is_empty() && !l.starts_with('#'))
            .filter_map(|l| l.rsplit_once(' '))
            .collect();
        if !entries.is_sorted_by(|a, b| a.0 < b.0) {
            entries.sort_unstable_by(|a, b| a.0.cmp(b.0));
        }
        Fields { entries }
    }

    fn get(&self, path: &str) -> Option<&'static str> {
        self.entries
            .binary_search_by(|(p, _)| (*p).cmp(path))
            .ok()
            .map(|i| self.entries[i].1)
    }

    /// The type word of a full path (`barriers[].clearance_mm`), if the path exists or
    /// lies under a section never seen filled (whose shape is then unknown: "any").
    pub fn type_of(&self, path: &str) -> Option<&'static str> {
        // An empty list (only while it is being generated) validates nothing.
        if path.is_empty() || self.entries.is_empty() {
            return Some(if path.is_empty() { "map" } else { "any" });
        }
        if let Some(t) = self.get(path) {
            return Some(t);
        }
        // Under a field only ever seen null, nothing more can be said.
        let mut head = path;
        while let Some((parent, _)) = head.rsplit_once('.') {
            match self.get(parent) {
                Some("null") => return Some("any"),
                Some("verdicts") => {
                    return Some("string");
                }
                _ => {}
            }
            head = parent;
        }
        None
    }

    /// The prefix of an item's fields for a check over `path` (`barriers` -> `barriers[]`).
    pub fn item_prefix(&self, path: &str) -> String {
        match self.type_of(path) {
            Some("list") => format!("{path}[]"),
            _ => path.to_string(),
        }
    }

    /// The direct children of a prefix, for "did you mean".
    pub fn children(&self, prefix: &str) -> Vec<&str> {
        let start = if prefix.is_empty() {
            String::new()
        } else {
            format!("{prefix}.")
        };
        self.entries
            .iter()
            .filter_map(|(k, _)| k.strip_prefix(start.as_str()))
            .filter(|rest| !rest.contains('.') && !rest.contains("[]"))
            .collect()
    }

    /// Checks one field a predicate reads; the message names it and what was meant.
    pub fn check(&self, item_prefix: &str, field: &FieldRef, need: Need) -> Result<(), String> {
        let base = if field.from_report { "" } else { item_prefix };
        let mut path = base.to_string();
        for part in &field.parts {
            if !path.is_empty() {
                path.push('.');
            }
            path.push_str(part);
        }
        let Some(found) = self.type_of(&path) else {
            let (parent, last) = path.rsplit_once('.').unwrap_or(("", path.as_str()));
            let place = match parent.strip_suffix("[]") {
                _ if parent.is_empty() => "the report".to_string(),
                Some(list) => format!("an entry of \"{list}\""),
                None => format!("\"{parent}\""),
            };
            let mut m = format!("field \"{}\" does not exist in {place}", field.written);
            if let Some(best) = suggest(last, &self.children(parent)) {
                m.push_str(&format!(" (did you mean \"{best}\"?)"));
            }
            return Err(m);
        };
        let fits = match (need, found) {
            (_, "null" | "any") | (Need::Any, _) => true,
            (Need::Number, t) => t == "number",
            (Need::Bool, t) => t == "bool",
            (Need::List, t) => t == "list" || t == "map",
        };
        if fits {
            Ok(())
        } else {
            let wanted = match need {
                Need::Number => "a number",
                Need::Bool => "true or false",
                Need::List => "a list",
                Need::Any => "a value",
            };
            Err(format!(
                "field \"{}\" is a {found}, but this test needs {wanted}",
                field.written
            ))
        }
    }
}

/// Walks a serialised report and records every path with its type word.
pub fn collect_fields(value: &Json, path: &str, out: &mut BTreeMap<String, String>) {
    let word = match value {
        Json::Null => "null",
        Json::Bool(_) => "bool",
        Json::Number(_) => "number",
        Json::String(_) => "string",
        Json::Array(_) => "list",
        Json::Object(_) => "map",
    };
    // A verdict map has a key per figure judged in that design (some only under house
    // rules), so its keys are open: any verdict name is accepted, as a string.
    if path == "verdicts" || path.ends_with(".verdicts") {
        out.insert(path.to_string(), "verdicts".to_string());
        return;
    }
    if !path.is_empty() {
        let entry = out
            .entry(path.to_string())
            .or_insert_with(|| word.to_string());
        if entry == "null" {
            *entry = word.to_string();
        } else if word != "null" && entry != word {
            *entry = "any".to_string();
        }
    }
    match value {
        Json::Array(items) => {
            for item in items {
                collect_fields(item, &format!("{path}[]"), out);
            }
        }
        Json::Object(map) => {
            for (k, v) in map {
                let p = if path.is_empty() {
                    k.clone()
                } else {
                    format!("{path}.{k}")
                };
                collect_fields(v, &p, out);
            }
        }
        _ => {}
    }
}

/// The field list text for a set of serialised reports (what `REPORT_FIELDS` holds).
pub fn field_list(reports: &[Json]) -> String {
    let mut out = BTreeMap::new();
    for r in reports {
        collect_fields(r, "", &mut out);
    }
    let mut text = String::from(
        "# The report's fields as checks see them (path, then type: number, string, bool, list,\n\
         # map, null when only ever seen empty, any when it varies). Generated by\n\
         # `GAPWARDEN_UPDATE_FIELDS=1 cargo test --test it check_fields::`; do not edit by hand.\n",
    );
    for (path, kind) in out {
        text.push_str(&format!("{path} {kind}\n"));
    }
    text
}

#[cfg(test)]
mod tests {
    use super::*;
    use serde_json::json;

    fn pred(v: Json) -> Predicate {
        Predicate::parse(&v).unwrap_or_else(|e| panic!("{v} does not parse: {e}"))
    }

    fn item() -> Value {
        Value::from(minijinja::value::Serde(json!({
            "clearance_mm": 6.2,
            "required_clearance_mm": 6.4,
            "grade": "reinforced",
            "house_minimum_applied": false,
            "earthed": true,
            "subclass": null,
            "count": 2,
            "gaps": [],
            "tapes": ["a"],
            "verdicts": { "low_line.bulk_valley_v": "fail", "inrush_peak_a": "pass" },
            "fuse": { "rated_a": 2.0 }
        })))
    }

    fn report() -> Value {
        Value::from(minijinja::value::Serde(
            json!({ "design": { "protection_class": "II" } }),
        ))
    }

    fn holds(v: Json) -> bool {
        pred(v).holds(&item(), &report())
    }

    #[test]
    fn field_against_a_constant() {
        assert!(holds(json!({ "field": "clearance_mm", "lt": 7 })));
        assert!(!holds(json!({ "field": "clearance_mm", "gt": 7.0 })));
        assert!(holds(json!({ "field": "clearance_mm", "le": 6.2 })));
        assert!(holds(json!({ "field": "clearance_mm", "ge": 6.2 })));
        assert!(holds(json!({ "field": "grade", "is": "reinforced" })));
        assert!(holds(json!({ "field": "grade", "is_not": "functional" })));
        // A whole number in the file equals the same number in the report.
        assert!(holds(json!({ "field": "count", "is": 2 })));
        assert!(holds(json!({ "field": "count", "is": 2.0 })));
        assert!(holds(json!({ "field": "fuse.rated_a", "is": 2 })));
    }

    #[test]
    fn field_against_field() {
        assert!(holds(
            json!({ "field": "clearance_mm", "lt": { "field": "required_clearance_mm" } })
        ));
        assert!(!holds(
            json!({ "field": "required_clearance_mm", "lt": { "field": "clearance_mm" } })
        ));
        assert!(holds(
            json!({ "field": "clearance_mm", "is": { "field": "clearance_mm" } })
        ));
    }

    #[test]
    fn a_missing_field_fails_every_comparison_but_is_not() {
        assert!(!holds(json!({ "field": "subclass", "lt": 1 })));
        assert!(!holds(json!({ "field": "subclass", "ge": 1 })));
        assert!(!holds(json!({ "field": "subclass", "is": "Y1" })));
        assert!(holds(json!({ "field": "subclass", "is_not": "Y1" })));
        assert!(!holds(json!({ "field": "no_such.thing", "gt": 0 })));
        assert!(!holds(
            json!({ "field": "clearance_mm", "lt": { "field": "subclass" } })
        ));
    }

    #[test]
    fn missing_set_and_not_empty() {
        assert!(holds(json!({ "field": "subclass", "missing": true })));
        assert!(holds(json!({ "field": "grade", "missing": false })));
        // Through a section that is null or absent, a field is missing.
        assert!(holds(
            json!({ "field": "subclass.rated_v", "missing": true })
        ));
        assert!(holds(json!({ "field": "earthed", "set": true })));
        assert!(holds(
            json!({ "field": "house_minimum_applied", "set": false })
        ));
        assert!(holds(json!({ "field": "subclass", "set": false })));
        assert!(holds(json!({ "field": "tapes", "not_empty": true })));
        assert!(holds(json!({ "field": "gaps", "not_empty": false })));
        assert!(holds(json!({ "field": "subclass", "not_empty": false })));
    }

    #[test]
    fn verdicts_one_of_and_the_report() {
        // A verdict name may contain a dot; it is one key of the verdicts map.
        assert!(holds(
            json!({ "verdict": "low_line.bulk_valley_v", "is": "fail" })
        ));
        assert!(!holds(json!({ "verdict": "inrush_peak_a", "is": "fail" })));
        assert!(!holds(
            json!({ "verdict": "not_judged_here", "is": "fail" })
        ));
        assert!(holds(
            json!({ "field": "grade", "one_of": ["basic", "reinforced"] })
        ));
        assert!(!holds(
            json!({ "field": "subclass", "one_of": ["Y1", "Y2"] })
        ));
        assert!(holds(
            json!({ "field": "report.design.protection_class", "is": "II" })
        ));
    }

    #[test]
    fn all_any_not_and_constants() {
        assert!(holds(
            json!({ "all": [{ "field": "earthed", "set": true }, { "field": "count", "gt": 1 }] })
        ));
        assert!(!holds(
            json!({ "all": [{ "field": "earthed", "set": true }, { "field": "count", "gt": 2 }] })
        ));
        assert!(holds(
            json!({ "any": [{ "field": "earthed", "set": false }, { "field": "count", "gt": 1 }] })
        ));
        assert!(holds(
            json!({ "not": { "verdict": "inrush_peak_a", "is": "fail" } })
        ));
        assert!(holds(json!(true)));
        assert!(!holds(json!(false)));
    }

    #[test]
    fn malformed_predicates_are_refused_naming_the_key() {
        let err = |v: Json| Predicate::parse(&v).expect_err("refused");
        assert!(err(json!({ "feild": "x", "is": 1 })).contains("did you mean \"field\"?"));
        assert!(err(json!({ "field": "x", "is": 1, "lt": 2 })).contains("exactly one test"));
        assert!(err(json!({ "field": "x" })).contains("exactly one test"));
        assert!(err(json!({ "field": "x", "lt": "high" })).contains("compares numbers"));
        assert!(err(json!({ "field": "x", "is": ["a"] })).contains("use one_of"));
        assert!(err(json!({ "field": "x", "missing": "yes" })).contains("true or false"));
        assert!(err(json!({ "all": [] })).contains("non-empty list"));
        assert!(err(json!({ "all": [true], "field": "x" })).contains("stand alone"));
        assert!(err(json!({ "field": "a..b", "is": 1 })).contains("not a field path"));
        assert!(err(json!(3)).contains("expression in quotes or a table"));
        let mut deep = json!(true);
        for _ in 0..40 {
            deep = json!({ "not": deep });
        }
        assert!(err(deep).contains("nest more than 16 deep"));
    }

    #[test]
    fn fields_are_checked_against_the_list_with_their_types() {
        let fields = Fields::parse(
            "barriers list\nbarriers[] map\nbarriers[].clearance_mm number\nbarriers[].grade string\n\
             power_entry map\npower_entry.fuse map\npower_entry.fuse.rated_a number\n\
             power_entry.verdicts verdicts\nemc null\n",
        );
        let f = |path: &str| field_ref(path, false).expect("a path");
        let prefix = fields.item_prefix("barriers");
        assert_eq!(prefix, "barriers[]");
        assert!(
            fields
                .check(&prefix, &f("clearance_mm"), Need::Number)
                .is_ok()
        );
        let e = fields
            .check(&prefix, &f("clearence_mm"), Need::Number)
            .expect_err("misspelt");
        assert!(
            e.contains("an entry of \"barriers\"") && e.contains("did you mean \"clearance_mm\"?"),
            "{e}"
        );
        let e = fields
            .check(&prefix, &f("grade"), Need::Number)
            .expect_err("a string");
        assert!(e.contains("is a string"), "{e}");
        assert!(
            fields
                .check("power_entry", &f("fuse.rated_a"), Need::Number)
                .is_ok()
        );
        assert!(
            fields
                .check(
                    "power_entry",
                    &field_ref("low_line.x", true).expect("verdict"),
                    Need::Any
                )
                .is_ok()
        );
        // A section only ever seen empty has an unknown shape: not refused.
        assert!(fields.check("", &f("emc.anything"), Need::Number).is_ok());
        assert!(
            fields
                .check("", &f("power_entry.nothing"), Need::Any)
                .is_err()
        );
    }

    #[test]
    fn the_field_list_records_types_lists_and_open_verdicts() {
        let mut out = BTreeMap::new();
        collect_fields(
            &json!({ "a": [{ "b": 1 }, { "b": null, "c": "x" }], "s": null, "verdicts": { "k.j": "pass" } }),
            "",
            &mut out,
        );
        assert_eq!(out.get("a").map(String::as_str), Some("list"));
        assert_eq!(out.get("a[].b").map(String::as_str), Some("number"));
        assert_eq!(out.get("a[].c").map(String::as_str), Some("string"));
        assert_eq!(out.get("s").map(String::as_str), Some("null"));
        assert_eq!(out.get("verdicts").map(String::as_str), Some("verdicts"));
        assert!(!out.contains_key("verdicts.k.j"));
    }
}
