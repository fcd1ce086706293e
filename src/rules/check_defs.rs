//! Checklist entries as data: each `[[check]]` in a check file has a permanent id, a
//! severity, what it runs over, a condition (a minijinja expression), a message template,
//! a rationale and its source. House files add checks or change shipped ones by id.

use std::collections::BTreeMap;

use serde::{Deserialize, Serialize};
use toml::Spanned;

use crate::checks::{Severity, expression_environment};
use crate::diag::{Diagnostic, Source, one_of, suggest};

/// What a check runs over: each entry of a report collection, or the report once.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize)]
#[serde(rename_all = "snake_case")]
pub enum Over {
    Barriers,
    Bridges,
    IsolationPairs,
    Circuits,
    InputWarnings,
    Report,
}

impl Over {
    pub const WORDS: [&'static str; 6] = [
        "barriers",
        "bridges",
        "isolation_pairs",
        "circuits",
        "input_warnings",
        "report",
    ];

    fn from_word(word: &str) -> Option<Over> {
        Some(match word {
            "barriers" => Over::Barriers,
            "bridges" => Over::Bridges,
            "isolation_pairs" => Over::IsolationPairs,
            "circuits" => Over::Circuits,
            "input_warnings" => Over::InputWarnings,
            "report" => Over::Report,
            _ => return None,
        })
    }

    /// Where the collection sits in the report context.
    pub fn path(self) -> &'static str {
        match self {
            Over::Barriers => "barriers",
            Over::Bridges => "bridges",
            Over::IsolationPairs => "isolation.pairs",
            Over::Circuits => "circuits",
            Over::InputWarnings => "input_warnings",
            Over::Report => "report",
        }
    }
}

/// One loaded check, ready to run.
#[derive(Debug, Clone, Serialize, PartialEq)]
pub struct CheckDef {
    pub id: String,
    pub title: String,
    pub severity: Severity,
    pub over: Over,
    /// Expression deciding whether the check has anything to judge (default: always).
    pub applies: Option<String>,
    /// Expression that raises the finding when true.
    pub condition: String,
    /// Expression giving the finding's subject (default: the item's id).
    pub subject: Option<String>,
    /// Template of the finding's message.
    pub message: String,
    pub rationale: String,
    pub source: String,
    /// "shipped" or "house"; "shipped, changed by house" after an override.
    pub origin: String,
    /// The rule file (name only) and line that defined the check last.
    pub file: String,
    pub line: usize,
    /// The rule file as given (for error messages only; reports carry the name).
    #[serde(skip)]
    pub path: String,
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
    id: String,
    #[serde(default)]
    overrides: bool,
    title: Option<String>,
    severity: Option<String>,
    over: Option<String>,
    applies: Option<String>,
    condition: Option<String>,
    subject: Option<String>,
    message: Option<String>,
    rationale: Option<String>,
    source: Option<String>,
}

/// Reads the check files in load order (shipped first, then house), merging overrides.
/// A check file on its way in: shipped files come as JSON with the line of each check
/// (prepared by build.rs); house files as TOML text.
pub struct CheckSource<'a> {
    pub source: &'a Source,
    pub file: &'a str,
    pub origin: &'a str,
    pub shipped: Option<(&'static str, &'static [usize])>,
}

#[derive(Deserialize)]
struct ShippedCheckFile {
    check: Vec<RawCheck>,
}

pub fn load_checks(files: &[CheckSource], problems: &mut Vec<Diagnostic>) -> Vec<CheckDef> {
    let mut checks: Vec<CheckDef> = Vec::new();
    let mut index: BTreeMap<String, usize> = BTreeMap::new();
    let env = expression_environment();
    for CheckSource {
        source,
        file: file_in_folder,
        origin,
        shipped,
    } in files
    {
        // Each check with the line its [[check]] header stands on.
        let entries: Vec<(RawCheck, usize)> = match shipped {
            Some((json, lines)) => match serde_json::from_str::<ShippedCheckFile>(json) {
                Ok(f) => f
                    .check
                    .into_iter()
                    .zip(lines.iter().copied().chain(std::iter::repeat(0)))
                    .collect(),
                Err(e) => {
                    problems.push(Diagnostic::new(&source.name, e.to_string()));
                    continue;
                }
            },
            None => match toml::from_str::<CheckFile>(&source.text) {
                Ok(f) => f
                    .check
                    .into_iter()
                    .map(|spanned| {
                        let (line, _) = source.index.locate(&source.text, spanned.span().start);
                        (spanned.into_inner(), line)
                    })
                    .collect(),
                Err(e) => {
                    problems.push(super::toml_problem(source, &e, ""));
                    continue;
                }
            },
        };
        // Shipped checks are tested with the project; only house checks are validated here.
        let validate = shipped.is_none();
        for (raw, line) in &entries {
            let line = *line;
            let at = |message: String, key: &str| {
                Diagnostic {
                    line: Some(line),
                    column: Some(1),
                    ..Diagnostic::new(&source.name, message)
                }
                .with_key(format!("check \"{}\".{key}", raw.id))
            };
            let before = problems.len();
            let existing = index.get(&raw.id).copied();
            let base = match (existing, raw.overrides) {
                (Some(_), false) => {
                    problems.push(
                        at(format!("check id \"{}\" is already defined", raw.id), "id")
                            .with_help("to change the existing check, add `overrides = true`; to add a new check, choose a new id"),
                    );
                    continue;
                }
                (None, true) => {
                    let known: Vec<&str> = index.keys().map(String::as_str).collect();
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
            let field = |value: &Option<String>, old: Option<&String>| {
                value.clone().or_else(|| old.cloned())
            };
            let required = |value: Option<String>, key: &str, problems: &mut Vec<Diagnostic>| {
                if value.is_none() {
                    problems.push(at("is missing; every new check needs it".to_string(), key));
                }
                value
            };
            let title = required(
                field(&raw.title, base.as_ref().map(|b| &b.title)),
                "title",
                problems,
            );
            let condition = required(
                field(&raw.condition, base.as_ref().map(|b| &b.condition)),
                "condition",
                problems,
            );
            let message = required(
                field(&raw.message, base.as_ref().map(|b| &b.message)),
                "message",
                problems,
            );
            let source_text = required(
                field(&raw.source, base.as_ref().map(|b| &b.source)),
                "source",
                problems,
            );
            let rationale =
                field(&raw.rationale, base.as_ref().map(|b| &b.rationale)).unwrap_or_default();
            let applies = raw
                .applies
                .clone()
                .or_else(|| base.as_ref().and_then(|b| b.applies.clone()));
            let subject = raw
                .subject
                .clone()
                .or_else(|| base.as_ref().and_then(|b| b.subject.clone()));
            let severity = match (&raw.severity, &base) {
                (Some(word), _) => match word.as_str() {
                    "blocking" => Some(Severity::Blocking),
                    "warning" => Some(Severity::Warning),
                    "note" => Some(Severity::Note),
                    other => {
                        problems.push(at(
                            format!(
                                "\"{other}\" is not a severity; expected {}",
                                one_of(&["blocking", "warning", "note"])
                            ),
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
                (Some(word), _) => match Over::from_word(word) {
                    Some(o) => Some(o),
                    None => {
                        let mut d = at(
                            format!("\"{word}\" is not known; expected {}", one_of(&Over::WORDS)),
                            "over",
                        );
                        if let Some(best) = suggest(word, &Over::WORDS) {
                            d = d.with_help(format!("did you mean \"{best}\"?"));
                        }
                        problems.push(d);
                        None
                    }
                },
                (None, Some(b)) => Some(b.over),
                (None, None) => {
                    problems.push(at(
                        "is missing; every new check needs it".to_string(),
                        "over",
                    ));
                    None
                }
            };
            for (key, expr) in [
                ("applies", &applies),
                ("condition", &condition),
                ("subject", &subject),
            ] {
                if let Some(expr) = expr
                    && validate
                    && let Err(e) = env.compile_expression(expr)
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
            if let Some(message) = &message
                && validate
                && let Err(e) = env.template_from_str(message)
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
                (Some(b), "house") if b.origin != "house" => {
                    "shipped, changed by house".to_string()
                }
                (_, o) => o.to_string(),
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
                origin,
                file: file_in_folder.to_string(),
                line,
                path: source.name.clone(),
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
