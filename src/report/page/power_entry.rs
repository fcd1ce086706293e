//! The power-entry section of the page, as `templates/power_entry.md.j2` writes it.

use super::{Md, inputs, joined, present};
use crate::power_entry::{PowerEntryReport, Section};
use crate::report::Report;

pub(super) fn section(md: &mut Md, r: &Report) {
    md.s("## Power entry\n");
    let Some(pe) = &r.power_entry else {
        md.s("\nNot evaluated: the project has no input table (`input`).\n");
        return;
    };
    mains_line(md, pe);
    table(md, pe);
    if !pe.assumptions.is_empty() {
        md.s("\nPower-entry assumptions:\n\n");
        md.bullets(&pe.assumptions);
    }
    md.s("\n");
    if !pe.missing_ratings.is_empty() {
        md.s("\nNot declared, so not judged:\n\n");
        md.bullets(&pe.missing_ratings);
    }
    md.s("\n");
    for s in &pe.sections {
        topic(md, s);
    }
    md.s("\n");
}

fn mains_line(md: &mut Md, pe: &PowerEntryReport) {
    let m = &pe.mains;
    md.s("\nMains range used: ");
    md.fig(m.min_v);
    md.s(" V to ");
    md.fig(m.max_v);
    md.s(" V, ");
    md.fig(m.min_frequency_hz);
    md.s(" Hz");
    if m.min_frequency_hz != m.max_frequency_hz {
        md.s(" to ");
        md.fig(m.max_frequency_hz);
        md.s(" Hz");
    }
    md.s(" (crest of the highest voltage ");
    md.fig(m.max_peak_v);
    md.s(" V). Inrush limiter: ");
    md.text(pe.limiter.kind.as_str());
    md.s(". Touch-current limits: ");
    md.text(&pe.end_product_standard_title);
    md.s(".\n\n");
}

/// A figure with its unit, or "not computed".
fn computed(md: &mut Md, x: Option<f64>, unit: &str) {
    match x {
        Some(x) => {
            md.fig(x);
            md.s(unit);
        }
        None => md.s("not computed"),
    }
}

fn table(md: &mut Md, pe: &PowerEntryReport) {
    let v = &pe.verdicts;
    md.s("| quantity | value | verdict |\n|---|---:|---|\n| inrush peak at switch-on");
    if pe.inrush.model == "l-r-c" {
        md.s(" (through the filter's ");
        md.opt_fig(pe.inrush.filter_inductance_uh);
        md.s(" µH)");
    }
    md.s(" | ");
    md.fig(pe.inrush_peak_a);
    md.s(" A | ");
    md.verdict_in(v, "inrush_peak_a");
    md.s(" |\n| inrush pulse I²t | ");
    md.fig(pe.inrush_i2t_a2s);
    md.s(" A²s | ");
    md.verdict_in(v, "fuse_required_i2t_a2s");
    md.s(" |\n| energy into the limiter | ");
    match pe.limiter_energy_j {
        Some(j) => {
            md.fig(j);
            md.s(" J");
        }
        None => md.s("no limiter"),
    }
    md.s(" | ");
    md.verdict_in(v, "limiter_energy_j");
    md.s(" |\n| peak at a hot restart | ");
    md.fig(pe.hot_restart_peak_a);
    md.s(" A | ");
    md.verdict_in(v, "hot_restart_peak_a");
    md.s(" |\n| highest bulk capacitor voltage / rating | ");
    md.fig(pe.bulk_peak_v);
    md.s(" V / ");
    match pe.bulk_rated_v {
        Some(x) => {
            md.fig(x);
            md.s(" V");
        }
        None => md.s("not declared"),
    }
    md.s(" | ");
    md.verdict_in(v, "bulk_peak_v");
    md.s(" |\n| input RMS current | ");
    computed(md, pe.input_rms_a, " A");
    md.s(" | ");
    md.verdict_in(v, "fuse_max_operating_a");
    md.s(" |\n| repetitive peak current | ");
    computed(md, pe.repetitive_peak_a, " A");
    md.s(" | – |\n| power factor at low line | ");
    computed(md, pe.power_factor, "");
    md.s(" | – |\n| bulk valley / converter minimum | ");
    match pe.bulk_valley_v {
        Some(x) => {
            md.fig(x);
            md.s(" V / ");
            md.opt_fig(pe.min_bulk_v);
            md.s(" V");
        }
        None => md.s("not computed"),
    }
    md.s(" | ");
    md.verdict_in(v, "low_line.bulk_valley_v");
    md.s(" |\n| bulk ripple | ");
    computed(md, pe.bulk_ripple_v, " V");
    md.s(" | – |\n| hold-up time from the valley | ");
    computed(md, pe.hold_up_time_ms, " ms");
    md.s(" | – |\n");
    discharge_row(md, pe);
    md.s("| highest touch current | ");
    computed(md, pe.touch_current_ma, " mA");
    md.s(" | ");
    joined(md, &pe.touch, ", ", "–", |md, t| {
        md.verdict_in(&pe.verdicts, &format!("touch.{}", t.circuit));
    });
    md.s(" |\n");
}

fn discharge_row(md: &mut Md, pe: &PowerEntryReport) {
    md.s("| discharge time constant (");
    match pe.discharge.across_line_uf {
        Some(uf) => {
            md.fig(uf);
            md.s(" µF across the line");
        }
        None => md.s("capacitance not declared"),
    }
    md.s(") | ");
    computed(md, pe.discharge_time_constant_s, " s");
    md.s(" | ");
    if pe.verdicts.contains_key("discharge_time_constant_s") || pe.discharge.required {
        md.verdict_in(&pe.verdicts, "discharge_time_constant_s");
    } else {
        md.s("– not required");
    }
    md.s(" |\n");
}

/// One topic: shared inputs, the figures' table, their steps and the notes.
fn topic(md: &mut Md, s: &Section) {
    md.s("\n### ");
    md.text(&s.title);
    md.s("\n");
    if !s.inputs.is_empty() {
        md.s("\nInputs shared by the figures below: ");
        inputs(md, &s.inputs, "");
        md.s(".\n");
    }
    if !s.figures.is_empty() {
        md.s("\n| figure | value | formula | inputs | judged against | verdict |\n|---|---:|---|---|---|---|\n");
        for f in &s.figures {
            figure_row(md, f);
        }
        for (k, f) in s.figures.iter().filter(|f| !f.steps.is_empty()).enumerate() {
            if k == 0 {
                md.s("\nSteps:\n");
            }
            md.s("\n- ");
            md.text(&f.title);
            md.s(": ");
            joined(md, &f.steps, " ", "", |md, st| {
                md.text(&st.text);
                if let Some(rule) = present(&st.rule) {
                    md.s(" (rule ");
                    md.text(rule);
                    md.s(")");
                }
            });
        }
        md.s("\n");
    }
    for (k, n) in s.notes.iter().enumerate() {
        if k == 0 {
            md.s("\nNotes:\n");
        }
        md.s("\n- ");
        md.text(n);
    }
    md.s("\n");
}

fn figure_row(md: &mut Md, f: &crate::derivation::Derivation) {
    md.s("| ");
    md.text(&f.title);
    md.anchor(&format!("fig-{}", f.id));
    md.s(" | ");
    match f.value {
        Some(x) => {
            md.fig(x);
            if !f.unit.is_empty() {
                md.s(" ");
                md.text(&f.unit);
            }
        }
        None => {
            md.s("not computed");
            if let Some(why) = present(&f.not_computed_because) {
                md.s(": ");
                md.text(why);
            }
        }
    }
    md.s(" | ");
    md.text(&f.formula);
    md.s(" | ");
    inputs(md, &f.inputs, "see above");
    md.s(" | ");
    match present(&f.judged_against) {
        Some(against) => md.text(against),
        None => md.s("–"),
    }
    md.s(" | ");
    match f.verdict {
        Some(v) => md.verdict(v.as_str()),
        None => md.s("–"),
    }
    md.s(" |\n");
}
