//! The input EMC filter section of the page, as `templates/emc.md.j2` writes it.

use super::{Md, present};
use crate::emc::EmcReport;
use crate::report::Report;
use crate::report::render::CHART_COMMENT;

impl Md<'_> {
    /// A frequency in kHz, or "not computed" (the EMC template's `khz`).
    fn khz(&mut self, hz: Option<f64>) {
        match hz {
            Some(hz) => {
                self.fig(hz / 1000.0);
                self.s(" kHz");
            }
            None => self.s("not computed"),
        }
    }

    /// A figure with its unit, or "not computed".
    fn computed(&mut self, x: Option<f64>, unit: &str) {
        self.val(x, unit, "not computed");
    }
}

pub(super) fn section(md: &mut Md, r: &Report) {
    md.s("## Input EMC filter\n");
    let Some(emc) = &r.emc else {
        md.s("\nNot evaluated: the project has no EMC table (`emc`).\n");
        return;
    };
    opening(md, emc);
    figures(md, emc);
    if let Some(f) = &emc.filter {
        md.s("\nDeclared filter: differential-mode corner ");
        md.khz(f.dm_corner_hz);
        if let Some(z) = f.dm_characteristic_impedance_ohm {
            md.s(", characteristic impedance ");
            md.fig(z);
            md.s(" Ω");
        }
        md.s("; common-mode corner ");
        md.khz(f.cm_corner_hz);
        if let Some(n) = f.damping_ratio {
            md.s("; damping ");
            md.opt_fig(f.damping_resistance_ohm);
            md.s(" Ω with ");
            md.opt_fig(f.damping_capacitance_uf);
            md.s(" µF (n = ");
            md.fig(n);
            md.s(", optimum resistor ");
            md.opt_fig(f.optimum_damping_resistance_ohm);
            md.s(" Ω)");
        }
        md.s(".\n");
    }
    md.s("\n### Filter and converter (Middlebrook's criterion)\n\n");
    middlebrook(md, emc);
    md.s("\n### Noise before and after the filter\n\nAfter the filter: ");
    md.text(&emc.after_filter);
    md.s("\n");
    points(md, emc);
    md.s("\n");
    chart(md);
    md.s("\n### EMC assumptions\n");
    if emc.assumptions.is_empty() {
        md.s("\nNone: every EMC setting was stated.\n");
    } else {
        md.s("\n");
        md.bullets(&emc.assumptions);
    }
    md.s("\n### EMC derivation\n");
    let d = &emc.derivation;
    for (title, steps) in [
        ("Noise", &d.noise),
        ("Limit", &d.limit),
        ("Attenuation", &d.attenuation),
        ("Differential-mode corner", &d.dm_corner),
        ("Common-mode corner", &d.cm_corner),
        ("Y capacitance", &d.y_capacitance),
        ("Declared filter", &d.filter),
        ("Middlebrook's criterion", &d.middlebrook),
    ] {
        if steps.steps.is_empty() {
            continue;
        }
        md.s("\n");
        md.text(title);
        md.s(":\n");
        md.steps(steps, false);
        md.s("\n\n");
    }
    md.s("\n");
}

fn opening(md: &mut Md, emc: &EmcReport) {
    md.s("\nClass ");
    md.text(emc.limit_class.as_str());
    md.s(" conducted-emission limits on the mains port, ");
    md.fig(emc.band_hz[0] / 1000.0);
    md.s(" kHz to ");
    md.fig(emc.band_hz[1] / 1_000_000.0);
    md.s(" MHz, with a margin of ");
    md.fig(emc.margin_db);
    md.s(" dB below the limit. Noise to beat: ");
    match emc.noise_source {
        "prescan" => {
            md.int(emc.points.len());
            md.s(" prescan point(s) measured without the filter");
        }
        "estimate" => {
            md.s("estimated from the converter, ");
            md.int(emc.harmonics_evaluated);
            md.s(" harmonics evaluated (model under Derivation)");
        }
        _ => md.s("not known: no prescan points and no converter figures, so no attenuation or corner is computed"),
    }
    md.s(".\n");
    for gap in &emc.noise_gaps {
        md.s("\nNot estimated: ");
        md.text(gap);
        md.s(".\n");
    }
}

/// "declared X kHz" of a corner, or "none" without a declared filter.
fn declared_corner(
    md: &mut Md,
    emc: &EmcReport,
    corner: impl Fn(&crate::emc::DeclaredFilter) -> Option<f64>,
) {
    md.s(" (declared ");
    match &emc.filter {
        Some(f) => md.khz(corner(f)),
        None => md.s("none"),
    }
    md.s(") |\n");
}

fn figures(md: &mut Md, emc: &EmcReport) {
    md.s("\n| figure | value | formula | verdict |\n|---|---|---|---|\n| governing frequency (lowest corner) | ");
    md.khz(emc.governing_frequency_hz);
    if let Some(mode) = emc.governing_mode.filter(|m| !m.is_empty()) {
        md.s(", ");
        md.text(mode);
    }
    md.s(
        " | the point whose required attenuation forces the lowest corner | – |\n| limit there | ",
    );
    md.computed(emc.limit_dbuv, "dBµV");
    if let Some(detector) = emc.governing_detector.filter(|d| !d.is_empty()) {
        md.s(", ");
        md.text(detector);
    }
    md.s(" | class ");
    md.text(emc.limit_class.as_str());
    md.s(" line, linear in log f between its corners | – |\n| required attenuation there | ");
    md.computed(emc.required_attenuation_db, "dB");
    md.s(" | level − limit + margin | – |\n| largest attenuation needed");
    md.anchor("fig-emc.points");
    md.s(" | ");
    md.computed(emc.max_required_attenuation_db, "dB");
    if emc.max_required_attenuation_hz.is_some() {
        md.s(" at ");
        md.khz(emc.max_required_attenuation_hz);
    }
    md.s(" | one LC stage gives about ");
    md.fig(emc.single_stage_practical_db);
    md.s(" dB in practice, two about ");
    md.fig(emc.two_stage_practical_db);
    md.s(" dB | ");
    md.verdict_in(&emc.verdicts, "points");
    md.s(" (after the declared filter, every point) |\n| differential-mode corner, second order");
    md.anchor("fig-emc.dm_corner_hz");
    md.s(" | ");
    md.khz(emc.dm_corner_hz);
    md.s(" | fc = f / 10^(A / 40), lowest over the points | ");
    md.verdict_in(&emc.verdicts, "dm_corner_hz");
    declared_corner(md, emc, |f| f.dm_corner_hz);
    md.s("| differential-mode corner, fourth order (two stages) | ");
    md.khz(emc.dm_corner_fourth_order_hz);
    md.s(" | fc = f / 10^(A / 80) | – |\n| differential-mode inductance for that corner | ");
    md.computed(emc.dm_inductance_for_corner_uh, "µH");
    md.s(" | L = 1 / ((2π fc)^2 C), C the declared X capacitance | – |\n| common-mode corner, second order");
    md.anchor("fig-emc.cm_corner_hz");
    md.s(" | ");
    md.khz(emc.cm_corner_hz);
    md.s(" | fc = f / 10^(A / 40) | ");
    md.verdict_in(&emc.verdicts, "cm_corner_hz");
    declared_corner(md, emc, |f| f.cm_corner_hz);
    md.s("| common-mode corner, fourth order (two stages) | ");
    md.khz(emc.cm_corner_fourth_order_hz);
    md.s(" | fc = f / 10^(A / 80) | – |\n| common-mode choke for that corner | ");
    md.computed(emc.cm_inductance_for_corner_mh, "mH");
    md.s(" | L = 1 / ((2π fc)^2 C), C_cm = ");
    md.computed(emc.cm_capacitance_used_nf, "nF");
    md.s(" (");
    md.text(emc.y_arrangement.as_str());
    md.s("; per line ");
    md.computed(emc.y_capacitance_used_nf, "nF");
    md.s(") | – |\n| touch-current limit | ");
    md.computed(emc.touch_current_limit_ma, "mA");
    md.s(" (");
    md.text(&emc.touch_current_part);
    md.s(" part, ");
    md.text(&emc.touch_current_standard);
    md.s(") | power entry's touch-current table | – |\n| largest Y capacitance per line | ");
    md.computed(emc.max_y_capacitance_nf, "nF");
    md.s(" | C = I / (2π f V) at ");
    md.fig(emc.max_mains_v);
    md.s(" V, ");
    md.fig(emc.max_mains_frequency_hz);
    md.s(" Hz | – |\n| declared Y capacitance per line");
    md.anchor("fig-emc.y_capacitance_nf");
    md.s(" | ");
    md.val(emc.y_capacitance_nf, "nF", "not declared");
    if let Some(from) = present(&emc.y_capacitance_from) {
        md.s(", from ");
        md.text(from);
    }
    md.s(" | | ");
    md.verdict_in(&emc.verdicts, "y_capacitance_nf");
    md.s(" |\n");
}

fn middlebrook(md: &mut Md, emc: &EmcReport) {
    let Some(m) = &emc.middlebrook else {
        if let Some(why) = present(&emc.middlebrook_not_applied) {
            md.s("\n");
            md.text(why);
        } else if !emc.converter_figures_available {
            md.s("\nNot judged: the project has no converter table, so the converter's power, efficiency and lowest bulk voltage are not known.\n");
        } else {
            md.s("\nNot judged: no differential-mode stage is declared and none can be proposed without an X capacitance.\n");
        }
        return;
    };
    md.s("The ");
    md.text(m.filter);
    md.s(" stage, ");
    md.fig(m.inductance_uh);
    md.s(" µH with ");
    md.fig(m.capacitance_uf);
    md.s(" µF, corner ");
    md.khz(Some(m.corner_hz));
    md.s(", characteristic impedance ");
    md.fig(m.characteristic_impedance_ohm);
    md.s(" Ω. The converter's input impedance at the lowest bulk voltage is V^2 / P = ");
    md.fig(m.bulk_v);
    md.s("^2 / ");
    md.fig(m.input_power_w);
    md.s(" = ");
    md.fig(m.converter_input_impedance_ohm);
    md.s(" Ω; with a margin of ");
    md.fig(m.margin_db);
    md.s(" dB the filter's output impedance must peak below ");
    md.fig(m.allowed_peak_ohm);
    md.s(" Ω. Its peak: ");
    match m.peak_output_impedance_ohm {
        None => md.s("unbounded (lossless and undamped)"),
        Some(z) => {
            md.fig(z);
            md.s(" Ω at ");
            md.khz(m.peak_at_hz);
        }
    }
    md.s(": **");
    md.text(if m.satisfied { "met" } else { "not met" });
    md.s("** (verdict ");
    md.verdict_in(&emc.verdicts, "middlebrook");
    md.s(").\n");
    if let Some(p) = &m.proposed_damping {
        md.s("\nProposed parallel R–C damping across the X capacitor: Cd = ");
        md.fig(p.capacitance_uf);
        md.s(" µF (n = ");
        md.fig(p.ratio);
        md.s(") in series with Rd = ");
        md.fig(p.resistance_ohm);
        md.s(" Ω, which brings the peak to ");
        md.fig(p.peak_output_impedance_ohm);
        md.s(" Ω (optimum Rd = R0 sqrt((2+n)(4+3n) / (2 n^2 (4+n))), peak R0 sqrt(2 (2+n)) / n; Erickson and Maksimović, Fundamentals of Power Electronics, 2nd ed., ch. 10, from memory).\n");
    }
}

fn points(md: &mut Md, emc: &EmcReport) {
    if emc.points.is_empty() {
        md.s("\nNo points of noise.\n");
        return;
    }
    md.s("\n| frequency, kHz | mode | detector | level, dBµV | limit, dBµV | attenuation needed, dB | filter, dB | after, dBµV | verdict |\n|---:|---|---|---:|---:|---:|---:|---:|---|\n");
    for (i, p) in emc.points.iter().enumerate() {
        md.s("| ");
        md.fig(p.frequency_hz / 1000.0);
        md.anchor(&format!("point-{}", i + 1));
        md.s(" | ");
        md.text(p.mode);
        if let Some(n) = p.harmonic {
            md.s(" (n = ");
            md.int(n);
            md.s(")");
        }
        md.s(" | ");
        md.text(p.detector);
        md.s(" | ");
        md.fig(p.level_dbuv);
        md.s(" | ");
        md.fig(p.limit_dbuv);
        md.s(" (");
        md.text(p.compared_with);
        md.s(") | ");
        md.fig(p.required_attenuation_db);
        md.s(" | ");
        md.fig(p.filter_attenuation_db);
        md.s(" | ");
        md.fig(p.after_filter_dbuv);
        md.s(" | ");
        md.verdict(p.verdict.as_str());
        md.s(" |\n");
    }
    if emc.harmonics_evaluated > emc.points.len() {
        md.s("\n");
        md.int(emc.points.len());
        md.s(" of ");
        md.int(emc.harmonics_evaluated);
        md.s(" estimated harmonics shown (every harmonic was evaluated; the governing ones are always shown).\n");
    }
}

/// Where the chart goes: drawn on the HTML page, linked or mentioned in Markdown.
fn chart(md: &mut Md) {
    let view = md.view;
    if view.html {
        md.s(CHART_COMMENT);
        md.s("\n");
    } else if let Some(file) = view.chart_file.as_deref().filter(|f| !f.is_empty()) {
        md.s("Chart of the limits and the noise before and after the filter, an SVG file beside this report: ![EMC chart: limit lines and noise before and after the filter](");
        md.id(file);
        md.s(")\n");
    } else if view.has_chart {
        md.s("Chart of the limits and the noise: drawn in the HTML report (`--format html`); with `-o FILE` or `--out-dir DIR` the Markdown report is written with the chart beside it as an SVG file.\n");
    }
}
