//! The insulation parts of the page (`report.md.j2`): barriers, electric strength tests,
//! isolation paths, bridging parts and the barriers' derivations.

use super::{Md, present};
use crate::parts::BridgeResult;
use crate::report::Report;
use crate::spacing::BarrierResult;

/// What the barrier's insulation is called: its means of protection (IEC 60601-1) or grade.
fn means_or_grade(b: &BarrierResult) -> Option<&'static str> {
    b.means_of_protection.filter(|m| !m.is_empty())
}

pub(super) fn barriers(md: &mut Md, r: &Report) {
    md.s("## Barriers\n");
    if r.barriers.is_empty() {
        md.s("\nNo barriers are declared.\n");
        return;
    }
    md.s("\n| barrier | between | grade | working V rms | clearance required / laid out / margin, mm | creepage required / laid out / margin, mm | verdict |\n|---|---|---|---:|---|---|---|\n");
    for (i, b) in r.barriers.iter().enumerate() {
        md.s("| ");
        md.id(&b.id);
        md.anchor(&format!("barrier-{}", i + 1));
        md.s(" | ");
        md.id(&b.between[0]);
        md.s(" – ");
        md.id(&b.between[1]);
        md.s(" | ");
        match means_or_grade(b) {
            Some(m) => md.text(&format!("{m} (as {})", b.grade.as_str())),
            None => md.text(b.grade.as_str()),
        }
        md.s(" | ");
        md.fig(b.working_rms_v);
        md.s(" | ");
        md.fig(b.required_clearance_mm);
        md.s(" / ");
        md.laid_out(
            b.clearance_mm,
            b.measured_clearance_mm,
            b.judged_clearance_mm,
        );
        md.s(" / ");
        md.signed(b.clearance_margin_mm);
        md.s(" | ");
        md.fig(b.required_creepage_mm);
        md.s(" / ");
        md.laid_out(b.creepage_mm, b.measured_creepage_mm, b.judged_creepage_mm);
        md.s(" / ");
        md.signed(b.creepage_margin_mm);
        md.s(" | ");
        md.text(&crate::report::render::symbol(b.verdict.as_str()));
        md.s(" **");
        md.text(&b.verdict.as_str().to_uppercase());
        md.s("** |\n");
    }
    md.s("\nEach barrier's derivation (table rows, multipliers, rounding) is under \"Derivations\".\n");
}

pub(super) fn strength_tests(md: &mut Md, r: &Report) {
    if r.barriers.is_empty() {
        return;
    }
    md.s("\n## Electric strength tests\n\nBy ");
    md.text(r.design.standard_title);
    md.s("; none where no test applies or the standard's table is not carried, with the reason.\n\n| barrier | insulation | test, V rms a.c. | test, V peak or d.c. | from |\n|---|---|---:|---:|---|\n");
    for b in &r.barriers {
        md.s("| ");
        md.id(&b.id);
        md.s(" | ");
        md.text(means_or_grade(b).unwrap_or(b.grade.as_str()));
        md.s(" | ");
        fig_or_none(md, b.test_v_rms);
        md.s(" | ");
        fig_or_none(md, b.test_v_dc);
        md.s(" | ");
        md.text(&b.test_v_basis);
        md.s(" |\n");
    }
}

fn fig_or_none(md: &mut Md, x: Option<f64>) {
    match x {
        Some(x) => md.fig(x),
        None => md.s("none"),
    }
}

pub(super) fn isolation(md: &mut Md, r: &Report) {
    md.s("## Isolation\n");
    let Some(iso) = &r.isolation else {
        md.s("\n");
        return;
    };
    md.s("\nProtection class ");
    md.text(iso.protection_class.as_str());
    md.s(": ");
    md.int(iso.hazardous_count);
    md.s(" hazardous and ");
    md.int(iso.accessible_count);
    md.s(" accessible circuit(s); every pair is judged on its weakest path");
    if iso.pair_count > iso.pairs.len() as u64 {
        md.s(": each accessible circuit is shown once with its weakest path from any hazardous circuit (");
        md.int(iso.pair_count);
        md.s(" pairs in all");
        if iso.pairs_without_barrier > 0 {
            md.s(", ");
            md.int(iso.pairs_without_barrier);
            md.s(" of them with no declared barrier");
        }
        md.s(")");
    }
    md.s(".\n");
    if !iso.pairs.is_empty() {
        md.s("\n| hazardous | accessible | weakest path | provides | needs | earth relied on | verdict |\n|---|---|---|---|---|---|---|\n");
        for (i, p) in iso.pairs.iter().enumerate() {
            md.s("| ");
            md.id(&p.hazardous);
            md.anchor(&format!("pair-{}", i + 1));
            md.s(" | ");
            md.id(&p.accessible);
            md.s(" | ");
            match &p.path {
                Some(path) => md.id(&path.description),
                None => md.s("none declared"),
            }
            md.s(" | ");
            md.text(&p.provides);
            md.s(" | ");
            md.text(&p.needs);
            md.s(" | ");
            match present(&p.earth) {
                Some(earth) => md.id(earth),
                None => md.s("none"),
            }
            md.s(" | ");
            md.verdict(md.view.pair_verdicts[i]);
            md.s(" |\n");
        }
        md.s("\nThe verdict is the path's grade against what the protection class needs, and then the worst verdict of the barriers along it.\n");
    }
    if let Some(means) = &iso.means {
        md.s("\nMeans of protection (IEC 60601-1), counted along the weakest path from the mains: an applied part needs 2 MOPP; another accessible circuit 2 MOOP, or 1 MOOP plus protective earth; a MOPP counts as a MOOP too.\n");
        if means.is_empty() {
            md.s("\nNo applied part or accessible circuit is reached from a mains circuit through declared barriers.\n");
        } else {
            md.s(
                "\n| mains | circuit | weakest path | provides | needs |\n|---|---|---|---|---|\n",
            );
            for m in means {
                md.s("| ");
                md.id(&m.mains);
                md.s(" | ");
                md.id(&m.circuit);
                if m.applied_part {
                    md.s(" (applied part)");
                }
                md.s(" | ");
                md.id(&m.description);
                md.s(" | ");
                md.text(&m.provides_words);
                md.s(" | ");
                md.id(&m.needs_words);
                md.s(" |\n");
            }
        }
        md.s("\n");
    }
    md.s("\nStructure (circuits and the barriers between them):\n\n```text\n");
    // Marked safe by the template: the diagram is placed in a code block as it is.
    md.s(&iso.diagram);
    md.s("```\n");
    if iso.diagram_truncated {
        md.s("\nThe drawing is cut short (depth or size); the JSON report lists every barrier in `isolation.structure`.\n");
    }
    md.s("\n");
}

pub(super) fn bridges(md: &mut Md, r: &Report) {
    md.s("\n## Bridging parts\n");
    if r.bridges.is_empty() {
        md.s("\nNo part is listed as bridging a barrier.\n\n");
        return;
    }
    md.s("\n| barrier | part | kind | grade | declared ratings | needed | verdict |\n|---|---|---|---|---|---|---|\n");
    for (i, b) in r.bridges.iter().enumerate() {
        md.s("| ");
        md.id(&b.barrier);
        md.s(" | ");
        md.id(&b.part);
        md.anchor(&format!("part-{}", i + 1));
        md.s(" | ");
        md.text(b.kind.as_str());
        md.s(" | ");
        md.text(b.grade.as_str());
        md.s(" | ");
        let declared = declared_ratings(b);
        if declared.is_empty() {
            md.text("none declared");
        } else {
            md.text(&declared.join("; "));
        }
        md.s(" | ");
        md.text(&needed_ratings(b).join("; "));
        md.s(" | ");
        md.verdict(md.view.bridge_verdicts[i]);
        md.s(" |\n");
    }
    md.s("\nThe verdict of a part is the worst finding that names it (see \"Open items\").\n\n");
}

/// A number as the `num` filter prints it inside a phrase.
fn num(x: f64) -> String {
    crate::text::figure(x)
}

/// `num(x)`, or "not declared".
fn num_or_not_declared(x: Option<f64>) -> String {
    x.map_or_else(|| "not declared".to_string(), num)
}

/// The ratings a bridging part declares, each as a phrase.
fn declared_ratings(b: &BridgeResult) -> Vec<String> {
    let mut declared = Vec::new();
    if let Some(subclass) = present(&b.subclass) {
        let series = if b.count_in_series > 1 {
            format!(" x{} in series", b.count_in_series)
        } else {
            String::new()
        };
        declared.push(format!("{subclass}{series}"));
    }
    if let Some(c) = b.capacitance_nf {
        declared.push(format!("{} nF", num(c)));
    }
    if let Some(v) = b.rated_ac_v {
        declared.push(format!("{} V ac", num(v)));
    }
    if let Some(v) = b.isolation_test_v_rms {
        declared.push(format!("test {} V rms", num(v)));
    }
    if b.external_clearance_mm.is_some() || b.external_creepage_mm.is_some() {
        declared.push(format!(
            "package clearance {} / creepage {} mm",
            num_or_not_declared(b.external_clearance_mm),
            num_or_not_declared(b.external_creepage_mm)
        ));
    }
    if let Some(d) = b.distance_through_insulation_mm {
        let rated = if b.thin_layer_rated {
            ", thin layers rated"
        } else {
            ""
        };
        declared.push(format!("distance through insulation {} mm{rated}", num(d)));
    }
    if let Some(system) = present(&b.insulation_system) {
        let layers = b
            .tape_layers
            .map_or_else(String::new, |n| format!(", {n} tape layers"));
        declared.push(format!("{system}{layers}"));
    }
    if let Some(class) = present(&b.thermal_class) {
        let hot = b
            .hot_spot_c
            .map_or_else(String::new, |c| format!(", hot spot {} °C", num(c)));
        declared.push(format!("class {class}{hot}"));
    }
    declared
}

/// What the barrier needs of a part bridging it, each as a phrase.
fn needed_ratings(b: &BridgeResult) -> Vec<String> {
    let mut needed = Vec::new();
    if !b.subclass_bridges.is_empty() {
        needed.push(format!(
            "subclass may bridge {}",
            b.subclass_bridges.join(", ")
        ));
    }
    if let Some(v) = b.required_test_v_rms {
        needed.push(format!("test {} V rms", num(v)));
    } else if let Some(from) = present(&b.required_test_v_from) {
        needed.push(format!("test not computed: from {from}"));
    }
    needed.push(format!(
        "clearance {} / creepage {} mm",
        num(b.required_clearance_mm),
        num(b.required_creepage_mm)
    ));
    if b.distance_through_insulation_mm.is_some() {
        needed.push(format!(
            "distance through insulation {} mm",
            num(b.min_distance_through_insulation_mm)
        ));
    }
    if b.tape_layers.is_some() {
        needed.push(format!("{} tape layers", b.min_tape_layers));
    }
    if let Some(c) = b.thermal_class_max_c {
        needed.push(format!("hot spot within {} °C", num(c)));
    }
    needed
}

/// A template's truth of an optional figure: present and not zero.
fn nonzero(x: Option<f64>) -> Option<f64> {
    x.filter(|x| *x != 0.0)
}

pub(super) fn derivations(md: &mut Md, r: &Report) {
    md.s("## Derivations\n");
    for b in &r.barriers {
        md.s("\n### Derivation: ");
        md.id(&b.id);
        md.s("\n\n");
        md.text(&capitalize(b.grade.as_str()));
        md.s(" insulation between ");
        md.id(&b.between[0]);
        md.s(" and ");
        md.id(&b.between[1]);
        md.s(", ");
        md.fig(b.working_rms_v);
        md.s(" V rms");
        if let Some(peak) = nonzero(b.working_peak_v) {
            md.s(", ");
            md.fig(peak);
            md.s(" V peak");
        }
        md.s("; method ");
        md.text(b.method);
        if let Some(impulse) = nonzero(b.rated_impulse_v) {
            md.s(", rated impulse ");
            md.fig(impulse);
            md.s(" V");
        }
        if let Some(group) = b.material_group.filter(|g| !g.is_empty()) {
            md.s(", material group ");
            md.text(group);
        }
        md.s(", creepage column ");
        md.text(&b.creepage_column);
        md.s(".\n");
        clearance_set_by(md, b);
        if let Some(ff) = &b.functional_figures {
            md.s("\nFunctional insulation on the board: creepage table ");
            md.fig(ff.creepage_table_mm);
            md.s(" mm, IPC-2221B column ");
            md.text(&ff.ipc2221b_column);
            md.s(" ");
            md.fig(ff.ipc2221b_spacing_mm);
            md.s(" mm; the larger is required. A shortfall is a warning: the end-product standard may accept it after a fault test (the functional insulation short-circuited).\n");
        }
        if let Some(dp) = &b.double_parts {
            md.s("\nDouble insulation parts: basic ");
            md.fig(dp.basic_clearance_mm);
            md.s(" mm clearance / ");
            md.fig(dp.basic_creepage_mm);
            md.s(" mm creepage; supplementary ");
            md.fig(dp.supplementary_clearance_mm);
            md.s(" mm / ");
            md.fig(dp.supplementary_creepage_mm);
            md.s(" mm.\n");
        }
        md.s("\nClearance:\n");
        md.steps(&b.derivation.clearance, true);
        md.s("\n\nCreepage:\n");
        md.steps(&b.derivation.creepage, true);
        md.s("\n\nElectric strength:\n");
        md.steps(&b.derivation.electric_strength, true);
        md.s("\n");
    }
    md.s("\n");
}

/// The line saying what set the required clearance and creepage.
fn clearance_set_by(md: &mut Md, b: &BarrierResult) {
    md.s("Clearance set by: ");
    md.text(b.clearance_governed_by);
    if let Some(transient) = b.transient_clearance_mm {
        if b.standard == "iec62368-1" {
            md.s(" (procedure 1, Table 10 at ");
            md.opt_fig(b.steady_state_peak_v);
            md.s(" V peak: ");
            md.opt_fig(b.steady_state_clearance_mm);
            md.s(" mm; procedure 2, Table 14 at ");
            md.opt_fig(b.rated_impulse_v);
            md.s(" V withstand: ");
            md.fig(transient);
            md.s(" mm)");
        } else {
            md.s(" (transient requirement ");
            md.fig(transient);
            md.s(" mm, steady-state requirement ");
            md.opt_fig(b.steady_state_clearance_mm);
            md.s(" mm, Table F.8 read at ");
            md.opt_fig(b.steady_state_peak_v);
            md.s(" V)");
        }
    }
    md.s("; creepage set by: ");
    md.text(b.creepage_governed_by);
    md.s(".\n");
}

/// The first letter upper case, the rest lower case (the `capitalize` filter).
fn capitalize(word: &str) -> String {
    let mut chars = word.chars();
    match chars.next() {
        Some(first) => first
            .to_uppercase()
            .chain(chars.flat_map(char::to_lowercase))
            .collect(),
        None => String::new(),
    }
}
