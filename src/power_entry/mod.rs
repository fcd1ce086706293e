//! Power entry: the rectifier's operating point, inrush, fuse, X-capacitor discharge, touch
//! current and electric strength test voltages, from `[input]`, `[input.limiter]`,
//! `[input.fuse]` and `[converter]`. (Placeholder: not evaluated yet.)

use serde::Serialize;

use crate::diag::{Diagnostic, Problems, Source};
use crate::project::Project;
use crate::rules::{RuleBook, Typed};
use crate::spacing::BarrierResult;
use crate::toml_read::{Reader, TableRef};

/// The checked `[input]` table with its limiter and fuse.
#[derive(Debug, Clone, PartialEq)]
pub struct InputSpec {}

/// The checked `[converter]` table.
#[derive(Debug, Clone, PartialEq)]
pub struct ConverterSpec {}

/// The rule tables power entry reads.
#[derive(Debug, Clone)]
pub struct PowerEntryRules {}

impl PowerEntryRules {
    pub fn load(_tables: &mut Typed) -> Option<Self> {
        Some(PowerEntryRules {})
    }
}

/// The `power_entry` section of the report (JSON core fields in DESIGN.md).
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct PowerEntryReport {}

/// Reads `[input]` and `[converter]`; a table present but not read is listed in
/// `not_evaluated`.
pub fn read(
    r: &mut Reader,
    root: &TableRef,
    not_evaluated: &mut Vec<String>,
) -> (Option<InputSpec>, Option<ConverterSpec>) {
    for table in ["input", "converter"] {
        if r.has(root, table) {
            not_evaluated.push(table.to_string());
        }
    }
    (None, None)
}

/// The power-entry figures; `None` when the project has no `[input]`.
pub fn evaluate(
    _project: &Project,
    _rules: &RuleBook,
    _barriers: &[BarrierResult],
    _source: &Source,
) -> Result<Option<PowerEntryReport>, Problems> {
    Ok(None)
}

/// Text for `gapwarden explain` about a power-entry item, if `item` names one.
pub fn explain(_report: &PowerEntryReport, _item: &str) -> Option<String> {
    None
}

#[allow(dead_code)]
fn unused(_: Diagnostic) {}
