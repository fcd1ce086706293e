//! Reads and validates a project file in one pass, collecting every problem: the
//! project-wide tables (`[design]`, `[environment]`, `[mains]`) here, then each area's own
//! tables through its `Area::read` (`crate::area::read_all`).

use std::collections::BTreeMap;

use super::raw::*;
use super::*;
use crate::area::ProjectPart;
use crate::diag::{Problems, Source};
use crate::key;
use crate::raw::{Reader, Span, TableAt, read_document};

/// Reads a project from its text. `source.name` is used in messages as given.
pub fn read_project(source: &Source) -> Result<Project, Problems> {
    let doc = read_document::<RawProject>(source)?;
    validate(source, &doc)
}

/// The one validate pass: every problem of the raw project, or the checked project.
fn validate(source: &Source, doc: &crate::raw::Section<RawProject>) -> Result<Project, Problems> {
    let mut r = Reader::new(source);
    let (root, raw_root) = TableAt::root(doc);
    if let crate::raw::Section::Table(table) = doc {
        r.unknown_keys(&root, table);
    }
    let Some(raw_root) = raw_root else {
        return Err(Problems(vec![crate::diag::Diagnostic::new(
            &source.name,
            "the project could not be read",
        )]));
    };
    let mut part = ProjectPart::new(r, root, raw_root);
    let p = &mut part;
    let design = read_design(&mut p.r, &p.root, p.raw, &mut p.assumptions);
    let environment = read_environment(
        &mut p.r,
        &p.root,
        p.raw,
        &mut p.assumptions,
        &mut p.key_spans,
    );
    let mains = read_mains(&mut p.r, &p.root, p.raw, &mut p.key_spans);
    // Each area reads and validates its own tables, into the same pass.
    crate::area::read_all(&mut part);

    part.r.finish()?;
    // Every field below was checked above; a missing one has already been reported.
    let (Some(design), Some(environment), Some(mains)) = (design, environment, mains) else {
        return Err(Problems(vec![crate::diag::Diagnostic::new(
            &source.name,
            "the project could not be read",
        )]));
    };
    Ok(part.into_project(design, environment, mains))
}

fn read_design(
    r: &mut Reader,
    root: &TableAt,
    raw_root: &RawProject,
    assumptions: &mut Vec<String>,
) -> Option<Design> {
    let Some((t, raw_t)) = r.table(root, key!(raw_root.design)) else {
        if raw_root.design.is_none() {
            r.missing(
                root,
                "design",
                "a [design] table with name and protection_class",
            );
        }
        return None;
    };
    let name = r.required_string(&t, key!(raw_t.name));
    let revision = r.string(&t, key!(raw_t.revision)).map(|l| l.value);
    let class = r.required_word::<ProtectionClass>(&t, key!(raw_t.protection_class));
    let between = r.word::<BetweenRows>(&t, key!(raw_t.creepage_between_rows));
    let creepage_between_rows = match between.map(|l| l.value) {
        Some(rows) => rows,
        None => {
            assumptions.push(
                "Creepage between two table rows: the next higher row (creepage_between_rows not set in [design])."
                    .to_string(),
            );
            BetweenRows::NextRow
        }
    };
    let altitude_between_rows = r
        .word::<BetweenRows>(&t, key!(raw_t.altitude_between_rows))
        .map_or(BetweenRows::NextRow, |l| l.value);
    let standard = r
        .word::<crate::standards::Standard>(&t, key!(raw_t.standard))
        .map(|l| l.value);
    if standard.is_none() {
        assumptions.push(
            "No end-product standard named ([design] standard): the IEC 60664-1 basics apply; the lab will judge against an end-product standard (iec62368-1, iec60601-1 or iec60335-1)."
                .to_string(),
        );
    }
    if revision.is_none() {
        assumptions.push(
            "No revision given in [design]; the report cannot be tied to a revision.".to_string(),
        );
    }
    let protection_class = class?.value;
    Some(Design {
        name: name?.value,
        revision,
        protection_class,
        creepage_between_rows,
        altitude_between_rows,
        standard,
    })
}

fn read_environment(
    r: &mut Reader,
    root: &TableAt,
    raw_root: &RawProject,
    assumptions: &mut Vec<String>,
    key_spans: &mut BTreeMap<String, Span>,
) -> Option<Environment> {
    let found = r.table(root, key!(raw_root.environment));
    if found.is_none() && raw_root.environment.is_some() {
        return None;
    }
    // An absent [environment] reads as an empty one: every default applies.
    let empty = RawEnvironment::default();
    let (t, raw_t) = found.unwrap_or_else(|| {
        let at = TableAt {
            path: "environment".to_string(),
            span: root.span.clone(),
        };
        (at, &empty)
    });
    let t = &t;
    let pd = r.ruled(t, key!(raw_t.pollution_degree));
    let ovc = r.word::<OvervoltageCategory>(t, key!(raw_t.overvoltage_category));
    let altitude = r.ruled(t, key!(raw_t.altitude_m));
    if let Some(a) = &altitude {
        key_spans.insert("environment.altitude_m".to_string(), a.span.clone());
    }
    if raw_t.pollution_degree.is_none() {
        assumptions.push("Pollution degree 2 (not stated in [environment]).".to_string());
    }
    if raw_t.overvoltage_category.is_none() {
        assumptions.push("Overvoltage category II (not stated in [environment]).".to_string());
    }
    if raw_t.altitude_m.is_none() {
        assumptions
            .push("Altitude up to 2000 m (altitude_m not stated in [environment]).".to_string());
    }
    // A stated but invalid value has been reported; fall back only for absent ones.
    if (raw_t.pollution_degree.is_some() && pd.is_none())
        || (raw_t.overvoltage_category.is_some() && ovc.is_none())
        || (raw_t.altitude_m.is_some() && altitude.is_none())
    {
        return None;
    }
    Some(Environment {
        pollution_degree: pd.map(|l| l.value as u8).unwrap_or(2),
        overvoltage_category: ovc.map_or(OvervoltageCategory::II, |l| l.value),
        altitude_m: altitude.map(|l| l.value).unwrap_or(2000.0),
    })
}

fn read_mains(
    r: &mut Reader,
    root: &TableAt,
    raw_root: &RawProject,
    key_spans: &mut BTreeMap<String, Span>,
) -> Option<Mains> {
    let Some((t, raw_t)) = r.table(root, key!(raw_root.mains)) else {
        if raw_root.mains.is_none() {
            r.missing(root, "mains", "a [mains] table with nominal_v");
        }
        return None;
    };
    let nominal = r.required_ruled(&t, key!(raw_t.nominal_v));
    let max_v = r.ruled(&t, key!(raw_t.max_v));
    let min_v = r.ruled(&t, key!(raw_t.min_v));
    let frequency = r.ruled(&t, key!(raw_t.frequency_hz));
    let nominal = nominal?;
    key_spans.insert("mains.nominal_v".to_string(), nominal.span.clone());
    if let Some(max) = &max_v
        && max.value < nominal.value
    {
        r.error(
            &max.span,
            "mains.max_v",
            format!(
                "{} V is below nominal_v = {} V",
                crate::text::exact_number(max.value),
                crate::text::exact_number(nominal.value)
            ),
        );
    }
    if let Some(min) = &min_v
        && min.value > nominal.value
    {
        r.error(
            &min.span,
            "mains.min_v",
            format!(
                "{} V is above nominal_v = {} V",
                crate::text::exact_number(min.value),
                crate::text::exact_number(nominal.value)
            ),
        );
    }
    Some(Mains {
        nominal_v: nominal.value,
        max_v: max_v.map(|l| l.value),
        min_v: min_v.map(|l| l.value),
        frequency_hz: frequency.map(|l| l.value),
    })
}
