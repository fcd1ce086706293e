//! What every rule table is to the rule book: a serde type with a permanent id and a
//! `check` that rejects what the engine could not read safely; and the declaration of an
//! area's set of tables (`table_set!`), so a new table is its TOML file, its struct and
//! one line in its area's set.

use serde::Deserialize;

/// A rule table as read from TOML.
pub trait Table: for<'de> Deserialize<'de> {
    /// Rejects a table the engine could not read safely.
    fn check(&self) -> Result<(), String>;
}

pub(crate) fn ascending(values: impl Iterator<Item = f64>, what: &str) -> Result<(), String> {
    let mut last = f64::NEG_INFINITY;
    for v in values {
        if !v.is_finite() || v < 0.0 {
            return Err(format!("{what}: {v} is not a finite figure of 0 or more"));
        }
        if v <= last {
            return Err(format!(
                "{what}: rows must be in strictly ascending order ({v} follows {last})"
            ));
        }
        last = v;
    }
    if last == f64::NEG_INFINITY {
        return Err(format!("{what}: the table has no rows"));
    }
    Ok(())
}

pub(crate) fn non_negative(values: impl Iterator<Item = f64>, what: &str) -> Result<(), String> {
    for v in values {
        if !v.is_finite() || v < 0.0 {
            return Err(format!("{what}: {v} is not a finite figure of 0 or more"));
        }
    }
    Ok(())
}

/// Declares an area's set of rule tables: a struct with one field per table, and its
/// `load`, which reads each table by its `ID` through [`crate::rules::Typed`] (every
/// problem is collected; `None` when any table failed). Adding a table to an area is one
/// line in its set.
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

        impl $name {
            /// Loads and checks every table of the set.
            pub fn load(typed: &mut $crate::rules::Typed) -> Option<Self> {
                $(let $field = typed.get::<$ty>(<$ty>::ID);)*
                Some($name { $($field: $field?,)* })
            }
        }
    };
}
