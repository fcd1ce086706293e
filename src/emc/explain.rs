//! `gapwarden explain PROJECT emc.ITEM`: the derivation of one EMC figure as plain text.

use super::EmcReport;
use super::limits::frequency_words;
use crate::derivation::Derivation;
use crate::spacing::show;

/// The items `explain` knows, with what each shows.
pub const ITEMS: &[(&str, &str)] = &[
    ("emc", "every EMC figure"),
    (
        "emc.noise",
        "the noise to beat: prescan points or the estimate's model",
    ),
    ("emc.limit", "the limit at the governing frequency"),
    ("emc.attenuation", "the required attenuation"),
    (
        "emc.corner",
        "the differential-mode and common-mode corners",
    ),
    (
        "emc.dm_corner",
        "the differential-mode corner and its inductance",
    ),
    ("emc.cm_corner", "the common-mode corner and its choke"),
    (
        "emc.y_capacitance",
        "the touch-current cap on the Y capacitance",
    ),
    ("emc.filter", "the declared filter's corners and damping"),
    (
        "emc.middlebrook",
        "the filter's output impedance against the converter's input impedance",
    ),
    ("emc.damping", "the same as emc.middlebrook"),
    ("emc.points", "every point before and after the filter"),
    ("emc.assumptions", "the defaults the EMC evaluation applied"),
];

/// Each EMC figure of the JSON report (`emc.FIELD`) with the item whose derivation shows
/// it, so `explain PROJECT emc.dm_corner_hz` works for every figure the report prints.
pub const FIGURES: &[(&str, &str)] = &[
    ("margin_db", "emc.limit"),
    ("governing_frequency_hz", "emc.attenuation"),
    ("limit_dbuv", "emc.limit"),
    ("required_attenuation_db", "emc.attenuation"),
    ("max_required_attenuation_db", "emc.attenuation"),
    ("max_required_attenuation_hz", "emc.attenuation"),
    ("dm_corner_hz", "emc.dm_corner"),
    ("dm_governing_frequency_hz", "emc.dm_corner"),
    ("dm_corner_fourth_order_hz", "emc.dm_corner"),
    ("dm_inductance_for_corner_uh", "emc.dm_corner"),
    ("cm_corner_hz", "emc.cm_corner"),
    ("cm_governing_frequency_hz", "emc.cm_corner"),
    ("cm_corner_fourth_order_hz", "emc.cm_corner"),
    ("cm_inductance_for_corner_mh", "emc.cm_corner"),
    ("max_y_capacitance_nf", "emc.y_capacitance"),
    ("touch_current_limit_ma", "emc.y_capacitance"),
    ("max_mains_v", "emc.y_capacitance"),
    ("max_mains_frequency_hz", "emc.y_capacitance"),
    ("y_capacitance_nf", "emc.y_capacitance"),
    ("y_capacitance_used_nf", "emc.cm_corner"),
    ("cm_capacitance_used_nf", "emc.cm_corner"),
    ("single_stage_practical_db", "emc.attenuation"),
    ("two_stage_practical_db", "emc.attenuation"),
    ("harmonics_evaluated", "emc.points"),
];

fn hz(x: Option<f64>) -> String {
    x.map(frequency_words)
        .unwrap_or_else(|| "not computed".to_string())
}

fn num(x: Option<f64>, unit: &str) -> String {
    x.map(|v| format!("{} {unit}", show(v)))
        .unwrap_or_else(|| "not computed".to_string())
}

/// A topic's steps under its title, numbered, each with the rule table it read.
fn steps(out: &mut String, d: &Derivation) {
    let (title, steps) = (&d.title, &d.steps);
    out.push_str(&format!("{title}:\n"));
    if steps.is_empty() {
        out.push_str("  (nothing to derive)\n");
    }
    for (i, s) in steps.iter().enumerate() {
        match &s.rule {
            Some(rule) => out.push_str(&format!("  {}. {} (rule {rule})\n", i + 1, s.text)),
            None => out.push_str(&format!("  {}. {}\n", i + 1, s.text)),
        }
    }
}

fn headline(out: &mut String, r: &EmcReport) {
    out.push_str(&format!(
        "EMC, class {} limits, margin {} dB, noise from {}\n",
        r.limit_class.as_str(),
        show(r.margin_db),
        r.noise_source
    ));
    out.push_str(&format!(
        "governing frequency {}, limit {}, required attenuation {}\n",
        hz(r.governing_frequency_hz),
        num(r.limit_dbuv, "dBuV"),
        num(r.required_attenuation_db, "dB")
    ));
    out.push_str(&format!(
        "differential-mode corner {} (fourth order {}), common-mode corner {} (fourth order {})\n",
        hz(r.dm_corner_hz),
        hz(r.dm_corner_fourth_order_hz),
        hz(r.cm_corner_hz),
        hz(r.cm_corner_fourth_order_hz)
    ));
    out.push_str(&format!(
        "largest Y capacitance per line {}\n",
        num(r.max_y_capacitance_nf, "nF")
    ));
    if !r.verdicts.is_empty() {
        let list: Vec<String> = r
            .verdicts
            .iter()
            .map(|(k, v)| format!("{k} {}", v.as_str()))
            .collect();
        out.push_str(&format!(
            "verdicts (on the unrounded figures): {}\n",
            list.join(", ")
        ));
    }
}

fn points(out: &mut String, r: &EmcReport) {
    out.push_str(&format!(
        "points ({}); after the filter: {}\n",
        r.points.len(),
        r.after_filter
    ));
    for p in &r.points {
        out.push_str(&format!(
            "  {} {} {}: {} dBuV, limit {} dBuV ({}), needs {} dB, after {} dBuV\n",
            frequency_words(p.frequency_hz),
            p.mode,
            p.detector,
            show(p.level_dbuv),
            show(p.limit_dbuv),
            p.compared_with,
            show(p.required_attenuation_db),
            show(p.after_filter_dbuv)
        ));
    }
    if r.harmonics_evaluated > 0 {
        out.push_str(&format!(
            "  ({} estimated harmonics evaluated; the list above is thinned)\n",
            r.harmonics_evaluated
        ));
    }
}

/// Text for an EMC item or figure, or `None` when `item` is neither.
pub fn explain(r: &EmcReport, item: &str) -> Option<String> {
    if let Some((field, shown_by)) = item
        .strip_prefix("emc.")
        .and_then(|f| FIGURES.iter().find(|(name, _)| *name == f))
    {
        let value = serde_json::to_value(r)
            .ok()
            .and_then(|v| v.get(*field).cloned())
            .unwrap_or(serde_json::Value::Null);
        // The unit is the field name's suffix, as everywhere in the JSON report.
        let unit = [
            ("_dbuv", " dBuV"),
            ("_db", " dB"),
            ("_hz", " Hz"),
            ("_nf", " nF"),
            ("_uh", " uH"),
            ("_mh", " mH"),
            ("_ma", " mA"),
            ("_v", " V"),
        ]
        .iter()
        .find(|(suffix, _)| field.ends_with(suffix))
        .map_or("", |(_, unit)| *unit);
        let value = match value.as_f64() {
            Some(x) => format!("{}{unit}", show(x)),
            None => "not computed".to_string(),
        };
        let mut out = format!("emc.{field} = {value} (derivation: {shown_by})\n");
        out.push_str(&explain_item(r, shown_by)?);
        return Some(out);
    }
    explain_item(r, item)
}

fn explain_item(r: &EmcReport, item: &str) -> Option<String> {
    let d = &r.derivation;
    let mut out = String::new();
    match item {
        "emc" => {
            headline(&mut out, r);
            steps(&mut out, &d.noise);
            steps(&mut out, &d.limit);
            steps(&mut out, &d.attenuation);
            steps(&mut out, &d.dm_corner);
            steps(&mut out, &d.cm_corner);
            steps(&mut out, &d.y_capacitance);
            steps(&mut out, &d.filter);
            steps(&mut out, &d.middlebrook);
            out.push_str("other items: ");
            let names: Vec<&str> = ITEMS.iter().map(|(n, _)| *n).collect();
            out.push_str(&names.join(", "));
            out.push('\n');
        }
        "emc.noise" => steps(&mut out, &d.noise),
        "emc.limit" => steps(&mut out, &d.limit),
        "emc.attenuation" => {
            steps(&mut out, &d.limit);
            steps(&mut out, &d.attenuation);
        }
        "emc.corner" => {
            headline(&mut out, r);
            steps(&mut out, &d.attenuation);
            steps(&mut out, &d.dm_corner);
            steps(&mut out, &d.cm_corner);
        }
        "emc.dm_corner" => steps(&mut out, &d.dm_corner),
        "emc.cm_corner" => {
            steps(&mut out, &d.cm_corner);
            steps(&mut out, &d.y_capacitance);
        }
        "emc.y_capacitance" => steps(&mut out, &d.y_capacitance),
        "emc.filter" => steps(&mut out, &d.filter),
        "emc.middlebrook" | "emc.damping" => steps(&mut out, &d.middlebrook),
        "emc.points" => points(&mut out, r),
        "emc.assumptions" => {
            if r.assumptions.is_empty() {
                out.push_str("No defaults were applied in the EMC evaluation.\n");
            }
            for a in &r.assumptions {
                out.push_str(&format!("- {a}\n"));
            }
        }
        _ => return None,
    }
    Some(out)
}
