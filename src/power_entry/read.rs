//! Reads `[input]` (with `[input.limiter]` and `[input.fuse]`) and `[converter]` key by key
//! through the project reader, so every problem is reported at once with its line.

use super::{Connection, ConverterSpec, FuseSpec, FuseSpeed, InputSpec, LimiterKind, LimiterSpec};
use crate::input_limits::{
    BLEEDER_OHM, BREAKING_A, BULK_UF, CURRENT_A, DROP_V, EFFICIENCY, ENERGY_J, FUSE_A, I2T_A2S,
    MAINS_FREQUENCY_HZ, MAX_DUTY, MIN_BULK_V, OUTPUT_W, RATED_V, RESISTANCE_OHM, SERIES_OHM,
    SWITCHING_HZ, X_UF,
};
use crate::toml_read::{Located, NumberRule, Reader, TableRef};

const INPUT_KEYS: &[&str] = &[
    "bulk_capacitance_uf",
    "series_resistance_ohm",
    "bridge_surge_a",
    "bridge_drop_v",
    "x_capacitance_uf",
    "bleeder_ohm",
    "bleeder_fault_tolerant",
    "connection",
    "prospective_fault_a",
    "end_product_standard",
    "hand_held",
    "min_frequency_hz",
    "max_frequency_hz",
    "bulk_rated_v",
    "highest_rated_v",
    "limiter",
    "fuse",
];
const LIMITER_KEYS: &[&str] = &["kind", "cold_ohm", "hot_ohm", "energy_rating_j"];
const FUSE_KEYS: &[&str] = &[
    "rated_a",
    "melting_i2t_a2s",
    "breaking_a",
    "rated_v",
    "speed",
];
const CONVERTER_KEYS: &[&str] = &[
    "output_w",
    "efficiency",
    "min_bulk_v",
    "switching_hz",
    "max_duty",
    "pfc_stage",
];

fn value(l: Option<Located<f64>>) -> Option<f64> {
    l.map(|l| l.value)
}

/// Reads `[input]` and `[converter]`; either is `None` when absent or unusable (the
/// problems are then in `r`).
pub(super) fn read_tables(
    r: &mut Reader,
    root: &TableRef,
) -> (Option<InputSpec>, Option<ConverterSpec>) {
    let input = r
        .table(root, "input", INPUT_KEYS)
        .and_then(|t| read_input(r, &t));
    let converter = r
        .table(root, "converter", CONVERTER_KEYS)
        .and_then(|t| read_converter(r, &t));
    (input, converter)
}

fn read_input(r: &mut Reader, t: &TableRef) -> Option<InputSpec> {
    let before = r.problems.len();
    let bulk = r.required_number(t, "bulk_capacitance_uf", &BULK_UF);
    let series = r.required_number(t, "series_resistance_ohm", &SERIES_OHM);
    let surge = r.number(t, "bridge_surge_a", &CURRENT_A);
    let drop = r.number(t, "bridge_drop_v", &DROP_V);
    let x = r.number(t, "x_capacitance_uf", &X_UF);
    let bleeder = r.number(t, "bleeder_ohm", &BLEEDER_OHM);
    let tolerant = r.boolean(t, "bleeder_fault_tolerant");
    let connection = r.word::<Connection>(t, "connection");
    let prospective = r.number(t, "prospective_fault_a", &BREAKING_A);
    let standard = r.string(t, "end_product_standard");
    let hand_held = r.boolean(t, "hand_held");
    let f_min = r.number(t, "min_frequency_hz", &MAINS_FREQUENCY_HZ);
    let f_max = r.number(t, "max_frequency_hz", &MAINS_FREQUENCY_HZ);
    let bulk_rated = r.number(t, "bulk_rated_v", &RATED_V);
    let highest_rated = r.number(t, "highest_rated_v", &RATED_V);
    let limiter = r
        .table(t, "limiter", LIMITER_KEYS)
        .and_then(|l| read_limiter(r, &l));
    let fuse = r.table(t, "fuse", FUSE_KEYS).and_then(|f| read_fuse(r, &f));

    if let (Some(lo), Some(hi)) = (&f_min, &f_max)
        && lo.value > hi.value
    {
        r.error(
            &lo.span,
            "input.min_frequency_hz",
            format!(
                "{} Hz is above max_frequency_hz = {} Hz",
                crate::text::exact_number(lo.value),
                crate::text::exact_number(hi.value)
            ),
        );
    }
    if bleeder.is_none()
        && let Some(flag) = &tolerant
        && flag.value
    {
        r.error_with_help(
            &flag.span,
            "input.bleeder_fault_tolerant",
            "is true, but no bleeder_ohm is given",
            "give bleeder_ohm, or remove bleeder_fault_tolerant",
        );
    }
    if r.problems.len() > before {
        return None;
    }
    Some(InputSpec {
        bulk_capacitance_uf: bulk?.value,
        series_resistance_ohm: series?.value,
        bridge_surge_a: value(surge),
        bridge_drop_v: value(drop),
        x_capacitance_uf: value(x),
        bleeder_ohm: value(bleeder),
        bleeder_fault_tolerant: tolerant.map(|l| l.value),
        connection: connection.map(|l| l.value),
        prospective_fault_a: value(prospective),
        end_product_standard: standard,
        hand_held: hand_held.map(|l| l.value),
        min_frequency_hz: value(f_min),
        max_frequency_hz: value(f_max),
        bulk_rated_v: value(bulk_rated),
        highest_rated_v: value(highest_rated),
        limiter,
        fuse,
    })
}

fn read_limiter(r: &mut Reader, t: &TableRef) -> Option<LimiterSpec> {
    let before = r.problems.len();
    let kind = r.required_word::<LimiterKind>(t, "kind");
    let cold = r.number(t, "cold_ohm", &RESISTANCE_OHM);
    let hot = r.number(t, "hot_ohm", &RESISTANCE_OHM);
    let energy = r.number(t, "energy_rating_j", &ENERGY_J);
    let kind = kind?.value;
    match kind {
        LimiterKind::None => {
            for (key, present) in [
                ("cold_ohm", cold.as_ref().map(|l| &l.span)),
                ("hot_ohm", hot.as_ref().map(|l| &l.span)),
                ("energy_rating_j", energy.as_ref().map(|l| &l.span)),
            ] {
                if let Some(span) = present {
                    r.error_with_help(
                        span,
                        format!("input.limiter.{key}"),
                        "is given for a limiter of kind = \"none\"",
                        "remove it, or set kind = \"ntc\" or \"resistor\"",
                    );
                }
            }
        }
        LimiterKind::Ntc | LimiterKind::Resistor => {
            if !r.has(t, "cold_ohm") {
                r.missing(
                    t,
                    "cold_ohm",
                    "the limiter's resistance at switch-on in ohms (it sets the inrush peak)",
                );
            }
            if kind == LimiterKind::Ntc && !r.has(t, "hot_ohm") {
                r.missing(
                    t,
                    "hot_ohm",
                    "the thermistor's resistance in operation in ohms (it sets the operating point and the hot restart)",
                );
            }
            if let (Some(c), Some(h)) = (&cold, &hot)
                && h.value > c.value
            {
                r.error_with_help(
                    &h.span,
                    "input.limiter.hot_ohm",
                    format!(
                        "{} ohm is above cold_ohm = {} ohm; a limiter's resistance falls as it warms",
                        crate::text::exact_number(h.value),
                        crate::text::exact_number(c.value)
                    ),
                    "hot_ohm is the resistance in operation, cold_ohm the one at switch-on",
                );
            }
        }
    }
    if r.problems.len() > before {
        return None;
    }
    let cold_ohm = value(cold);
    Some(LimiterSpec {
        kind,
        cold_ohm,
        hot_ohm: value(hot).or(if kind == LimiterKind::Resistor {
            cold_ohm
        } else {
            None
        }),
        energy_rating_j: value(energy),
    })
}

fn read_fuse(r: &mut Reader, t: &TableRef) -> Option<FuseSpec> {
    let before = r.problems.len();
    let rated = r.number(t, "rated_a", &FUSE_A);
    let i2t = r.number(t, "melting_i2t_a2s", &I2T_A2S);
    let breaking = r.number(t, "breaking_a", &BREAKING_A);
    let rated_v = r.number(t, "rated_v", &RATED_V);
    let speed = r.word::<FuseSpeed>(t, "speed");
    if r.problems.len() > before {
        return None;
    }
    Some(FuseSpec {
        rated_a: value(rated),
        melting_i2t_a2s: value(i2t),
        breaking_a: value(breaking),
        rated_v: value(rated_v),
        speed: speed.map(|l| l.value),
    })
}

/// The value as written in the file (for messages: `1e-300`, not its long decimal form).
fn written(r: &Reader, span: &crate::toml_read::Span) -> String {
    r.source
        .text
        .get(span.clone())
        .map(|s| s.trim().to_string())
        .filter(|s| !s.is_empty())
        .unwrap_or_default()
}

/// Reads a number, first refusing (at its line, with the value as written) one below
/// `rule.min` or at/above `below`, so that the message shows what the user typed.
fn bounded_number(
    r: &mut Reader,
    t: &TableRef,
    key: &str,
    rule: &NumberRule,
    below: Option<f64>,
) -> Option<Located<f64>> {
    let before = r.problems.len();
    let wide = NumberRule {
        min: f64::MIN,
        min_inclusive: true,
        max: f64::MAX,
        plausible_min: 0.0,
        plausible_max: f64::MAX,
        ..*rule
    };
    let mut warnings = std::mem::take(&mut r.warnings);
    let probe = r.required_number(t, key, &wide);
    std::mem::swap(&mut r.warnings, &mut warnings);
    if r.problems.len() > before {
        // Not a number at all (or missing): the wide reading said so already.
        return None;
    }
    let probe = probe?;
    let v = probe.value;
    let too_low = if rule.min_inclusive {
        v < rule.min
    } else {
        v <= rule.min
    };
    let too_high = v > rule.max || below.is_some_and(|b| v >= b);
    if too_low || too_high {
        let text = written(r, &probe.span);
        r.error(
            &probe.span,
            format!("{}.{key}", t.path),
            format!("{text} is out of range; expected {}", rule.expected),
        );
        return None;
    }
    // In range: read it again through the rule for its warnings.
    r.required_number(t, key, rule)
}

fn read_converter(r: &mut Reader, t: &TableRef) -> Option<ConverterSpec> {
    let output = r.required_number(t, "output_w", &OUTPUT_W);
    let efficiency = r.required_number(t, "efficiency", &EFFICIENCY);
    let min_bulk = r.required_number(t, "min_bulk_v", &MIN_BULK_V);
    let switching = bounded_number(r, t, "switching_hz", &SWITCHING_HZ, None);
    // A duty of 1 is no pulse train (the input current is DC): the noise estimate needs
    // a duty below 1.
    let duty = bounded_number(r, t, "max_duty", &MAX_DUTY, Some(1.0));
    let pfc = r.boolean(t, "pfc_stage");
    Some(ConverterSpec {
        output_w: output?.value,
        efficiency: efficiency?.value,
        min_bulk_v: min_bulk?.value,
        switching_hz: switching?.value,
        max_duty: duty?.value,
        pfc_stage: pfc.map(|l| l.value).unwrap_or(false),
    })
}
