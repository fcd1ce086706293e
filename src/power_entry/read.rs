//! Reads `[input]` (with `[input.limiter]` and `[input.fuse]`) and `[converter]` key by key
//! from their raw form, so every problem is reported at once with its line.

use super::{Connection, ConverterSpec, FuseSpec, FuseSpeed, InputSpec, LimiterKind, LimiterSpec};
use crate::input_limits::rule;
use schemars::JsonSchema;
use serde::Deserialize;

use crate::input_limits::NumberRule;
use crate::key;
use crate::project::{Key, RawProject, TableKey};
use crate::raw::{Flag, Located, Num, Reader, Ruled, TableAt, Text, Word};

/// `[input]`: the power-entry stage.
#[derive(Debug, Deserialize, JsonSchema)]
#[serde(deny_unknown_fields)]
pub struct RawInput {
    /// Bulk capacitance after the bridge in microfarads (required).
    pub bulk_capacitance_uf: Key<Num<rule::BulkUf>>,
    /// Charging path without the limiter (line, bridge, capacitor ESR) in ohms (required).
    pub series_resistance_ohm: Key<Num<rule::SeriesOhm>>,
    /// The bridge rectifier's non-repetitive surge current rating in amperes.
    pub bridge_surge_a: Key<Num<rule::CurrentA>>,
    /// Total forward drop of the two conducting bridge diodes in volts (default 0: ideal
    /// diodes).
    pub bridge_drop_v: Key<Num<rule::DropV>>,
    /// Total X capacitance across the line in microfarads.
    pub x_capacitance_uf: Key<Num<rule::XUf>>,
    /// Discharge resistance across the X capacitance in ohms; absent = none.
    pub bleeder_ohm: Key<Num<rule::BleederOhm>>,
    /// The bleeder survives one open resistor (two paths, or a fail-safe part) (default
    /// false).
    pub bleeder_fault_tolerant: Key<Flag>,
    /// How the equipment connects to the mains (default "plug": pluggable type A, the
    /// strictest discharge limit).
    pub connection: Key<Word<Connection>>,
    /// Prospective fault current of the supply in amperes (default: from the rule book,
    /// stated as an assumption).
    pub prospective_fault_a: Key<Num<rule::BreakingA>>,
    /// The end-product standard whose touch-current limits apply, by the id of a rule
    /// table's entry such as "iec62368-1" or "iec60950-1" (default: the rule book's,
    /// stated as an assumption).
    pub end_product_standard: Key<Text>,
    /// The equipment is hand-held (default false).
    pub hand_held: Key<Flag>,
    /// Lowest mains frequency in hertz (default: mains.frequency_hz).
    pub min_frequency_hz: Key<Num<rule::MainsFrequencyHz>>,
    /// Highest mains frequency in hertz (default: mains.frequency_hz).
    pub max_frequency_hz: Key<Num<rule::MainsFrequencyHz>>,
    /// Rated voltage of the bulk capacitor in volts.
    pub bulk_rated_v: Key<Num<rule::RatedV>>,
    /// Highest rated supply voltage on the marking in volts, against the fuse's rating
    /// (default: mains.nominal_v).
    pub highest_rated_v: Key<Num<rule::RatedV>>,
    /// The inrush limiter.
    pub limiter: TableKey<RawLimiter>,
    /// The input fuse.
    pub fuse: TableKey<RawFuse>,
}

/// `[input.limiter]`.
#[derive(Debug, Deserialize, JsonSchema)]
#[serde(deny_unknown_fields)]
pub struct RawLimiter {
    /// "ntc", "resistor" or "none" (required).
    pub kind: Key<Word<LimiterKind>>,
    /// Resistance at switch-on in ohms; required for kind "ntc" or "resistor", refused for
    /// "none".
    pub cold_ohm: Key<Num<rule::ResistanceOhm>>,
    /// Resistance in operation in ohms; required for kind "ntc" (a "resistor" keeps its
    /// cold_ohm), refused for "none".
    pub hot_ohm: Key<Num<rule::ResistanceOhm>>,
    /// Energy rating in joules.
    pub energy_rating_j: Key<Num<rule::EnergyJ>>,
}

/// `[input.fuse]`.
#[derive(Debug, Deserialize, JsonSchema)]
#[serde(deny_unknown_fields)]
pub struct RawFuse {
    /// Rated current in amperes.
    pub rated_a: Key<Num<rule::FuseA>>,
    /// Melting I²t in A²s.
    pub melting_i2t_a2s: Key<Num<rule::I2tA2s>>,
    /// Breaking capacity in amperes.
    pub breaking_a: Key<Num<rule::BreakingA>>,
    /// Rated voltage in volts.
    pub rated_v: Key<Num<rule::RatedV>>,
    /// "fast" or "time-lag".
    pub speed: Key<Word<FuseSpeed>>,
}

/// `[converter]`: the converter behind the bulk capacitor.
#[derive(Debug, Deserialize, JsonSchema)]
#[serde(deny_unknown_fields)]
pub struct RawConverter {
    /// Output power in watts (required).
    pub output_w: Key<Num<rule::OutputW>>,
    /// Efficiency, above 0 and at most 1 (required).
    pub efficiency: Key<Num<rule::Efficiency>>,
    /// Lowest bulk voltage at which it still regulates, in volts (required).
    pub min_bulk_v: Key<Num<rule::MinBulkV>>,
    /// Switching frequency in hertz (required).
    pub switching_hz: Key<Num<rule::SwitchingHz>>,
    /// Largest duty cycle, below 1 (required).
    pub max_duty: Key<Num<rule::MaxDuty>>,
    /// It has an active power-factor-correction stage: Middlebrook's criterion applies
    /// (default false).
    pub pfc_stage: Key<Flag>,
}

fn value(l: Option<Located<f64>>) -> Option<f64> {
    l.map(|l| l.value)
}

/// Reads `[input]` and `[converter]`; either is `None` when absent or unusable (the
/// problems are then in `r`).
pub(super) fn read_tables(
    r: &mut Reader,
    root: &TableAt,
    raw_root: &RawProject,
) -> (Option<InputSpec>, Option<ConverterSpec>) {
    let input = r
        .table(root, key!(raw_root.input))
        .and_then(|(t, raw_t)| read_input(r, &t, raw_t));
    let converter = r
        .table(root, key!(raw_root.converter))
        .and_then(|(t, raw_t)| read_converter(r, &t, raw_t));
    (input, converter)
}

fn read_input(r: &mut Reader, t: &TableAt, raw_t: &RawInput) -> Option<InputSpec> {
    let before = r.problems.len();
    let bulk = r.required_ruled(t, key!(raw_t.bulk_capacitance_uf));
    let series = r.required_ruled(t, key!(raw_t.series_resistance_ohm));
    let surge = r.ruled(t, key!(raw_t.bridge_surge_a));
    let drop = r.ruled(t, key!(raw_t.bridge_drop_v));
    let x = r.ruled(t, key!(raw_t.x_capacitance_uf));
    let bleeder = r.ruled(t, key!(raw_t.bleeder_ohm));
    let tolerant = r.boolean(t, key!(raw_t.bleeder_fault_tolerant));
    let connection = r.word::<Connection>(t, key!(raw_t.connection));
    let prospective = r.ruled(t, key!(raw_t.prospective_fault_a));
    let standard = r.string(t, key!(raw_t.end_product_standard));
    let hand_held = r.boolean(t, key!(raw_t.hand_held));
    let f_min = r.ruled(t, key!(raw_t.min_frequency_hz));
    let f_max = r.ruled(t, key!(raw_t.max_frequency_hz));
    let bulk_rated = r.ruled(t, key!(raw_t.bulk_rated_v));
    let highest_rated = r.ruled(t, key!(raw_t.highest_rated_v));
    let limiter = r
        .table(t, key!(raw_t.limiter))
        .and_then(|(l, raw_l)| read_limiter(r, &l, raw_l));
    let fuse = r
        .table(t, key!(raw_t.fuse))
        .and_then(|(f, raw_f)| read_fuse(r, &f, raw_f));

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

fn read_limiter(r: &mut Reader, t: &TableAt, raw_t: &RawLimiter) -> Option<LimiterSpec> {
    let before = r.problems.len();
    let kind = r.required_word::<LimiterKind>(t, key!(raw_t.kind));
    let cold = r.ruled(t, key!(raw_t.cold_ohm));
    let hot = r.ruled(t, key!(raw_t.hot_ohm));
    let energy = r.ruled(t, key!(raw_t.energy_rating_j));
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
            if raw_t.cold_ohm.is_none() {
                r.missing(
                    t,
                    "cold_ohm",
                    "the limiter's resistance at switch-on in ohms (it sets the inrush peak)",
                );
            }
            if kind == LimiterKind::Ntc && raw_t.hot_ohm.is_none() {
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

fn read_fuse(r: &mut Reader, t: &TableAt, raw_t: &RawFuse) -> Option<FuseSpec> {
    let before = r.problems.len();
    let rated = r.ruled(t, key!(raw_t.rated_a));
    let i2t = r.ruled(t, key!(raw_t.melting_i2t_a2s));
    let breaking = r.ruled(t, key!(raw_t.breaking_a));
    let rated_v = r.ruled(t, key!(raw_t.rated_v));
    let speed = r.word::<FuseSpeed>(t, key!(raw_t.speed));
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
fn written(r: &Reader, span: &crate::raw::Span) -> String {
    r.source
        .text
        .get(span.clone())
        .map(|s| s.trim().to_string())
        .filter(|s| !s.is_empty())
        .unwrap_or_default()
}

/// Reads a required number by its raw type's rule, first refusing (at its line, with the
/// value as written) one below `rule.min` or at/above `below`, so that the message shows
/// what the user typed.
fn bounded_number<R: Ruled>(
    r: &mut Reader,
    t: &TableAt,
    field: (&str, &Key<Num<R>>),
    below: Option<f64>,
) -> Option<Located<f64>> {
    let rule = &R::THE_RULE;
    let key = field.0;
    if field.1.is_none() {
        r.missing(t, key, rule.expected);
        return None;
    }
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
    let probe = r.number_by(t, field, &wide);
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
    r.number_by(t, field, rule)
}

fn read_converter(r: &mut Reader, t: &TableAt, raw_t: &RawConverter) -> Option<ConverterSpec> {
    let output = r.required_ruled(t, key!(raw_t.output_w));
    let efficiency = r.required_ruled(t, key!(raw_t.efficiency));
    let min_bulk = r.required_ruled(t, key!(raw_t.min_bulk_v));
    let switching = bounded_number(r, t, key!(raw_t.switching_hz), None);
    // A duty of 1 is no pulse train (the input current is DC): the noise estimate needs
    // a duty below 1.
    let duty = bounded_number(r, t, key!(raw_t.max_duty), Some(1.0));
    let pfc = r.boolean(t, key!(raw_t.pfc_stage));
    Some(ConverterSpec {
        output_w: output?.value,
        efficiency: efficiency?.value,
        min_bulk_v: min_bulk?.value,
        switching_hz: switching?.value,
        max_duty: duty?.value,
        pfc_stage: pfc.map(|l| l.value).unwrap_or(false),
    })
}
