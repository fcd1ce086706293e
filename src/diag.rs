//! Diagnostics: problems found in an input file, located by file, line, column and key,
//! with a suggestion where one is likely. Every reader collects them all before failing.

use std::fmt;
use std::ops::Range;

/// Byte offsets to 1-based line and column (columns count characters, not bytes). The
/// line starts are found on the first lookup: most files read (every shipped rule file on
/// every run) never need a position.
#[derive(Debug, Clone, Default)]
pub struct LineIndex {
    starts: std::sync::OnceLock<Vec<usize>>,
}

impl LineIndex {
    /// An index of `text`, built on first use (`locate` takes the same text).
    pub fn new(_text: &str) -> Self {
        LineIndex::default()
    }

    /// Line and column of a byte offset, both from 1.
    pub fn locate(&self, text: &str, offset: usize) -> (usize, usize) {
        let starts = self.starts.get_or_init(|| {
            let mut starts = vec![0];
            starts.extend(text.match_indices('\n').map(|(i, _)| i + 1));
            starts
        });
        let offset = offset.min(text.len());
        let line = match starts.binary_search(&offset) {
            Ok(i) => i,
            Err(i) => i.saturating_sub(1),
        };
        let start = starts[line];
        let column = text
            .get(start..offset)
            .map(|s| s.chars().count())
            .unwrap_or(offset - start);
        (line + 1, column + 1)
    }
}

/// One problem in an input, ready to print.
#[derive(Debug, Clone, PartialEq, Eq)]
pub struct Diagnostic {
    pub file: String,
    pub line: Option<usize>,
    pub column: Option<usize>,
    /// Dotted path of the key, e.g. `barrier[2].working_rms_v`.
    pub key: Option<String>,
    pub message: String,
    pub help: Option<String>,
    /// Where the surroundings of the position start (the `[[check]]` entry of a key), as
    /// `file:line:column`.
    pub note: Option<String>,
    /// The source line the position falls on, shown beneath the message with a marker.
    pub snippet: Option<SourceLine>,
}

/// One line of an input, with the byte range of the marked text inside it.
#[derive(Debug, Clone, PartialEq, Eq)]
pub struct SourceLine {
    /// The line's number, from 1.
    pub line: usize,
    pub text: String,
    pub marked: Range<usize>,
}

/// Lines longer than this are not shown beneath a message (a 5000-character string would
/// bury the message itself).
const MAX_SNIPPET_LINE_BYTES: usize = 400;

impl SourceLine {
    /// The line around `span`, or `None` where it could not be shown faithfully (a control
    /// or bidi character in it, which the terminal must never receive; a very long line).
    fn of(source: &Source, span: &Range<usize>) -> Option<SourceLine> {
        let text = &source.text;
        let start = span.start.min(text.len());
        let line_start = text[..start].rfind('\n').map_or(0, |i| i + 1);
        let line_end = text[start..].find('\n').map_or(text.len(), |i| start + i);
        let line = text.get(line_start..line_end)?.trim_end_matches('\r');
        if line.len() > MAX_SNIPPET_LINE_BYTES || crate::text::visible_line(line) != line {
            return None;
        }
        let from = start - line_start;
        let to = span.end.clamp(start, line_start + line.len()) - line_start;
        Some(SourceLine {
            line: source.index.locate(text, start).0,
            text: line.to_string(),
            marked: from..to.max(from),
        })
    }

    /// The line with its number and a marker under the text, as annotate-snippets draws it.
    pub fn render(&self) -> String {
        use annotate_snippets::{AnnotationKind, Group, Level, Renderer, Snippet};
        let report = [Group::with_level(Level::ERROR).element(
            Snippet::source(self.text.as_str())
                .line_start(self.line)
                .annotation(AnnotationKind::Primary.span(self.marked.clone())),
        )];
        Renderer::plain().render(&report)
    }
}

impl Diagnostic {
    pub fn new(file: &str, message: impl Into<String>) -> Self {
        Diagnostic {
            file: file.to_string(),
            line: None,
            column: None,
            key: None,
            message: message.into(),
            help: None,
            note: None,
            snippet: None,
        }
    }

    pub fn with_key(mut self, key: impl Into<String>) -> Self {
        self.key = Some(key.into());
        self
    }

    pub fn with_help(mut self, help: impl Into<String>) -> Self {
        self.help = Some(help.into());
        self
    }

    pub fn with_note(mut self, note: impl Into<String>) -> Self {
        self.note = Some(note.into());
        self
    }

    pub fn at(mut self, source: &Source, span: &Range<usize>) -> Self {
        let (line, column) = source.index.locate(&source.text, span.start);
        self.line = Some(line);
        self.column = Some(column);
        self.snippet = SourceLine::of(source, span);
        self
    }
}

impl fmt::Display for Diagnostic {
    // Every part may carry project text (a file name, an id in the message): a control
    // or bidi character in it is shown, never sent to the terminal.
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        use crate::text::{visible, visible_line};
        // The file name and the key stay on one line: a newline in either could start a
        // line that reads as another diagnostic.
        write!(f, "{}", visible_line(&self.file))?;
        if let Some(line) = self.line {
            write!(f, ":{line}")?;
            if let Some(column) = self.column {
                write!(f, ":{column}")?;
            }
        }
        write!(f, ": ")?;
        if let Some(key) = &self.key {
            write!(f, "`{}`: ", visible_line(key))?;
        }
        write!(f, "{}", visible(&self.message))?;
        if let Some(snippet) = &self.snippet {
            for line in snippet.render().lines().filter(|l| !l.trim().is_empty()) {
                write!(f, "\n {line}")?;
            }
        }
        if let Some(note) = &self.note {
            write!(f, "\n    note: {}", visible_line(note))?;
        }
        if let Some(help) = &self.help {
            write!(f, "\n    help: {}", visible(help))?;
        }
        Ok(())
    }
}

/// The text of an input file with its name (as given, never made absolute) and line index.
#[derive(Debug, Clone)]
pub struct Source {
    pub name: String,
    pub text: String,
    pub index: LineIndex,
}

impl Source {
    pub fn new(name: impl Into<String>, text: impl Into<String>) -> Self {
        let text = text.into();
        let index = LineIndex::new(&text);
        Source {
            name: name.into(),
            text,
            index,
        }
    }

    pub fn diag(&self, span: &Range<usize>, message: impl Into<String>) -> Diagnostic {
        Diagnostic::new(&self.name, message).at(self, span)
    }
}

/// A list of problems that made an input unusable; printed one per line.
#[derive(Debug, Clone, PartialEq, Eq)]
pub struct Problems(pub Vec<Diagnostic>);

/// At most this many problems are printed; the rest are counted, so a file with a
/// hundred thousand bad lines gives a readable message rather than megabytes of errors.
pub const MAX_PROBLEMS_SHOWN: usize = 100;

impl fmt::Display for Problems {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        for (i, d) in self.0.iter().take(MAX_PROBLEMS_SHOWN).enumerate() {
            if i > 0 {
                writeln!(f)?;
            }
            write!(f, "error: {d}")?;
        }
        if self.0.len() > MAX_PROBLEMS_SHOWN {
            write!(
                f,
                "\nerror: {} more problems not shown ({} in all); fix the first ones and run again",
                self.0.len() - MAX_PROBLEMS_SHOWN,
                self.0.len()
            )?;
        }
        Ok(())
    }
}

impl std::error::Error for Problems {}

impl From<Diagnostic> for Problems {
    fn from(d: Diagnostic) -> Self {
        Problems(vec![d])
    }
}

/// The candidate most like `word`, if it is close enough to be what was meant.
pub fn suggest<'a>(word: &str, candidates: &[&'a str]) -> Option<&'a str> {
    let word_lower = word.to_ascii_lowercase();
    candidates
        .iter()
        .map(|c| {
            (
                strsim::jaro_winkler(&word_lower, &c.to_ascii_lowercase()),
                *c,
            )
        })
        .filter(|(score, _)| *score >= 0.8)
        .max_by(|a, b| a.0.total_cmp(&b.0))
        .map(|(_, c)| c)
}

/// "a, b or c" for messages.
pub fn one_of(words: &[&str]) -> String {
    match words {
        [] => String::new(),
        [one] => format!("\"{one}\""),
        [init @ .., last] => {
            let head: Vec<String> = init.iter().map(|w| format!("\"{w}\"")).collect();
            format!("{} or \"{last}\"", head.join(", "))
        }
    }
}

/// The words of a domain enum, as the project file, the rule files and the command line
/// write them (its `clap::ValueEnum` names, which its serde names match).
pub fn words<E: clap::ValueEnum>() -> Vec<String> {
    E::value_variants()
        .iter()
        .filter_map(|v| v.to_possible_value())
        .map(|v| v.get_name().to_string())
        .collect()
}

/// The variant of a domain enum that `word` names exactly, if any.
pub fn word<E: clap::ValueEnum>(word: &str) -> Option<E> {
    E::from_str(word, false).ok()
}

/// The dotted key path the TOML parser records in an error (it shows it only in the
/// error's own rendering, as "in `a.b`", when no input text is attached).
pub fn toml_error_key(e: &toml::de::Error) -> Option<String> {
    let mut bare = e.clone();
    bare.set_input(None);
    let shown = bare.to_string();
    let line = shown.lines().rev().find(|l| l.starts_with("in `"))?;
    let key = line.strip_prefix("in `")?.strip_suffix('`')?;
    (!key.is_empty()).then(|| key.to_string())
}

/// The byte range of the value at a dotted path (`rows[5].up_to_v`, lists counted from 1)
/// in a TOML text, as the parser located it; where the path goes further than the text, the
/// deepest value it reaches. `None` where the text does not parse or the first key is absent.
pub fn span_of_path(text: &str, path: &str) -> Option<Range<usize>> {
    use toml::de::{DeTable, DeValue};
    let doc = DeTable::parse(text).ok()?;
    let mut table: &DeTable = doc.get_ref();
    let mut found: Option<Range<usize>> = None;
    for part in path.split('.').filter(|p| !p.is_empty()) {
        let (name, indices) = match part.find('[') {
            Some(i) => (&part[..i], &part[i..]),
            None => (part, ""),
        };
        let Some((_, mut value)) = table.iter().find(|(k, _)| k.get_ref().as_ref() == name) else {
            return found;
        };
        found = Some(value.span());
        for index in indices.split(['[', ']']).filter(|i| !i.is_empty()) {
            let n: usize = index.parse().ok()?;
            let DeValue::Array(items) = value.get_ref() else {
                return found;
            };
            let Some(next) = n.checked_sub(1).and_then(|i| items.get(i)) else {
                return found;
            };
            value = next;
            found = Some(value.span());
        }
        match value.get_ref() {
            DeValue::Table(t) => table = t,
            _ => table = EMPTY.get_or_init(DeTable::new),
        }
    }
    found
}

// A value that is not a table has no keys: the rest of a path goes nowhere.
static EMPTY: std::sync::OnceLock<toml::de::DeTable<'static>> = std::sync::OnceLock::new();

/// Gives a domain enum its words once: the `clap::ValueEnum` derive names each variant
/// (kebab-case of the variant, or `#[value(name = "IIIa")]`), and this macro makes serde,
/// `Display`, `as_str` and the project file's JSON Schema use the same words, so the
/// project file, the rule files, the report, the schema and the command line cannot drift
/// apart. A word that is not one of them is an
/// error listing them all.
#[macro_export]
macro_rules! domain_words {
    ($($t:ty),* $(,)?) => {$(
        impl $t {
            /// The word the project file, the report and the command line use for it.
            pub fn as_str(self) -> &'static str {
                static WORDS: std::sync::OnceLock<Vec<String>> = std::sync::OnceLock::new();
                let words = WORDS.get_or_init($crate::diag::words::<$t>);
                <$t as clap::ValueEnum>::value_variants()
                    .iter()
                    .position(|v| *v == self)
                    .and_then(|i| words.get(i))
                    .map_or("", String::as_str)
            }
        }

        impl std::fmt::Display for $t {
            fn fmt(&self, f: &mut std::fmt::Formatter<'_>) -> std::fmt::Result {
                f.write_str(self.as_str())
            }
        }

        impl serde::Serialize for $t {
            fn serialize<S: serde::Serializer>(&self, s: S) -> Result<S::Ok, S::Error> {
                s.serialize_str(self.as_str())
            }
        }

        // The schema's allowed words are the reader's (`gapwarden schema`).
        impl schemars::JsonSchema for $t {
            fn inline_schema() -> bool {
                true
            }

            fn schema_name() -> std::borrow::Cow<'static, str> {
                stringify!($t).into()
            }

            fn json_schema(_: &mut schemars::SchemaGenerator) -> schemars::Schema {
                let words = $crate::diag::words::<$t>();
                schemars::json_schema!({ "type": "string", "enum": words })
            }
        }

        impl<'de> serde::Deserialize<'de> for $t {
            fn deserialize<D: serde::Deserializer<'de>>(d: D) -> Result<Self, D::Error> {
                let word = <std::borrow::Cow<'de, str> as serde::Deserialize>::deserialize(d)?;
                $crate::diag::word::<$t>(&word).ok_or_else(|| {
                    let words = $crate::diag::words::<$t>();
                    let words: Vec<&str> = words.iter().map(String::as_str).collect();
                    serde::de::Error::custom(format!(
                        "\"{word}\" is not known; expected {}",
                        $crate::diag::one_of(&words)
                    ))
                })
            }
        }
    )*};
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::project::{Grade, MaterialGroup, PartKind, ProtectionClass};

    #[test]
    fn domain_words_are_the_project_files_words_in_serde_and_on_the_command_line() {
        // The words of DESIGN.md's project file and README's key list, written out here.
        assert_eq!(
            words::<Grade>(),
            [
                "functional",
                "basic",
                "supplementary",
                "reinforced",
                "double"
            ]
        );
        assert_eq!(words::<MaterialGroup>(), ["I", "II", "IIIa", "IIIb"]);
        assert_eq!(words::<ProtectionClass>(), ["I", "II", "III"]);
        assert_eq!(
            words::<PartKind>(),
            [
                "y-capacitor",
                "x-capacitor",
                "optocoupler",
                "digital-isolator",
                "transformer",
                "resistor",
                "relay",
                "other"
            ]
        );
        for grade in [Grade::Functional, Grade::Reinforced] {
            let json = serde_json::to_string(&grade).unwrap();
            assert_eq!(json, format!("\"{}\"", grade.as_str()));
            assert_eq!(serde_json::from_str::<Grade>(&json).unwrap(), grade);
        }
        assert_eq!(
            serde_json::to_string(&MaterialGroup::IIIa).unwrap(),
            "\"IIIa\""
        );
        assert_eq!(word::<MaterialGroup>("IIIb"), Some(MaterialGroup::IIIb));
        // Case matters, as in the project file.
        assert_eq!(word::<MaterialGroup>("iiib"), None);
        let e = serde_json::from_str::<Grade>("\"reinforcd\"").unwrap_err();
        assert!(
            e.to_string().contains("\"reinforced\" or \"double\""),
            "{e}"
        );
    }

    #[test]
    fn a_path_is_located_through_the_parsers_spans() {
        let text = "id = \"x\"\nrows = [\n  { a = 1, b = 2 },\n  { a = 3, b = 500 },\n]\n[t]\nk = { m = 7 }\n";
        let at = |path: &str| span_of_path(text, path).map(|s| &text[s]);
        assert_eq!(at("rows[2].b"), Some("500"));
        assert_eq!(at("rows[1].a"), Some("1"));
        assert_eq!(at("t.k.m"), Some("7"));
        // Past the text: the deepest value reached.
        assert_eq!(at("rows[2].c"), Some("{ a = 3, b = 500 }"));
        assert_eq!(at("nothing"), None);
    }
}
