//! Reads `[input]` (with `[input.limiter]` and `[input.fuse]`) and `[converter]` key by key
//! through the project reader, so every problem is reported at once with its line.

use super::tables::{CONNECTIONS, FUSE_SPEEDS};
use super::{Connection, ConverterSpec, FuseSpec, FuseSpeed, InputSpec, LimiterKind, LimiterSpec};
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

const fn above_zero(max: f64, plausible_max: f64, expected: &'static str) -> NumberRule {
    NumberRule {
        min: 0.0,
        min_inclusive: false,
        max,
        plausible_min: 0.0,
        plausible_max,
        integer: false,
        expected,
    }
}

const BULK_UF: NumberRule = NumberRule {
    // Below 0.1 uF a bulk capacitor was most likely written in farads.
    plausible_min: 0.1,
    ..above_zero(
        1e6,
        10_000.0,
        "a capacitance in microfarads, above 0 (47 for 47 uF)",
    )
};
const SERIES_OHM: NumberRule = NumberRule {
    min: 1e-6,
    min_inclusive: true,
    max: 1e6,
    plausible_min: 0.0,
    plausible_max: 100.0,
    integer: false,
    expected: "a resistance in ohms, at least 0.000001 (every charging path has some: line, bridge, ESR)",
};
const CURRENT_A: NumberRule = above_zero(1e6, 10_000.0, "a current in amperes, above 0");
const DROP_V: NumberRule = NumberRule {
    min: 0.0,
    min_inclusive: true,
    max: 100.0,
    plausible_min: 0.0,
    plausible_max: 5.0,
    integer: false,
    expected: "the total forward drop of two bridge diodes in volts, 0 or more",
};
const X_UF: NumberRule = NumberRule {
    min: 0.0,
    min_inclusive: true,
    max: 10_000.0,
    plausible_min: 0.0001,
    plausible_max: 10.0,
    integer: false,
    expected: "a capacitance in microfarads, 0 or more (0.47 for 470 nF)",
};
const BLEEDER_OHM: NumberRule = above_zero(1e13, 1e9, "a resistance in ohms, above 0");
const FREQUENCY_HZ: NumberRule = above_zero(
    1e6,
    400.0,
    "a mains frequency in hertz, above 0 (50, 60 or 400)",
);
const LIMITER_OHM: NumberRule = above_zero(1e6, 10_000.0, "a resistance in ohms, above 0");
const ENERGY_J: NumberRule = above_zero(1e6, 1_000.0, "an energy in joules, above 0");
const FUSE_A: NumberRule = above_zero(1e4, 100.0, "a rated current in amperes, above 0");
const I2T_A2S: NumberRule = above_zero(1e9, 1e5, "a melting I2t in A2s, above 0");
const BREAKING_A: NumberRule = above_zero(1e7, 1e5, "a breaking capacity in amperes, above 0");
const RATED_V: NumberRule = above_zero(1e5, 1_000.0, "a rated voltage in volts, above 0");
/// Below a milliwatt no mains converter's output is meant (the hold-up time and the
/// operating point divide by it).
const OUTPUT_W: NumberRule = NumberRule {
    min: 0.001,
    min_inclusive: true,
    ..above_zero(1e7, 10_000.0, "an output power in watts, at least 0.001")
};
/// Below 1 % no converter's efficiency is meant (the input power divides by it).
const EFFICIENCY: NumberRule = NumberRule {
    min: 0.01,
    min_inclusive: true,
    max: 1.0,
    plausible_min: 0.0,
    plausible_max: 1.0,
    integer: false,
    expected: "an efficiency as a fraction, at least 0.01 and at most 1 (0.86 for 86 %)",
};
const MIN_BULK_V: NumberRule = above_zero(
    1e5,
    1_000.0,
    "the lowest bulk voltage in volts at which the converter regulates, above 0",
);
/// The lowest switching frequency the noise estimate can use. Below 1 kHz a figure is no
/// switching converter's (most likely a value in kilohertz or megahertz written into a
/// hertz key), and it would put tens of thousands of harmonics into the conducted band.
pub(crate) const MIN_SWITCHING_HZ: f64 = 1_000.0;
const SWITCHING_HZ: NumberRule = NumberRule {
    min: MIN_SWITCHING_HZ,
    min_inclusive: true,
    ..above_zero(
        1e10,
        1e7,
        "a switching frequency in hertz, at least 1000 (65000 for 65 kHz)",
    )
};
const MAX_DUTY: NumberRule = NumberRule {
    min: 0.0,
    min_inclusive: false,
    max: 1.0,
    plausible_min: 0.0,
    plausible_max: 1.0,
    integer: false,
    expected: "a duty cycle as a fraction, above 0 and below 1 (0.45 for 45 %)",
};

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
    let connection = r.word(t, "connection", &CONNECTIONS);
    let prospective = r.number(t, "prospective_fault_a", &BREAKING_A);
    let standard = r.string(t, "end_product_standard");
    let hand_held = r.boolean(t, "hand_held");
    let f_min = r.number(t, "min_frequency_hz", &FREQUENCY_HZ);
    let f_max = r.number(t, "max_frequency_hz", &FREQUENCY_HZ);
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
        connection: connection.map(|l| match l.value {
            "industrial-plug" => Connection::IndustrialPlug,
            "permanent" => Connection::Permanent,
            _ => Connection::Plug,
        }),
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
    let kind = r.required_word(t, "kind", &["ntc", "resistor", "none"]);
    let cold = r.number(t, "cold_ohm", &LIMITER_OHM);
    let hot = r.number(t, "hot_ohm", &LIMITER_OHM);
    let energy = r.number(t, "energy_rating_j", &ENERGY_J);
    let kind = match kind.map(|l| l.value) {
        Some("ntc") => LimiterKind::Ntc,
        Some("resistor") => LimiterKind::Resistor,
        Some(_) => LimiterKind::None,
        None => return None,
    };
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
    let speed = r.word(t, "speed", &FUSE_SPEEDS);
    if r.problems.len() > before {
        return None;
    }
    Some(FuseSpec {
        rated_a: value(rated),
        melting_i2t_a2s: value(i2t),
        breaking_a: value(breaking),
        rated_v: value(rated_v),
        speed: speed.map(|l| match l.value {
            "fast" => FuseSpeed::Fast,
            _ => FuseSpeed::TimeLag,
        }),
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
