//! The power-entry calculations: pure functions from the checked project and the rule
//! tables to figures, each with its formula, inputs and the rule rows it used. Nothing here
//! judges: the checks in `rules/checks/power_entry.toml` compare the figures.

use crate::rules::Table as _;
use std::f64::consts::{PI, SQRT_2};

use super::rectifier::{self, Rectifier};
use super::*;
use crate::diag::{Diagnostic, suggest};
use crate::emc::YArrangement;
use crate::project::{CircuitKind, Grade, PartKind, ProtectionClass};
use crate::rules::{EPS, TestVoltages};

const PE: &str = "power_entry";

fn input(symbol: &str, value: f64, unit: &str, from: impl Into<String>) -> Input {
    Input {
        symbol: symbol.to_string(),
        value: significant(value),
        unit: unit.to_string(),
        from: from.into(),
    }
}

fn sig(x: Option<f64>) -> Option<f64> {
    x.filter(|v| v.is_finite()).map(significant)
}

struct Figure {
    id: String,
    title: String,
    value: Option<f64>,
    unit: &'static str,
    formula: String,
    verdict: Option<Verdict>,
    rests_on: Vec<std::borrow::Cow<'static, str>>,
}

impl Figure {
    fn new(id: &str, title: impl Into<String>, value: Option<f64>, unit: &'static str) -> Self {
        Figure {
            // Joined from its pieces: `format!` would start from an empty string and grow it.
            id: [PE, ".", id].concat(),
            title: title.into(),
            value,
            unit,
            formula: String::new(),
            verdict: None,
            rests_on: Vec::new(),
        }
    }

    /// The verdict of the comparison on the unrounded figures: `Some(true)` fails,
    /// `Some(false)` passes, `None` could not be judged.
    fn judged(mut self, fails: Option<bool>) -> Self {
        self.verdict = Some(Verdict::of(fails));
        self
    }

    fn rests_on(mut self, keys: &[&'static str]) -> Self {
        self.rests_on = keys.iter().map(|k| (*k).into()).collect();
        self
    }

    fn formula(mut self, f: impl Into<String>) -> Self {
        self.formula = f.into();
        self
    }

    fn done(self, inputs: Vec<Input>, judged_against: Option<String>, steps: Vec<Step>) -> Derived {
        let mut steps = steps;
        if self.value.is_some_and(|v| !v.is_finite()) {
            steps.push(Step::new(
                None,
                "Not computed: with these inputs the formula gives no finite figure (a divisor is zero or too small, or a value overflows).",
            ));
        }
        Derived {
            id: self.id,
            title: self.title.into(),
            value: sig(self.value),
            unit: self.unit.into(),
            formula: self.formula,
            inputs,
            judged_against,
            verdict: self.verdict,
            rests_on: self.rests_on,
            steps,
            not_computed_because: None,
        }
    }
}

/// Everything `evaluate` works from, with the defaults applied.
struct Basis<'a> {
    project: &'a Project,
    rules: &'a RuleBook,
    spec: &'a InputSpec,
    mains: MainsRange,
    limiter: LimiterReport,
    drop_v: f64,
    assumptions: Vec<String>,
    missing: Vec<String>,
}

pub(super) fn evaluate(
    project: &Project,
    rules: &RuleBook,
    barriers: &[BarrierResult],
    source: &Source,
) -> Result<Option<PowerEntryReport>, Problems> {
    let Some(spec) = &project.input else {
        return Ok(None);
    };
    let touch_rules = rules.table::<super::tables::TouchRules>();
    // `[design] standard` names the standard for the touch-current limits too, unless
    // `input.end_product_standard` says otherwise or the touch table does not carry it.
    let design_standard = project
        .design
        .standard
        .map(crate::standards::Standard::as_str)
        .filter(|s| spec.end_product_standard.is_none() && touch_rules.standard(s).is_some());
    let (standard, standard_title) = match design_standard {
        Some(s) => (
            s.to_string(),
            touch_rules
                .standard(s)
                .map(|t| t.title.clone())
                .unwrap_or_else(|| s.to_string()),
        ),
        None => end_product_standard(spec, touch_rules, source)?,
    };
    let mut assumptions = Vec::new();
    let mains = mains_range(
        project,
        spec,
        rules.table::<super::tables::MainsDefaults>(),
        &mut assumptions,
    );
    let mut b = Basis {
        project,
        rules,
        spec,
        mains,
        limiter: limiter_report(spec),
        drop_v: spec.bridge_drop_v.unwrap_or(0.0),
        assumptions,
        missing: Vec::new(),
    };
    if design_standard.is_some() {
        b.assumptions.push(format!(
            "End-product standard {standard_title} for the touch-current limits, as [design] standard names it (rule table {}).",
            TouchRules::ID
        ));
    } else if spec.end_product_standard.is_none() {
        b.assumptions.push(format!(
            "End-product standard {standard_title} for the touch-current limits (input.end_product_standard not given; rule table {}).",
            TouchRules::ID
        ));
    }
    if spec.limiter.is_none() {
        b.assumptions.push(
            "No inrush limiter ([input.limiter] not given): the inrush is limited by series_resistance_ohm alone.".to_string(),
        );
    }
    if spec.bridge_drop_v.is_none() {
        b.assumptions.push(
            "Ideal bridge diodes in the operating-point simulation (input.bridge_drop_v not given); the inrush figures never count the drop.".to_string(),
        );
    }
    if spec.bridge_surge_a.is_none() {
        b.missing.push(
            "input.bridge_surge_a (the bridge's surge rating, against the inrush peak)".to_string(),
        );
    }
    if let Some(l) = &spec.limiter
        && l.kind != LimiterKind::None
        && l.energy_rating_j.is_none()
    {
        b.missing.push(
            "input.limiter.energy_rating_j (the limiter's energy rating, against C V_pk² / 2)"
                .to_string(),
        );
    }

    let mut sections = Vec::new();
    let (inrush, inrush_section) = inrush(&b);
    sections.push(inrush_section);

    let (points, op_section, hold_up) = operating_points(&b);
    if let Some(s) = op_section {
        sections.push(s);
    }
    let input_rms_a = max_of(points.iter().map(|p| p.input_rms_a));
    let repetitive_peak_a = max_of(points.iter().map(|p| p.repetitive_peak_a));
    let low = points.first();
    let sustained = points.iter().all(|p| p.sustained);
    let bulk_valley_v = if sustained {
        min_of(points.iter().map(|p| p.bulk_valley_v))
    } else {
        None
    };

    let exact_rms = max_of(points.iter().map(|p| p.exact_input_rms_a));
    let (fuse, fuse_section) = fuse(&mut b, &inrush, exact_rms);
    sections.push(fuse_section);
    let (discharge, discharge_section) = discharge(&mut b, &standard);
    sections.push(discharge_section);
    let (touch, touch_section) = touch(&mut b, &standard, &standard_title);
    sections.push(touch_section);
    let (test_voltages, test_section) = test_voltages(&b, barriers);
    sections.push(test_section);

    // The bulk capacitor's highest voltage: switch-on, hot restart and operation.
    let bulk_peak = max_of(points.iter().map(|p| p.exact_bulk_peak_v))
        .map_or(inrush.exact_bulk_peak_v, |v| {
            v.max(inrush.exact_bulk_peak_v)
        });
    // Ids compared against every figure: written once, not once per figure.
    let bulk_peak_id = format!("{PE}.bulk_peak_v");
    for f in sections.iter_mut().flat_map(|s| s.figures.iter_mut()) {
        if f.id == bulk_peak_id {
            f.value = sig(Some(bulk_peak));
            f.verdict = Some(Verdict::of(spec.bulk_rated_v.map(|r| bulk_peak > r)));
        }
    }
    if spec.bulk_rated_v.is_none() {
        b.missing.push(
            "input.bulk_rated_v (the bulk capacitor's rated voltage, against its highest voltage at switch-on and hot restart)"
                .to_string(),
        );
    }
    // Figures judged in another section carry that section's verdict in their own row.
    let copies: Vec<(String, Option<Verdict>)> = [
        ("inrush_i2t_a2s", "fuse_required_i2t_a2s"),
        ("hot_restart_i2t_a2s", "fuse_hot_restart_i2t_a2s"),
        ("low_line.input_rms_a", "fuse_max_operating_a"),
    ]
    .iter()
    .map(|(to, from)| {
        let from_id = format!("{PE}.{from}");
        let v = sections
            .iter()
            .flat_map(|s| s.figures.iter())
            .find(|f| f.id == from_id)
            .and_then(|f| f.verdict);
        (format!("{PE}.{to}"), v)
    })
    .collect();
    let residual_id = format!("{PE}.discharge_residual_v");
    for f in sections.iter_mut().flat_map(|s| s.figures.iter_mut()) {
        if let Some((_, v)) = copies.iter().find(|(id, _)| *id == f.id) {
            f.verdict = *v;
            f.rests_on = vec![
                "input".into(),
                "mains".into(),
                "converter".into(),
                "emc.filter.dm_".into(),
            ];
        }
        if f.id == residual_id && discharge.residual_limit_v.is_some() {
            f.verdict = Some(Verdict::of(
                match (discharge.exact_residual_v, discharge.residual_limit_v) {
                    (Some(v), Some(l)) => Some(v > l),
                    _ => None,
                },
            ));
        }
    }
    // A figure that rests on an implausible input is never `pass`.
    let suspicious = crate::derivation::Suspicious::of(&project.warnings);
    let mut verdicts = std::collections::BTreeMap::new();
    for f in sections.iter_mut().flat_map(|s| s.figures.iter_mut()) {
        suspicious.settle_derivation(f);
        if let Some(v) = f.verdict {
            // `trim_start_matches` with a word builds a substring searcher for each id; a
            // prefix taken off while there is one gives the same slice with a comparison.
            let mut id = f.id.as_str();
            while let Some(rest) = id.strip_prefix("power_entry.") {
                id = rest;
            }
            verdicts.insert(id.to_string(), v);
        }
    }

    let touch_current_ma = if touch.is_empty() || touch.iter().any(|t| t.current_ma.is_none()) {
        None
    } else {
        max_of(touch.iter().map(|t| t.current_ma))
    };

    Ok(Some(PowerEntryReport {
        inrush_peak_a: significant(inrush.peak_a),
        inrush_i2t_a2s: significant(inrush.i2t_a2s),
        limiter_energy_j: sig(inrush.limiter_energy_j),
        hot_restart_peak_a: significant(inrush.hot_restart_peak_a),
        input_rms_a,
        power_factor: low.and_then(|p| p.power_factor),
        bulk_valley_v,
        discharge_time_constant_s: discharge.time_constant_s,
        touch_current_ma,
        repetitive_peak_a,
        bulk_ripple_v: max_of(points.iter().map(|p| p.bulk_ripple_v)),
        hold_up_time_ms: hold_up,
        min_bulk_v: project.converter.as_ref().map(|c| c.min_bulk_v),
        converter_declared: project.converter.is_some(),
        operating_points_sustained: sustained,
        operating_points_converged: points.iter().all(|p| p.converged || !p.sustained),
        mains: b.mains.clone(),
        limiter: b.limiter.clone(),
        inrush,
        operating_points: points,
        fuse,
        discharge,
        end_product_standard: standard,
        end_product_standard_title: standard_title,
        touch,
        test_voltages,
        bulk_peak_v: significant(bulk_peak),
        bulk_rated_v: spec.bulk_rated_v,
        verdicts,
        missing_ratings: b.missing,
        assumptions: b.assumptions,
        sections,
    }))
}

fn max_of(values: impl Iterator<Item = Option<f64>>) -> Option<f64> {
    values.flatten().reduce(f64::max)
}

fn min_of(values: impl Iterator<Item = Option<f64>>) -> Option<f64> {
    values.flatten().reduce(f64::min)
}

/// The end-product standard named by the project (checked against the touch-current
/// table, which a house rule may extend), or the table's default.
fn end_product_standard(
    spec: &InputSpec,
    touch: &TouchRules,
    source: &Source,
) -> Result<(String, String), Problems> {
    let id = match &spec.end_product_standard {
        None => touch.default_standard.clone(),
        Some(named) => {
            if touch.standard(&named.value).is_none() {
                let known: Vec<&str> = touch.standards.iter().map(|s| s.id.as_str()).collect();
                let mut d: Diagnostic = source
                    .diag(
                        &named.span,
                        format!(
                            "\"{}\" is not a standard of the touch-current rule table {}; expected {}",
                            named.value,
                            TouchRules::ID,
                            crate::diag::one_of(&known)
                        ),
                    )
                    .with_key("input.end_product_standard");
                if let Some(best) = suggest(&named.value, &known) {
                    d = d.with_help(format!("did you mean \"{best}\"?"));
                }
                return Err(d.into());
            }
            named.value.clone()
        }
    };
    let title = touch
        .standard(&id)
        .map(|s| s.title.clone())
        .unwrap_or_else(|| id.clone());
    Ok((id, title))
}

fn mains_range(
    project: &Project,
    spec: &InputSpec,
    defaults: &MainsDefaults,
    assumptions: &mut Vec<String>,
) -> MainsRange {
    let m = &project.mains;
    let tol = defaults.tolerance.value;
    let min_v = m.min_v.unwrap_or_else(|| {
        assumptions.push(format!(
            "Lowest mains voltage {} V: nominal_v {} V minus {} % (mains.min_v not given; {}, rule table {}).",
            show(m.nominal_v * (1.0 - tol)),
            show(m.nominal_v),
            show(tol * 100.0),
            defaults.tolerance.source,
            MainsDefaults::ID
        ));
        m.nominal_v * (1.0 - tol)
    });
    let max_v = m.max_v.unwrap_or_else(|| {
        assumptions.push(format!(
            "Highest mains voltage {} V: nominal_v {} V plus {} % (mains.max_v not given; {}, rule table {}).",
            show(m.nominal_v * (1.0 + tol)),
            show(m.nominal_v),
            show(tol * 100.0),
            defaults.tolerance.source,
            MainsDefaults::ID
        ));
        m.nominal_v * (1.0 + tol)
    });
    let (lo, hi) = (&defaults.low_frequency_hz, &defaults.high_frequency_hz);
    let min_f = match (spec.min_frequency_hz, m.frequency_hz) {
        (Some(f), _) | (None, Some(f)) => f,
        (None, None) => {
            assumptions.push(format!(
                "Lowest mains frequency {} Hz (neither input.min_frequency_hz nor mains.frequency_hz given; {}).",
                show(lo.value),
                lo.source
            ));
            lo.value
        }
    };
    let max_f = match (spec.max_frequency_hz, m.frequency_hz) {
        (Some(f), _) | (None, Some(f)) => f,
        (None, None) => {
            assumptions.push(format!(
                "Highest mains frequency {} Hz (neither input.max_frequency_hz nor mains.frequency_hz given; {}).",
                show(hi.value),
                hi.source
            ));
            hi.value
        }
    }
    .max(min_f);
    MainsRange {
        min_v: significant(min_v),
        max_v: significant(max_v),
        min_frequency_hz: min_f,
        max_frequency_hz: max_f,
        max_peak_v: significant(SQRT_2 * max_v),
    }
}

fn limiter_report(spec: &InputSpec) -> LimiterReport {
    match &spec.limiter {
        Some(l) => LimiterReport {
            kind: l.kind,
            declared: true,
            cold_ohm: l.cold_ohm,
            hot_ohm: l.hot_ohm,
            energy_rating_j: l.energy_rating_j,
        },
        None => LimiterReport {
            kind: LimiterKind::None,
            declared: false,
            cold_ohm: None,
            hot_ohm: None,
            energy_rating_j: None,
        },
    }
}

/// The limiter's resistance cold (switch-on) and hot (in operation); 0 without a limiter.
fn limiter_ohms(l: &LimiterReport) -> (f64, f64) {
    match l.kind {
        LimiterKind::None => (0.0, 0.0),
        _ => {
            let cold = l.cold_ohm.unwrap_or(0.0);
            (cold, l.hot_ohm.unwrap_or(cold))
        }
    }
}

fn peak_input(b: &Basis) -> Input {
    input(
        "V_pk",
        b.mains.max_peak_v,
        "V",
        format!("√2 × highest mains voltage {} V", show(b.mains.max_v)),
    )
}

fn inrush(b: &Basis) -> (InrushReport, Section) {
    let spec = b.spec;
    let v_pk = SQRT_2 * b.mains.max_v;
    let c_f = spec.bulk_capacitance_uf * 1e-6;
    let r_s = spec.series_resistance_ohm;
    let (r_cold_lim, r_hot_lim) = limiter_ohms(&b.limiter);
    let filter = b.project.emc.as_ref().map(|e| &e.filter);
    let l_uh = filter.and_then(|f| f.dm_inductance_uh);
    let r_l = filter
        .and_then(|f| f.dm_inductor_resistance_ohm)
        .filter(|_| l_uh.is_some())
        .unwrap_or(0.0);
    let r_cold = r_s + r_cold_lim + r_l;
    let r_hot = r_s + r_hot_lim + r_l;
    let has_limiter = b.limiter.kind != LimiterKind::None;
    let resistive_peak = v_pk / r_cold;
    let resistive_i2t = v_pk * v_pk * c_f / (2.0 * r_cold);
    let resistive_hot_peak = v_pk / r_hot;
    let resistive_hot_i2t = v_pk * v_pk * c_f / (2.0 * r_hot);
    // Through the filter's inductance: an L-R-C switch-on, solved in closed form (from 0 V
    // both cold and at a hot restart: the bulk capacitor may have discharged fully;
    // conservative).
    let lrc = |r: f64| {
        l_uh.and_then(|l| {
            super::inrush::switch_on(&super::inrush::LrcCircuit {
                peak_v: v_pk,
                frequency_hz: b.mains.max_frequency_hz,
                inductance_h: l * 1e-6,
                resistance_ohm: r,
                capacitance_f: c_f,
                start_v: 0.0,
            })
        })
    };
    let cold_lrc = lrc(r_cold);
    // A resistor limiter (or none) has the same path hot and cold: one solution serves both.
    let hot_lrc = if r_hot == r_cold {
        cold_lrc
    } else {
        lrc(r_hot)
    };
    let (peak_a, i2t) = match &cold_lrc {
        Some(x) => (x.peak_a, x.i2t_a2s),
        None => (resistive_peak, resistive_i2t),
    };
    let (hot_peak, hot_i2t) = match &hot_lrc {
        Some(x) => (x.peak_a, x.i2t_a2s),
        None => (resistive_hot_peak, resistive_hot_i2t),
    };
    let cold_bulk_peak = cold_lrc.map_or(v_pk, |x| x.bulk_peak_v.max(v_pk));
    let hot_bulk_peak = hot_lrc.map_or(v_pk, |x| x.bulk_peak_v.max(v_pk));
    let z0 = l_uh.map(|l| (l * 1e-6 / c_f).sqrt());
    let energy = has_limiter.then(|| c_f * v_pk * v_pk / 2.0);
    let report = InrushReport {
        peak_v: significant(v_pk),
        cold_path_ohm: significant(r_cold),
        hot_path_ohm: significant(r_hot),
        peak_a: significant(peak_a),
        i2t_a2s: significant(i2t),
        time_constant_ms: significant(r_cold * c_f * 1e3),
        hot_restart_peak_a: significant(hot_peak),
        hot_restart_i2t_a2s: significant(hot_i2t),
        hot_restart_time_constant_ms: significant(r_hot * c_f * 1e3),
        limiter_energy_j: energy.map(significant),
        bridge_surge_a: spec.bridge_surge_a,
        model: if cold_lrc.is_some() { "l-r-c" } else { "r-c" },
        filter_inductance_uh: l_uh.filter(|_| cold_lrc.is_some()),
        filter_inductor_resistance_ohm: (cold_lrc.is_some() && r_l > 0.0).then_some(r_l),
        characteristic_impedance_ohm: z0.filter(|_| cold_lrc.is_some()).map(significant),
        resistive_peak_a: significant(resistive_peak),
        resistive_hot_restart_peak_a: significant(resistive_hot_peak),
        bulk_peak_v: significant(cold_bulk_peak),
        hot_restart_bulk_peak_v: significant(hot_bulk_peak),
        exact_peak_a: peak_a,
        exact_hot_restart_peak_a: hot_peak,
        exact_i2t_a2s: i2t,
        exact_hot_restart_i2t_a2s: hot_i2t,
        exact_bulk_peak_v: cold_bulk_peak.max(hot_bulk_peak),
    };

    let kind = b.limiter.kind.as_str();
    let r_s_in = input(
        "R_s",
        r_s,
        "Ω",
        "input.series_resistance_ohm (line, bridge, capacitor ESR)",
    );
    let c_in = input(
        "C",
        spec.bulk_capacitance_uf,
        "µF",
        "input.bulk_capacitance_uf",
    );
    let cold_in = |what: &str| {
        if has_limiter {
            vec![input(
                "R_cold",
                r_cold_lim,
                "Ω",
                format!("input.limiter.cold_ohm ({kind}) {what}"),
            )]
        } else {
            Vec::new()
        }
    };
    let hot_in = || {
        if has_limiter {
            vec![input(
                "R_hot",
                r_hot_lim,
                "Ω",
                match b.limiter.kind {
                    LimiterKind::Resistor if b.limiter.hot_ohm == b.limiter.cold_ohm => {
                        "input.limiter.cold_ohm (a resistor: the same warm)".to_string()
                    }
                    _ => format!("input.limiter.hot_ohm ({kind})"),
                },
            )]
        } else {
            Vec::new()
        }
    };
    let lrc_used = cold_lrc.is_some();
    let r_l_words = if lrc_used && r_l > 0.0 { " + R_L" } else { "" };
    let r_cold_words = if has_limiter {
        format!("(R_cold + R_s{r_l_words})")
    } else if r_l_words.is_empty() {
        "R_s".to_string()
    } else {
        format!("(R_s{r_l_words})")
    };
    let r_hot_words = if has_limiter {
        format!("(R_hot + R_s{r_l_words})")
    } else {
        r_cold_words.clone()
    };
    let theory = if lrc_used {
        "circuit theory: through the filter's inductance the switch-on is an L-R-C circuit, L di/dt = V_pk |cos ωt| - v - R i, C dv/dt = i while the bridge conducts (the bridge stops the current reversing; no load yet); solved exactly: between the source's zeros and the instants where the bridge stops the current, the series R-L-C response to a sinusoid from its state there (textbook series RLC step/sinusoid response: the sinusoidal steady state plus the damped homogeneous part), with the current's peak and end located on it, from 0 V"
    } else {
        "circuit theory: charging C from V_pk through a constant R, i(t) = (V_pk / R) e^(-t / RC)"
    };
    let l_in = || {
        let mut v = Vec::new();
        if lrc_used && let Some(l) = l_uh {
            v.push(input(
                "L",
                l,
                "µH",
                "emc.filter.dm_inductance_uh (in the charging path)",
            ));
            if r_l > 0.0 {
                v.push(input(
                    "R_L",
                    r_l,
                    "Ω",
                    "emc.filter.dm_inductor_resistance_ohm",
                ));
            }
        }
        v
    };
    let lrc_step = |x: Option<super::inrush::LrcInrush>, r: f64, resistive: f64| match x {
        Some(x) => Step::new(
            None,
            format!(
                "L-R-C: sqrt(L / C) = {} Ω, damping ratio R / (2 sqrt(L / C)) = {}; the current peaks {} µs after switch-on at {} A (V_pk / sqrt(L / C) = {} A bounds it for a light damping; V_pk / R = {} A is the R-C figure without L); the bulk capacitor reaches {} V{}.",
                show(significant(z0.unwrap_or(f64::NAN))),
                show(significant(r / (2.0 * z0.unwrap_or(f64::NAN)))),
                show(significant(x.peak_at_s * 1e6)),
                show(significant(x.peak_a)),
                show(significant(v_pk / z0.unwrap_or(f64::NAN))),
                show(significant(resistive)),
                show(significant(x.bulk_peak_v)),
                if x.closed_form {
                    ""
                } else if x.converged {
                    " (simulated: fourth-order Runge-Kutta, step halved until the figures agree within 1e-5, where the closed form does not apply)"
                } else {
                    " (simulated where the closed form does not apply; the step halvings did not agree within 1e-5: an estimate)"
                }
            ),
        ),
        None => Step::new(
            None,
            "R-C: no filter inductance is declared in the charging path (emc.filter.dm_inductance_uh).",
        ),
    };
    let surge_fails = |peak: f64| spec.bridge_surge_a.map(|a| peak > a);
    let inrush_keys: &[&str] = &[
        "mains.max_v",
        "input.series_resistance_ohm",
        "input.bulk_capacitance_uf",
        "input.limiter",
        "input.bridge_surge_a",
        "emc.filter.dm_",
        "input.max_frequency_hz",
        "mains.frequency_hz",
    ];
    let surge_judge = spec.bridge_surge_a.map(|a| {
        format!(
            "the bridge's surge rating input.bridge_surge_a = {} A",
            show(a)
        )
    });
    let mut figures = vec![
        Figure::new("inrush_peak_v", "Peak of the highest mains voltage", Some(v_pk), "V")
            .formula("V_pk = √2 × V_max")
            .done(
                vec![input("V_max", b.mains.max_v, "V", "highest mains voltage")],
                None,
                vec![Step::new(None, "Common practice: 230 V rms has a 325 V peak; switch-on at the crest is the worst case.")],
            ),
        Figure::new(
            "inrush_peak_a",
            "Inrush peak current at switch-on (cold limiter)",
            Some(peak_a),
            "A",
        )
        .formula(if lrc_used {
            format!("I_pk = max of i(t), L-R-C through {r_cold_words} (solved)")
        } else {
            format!("I_pk = V_pk / {r_cold_words}")
        })
        .judged(surge_fails(peak_a))
        .rests_on(inrush_keys)
        .done(
            [vec![peak_input(b)], cold_in("at switch-on"), vec![r_s_in.clone()], l_in(), vec![c_in.clone()]].concat(),
            surge_judge.clone(),
            if lrc_used {
                vec![Step::new(None, theory), lrc_step(cold_lrc, r_cold, resistive_peak)]
            } else {
                vec![Step::new(None, format!("{theory}; the peak is at t = 0."))]
            },
        ),
        Figure::new("inrush_i2t_a2s", "Inrush pulse I²t", Some(i2t), "A²s")
            .formula(if lrc_used {
                "I²t = integral of i(t)² of the L-R-C pulse".to_string()
            } else {
                format!("I²t = V_pk² × C / (2 {r_cold_words})")
            })
            .done(
                [vec![peak_input(b), c_in.clone()], cold_in("at switch-on"), vec![r_s_in.clone()], l_in()]
                    .concat(),
                Some("the fuse's melting I²t divided by the pulse factor (judged in the fuse section)".to_string()),
                vec![Step::new(None, if lrc_used { theory.to_string() } else { format!("{theory}; the integral of i² from 0 to infinity is V_pk² C / (2 R).") })],
            ),
        Figure::new(
            "inrush_time_constant_ms",
            "Time constant of the inrush pulse",
            Some(r_cold * c_f * 1e3),
            "ms",
        )
        .formula(format!("τ = {r_cold_words} × C"))
        .done(
            [
                cold_in("at switch-on"),
                vec![r_s_in.clone()],
                // The inductor's winding resistance is in the charging path; L itself is not in τ.
                l_in().into_iter().filter(|i| i.symbol == "R_L").collect(),
                vec![c_in.clone()],
            ]
            .concat(),
            None,
            vec![Step::new(None, "A bridge's surge rating is given for a 8.3 ms or 10 ms half-sine: a pulse much shorter than that is judged conservatively by its peak.")],
        ),
        Figure::new(
            "limiter_energy_j",
            "Energy the limiter absorbs at switch-on",
            energy,
            "J",
        )
        .formula("E = C × V_pk² / 2")
        .judged(match (energy, b.limiter.energy_rating_j) {
            (Some(e), Some(r)) => Some(e > r),
            _ => None,
        })
        .rests_on(&["mains.max_v", "input.bulk_capacitance_uf", "input.limiter"])
        .done(
            vec![peak_input(b), c_in.clone()],
            b.limiter
                .energy_rating_j
                .map(|e| format!("the limiter's energy rating input.limiter.energy_rating_j = {} J", show(e))),
            vec![Step::new(
                None,
                if has_limiter {
                    "Circuit theory: charging C through any resistance dissipates C V_pk² / 2 in it; all of it is charged to the limiter (the convention of thermistor energy ratings), which is conservative when R_s takes a share."
                } else {
                    "No limiter: nothing to absorb the energy but R_s."
                },
            )],
        ),
        Figure::new(
            "hot_restart_peak_a",
            "Peak current at a hot restart (limiter still hot)",
            Some(hot_peak),
            "A",
        )
        .formula(if lrc_used {
            format!("I_pk,hot = max of i(t), L-R-C through {r_hot_words} (solved)")
        } else {
            format!("I_pk,hot = V_pk / {r_hot_words}")
        })
        .judged(surge_fails(hot_peak))
        .rests_on(inrush_keys)
        .done(
            [vec![peak_input(b)], hot_in(), vec![r_s_in.clone()], l_in(), vec![c_in.clone()]].concat(),
            surge_judge,
            {
                let mut v = vec![Step::new(None, "A brief mains interruption lets the bulk capacitor discharge through the load before the limiter cools; the next crest charges it through the hot resistance (from 0 V: the bulk capacitor may have discharged fully; conservative).")];
                if lrc_used {
                    v.push(lrc_step(hot_lrc, r_hot, resistive_hot_peak));
                }
                v
            },
        ),
        Figure::new("hot_restart_i2t_a2s", "Pulse I²t at a hot restart", Some(hot_i2t), "A²s")
            .formula(if lrc_used {
                "I²t_hot = integral of i(t)² of the L-R-C pulse".to_string()
            } else {
                format!("I²t_hot = V_pk² × C / (2 {r_hot_words})")
            })
            .done(
                [vec![peak_input(b), c_in.clone()], hot_in(), vec![r_s_in], l_in()].concat(),
                Some("the fuse's melting I²t (a single pulse; judged in the fuse section)".to_string()),
                vec![Step::new(None, theory)],
            ),
        Figure::new(
            "bulk_peak_v",
            "Highest bulk capacitor voltage (switch-on, hot restart, operation)",
            Some(report.exact_bulk_peak_v),
            "V",
        )
        .formula(if lrc_used {
            "V_bulk,pk = highest v(t) of the L-R-C switch-on and hot restart (the bridge holds the capacitor at its peak), and of the operating points"
        } else {
            "V_bulk,pk = V_pk (an R-C charge never overshoots the crest), or the operating points' highest v(t)"
        })
        .judged(spec.bulk_rated_v.map(|r| report.exact_bulk_peak_v > r))
        .rests_on(&[
            "mains.max_v",
            "input.series_resistance_ohm",
            "input.bulk_capacitance_uf",
            "input.limiter",
            "input.bulk_rated_v",
            "emc.filter.dm_",
        ])
        .done(
            [vec![peak_input(b), c_in], l_in()].concat(),
            Some(match spec.bulk_rated_v {
                Some(r) => format!("the bulk capacitor's rated voltage input.bulk_rated_v = {} V", show(r)),
                None => "the bulk capacitor's rated voltage (input.bulk_rated_v not declared: not judged)".to_string(),
            }),
            vec![Step::new(
                None,
                if lrc_used {
                    format!(
                        "Switch-on {} V, hot restart {} V: the filter's inductance lets the capacitor ring above the crest {} V.",
                        show(significant(cold_bulk_peak)),
                        show(significant(hot_bulk_peak)),
                        show(significant(v_pk))
                    )
                } else {
                    format!("The crest of the highest mains voltage, {} V.", show(significant(v_pk)))
                },
            )],
        ),
    ];
    if !has_limiter {
        let energy_id = format!("{PE}.limiter_energy_j");
        figures.retain(|f| f.id != energy_id);
    }
    let mut notes = vec![format!(
        "Limiter: {}{}.",
        kind,
        if b.limiter.declared {
            ""
        } else {
            " (no input.limiter table)"
        }
    )];
    if !has_limiter {
        notes.push("Without a limiter the inrush is limited only by the series resistance; it is judged as it is.".to_string());
    }
    notes.push("Remedies where the peak exceeds the bridge's surge rating: a larger cold resistance, or a relay or active bypass across the limiter so that a hot restart still sees the cold resistance.".to_string());
    (
        report,
        Section {
            id: format!("{PE}.inrush"),
            title: "Inrush at switch-on and at a hot restart".to_string(),
            inputs: Vec::new(),
            figures,
            notes,
        },
    )
}

/// The operating points at low line and high line, their section, and the hold-up time.
fn operating_points(b: &Basis) -> (Vec<OperatingPoint>, Option<Section>, Option<f64>) {
    let Some(conv) = &b.project.converter else {
        return (Vec::new(), None, None);
    };
    let spec = b.spec;
    let load_w = conv.output_w / conv.efficiency;
    let (_, r_hot_lim) = limiter_ohms(&b.limiter);
    // The filter's differential-mode inductor sits in the line: its resistance is in the
    // charging path in operation too.
    let filter = b.project.emc.as_ref().map(|e| &e.filter);
    let r_l = filter
        .filter(|f| f.dm_inductance_uh.is_some())
        .and_then(|f| f.dm_inductor_resistance_ohm)
        .unwrap_or(0.0);
    let series = spec.series_resistance_ohm + r_hot_lim + r_l;
    let c_f = spec.bulk_capacitance_uf * 1e-6;
    let mut circuit_inputs = vec![input(
        "R_s",
        spec.series_resistance_ohm,
        "Ω",
        "input.series_resistance_ohm",
    )];
    if r_hot_lim > 0.0 {
        circuit_inputs.push(input(
            "R_hot",
            r_hot_lim,
            "Ω",
            "limiter resistance in operation",
        ));
    }
    if r_l > 0.0 {
        circuit_inputs.push(input(
            "R_L",
            r_l,
            "Ω",
            "emc.filter.dm_inductor_resistance_ohm (the filter's inductor, in the line)",
        ));
    }
    circuit_inputs.extend([
        input(
            "C",
            spec.bulk_capacitance_uf,
            "µF",
            "input.bulk_capacitance_uf",
        ),
        input(
            "P",
            load_w,
            "W",
            format!(
                "converter.output_w {} W / converter.efficiency {}",
                show(conv.output_w),
                show(conv.efficiency)
            ),
        ),
        input("V_d", b.drop_v, "V", "input.bridge_drop_v (two diodes)"),
    ]);
    let mut points = Vec::new();
    let mut figures = Vec::new();
    let mut hold_up = None;
    // Low and high line at the same frequency sample the same sine.
    let mut grids = rectifier::SourceGrids::default();
    for (name, v_rms, f) in [
        ("low-line", b.mains.min_v, b.mains.min_frequency_hz),
        ("high-line", b.mains.max_v, b.mains.max_frequency_hz),
    ] {
        let rect = Rectifier {
            v_rms,
            frequency_hz: f,
            series_ohm: series,
            capacitance_f: c_f,
            load_w,
            diode_drop_v: b.drop_v,
        };
        let s = rectifier::steady_state_sharing(&rect, &mut grids);
        let ok = |x: f64| (s.sustained && x.is_finite()).then_some(significant(x));
        let point = OperatingPoint {
            name: name.to_string(),
            v_rms: significant(v_rms),
            frequency_hz: f,
            series_ohm: significant(series),
            load_w: significant(load_w),
            bridge_drop_v: b.drop_v,
            sustained: s.sustained,
            converged: s.converged && s.step_converged,
            half_cycles: s.half_cycles,
            steps_per_half_cycle: s.steps_per_half_cycle,
            input_rms_a: ok(s.input_rms_a),
            repetitive_peak_a: ok(s.repetitive_peak_a),
            input_power_w: ok(s.input_power_w),
            power_factor: ok(s.power_factor),
            bulk_valley_v: ok(s.bulk_valley_v),
            bulk_peak_v: ok(s.bulk_peak_v),
            bulk_ripple_v: ok(s.bulk_ripple_v),
            conduction_ms: ok(s.conduction_ms),
            limiter_dissipation_w: ok(s.input_rms_a * s.input_rms_a * r_hot_lim)
                .filter(|_| r_hot_lim > 0.0),
            energy_balance_error: ok(s.energy_balance_error),
            exact_input_rms_a: (s.sustained && s.input_rms_a.is_finite()).then_some(s.input_rms_a),
            exact_bulk_valley_v: (s.sustained && s.bulk_valley_v.is_finite())
                .then_some(s.bulk_valley_v),
            exact_bulk_peak_v: (s.sustained && s.bulk_peak_v.is_finite()).then_some(s.bulk_peak_v),
        };
        figures.extend(point_figures(b, conv, &rect, &s, &point));
        if name == "low-line"
            && let Some(valley) = point.bulk_valley_v
        {
            let t = c_f * (valley * valley - conv.min_bulk_v * conv.min_bulk_v) / (2.0 * load_w);
            let value = (t > 0.0 && (t * 1e3).is_finite()).then_some(t * 1e3);
            hold_up = value.map(significant);
            figures.push(
                Figure::new(
                    "hold_up_time_ms",
                    "Hold-up time from the low-line valley to min_bulk_v",
                    value,
                    "ms",
                )
                .formula("t = C × (V_valley² - V_min²) / (2 P)")
                .done(
                    vec![
                        input("C", spec.bulk_capacitance_uf, "µF", "input.bulk_capacitance_uf"),
                        input("V_valley", valley, "V", "low-line bulk valley (simulated)"),
                        input("V_min", conv.min_bulk_v, "V", "converter.min_bulk_v"),
                        input("P", load_w, "W", "converter.output_w / converter.efficiency"),
                    ],
                    None,
                    vec![Step::new(
                        None,
                        if value.is_some() {
                            "Energy balance at constant power: C (V1² - V2²) / 2 = P t; a mains drop-out at the valley is the worst case."
                        } else if !t.is_finite() {
                            "Not computed: with these figures the energy balance gives no finite time (the load power is too small to divide by)."
                        } else {
                            "The valley is already at or below min_bulk_v: no hold-up."
                        },
                    )],
                ),
            );
        }
        points.push(point);
    }
    let notes = vec![
        format!(
            "Simulated in the time domain: ideal full-wave bridge (total drop V_d), series resistance R = R_s + limiter hot resistance (+ the filter inductor's resistance where declared), bulk capacitor C, constant-power load P = output_w / efficiency; adaptive step: from {} steps per half-cycle, doubled (up to {}) until the energy balances, |P_in - (P + R I_rms² + V_d I_avg)| within {} % of P_in, and the RMS current, repetitive peak and valley move by less than {} % (here {} and {} steps at low and high line); conduction steps implicit: backward Euler, then second-order BDF; the load-only discharge exactly, v² = v0² - 2 P t / C; periodic steady state when the bulk voltage repeats after a half-cycle within {:e} of the source peak (at most {} half-cycles).",
            rectifier::STEPS_PER_HALF_CYCLE,
            rectifier::MAX_STEPS_PER_HALF_CYCLE,
            show(rectifier::ENERGY_TOLERANCE * 100.0),
            show(rectifier::ENERGY_TOLERANCE * 100.0),
            points.first().map(|p| p.steps_per_half_cycle).unwrap_or(0),
            points.get(1).map(|p| p.steps_per_half_cycle).unwrap_or(0),
            rectifier::STEADY_STATE_TOLERANCE,
            rectifier::MAX_HALF_CYCLES
        ),
        "Low line: lowest mains voltage and frequency (the valley, the RMS current and the hold-up are worst there); high line: highest voltage and frequency.".to_string(),
    ];
    (
        points,
        Some(Section {
            id: format!("{PE}.operating_point"),
            title: "Rectifier operating point".to_string(),
            inputs: circuit_inputs,
            figures,
            notes,
        }),
        hold_up,
    )
}

fn point_figures(
    b: &Basis,
    conv: &ConverterSpec,
    rect: &Rectifier,
    s: &SteadyState,
    p: &OperatingPoint,
) -> Vec<Derived> {
    let (_, r_hot_lim) = limiter_ohms(&b.limiter);
    let words = if p.name == "low-line" {
        "low line"
    } else {
        "high line"
    };
    let sim_inputs = || {
        let low = p.name == "low-line";
        vec![
            input(
                "V_rms",
                rect.v_rms,
                "V",
                if low {
                    "lowest mains voltage"
                } else {
                    "highest mains voltage"
                },
            ),
            input(
                "f",
                rect.frequency_hz,
                "Hz",
                if low {
                    "lowest mains frequency"
                } else {
                    "highest mains frequency"
                },
            ),
        ]
    };
    let sim_step = || {
        vec![Step::new(
            None,
            format!(
                "Steady state after {} half-cycles of {} steps{} ({}).",
                s.half_cycles,
                s.steps_per_half_cycle,
                if s.steps_per_half_cycle > rectifier::STEPS_PER_HALF_CYCLE {
                    ", starting from the steady state at the coarser step"
                } else {
                    ""
                },
                if !s.sustained {
                    "not sustained: the load collapses the bulk voltage"
                } else if s.converged {
                    "converged"
                } else {
                    "NOT converged within the bound"
                }
            ),
        )]
    };
    let point = p.name.replace('-', "_");
    let id = |x: &str| [point.as_str(), ".", x].concat();
    let peak = rect.source_peak_v();
    let i_avg = rect.load_w / peak;
    let ripple_bound = rect.load_w / (peak * 2.0 * rect.frequency_hz * rect.capacitance_f);
    let mut out = vec![
        Figure::new(&id("input_rms_a"), format!("Input RMS current, {words}"), p.input_rms_a, "A")
            .formula("I_rms = sqrt(mean of i(t)² over a half-cycle), i(t) from the simulation")
            .done(
                sim_inputs(),
                (p.name == "low-line").then(|| "the fuse's derated current".to_string()),
                sim_step(),
            ),
        Figure::new(
            &id("repetitive_peak_a"),
            format!("Repetitive peak current, {words}"),
            p.repetitive_peak_a,
            "A",
        )
        .formula("I_rep = max of i(t) = (V_pk |sin ωt| - V_d - v(t)) / R while the bridge conducts")
        .done(
            sim_inputs(),
            None,
            vec![Step::new(
                None,
                format!(
                    "Conduction {} ms per half-cycle.",
                    p.conduction_ms.map(show).unwrap_or_else(|| "-".to_string())
                ),
            )],
        ),
        Figure::new(
            &id("power_factor"),
            format!("Power factor, {words}"),
            p.power_factor,
            "",
        )
        .formula("PF = P_in / (V_rms × I_rms), P_in = mean of V_pk |sin ωt| × i(t)")
        .done(
            sim_inputs(),
            None,
            vec![Step::new(
                None,
                format!(
                    "Real input power {} W (load plus resistance and bridge losses).",
                    p.input_power_w.map(show).unwrap_or_else(|| "-".to_string())
                ),
            )],
        ),
        Figure::new(
            &id("bulk_valley_v"),
            format!("Bulk voltage valley, {words}"),
            p.bulk_valley_v,
            "V",
        )
        .formula("V_valley = lowest v(t); between pulses v(t)² = v0² - 2 P t / C exactly")
        .judged(p.exact_bulk_valley_v.map(|v| v < conv.min_bulk_v))
        .rests_on(&["input", "converter", "mains"])
        .done(
            sim_inputs(),
            Some(format!("converter.min_bulk_v = {} V", show(conv.min_bulk_v))),
            sim_step(),
        ),
        Figure::new(
            &id("bulk_ripple_v"),
            format!("Bulk ripple, {words}"),
            p.bulk_ripple_v,
            "V",
        )
        .formula("dV = highest v(t) - lowest v(t)")
        .done(
            sim_inputs(),
            None,
            vec![Step::new(
                None,
                if ripple_bound.is_finite() {
                    format!(
                        "Cross-check, textbook upper bound for a full-wave rectifier (discharge over the whole half-cycle): dV <= P / (V_pk × 2 f × C) = {} V.",
                        show(ripple_bound)
                    )
                } else {
                    "Cross-check, textbook upper bound for a full-wave rectifier, dV <= P / (V_pk × 2 f × C): not computed, it gives no finite figure (the source peak is too small to divide by).".to_string()
                },
            )],
        ),
    ];
    if r_hot_lim > 0.0
        && let Some(i_rms) = p.input_rms_a
    {
        out.push(
            Figure::new(
                &id("limiter_dissipation_w"),
                format!("Limiter dissipation, {words}"),
                p.limiter_dissipation_w,
                "W",
            )
            .formula("P_lim = I_rms² × R_hot")
            .done(
                vec![
                    input("I_rms", i_rms, "A", "input RMS current above"),
                    input("R_hot", r_hot_lim, "Ω", "limiter resistance in operation"),
                ],
                None,
                vec![Step::new(None, if i_avg.is_finite() {
                    format!("For scale: the average current into the bulk capacitor is about P / V_pk = {} A.", show(i_avg))
                } else {
                    "For scale: the average current into the bulk capacitor, P / V_pk, is not computed (the source peak is too small to divide by).".to_string()
                })],
            ),
        );
    }
    out
}

fn fuse(
    b: &mut Basis,
    inrush: &InrushReport,
    input_rms_a: Option<f64>,
) -> (Option<FuseReport>, Section) {
    let rules = b.rules.table::<crate::power_entry::tables::FuseRules>();
    let rule = Some(FuseRules::ID);
    let id_section = format!("{PE}.fuse");
    let Some(f) = &b.spec.fuse else {
        return (
            None,
            Section {
                id: id_section,
                title: "Input fuse".to_string(),
                inputs: Vec::new(),
                figures: Vec::new(),
                notes: vec!["No fuse is declared (no input.fuse table).".to_string()],
            },
        );
    };
    for (key, absent, what) in [
        (
            "rated_a",
            f.rated_a.is_none(),
            "against the input RMS current",
        ),
        (
            "melting_i2t_a2s",
            f.melting_i2t_a2s.is_none(),
            "against the inrush I²t",
        ),
        (
            "breaking_a",
            f.breaking_a.is_none(),
            "against the prospective fault current",
        ),
        (
            "rated_v",
            f.rated_v.is_none(),
            "against the equipment's highest rated voltage",
        ),
        ("speed", f.speed.is_none(), "for the pulse factor"),
    ] {
        if absent {
            b.missing.push(format!("input.fuse.{key} ({what})"));
        }
    }
    let derating = rules.derating.value;
    let pulse = f.speed.and_then(|s| rules.pulse_factor(s.as_str()));
    let prospective_declared = b.spec.prospective_fault_a.is_some();
    let prospective = b
        .spec
        .prospective_fault_a
        .unwrap_or(rules.default_prospective_fault_a.value);
    if !prospective_declared {
        b.assumptions.push(format!(
            "Prospective fault current {} A at the input for the fuse's breaking capacity (input.prospective_fault_a not given; {}, rule table {}).",
            show(prospective),
            rules.default_prospective_fault_a.source,
            FuseRules::ID
        ));
    }
    let max_operating = f.rated_a.map(|a| a * derating);
    let required_i2t = pulse.map(|p| p.factor * inrush.exact_i2t_a2s);
    let rated_supply_declared = b.spec.highest_rated_v.is_some();
    let rated_supply = b.spec.highest_rated_v.unwrap_or(b.project.mains.nominal_v);
    if !rated_supply_declared && f.rated_v.is_some() {
        b.assumptions.push(format!(
            "The equipment's highest rated voltage is taken as mains.nominal_v = {} V for the fuse's voltage rating (input.highest_rated_v not given; 240 for a 100-240 V rating).",
            show(rated_supply)
        ));
    }
    let report = FuseReport {
        rated_a: f.rated_a,
        melting_i2t_a2s: f.melting_i2t_a2s,
        breaking_a: f.breaking_a,
        rated_v: f.rated_v,
        speed: f.speed,
        derating,
        max_operating_a: sig(max_operating),
        pulse_factor: pulse.map(|p| p.factor),
        required_i2t_a2s: sig(required_i2t),
        hot_restart_i2t_a2s: inrush.hot_restart_i2t_a2s,
        prospective_fault_a: prospective,
        prospective_declared,
        mains_max_v: b.mains.max_v,
        rated_supply_v: rated_supply,
        rated_supply_declared,
        rated_v_below_mains_max: f.rated_v.map(|r| r < b.mains.max_v),
    };
    let rated_in = |v: Option<f64>| {
        v.map(|a| vec![input("I_rated", a, "A", "input.fuse.rated_a")])
            .unwrap_or_default()
    };
    let figures = vec![
        Figure::new(
            "fuse_max_operating_a",
            "Highest current the fuse should carry",
            max_operating,
            "A",
        )
        .formula("I_max = k × I_rated")
        .judged(match (max_operating, input_rms_a) {
            (Some(m), Some(i)) => Some(i > m),
            _ => None,
        })
        .rests_on(&["input", "converter", "mains"])
        .done(
            [
                rated_in(f.rated_a),
                vec![input("k", derating, "", format!("derating, rule table {}", FuseRules::ID))],
            ]
            .concat(),
            Some(match input_rms_a {
                Some(i) => format!("the input RMS current {} A (the higher of the two operating points)", show(i)),
                None => "the input RMS current (not computed: no converter)".to_string(),
            }),
            vec![Step::new(rule, format!("Derating {}: {} (at 25 C ambient; derate further for a hotter one).", show(derating), rules.derating.source))],
        ),
        Figure::new(
            "fuse_required_i2t_a2s",
            "Melting I²t the inrush calls for",
            required_i2t,
            "A²s",
        )
        .formula("I²t_req = n × I²t_inrush")
        .judged(match (required_i2t, f.melting_i2t_a2s) {
            (Some(r), Some(m)) => Some(m < r),
            _ => None,
        })
        .rests_on(&["input", "mains", "emc.filter.dm_"])
        .done(
            [
                vec![input("I²t_inrush", inrush.i2t_a2s, "A²s", "inrush pulse I²t (cold switch-on)")],
                pulse
                    .map(|p| vec![input("n", p.factor, "", format!("pulse factor for {} fuses, rule table {}", p.speed, FuseRules::ID))])
                    .unwrap_or_default(),
            ]
            .concat(),
            f.melting_i2t_a2s
                .map(|m| format!("the fuse's melting I²t input.fuse.melting_i2t_a2s = {} A²s", show(m))),
            vec![Step::new(
                rule,
                match (pulse, f.speed) {
                    (Some(p), _) => format!("Pulse factor {} for repeated switch-ons: {}.", show(p.factor), p.source),
                    (None, Some(s)) => format!("The rules give no pulse factor for {} fuses: not judged; compare the inrush pulse with the maker's pulse-withstand curve.", s.as_str()),
                    (None, None) => "The fuse's speed is not declared: no pulse factor.".to_string(),
                },
            )],
        ),
        Figure::new(
            "fuse_prospective_fault_a",
            "Prospective fault current the fuse must break",
            Some(prospective),
            "A",
        )
        .formula("I_fault (declared, or the rules' default)")
        .judged(f.breaking_a.map(|a| a < prospective))
        .rests_on(&["input.prospective_fault_a", "input.fuse.breaking_a"])
        .done(
            vec![input(
                "I_fault",
                prospective,
                "A",
                if prospective_declared {
                    "input.prospective_fault_a".to_string()
                } else {
                    format!("default, rule table {}", FuseRules::ID)
                },
            )],
            f.breaking_a
                .map(|a| format!("the fuse's breaking capacity input.fuse.breaking_a = {} A", show(a))),
            if prospective_declared {
                Vec::new()
            } else {
                vec![Step::new(rule, rules.default_prospective_fault_a.source.clone())]
            },
        ),
    ];
    let mut figures = figures;
    figures.push(
        Figure::new(
            "fuse_rated_supply_v",
            "Highest rated supply voltage the fuse must interrupt",
            Some(rated_supply),
            "V",
        )
        .formula("V_rated (input.highest_rated_v, or mains.nominal_v)")
        .judged(f.rated_v.map(|r| r < rated_supply))
        .rests_on(&["input.highest_rated_v", "mains.nominal_v", "input.fuse.rated_v"])
        .done(
            vec![input(
                "V_rated",
                rated_supply,
                "V",
                if rated_supply_declared {
                    "input.highest_rated_v"
                } else {
                    "mains.nominal_v (input.highest_rated_v not given)"
                },
            )],
            f.rated_v
                .map(|v| format!("the fuse's rated voltage input.fuse.rated_v = {} V", show(v))),
            vec![Step::new(
                None,
                format!(
                    "A fuse's voltage rating is compared with the equipment's highest rated voltage (the top of its marked range), not with the tolerance above it (common practice, no published source); the highest mains voltage with tolerance, {} V, is {}.",
                    show(b.mains.max_v),
                    match f.rated_v {
                        Some(r) if r < b.mains.max_v => format!("above the fuse's {} V: a note, not a shortfall", show(r)),
                        Some(r) => format!("within the fuse's {} V", show(r)),
                        None => "shown for reference".to_string(),
                    }
                ),
            )],
        ),
    );
    figures.push(
        Figure::new(
            "fuse_hot_restart_i2t_a2s",
            "A single hot restart's pulse I²t against the melting I²t",
            Some(inrush.exact_hot_restart_i2t_a2s),
            "A²s",
        )
        .formula("I²t_hot (inrush section)")
        .judged(
            f.melting_i2t_a2s
                .map(|m| m < inrush.exact_hot_restart_i2t_a2s),
        )
        .rests_on(&["input", "mains", "emc.filter.dm_"])
        .done(
            Vec::new(),
            f.melting_i2t_a2s.map(|m| {
                format!(
                    "the fuse's melting I²t input.fuse.melting_i2t_a2s = {} A²s",
                    show(m)
                )
            }),
            Vec::new(),
        ),
    );
    let notes = vec![format!(
        "Voltage rating {} against the highest rated voltage {} V (the highest mains voltage {} V with tolerance is a note); a single hot restart's I²t {} A²s against the melting I²t.",
        f.rated_v
            .map(|v| format!("{} V", show(v)))
            .unwrap_or_else(|| "not declared".to_string()),
        show(rated_supply),
        show(b.mains.max_v),
        show(inrush.hot_restart_i2t_a2s)
    )];
    (
        Some(report),
        Section {
            id: id_section,
            title: "Input fuse".to_string(),
            inputs: Vec::new(),
            figures,
            notes,
        },
    )
}

fn discharge(b: &mut Basis, standard: &str) -> (DischargeReport, Section) {
    let rules = b
        .rules
        .table::<crate::power_entry::tables::DischargeRules>();
    // A house limit holds under every standard; otherwise the end-product standard's own.
    let residual_limit: Option<(f64, String)> = rules
        .residual_limit_v
        .as_ref()
        .map(|l| (l.value, l.source.clone()))
        .or_else(|| {
            rules
                .residual_limits
                .iter()
                .find(|l| {
                    l.standard == standard
                        && l.connections.iter().any(|c| {
                            Some(c.as_str()) == b.spec.connection.as_ref().map(|x| x.as_str())
                                || (b.spec.connection.is_none() && c == "plug")
                        })
                })
                .map(|l| (l.limit_v, l.source.clone()))
        });
    let rule = Some(DischargeRules::ID);
    let spec = b.spec;
    let connection = spec.connection.unwrap_or_else(|| {
        b.assumptions.push(
            "Plug-connected equipment (pluggable type A; input.connection not given): the strictest discharge limit.".to_string(),
        );
        Connection::Plug
    });
    let filter = b.project.emc.as_ref().map(|e| &e.filter);
    // Every capacitance across the line counts: the X capacitor(s) and the capacitor of an
    // R-C damping network alike (circuit theory; REFERENCES: power entry).
    let filter_x = filter.and_then(|f| f.x_capacitance_uf);
    let x_uf = spec.x_capacitance_uf.or(filter_x);
    let damping_uf = filter.and_then(|f| f.damping).map(|(_, cd)| cd);
    if x_uf.is_none() {
        b.missing.push(
            "input.x_capacitance_uf (the X capacitance across the line, for the discharge; write 0 if there is none)"
                .to_string(),
        );
    }
    let across = match (x_uf, damping_uf) {
        (Some(x), Some(d)) => Some(x + d),
        (Some(x), None) => Some(x),
        (None, Some(d)) => Some(d),
        (None, None) => None,
    };
    let tolerant = spec.bleeder_fault_tolerant.unwrap_or(false);
    let threshold = rules.threshold_uf.value;
    let exempt = rules.not_applicable(connection.as_str());
    let above = across.is_some_and(|x| x > threshold);
    let required = above && exempt.is_none();
    let tau = match (spec.bleeder_ohm, across) {
        (Some(r), Some(c)) if c > 0.0 => Some(r * c * 1e-6),
        _ => None,
    };
    let limit = rules.limit(connection.as_str());
    let v_pk = SQRT_2 * b.mains.max_v;
    let t_res = rules.residual_after_s.value;
    let residual = tau.map(|t| v_pk * (-t_res / t).exp());
    // Without a bleeder nothing is credited: the crest stays.
    let residual = residual
        .or((across.is_some_and(|c| c > 0.0) && spec.bleeder_ohm.is_none()).then_some(v_pk));
    let tau_fails = if required && limit.is_some() {
        match (tau, spec.bleeder_ohm) {
            (_, None) => Some(true),
            (Some(t), Some(_)) => limit.map(|l| t > l.max_time_constant_s),
            (None, Some(_)) => None,
        }
    } else {
        None
    };
    let report = DischargeReport {
        connection,
        x_capacitance_uf: spec.x_capacitance_uf,
        damping_capacitance_uf: damping_uf,
        across_line_uf: across.map(significant),
        bleeder_ohm: spec.bleeder_ohm,
        bleeder_fault_tolerant: tolerant,
        threshold_uf: threshold,
        required,
        not_applicable_reason: exempt
            .filter(|_| above)
            .map(|x| format!("{} ({})", x.reason, x.source)),
        time_constant_s: sig(tau),
        max_time_constant_s: limit.map(|l| l.max_time_constant_s),
        residual_after_s: t_res,
        residual_v: sig(residual),
        residual_limit_v: residual_limit.as_ref().map(|l| l.0),
        exact_residual_v: residual,
    };
    let r_c_inputs = || {
        let mut v = Vec::new();
        if let Some(r) = spec.bleeder_ohm {
            v.push(input("R_b", r, "Ω", "input.bleeder_ohm"));
        }
        if let Some(c) = x_uf {
            v.push(input(
                "C_X",
                c,
                "µF",
                if spec.x_capacitance_uf.is_some() {
                    "input.x_capacitance_uf"
                } else {
                    "emc.filter.x_capacitance_uf (input.x_capacitance_uf not given)"
                },
            ));
        }
        if let Some(c) = damping_uf {
            v.push(input(
                "C_d",
                c,
                "µF",
                "emc.filter.damping_capacitance_uf (the R-C damping network's capacitor, across the line too)",
            ));
        }
        v
    };
    let c_words = if damping_uf.is_some() {
        "(C_X + C_d)"
    } else {
        "C_X"
    };
    let limit_words = match (limit, exempt) {
        (_, Some(x)) => format!(
            "no limit for connection = \"{}\": {}",
            connection.as_str(),
            x.reason
        ),
        (Some(l), None) => format!(
            "at most {} s for connection = \"{}\" ({})",
            show(l.max_time_constant_s),
            connection.as_str(),
            l.source
        ),
        (None, None) => format!(
            "no limit in rule table {} for connection = \"{}\"",
            DischargeRules::ID,
            connection.as_str()
        ),
    };
    let mut tau_steps = vec![Step::new(
        rule,
        format!(
            "Applies above {} µF across the mains ({}): {}.",
            show(threshold),
            rules.threshold_uf.source,
            match across {
                Some(x) if above => format!(
                    "{} µF across the line{} is above it{}",
                    show(significant(x)),
                    if damping_uf.is_some() {
                        " (X capacitance plus the damping capacitor)"
                    } else {
                        ""
                    },
                    if exempt.is_some() {
                        ", but not for this connection (below)"
                    } else {
                        ", so a discharge means is required"
                    }
                ),
                Some(x) => format!(
                    "{} µF across the line is not above it, so no discharge means is required",
                    show(significant(x))
                ),
                None => "the X capacitance is not declared".to_string(),
            }
        ),
    )];
    if let Some(x) = exempt {
        tau_steps.push(Step::new(
            rule,
            format!(
                "connection = \"{}\": {} ({}).",
                connection.as_str(),
                x.reason,
                x.source
            ),
        ));
    }
    if spec.bleeder_ohm.is_none() {
        tau_steps.push(Step::new(None, "No bleeder is declared (input.bleeder_ohm): nothing discharges the capacitance across the line but the converter, which is not credited."));
    } else {
        tau_steps.push(Step::new(None, "Only the bleeder is counted; discharge through the rectifier and converter is not credited."));
    }
    let keys: &[&str] = &[
        "input.x_capacitance_uf",
        "input.bleeder_ohm",
        "emc.filter.x_capacitance_uf",
        "emc.filter.damping_capacitance_uf",
    ];
    let mut tau_figure = Figure::new(
        "discharge_time_constant_s",
        "Discharge time constant of the capacitance across the line",
        tau,
        "s",
    )
    .formula(format!("τ = R_b × {c_words}"))
    .rests_on(keys);
    if required && limit.is_some() {
        tau_figure = tau_figure.judged(tau_fails);
    }
    let figures = vec![
        tau_figure.done(
            r_c_inputs(),
            (required || exempt.is_some() && above).then_some(limit_words),
            tau_steps,
        ),
        Figure::new(
            "discharge_residual_v",
            format!("Voltage {} s after disconnection at the crest", show(t_res)),
            residual,
            "V",
        )
        .formula(format!("V = V_pk × e^(-{} / τ)", show(t_res)))
        .rests_on(keys)
        .done(
            [vec![peak_input(b)], r_c_inputs()].concat(),
            residual_limit
                .as_ref()
                .map(|l| format!("{} V ({})", show(l.0), l.1)),
            vec![Step::new(
                rule,
                format!(
                    "{}; {}.{}",
                    rules.residual_after_s.source,
                    match &residual_limit {
                        Some((v, source)) => format!("limit {} V ({source})", show(*v)),
                        None => format!(
                            "no limit on this voltage is shipped for {standard}, a house rule may add one"
                        ),
                    },
                    if spec.bleeder_ohm.is_none() {
                        " Without a bleeder nothing is credited: the crest remains."
                    } else {
                        ""
                    }
                ),
            )],
        ),
    ];
    let mut notes = Vec::new();
    if spec.bleeder_ohm.is_some() && !tolerant {
        notes.push("The bleeder is taken as a single path: one open resistor leaves the X capacitance charged (input.bleeder_fault_tolerant not set). Standards that judge the single-fault condition need a second path or a fail-safe discharge part.".to_string());
    }
    if damping_uf.is_some() {
        notes.push("The damping network's capacitor sits across the line with the X capacitor: its charge discharges through the same bleeder (its series resistor only slows it), so it is counted.".to_string());
    }
    (
        report,
        Section {
            id: format!("{PE}.discharge"),
            title: "X-capacitor discharge".to_string(),
            inputs: Vec::new(),
            figures,
            notes,
        },
    )
}

fn touch(b: &mut Basis, standard: &str, standard_title: &str) -> (Vec<TouchCircuit>, Section) {
    let rules = b.rules.table::<crate::power_entry::tables::TouchRules>();
    let project = b.project;
    let f = b.mains.max_frequency_hz;
    let v = b.mains.max_v;
    let class = project.design.protection_class;
    let hand_held = b.spec.hand_held.unwrap_or(false);
    let declared_arrangement = project.emc.as_ref().and_then(|e| e.filter.y_arrangement);
    // The same default as the EMC evaluation: one from each line in a Class I design.
    let arrangement = declared_arrangement.unwrap_or(match class {
        ProtectionClass::I => YArrangement::EachLine,
        _ => YArrangement::Single,
    });
    let mut out = Vec::new();
    let mut figures = Vec::new();
    let mut hand_held_used = false;
    // Looked up by name once, so that a large design costs no more than its size.
    let hazardous_ids: std::collections::HashSet<&str> = project
        .circuits
        .iter()
        .filter(|c| matches!(c.kind, CircuitKind::Mains | CircuitKind::Hazardous))
        .map(|c| c.id.as_str())
        .collect();
    let hazardous = |id: &str| hazardous_ids.contains(id);
    let parts: std::collections::HashMap<&str, &crate::project::Part> = project
        .parts
        .iter()
        .map(|p| (p.reference.as_str(), p))
        .collect();
    let mut barriers_of: std::collections::HashMap<&str, Vec<&crate::project::Barrier>> =
        std::collections::HashMap::new();
    for barrier in &project.barriers {
        for end in &barrier.between {
            barriers_of.entry(end.as_str()).or_default().push(barrier);
        }
    }
    for circuit in project.circuits.iter().filter(|c| c.accessible) {
        let part = if class == ProtectionClass::I && circuit.earthed {
            hand_held_used = true;
            if hand_held {
                "earthed-hand-held"
            } else {
                "earthed"
            }
        } else {
            "not-earthed"
        };
        let mut caps: Vec<TouchCapacitor> = Vec::new();
        let mut counted = std::collections::HashSet::new();
        let touching = barriers_of
            .get(circuit.id.as_str())
            .map_or(&[][..], Vec::as_slice);
        for &barrier in touching {
            let [a, z] = &barrier.between;
            let from_hazard =
                (a == &circuit.id && hazardous(z)) || (z == &circuit.id && hazardous(a));
            if !from_hazard {
                continue;
            }
            for reference in &barrier.bridged_by {
                let Some(&p) = parts.get(reference.as_str()) else {
                    continue;
                };
                if p.kind != PartKind::YCapacitor || !counted.insert(reference.as_str()) {
                    continue;
                }
                let n = p.ratings.count_in_series.max(1);
                let effective = p.ratings.capacitance_nf.map(|c| c / n as f64);
                if p.ratings.capacitance_nf.is_none() {
                    b.missing.push(format!(
                        "part {reference}: capacitance_nf (the touch current into {})",
                        circuit.id
                    ));
                }
                caps.push(TouchCapacitor {
                    part: reference.clone(),
                    barrier: barrier.id.clone(),
                    capacitance_nf: p.ratings.capacitance_nf,
                    count_in_series: n,
                    effective_nf: sig(effective),
                    current_ma: sig(effective.map(|c| 2.0 * PI * f * v * c * 1e-9 * 1e3)),
                });
            }
        }
        // Exact effective capacitances (the parts' values over their series counts).
        let exact: Option<Vec<f64>> = caps
            .iter()
            .map(|c| {
                project
                    .parts
                    .iter()
                    .find(|p| p.reference == c.part)
                    .and_then(|p| p.ratings.capacitance_nf)
                    .map(|nf| nf / f64::from(c.count_in_series))
            })
            .collect();
        let counted_nf = exact.as_ref().map(|list| {
            let total: f64 = list.iter().sum();
            match arrangement {
                // One capacitor (or set) from each line: only the line side drives current
                // through the body; the plug may be reversed, so the larger side counts.
                YArrangement::EachLine if list.len() > 1 => {
                    let largest = list.iter().copied().fold(0.0, f64::max);
                    (total / 2.0).max(largest)
                }
                _ => total,
            }
        });
        let current_exact = counted_nf.map(|c| 2.0 * PI * f * v * c * 1e-9 * 1e3);
        let current = current_exact;
        let limit = rules.limit(standard, part);
        let margin = match (limit, current) {
            (Some(l), Some(i)) => Some(significant(l.limit_ma - i)),
            _ => None,
        };
        let mut inputs = vec![
            input("f", f, "Hz", "highest mains frequency"),
            input("V", v, "V", "highest mains voltage"),
        ];
        for c in &caps {
            if let Some(e) = c.effective_nf {
                inputs.push(input(
                    &format!("C_{}", c.part),
                    e,
                    "nF",
                    if c.count_in_series > 1 {
                        format!(
                            "{}: {} nF each, {} in series, across {}",
                            c.part,
                            c.capacitance_nf.map(show).unwrap_or_default(),
                            c.count_in_series,
                            c.barrier
                        )
                    } else {
                        format!("{}: capacitance_nf, across {}", c.part, c.barrier)
                    },
                ));
            }
        }
        let mut steps = Vec::new();
        if !caps.is_empty() {
            steps.push(Step::new(
                None,
                touch_model(arrangement, caps.len(), counted_nf),
            ));
        }
        if caps.is_empty() {
            steps.push(Step::new(None, "No Y-capacitor bridges a barrier from a mains or hazardous circuit to this circuit: no touch current through Y-capacitors."));
        }
        for c in &caps {
            steps.push(Step::new(
                None,
                match c.current_ma {
                    Some(i) => format!("{} across {}: {} mA.", c.part, c.barrier, show(i)),
                    None => format!(
                        "{} across {}: capacitance not declared, not computed.",
                        c.part, c.barrier
                    ),
                },
            ));
        }
        steps.push(Step::new(
            Some(TouchRules::ID),
            match limit {
                Some(l) => format!(
                    "Limit {} mA for a {} accessible part under {standard_title}: {}.",
                    show(l.limit_ma),
                    part,
                    l.source
                ),
                None => format!(
                    "Rule table {} gives no limit for a {part} accessible part under {standard_title}: not judged.",
                    TouchRules::ID
                ),
            },
        ));
        figures.push(
            Figure::new(
                &format!("touch.{}", circuit.id),
                format!("Touch current into {}", circuit.id),
                current,
                "mA",
            )
            .formula(match arrangement {
                YArrangement::EachLine => "I = 2π f V × C_line, C_line = the line side's Y capacitance: the larger of half the sum and the largest capacitor (each C divided by its count in series)",
                YArrangement::Single => "I = 2π f V × sum of C (each capacitor's C divided by its count in series)",
            })
            .judged(match (limit, current_exact) {
                (Some(l), Some(i)) => Some(i > l.limit_ma),
                _ => None,
            })
            .rests_on(&["part", "mains.max_v", "mains.frequency_hz", "input.max_frequency_hz", "emc.filter.y_arrangement"])
            .done(
                inputs,
                limit.map(|l| format!("{} mA ({})", show(l.limit_ma), l.source)),
                steps,
            ),
        );
        out.push(TouchCircuit {
            circuit: circuit.id.clone(),
            earthed: circuit.earthed,
            arrangement,
            counted_nf: sig(counted_nf),
            part: part.to_string(),
            capacitors: caps,
            current_ma: sig(current),
            limit_ma: limit.map(|l| l.limit_ma),
            limit_source: limit.map(|l| l.source.clone()),
            margin_ma: margin,
        });
    }
    if hand_held_used && b.spec.hand_held.is_none() {
        b.assumptions.push(
            "Not hand-held (input.hand_held not given): the touch-current limit for earthed parts of Class I equipment other than hand-held.".to_string(),
        );
    }
    let mut notes = vec![format!(
        "Limits of {standard_title} (rule table {}). The Y-capacitors counted bridge a barrier from a mains or hazardous circuit to the accessible circuit. Earthed parts of Class I equipment are judged with the protective earth open. Y arrangement \"{}\"{}.",
        TouchRules::ID,
        arrangement.as_str(),
        if declared_arrangement.is_some() {
            " (emc.filter.y_arrangement)"
        } else {
            " (emc.filter.y_arrangement not given: the default for the protection class)"
        }
    )];
    if out.is_empty() {
        notes.push("No circuit is declared accessible: no touch current to judge.".to_string());
    }
    (
        out,
        Section {
            id: format!("{PE}.touch"),
            title: "Touch current through Y-capacitors".to_string(),
            inputs: Vec::new(),
            figures,
            notes,
        },
    )
}

/// The touch-current model for an arrangement, in words, for the derivation.
fn touch_model(arrangement: YArrangement, count: usize, counted_nf: Option<f64>) -> String {
    let counted = counted_nf
        .map(|c| format!(" Counted: {} nF.", show(significant(c))))
        .unwrap_or_default();
    match arrangement {
        YArrangement::EachLine if count > 1 => format!(
            "Model, Y capacitors from each line (\"each-line\"): with the protective earth open, the accessible part hangs between the line through the line-side capacitance and the neutral (at earth potential) through the neutral-side one; the body (about 2 kΩ, far below 1 / (2π f C), some 700 kΩ for 4.7 nF at 50 Hz) shorts the neutral-side capacitor, so only the line side drives current, at the full mains voltage. The capacitors are taken as split evenly between the lines, and the plug may be reversed: the line side is the larger of half the sum and the largest single capacitor.{counted}"
        ),
        YArrangement::EachLine => format!(
            "Model, Y capacitors from each line (\"each-line\") with one capacitor declared: it is taken as the line-side one, at the full mains voltage (the plug may be reversed).{counted}"
        ),
        YArrangement::Single => format!(
            "Model, a single Y capacitance from the rectified primary (\"single\"): the primary follows one line or the other through the bridge for half of each cycle; every capacitor is counted at the full mains voltage, an upper bound (the fundamental of that half-wave is half the mains voltage).{counted}"
        ),
    }
}

fn test_voltages(b: &Basis, results: &[BarrierResult]) -> (Vec<TestVoltage>, Section) {
    let table = b.rules.table::<crate::rules::TestVoltages>();
    let rule = Some(TestVoltages::ID);
    let mut out = Vec::new();
    let mut figures = Vec::new();
    let mut standard_note = None;
    for (i, barrier) in b.project.barriers.iter().enumerate() {
        let peak = barrier.peak_v();
        // A named end-product standard sets the test voltage (crate::standards); the
        // IEC 60950-1 table below serves the basics only.
        if let Some(r) = results.get(i).filter(|r| r.standard != "iec60664-1") {
            let required = r.test_v_state != "not-applicable";
            let beyond = r.test_v_state == "not-carried";
            let mut figure = Figure::new(
                &format!("test_voltage.{}", barrier.id),
                format!(
                    "Electric strength test, {} ({})",
                    barrier.id,
                    r.means_of_protection.unwrap_or(barrier.grade.as_str())
                ),
                r.test_v_rms,
                "V rms",
            )
            .formula("the end-product standard's tables (see the barrier's derivation)")
            .done(
                vec![input("V_work,pk", peak, "V", "the barrier's working peak")],
                None,
                r.derivation.electric_strength.clone(),
            );
            figure.not_computed_because = (!required || beyond).then(|| r.test_v_basis.clone());
            figures.push(figure);
            standard_note = Some(format!(
                "Barriers are tested as {} requires (each barrier's electric strength derivation names the tables).",
                r.standard_title
            ));
            out.push(TestVoltage {
                barrier: barrier.id.clone(),
                grade: barrier.grade,
                working_peak_v: significant(peak),
                required,
                test_v_rms: r.test_v_rms,
                row_up_to_peak_v: None,
                beyond_table: beyond,
                test_v_from: required.then(|| r.test_v_basis.clone()),
            });
            continue;
        }
        let peak_from = if barrier.working_peak_v.is_some() {
            "working_peak_v".to_string()
        } else {
            format!("√2 × working_rms_v {} V", show(barrier.working_rms_v))
        };
        let required = barrier.grade != Grade::Functional;
        let row = table.rows.iter().find(|r| r.up_to_peak_v >= peak - EPS);
        let reinforced = matches!(barrier.grade, Grade::Reinforced | Grade::Double);
        let value = match (required, row) {
            (true, Some(r)) => Some(if reinforced {
                r.reinforced_v_rms
            } else {
                r.basic_v_rms
            }),
            _ => None,
        };
        let beyond = required && row.is_none();
        let text = if !required {
            "Functional insulation: no electric strength test from this table.".to_string()
        } else if let Some(r) = row {
            format!(
                "Row up to {} V peak, {} column: {} V rms ({}).",
                show(r.up_to_peak_v),
                if reinforced {
                    "reinforced (double takes it too)"
                } else {
                    "basic/supplementary"
                },
                show(value.unwrap_or(0.0)),
                table.source
            )
        } else {
            format!(
                "{} V peak is above the last row of {} (up to {} V peak): not extrapolated; the test voltage comes from {}.",
                crate::text::apart(
                    peak,
                    &table
                        .rows
                        .last()
                        .map(|r| r.up_to_peak_v)
                        .into_iter()
                        .collect::<Vec<_>>(),
                    show
                ),
                table.source,
                table
                    .rows
                    .last()
                    .map(|r| show(r.up_to_peak_v))
                    .unwrap_or_default(),
                crate::parts::beyond_test_table(table)
            )
        };
        let test_v_from = if !required {
            None
        } else if let Some(r) = row {
            Some(format!(
                "{}, row up to {} V peak",
                table.source,
                show(r.up_to_peak_v)
            ))
        } else {
            Some(crate::parts::beyond_test_table(table))
        };
        let mut figure = Figure::new(
            &format!("test_voltage.{}", barrier.id),
            format!(
                "Electric strength test, {} ({})",
                barrier.id,
                barrier.grade.as_str()
            ),
            value,
            "V rms",
        )
        .formula("table lookup: the first row whose working peak is at or above the barrier's")
        .done(
            vec![input("V_work,pk", peak, "V", peak_from)],
            None,
            vec![Step::new(rule, text)],
        );
        figure.not_computed_because = if !required {
            Some("no electric strength test applies to functional insulation".to_string())
        } else if beyond {
            Some(format!(
                "above the table's last row the test voltage comes from {}",
                crate::parts::beyond_test_table(table)
            ))
        } else {
            None
        };
        figures.push(figure);
        out.push(TestVoltage {
            barrier: barrier.id.clone(),
            grade: barrier.grade,
            working_peak_v: significant(peak),
            required,
            test_v_rms: value,
            row_up_to_peak_v: row.filter(|_| required).map(|r| r.up_to_peak_v),
            beyond_table: beyond,
            test_v_from,
        });
    }
    let notes = match standard_note {
        Some(note) => vec![note],
        None => vec![format!(
            "From {} (rule table {}; {}).",
            table.source,
            TestVoltages::ID,
            table.provenance
        )],
    };
    (
        out,
        Section {
            id: format!("{PE}.test_voltages"),
            title: "Electric strength (hi-pot) tests by barrier".to_string(),
            inputs: Vec::new(),
            figures,
            notes,
        },
    )
}
