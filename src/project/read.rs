//! Reads and validates a project file in one pass, collecting every problem.

use std::collections::{BTreeMap, BTreeSet};

use super::raw::*;
use super::*;
use crate::diag::{Problems, Source, one_of, suggest};
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
    let mut assumptions = Vec::new();

    let design = read_design(&mut r, &root, raw_root, &mut assumptions);
    let mut key_spans = BTreeMap::new();
    let environment = read_environment(&mut r, &root, raw_root, &mut assumptions, &mut key_spans);
    let mains = read_mains(&mut r, &root, raw_root, &mut key_spans);
    let (circuits, circuit_ids) = read_circuits(&mut r, &root, raw_root);
    let (parts, part_refs) = read_parts(&mut r, &root, raw_root);
    let barriers = read_barriers(
        &mut r,
        &root,
        raw_root,
        &circuit_ids,
        &part_refs,
        &mut assumptions,
    );
    if circuits.is_empty() && raw_root.circuit.is_none() {
        r.missing(&root, "circuit", "at least one [[circuit]] table");
    }

    let mut not_evaluated = Vec::new();
    let (input, converter) = crate::power_entry::read(&mut r, &root, raw_root, &mut not_evaluated);
    let emc = crate::emc::read(&mut r, &root, raw_root, &mut not_evaluated);
    let board = read_board(&mut r, &root, raw_root);

    r.finish()?;
    // Every field below was checked above; a missing one has already been reported.
    let (Some(design), Some(environment), Some(mains)) = (design, environment, mains) else {
        return Err(Problems(vec![crate::diag::Diagnostic::new(
            &source.name,
            "the project could not be read",
        )]));
    };
    Ok(Project {
        design,
        environment,
        mains,
        circuits,
        barriers,
        parts,
        assumptions,
        warnings: std::mem::take(&mut r.warnings),
        input,
        converter,
        emc,
        board,
        not_evaluated,
        key_spans,
    })
}

/// `[board]`: the fabrication files to measure from, and the board's thickness.
fn read_board(r: &mut Reader, root: &TableAt, raw_root: &RawProject) -> Option<BoardSpec> {
    let (t, raw_t) = r.table(root, key!(raw_root.board))?;
    if raw_t.files.is_none() {
        r.missing(
            &t,
            "files",
            "the Gerber X2 files, e.g. [\"fab/top.gbr\", \"fab/outline.gbr\"]",
        );
        return None;
    }
    let files = r.string_list(&t, key!(raw_t.files))?;
    if files.value.is_empty() {
        r.error(
            &files.span,
            "board.files",
            "lists no file; name the Gerber X2 files of the board",
        );
        return None;
    }
    let thickness = r.ruled(&t, key!(raw_t.thickness_mm));
    if raw_t.thickness_mm.is_some() && thickness.is_none() {
        return None;
    }
    Some(BoardSpec {
        files: files.value,
        thickness_mm: thickness.map_or(crate::board::DEFAULT_THICKNESS_MM, |l| l.value),
        span: t.span.clone(),
    })
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

/// The circuits that could be read, and every id declared (for references, so that a
/// circuit with a problem of its own does not also make every reference to it an error).
fn read_circuits(
    r: &mut Reader,
    root: &TableAt,
    raw_root: &RawProject,
) -> (Vec<Circuit>, BTreeSet<String>) {
    let tables = r.table_array(root, key!(raw_root.circuit));
    let mut seen = BTreeSet::new();
    let mut circuits = Vec::new();
    for (t, raw_t) in &tables {
        let id = r.required_string(t, key!(raw_t.id));
        let kind = r.required_word::<CircuitKind>(t, key!(raw_t.kind));
        let accessible = r.boolean(t, key!(raw_t.accessible));
        let earthed = r.boolean(t, key!(raw_t.earthed));
        let description = r.string(t, key!(raw_t.description)).map(|l| l.value);
        let nets = r
            .string_list(t, key!(raw_t.nets))
            .map(|l| l.value)
            .unwrap_or_default();
        if let Some(id) = &id
            && !seen.insert(id.value.clone())
        {
            r.error(
                &id.span,
                format!("{}.id", t.path),
                format!("circuit id \"{}\" is declared twice", id.value),
            );
            continue;
        }
        if raw_t.accessible.is_some() && accessible.is_none()
            || raw_t.earthed.is_some() && earthed.is_none()
        {
            continue;
        }
        let (Some(id), Some(kind)) = (id, kind) else {
            continue;
        };
        circuits.push(Circuit {
            id: id.value,
            kind: kind.value,
            accessible: accessible.is_some_and(|l| l.value),
            earthed: earthed.is_some_and(|l| l.value),
            description,
            nets,
            span: t.span.clone(),
        });
    }
    (circuits, seen)
}

/// The parts that could be read, and every ref declared.
fn read_parts(
    r: &mut Reader,
    root: &TableAt,
    raw_root: &RawProject,
) -> (Vec<Part>, BTreeSet<String>) {
    let tables = r.table_array(root, key!(raw_root.part));
    let mut seen = BTreeSet::new();
    let mut parts = Vec::new();
    for (t, raw_t) in &tables {
        let reference = r.required_string(t, ("ref", &raw_t.reference));
        let kind = r.required_word::<PartKind>(t, key!(raw_t.kind));
        let description = r.string(t, key!(raw_t.description)).map(|l| l.value);
        let ratings = PartRatings {
            subclass: r
                .word::<CapacitorSubclass>(t, key!(raw_t.subclass))
                .map(|l| l.value.to_string()),
            capacitance_nf: r.ruled(t, key!(raw_t.capacitance_nf)).map(|l| l.value),
            rated_ac_v: r.ruled(t, key!(raw_t.rated_ac_v)).map(|l| l.value),
            count_in_series: r
                .ruled(t, key!(raw_t.count_in_series))
                .map_or(1, |l| l.value as u32),
            isolation_test_v_rms: r
                .ruled(t, key!(raw_t.isolation_test_v_rms))
                .map(|l| l.value),
            external_clearance_mm: r
                .ruled(t, key!(raw_t.external_clearance_mm))
                .map(|l| l.value),
            external_creepage_mm: r
                .ruled(t, key!(raw_t.external_creepage_mm))
                .map(|l| l.value),
            distance_through_insulation_mm: r
                .ruled(t, key!(raw_t.distance_through_insulation_mm))
                .map(|l| l.value),
            thin_layer_rated: r
                .boolean(t, key!(raw_t.thin_layer_rated))
                .is_some_and(|l| l.value),
            insulation_system: r
                .word::<InsulationSystem>(t, key!(raw_t.insulation_system))
                .map(|l| l.value.to_string()),
            tape_layers: r.ruled(t, key!(raw_t.tape_layers)).map(|l| l.value as u32),
            margin_mm: r.ruled(t, key!(raw_t.margin_mm)).map(|l| l.value),
            thermal_class: r
                .word::<ThermalClassLetter>(t, key!(raw_t.thermal_class))
                .map(|l| l.value.to_string()),
            hot_spot_c: r.ruled(t, key!(raw_t.hot_spot_c)).map(|l| l.value),
        };
        if let Some(reference) = &reference
            && !seen.insert(reference.value.clone())
        {
            r.error(
                &reference.span,
                format!("{}.ref", t.path),
                format!("part \"{}\" is declared twice", reference.value),
            );
            continue;
        }
        let (Some(reference), Some(kind)) = (reference, kind) else {
            continue;
        };
        let kind = kind.value;
        parts.push(Part {
            reference: reference.value,
            kind,
            description,
            ratings,
            span: t.span.clone(),
        });
    }
    (parts, seen)
}

/// Assumptions that apply to several barriers are reported once, listing them.
#[derive(Default)]
struct BarrierDefaults {
    material: Vec<String>,
    field: Vec<String>,
    printed_board: Vec<String>,
    board: Vec<String>,
}

fn read_barriers(
    r: &mut Reader,
    root: &TableAt,
    raw_root: &RawProject,
    circuit_ids: &BTreeSet<String>,
    part_refs: &BTreeSet<String>,
    assumptions: &mut Vec<String>,
) -> Vec<Barrier> {
    let tables = r.table_array(root, key!(raw_root.barrier));
    let circuit_set = circuit_ids;
    let part_set = part_refs;
    let circuit_ids: Vec<&str> = circuit_ids.iter().map(String::as_str).collect();
    let part_refs: Vec<&str> = part_refs.iter().map(String::as_str).collect();
    let mut seen = BTreeSet::new();
    let mut barriers = Vec::new();
    let mut defaults = BarrierDefaults::default();
    for (t, raw_t) in &tables {
        let problems_before = r.problems.len();
        let mut key_spans = BTreeMap::new();
        let mut keep = |key: &'static str, span: &Span| {
            key_spans.insert(key, span.clone());
        };
        let id = r.required_string(t, key!(raw_t.id));
        let between = read_between(r, t, raw_t, circuit_set, &circuit_ids);
        let grade = r.required_word::<Grade>(t, key!(raw_t.grade));
        let rms = r.required_ruled(t, key!(raw_t.working_rms_v));
        let peak = r.ruled(t, key!(raw_t.working_peak_v));
        let transient = r.ruled(t, key!(raw_t.transient_v));
        let frequency = r.ruled(t, key!(raw_t.working_frequency_hz));
        let group = r.word::<MaterialGroup>(t, key!(raw_t.material_group));
        let cti = r.ruled(t, key!(raw_t.cti));
        let printed = r.boolean(t, key!(raw_t.printed_board));
        let field = r.word::<Field>(t, key!(raw_t.field));
        let conductor = r.word::<BoardConductor>(t, key!(raw_t.board_conductor));
        let coating = r.word::<BoardCoating>(t, key!(raw_t.board_coating));
        let clearance = r.ruled(t, key!(raw_t.clearance_mm));
        let creepage = r.ruled(t, key!(raw_t.creepage_mm));
        let slot = r.ruled(t, key!(raw_t.slot_width_mm));
        let bridged = r.string_list(t, key!(raw_t.bridged_by));
        let description = r.string(t, key!(raw_t.description)).map(|l| l.value);

        if let (Some(group), Some(cti)) = (&group, &cti) {
            r.error_with_help(
                &cti.span,
                format!("{}.cti", t.path),
                format!(
                    "both material_group = \"{}\" and cti are given",
                    group.value
                ),
                "give one of them: the material group follows from the CTI",
            );
        }
        if let (Some(rms), Some(peak)) = (&rms, &peak)
            && peak.value < rms.value
        {
            r.error(
                &peak.span,
                format!("{}.working_peak_v", t.path),
                format!(
                    "{} V is below working_rms_v = {} V; a peak is never below the rms value",
                    crate::text::exact_number(peak.value),
                    crate::text::exact_number(rms.value)
                ),
            );
        }
        let mut bridged_by = Vec::new();
        if let Some(list) = &bridged {
            let mut listed = BTreeSet::new();
            for item in &list.value {
                if !listed.insert(item.value.as_str()) {
                    r.error(
                        &item.span,
                        format!("{}.bridged_by", t.path),
                        format!("part \"{}\" is listed twice", item.value),
                    );
                } else if part_set.contains(&item.value) {
                    bridged_by.push(item.value.clone());
                } else {
                    unknown_reference(
                        r,
                        &item.span,
                        &format!("{}.bridged_by", t.path),
                        "part",
                        &item.value,
                        &part_refs,
                        "[[part]] ref",
                    );
                }
            }
        }
        if let Some(id) = &id
            && !seen.insert(id.value.clone())
        {
            r.error(
                &id.span,
                format!("{}.id", t.path),
                format!("barrier id \"{}\" is declared twice", id.value),
            );
        }
        if r.problems.len() > problems_before {
            continue;
        }
        let (Some(id), Some(between), Some(grade), Some(rms)) = (id, between, grade, rms) else {
            continue;
        };
        for (key, span) in [
            ("working_rms_v", Some(&rms.span)),
            ("working_peak_v", peak.as_ref().map(|l| &l.span)),
            ("transient_v", transient.as_ref().map(|l| &l.span)),
            ("cti", cti.as_ref().map(|l| &l.span)),
            ("material_group", group.as_ref().map(|l| &l.span)),
            ("clearance_mm", clearance.as_ref().map(|l| &l.span)),
            ("creepage_mm", creepage.as_ref().map(|l| &l.span)),
            ("grade", Some(&grade.span)),
        ] {
            if let Some(span) = span {
                keep(key, span);
            }
        }
        let material = match (group, cti) {
            (Some(g), _) => Material::Group(g.value),
            (None, Some(c)) => Material::Cti(c.value),
            (None, None) => {
                defaults.material.push(id.value.clone());
                Material::Unstated
            }
        };
        if field.is_none() {
            defaults.field.push(id.value.clone());
        }
        if printed.is_none() {
            defaults.printed_board.push(id.value.clone());
        }
        let grade = grade.value;
        let printed_board = printed.is_some_and(|l| l.value);
        if grade == Grade::Functional && printed_board && (conductor.is_none() || coating.is_none())
        {
            defaults.board.push(id.value.clone());
        }
        barriers.push(Barrier {
            id: id.value,
            between,
            grade,
            working_rms_v: rms.value,
            working_peak_v: peak.map(|l| l.value),
            transient_v: transient.map(|l| l.value),
            working_frequency_hz: frequency.map(|l| l.value),
            material,
            printed_board,
            // Absent keys take the defaults the assumptions above name.
            field: field.map_or(Field::Inhomogeneous, |l| l.value),
            board: BoardSpacing {
                conductor: conductor.map_or(BoardConductor::OuterLayer, |l| l.value),
                coating: coating.map_or(BoardCoating::None, |l| l.value),
            },
            clearance_mm: clearance.map(|l| l.value),
            creepage_mm: creepage.map(|l| l.value),
            slot_width_mm: slot.map(|l| l.value),
            bridged_by,
            description,
            span: t.span.clone(),
            key_spans,
        });
    }
    let list = |ids: &[String]| ids.join(", ");
    if !defaults.material.is_empty() {
        assumptions.push(format!(
            "Material group IIIb, the least favourable, for barriers without material_group or cti: {}.",
            list(&defaults.material)
        ));
    }
    if !defaults.field.is_empty() {
        assumptions.push(format!(
            "Inhomogeneous field (Case A, the larger clearances) for barriers without field: {}.",
            list(&defaults.field)
        ));
    }
    if !defaults.printed_board.is_empty() {
        assumptions.push(format!(
            "Not on a printed board (general creepage columns) for barriers without printed_board: {}.",
            list(&defaults.printed_board)
        ));
    }
    if !defaults.board.is_empty() {
        assumptions.push(format!(
            "Outer layer, uncoated (IPC-2221B column B2, or B3 above 3050 m) where board_conductor or board_coating is not set: {}.",
            list(&defaults.board)
        ));
    }
    barriers
}

fn read_between(
    r: &mut Reader,
    t: &TableAt,
    raw_t: &RawBarrier,
    circuit_set: &BTreeSet<String>,
    circuit_ids: &[&str],
) -> Option<[String; 2]> {
    if raw_t.between.is_none() {
        r.missing(
            t,
            "between",
            "two circuit ids, e.g. [\"primary\", \"output\"]",
        );
        return None;
    }
    let list = r.string_list(t, key!(raw_t.between))?;
    let path = format!("{}.between", t.path);
    if list.value.len() != 2 {
        r.error(
            &list.span,
            path,
            format!(
                "names {} circuits; expected exactly two circuit ids",
                list.value.len()
            ),
        );
        return None;
    }
    let mut ok = true;
    for item in &list.value {
        if !circuit_set.contains(&item.value) {
            unknown_reference(
                r,
                &item.span,
                &path,
                "circuit",
                &item.value,
                circuit_ids,
                "[[circuit]] id",
            );
            ok = false;
        }
    }
    if list.value[0].value == list.value[1].value {
        r.error(
            &list.span,
            path,
            format!(
                "names circuit \"{}\" twice; a barrier separates two different circuits",
                list.value[0].value
            ),
        );
        return None;
    }
    ok.then(|| [list.value[0].value.clone(), list.value[1].value.clone()])
}

/// Above this many declared names, an unknown reference gets no suggestion.
const MAX_SUGGESTION_CANDIDATES: usize = 2000;
/// Above this many, the declared names are not listed in the message.
const MAX_LISTED_CANDIDATES: usize = 20;

fn unknown_reference(
    r: &mut Reader,
    span: &Span,
    path: &str,
    what: &str,
    name: &str,
    known: &[&str],
    declared_as: &str,
) {
    let message = format!("{what} \"{name}\" is not declared (no {declared_as} with that name)");
    // A suggestion compares the name with every declared one, and the list of them is
    // printed whole: both only where there are few, so that many unknown references in a
    // large design cost neither time nor megabytes of messages.
    if known.len() > MAX_SUGGESTION_CANDIDATES {
        r.error(span, path, message);
        return;
    }
    if known.len() > MAX_LISTED_CANDIDATES {
        match suggest(name, known) {
            Some(best) => {
                r.error_with_help(span, path, message, format!("did you mean \"{best}\"?"))
            }
            None => r.error(span, path, message),
        }
        return;
    }
    match suggest(name, known) {
        Some(best) => r.error_with_help(span, path, message, format!("did you mean \"{best}\"?")),
        None if known.is_empty() => r.error(span, path, message),
        None => r.error_with_help(span, path, message, format!("declared: {}", one_of(known))),
    }
}
