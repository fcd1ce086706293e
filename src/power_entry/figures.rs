//! The power-entry calculations: pure functions from the checked project and the rule
//! tables to figures, each with its formula, inputs and the rule rows it used. Nothing here
//! judges: the checks in `rules/checks/power_entry.toml` compare the figures.

use std::f64::consts::{PI, SQRT_2};

use super::rectifier::{self, Rectifier};
use super::*;
use crate::diag::{Diagnostic, suggest};
use crate::project::{CircuitKind, Grade, PartKind, ProtectionClass};
use crate::rules::TestVoltages;

const PE: &str = "power_entry";

fn input(symbol: &str, value: f64, unit: &str, from: impl Into<String>) -> Input {
    Input {
        symbol: symbol.to_string(),
        value: significant(value),
        unit: unit.to_string(),
        from: from.into(),
    }
}

fn step(rule: Option<&str>, text: impl Into<String>) -> Step {
    Step {
        rule: rule.map(str::to_string),
        text: text.into(),
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
}

impl Figure {
    fn new(id: &str, title: impl Into<String>, value: Option<f64>, unit: &'static str) -> Self {
        Figure {
            id: format!("{PE}.{id}"),
            title: title.into(),
            value,
            unit,
            formula: String::new(),
        }
    }

    fn formula(mut self, f: impl Into<String>) -> Self {
        self.formula = f.into();
        self
    }

    fn done(self, inputs: Vec<Input>, judged_against: Option<String>, steps: Vec<Step>) -> Derived {
        let mut steps = steps;
        if self.value.is_some_and(|v| !v.is_finite()) {
            steps.push(step(
                None,
                "Not computed: with these inputs the formula gives no finite figure (a divisor is zero or too small, or a value overflows).",
            ));
        }
        Derived {
            id: self.id,
            title: self.title,
            value: sig(self.value),
            unit: self.unit.to_string(),
            formula: self.formula,
            inputs,
            judged_against,
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
    _barriers: &[BarrierResult],
    source: &Source,
) -> Result<Option<PowerEntryReport>, Problems> {
    let Some(spec) = &project.input else {
        return Ok(None);
    };
    let pe = &rules.power_entry;
    let (standard, standard_title) = end_product_standard(spec, &pe.touch, source)?;
    let mut assumptions = Vec::new();
    let mains = mains_range(project, spec, &pe.mains, &mut assumptions);
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
    if spec.end_product_standard.is_none() {
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

    let (fuse, fuse_section) = fuse(&mut b, &inrush, input_rms_a);
    sections.push(fuse_section);
    let (discharge, discharge_section) = discharge(&mut b);
    sections.push(discharge_section);
    let (touch, touch_section) = touch(&mut b, &standard, &standard_title);
    sections.push(touch_section);
    let (test_voltages, test_section) = test_voltages(&b);
    sections.push(test_section);

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
    let r_cold = r_s + r_cold_lim;
    let r_hot = r_s + r_hot_lim;
    let has_limiter = b.limiter.kind != LimiterKind::None;
    let peak_a = v_pk / r_cold;
    let i2t = v_pk * v_pk * c_f / (2.0 * r_cold);
    let hot_peak = v_pk / r_hot;
    let hot_i2t = v_pk * v_pk * c_f / (2.0 * r_hot);
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
    let r_cold_words = if has_limiter { "(R_cold + R_s)" } else { "R_s" };
    let r_hot_words = if has_limiter { "(R_hot + R_s)" } else { "R_s" };
    let theory =
        "circuit theory: charging C from V_pk through a constant R, i(t) = (V_pk / R) e^(-t / RC)";
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
                vec![step(None, "Common practice: 230 V rms has a 325 V peak; switch-on at the crest is the worst case.")],
            ),
        Figure::new(
            "inrush_peak_a",
            "Inrush peak current at switch-on (cold limiter)",
            Some(peak_a),
            "A",
        )
        .formula(format!("I_pk = V_pk / {r_cold_words}"))
        .done(
            [vec![peak_input(b)], cold_in("at switch-on"), vec![r_s_in.clone()]].concat(),
            surge_judge.clone(),
            vec![step(None, format!("{theory}; the peak is at t = 0."))],
        ),
        Figure::new("inrush_i2t_a2s", "Inrush pulse I²t", Some(i2t), "A²s")
            .formula(format!("I²t = V_pk² × C / (2 {r_cold_words})"))
            .done(
                [vec![peak_input(b), c_in.clone()], cold_in("at switch-on"), vec![r_s_in.clone()]]
                    .concat(),
                Some("the fuse's melting I²t divided by the pulse factor".to_string()),
                vec![step(None, format!("{theory}; the integral of i² from 0 to infinity is V_pk² C / (2 R)."))],
            ),
        Figure::new(
            "inrush_time_constant_ms",
            "Time constant of the inrush pulse",
            Some(r_cold * c_f * 1e3),
            "ms",
        )
        .formula(format!("τ = {r_cold_words} × C"))
        .done(
            [cold_in("at switch-on"), vec![r_s_in.clone(), c_in.clone()]].concat(),
            None,
            vec![step(None, "A bridge's surge rating is given for a 8.3 ms or 10 ms half-sine: a pulse much shorter than that is judged conservatively by its peak.")],
        ),
        Figure::new(
            "limiter_energy_j",
            "Energy the limiter absorbs at switch-on",
            energy,
            "J",
        )
        .formula("E = C × V_pk² / 2")
        .done(
            vec![peak_input(b), c_in.clone()],
            b.limiter
                .energy_rating_j
                .map(|e| format!("the limiter's energy rating input.limiter.energy_rating_j = {} J", show(e))),
            vec![step(
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
        .formula(format!("I_pk,hot = V_pk / {r_hot_words}"))
        .done(
            [vec![peak_input(b)], hot_in(), vec![r_s_in.clone()]].concat(),
            surge_judge,
            vec![step(None, "A brief mains interruption lets the bulk capacitor discharge through the load before the limiter cools; the next crest charges it through the hot resistance.")],
        ),
        Figure::new("hot_restart_i2t_a2s", "Pulse I²t at a hot restart", Some(hot_i2t), "A²s")
            .formula(format!("I²t_hot = V_pk² × C / (2 {r_hot_words})"))
            .done(
                [vec![peak_input(b), c_in], hot_in(), vec![r_s_in]].concat(),
                Some("the fuse's melting I²t (a single pulse)".to_string()),
                vec![step(None, theory)],
            ),
    ];
    if !has_limiter {
        figures.retain(|f| f.id != format!("{PE}.limiter_energy_j"));
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
    let series = spec.series_resistance_ohm + r_hot_lim;
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
        let s = rectifier::steady_state(&rect);
        let ok = |x: f64| (s.sustained && x.is_finite()).then_some(significant(x));
        let point = OperatingPoint {
            name: name.to_string(),
            v_rms: significant(v_rms),
            frequency_hz: f,
            series_ohm: significant(series),
            load_w: significant(load_w),
            bridge_drop_v: b.drop_v,
            sustained: s.sustained,
            converged: s.converged,
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
                    vec![step(
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
            "Simulated in the time domain: ideal full-wave bridge (total drop V_d), series resistance R = R_s + limiter hot resistance, bulk capacitor C, constant-power load P = output_w / efficiency; {} steps per half-cycle (conduction steps implicit: backward Euler, then second-order BDF; the load-only discharge exactly, v² = v0² - 2 P t / C); periodic steady state when the bulk voltage repeats after a half-cycle within {:e} of the source peak (at most {} half-cycles).",
            rectifier::STEPS_PER_HALF_CYCLE,
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
        vec![step(
            None,
            format!(
                "Steady state after {} half-cycles ({}).",
                s.half_cycles,
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
    let id = |x: &str| format!("{}.{x}", p.name.replace('-', "_"));
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
            vec![step(
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
            vec![step(
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
            vec![step(
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
                vec![step(None, if i_avg.is_finite() {
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
    let rules = &b.rules.power_entry.fuse;
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
            "against the highest mains voltage",
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
    let required_i2t = pulse.map(|p| p.factor * inrush.i2t_a2s);
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
            vec![step(rule, format!("Derating {}: {} (at 25 C ambient; derate further for a hotter one).", show(derating), rules.derating.source))],
        ),
        Figure::new(
            "fuse_required_i2t_a2s",
            "Melting I²t the inrush calls for",
            required_i2t,
            "A²s",
        )
        .formula("I²t_req = n × I²t_inrush")
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
            vec![step(
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
                vec![step(rule, rules.default_prospective_fault_a.source.clone())]
            },
        ),
    ];
    let notes = vec![format!(
        "Voltage rating {} against the highest mains voltage {} V; a single hot restart's I²t {} A²s against the melting I²t.",
        f.rated_v
            .map(|v| format!("{} V", show(v)))
            .unwrap_or_else(|| "not declared".to_string()),
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

fn discharge(b: &mut Basis) -> (DischargeReport, Section) {
    let rules = &b.rules.power_entry.discharge;
    let rule = Some(DischargeRules::ID);
    let spec = b.spec;
    let connection = spec.connection.unwrap_or_else(|| {
        b.assumptions.push(
            "Plug-connected equipment (pluggable type A; input.connection not given): the strictest discharge limit.".to_string(),
        );
        Connection::Plug
    });
    if spec.x_capacitance_uf.is_none() {
        b.missing.push(
            "input.x_capacitance_uf (the X capacitance across the line, for the discharge; write 0 if there is none)"
                .to_string(),
        );
    }
    let tolerant = spec.bleeder_fault_tolerant.unwrap_or(false);
    let threshold = rules.threshold_uf.value;
    let required = spec.x_capacitance_uf.is_some_and(|x| x > threshold);
    let tau = match (spec.bleeder_ohm, spec.x_capacitance_uf) {
        (Some(r), Some(c)) if c > 0.0 => Some(r * c * 1e-6),
        _ => None,
    };
    let limit = rules.limit(connection.as_str());
    let v_pk = SQRT_2 * b.mains.max_v;
    let t_res = rules.residual_after_s.value;
    let residual = tau.map(|t| v_pk * (-t_res / t).exp());
    let report = DischargeReport {
        connection,
        x_capacitance_uf: spec.x_capacitance_uf,
        bleeder_ohm: spec.bleeder_ohm,
        bleeder_fault_tolerant: tolerant,
        threshold_uf: threshold,
        required,
        time_constant_s: sig(tau),
        max_time_constant_s: limit.map(|l| l.max_time_constant_s),
        residual_after_s: t_res,
        residual_v: sig(residual),
        residual_limit_v: rules.residual_limit_v.as_ref().map(|l| l.value),
    };
    let r_c_inputs = || {
        let mut v = Vec::new();
        if let Some(r) = spec.bleeder_ohm {
            v.push(input("R_b", r, "Ω", "input.bleeder_ohm"));
        }
        if let Some(c) = spec.x_capacitance_uf {
            v.push(input("C_X", c, "µF", "input.x_capacitance_uf"));
        }
        v
    };
    let limit_words = match limit {
        Some(l) => format!(
            "at most {} s for connection = \"{}\" ({})",
            show(l.max_time_constant_s),
            connection.as_str(),
            l.source
        ),
        None => format!(
            "no limit in rule table {} for connection = \"{}\"",
            DischargeRules::ID,
            connection.as_str()
        ),
    };
    let mut tau_steps = vec![step(
        rule,
        format!(
            "Applies above {} µF across the mains ({}): {}.",
            show(threshold),
            rules.threshold_uf.source,
            match spec.x_capacitance_uf {
                Some(x) if required => format!("{} µF is above it", show(x)),
                Some(x) => format!(
                    "{} µF is not above it, so no discharge means is required",
                    show(x)
                ),
                None => "the X capacitance is not declared".to_string(),
            }
        ),
    )];
    if spec.bleeder_ohm.is_none() {
        tau_steps.push(step(None, "No bleeder is declared (input.bleeder_ohm): nothing discharges the X capacitance but the converter, which is not credited."));
    } else {
        tau_steps.push(step(None, "Only the bleeder is counted; discharge through the rectifier and converter is not credited."));
    }
    let figures = vec![
        Figure::new(
            "discharge_time_constant_s",
            "Discharge time constant of the X capacitance",
            tau,
            "s",
        )
        .formula("τ = R_b × C_X")
        .done(r_c_inputs(), required.then_some(limit_words), tau_steps),
        Figure::new(
            "discharge_residual_v",
            format!("Voltage {} s after disconnection at the crest", show(t_res)),
            residual,
            "V",
        )
        .formula(format!("V = V_pk × e^(-{} / τ)", show(t_res)))
        .done(
            [vec![peak_input(b)], r_c_inputs()].concat(),
            rules
                .residual_limit_v
                .as_ref()
                .map(|l| format!("{} V ({})", show(l.value), l.source)),
            vec![step(
                rule,
                format!(
                    "{}; no limit on this voltage is shipped, a house rule may add one.",
                    rules.residual_after_s.source
                ),
            )],
        ),
    ];
    let mut notes = Vec::new();
    if spec.bleeder_ohm.is_some() && !tolerant {
        notes.push("The bleeder is taken as a single path: one open resistor leaves the X capacitance charged (input.bleeder_fault_tolerant not set). Standards that judge the single-fault condition need a second path or a fail-safe discharge part.".to_string());
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
    let rules = &b.rules.power_entry.touch;
    let project = b.project;
    let f = b.mains.max_frequency_hz;
    let v = b.mains.max_v;
    let class = project.design.protection_class;
    let hand_held = b.spec.hand_held.unwrap_or(false);
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
        let current = caps
            .iter()
            .try_fold(0.0, |sum, c| c.current_ma.map(|i| sum + i));
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
        if caps.is_empty() {
            steps.push(step(None, "No Y-capacitor bridges a barrier from a mains or hazardous circuit to this circuit: no touch current through Y-capacitors."));
        }
        for c in &caps {
            steps.push(step(
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
        steps.push(step(
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
            .formula("I = 2π f V × sum of C (each capacitor's C divided by its count in series)")
            .done(
                inputs,
                limit.map(|l| format!("{} mA ({})", show(l.limit_ma), l.source)),
                steps,
            ),
        );
        out.push(TouchCircuit {
            circuit: circuit.id.clone(),
            earthed: circuit.earthed,
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
        "Limits of {standard_title} (rule table {}). The Y-capacitors counted bridge a barrier from a mains or hazardous circuit to the accessible circuit; the voltage across them is taken as the highest mains voltage. Earthed parts of Class I equipment are judged with the protective earth open.",
        TouchRules::ID
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

fn test_voltages(b: &Basis) -> (Vec<TestVoltage>, Section) {
    let table = &b.rules.test_voltages;
    let rule = Some(TestVoltages::ID);
    let mut out = Vec::new();
    let mut figures = Vec::new();
    for barrier in &b.project.barriers {
        let peak = barrier
            .working_peak_v
            .unwrap_or(SQRT_2 * barrier.working_rms_v);
        let peak_from = if barrier.working_peak_v.is_some() {
            "working_peak_v".to_string()
        } else {
            format!("√2 × working_rms_v {} V", show(barrier.working_rms_v))
        };
        let required = barrier.grade != Grade::Functional;
        let row = table.rows.iter().find(|r| r.up_to_peak_v >= peak - 1e-9);
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
                vec![step(rule, text)],
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
    let notes = vec![format!(
        "From {} (rule table {}; {}).",
        table.source,
        TestVoltages::ID,
        table.provenance
    )];
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
