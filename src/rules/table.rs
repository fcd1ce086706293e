//! What every rule table is to the rule book: a serde type with the permanent id of its
//! file and a `check` that rejects what the engine could not read safely; the helpers
//! those checks share; and `table_set!`, which declares an area's set of tables (a new
//! table is its file, its struct and one line in the set of the area that reads it).

use serde::Deserialize;

use super::Typed;

/// A rule table as read from TOML: the permanent id of its file, and what makes it usable.
/// A new table is this struct plus its file; the loader finds it by `ID`
/// (`RuleBook::load`, or an area's own table list such as `PowerEntryRules`).
pub trait Table: for<'de> Deserialize<'de> {
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

/// A set of rule tables loaded together: one table (`Table`, found by its id) or a struct
/// of them declared with `table_set!`.
pub trait TableSet: Sized {
    /// Every table of the set, parsed and checked; `None` once any has a problem (each
    /// problem is recorded in `typed`, and the other tables are still read).
    fn load(typed: &mut Typed) -> Option<Self>;
}

impl<T: Table> TableSet for T {
    fn load(typed: &mut Typed) -> Option<Self> {
        typed.get::<T>()
    }
}

/// Declares a struct of rule tables (or of other sets) that loads itself: every field is
/// read by its type's `Table::ID`, and all are read before any failure is reported. A new
/// table is its file, its struct and one line in the set of the area that reads it.
#[macro_export]
macro_rules! table_set {
    ($(#[$meta:meta])* pub struct $name:ident {
        $($(#[$field_meta:meta])* pub $field:ident: $ty:ty,)*
    }) => {
        $(#[$meta])*
        #[derive(Debug, Clone)]
        pub struct $name {
            $($(#[$field_meta])* pub $field: $ty,)*
        }

        impl $crate::rules::TableSet for $name {
            fn load(typed: &mut $crate::rules::Typed) -> Option<Self> {
                $(let $field = <$ty as $crate::rules::TableSet>::load(typed);)*
                Some($name { $($field: $field?,)* })
            }
        }
    };
}
