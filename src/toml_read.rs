//! Reading a TOML document key by key with positions. Serde stops at the first problem;
//! this reader walks the parsed tree itself so that one pass reports every unknown key,
//! wrong type and out-of-range value, each with its line, column and a suggestion.

use std::ops::Range;

use toml::Spanned;
use toml::de::{DeTable, DeValue};

use crate::diag::{Diagnostic, Problems, Source, one_of, suggest};

pub type Span = Range<usize>;

/// A value together with where it was written.
#[derive(Debug, Clone, PartialEq)]
pub struct Located<T> {
    pub value: T,
    pub span: Span,
}

/// What a number may be: its hard limits (an error outside) and its plausible range
/// (a warning outside), with the words used in messages.
#[derive(Debug, Clone, Copy)]
pub struct NumberRule {
    /// Lowest allowed value and whether it is itself allowed.
    pub min: f64,
    pub min_inclusive: bool,
    /// Highest allowed value (inclusive).
    pub max: f64,
    /// Below this (and above zero) the value is accepted with a warning that it looks
    /// implausible: a value in farads where nanofarads were meant, say.
    pub plausible_min: f64,
    /// Above this the value is accepted with a warning that it looks implausible.
    pub plausible_max: f64,
    pub integer: bool,
    /// The expected form, as a reader would say it ("a voltage in volts, 0 to 100000").
    pub expected: &'static str,
}

impl NumberRule {
    /// Checks a number; `Err` holds the reason, `Ok(Some)` a warning. Numbers in the
    /// messages are printed exactly (scientific notation at the extremes: 1e300, 5e-324),
    /// never rounded and never as hundreds of digits.
    pub fn judge(&self, value: f64) -> Result<Option<String>, String> {
        use crate::text::exact_number as n;
        if !value.is_finite() {
            return Err(format!(
                "{value} is not a finite number; expected {}",
                self.expected
            ));
        }
        if self.integer && value.fract() != 0.0 {
            return Err(format!(
                "{} is not a whole number; expected {}",
                n(value),
                self.expected
            ));
        }
        let below = if self.min_inclusive {
            value < self.min
        } else {
            value <= self.min
        };
        if below || value > self.max {
            return Err(format!(
                "{} is out of range; expected {}",
                n(value),
                self.expected
            ));
        }
        if value > 0.0 && value < self.plausible_min {
            return Ok(Some(format!(
                "{} is unusually small (below {}); check the unit",
                n(value),
                n(self.plausible_min)
            )));
        }
        if value > 0.0 && value < self.absurdly_small_below() {
            return Ok(Some(format!(
                "{} is absurdly small (below {}, a billionth of the usual largest value); check the unit",
                n(value),
                n(self.absurdly_small_below())
            )));
        }
        if value > self.plausible_max {
            return Ok(Some(format!(
                "{} is unusually large (above {}); check the unit",
                n(value),
                n(self.plausible_max)
            )));
        }
        Ok(None)
    }

    /// A positive value below this is implausible even where the rule sets no
    /// `plausible_min`: nine orders of magnitude below the top of the plausible range, and
    /// every subnormal number (5e-324 Hz prints as 0 and means nothing). Only for
    /// quantities whose zero is a true zero (`min` at or above 0); a level in dBuV or a
    /// temperature in degrees Celsius may sit just above 0 by right.
    pub fn absurdly_small_below(&self) -> f64 {
        if self.min < 0.0 || !self.plausible_max.is_finite() || self.plausible_max >= f64::MAX {
            return 0.0;
        }
        // Divided rather than multiplied by 1e-9: 1000 / 1e9 is exactly the double 1e-6.
        (self.plausible_max / 1e9).max(f64::MIN_POSITIVE)
    }
}

/// A TOML table being read: its dotted path for messages and where it starts.
pub struct TableRef<'a, 'i> {
    pub path: String,
    pub span: Span,
    pub entries: &'a DeTable<'i>,
}

/// Collects problems (errors) and warnings while a document is read.
pub struct Reader<'s> {
    pub source: &'s Source,
    pub problems: Vec<Diagnostic>,
    pub warnings: Vec<Diagnostic>,
}

/// Parses TOML text; syntax errors come back all at once with their positions.
pub fn parse_document(source: &Source) -> Result<Spanned<DeTable<'_>>, Problems> {
    let (doc, errors) = DeTable::parse_recoverable(&source.text);
    if errors.is_empty() {
        return Ok(doc);
    }
    let mut problems: Vec<Diagnostic> = errors
        .iter()
        .map(|e| {
            let message = format!("not valid TOML: {}", e.message().trim());
            match e.span() {
                Some(span) => source.diag(&span, message),
                // The parser gives its nesting limit no position: find the place ourselves.
                None if e.message().contains("recursion limit") => match too_deep(&source.text) {
                    Some((at, key)) => source
                        .diag(
                            &(at..at + 1),
                            format!(
                                "not valid TOML: nested more than {NESTING_LIMIT} levels deep \
                                     (dotted key, table header, array or inline table)"
                            ),
                        )
                        .with_key(key),
                    None => Diagnostic::new(&source.name, message),
                },
                None => Diagnostic::new(&source.name, message),
            }
        })
        .collect();
    problems.dedup();
    Err(Problems(problems))
}

/// The TOML parser's nesting limit (dotted key parts, arrays and inline tables together).
const NESTING_LIMIT: usize = 80;

/// The byte offset where a key, table header or value first nests more than the parser
/// allows, with the start of the key there (cut short). A rough scan: strings and comments
/// are skipped, so brackets inside them do not count.
fn too_deep(text: &str) -> Option<(usize, String)> {
    let bytes = text.as_bytes();
    let mut i = 0;
    let mut depth = 0usize; // open [ and { inside a value
    let mut key_parts = 1usize;
    let mut key_start: Option<usize> = None;
    let mut in_key = true; // before `=` on a line at depth 0
    let preview = |from: usize, to: usize| -> String {
        let key = text.get(from..to).unwrap_or("").trim();
        let cut: String = key.chars().take(40).collect();
        if cut.len() < key.len() {
            format!("{cut}...")
        } else {
            cut
        }
    };
    while i < bytes.len() {
        let c = bytes[i];
        match c {
            b'"' | b'\'' => {
                let triple = bytes
                    .get(i..i + 3)
                    .is_some_and(|t| t.iter().all(|&b| b == c));
                let step = if triple { 3 } else { 1 };
                i += step;
                while i < bytes.len() {
                    if c == b'"' && bytes[i] == b'\\' {
                        i += 2;
                        continue;
                    }
                    if !triple && bytes[i] == b'\n' {
                        break;
                    }
                    if bytes[i] == c
                        && (!triple
                            || bytes
                                .get(i..i + 3)
                                .is_some_and(|t| t.iter().all(|&b| b == c)))
                    {
                        i += step;
                        break;
                    }
                    i += 1;
                }
                continue;
            }
            b'#' => {
                while i < bytes.len() && bytes[i] != b'\n' {
                    i += 1;
                }
                continue;
            }
            b'\n' if depth == 0 => {
                in_key = true;
                key_parts = 1;
                key_start = None;
            }
            b'.' if in_key => key_parts += 1,
            b'=' if in_key => in_key = false,
            b'[' | b'{' => {
                if in_key && c == b'[' {
                    // A table header: its dots count as the key's.
                    key_start.get_or_insert(i);
                } else {
                    depth += 1;
                }
            }
            b']' | b'}' if !in_key => depth = depth.saturating_sub(1),
            b' ' | b'\t' | b'\r' | b']' => {}
            _ if in_key => {
                key_start.get_or_insert(i);
            }
            _ => {}
        }
        if key_parts + depth >= NESTING_LIMIT {
            let from = key_start.unwrap_or(i);
            return Some((i, preview(from, i.min(from + 200))));
        }
        i += 1;
    }
    None
}

impl<'s> Reader<'s> {
    pub fn new(source: &'s Source) -> Self {
        Reader {
            source,
            problems: Vec::new(),
            warnings: Vec::new(),
        }
    }

    pub fn error(&mut self, span: &Span, key: impl Into<String>, message: impl Into<String>) {
        let d = self.source.diag(span, message).with_key(key);
        self.problems.push(d);
    }

    pub fn error_with_help(
        &mut self,
        span: &Span,
        key: impl Into<String>,
        message: impl Into<String>,
        help: impl Into<String>,
    ) {
        let d = self
            .source
            .diag(span, message)
            .with_key(key)
            .with_help(help);
        self.problems.push(d);
    }

    pub fn warn(&mut self, span: &Span, key: impl Into<String>, message: impl Into<String>) {
        let d = self.source.diag(span, message).with_key(key);
        self.warnings.push(d);
    }

    /// Ends reading: every problem, in the order they stand in the file.
    pub fn finish(&mut self) -> Result<(), Problems> {
        if self.problems.is_empty() {
            return Ok(());
        }
        let mut problems = std::mem::take(&mut self.problems);
        problems.sort_by_key(|d| (d.line, d.column));
        problems.dedup();
        Err(Problems(problems))
    }

    /// The document's top level as a table, with its unknown keys reported.
    pub fn root<'a, 'i>(
        &mut self,
        doc: &'a Spanned<DeTable<'i>>,
        allowed: &[&str],
    ) -> TableRef<'a, 'i> {
        let table = TableRef {
            path: String::new(),
            span: doc.span(),
            entries: doc.get_ref(),
        };
        self.check_keys(&table, allowed);
        table
    }

    fn check_keys(&mut self, table: &TableRef<'_, '_>, allowed: &[&str]) {
        for key in table.entries.keys() {
            let name: &str = key.get_ref();
            if allowed.contains(&name) {
                continue;
            }
            let path = join(&table.path, name);
            let where_ = if table.path.is_empty() {
                "at the top level".to_string()
            } else {
                format!("in [{}]", table.path)
            };
            let message = format!("unknown key {where_}");
            match suggest(name, allowed) {
                Some(best) => self.error_with_help(
                    &key.span(),
                    path,
                    message,
                    format!("did you mean `{best}`?"),
                ),
                None => self.error_with_help(
                    &key.span(),
                    path,
                    message,
                    format!("known keys here: {}", allowed.join(", ")),
                ),
            }
        }
    }

    /// A sub-table (`[name]`), or `None` when absent (or not a table: an error).
    pub fn table<'a, 'i>(
        &mut self,
        parent: &TableRef<'a, 'i>,
        key: &str,
        allowed: &[&str],
    ) -> Option<TableRef<'a, 'i>> {
        let (key_span, value) = entry(parent, key)?;
        let path = join(&parent.path, key);
        match value.get_ref() {
            DeValue::Table(entries) => {
                let table = TableRef {
                    path,
                    span: key_span,
                    entries,
                };
                self.check_keys(&table, allowed);
                Some(table)
            }
            other => {
                self.error(
                    &value.span(),
                    path,
                    format!("expected a table [{key}], found {}", other.type_str()),
                );
                None
            }
        }
    }

    /// The tables of an array of tables (`[[name]]`); absent is an empty list.
    pub fn table_array<'a, 'i>(
        &mut self,
        parent: &TableRef<'a, 'i>,
        key: &str,
        allowed: &[&str],
    ) -> Vec<TableRef<'a, 'i>> {
        let Some((key_span, value)) = entry(parent, key) else {
            return Vec::new();
        };
        let base = join(&parent.path, key);
        let DeValue::Array(items) = value.get_ref() else {
            self.error(
                &value.span(),
                base,
                format!(
                    "expected an array of tables [[{key}]], found {}",
                    value.get_ref().type_str()
                ),
            );
            return Vec::new();
        };
        let mut tables = Vec::new();
        for (i, item) in items.iter().enumerate() {
            let path = format!("{base}[{}]", i + 1);
            match item.get_ref() {
                DeValue::Table(entries) => {
                    let span = first_key_span(entries).unwrap_or_else(|| key_span.clone());
                    let table = TableRef {
                        path,
                        span,
                        entries,
                    };
                    self.check_keys(&table, allowed);
                    tables.push(table);
                }
                other => self.error(
                    &item.span(),
                    path,
                    format!("expected a table, found {}", other.type_str()),
                ),
            }
        }
        tables
    }

    /// Reports a required key that is absent.
    pub fn missing(&mut self, table: &TableRef<'_, '_>, key: &str, expected: &str) {
        let where_ = if table.path.is_empty() {
            "at the top level".to_string()
        } else {
            format!("in [{}]", table.path)
        };
        self.error(
            &table.span,
            join(&table.path, key),
            format!("missing {where_}; expected {expected}"),
        );
    }

    pub fn string(&mut self, table: &TableRef<'_, '_>, key: &str) -> Option<Located<String>> {
        let (_, value) = entry(table, key)?;
        let path = join(&table.path, key);
        match value.get_ref() {
            DeValue::String(s) => {
                if s.trim().is_empty() {
                    self.error(&value.span(), path, "is empty; expected a non-empty string");
                    return None;
                }
                if s.chars().count() > MAX_STRING_CHARS {
                    self.error(
                        &value.span(),
                        path,
                        format!("is longer than {MAX_STRING_CHARS} characters"),
                    );
                    return None;
                }
                Some(Located {
                    value: s.to_string(),
                    span: value.span(),
                })
            }
            other => {
                self.error(
                    &value.span(),
                    path,
                    format!("expected a string, found {}", other.type_str()),
                );
                None
            }
        }
    }

    pub fn required_string(
        &mut self,
        table: &TableRef<'_, '_>,
        key: &str,
    ) -> Option<Located<String>> {
        if entry(table, key).is_none() {
            self.missing(table, key, "a string");
            return None;
        }
        self.string(table, key)
    }

    pub fn boolean(&mut self, table: &TableRef<'_, '_>, key: &str) -> Option<Located<bool>> {
        let (_, value) = entry(table, key)?;
        match value.get_ref() {
            DeValue::Boolean(b) => Some(Located {
                value: *b,
                span: value.span(),
            }),
            other => {
                self.error(
                    &value.span(),
                    join(&table.path, key),
                    format!("expected true or false, found {}", other.type_str()),
                );
                None
            }
        }
    }

    /// A number (integer or float), judged by `rule`.
    pub fn number(
        &mut self,
        table: &TableRef<'_, '_>,
        key: &str,
        rule: &NumberRule,
    ) -> Option<Located<f64>> {
        let (_, value) = entry(table, key)?;
        let path = join(&table.path, key);
        let span = value.span();
        let number = match value.get_ref() {
            DeValue::Integer(i) => i64::from_str_radix(i.as_str(), i.radix())
                .ok()
                .map(|v| v as f64),
            DeValue::Float(f) => f.as_str().parse::<f64>().ok(),
            DeValue::String(s) if s.trim().parse::<f64>().is_ok() => {
                self.error_with_help(
                    &span,
                    path,
                    format!("expected a number, found the string \"{s}\""),
                    format!("write it without quotes: {key} = {}", s.trim()),
                );
                return None;
            }
            other => {
                self.error(
                    &span,
                    path,
                    format!("expected {}, found {}", rule.expected, other.type_str()),
                );
                return None;
            }
        };
        let Some(number) = number else {
            self.error(
                &span,
                path,
                format!("cannot be read as a number; expected {}", rule.expected),
            );
            return None;
        };
        match rule.judge(number) {
            Ok(None) => {}
            Ok(Some(warning)) => self.warn(&span, path, warning),
            Err(reason) => {
                self.error(&span, path, reason);
                return None;
            }
        }
        Some(Located {
            value: number,
            span,
        })
    }

    pub fn required_number(
        &mut self,
        table: &TableRef<'_, '_>,
        key: &str,
        rule: &NumberRule,
    ) -> Option<Located<f64>> {
        if entry(table, key).is_none() {
            self.missing(table, key, rule.expected);
            return None;
        }
        self.number(table, key, rule)
    }

    /// One of the words of a domain enum (`crate::domain_words!`); a near miss gets a
    /// suggestion, and the list in the message is the enum's own.
    pub fn word<E: clap::ValueEnum>(
        &mut self,
        table: &TableRef<'_, '_>,
        key: &str,
    ) -> Option<Located<E>> {
        let (_, value) = entry(table, key)?;
        let path = join(&table.path, key);
        let span = value.span();
        let words = crate::diag::words::<E>();
        let words: Vec<&str> = words.iter().map(String::as_str).collect();
        let DeValue::String(s) = value.get_ref() else {
            self.error(
                &span,
                path,
                format!(
                    "expected one of {}, found {}",
                    one_of(&words),
                    value.get_ref().type_str()
                ),
            );
            return None;
        };
        if let Some(word) = crate::diag::word::<E>(s) {
            return Some(Located { value: word, span });
        }
        let message = format!("\"{s}\" is not known; expected {}", one_of(&words));
        match suggest(s, &words) {
            Some(best) => {
                self.error_with_help(&span, path, message, format!("did you mean \"{best}\"?"))
            }
            None => self.error(&span, path, message),
        }
        None
    }

    pub fn required_word<E: clap::ValueEnum>(
        &mut self,
        table: &TableRef<'_, '_>,
        key: &str,
    ) -> Option<Located<E>> {
        if entry(table, key).is_none() {
            let words = crate::diag::words::<E>();
            let words: Vec<&str> = words.iter().map(String::as_str).collect();
            self.missing(table, key, &one_of(&words));
            return None;
        }
        self.word(table, key)
    }

    /// An array of strings; each element keeps its own position.
    pub fn string_list(
        &mut self,
        table: &TableRef<'_, '_>,
        key: &str,
    ) -> Option<Located<Vec<Located<String>>>> {
        let (_, value) = entry(table, key)?;
        let path = join(&table.path, key);
        let DeValue::Array(items) = value.get_ref() else {
            self.error(
                &value.span(),
                path,
                format!(
                    "expected an array of strings, found {}",
                    value.get_ref().type_str()
                ),
            );
            return None;
        };
        let mut out = Vec::new();
        for (i, item) in items.iter().enumerate() {
            match item.get_ref() {
                DeValue::String(s)
                    if !s.trim().is_empty() && s.chars().count() <= MAX_STRING_CHARS =>
                {
                    out.push(Located {
                        value: s.to_string(),
                        span: item.span(),
                    })
                }
                DeValue::String(_) => self.error(
                    &item.span(),
                    format!("{path}[{}]", i + 1),
                    format!("expected a non-empty string of at most {MAX_STRING_CHARS} characters"),
                ),
                other => self.error(
                    &item.span(),
                    format!("{path}[{}]", i + 1),
                    format!("expected a string, found {}", other.type_str()),
                ),
            }
        }
        Some(Located {
            value: out,
            span: value.span(),
        })
    }

    /// Whether a key is present at all (for "either this or that" rules).
    pub fn has(&self, table: &TableRef<'_, '_>, key: &str) -> bool {
        entry(table, key).is_some()
    }
}

/// Longest string accepted for a name, id or note.
pub const MAX_STRING_CHARS: usize = 4000;

fn entry<'a, 'i>(table: &TableRef<'a, 'i>, key: &str) -> Option<(Span, &'a Spanned<DeValue<'i>>)> {
    table
        .entries
        .iter()
        .find(|(k, _)| k.get_ref().as_ref() == key)
        .map(|(k, v)| (k.span(), v))
}

fn first_key_span(entries: &DeTable<'_>) -> Option<Span> {
    entries.keys().map(|k| k.span()).min_by_key(|s| s.start)
}

fn join(path: &str, key: &str) -> String {
    if path.is_empty() {
        key.to_string()
    } else {
        format!("{path}.{key}")
    }
}
