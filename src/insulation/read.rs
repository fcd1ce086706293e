//! Reads and validates the insulation area's part of the project file, `[[circuit]]`,
//! `[[part]]`, `[[barrier]]` and `[board]`, from its raw form (the raw types below) key by
//! key, so that every problem is reported at once with its line.

use std::collections::{BTreeMap, BTreeSet};

use schemars::JsonSchema;
use serde::Deserialize;

use crate::area::ProjectPart;
use crate::diag::{one_of, suggest};
use crate::input_limits::rule;
use crate::key;
use crate::project::*;
use crate::raw::{Flag, Num, Reader, Span, TableAt, Text, Texts, Word};

/// Reads the insulation area's tables into `part.inputs`.
pub(super) fn read_part(part: &mut ProjectPart) {
    let (r, root, raw_root) = (&mut part.r, &part.root, part.raw);
    let (circuits, circuit_ids) = read_circuits(r, root, raw_root);
    let (parts, part_refs) = read_parts(r, root, raw_root);
    let barriers = read_barriers(
        r,
        root,
        raw_root,
        &circuit_ids,
        &part_refs,
        &mut part.assumptions,
    );
    if circuits.is_empty() && raw_root.circuit.is_none() {
        r.missing(root, "circuit", "at least one [[circuit]] table");
    }
    let board = read_board(r, root, raw_root);
    part.inputs.circuits = circuits;
    part.inputs.parts = parts;
    part.inputs.barriers = barriers;
    part.inputs.board = board;
}

/// `[board]`.
#[derive(Debug, Deserialize, JsonSchema)]
#[serde(deny_unknown_fields)]
pub struct RawBoard {
    /// Gerber X2 files (copper layers, profile, drill and rout), relative to the project file
    /// (required).
    pub files: Key<Texts>,
    /// Board thickness in millimetres; default 1.6.
    pub thickness_mm: Key<Num<rule::ThicknessMm>>,
}

/// One `[[circuit]]`.
#[derive(Debug, Deserialize, JsonSchema)]
#[serde(deny_unknown_fields)]
pub struct RawCircuit {
    /// Unique id, referred to by barriers (required).
    pub id: Key<Text>,
    /// "mains", "hazardous" or "safe" (extra-low voltage) (required).
    pub kind: Key<Word<CircuitKind>>,
    /// Whether a person can touch it (or metal bonded to it) (default false).
    pub accessible: Key<Flag>,
    /// Whether it is bonded to protective earth (default false).
    pub earthed: Key<Flag>,
    /// Whether it is an applied part (IEC 60601-1: the part a patient touches); under
    /// `iec60601-1` it needs two means of patient protection (2 MOPP) from the mains; under
    /// the other standards it changes nothing (default false).
    pub applied_part: Key<Flag>,
    /// Free text for the reader of the report.
    pub description: Key<Text>,
    /// Net names of this circuit as the board's files carry them (`.N`).
    pub nets: Key<Texts>,
}

/// One `[[barrier]]`.
#[derive(Debug, Deserialize, JsonSchema)]
#[serde(deny_unknown_fields)]
pub struct RawBarrier {
    /// Unique id (required).
    pub id: Key<Text>,
    /// The two circuit ids it separates (required).
    pub between: Key<Texts>,
    /// Insulation grade, or under IEC 60601-1 a means of protection (required).
    pub grade: Key<Word<crate::standards::GradeWord>>,
    /// Working voltage, rms, in volts (required).
    pub working_rms_v: Key<Num<rule::VoltageV>>,
    /// Steady-state or recurring peak working voltage in volts (default: the peak of a
    /// sinusoid of working_rms_v).
    pub working_peak_v: Key<Num<rule::VoltageV>>,
    /// Declared transient overvoltage in volts, instead of the rated impulse voltage from the
    /// mains (default: from the overvoltage category).
    pub transient_v: Key<Num<rule::TransientV>>,
    /// Frequency of the working voltage in hertz; above 30 kHz the figures do not hold (a
    /// warning).
    pub working_frequency_hz: Key<Num<rule::WorkingFrequencyHz>>,
    /// Material group of the insulation: "I", "II", "IIIa" or "IIIb"; or give `cti`, not
    /// both (default "IIIb").
    pub material_group: Key<Word<MaterialGroup>>,
    /// Comparative tracking index of the insulating material, instead of material_group.
    pub cti: Key<Num<rule::Cti>>,
    /// On a printed board: the printed-wiring creepage columns where allowed (default false).
    pub printed_board: Key<Flag>,
    /// Electric field: "inhomogeneous" (default, Case A) or "homogeneous".
    pub field: Key<Word<Field>>,
    /// Where a functional spacing on a board sits, the IPC-2221B column (default
    /// "outer-layer").
    pub board_conductor: Key<Word<BoardConductor>>,
    /// The board's coating, the IPC-2221B column (default "none").
    pub board_coating: Key<Word<BoardCoating>>,
    /// Clearance as laid out, in millimetres; absent = not yet known.
    pub clearance_mm: Key<Num<rule::DistanceMm>>,
    /// Creepage distance as laid out, in millimetres; absent = not yet known.
    pub creepage_mm: Key<Num<rule::DistanceMm>>,
    /// Width of a slot or groove in the creepage path, in millimetres; too narrow to count
    /// is a warning.
    pub slot_width_mm: Key<Num<rule::SlotMm>>,
    /// Refs of the declared parts (`[[part]]`) that bridge it.
    pub bridged_by: Key<Texts>,
    /// Free text for the reader of the report.
    pub description: Key<Text>,
}

/// One `[[part]]`: a part that bridges a barrier, with its ratings.
#[derive(Debug, Deserialize, JsonSchema)]
#[serde(deny_unknown_fields)]
pub struct RawPart {
    /// Unique reference designator (required).
    #[serde(rename = "ref")]
    pub reference: Key<Text>,
    /// What kind of part it is (required).
    pub kind: Key<Word<PartKind>>,
    /// Free text for the reader of the report.
    pub description: Key<Text>,
    /// Capacitors: safety subclass.
    pub subclass: Key<Word<CapacitorSubclass>>,
    /// Capacitors: capacitance in nanofarads.
    pub capacitance_nf: Key<Num<rule::CapacitanceNf>>,
    /// Capacitors: rated a.c. voltage in volts.
    pub rated_ac_v: Key<Num<rule::VoltageV>>,
    /// Capacitors: this many identical ones in series stand for the part (default 1).
    pub count_in_series: Key<Num<rule::CountInSeries>>,
    /// Optocouplers and digital isolators: rated isolation test voltage (60 s), rms, in volts.
    pub isolation_test_v_rms: Key<Num<rule::TestVRms>>,
    /// Optocouplers and digital isolators: external clearance of the package in millimetres.
    pub external_clearance_mm: Key<Num<rule::DistanceMm>>,
    /// Optocouplers and digital isolators: external creepage distance of the package in
    /// millimetres.
    pub external_creepage_mm: Key<Num<rule::DistanceMm>>,
    /// Optocouplers and digital isolators: distance through insulation in millimetres.
    pub distance_through_insulation_mm: Key<Num<rule::ThicknessMm>>,
    /// The part meets the thin-layer rules for solid insulation (default false).
    pub thin_layer_rated: Key<Flag>,
    /// Transformers: how the windings are kept apart.
    pub insulation_system: Key<Word<InsulationSystem>>,
    /// Transformers: layers of insulating tape.
    pub tape_layers: Key<Num<rule::TapeLayers>>,
    /// Transformers: margin width on each side in millimetres, for margin-tape.
    pub margin_mm: Key<Num<rule::DistanceMm>>,
    /// Transformers: thermal class letter (IEC 60085).
    pub thermal_class: Key<Word<ThermalClassLetter>>,
    /// Transformers: hot-spot temperature in degrees Celsius.
    pub hot_spot_c: Key<Num<rule::TemperatureC>>,
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
        let applied_part = r.boolean(t, key!(raw_t.applied_part));
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
            || raw_t.applied_part.is_some() && applied_part.is_none()
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
            applied_part: applied_part.is_some_and(|l| l.value),
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
        let grade = r.required_word::<crate::standards::GradeWord>(t, key!(raw_t.grade));
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
        let (grade, means) = grade.value.split();
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
