//! What every rule table is to the rule book: a serde type with the permanent id of its
//! file and a `check` that rejects what the engine could not read safely; the helpers
//! those checks share; and the store the rule book keeps its tables in, read by type
//! (`rules.table::<ClearanceTable>()`) and parsed on first use. A new table is its file
//! and its struct: `build.rs` lists every `impl Table for X` it finds under `src/`, so
//! that a house table is read and checked when the rule book is loaded.

use std::any::Any;
use std::collections::BTreeMap;
use std::sync::{Arc, OnceLock};

use serde::Deserialize;

use super::shipped::ShippedRule;
use crate::diag::{Diagnostic, Source};

/// A rule table as read from TOML: the permanent id of its file, and what makes it usable.
/// A new table is this struct plus its file; evaluation asks for it by type
/// (`RuleBook::table`), and the store finds its file by `ID`.
pub trait Table: for<'de> Deserialize<'de> + std::fmt::Debug + Send + Sync + 'static {
    /// The `id` its rule file carries.
    const ID: &'static str;

    /// Rejects a table the engine could not read safely. The message starts with the
    /// dotted path of the value at fault, counted from 1 (`rows[5].up_to_v: ...`); the
    /// loader turns the path into the line, column and key through the parser's spans.
    fn check(&self) -> Result<(), String>;
}

/// `list[n].key` (n from 1), or `list[n]` for a list of plain numbers.
pub(crate) fn item(list: &str, index: usize, key: &str) -> String {
    if key.is_empty() {
        format!("{list}[{}]", index + 1)
    } else {
        format!("{list}[{}].{key}", index + 1)
    }
}

/// Values of `list[n].key` that must rise from row to row.
pub(crate) fn ascending(
    values: impl Iterator<Item = f64>,
    list: &str,
    key: &str,
) -> Result<(), String> {
    let mut last = f64::NEG_INFINITY;
    for (i, v) in values.enumerate() {
        if !v.is_finite() || v < 0.0 {
            return Err(format!(
                "{}: {v} is not a finite figure of 0 or more",
                item(list, i, key)
            ));
        }
        if v <= last {
            return Err(format!(
                "{}: rows must be in strictly ascending order ({v} follows {last})",
                item(list, i, key)
            ));
        }
        last = v;
    }
    if last == f64::NEG_INFINITY {
        return Err(format!("{list}: the table has no rows"));
    }
    Ok(())
}

/// Figures (each with its path) that must be finite and 0 or more.
pub(crate) fn non_negative(
    values: impl Iterator<Item = (String, f64)>,
    what: &str,
) -> Result<(), String> {
    for (path, v) in values {
        if !v.is_finite() || v < 0.0 {
            return Err(format!(
                "{path}: {v} is not a finite figure of 0 or more ({what})"
            ));
        }
    }
    Ok(())
}

/// `(list[n].key, value)` for every row.
pub(crate) fn column<'r, R: 'r>(
    rows: &'r [R],
    list: &'r str,
    key: &'r str,
    value: impl Fn(&R) -> Option<f64> + 'r,
) -> impl Iterator<Item = (String, f64)> + 'r {
    rows.iter()
        .enumerate()
        .filter_map(move |(i, r)| value(r).map(|v| (item(list, i, key), v)))
}

/// A type that implements [`Table`], as `build.rs` found it: its id, its name, and how a
/// file is read into it (parsed, checked, and kept for evaluation).
pub struct TableType {
    pub id: &'static str,
    /// The struct's path in the crate, for messages and tests.
    pub name: &'static str,
    read: fn(&TableFile) -> Result<Typed, Diagnostic>,
    /// The typed form written out with `{:?}` (floats as they read back), for the test
    /// that holds a shipped table's tree to its TOML.
    shown: fn(&Typed) -> String,
}

impl TableType {
    pub const fn of<T: Table>(name: &'static str) -> TableType {
        TableType {
            id: T::ID,
            name,
            read: read_as::<T>,
            shown: shown_as::<T>,
        }
    }
}

fn read_as<T: Table>(file: &TableFile) -> Result<Typed, Diagnostic> {
    file.read::<T>(T::check).map(|t| Arc::new(t) as Typed)
}

fn shown_as<T: Table>(typed: &Typed) -> String {
    typed
        .downcast_ref::<T>()
        .map(|t| format!("{t:#?}"))
        .unwrap_or_default()
}

/// Every type that implements [`Table`] in the crate, found by `build.rs` (which reads the
/// sources for `impl Table for X`, so nothing is listed by hand). `tests/it/rule_tables.rs`
/// proves each reads and checks its shipped file, and that every shipped table file has one.
pub static TABLE_TYPES: &[TableType] = include!(concat!(env!("OUT_DIR"), "/table_types.rs"));

/// A table read into its type.
type Typed = Arc<dyn Any + Send + Sync>;

/// One rule table file and, once read, its typed form.
#[derive(Clone)]
pub(crate) struct TableFile {
    file: File,
    typed: OnceLock<Typed>,
}

/// A shipped file (its value tree, written by build.rs, read in place) or a house file's
/// text.
#[derive(Clone)]
enum File {
    Shipped(&'static ShippedRule),
    House(Source),
}

impl TableFile {
    pub(crate) fn shipped(rule: &'static ShippedRule) -> Self {
        TableFile {
            file: File::Shipped(rule),
            typed: OnceLock::new(),
        }
    }

    pub(crate) fn house(source: Source) -> Self {
        TableFile {
            file: File::House(source),
            typed: OnceLock::new(),
        }
    }

    fn is_shipped(&self) -> bool {
        matches!(self.file, File::Shipped(_))
    }

    /// The file as messages name it (a shipped file's name is `rules/<path>`).
    fn name(&self) -> &str {
        match &self.file {
            File::Shipped(rule) => rule.path,
            File::House(source) => &source.name,
        }
    }

    /// Reads the file into `T`. A shipped file is read from its value tree and not checked
    /// again (`tests/it/rule_tables.rs` checks every one); a house file is read from its
    /// TOML with every problem at its line and key, and checked.
    fn read<T: for<'de> Deserialize<'de>>(
        &self,
        check: impl Fn(&T) -> Result<(), String>,
    ) -> Result<T, Diagnostic> {
        match &self.file {
            File::Shipped(shipped) => shipped
                .values
                .read::<T>()
                .map_err(|e| Diagnostic::new(shipped.path, e.to_string())),
            File::House(source) => {
                let table = toml::from_str::<T>(&source.text)
                    .map_err(|e| super::toml_problem(source, &e, ""))?;
                check(&table).map_err(|message| table_problem(source, &message))?;
                Ok(table)
            }
        }
    }

    /// The typed form, read now if it has not been.
    fn typed<T: for<'de> Deserialize<'de> + Send + Sync + 'static>(
        &self,
        id: &str,
        check: impl Fn(&T) -> Result<(), String>,
    ) -> Result<&T, Diagnostic> {
        if self.typed.get().is_none() {
            let table = self.read::<T>(check)?;
            // Another thread may have read it meanwhile; either copy serves.
            let _ = self.typed.set(Arc::new(table));
        }
        self.typed
            .get()
            .and_then(|t| t.downcast_ref::<T>())
            .ok_or_else(|| {
                Diagnostic::new(
                    self.name(),
                    format!(
                        "rule table \"{id}\" is read as {} and as another type",
                        std::any::type_name::<T>()
                    ),
                )
            })
    }
}

/// A table's `check()` problem (`path: message`), located at the value the path names
/// through the parser's spans (or at the nearest enclosing value the path reaches).
fn table_problem(source: &Source, problem: &str) -> Diagnostic {
    let (path, message) = problem.split_once(": ").unwrap_or(("", problem));
    match crate::diag::span_of_path(&source.text, path) {
        Some(span) => source.diag(&span, message).with_key(path),
        None => Diagnostic::new(&source.name, problem),
    }
}

/// Every loaded rule table file by id, each parsed into its type when evaluation first
/// asks for it (a run reads only the tables its design needs).
#[derive(Clone, Default)]
pub struct TableStore {
    files: BTreeMap<super::Text, TableFile>,
}

impl std::fmt::Debug for TableStore {
    fn fmt(&self, f: &mut std::fmt::Formatter<'_>) -> std::fmt::Result {
        f.debug_set().entries(self.files.keys()).finish()
    }
}

impl TableStore {
    pub(crate) fn insert(&mut self, id: super::Text, file: TableFile) {
        self.files.insert(id, file);
    }

    /// The table `T`. Every table type's file was found when the rule book was loaded, a
    /// house file was read and checked then, and every shipped file reads into its type
    /// (`tests/it/rule_tables.rs`), so no input reaches the failure below: it means a
    /// build whose shipped tables do not match their types.
    pub fn get<T: Table>(&self) -> &T {
        match self.by_id::<T>(T::ID, T::check) {
            Ok(table) => table,
            Err(d) => panic!("a shipped rule table does not match its type: {d}"),
        }
    }

    /// The table with `id` read into `T` (one type under several ids, such as the
    /// end-product standards' tables), checked by `check` if it is a house file.
    pub fn by_id<T: for<'de> Deserialize<'de> + Send + Sync + 'static>(
        &self,
        id: &str,
        check: impl Fn(&T) -> Result<(), String>,
    ) -> Result<&T, Diagnostic> {
        let Some(file) = self.files.get(id) else {
            return Err(missing(id));
        };
        file.typed(id, check)
    }

    /// Whether a table with `id` is loaded.
    pub fn has(&self, id: &str) -> bool {
        self.files.contains_key(id)
    }
}

fn missing(id: &str) -> Diagnostic {
    Diagnostic::new("rules", format!("no rule table with id \"{id}\" is loaded"))
}

/// The rule book's tables while it is being loaded: every table type's file must be
/// there, and every house table is read and checked now, each problem collected with its
/// file, line and key.
pub struct Validation<'a> {
    pub(crate) store: &'a TableStore,
    pub(crate) problems: Vec<Diagnostic>,
}

impl Validation<'_> {
    /// Requires the table with `id` and, if it is a house file, reads it into `T` and
    /// checks it now (the typed form is kept for evaluation).
    pub fn require<T: for<'de> Deserialize<'de> + Send + Sync + 'static>(
        &mut self,
        id: &str,
        check: impl Fn(&T) -> Result<(), String>,
    ) {
        match self.store.files.get(id) {
            None => self.problems.push(missing(id)),
            Some(file) if !file.is_shipped() => {
                if let Err(d) = file.typed(id, check) {
                    self.problems.push(d);
                }
            }
            Some(_) => {}
        }
    }

    /// Every [`TABLE_TYPES`] entry has its file, and every house file of one of those
    /// types (`house`, ids in load order) is read and checked now.
    pub(crate) fn every_table_type<'i>(&mut self, house: impl Iterator<Item = &'i str>) {
        for kind in TABLE_TYPES {
            if !self.store.has(kind.id) {
                self.problems.push(missing(kind.id));
            }
        }
        for id in house {
            let Some(file) = self.store.files.get(id).filter(|f| !f.is_shipped()) else {
                continue;
            };
            let Some(kind) = TABLE_TYPES.iter().find(|k| k.id == id) else {
                continue;
            };
            match (kind.read)(file) {
                Ok(typed) => {
                    let _ = file.typed.set(typed);
                }
                Err(d) => self.problems.push(d),
            }
        }
    }
}

/// The shipped file of `kind` read through its type from the value tree a run uses, and
/// from its TOML with its `check()`, as a house file would be: for the test that proves
/// every shipped table usable (a run does not check shipped tables again).
pub fn check_shipped(kind: &TableType) -> Result<(), Diagnostic> {
    let (as_run, as_house) = shipped_files(kind.id)?;
    (kind.read)(&as_run)?;
    (kind.read)(&as_house).map(|_| ())
}

/// [`check_shipped`] for one type read under several ids (the end-product standards).
pub fn check_shipped_as<T: for<'de> Deserialize<'de>>(
    id: &str,
    check: impl Fn(&T) -> Result<(), String>,
) -> Result<(), Diagnostic> {
    let (as_run, as_house) = shipped_files(id)?;
    as_run.read::<T>(|_| Ok(()))?;
    as_house.read::<T>(check).map(|_| ())
}

/// The shipped file of `kind` read into its type as a run reads it (from the value tree
/// build.rs wrote) and as the TOML parser reads its text, each written out with `{:#?}`:
/// for the test that holds the two readings equal, floats to the last bit.
pub fn shipped_readings(kind: &TableType) -> Result<(String, String), Diagnostic> {
    let (as_run, as_house) = shipped_files(kind.id)?;
    Ok((
        (kind.shown)(&(kind.read)(&as_run)?),
        (kind.shown)(&(kind.read)(&as_house)?),
    ))
}

/// [`shipped_readings`] for one type read under several ids (the end-product standards).
pub fn shipped_readings_as<T: for<'de> Deserialize<'de> + std::fmt::Debug>(
    id: &str,
) -> Result<(String, String), Diagnostic> {
    let (as_run, as_house) = shipped_files(id)?;
    let as_run = as_run.read::<T>(|_| Ok(()))?;
    let as_house = as_house.read::<T>(|_| Ok(()))?;
    Ok((format!("{as_run:#?}"), format!("{as_house:#?}")))
}

/// The shipped file `id` as a run reads it (its value tree) and as a house file (TOML,
/// checked).
fn shipped_files(id: &str) -> Result<(TableFile, TableFile), Diagnostic> {
    let Some(rule) = super::SHIPPED_RULES.iter().find(|r| r.id == id) else {
        return Err(missing(id));
    };
    Ok((
        TableFile::shipped(rule),
        TableFile::house(Source::new(rule.path, rule.text)),
    ))
}
