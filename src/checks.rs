//! The checklist engine: runs each check from `rules/checks/` over the report context and
//! turns the ones whose condition holds into findings. The figures are computed in Rust
//! beforehand; a check only compares them, so a team can add or change checks as data.

use minijinja::value::Value;
use minijinja::{Environment, UndefinedBehavior, context};
use serde::Serialize;

use crate::diag::{Diagnostic, Problems};
use crate::rules::{CheckDef, Cond, Over, RuleBook};

pub mod expression;
pub mod message;

/// How raised findings' messages are written and expression conditions and subjects
/// evaluated: the simple forms without the template engine (what a run does, see
/// `message` and `expression`), or every one by the engine (what a test compares with).
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum Messages {
    PlainWithoutEngine,
    AllByEngine,
}

#[derive(Debug, Clone, Copy, PartialEq, Eq, PartialOrd, Ord, clap::ValueEnum)]
pub enum Severity {
    Blocking,
    Warning,
    Note,
}

crate::domain_words!(Severity);

#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct Finding {
    /// The id of the check that raised it (stable, dotted).
    pub id: String,
    pub severity: Severity,
    /// The barrier, part or circuit id the finding is about, or null.
    pub subject: Option<String>,
    pub message: String,
}

/// What one check did in this run, so the report shows what was looked at.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct CheckOutcome {
    pub id: String,
    pub title: String,
    pub severity: Severity,
    pub origin: String,
    pub source: String,
    /// Items the check had something to judge on.
    pub judged: usize,
    /// Items on which it raised a finding.
    pub raised: usize,
}

/// Work allowance per expression or message, so a house check cannot loop forever.
const CHECK_FUEL: u64 = 100_000;

/// The minijinja environment checks run in: strict about unknown fields, bounded in work,
/// with a `num` filter that prints numbers as the report does.
pub fn expression_environment() -> Environment<'static> {
    let mut env = Environment::new();
    env.set_undefined_behavior(UndefinedBehavior::Strict);
    env.set_fuel(Some(CHECK_FUEL));
    env.set_recursion_limit(20);
    // Keeps the source context in errors in release builds too, so a misspelt field in a
    // house check is shown with its expression, not as a bare "undefined value".
    env.set_debug(true);
    env.add_filter("num", |value: Value| crate::report::value_number(&value));
    env
}

/// The checklist compiled once per rule book: every expression and message becomes a
/// template of a shared environment, so a run over many designs parses nothing again.
#[derive(Debug, Clone)]
pub struct CompiledChecks {
    /// Each check's `applies` and `condition` expressions, subject and message as written
    /// (templates are made of them only when the engine is asked for one).
    parts: std::sync::Arc<Vec<[Option<crate::rules::Text>; 4]>>,
    /// The environment, made on first use: a run whose conditions, subjects and messages
    /// are all of the forms evaluated natively (`expression`, `message`) never builds it.
    env: std::sync::OnceLock<Environment<'static>>,
}

impl CompiledChecks {
    /// Prepares every check as templates of one environment, compiled on first use (a
    /// message only when a finding is raised); the expressions of house checks were
    /// validated when they were read, the shipped ones are tested with the project.
    pub fn new(checks: &[CheckDef]) -> Result<Self, Vec<Diagnostic>> {
        let parts: Vec<[Option<crate::rules::Text>; 4]> = checks
            .iter()
            .map(|c| {
                let expr = |c: Option<&Cond>| match c {
                    Some(Cond::Expression(e)) => Some(e.clone()),
                    _ => None,
                };
                [
                    expr(c.applies.as_ref()),
                    expr(Some(&c.condition)),
                    c.subject.clone(),
                    Some(c.message.clone()),
                ]
            })
            .collect();
        Ok(CompiledChecks {
            parts: std::sync::Arc::new(parts),
            env: std::sync::OnceLock::new(),
        })
    }

    /// The environment whose template `N.part` is part `part` of check `N`.
    fn env(&self) -> &Environment<'static> {
        self.env.get_or_init(|| {
            let mut env = expression_environment();
            let parts = std::sync::Arc::clone(&self.parts);
            env.set_loader(move |name: &str| {
                let Some((index, part)) = name.split_once('.') else {
                    return Ok(None);
                };
                let slot = match part {
                    "applies" => 0,
                    "condition" => 1,
                    "subject" => 2,
                    "message" => 3,
                    _ => return Ok(None),
                };
                let Some(text) = index
                    .parse::<usize>()
                    .ok()
                    .and_then(|i| parts.get(i))
                    .and_then(|p| p[slot].as_deref())
                else {
                    return Ok(None);
                };
                Ok(Some(match slot {
                    0 | 1 => format!("{{% if {text} %}}1{{% endif %}}"),
                    2 => format!(
                        "{{% set s = ({text}) %}}{{% if s is not none %}}{{{{ s }}}}{{% endif %}}"
                    ),
                    _ => text.to_string(),
                }))
            });
            env
        })
    }

    fn render(&self, index: usize, part: &str, ctx: &Value) -> Result<Option<String>, String> {
        let template = match self.env().get_template(&format!("{index}.{part}")) {
            Ok(t) => t,
            Err(e) if e.kind() == minijinja::ErrorKind::TemplateNotFound => return Ok(None),
            Err(e) => return Err(format!("{part} cannot be read: {}", detail(&e))),
        };
        template
            .render(ctx)
            .map(Some)
            .map_err(|e| format!("{part} cannot be evaluated: {}", detail(&e)))
    }
}

/// Report fields that no shipped check reads (in a condition, an `over` path or a message
/// or subject template), by far the largest part of the report: derivation texts, the
/// power entry's page sections and the rule list. `tests/it/check_predicates.rs` proves
/// that no shipped check names one and that leaving them out changes no finding.
pub const UNREAD_BY_SHIPPED_CHECKS: [&str; 3] = ["derivation", "sections", "rules"];

/// The report fields the checks' context may leave out: [`UNREAD_BY_SHIPPED_CHECKS`] when
/// every check is shipped as it is, nothing when a house check could read anything.
pub fn context_omits(rules: &RuleBook) -> &'static [&'static str] {
    if rules.checks.iter().all(|c| c.origin == "shipped") {
        &UNREAD_BY_SHIPPED_CHECKS
    } else {
        &[]
    }
}

/// The checks' context: the report as its JSON shows it, less the fields `omit` names.
pub fn context<T: serde::Serialize>(report: &T, omit: &[&'static str]) -> Value {
    Value::from(minijinja::value::Serde(crate::pruned::Pruned {
        value: report,
        omit,
    }))
}

/// Runs every check over the report context (the serialised report without findings).
pub fn run_checks(
    rules: &RuleBook,
    report: &Value,
) -> Result<(Vec<Finding>, Vec<CheckOutcome>), Problems> {
    run_checks_with(rules, report, Messages::PlainWithoutEngine)
}

/// [`run_checks`], with the messages written as `messages` says.
pub fn run_checks_with(
    rules: &RuleBook,
    report: &Value,
    messages: Messages,
) -> Result<(Vec<Finding>, Vec<CheckOutcome>), Problems> {
    let mut findings = Vec::new();
    let mut outcomes = Vec::new();
    let mut problems = Vec::new();
    let mut items = ItemsByOver::default();
    for (index, check) in rules.checks.iter().enumerate() {
        let result = run_one(
            &rules.compiled_checks,
            (index, check),
            report,
            items.of(&check.over, report),
            messages,
            &mut findings,
        );
        match result {
            Ok((judged, raised)) => outcomes.push(CheckOutcome {
                id: check.id.to_string(),
                title: check.title.to_string(),
                severity: check.severity,
                origin: check.origin.to_string(),
                source: check.source.to_string(),
                judged,
                raised,
            }),
            Err(message) => problems.push(
                Diagnostic {
                    line: Some(check.line),
                    ..Diagnostic::new(&check.path, message)
                }
                .with_key(format!("check \"{}\"", check.id)),
            ),
        }
    }
    if !problems.is_empty() {
        return Err(Problems(problems));
    }
    // Blocking first; within a severity, in checklist order.
    findings.sort_by_key(|f: &Finding| f.severity);
    Ok((findings, outcomes))
}

/// The items of each `over` path met so far in one run of the checks. Nothing changes the
/// report while the checks run, so a path's items are the same values (handles to the same
/// report data) every time; the 88 shipped checks run over ten paths, and each path is
/// resolved and its list gathered once instead of once per check.
#[derive(Default)]
struct ItemsByOver {
    /// (the whole report, the path) and the items.
    known: Vec<((bool, String), Vec<Value>)>,
}

impl ItemsByOver {
    fn of(&mut self, over: &Over, report: &Value) -> &[Value] {
        let key = (over.is_report(), over.path());
        let at = match self
            .known
            .iter()
            .position(|((r, p), _)| (*r, p.as_str()) == key)
        {
            Some(at) => at,
            None => {
                let key = (key.0, key.1.to_string());
                self.known.push((key, items_of(over, report)));
                self.known.len() - 1
            }
        };
        &self.known[at].1
    }
}

fn run_one(
    compiled: &CompiledChecks,
    (index, check): (usize, &CheckDef),
    report: &Value,
    items: &[Value],
    messages: Messages,
    findings: &mut Vec<Finding>,
) -> Result<(usize, usize), String> {
    // A house check is bounded in the memory each evaluation takes (see memory_guard).
    let what = (check.origin != "shipped").then(|| {
        format!(
            "{}:{}: house check \"{}\"",
            check.path, check.line, check.id
        )
    });
    let render = |part: &str, ctx: &Value| match &what {
        None => compiled.render(index, part, ctx),
        Some(what) => crate::memory_guard::bounded(
            what,
            crate::memory_guard::HOUSE_MEMORY_LIMIT_BYTES,
            || compiled.render(index, part, ctx),
        ),
    };
    let (mut judged, mut raised) = (0, 0);
    for item in items {
        // Predicates see the section itself as the item (the report, for `over = "report"`);
        // expressions keep `item` undefined there, as they always had.
        let native_item = if check.over.is_report() { report } else { item };
        let ctx = || context! { report => report.clone(), item => item.clone() };
        let without_engine = messages == Messages::PlainWithoutEngine;
        let holds = |cond: &Cond, part: &str| -> Result<bool, String> {
            match cond {
                Cond::Predicate(p) => Ok(p.holds(native_item, report)),
                Cond::Expression(e) => match without_engine
                    .then(|| expression::holds(e, item, report))
                    .flatten()
                {
                    Some(holds) => Ok(holds),
                    None => Ok(render(part, &ctx())?.as_deref() == Some("1")),
                },
            }
        };
        if let Some(applies) = &check.applies
            && !holds(applies, "applies")?
        {
            continue;
        }
        judged += 1;
        if !holds(&check.condition, "condition")? {
            continue;
        }
        raised += 1;
        // Only a raised finding pays for its message and subject; a plain message is
        // written without compiling it (see `message`).
        let plain = match messages {
            Messages::PlainWithoutEngine => message::render(&check.message, item, report),
            Messages::AllByEngine => None,
        };
        let text = match plain {
            Some(text) => text,
            None => render("message", &ctx())?.unwrap_or_default(),
        };
        let subject = match &check.subject {
            Some(s) => match without_engine
                .then(|| expression::subject(s, item, report))
                .flatten()
            {
                Some(subject) => subject,
                None => render("subject", &ctx())?,
            }
            .filter(|s| !s.is_empty()),
            None => default_subject(&check.over, item),
        };
        findings.push(Finding {
            id: check.id.to_string(),
            severity: check.severity,
            subject,
            message: one_space(text),
        });
    }
    Ok((judged, raised))
}

/// Tries a check on every item of a sample report, whether or not it applies, and
/// reports a field name that does not exist. Other evaluation errors (arithmetic on a
/// null the `applies` expression would have excluded) are not the check's fault here.
pub fn unknown_fields(check: &CheckDef, sample: &Value) -> Result<(), Diagnostic> {
    let what = format!(
        "{}:{}: house check \"{}\"",
        check.path, check.line, check.id
    );
    crate::memory_guard::bounded(&what, crate::memory_guard::HOUSE_MEMORY_LIMIT_BYTES, || {
        unknown_fields_unbounded(check, sample)
    })
}

fn unknown_fields_unbounded(check: &CheckDef, sample: &Value) -> Result<(), Diagnostic> {
    let env = expression_environment();
    let problem = |message: String| {
        Diagnostic {
            line: Some(check.line),
            ..Diagnostic::new(&check.path, message)
        }
        .with_key(format!("check \"{}\"", check.id))
    };
    let items = items_of(&check.over, sample);
    let undefined = |r: Result<Value, minijinja::Error>, what: &str| match r {
        Err(e) if e.kind() == minijinja::ErrorKind::UndefinedError => Err(problem(format!(
            "{what} refers to a field that does not exist: {}",
            detail(&e)
        ))),
        _ => Ok(()),
    };
    for item in items {
        let ctx = context! { report => sample.clone(), item => item };
        let expression = |c: Option<&Cond>| match c {
            Some(Cond::Expression(e)) => Some(e.clone()),
            _ => None,
        };
        for (what, expr) in [
            ("applies", expression(check.applies.as_ref())),
            ("condition", expression(Some(&check.condition))),
            ("subject", check.subject.clone()),
        ] {
            if let Some(expr) = &expr
                && let Ok(compiled) = env.compile_expression(expr)
            {
                undefined(compiled.eval(&ctx), what)?;
            }
        }
        if let Ok(template) = env.template_from_str(&check.message) {
            undefined(template.render(&ctx).map(Value::from), "message")?;
        }
    }
    Ok(())
}

/// The items a check runs over: every entry of a list, a section once when it is present,
/// nothing when it is absent (null), the report once for `over = "report"`.
fn items_of(over: &Over, report: &Value) -> Vec<Value> {
    if over.is_report() {
        return vec![Value::UNDEFINED];
    }
    let parts: Vec<&str> = over.parts().collect();
    let Some(value) = crate::rules::predicate::resolve(report, &parts) else {
        return Vec::new();
    };
    match value.kind() {
        minijinja::value::ValueKind::Seq | minijinja::value::ValueKind::Iterable => {
            value.try_iter().map(|i| i.collect()).unwrap_or_default()
        }
        _ => vec![value],
    }
}

/// The id a finding is about, by what the check runs over.
fn default_subject(over: &Over, item: &Value) -> Option<String> {
    let key = over.subject_key()?;
    item.get_attr(key)
        .ok()
        .filter(|v| !v.is_none() && !v.is_undefined())
        .map(|v| v.to_string())
}

/// The text with every run of whitespace made one space and none at either end, as
/// `split_whitespace` and `join(" ")` make it. A text already so (most messages) is kept
/// after one look at its bytes instead of being cut into words and joined again.
fn one_space(text: String) -> String {
    if is_one_spaced(&text) {
        text
    } else {
        text.split_whitespace().collect::<Vec<_>>().join(" ")
    }
}

/// Whether `text` has no whitespace but single spaces between other characters.
fn is_one_spaced(text: &str) -> bool {
    let bytes = text.as_bytes();
    if bytes.first() == Some(&b' ') || bytes.last() == Some(&b' ') {
        return false;
    }
    let mut after_space = false;
    for (i, &b) in bytes.iter().enumerate() {
        if b == b' ' {
            if after_space {
                return false;
            }
            after_space = true;
            continue;
        }
        after_space = false;
        let white = if b < 0x80 {
            char::from(b).is_whitespace()
        } else {
            // Unicode has whitespace beyond ASCII too (U+0085, U+00A0, U+2000 ...); a
            // character's first byte is at least 0xC0.
            b >= 0xc0 && text[i..].chars().next().is_some_and(char::is_whitespace)
        };
        if white {
            return false;
        }
    }
    true
}

fn detail(e: &minijinja::Error) -> String {
    match e.detail() {
        Some(d) => format!("{} ({d})", e.kind()),
        None => e.kind().to_string(),
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    /// The items each check runs over, taken from one `ItemsByOver` in checklist order, are
    /// the items `items_of` gathers for that check alone: on the report of every example
    /// and fixture, as the checks' context (less what no shipped check reads) and whole.
    #[test]
    fn items_by_over_are_each_checks_own_items() {
        let rules = RuleBook::load(None).expect("the shipped rules load");
        let (mut reports, mut compared) = (0, 0);
        for dir in ["examples", "tests/fixtures"] {
            let mut paths: Vec<_> = std::fs::read_dir(dir)
                .expect("folder")
                .filter_map(|e| e.ok().map(|e| e.path()))
                .filter(|p| p.extension().is_some_and(|x| x == "toml"))
                .collect();
            paths.sort();
            for path in paths {
                let Ok(report) = crate::commands::check_file(&path, &rules) else {
                    continue;
                };
                reports += 1;
                for omit in [context_omits(&rules), &[]] {
                    let report = context(&report, omit);
                    let mut items = ItemsByOver::default();
                    for check in &rules.checks {
                        let own = items_of(&check.over, &report);
                        assert_eq!(
                            items.of(&check.over, &report),
                            own.as_slice(),
                            "{}: check {}",
                            path.display(),
                            check.id
                        );
                        compared += own.len();
                    }
                }
            }
        }
        assert!(
            reports > 30 && compared > 5_000,
            "{reports} reports, {compared} items"
        );
    }

    /// `one_space` against cutting into words and joining them, on texts built from words,
    /// every whitespace character (ASCII and beyond) and runs of spaces, at the ends and
    /// between words.
    #[test]
    fn one_space_is_split_and_join() {
        let pieces = [
            "a", "µs", "Ω", "x²", "", " ", "  ", "\t", "\n", "\r\n", "\u{b}", "\u{c}", "\u{85}",
            "\u{a0}", "\u{1680}", "\u{2002}", "\u{200a}", "\u{200b}", "\u{2028}", "\u{202f}",
            "\u{205f}", "\u{3000}", "\u{1c}", "—",
        ];
        let mut compared = 0;
        for a in pieces {
            for b in pieces {
                for c in pieces {
                    for text in [
                        format!("{a}{b}{c}"),
                        format!("w{a}w{b}w{c}w"),
                        format!("{a} w {b}w {c}"),
                    ] {
                        let expected = text.split_whitespace().collect::<Vec<_>>().join(" ");
                        assert_eq!(super::one_space(text.clone()), expected, "{text:?}");
                        compared += 1;
                    }
                }
            }
        }
        assert!(compared > 40_000);
    }
}
