//! Checklist entries as data: each `[[check]]` in a check file has a permanent id, a
//! severity, what it runs over, a condition (a minijinja expression), a message template,
//! a rationale and its source. House files add checks or change shipped ones by id.

use std::borrow::Cow;
use std::collections::HashMap;
use std::fmt;
use std::ops::Range;

use serde::{Deserialize, Serialize};
use toml::Spanned;

use super::Text;
use super::predicate::{FieldRef, Fields, Need, Predicate};
use crate::checks::{Severity, expression_environment};
use crate::diag::{Diagnostic, Source, one_of, suggest};

/// What a check runs over: each entry of a report collection, an optional section of the
/// report (`power_entry`, `power_entry.fuse`, `emc`) once when it is present, or the
/// report once (`report`). Any path of the report's field list that is a list or a table.
#[derive(Debug, Clone, PartialEq, Eq)]
pub struct Over {
    /// As written in the check file.
    pub word: Text,
    path: Text,
}

impl Serialize for Over {
    fn serialize<S: serde::Serializer>(&self, s: S) -> Result<S::Ok, S::Error> {
        s.serialize_str(&self.word)
    }
}

impl Over {
    /// The collections checks ran over before sections could be named; kept for `explain`.
    pub const WORDS: [&'static str; 6] = [
        "barriers",
        "bridges",
        "isolation_pairs",
        "circuits",
        "input_warnings",
        "report",
    ];

    pub fn from_word(word: &str) -> Over {
        Over::of(Cow::Owned(word.to_string()))
    }

    /// `from_word` without a copy of a shipped check's word.
    fn of(word: Text) -> Over {
        let path = match &*word {
            "isolation_pairs" => Cow::Borrowed("isolation.pairs"),
            "report" => Cow::Borrowed(""),
            _ => word.clone(),
        };
        Over { word, path }
    }

    pub fn is_report(&self) -> bool {
        self.path.is_empty()
    }

    /// Where the collection sits in the report context ("report" for the whole report).
    pub fn path(&self) -> &str {
        if self.path.is_empty() {
            "report"
        } else {
            &self.path
        }
    }

    /// Path segments from the report root.
    pub fn parts(&self) -> impl Iterator<Item = &str> {
        self.path.split('.').filter(|p| !p.is_empty())
    }

    /// The item field a finding names as its subject when the check gives none.
    pub fn subject_key(&self) -> Option<&'static str> {
        match &*self.word {
            "bridges" => Some("part"),
            "isolation_pairs" => Some("accessible"),
            "input_warnings" => Some("key"),
            "barriers" | "circuits" => Some("id"),
            _ => None,
        }
    }
}

/// A condition: a predicate table evaluated natively, or a minijinja expression (the
/// escape hatch for what the predicates cannot say).
#[derive(Debug, Clone, PartialEq)]
pub enum Cond {
    Predicate(Predicate),
    Expression(Text),
}

impl fmt::Display for Cond {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        match self {
            Cond::Predicate(p) => write!(f, "{p}"),
            Cond::Expression(e) => write!(f, "{e}"),
        }
    }
}

impl Serialize for Cond {
    fn serialize<S: serde::Serializer>(&self, s: S) -> Result<S::Ok, S::Error> {
        s.collect_str(self)
    }
}

/// One loaded check, ready to run.
#[derive(Debug, Clone, Serialize, PartialEq)]
pub struct CheckDef {
    pub id: Text,
    pub title: Text,
    pub severity: Severity,
    pub over: Over,
    /// Whether the check has anything to judge on an item (default: always).
    pub applies: Option<Cond>,
    /// Raises the finding when it holds.
    pub condition: Cond,
    /// Expression giving the finding's subject (default: the item's id).
    pub subject: Option<Text>,
    /// Template of the finding's message.
    pub message: Text,
    pub rationale: Text,
    pub source: Text,
    /// "shipped" or "house"; "shipped, changed by house" after an override.
    pub origin: Text,
    /// The rule file (name only) and line that defined the check last.
    pub file: Text,
    pub line: usize,
    /// The rule file as given (for error messages only; reports carry the name).
    #[serde(skip)]
    pub path: Text,
}

#[derive(Deserialize)]
#[serde(deny_unknown_fields)]
struct CheckFile {
    #[allow(dead_code)]
    id: String,
    #[allow(dead_code)]
    title: String,
    #[allow(dead_code)]
    source: String,
    #[allow(dead_code)]
    provenance: String,
    #[serde(default)]
    #[allow(dead_code)]
    overrides: bool,
    check: Vec<Spanned<RawCheck>>,
}

#[derive(Deserialize)]
#[serde(deny_unknown_fields)]
struct RawCheck {
    id: Text,
    #[serde(default)]
    overrides: bool,
    title: Option<Text>,
    severity: Option<Text>,
    over: Option<Text>,
    applies: Option<RawCond>,
    condition: Option<RawCond>,
    subject: Option<Text>,
    message: Option<Text>,
    rationale: Option<Text>,
    source: Option<Text>,
}

/// A condition as given: a house file's value (an expression in quotes or a predicate
/// table), or a shipped one that build.rs has already made into a condition.
#[derive(Deserialize)]
#[serde(from = "serde_json::Value")]
enum RawCond {
    Given(serde_json::Value),
    Built(Cond),
}

impl From<serde_json::Value> for RawCond {
    fn from(value: serde_json::Value) -> Self {
        RawCond::Given(value)
    }
}

impl From<super::shipped::ShippedCond> for RawCond {
    fn from(cond: super::shipped::ShippedCond) -> Self {
        RawCond::Built(match cond {
            super::shipped::ShippedCond::Expression(e) => Cond::Expression(Cow::Borrowed(e)),
            super::shipped::ShippedCond::Predicate(build) => Cond::Predicate(build()),
        })
    }
}

/// A check file on its way in: shipped files come as the entries build.rs wrote, each with
/// the line of its `[[check]]`; house files as TOML text.
pub struct CheckSource<'a> {
    /// A house file's text, read here; `None` for a shipped file, whose text (`text`) is
    /// made a `Source` only to locate a problem.
    pub house: Option<&'a Source>,
    pub text: &'a str,
    /// The file as messages name it.
    pub path: Text,
    /// The file's path inside its rules folder.
    pub file: Text,
    pub origin: &'static str,
    pub shipped: Option<&'static [super::shipped::ShippedCheck]>,
}

/// A shipped entry as a raw check, its conditions already built (nothing to parse) and its
/// text lent, not copied.
fn from_shipped(c: &super::shipped::ShippedCheck) -> RawCheck {
    let text = |t: Option<&'static str>| t.map(Cow::Borrowed);
    RawCheck {
        id: Cow::Borrowed(c.id),
        overrides: c.overrides,
        title: text(c.title),
        severity: text(c.severity),
        over: text(c.over),
        applies: c.applies.map(RawCond::from),
        condition: c.condition.map(RawCond::from),
        subject: text(c.subject),
        message: text(c.message),
        rationale: text(c.rationale),
        source: text(c.source),
    }
}

/// A retired check id and why it went; no check may take it again.
#[derive(Debug, Clone, Deserialize, PartialEq)]
#[serde(deny_unknown_fields)]
pub struct Retired {
    pub id: String,
    pub reason: String,
}

/// Where `key` is given in the check at `index` (from 0) of a check file, as the parser
/// located it, and where `needle` (a quoted field name) stands inside that value, if given;
/// `None` where the entry does not give the key.
fn locate_key(text: &str, index: usize, key: &str, needle: Option<&str>) -> Option<Range<usize>> {
    let entry = crate::diag::span_of_path(text, &format!("check[{}]", index + 1))?;
    let value = crate::diag::span_of_path(text, &format!("check[{}].{key}", index + 1))?;
    if value == entry {
        return None;
    }
    let inside = needle.and_then(|needle| {
        let quoted = format!("\"{needle}\"");
        let at = text.get(value.clone())?.find(&quoted)?;
        Some(value.start + at..value.start + at + quoted.len())
    });
    Some(inside.unwrap_or(value))
}

/// Reads a condition (`applies` or `condition`): a quoted expression or a predicate table.
/// The hash of the check-id index: FNV-1a, a few instructions a byte where the standard
/// library's keyed hash takes a few hundred a key; the ids are the rule folders' own, not
/// an attacker's, and the map answers the same either way (only its speed differs).
type IdHash = std::hash::BuildHasherDefault<Fnv>;

struct Fnv(u64);

impl Default for Fnv {
    fn default() -> Self {
        Fnv(0xcbf2_9ce4_8422_2325)
    }
}

impl std::hash::Hasher for Fnv {
    fn write(&mut self, bytes: &[u8]) {
        for &b in bytes {
            self.0 = (self.0 ^ u64::from(b)).wrapping_mul(0x0000_0100_0000_01b3);
        }
    }

    fn finish(&self) -> u64 {
        self.0
    }
}

fn read_cond(value: RawCond) -> Result<Cond, String> {
    match value {
        RawCond::Built(cond) => Ok(cond),
        RawCond::Given(serde_json::Value::String(e)) => Ok(Cond::Expression(Cow::Owned(e))),
        RawCond::Given(other) => Predicate::parse(&other).map(Cond::Predicate),
    }
}

/// Reads the checks of `files`. With `fields` given, every check is validated against
/// that field list; without, only house checks are, against the shipped list (built only
/// if there is one): the shipped checks are validated by `tests/it/check_fields.rs`
/// instead of on every run.
pub fn load_checks(
    files: &[CheckSource],
    fields: Option<&Fields>,
    retired: &[Retired],
    problems: &mut Vec<Diagnostic>,
) -> Vec<CheckDef> {
    let validate_shipped = fields.is_some();
    let shipped_fields = std::cell::OnceCell::new();
    let fields = || fields.unwrap_or_else(|| shipped_fields.get_or_init(Fields::shipped));
    let shipped_count = files.iter().filter_map(|f| f.shipped).map(<[_]>::len).sum();
    let mut checks: Vec<CheckDef> = Vec::with_capacity(shipped_count);
    // Check ids to their place; a shipped check's id is lent, not copied.
    let mut index: HashMap<Text, usize, IdHash> =
        HashMap::with_capacity_and_hasher(shipped_count, IdHash::default());
    // Only house checks' expressions are compiled here: the environment is made for them.
    let env_cell = std::cell::OnceCell::new();
    let env = || env_cell.get_or_init(expression_environment);
    for CheckSource {
        house,
        text,
        path,
        file: file_in_folder,
        origin,
        shipped,
    } in files
    {
        let made = std::cell::OnceCell::new();
        let source = || match house {
            Some(source) => *source,
            None => made.get_or_init(|| Source::new(path.to_string(), *text)),
        };
        // Each check with the line its [[check]] header stands on.
        let entries: Vec<(RawCheck, usize)> = match shipped {
            Some(shipped) => shipped.iter().map(|c| (from_shipped(c), c.line)).collect(),
            None => match toml::from_str::<CheckFile>(&source().text) {
                Ok(f) => f
                    .check
                    .into_iter()
                    .map(|spanned| {
                        let source = source();
                        let (line, _) = source.index.locate(&source.text, spanned.span().start);
                        (spanned.into_inner(), line)
                    })
                    .collect(),
                Err(e) => {
                    problems.push(super::toml_problem(source(), &e, ""));
                    continue;
                }
            },
        };
        // Expressions of shipped checks are tested with the project; house ones are read here.
        let validate = shipped.is_none();
        // The field names and `over` of shipped checks are validated by a test.
        let validate_fields = validate || validate_shipped;
        for (entry_index, (mut raw, line)) in entries.into_iter().enumerate() {
            // Located at the entry's [[check]] line, with the key's own line and column in
            // the message (tools that jump to the first position land on the entry).
            // Located at the key's value (or at the `[[check]]` line when the entry does not
            // give the key), naming the entry's own line too.
            let at_field = |message: String, key: &str, needle: Option<&str>| {
                let source = source();
                let entry_at = format!("{}:{line}:1", source.name);
                let d = match locate_key(&source.text, entry_index, key, needle) {
                    Some(span) => {
                        let (l, c) = source.index.locate(&source.text, span.start);
                        source
                            .diag(
                                &span,
                                format!("{message} (`{key}` at line {l}, column {c})"),
                            )
                            .with_note(format!("in the [[check]] entry at {entry_at}"))
                    }
                    None => Diagnostic {
                        line: Some(line),
                        column: Some(1),
                        ..Diagnostic::new(&source.name, message)
                    },
                };
                d.with_key(format!("check \"{}\".{key}", raw.id))
            };
            let at = |message: String, key: &str| at_field(message, key, None);
            let before = problems.len();
            if let Some(r) = retired.iter().find(|r| r.id == raw.id) {
                problems.push(
                    at(
                        format!(
                            "check id \"{}\" is retired ({}) and may not be used again",
                            raw.id, r.reason
                        ),
                        "id",
                    )
                    .with_help(
                        "choose a new id; a retired id keeps its old meaning in old reports",
                    ),
                );
                continue;
            }
            let existing = index.get(&*raw.id).copied();
            let base = match (existing, raw.overrides) {
                (Some(_), false) => {
                    problems.push(
                        at(format!("check id \"{}\" is already defined", raw.id), "id")
                            .with_help("to change the existing check, add `overrides = true`; to add a new check, choose a new id"),
                    );
                    continue;
                }
                (None, true) => {
                    // In id order, as suggestions have always been looked for.
                    let mut known: Vec<&str> = index.keys().map(|k| &**k).collect();
                    known.sort_unstable();
                    let mut d = at(
                        format!("overrides = true, but no check \"{}\" is loaded", raw.id),
                        "overrides",
                    );
                    if let Some(best) = suggest(&raw.id, &known) {
                        d = d.with_help(format!("did you mean \"{best}\"?"));
                    }
                    problems.push(d);
                    continue;
                }
                (Some(i), true) => Some(checks[i].clone()),
                (None, false) => None,
            };
            let field = |value: Option<Text>, old: Option<&Text>| value.or_else(|| old.cloned());
            let required = |value: Option<Text>, key: &str, problems: &mut Vec<Diagnostic>| {
                if value.is_none() {
                    problems.push(at("is missing; every new check needs it".to_string(), key));
                }
                value
            };
            let title = required(
                field(raw.title.take(), base.as_ref().map(|b| &b.title)),
                "title",
                problems,
            );
            let message = required(
                field(raw.message.take(), base.as_ref().map(|b| &b.message)),
                "message",
                problems,
            );
            let source_text = required(
                field(raw.source.take(), base.as_ref().map(|b| &b.source)),
                "source",
                problems,
            );
            let rationale = field(raw.rationale.take(), base.as_ref().map(|b| &b.rationale))
                .unwrap_or_default();
            let (given_applies, given_condition) = (raw.applies.is_some(), raw.condition.is_some());
            let mut read = |value: Option<RawCond>, key: &str| match value {
                None => None,
                Some(v) => match read_cond(v) {
                    Ok(c) => Some(c),
                    Err(m) => {
                        problems.push(at(m, key));
                        None
                    }
                },
            };
            let applies = read(raw.applies.take(), "applies").or_else(|| {
                if !given_applies {
                    base.as_ref().and_then(|b| b.applies.clone())
                } else {
                    None
                }
            });
            let condition = read(raw.condition.take(), "condition").or_else(|| {
                if !given_condition {
                    base.as_ref().map(|b| b.condition.clone())
                } else {
                    None
                }
            });
            if condition.is_none() && !given_condition {
                problems.push(at(
                    "is missing; every new check needs it".to_string(),
                    "condition",
                ));
            }
            let subject = raw
                .subject
                .clone()
                .or_else(|| base.as_ref().and_then(|b| b.subject.clone()));
            let severity = match (&raw.severity, &base) {
                (Some(word), _) => match crate::diag::word::<Severity>(word) {
                    Some(severity) => Some(severity),
                    None => {
                        let words = crate::diag::words::<Severity>();
                        let words: Vec<&str> = words.iter().map(String::as_str).collect();
                        problems.push(at(
                            format!("\"{word}\" is not a severity; expected {}", one_of(&words)),
                            "severity",
                        ));
                        None
                    }
                },
                (None, Some(b)) => Some(b.severity),
                (None, None) => {
                    problems.push(at(
                        "is missing; every new check needs it".to_string(),
                        "severity",
                    ));
                    None
                }
            };
            let over = match (&raw.over, &base) {
                (Some(word), _) if !validate_fields => Some(Over::of(word.clone())),
                (Some(word), _) => {
                    let fields = fields();
                    let over = Over::of(word.clone());
                    let kind = if over.is_report() {
                        Some("map")
                    } else {
                        fields.type_of(over.path())
                    };
                    match kind {
                        Some("list" | "map" | "null" | "any") => Some(over),
                        _ => {
                            let mut sections: Vec<&str> = Over::WORDS.to_vec();
                            sections.extend(fields.children(""));
                            let mut d = at(
                                format!(
                                    "\"{word}\" is not a collection or section of the report; expected {} or a section such as \"power_entry\", \"power_entry.fuse\", \"emc\"",
                                    one_of(&Over::WORDS)
                                ),
                                "over",
                            );
                            if let Some(best) = suggest(word, &sections) {
                                d = d.with_help(format!("did you mean \"{best}\"?"));
                            }
                            problems.push(d);
                            None
                        }
                    }
                }
                (None, Some(b)) => Some(b.over.clone()),
                (None, None) => {
                    problems.push(at(
                        "is missing; every new check needs it".to_string(),
                        "over",
                    ));
                    None
                }
            };
            // Every field a predicate reads must exist in the report, whatever the design.
            if let Some(over) = &over
                && validate_fields
            {
                let fields = fields();
                let prefix = if over.is_report() {
                    String::new()
                } else {
                    fields.item_prefix(over.path())
                };
                for (key, cond) in [("applies", &applies), ("condition", &condition)] {
                    let Some(Cond::Predicate(p)) = cond else {
                        continue;
                    };
                    let mut used = Vec::new();
                    p.fields(&mut used);
                    for (f, need) in used {
                        if let Err(m) = fields.check(&prefix, &f, need) {
                            let needle = f.parts.last().map(|p| &**p);
                            problems.push(at_field(m, key, needle));
                        }
                    }
                }
            }
            for (key, expr) in [
                ("applies", applies.as_ref().and_then(expression)),
                ("condition", condition.as_ref().and_then(expression)),
                ("subject", subject.as_deref()),
            ] {
                if let Some(expr) = expr
                    && validate
                    && let Err(e) = env().compile_expression(expr)
                {
                    problems.push(at(
                        format!(
                            "cannot be read as an expression: {}",
                            e.detail().unwrap_or("syntax error")
                        ),
                        key,
                    ));
                }
            }
            // A house check's expressions and message name fields of the report too: each
            // `item.` or `report.` path they read is looked up in the field list, so a
            // misspelt one is named with "did you mean" whatever the design at hand holds.
            if validate
                && problems.len() == before
                && let Some(over) = &over
            {
                let fields = fields();
                let prefix = if over.is_report() {
                    String::new()
                } else {
                    fields.item_prefix(over.path())
                };
                let wrap = |e: &str| format!("{{{{ {e} }}}}");
                let texts = [
                    ("applies", applies.as_ref().and_then(expression).map(wrap)),
                    (
                        "condition",
                        condition.as_ref().and_then(expression).map(wrap),
                    ),
                    ("subject", subject.as_deref().map(wrap)),
                    ("message", message.as_deref().map(str::to_string)),
                ];
                for (key, text) in texts {
                    let Some(text) = text else { continue };
                    let Ok(template) = env().template_from_str(&text) else {
                        continue;
                    };
                    let mut names: Vec<String> =
                        template.undeclared_variables(true).into_iter().collect();
                    names.sort();
                    for name in names {
                        let (from_report, rest) =
                            match (name.strip_prefix("item."), name.strip_prefix("report.")) {
                                (Some(rest), _) if !over.is_report() => (false, rest),
                                (_, Some(rest)) => (true, rest),
                                _ => continue,
                            };
                        let field = FieldRef {
                            from_report,
                            parts: rest.split('.').map(|p| Cow::Owned(p.to_string())).collect(),
                            written: Cow::Owned(name.clone()),
                        };
                        if let Err(m) = fields.check(&prefix, &field, Need::Any) {
                            problems.push(at(m, key));
                        }
                    }
                }
            }
            if let Some(message) = &message
                && validate
                && let Err(e) = env().template_from_str(message)
            {
                problems.push(at(
                    format!(
                        "cannot be read as a template: {}",
                        e.detail().unwrap_or("syntax error")
                    ),
                    "message",
                ));
            }
            if problems.len() > before {
                continue;
            }
            let (
                Some(title),
                Some(condition),
                Some(message),
                Some(source_text),
                Some(severity),
                Some(over),
            ) = (title, condition, message, source_text, severity, over)
            else {
                continue;
            };
            let origin = match (&base, *origin) {
                (Some(b), "house") if b.origin != "house" => "shipped, changed by house",
                (_, o) => o,
            };
            let def = CheckDef {
                id: raw.id.clone(),
                title,
                severity,
                over,
                applies,
                condition,
                subject,
                message,
                rationale,
                source: source_text,
                origin: Cow::Borrowed(origin),
                file: file_in_folder.clone(),
                line,
                path: path.clone(),
            };
            match existing {
                Some(i) => checks[i] = def,
                None => {
                    index.insert(raw.id.clone(), checks.len());
                    checks.push(def);
                }
            }
        }
    }
    checks
}

fn expression(c: &Cond) -> Option<&str> {
    match c {
        Cond::Expression(e) => Some(e),
        Cond::Predicate(_) => None,
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    /// Every shipped condition that build.rs compiled into code is what the parser a house
    /// file goes through makes of the same TOML: the two readings cannot drift apart.
    #[test]
    fn shipped_conditions_are_built_as_the_parser_reads_them() {
        let mut compared = 0;
        for rule in super::super::SHIPPED_RULES.iter().filter(|r| r.is_checks) {
            let file: toml::Value = toml::from_str(rule.text).expect("shipped file is TOML");
            let entries = file["check"]
                .as_array()
                .expect("a check file has [[check]]");
            assert_eq!(entries.len(), rule.checks.len(), "{}", rule.name);
            for (entry, shipped) in entries.iter().zip(rule.checks) {
                for (key, built) in [
                    ("applies", shipped.applies),
                    ("condition", shipped.condition),
                ] {
                    let given = entry.get(key).map(|v| {
                        let json = serde_json::to_value(v).expect("TOML converts to JSON");
                        read_cond(RawCond::Given(json)).expect("shipped condition parses")
                    });
                    let built = built.map(|c| match RawCond::from(c) {
                        RawCond::Built(c) => c,
                        RawCond::Given(_) => unreachable!("a shipped condition is built"),
                    });
                    assert_eq!(built, given, "{} check {} {key}", rule.name, shipped.id);
                    compared += usize::from(given.is_some());
                }
            }
        }
        // 88 checks, most with `applies` as well: all of them were looked at.
        assert!(compared > 100, "only {compared} conditions compared");
    }
}
