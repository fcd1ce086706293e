//! Reads and validates a project file in one pass, collecting every problem.

use std::collections::{BTreeMap, BTreeSet};

use super::*;
use crate::diag::{Problems, Source, one_of, suggest};
use crate::input_limits::{
    ALTITUDE_M, CAPACITANCE_NF, COUNT_IN_SERIES, CTI, DISTANCE_MM, MAINS_FREQUENCY_HZ,
    POLLUTION_DEGREE, SLOT_MM, TAPE_LAYERS, TEMPERATURE_C, TEST_V_RMS, THICKNESS_MM, TRANSIENT_V,
    VOLTAGE_V, WORKING_FREQUENCY_HZ,
};
use crate::toml_read::{Reader, TableRef, parse_document};

const TOP_KEYS: &[&str] = &[
    "design",
    "environment",
    "mains",
    "circuit",
    "barrier",
    "part",
    "input",
    "converter",
    "emc",
];
const DESIGN_KEYS: &[&str] = &[
    "name",
    "revision",
    "protection_class",
    "creepage_between_rows",
    "altitude_between_rows",
    "standard",
];
const ENVIRONMENT_KEYS: &[&str] = &["pollution_degree", "overvoltage_category", "altitude_m"];
const MAINS_KEYS: &[&str] = &["nominal_v", "max_v", "min_v", "frequency_hz"];
const CIRCUIT_KEYS: &[&str] = &["id", "kind", "accessible", "earthed", "description"];
const BARRIER_KEYS: &[&str] = &[
    "id",
    "between",
    "grade",
    "working_rms_v",
    "working_peak_v",
    "transient_v",
    "working_frequency_hz",
    "material_group",
    "cti",
    "printed_board",
    "field",
    "board_conductor",
    "board_coating",
    "clearance_mm",
    "creepage_mm",
    "slot_width_mm",
    "bridged_by",
    "description",
];
const PART_KEYS: &[&str] = &[
    "ref",
    "kind",
    "description",
    "subclass",
    "capacitance_nf",
    "rated_ac_v",
    "count_in_series",
    "isolation_test_v_rms",
    "external_clearance_mm",
    "external_creepage_mm",
    "distance_through_insulation_mm",
    "thin_layer_rated",
    "insulation_system",
    "tape_layers",
    "margin_mm",
    "thermal_class",
    "hot_spot_c",
];

const PART_KIND_WORDS: &[&str] = &[
    "y-capacitor",
    "x-capacitor",
    "optocoupler",
    "digital-isolator",
    "transformer",
    "resistor",
    "relay",
    "other",
];

/// Reads a project from its text. `source.name` is used in messages as given.
pub fn read_project(source: &Source) -> Result<Project, Problems> {
    let doc = parse_document(source)?;
    let mut r = Reader::new(source);
    let root = r.root(&doc, TOP_KEYS);
    let mut assumptions = Vec::new();

    let design = read_design(&mut r, &root, &mut assumptions);
    let mut key_spans = BTreeMap::new();
    let environment = read_environment(&mut r, &root, &mut assumptions, &mut key_spans);
    let mains = read_mains(&mut r, &root, &mut key_spans);
    let (circuits, circuit_ids) = read_circuits(&mut r, &root);
    let (parts, part_refs) = read_parts(&mut r, &root);
    let barriers = read_barriers(&mut r, &root, &circuit_ids, &part_refs, &mut assumptions);
    if circuits.is_empty() && !r.has(&root, "circuit") {
        r.missing(&root, "circuit", "at least one [[circuit]] table");
    }

    let mut not_evaluated = Vec::new();
    let (input, converter) = crate::power_entry::read(&mut r, &root, &mut not_evaluated);
    let emc = crate::emc::read(&mut r, &root, &mut not_evaluated);

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
        not_evaluated,
        key_spans,
    })
}

fn read_design(r: &mut Reader, root: &TableRef, assumptions: &mut Vec<String>) -> Option<Design> {
    let Some(t) = r.table(root, "design", DESIGN_KEYS) else {
        if !r.has(root, "design") {
            r.missing(
                root,
                "design",
                "a [design] table with name and protection_class",
            );
        }
        return None;
    };
    let name = r.required_string(&t, "name");
    let revision = r.string(&t, "revision").map(|l| l.value);
    let class = r.required_word(&t, "protection_class", &["I", "II", "III"]);
    let between = r.word(&t, "creepage_between_rows", &["next-row", "interpolate"]);
    let creepage_between_rows = match between.map(|l| l.value) {
        Some("interpolate") => BetweenRows::Interpolate,
        Some(_) => BetweenRows::NextRow,
        None => {
            assumptions.push(
                "Creepage between two table rows: the next higher row (creepage_between_rows not set in [design])."
                    .to_string(),
            );
            BetweenRows::NextRow
        }
    };
    let standard = r
        .word(&t, "standard", &crate::standards::Standard::WORDS)
        .and_then(|l| crate::standards::Standard::from_word(l.value));
    let altitude_between = r.word(&t, "altitude_between_rows", &["next-row", "interpolate"]);
    let altitude_between_rows = match altitude_between.map(|l| l.value) {
        Some("interpolate") => BetweenRows::Interpolate,
        Some(_) => BetweenRows::NextRow,
        None => BetweenRows::NextRow,
    };
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
    let protection_class = match class?.value {
        "I" => ProtectionClass::I,
        "II" => ProtectionClass::II,
        _ => ProtectionClass::III,
    };
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
    root: &TableRef,
    assumptions: &mut Vec<String>,
    key_spans: &mut BTreeMap<String, Span>,
) -> Option<Environment> {
    let t = r.table(root, "environment", ENVIRONMENT_KEYS);
    if t.is_none() && r.has(root, "environment") {
        return None;
    }
    let pd = t
        .as_ref()
        .and_then(|t| r.number(t, "pollution_degree", &POLLUTION_DEGREE));
    let ovc = t
        .as_ref()
        .and_then(|t| r.word(t, "overvoltage_category", &OvervoltageCategory::WORDS));
    let altitude = t
        .as_ref()
        .and_then(|t| r.number(t, "altitude_m", &ALTITUDE_M));
    if let Some(a) = &altitude {
        key_spans.insert("environment.altitude_m".to_string(), a.span.clone());
    }
    let stated = |key: &str| t.as_ref().is_some_and(|t| r.has(t, key));
    if !stated("pollution_degree") {
        assumptions.push("Pollution degree 2 (not stated in [environment]).".to_string());
    }
    if !stated("overvoltage_category") {
        assumptions.push("Overvoltage category II (not stated in [environment]).".to_string());
    }
    if !stated("altitude_m") {
        assumptions
            .push("Altitude up to 2000 m (altitude_m not stated in [environment]).".to_string());
    }
    // A stated but invalid value has been reported; fall back only for absent ones.
    if (stated("pollution_degree") && pd.is_none())
        || (stated("overvoltage_category") && ovc.is_none())
        || (stated("altitude_m") && altitude.is_none())
    {
        return None;
    }
    Some(Environment {
        pollution_degree: pd.map(|l| l.value as u8).unwrap_or(2),
        overvoltage_category: ovc
            .and_then(|l| OvervoltageCategory::from_word(l.value))
            .unwrap_or(OvervoltageCategory::II),
        altitude_m: altitude.map(|l| l.value).unwrap_or(2000.0),
    })
}

fn read_mains(
    r: &mut Reader,
    root: &TableRef,
    key_spans: &mut BTreeMap<String, Span>,
) -> Option<Mains> {
    let Some(t) = r.table(root, "mains", MAINS_KEYS) else {
        if !r.has(root, "mains") {
            r.missing(root, "mains", "a [mains] table with nominal_v");
        }
        return None;
    };
    let nominal = r.required_number(&t, "nominal_v", &VOLTAGE_V);
    let max_v = r.number(&t, "max_v", &VOLTAGE_V);
    let min_v = r.number(&t, "min_v", &VOLTAGE_V);
    let frequency = r.number(&t, "frequency_hz", &MAINS_FREQUENCY_HZ);
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
fn read_circuits(r: &mut Reader, root: &TableRef) -> (Vec<Circuit>, BTreeSet<String>) {
    let tables = r.table_array(root, "circuit", CIRCUIT_KEYS);
    let mut seen = BTreeSet::new();
    let mut circuits = Vec::new();
    for t in &tables {
        let id = r.required_string(t, "id");
        let kind = r.required_word(t, "kind", &["mains", "hazardous", "safe"]);
        let accessible = r.boolean(t, "accessible");
        let earthed = r.boolean(t, "earthed");
        let description = r.string(t, "description").map(|l| l.value);
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
        if r.has(t, "accessible") && accessible.is_none()
            || r.has(t, "earthed") && earthed.is_none()
        {
            continue;
        }
        let (Some(id), Some(kind)) = (id, kind) else {
            continue;
        };
        circuits.push(Circuit {
            id: id.value,
            kind: match kind.value {
                "mains" => CircuitKind::Mains,
                "hazardous" => CircuitKind::Hazardous,
                _ => CircuitKind::Safe,
            },
            accessible: accessible.is_some_and(|l| l.value),
            earthed: earthed.is_some_and(|l| l.value),
            description,
            span: t.span.clone(),
        });
    }
    (circuits, seen)
}

/// The parts that could be read, and every ref declared.
fn read_parts(r: &mut Reader, root: &TableRef) -> (Vec<Part>, BTreeSet<String>) {
    let tables = r.table_array(root, "part", PART_KEYS);
    let mut seen = BTreeSet::new();
    let mut parts = Vec::new();
    for t in &tables {
        let reference = r.required_string(t, "ref");
        let kind = r.required_word(t, "kind", PART_KIND_WORDS);
        let description = r.string(t, "description").map(|l| l.value);
        let ratings = PartRatings {
            subclass: r
                .word(t, "subclass", &["X1", "X2", "Y1", "Y2", "Y4"])
                .map(|l| l.value.to_string()),
            capacitance_nf: r
                .number(t, "capacitance_nf", &CAPACITANCE_NF)
                .map(|l| l.value),
            rated_ac_v: r.number(t, "rated_ac_v", &VOLTAGE_V).map(|l| l.value),
            count_in_series: r
                .number(t, "count_in_series", &COUNT_IN_SERIES)
                .map_or(1, |l| l.value as u32),
            isolation_test_v_rms: r
                .number(t, "isolation_test_v_rms", &TEST_V_RMS)
                .map(|l| l.value),
            external_clearance_mm: r
                .number(t, "external_clearance_mm", &DISTANCE_MM)
                .map(|l| l.value),
            external_creepage_mm: r
                .number(t, "external_creepage_mm", &DISTANCE_MM)
                .map(|l| l.value),
            distance_through_insulation_mm: r
                .number(t, "distance_through_insulation_mm", &THICKNESS_MM)
                .map(|l| l.value),
            thin_layer_rated: r.boolean(t, "thin_layer_rated").is_some_and(|l| l.value),
            insulation_system: r
                .word(
                    t,
                    "insulation_system",
                    &["triple-insulated-wire", "tape", "margin-tape"],
                )
                .map(|l| l.value.to_string()),
            tape_layers: r
                .number(t, "tape_layers", &TAPE_LAYERS)
                .map(|l| l.value as u32),
            margin_mm: r.number(t, "margin_mm", &DISTANCE_MM).map(|l| l.value),
            thermal_class: r
                .word(t, "thermal_class", &["A", "E", "B", "F", "H", "N", "R"])
                .map(|l| l.value.to_string()),
            hot_spot_c: r.number(t, "hot_spot_c", &TEMPERATURE_C).map(|l| l.value),
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
        let kind = match kind.value {
            "y-capacitor" => PartKind::YCapacitor,
            "x-capacitor" => PartKind::XCapacitor,
            "optocoupler" => PartKind::Optocoupler,
            "digital-isolator" => PartKind::DigitalIsolator,
            "transformer" => PartKind::Transformer,
            "resistor" => PartKind::Resistor,
            "relay" => PartKind::Relay,
            _ => PartKind::Other,
        };
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
    root: &TableRef,
    circuit_ids: &BTreeSet<String>,
    part_refs: &BTreeSet<String>,
    assumptions: &mut Vec<String>,
) -> Vec<Barrier> {
    let tables = r.table_array(root, "barrier", BARRIER_KEYS);
    let circuit_set = circuit_ids;
    let part_set = part_refs;
    let circuit_ids: Vec<&str> = circuit_ids.iter().map(String::as_str).collect();
    let part_refs: Vec<&str> = part_refs.iter().map(String::as_str).collect();
    let mut seen = BTreeSet::new();
    let mut barriers = Vec::new();
    let mut defaults = BarrierDefaults::default();
    for t in &tables {
        let problems_before = r.problems.len();
        let mut key_spans = BTreeMap::new();
        let mut keep = |key: &'static str, span: &Span| {
            key_spans.insert(key, span.clone());
        };
        let id = r.required_string(t, "id");
        let between = read_between(r, t, circuit_set, &circuit_ids);
        let grade = r.required_word(t, "grade", &crate::standards::GRADE_WORDS);
        let rms = r.required_number(t, "working_rms_v", &VOLTAGE_V);
        let peak = r.number(t, "working_peak_v", &VOLTAGE_V);
        let transient = r.number(t, "transient_v", &TRANSIENT_V);
        let frequency = r.number(t, "working_frequency_hz", &WORKING_FREQUENCY_HZ);
        let group = r.word(t, "material_group", &MaterialGroup::WORDS);
        let cti = r.number(t, "cti", &CTI);
        let printed = r.boolean(t, "printed_board");
        let field = r.word(t, "field", &["inhomogeneous", "homogeneous"]);
        let conductor = r.word(
            t,
            "board_conductor",
            &["outer-layer", "inner-layer", "component-lead"],
        );
        let coating = r.word(t, "board_coating", &["none", "polymer", "conformal"]);
        let clearance = r.number(t, "clearance_mm", &DISTANCE_MM);
        let creepage = r.number(t, "creepage_mm", &DISTANCE_MM);
        let slot = r.number(t, "slot_width_mm", &SLOT_MM);
        let bridged = r.string_list(t, "bridged_by");
        let description = r.string(t, "description").map(|l| l.value);

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
            (Some(g), _) => {
                Material::Group(MaterialGroup::from_word(g.value).unwrap_or(MaterialGroup::IIIb))
            }
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
        let means = crate::standards::Means::from_word(grade.value);
        let grade = match means {
            Some(m) => m.grade(),
            None => Grade::from_word(grade.value).unwrap_or(Grade::Reinforced),
        };
        let printed_board = printed.is_some_and(|l| l.value);
        if grade == Grade::Functional && printed_board && (conductor.is_none() || coating.is_none())
        {
            defaults.board.push(id.value.clone());
        }
        barriers.push(Barrier {
            id: id.value,
            between,
            grade,
            means,
            working_rms_v: rms.value,
            working_peak_v: peak.map(|l| l.value),
            transient_v: transient.map(|l| l.value),
            working_frequency_hz: frequency.map(|l| l.value),
            material,
            printed_board,
            field: match field.map(|l| l.value) {
                Some("homogeneous") => Field::Homogeneous,
                _ => Field::Inhomogeneous,
            },
            board: BoardSpacing {
                conductor: match conductor.map(|l| l.value) {
                    Some("inner-layer") => BoardConductor::InnerLayer,
                    Some("component-lead") => BoardConductor::ComponentLead,
                    _ => BoardConductor::OuterLayer,
                },
                coating: match coating.map(|l| l.value) {
                    Some("polymer") => BoardCoating::Polymer,
                    Some("conformal") => BoardCoating::Conformal,
                    _ => BoardCoating::None,
                },
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
    t: &TableRef,
    circuit_set: &BTreeSet<String>,
    circuit_ids: &[&str],
) -> Option<[String; 2]> {
    if !r.has(t, "between") {
        r.missing(
            t,
            "between",
            "two circuit ids, e.g. [\"primary\", \"output\"]",
        );
        return None;
    }
    let list = r.string_list(t, "between")?;
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
