//! Input EMC filter: conducted-emission limits, the noise to beat (measured or estimated),
//! the required attenuation and filter corners, damping, and a chart, from `[emc]`.
//! (Placeholder: not evaluated yet.)

use serde::Serialize;

use crate::diag::{Problems, Source};
use crate::power_entry::PowerEntryReport;
use crate::project::Project;
use crate::rules::{RuleBook, Typed};
use crate::toml_read::{Reader, TableRef};

/// The checked `[emc]` table with its prescan points and filter.
#[derive(Debug, Clone, PartialEq)]
pub struct EmcSpec {}

/// The rule tables the EMC evaluation reads.
#[derive(Debug, Clone)]
pub struct EmcRules {}

impl EmcRules {
    pub fn load(_tables: &mut Typed) -> Option<Self> {
        Some(EmcRules {})
    }
}

/// The `emc` section of the report (JSON core fields in DESIGN.md).
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct EmcReport {}

/// Reads `[emc]`; a table present but not read is listed in `not_evaluated`.
pub fn read(r: &mut Reader, root: &TableRef, not_evaluated: &mut Vec<String>) -> Option<EmcSpec> {
    if r.has(root, "emc") {
        not_evaluated.push("emc".to_string());
    }
    None
}

/// The EMC figures; `None` when the project has no `[emc]`.
pub fn evaluate(
    _project: &Project,
    _rules: &RuleBook,
    _power_entry: Option<&PowerEntryReport>,
    _source: &Source,
) -> Result<Option<EmcReport>, Problems> {
    Ok(None)
}

/// The SVG chart for the HTML report, if there is one.
pub fn chart_svg(_report: &EmcReport) -> Option<String> {
    None
}

/// Text for `gapwarden explain` about an EMC item, if `item` names one.
pub fn explain(_report: &EmcReport, _item: &str) -> Option<String> {
    None
}
