//! The rule book: the published tables and the checklist the engine reads, loaded from TOML
//! files in `rules/`. The shipped files are embedded in the binary; a folder given with
//! `--rules` adds tables and checks, or replaces shipped ones by id where it says so.
//! Every table and check names its source and provenance.

mod check_defs;
pub mod node;
pub mod predicate;
pub mod table;

use std::borrow::Cow;
use std::path::Path;

use serde::{Deserialize, Serialize};

use crate::diag::{Diagnostic, Problems, Source};
pub use crate::insulation::tables::*;
pub use check_defs::{CheckDef, Cond, Over, Retired};
use table::TableFile;
pub use table::{TABLE_TYPES, Table, TableStore, TableType, Validation};

/// Tolerance for reading an input against a table row: a value within `EPS` of a row's
/// bound counts as on it. Inputs are written with a handful of decimals in volts,
/// millimetres, metres or CTI, and the engine converts them (V to kV, rms to peak with
/// √2) with a rounding error near 1e-16 of the value, so below 1e-10 for anything up to
/// the 1e6 that the input limits allow. 1e-9 sits above that noise and far below any
/// gap between table rows or any resolution a designer writes (a micrometre, a millivolt),
/// so it never moves a value to a different row by more than noise.
pub const EPS: f64 = 1e-9;

/// Every shipped rule file (`rules/**/*.toml`, path inside `rules/` and text), embedded at
/// build time by `build.rs`.
pub use shipped::SHIPPED_RULES;

pub(crate) mod shipped {
    /// One shipped rule file as build.rs prepared it.
    pub struct ShippedRule {
        /// Path inside `rules/`.
        pub name: &'static str,
        /// `rules/` and the path inside it, as messages name the file.
        pub path: &'static str,
        pub text: &'static str,
        /// The same content as a value tree that serde reads without parsing text (an
        /// empty table for a check file, whose entries are in `checks`).
        pub values: Node,
        /// SHA-256 of `text`.
        pub sha256: &'static str,
        /// The line of each `[[check]]` header, in order.
        pub check_lines: &'static [usize],
        /// A check file's entries, read by build.rs (nothing to parse at run time).
        pub checks: &'static [ShippedCheck],
        pub id: &'static str,
        pub title: &'static str,
        pub source: &'static str,
        pub provenance: &'static str,
        pub is_checks: bool,
    }

    /// One `[[check]]` entry of a shipped check file as build.rs read it: the text fields
    /// as written, the conditions built (see [`ShippedCond`]).
    pub struct ShippedCheck {
        pub id: &'static str,
        pub overrides: bool,
        pub title: Option<&'static str>,
        pub severity: Option<&'static str>,
        pub over: Option<&'static str>,
        pub applies: Option<ShippedCond>,
        pub condition: Option<ShippedCond>,
        pub subject: Option<&'static str>,
        pub message: Option<&'static str>,
        pub rationale: Option<&'static str>,
        pub source: Option<&'static str>,
        /// The line of its `[[check]]` header.
        pub line: usize,
    }

    /// A shipped condition: an expression, or the predicate its table reads as, built by
    /// code that build.rs wrote from the table (a run parses no shipped condition).
    #[derive(Clone, Copy)]
    pub enum ShippedCond {
        Expression(&'static str),
        Predicate(fn() -> P),
    }

    use super::node::Node;
    use super::predicate::{FieldRef, Op, Operand, Predicate as P};
    use minijinja::value::Value;

    include!(concat!(env!("OUT_DIR"), "/shipped_rules.rs"));
}

/// Text that a shipped rule file lends for the whole run (its id, title, its checks'
/// messages) and a house file owns: a shipped rule book copies none of its text.
pub type Text = Cow<'static, str>;

/// What a report says about one loaded rule file.
#[derive(Debug, Clone, Serialize, PartialEq)]
pub struct RuleInfo {
    pub id: Text,
    pub title: Text,
    pub source: Text,
    pub provenance: Text,
    pub sha256: Text,
    /// "shipped", or "house" for a file from a `--rules` folder.
    pub origin: Text,
    /// File name (never a full path, so reports carry no machine paths).
    pub file: Text,
    /// The file's text, for `gapwarden rules ID`.
    #[serde(skip)]
    pub text: Text,
}

/// The fields every house rule file carries, read leniently to learn its id, with
/// positions for messages.
#[derive(Deserialize)]
struct Header {
    id: toml::Spanned<String>,
    title: String,
    source: String,
    provenance: String,
    #[serde(default)]
    overrides: Option<toml::Spanned<bool>>,
    #[serde(default)]
    check: Option<serde::de::IgnoredAny>,
}

/// All loaded tables, typed on first use, and the checklist.
#[derive(Debug, Clone)]
pub struct RuleBook {
    pub info: Vec<RuleInfo>,
    /// Every rule table file by id; evaluation reads them through [`RuleBook::table`].
    pub tables: TableStore,
    pub checks: Vec<CheckDef>,
    /// The checks, compiled once.
    pub compiled_checks: crate::checks::CompiledChecks,
}

impl RuleBook {
    /// The rule table `T` (the file with `T::ID`, shipped or house), read on first use.
    pub fn table<T: Table>(&self) -> &T {
        self.tables.get::<T>()
    }

    /// The end-product standards' tables.
    pub fn standards(&self) -> crate::standards::StandardRules<'_> {
        crate::standards::StandardRules::new(&self.tables)
    }
}

/// A rule file on its way in: where it came from, and whether it holds checks.
struct Loaded {
    id: Text,
    from: Whence,
    /// The file's path inside its rules folder (`checks/barrier.toml`): no machine path.
    file: Text,
    is_checks: bool,
}

/// A shipped file as build.rs prepared it (value tree, SHA-256, header, checks), read in
/// place; or a house file's text.
enum Whence {
    Shipped(&'static shipped::ShippedRule),
    House(Source),
}

impl Loaded {
    /// The file as messages name it.
    fn name(&self) -> Text {
        match &self.from {
            Whence::Shipped(rule) => Cow::Borrowed(rule.path),
            Whence::House(source) => Cow::Owned(source.name.clone()),
        }
    }

    fn origin(&self) -> &'static str {
        match self.from {
            Whence::Shipped(_) => "shipped",
            Whence::House(_) => "house",
        }
    }
}

impl RuleBook {
    /// The shipped tables and checks only.
    pub fn shipped() -> Result<RuleBook, Problems> {
        Self::load(None)
    }

    /// The shipped rules, with those in `house` (if given) added or replacing by id.
    pub fn load(house: Option<&Path>) -> Result<RuleBook, Problems> {
        Self::load_inner(house, None)
    }

    /// Loads with every check, shipped ones too, validated against `fields` (a run
    /// validates only house checks, against the shipped list; `tests/it/check_fields.rs`
    /// validates the shipped ones this way). An empty list validates nothing, which is
    /// how the list itself is regenerated.
    pub fn load_with_fields(
        house: Option<&Path>,
        fields: &predicate::Fields,
    ) -> Result<RuleBook, Problems> {
        Self::load_inner(house, Some(fields))
    }

    fn load_inner(
        house: Option<&Path>,
        fields: Option<&predicate::Fields>,
    ) -> Result<RuleBook, Problems> {
        // In load order; a house file that overrides a shipped one takes its place.
        let mut files: Vec<Loaded> = Vec::with_capacity(SHIPPED_RULES.len());
        let mut problems = Vec::new();
        // Shipped files: ids and headers as build.rs read them; they never clash (tested).
        for rule in SHIPPED_RULES {
            files.push(Loaded {
                id: Cow::Borrowed(rule.id),
                from: Whence::Shipped(rule),
                file: Cow::Borrowed(rule.name),
                is_checks: rule.is_checks,
            });
        }
        let house_files = match house {
            Some(dir) => read_folder(dir)?,
            None => Vec::new(),
        };
        for (file, source) in house_files {
            let header = match toml::from_str::<Header>(&source.text) {
                Ok(h) => h,
                Err(e) => {
                    problems.push(toml_problem(
                        &source,
                        &e,
                        "a rule file needs id, title, source and provenance",
                    ));
                    continue;
                }
            };
            let id = header.id.get_ref().clone();
            let overrides = header.overrides.as_ref().is_some_and(|o| *o.get_ref());
            let existing = files.iter().position(|l| l.id == id.as_str());
            if let Some(first) = existing.filter(|_| !overrides) {
                let first = files[first].name();
                problems.push(
                    source
                        .diag(&header.id.span(), format!("id \"{id}\" is already used by {first}"))
                        .with_key("id")
                        .with_help("to replace that file, add `overrides = true`; to add a new one, choose a new id"),
                );
                continue;
            }
            if existing.is_none() && overrides {
                let span = header
                    .overrides
                    .as_ref()
                    .map(|o| o.span())
                    .unwrap_or_else(|| header.id.span());
                problems.push(
                    source
                        .diag(
                            &span,
                            format!("overrides = true, but no loaded rule file has id \"{id}\""),
                        )
                        .with_key("overrides"),
                );
                continue;
            }
            let is_checks = header.check.is_some();
            let loaded = Loaded {
                id: Cow::Owned(id),
                from: Whence::House(source),
                file: Cow::Owned(file),
                is_checks,
            };
            match existing {
                Some(i) => files[i] = loaded,
                None => files.push(loaded),
            }
        }
        if !problems.is_empty() {
            return Err(Problems(problems));
        }
        let mut info = Vec::with_capacity(files.len());
        for l in &files {
            let (title, source, provenance, sha256, text) = match &l.from {
                Whence::Shipped(rule) => (
                    Cow::Borrowed(rule.title),
                    Cow::Borrowed(rule.source),
                    Cow::Borrowed(rule.provenance),
                    Cow::Borrowed(rule.sha256),
                    Cow::Borrowed(rule.text),
                ),
                Whence::House(s) => match toml::from_str::<Header>(&s.text) {
                    Ok(h) => (
                        Cow::Owned(h.title),
                        Cow::Owned(h.source),
                        Cow::Owned(h.provenance),
                        Cow::Owned(crate::sha256_hex(s.text.as_bytes())),
                        Cow::Owned(s.text.clone()),
                    ),
                    Err(_) => continue,
                },
            };
            info.push(RuleInfo {
                id: l.id.clone(),
                title,
                source,
                provenance,
                sha256,
                origin: Cow::Borrowed(l.origin()),
                file: l.file.clone(),
                text,
            });
        }
        let mut tables = TableStore::default();
        for l in files.iter().filter(|l| !l.is_checks) {
            let file = match &l.from {
                Whence::Shipped(rule) => TableFile::shipped(rule),
                Whence::House(source) => TableFile::house(source.clone()),
            };
            tables.insert(l.id.clone(), file);
        }
        // Every table type's file is there; every house table is read and checked now,
        // each problem with its line and key (shipped ones are proven by a test).
        let mut validation = Validation {
            store: &tables,
            problems: Vec::new(),
        };
        validation.every_table_type(files.iter().map(|l| &*l.id));
        for area in crate::area::AREAS {
            area.load_rules(&mut validation);
        }
        let mut problems = validation.problems;
        let check_sources: Vec<check_defs::CheckSource> = files
            .iter()
            .filter(|l| l.is_checks)
            .map(|l| match &l.from {
                Whence::Shipped(rule) => check_defs::CheckSource {
                    house: None,
                    text: rule.text,
                    path: Cow::Borrowed(rule.path),
                    file: l.file.clone(),
                    origin: "shipped",
                    shipped: Some(rule.checks),
                },
                Whence::House(source) => check_defs::CheckSource {
                    house: Some(source),
                    text: &source.text,
                    path: Cow::Owned(source.name.clone()),
                    file: l.file.clone(),
                    origin: "house",
                    shipped: None,
                },
            })
            .collect();
        // Retired check ids: the shipped list, plus any a house file retires itself.
        #[derive(Deserialize)]
        struct RetiredList {
            #[serde(default)]
            retired: Vec<Retired>,
        }
        let mut retired: Vec<Retired> = Vec::new();
        for l in files.iter().filter(|l| !l.is_checks) {
            let list = match &l.from {
                Whence::Shipped(s) if s.values.get("retired").is_some() => s
                    .values
                    .read::<RetiredList>()
                    .map_err(|e| Diagnostic::new(s.path, e.to_string())),
                Whence::Shipped(_) => continue,
                Whence::House(source) if source.text.contains("retired") => {
                    toml::from_str::<RetiredList>(&source.text)
                        .map_err(|e| toml_problem(source, &e, ""))
                }
                Whence::House(_) => continue,
            };
            match list {
                Ok(list) => retired.extend(list.retired),
                Err(d) => problems.push(d),
            }
        }
        let checks = check_defs::load_checks(&check_sources, fields, &retired, &mut problems);
        let compiled_checks = match crate::checks::CompiledChecks::new(&checks) {
            Ok(c) => Some(c),
            Err(p) => {
                problems.extend(p);
                None
            }
        };
        if !problems.is_empty() {
            return Err(Problems(problems));
        }
        // A check that failed to compile has left a problem above.
        let Some(compiled_checks) = compiled_checks else {
            return Err(Problems(vec![Diagnostic::new(
                "rules",
                "the checks could not be compiled",
            )]));
        };
        let book = RuleBook {
            info,
            tables,
            checks,
            compiled_checks,
        };
        book.try_house_checks()?;
        Ok(book)
    }

    /// Tries house checks on the shipped example design, with at least one item of every
    /// kind, so that a check naming a field that does not exist fails now, not only on the
    /// first design that has such an item. Problems of the example itself (a house table
    /// it falls outside) are not the house checks' problems and are left to the real run.
    fn try_house_checks(&self) -> Result<(), Problems> {
        let house: Vec<&CheckDef> = self
            .checks
            .iter()
            .filter(|c| c.origin != "shipped")
            .collect();
        if house.is_empty() {
            return Ok(());
        }
        let (name, text) = crate::commands::EXAMPLES[0];
        let example = Source::new(format!("examples/{name}.toml"), text);
        let Ok(mut sample) = crate::report::figures(&example, self) else {
            return Ok(());
        };
        sample.input_warnings.push(crate::report::InputWarning {
            key: Some("barrier[1].clearance_mm".to_string()),
            message: "a sample warning".to_string(),
            line: Some(1),
            column: Some(1),
        });
        let context = minijinja::Value::from(minijinja::value::Serde(&sample));
        let problems: Vec<Diagnostic> = house
            .into_iter()
            .filter_map(|check| crate::checks::unknown_fields(check, &context).err())
            .collect();
        if problems.is_empty() {
            Ok(())
        } else {
            Err(Problems(problems))
        }
    }

    pub fn info(&self, id: &str) -> Option<&RuleInfo> {
        self.info.iter().find(|i| i.id == id)
    }
}

/// A rule file that serde could not read, located by the parser, with the dotted key the
/// parser was in and the expected form in words ("a number", not "f64").
pub(crate) fn toml_problem(source: &Source, e: &toml::de::Error, help: &str) -> Diagnostic {
    let message = e
        .message()
        .trim()
        .replace("expected f64", "expected a number")
        .replace("expected u32", "expected a whole number")
        .replace("expected usize", "expected a whole number");
    // An unknown key: serde points at the whole table; point at the key itself, name it,
    // and suggest the key probably meant.
    if let Some((field, meant)) = crate::hints::unknown_field(&message)
        && let Some(span) = e.span()
        && let Some(at) = crate::hints::key_span(&source.text, span.start, &field)
    {
        let key = crate::diag::toml_error_key(e)
            .map(|table| format!("{table}.{field}"))
            .unwrap_or(field);
        let mut d = source.diag(&at, message.clone()).with_key(key);
        if let Some(meant) = meant {
            d = d.with_help(format!("did you mean `{meant}`?"));
        } else if !help.is_empty() {
            d = d.with_help(help);
        }
        return d;
    }
    let mut d = match e.span() {
        Some(span) => source.diag(&span, message),
        None => Diagnostic::new(&source.name, message),
    };
    if let Some(key) = crate::diag::toml_error_key(e) {
        d = d.with_key(key);
    }
    if !help.is_empty() {
        d = d.with_help(help);
    }
    d
}

/// The files a house rule folder contributes: every `*.toml` entry that is not a folder, in
/// the folder and its `checks/` subfolder, sorted by name so that loading is deterministic.
/// A named pipe or device with such a name is listed too, so that reading it fails with a
/// message instead of it being skipped without a word.
pub fn house_rule_files(dir: &Path) -> Vec<std::path::PathBuf> {
    let mut paths = Vec::new();
    for folder in [dir.to_path_buf(), dir.join("checks")] {
        let Ok(entries) = std::fs::read_dir(&folder) else {
            continue;
        };
        paths.extend(
            entries
                .filter_map(|e| e.ok().map(|e| e.path()))
                .filter(|p| p.extension().is_some_and(|x| x == "toml") && !p.is_dir()),
        );
    }
    paths.sort();
    paths
}

/// Every file of `house_rule_files`, read.
fn read_folder(dir: &Path) -> Result<Vec<(String, Source)>, Problems> {
    let shown = dir.display().to_string();
    if !dir.is_dir() {
        return Err(Diagnostic::new(&shown, "is not a folder of rule files").into());
    }
    let mut out = Vec::new();
    for path in house_rule_files(dir) {
        let name = path.display().to_string();
        let text = crate::read_text(&path, &name)?;
        let inside = path
            .strip_prefix(dir)
            .map(|p| p.display().to_string())
            .unwrap_or_else(|_| name.clone());
        out.push((inside, Source::new(name, text)));
    }
    Ok(out)
}
