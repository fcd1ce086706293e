//! The EMC figures from plain inputs: the limit at every point of noise, the attenuation
//! each needs, the corners that meet them all, the inductances for those corners, the
//! touch-current cap on the Y capacitance, and Middlebrook's criterion with damping.

use super::filter::{
    Complex, NetworkLine, Stage, TwoPort, asymptotic_attenuation_db, characteristic_impedance_ohm,
    corner_for_attenuation, inductance_for_corner_h, insertion_loss_db, lc_corner_hz,
    optimum_parallel_damping, peak_output_impedance, ratio_for_peak,
};
use super::limits::{LimitReading, OutOfBand, frequency_words, limit_reading};
use super::noise::{self, BulkCapacitor, CommonModePath, ConverterFigures, Harmonic, Network};
use super::rules::{Detector, FilterModel, LimitClass, LimitTable, Parameter};
use super::{
    Damping, DeclaredFilter, EmcDerivation, EmcReport, EmcSpec, LimitLineOut, Middlebrook,
    NoisePoint, PrescanDetector, YArrangement,
};
use crate::derivation::{Suspicious, Verdict};
use crate::project::ProtectionClass;
use crate::raw::Span;
use crate::rules::RuleBook;
use crate::spacing::{Step, round_up, show, tidy};

/// Second-order filter slope, dB per decade.
const SECOND_ORDER_DB: f64 = 40.0;
/// Fourth-order (two-stage) filter slope, dB per decade.
const FOURTH_ORDER_DB: f64 = 80.0;
/// Estimated harmonics shown in full from the first one in the band, before thinning.
const SHOWN_FIRST: usize = 12;
/// After those, a harmonic is shown when it is this factor above the last one shown.
const SHOWN_STEP: f64 = 1.25;

/// The touch-current limit that caps the Y capacitance, with where it comes from.
#[derive(Debug, Clone, PartialEq)]
pub struct TouchLimit {
    pub limit_ma: f64,
    pub standard: String,
    pub standard_title: String,
    /// "not-earthed", "earthed-hand-held" or "earthed".
    pub part: String,
    pub source: String,
    /// The rule table's id.
    pub rule: String,
}

/// Everything the EMC evaluation needs, as plain values: the project's `[emc]`, the mains
/// range, the touch-current limit, the Y-capacitor parts, and the converter's figures and
/// bulk capacitor where known.
#[derive(Debug, Clone, PartialEq)]
pub struct EmcInputs {
    pub spec: EmcSpec,
    pub protection_class: ProtectionClass,
    pub max_mains_v: f64,
    pub max_mains_frequency_hz: f64,
    /// The mains range is power entry's (with its own defaults listed there).
    pub mains_from_power_entry: bool,
    /// `None` when the rules give no limit for this standard and part.
    pub touch_limit: Option<TouchLimit>,
    pub touch_standard: String,
    pub touch_part: String,
    /// Y-capacitor parts: reference and effective capacitance in nF (series count applied).
    pub y_parts: Vec<(String, f64)>,
    pub y_parts_judged_by_power_entry: bool,
    /// `[input]` x_capacitance_uf, used when `[emc.filter]` gives none.
    pub input_x_capacitance_uf: Option<f64>,
    pub converter: Option<ConverterFigures>,
    pub bulk: Option<BulkCapacitor>,
    /// Defaults applied while gathering these inputs, in words.
    pub assumptions: Vec<String>,
    /// `converter.pfc_stage`: Middlebrook's criterion applies.
    pub pfc_stage: bool,
    /// The lowest mains voltage (rms), the PFC stage's input.
    pub min_mains_v: f64,
    /// Inputs flagged implausible: a figure resting on one is never `pass`.
    pub suspicious: Suspicious,
}

/// An input the evaluation cannot use, with where it was written when known.
#[derive(Debug, Clone, PartialEq)]
pub struct InputProblem {
    pub key: String,
    pub span: Option<Span>,
    pub message: String,
}

fn cite(p: &Parameter) -> String {
    format!("{} ({})", show(p.value), p.cite())
}

/// Rounds down to a multiple of `step` (a corner is rounded towards the stricter side).
fn round_down(x: f64, step: f64) -> f64 {
    tidy((x / step + 1e-9).floor() * step)
}

/// The resolution a frequency is given to: whole hertz, or five significant figures below
/// 10 kHz (so that a very low corner never rounds to 0).
fn hz_step(hz: f64) -> f64 {
    if hz.is_finite() && hz > 0.0 {
        10f64.powf(hz.log10().floor() - 4.0).clamp(1e-6, 1.0)
    } else {
        1.0
    }
}

/// A corner rounded down to its resolution.
fn corner_down(hz: f64) -> f64 {
    round_down(hz, hz_step(hz))
}

/// A frequency rounded to its resolution.
fn hz_round(hz: f64) -> f64 {
    round_to(hz, hz_step(hz))
}

/// Whether a computed figure can be reported (not infinite, not NaN).
fn finite(x: f64) -> bool {
    x.is_finite()
}

fn round_to(x: f64, step: f64) -> f64 {
    tidy((x / step).round() * step)
}

/// A point of noise on its way to the report, before rounding.
struct Candidate {
    frequency_hz: f64,
    mode: &'static str,
    harmonic: Option<u64>,
    detector: &'static str,
    compared_with: Detector,
    level_dbuv: f64,
    limit_dbuv: f64,
    limit_step: Step,
    required_db: f64,
    /// `emc.prescan[N]` for a measured point (the key an implausible reading is under).
    key_prefix: Option<String>,
}

impl Candidate {
    fn corner(&self, slope: f64) -> Option<f64> {
        (self.required_db > 0.0)
            .then(|| corner_for_attenuation(self.frequency_hz, self.required_db, slope))
    }
}

/// The limit a point is compared with: the named detector's, or for a peak reading or an
/// estimate (which stand for both), the lower of the two.
fn binding_limit(
    rules: &RuleBook,
    class: LimitClass,
    detectors: &[Detector],
    frequency_hz: f64,
) -> Result<(Detector, f64, Step), OutOfBand> {
    // Each detector's limit is read (a refusal of any is the answer); only the kept one's
    // step is written, the same step `limit_dbuv` writes with it.
    let mut best: Option<(Detector, LimitReading)> = None;
    for &d in detectors {
        let reading = limit_reading(rules.table::<LimitTable>(), class, d, frequency_hz)?;
        if best
            .as_ref()
            .is_none_or(|b| reading.value_dbuv < b.1.value_dbuv)
        {
            best = Some((d, reading));
        }
    }
    best.map(|(d, reading)| (d, reading.value_dbuv, reading.step()))
        .ok_or_else(|| OutOfBand {
            message: "no detector to compare with".to_string(),
        })
}

/// The lowest corner over some candidates: (index, corner).
fn governing(candidates: &[Candidate], indices: &[usize], slope: f64) -> Option<(usize, f64)> {
    indices
        .iter()
        .filter_map(|&i| {
            candidates
                .get(i)
                .and_then(|c| c.corner(slope))
                .map(|f| (i, f))
        })
        .min_by(|a, b| a.1.total_cmp(&b.1))
}

/// Computes the EMC figures. Every frequency outside the limits' band is reported, not
/// only the first.
/// The limit class, margin and measuring network the evaluation works with (defaults
/// listed as assumptions).
struct Settings {
    class: LimitClass,
    margin_db: f64,
    network: Network,
}

/// The noise to beat: every point (measured or estimated) with its limit, and which
/// points each filter mode must meet.
struct Noise {
    source: &'static str,
    candidates: Vec<Candidate>,
    dm_indices: Vec<usize>,
    cm_indices: Vec<usize>,
    harmonics_evaluated: usize,
    gaps: Vec<String>,
}

/// The points that govern the corners, and the corners (second order, rounded down).
struct Corners<'a> {
    all: Vec<usize>,
    overall: Option<(usize, f64)>,
    dm2: Option<(usize, f64)>,
    dm4: Option<(usize, f64)>,
    cm2: Option<(usize, f64)>,
    cm4: Option<(usize, f64)>,
    max_required: Option<&'a Candidate>,
    dm_corner_hz: Option<f64>,
    cm_corner_hz: Option<f64>,
}

/// The touch-current cap on the Y capacitance and the Y capacitance declared or used.
struct YCapacitance {
    max_y_capacitance_nf: Option<f64>,
    arrangement: YArrangement,
    /// Per line, exact.
    y_exact_nf: Option<f64>,
    y_capacitance_from: Option<String>,
    /// The common-mode capacitance the declaration stands for, exact.
    declared_cm_nf: Option<f64>,
    y_capacitance_nf: Option<f64>,
    y_used_nf: Option<f64>,
    y_capped: bool,
}

/// The inductances that put the corners where they must be.
struct Inductances {
    x_capacitance_uf: Option<f64>,
    dm_inductance_for_corner_uh: Option<f64>,
    cm_capacitance_used_nf: Option<f64>,
    cm_inductance_for_corner_mh: Option<f64>,
}

/// What "after the filter" means: the declared stages judged by their insertion loss, or
/// a required corner by its asymptote.
struct AfterFilter<'a> {
    line: NetworkLine,
    dm_stage: Option<TwoPort>,
    cm_stage: Option<TwoPort>,
    dm_source: f64,
    cm_source: f64,
    dm_after: Option<(f64, &'static str)>,
    cm_after: Option<(f64, &'static str)>,
    text: String,
    margin_db: f64,
    estimate_keys: Vec<String>,
    suspicious: &'a Suspicious,
}

impl AfterFilter<'_> {
    // Differential mode sees two lines in series; common mode both lines in parallel.
    fn dm_il(&self, hz: f64) -> Option<f64> {
        self.dm_stage.map(|st| {
            let z = self.line.impedance(hz);
            insertion_loss_db(&st, self.dm_source, z.plus(z), hz)
        })
    }

    fn cm_il(&self, hz: f64) -> Option<f64> {
        self.cm_stage.map(|st| {
            let z = self.line.impedance(hz);
            insertion_loss_db(&st, self.cm_source, z.over(Complex::new(2.0, 0.0)), hz)
        })
    }

    fn attenuation_at(corner: Option<(f64, &str)>, hz: f64) -> f64 {
        corner.map_or(0.0, |(c, _)| {
            asymptotic_attenuation_db(c, hz, SECOND_ORDER_DB)
        })
    }

    /// A point after the filter: the filter's attenuation there, the level after it, and
    /// the verdict (made on the unrounded figures, settled against implausible inputs).
    fn judge(&self, c: &Candidate) -> (f64, f64, Verdict) {
        let (dm_stage, cm_stage, margin_db) = (self.dm_stage, self.cm_stage, self.margin_db);
        let dm = self
            .dm_il(c.frequency_hz)
            .unwrap_or_else(|| Self::attenuation_at(self.dm_after, c.frequency_hz));
        let cm = self
            .cm_il(c.frequency_hz)
            .unwrap_or_else(|| Self::attenuation_at(self.cm_after, c.frequency_hz));
        let (filter_db, judged_by_declared) = match c.mode {
            "differential" => (dm, dm_stage.is_some()),
            "common" => (cm, cm_stage.is_some()),
            _ => (dm.min(cm), dm_stage.is_some() && cm_stage.is_some()),
        };
        let after = c.level_dbuv - filter_db;
        let verdict = if c.required_db <= 0.0 {
            Verdict::Pass
        } else if judged_by_declared {
            Verdict::of(Some(after > c.limit_dbuv - margin_db))
        } else {
            Verdict::NotJudged
        };
        let keys: Vec<String> = match c.key_prefix.as_deref() {
            Some(k) => vec![
                k.to_string(),
                "emc.filter".to_string(),
                "emc.margin_db".to_string(),
            ],
            None => self.estimate_keys.clone(),
        };
        (filter_db, after, self.suspicious.settle(verdict, &keys))
    }
}

/// Middlebrook's criterion, where it applies, and why not where it does not.
struct MiddlebrookPhase {
    middlebrook: Option<Middlebrook>,
    middlebrook_applies: bool,
    middlebrook_not_applied: Option<String>,
}

/// Computes the EMC figures, phase by phase: the settings, the noise to beat, the corners
/// it needs, the touch-current cap on the Y capacitance, the inductances for the corners,
/// the declared filter, the points after the filter, Middlebrook's criterion, the limit
/// lines, and the verdicts. Every frequency outside the limits' band is reported, not only
/// the first.
pub fn compute(inputs: &EmcInputs, rules: &RuleBook) -> Result<EmcReport, Vec<InputProblem>> {
    let model = rules.table::<FilterModel>();
    let band = rules.table::<LimitTable>().band_hz();
    let mut assumptions: Vec<String> = Vec::new();
    let mut d = EmcDerivation::default();

    let settings = settings(inputs, rules, &mut assumptions);
    let (class, margin_db) = (settings.class, settings.margin_db);
    let noise = noise_to_beat(
        inputs,
        rules,
        &settings,
        &mut assumptions,
        &mut d.noise.steps,
    )?;
    let corners = corners(&noise, margin_db, &mut d);
    let y = y_capacitance(inputs, &mut assumptions, &mut d.y_capacitance.steps);
    let inductances = inductances(inputs, &corners, &y, &mut d);
    let f = &inputs.spec.filter;
    let declared = declared_filter(f, y.declared_cm_nf, &mut d.filter.steps);
    let after = after_filter(
        inputs,
        rules,
        &corners,
        declared.as_ref(),
        y.declared_cm_nf,
        margin_db,
        &mut d.filter.steps,
    );
    let points = report_points(&noise, &corners, &after);
    let MiddlebrookPhase {
        middlebrook,
        middlebrook_applies,
        middlebrook_not_applied,
    } = middlebrook_phase(inputs, rules, &inductances, &mut d.middlebrook.steps);
    let limit_lines = limit_lines(rules, class, &mut d.limit.steps);
    let verdicts = verdicts(inputs, &noise, &corners, &y, middlebrook.as_ref(), &after);

    let Noise {
        source: noise_source,
        candidates,
        harmonics_evaluated,
        gaps: noise_gaps,
        ..
    } = &noise;
    let (candidates, noise_source, harmonics_evaluated, noise_gaps) = (
        candidates,
        *noise_source,
        *harmonics_evaluated,
        noise_gaps.clone(),
    );
    let Corners {
        overall,
        dm2,
        dm4,
        cm2,
        cm4,
        max_required,
        dm_corner_hz,
        cm_corner_hz,
        ..
    } = corners;
    let YCapacitance {
        max_y_capacitance_nf,
        arrangement,
        y_capacitance_from,
        y_capacitance_nf,
        y_used_nf,
        ..
    } = y;
    let Inductances {
        dm_inductance_for_corner_uh,
        cm_capacitance_used_nf,
        cm_inductance_for_corner_mh,
        ..
    } = inductances;
    let (max_mains_v, max_mains_frequency_hz) = (inputs.max_mains_v, inputs.max_mains_frequency_hz);
    let after_filter = after.text;
    let governing_point = overall.and_then(|(i, _)| candidates.get(i));
    // Each topic's derivation carries its figure and verdict, as every area's do.
    for (topic, value, unit, verdict) in [
        (
            &mut d.limit,
            governing_point.map(|c| c.limit_dbuv),
            "dBuV",
            None,
        ),
        (
            &mut d.attenuation,
            governing_point.map(|c| c.required_db),
            "dB",
            None,
        ),
        (&mut d.dm_corner, dm_corner_hz, "Hz", Some("dm_corner_hz")),
        (&mut d.cm_corner, cm_corner_hz, "Hz", Some("cm_corner_hz")),
        (
            &mut d.y_capacitance,
            max_y_capacitance_nf,
            "nF",
            Some("y_capacitance_nf"),
        ),
        (&mut d.middlebrook, None, "", Some("middlebrook")),
    ] {
        topic.value = value;
        topic.unit = unit.into();
        topic.verdict = verdict.and_then(|v| verdicts.get(v).copied());
    }
    Ok(EmcReport {
        limit_class: class,
        margin_db,
        band_hz: [band.0, band.1],
        noise_source,
        governing_frequency_hz: governing_point.map(|c| tidy(c.frequency_hz)),
        governing_mode: governing_point.map(|c| c.mode),
        governing_detector: governing_point.map(|c| c.compared_with.as_str()),
        limit_dbuv: governing_point.map(|c| round_to(c.limit_dbuv, 0.01)),
        required_attenuation_db: governing_point.map(|c| round_up(c.required_db, 0.01)),
        max_required_attenuation_db: max_required.map(|c| round_up(c.required_db, 0.01)),
        max_required_attenuation_hz: max_required.map(|c| tidy(c.frequency_hz)),
        dm_corner_hz,
        dm_governing_frequency_hz: dm2
            .and_then(|(i, _)| candidates.get(i))
            .map(|c| tidy(c.frequency_hz)),
        dm_corner_fourth_order_hz: dm4.map(|(_, f)| corner_down(f)),
        dm_inductance_for_corner_uh,
        cm_corner_hz,
        cm_governing_frequency_hz: cm2
            .and_then(|(i, _)| candidates.get(i))
            .map(|c| tidy(c.frequency_hz)),
        cm_corner_fourth_order_hz: cm4.map(|(_, f)| corner_down(f)),
        cm_inductance_for_corner_mh,
        max_y_capacitance_nf,
        touch_current_standard: inputs.touch_standard.clone(),
        touch_current_part: inputs.touch_part.clone(),
        touch_current_limit_ma: inputs.touch_limit.as_ref().map(|t| t.limit_ma),
        max_mains_v: tidy(max_mains_v),
        max_mains_frequency_hz: tidy(max_mains_frequency_hz),
        y_capacitance_judged_by_power_entry: f.y_capacitance_nf.is_none()
            && inputs.y_parts_judged_by_power_entry,
        y_capacitance_nf,
        y_capacitance_from,
        y_arrangement: arrangement,
        y_capacitance_used_nf: y_used_nf.map(tidy),
        cm_capacitance_used_nf: cm_capacitance_used_nf.map(tidy),
        single_stage_practical_db: model.single_stage_practical_db.value,
        two_stage_practical_db: model.two_stage_practical_db.value,
        filter: declared,
        converter_figures_available: inputs.converter.is_some(),
        noise_gaps,
        middlebrook,
        middlebrook_applies,
        middlebrook_not_applied,
        verdicts,
        after_filter,
        points,
        harmonics_evaluated,
        limit_lines,
        assumptions,
        derivation: d,
    })
}

/// The limit class and margin (or their defaults) and the measuring network.
fn settings(inputs: &EmcInputs, rules: &RuleBook, assumptions: &mut Vec<String>) -> Settings {
    let spec = &inputs.spec;
    let model = rules.table::<FilterModel>();
    let class = spec.limit_class.unwrap_or_else(|| {
        assumptions.push(
            "Limit class B, the stricter (limit_class not stated in the emc table).".to_string(),
        );
        LimitClass::B
    });
    let margin_db = spec.margin_db.unwrap_or_else(|| {
        assumptions.push(format!(
            "A margin of {} dB below the limit (margin_db not stated; {}).",
            show(model.default_margin_db.value),
            model.default_margin_db.provenance
        ));
        model.default_margin_db.value
    });
    let network = Network {
        line_impedance_ohm: model.line_impedance_ohm.value,
        common_mode_impedance_ohm: model.common_mode_impedance_ohm.value,
    };
    assumptions.extend(inputs.assumptions.iter().cloned());
    Settings {
        class,
        margin_db,
        network,
    }
}

/// The noise to beat: the prescan points, or the estimate from the converter's figures,
/// or nothing; each point with the limit it is compared with and the attenuation it needs.
fn noise_to_beat(
    inputs: &EmcInputs,
    rules: &RuleBook,
    settings: &Settings,
    assumptions: &mut Vec<String>,
    steps: &mut Vec<Step>,
) -> Result<Noise, Vec<InputProblem>> {
    let mut noise = Noise {
        source: "none",
        candidates: Vec::new(),
        dm_indices: Vec::new(),
        cm_indices: Vec::new(),
        harmonics_evaluated: 0,
        gaps: Vec::new(),
    };
    let mut problems = Vec::new();
    if !inputs.spec.prescan.is_empty() {
        noise.source = "prescan";
        prescan_points(
            inputs,
            rules,
            settings,
            assumptions,
            steps,
            &mut noise,
            &mut problems,
        );
    } else if let Some(c) = &inputs.converter {
        noise.source = "estimate";
        estimated_points(
            c,
            inputs,
            rules,
            settings,
            assumptions,
            steps,
            &mut noise,
            &mut problems,
        );
    } else {
        steps.push(Step::new(
            None,
            "No prescan points and no converter figures: the noise to beat is not known, so no attenuation or corner is computed.",
        ));
    }
    if !problems.is_empty() {
        return Err(problems);
    }
    Ok(noise)
}

/// The prescan points, each held against both filter modes (their mode is not known).
fn prescan_points(
    inputs: &EmcInputs,
    rules: &RuleBook,
    settings: &Settings,
    assumptions: &mut Vec<String>,
    steps: &mut Vec<Step>,
    noise: &mut Noise,
    problems: &mut Vec<InputProblem>,
) {
    let spec = &inputs.spec;
    let (class, margin_db) = (settings.class, settings.margin_db);
    let Noise {
        candidates,
        dm_indices,
        cm_indices,
        ..
    } = noise;
    steps.push(Step::new(
        None,
        format!(
            "{} prescan point(s) measured without the filter; their mode (differential or common) is not known, so each is held against both filter modes.",
            spec.prescan.len()
        ),
    ));
    for p in &spec.prescan {
        let detectors: &[Detector] = match p.detector {
            // A switching harmonic is a continuous wave: the average detector reads
            // about what quasi-peak reads, so a quasi-peak reading meets both limits.
            PrescanDetector::QuasiPeak => &[Detector::QuasiPeak, Detector::Average],
            PrescanDetector::Average => &[Detector::Average],
            PrescanDetector::Peak => &[Detector::QuasiPeak, Detector::Average],
        };
        match binding_limit(rules, class, detectors, p.frequency_hz) {
            Ok((det, limit, limit_step)) => {
                let i = candidates.len();
                candidates.push(Candidate {
                    frequency_hz: p.frequency_hz,
                    mode: "measured",
                    harmonic: None,
                    detector: p.detector.as_str(),
                    compared_with: det,
                    level_dbuv: p.level_dbuv,
                    limit_dbuv: limit,
                    limit_step,
                    required_db: p.level_dbuv - limit + margin_db,
                    key_prefix: Some(p.key.trim_end_matches(".frequency_hz").to_string()),
                });
                dm_indices.push(i);
                cm_indices.push(i);
            }
            Err(e) => problems.push(InputProblem {
                key: p.key.clone(),
                span: Some(p.span.clone()),
                message: e.message,
            }),
        }
    }
    if spec
        .prescan
        .iter()
        .any(|p| p.detector == PrescanDetector::QuasiPeak)
    {
        assumptions.push(
            "Quasi-peak readings are held against the average limit too (the lower governs): a switching harmonic is a continuous wave, for which the average detector reads about what quasi-peak reads (common practice of pre-compliance work, no published source)."
                .to_string(),
        );
    }
    if spec
        .prescan
        .iter()
        .any(|p| p.detector == PrescanDetector::Peak)
    {
        assumptions.push(
            "Peak readings are held against the lower of the quasi-peak and average limits (a peak reading is never below either; conservative)."
                .to_string(),
        );
    }
    assumptions.push(
        "Prescan points do not say whether their noise is differential or common mode: both corners are sized for the full measured level."
            .to_string(),
    );
}

/// The switching harmonics estimated from the converter's figures: differential mode
/// through the bulk capacitor, common mode through the parasitic capacitance to earth.
#[allow(clippy::too_many_arguments)]
fn estimated_points(
    c: &ConverterFigures,
    inputs: &EmcInputs,
    rules: &RuleBook,
    settings: &Settings,
    assumptions: &mut Vec<String>,
    steps: &mut Vec<Step>,
    noise: &mut Noise,
    problems: &mut Vec<InputProblem>,
) {
    let spec = &inputs.spec;
    let model = rules.table::<FilterModel>();
    let model_id = model.id.as_str();
    let band = rules.table::<LimitTable>().band_hz();
    let (class, margin_db, network) = (settings.class, settings.margin_db, settings.network);
    let max_mains_v = inputs.max_mains_v;
    let Noise {
        candidates,
        dm_indices,
        cm_indices,
        harmonics_evaluated,
        gaps: noise_gaps,
        ..
    } = noise;
    let parasitic_pf = spec.parasitic_capacitance_pf.unwrap_or_else(|| {
        assumptions.push(format!(
            "Parasitic capacitance from the switch node to earth {} pF (parasitic_capacitance_pf not stated; {}).",
            show(model.default_parasitic_capacitance_pf.value),
            model.default_parasitic_capacitance_pf.provenance
        ));
        model.default_parasitic_capacitance_pf.value
    });
    let swing_v = spec.switch_node_swing_v.unwrap_or_else(|| {
        let v =
            model.default_switch_node_swing_factor.value * std::f64::consts::SQRT_2 * max_mains_v;
        assumptions.push(format!(
            "Switch-node swing {} V = {} x sqrt(2) x {} V (switch_node_swing_v not stated; {}).",
            show(v),
            show(model.default_switch_node_swing_factor.value),
            show(max_mains_v),
            model.default_switch_node_swing_factor.provenance
        ));
        v
    });
    let rise_ns = spec.switch_node_rise_time_ns.unwrap_or_else(|| {
        assumptions.push(format!(
            "Switch-node rise time {} ns for the common-mode estimate (switch_node_rise_time_ns not stated; {}; {}).",
            show(model.default_switch_node_rise_time_ns.value),
            model.default_switch_node_rise_time_ns.source,
            model.default_switch_node_rise_time_ns.provenance
        ));
        model.default_switch_node_rise_time_ns.value
    });
    assumptions.push(
        "Estimated harmonics are taken as continuous sines: quasi-peak and average readings equal their rms value, so each is held against the lower (average) limit."
            .to_string(),
    );
    let dm = match &inputs.bulk {
        Some(bulk) => noise::differential_mode(c, bulk, &network, band),
        None => {
            noise_gaps.push(
                "differential-mode noise not estimated: no input table with the bulk capacitor (bulk_capacitance_uf)"
                    .to_string(),
            );
            Ok(Vec::new())
        }
    };
    let cm = noise::common_mode(
        c,
        &CommonModePath {
            switch_node_swing_v: swing_v,
            parasitic_capacitance_pf: parasitic_pf,
            rise_time_s: rise_ns * 1e-9,
        },
        &network,
        band,
    );
    match (dm, cm) {
        (Ok(dm), Ok(cm)) => {
            *harmonics_evaluated = dm.len() + cm.len();
            noise_steps(
                steps,
                c,
                inputs.bulk.as_ref(),
                swing_v,
                parasitic_pf,
                rise_ns,
                model_id,
                &network,
                &dm,
                &cm,
            );
            for (mode, list, indices) in [
                ("differential", &dm, &mut *dm_indices),
                ("common", &cm, &mut *cm_indices),
            ] {
                for h in list {
                    match binding_limit(
                        rules,
                        class,
                        &[Detector::QuasiPeak, Detector::Average],
                        h.frequency_hz,
                    ) {
                        Ok((det, limit, limit_step)) => {
                            indices.push(candidates.len());
                            candidates.push(Candidate {
                                frequency_hz: h.frequency_hz,
                                mode,
                                harmonic: Some(h.number),
                                detector: "estimate",
                                compared_with: det,
                                level_dbuv: h.level_dbuv,
                                limit_dbuv: limit,
                                limit_step,
                                required_db: h.level_dbuv - limit + margin_db,
                                key_prefix: None,
                            });
                        }
                        Err(e) => problems.push(InputProblem {
                            key: "converter.switching_hz".to_string(),
                            span: None,
                            message: e.message,
                        }),
                    }
                }
            }
        }
        (Err(e), _) | (_, Err(e)) => problems.push(InputProblem {
            key: "emc".to_string(),
            span: None,
            message: format!("the noise estimate cannot be made: {e}"),
        }),
    }
}

/// The required attenuation and the corners that meet every point, by mode and order.
fn corners<'a>(noise: &'a Noise, margin_db: f64, d: &mut EmcDerivation) -> Corners<'a> {
    let (candidates, dm_indices, cm_indices) =
        (&noise.candidates, &noise.dm_indices, &noise.cm_indices);
    let all: Vec<usize> = (0..candidates.len()).collect();
    let overall = governing(candidates, &all, SECOND_ORDER_DB);
    let dm2 = governing(candidates, dm_indices, SECOND_ORDER_DB);
    let dm4 = governing(candidates, dm_indices, FOURTH_ORDER_DB);
    let cm2 = governing(candidates, cm_indices, SECOND_ORDER_DB);
    let cm4 = governing(candidates, cm_indices, FOURTH_ORDER_DB);
    let max_required = candidates
        .iter()
        .max_by(|a, b| a.required_db.total_cmp(&b.required_db));

    if let Some((i, _)) = overall
        && let Some(c) = candidates.get(i)
    {
        d.limit.push(c.limit_step.clone());
        d.attenuation.push(Step::new(
            None,
            format!(
                "Required attenuation at {} ({} {}, against the {} limit): level - limit + margin = {} - {} + {} = {} dB.",
                frequency_words(c.frequency_hz),
                c.mode,
                c.detector,
                c.compared_with.as_str(),
                show(c.level_dbuv),
                show(c.limit_dbuv),
                show(margin_db),
                show(c.required_db)
            ),
        ));
    }
    if let Some(c) = max_required {
        d.attenuation.push(Step::new(
            None,
            format!(
                "The largest attenuation needed at any of the {} point(s): {} dB at {} ({}).",
                candidates.len(),
                show(c.required_db),
                frequency_words(c.frequency_hz),
                c.mode
            ),
        ));
    }
    if !candidates.is_empty() && overall.is_none() {
        d.attenuation.push(Step::new(
            None,
            "Every point is already below its limit by the margin or more: no attenuation is needed and no corner is set.",
        ));
    }
    corner_steps(
        &mut d.dm_corner.steps,
        "Differential-mode",
        candidates,
        dm_indices.len(),
        dm2,
        dm4,
    );
    corner_steps(
        &mut d.cm_corner.steps,
        "Common-mode",
        candidates,
        cm_indices.len(),
        cm2,
        cm4,
    );
    let dm_corner_hz = dm2.map(|(_, f)| corner_down(f));
    let cm_corner_hz = cm2.map(|(_, f)| corner_down(f));
    Corners {
        all,
        overall,
        dm2,
        dm4,
        cm2,
        cm4,
        max_required,
        dm_corner_hz,
        cm_corner_hz,
    }
}

/// The touch-current limit caps the Y capacitance; the Y capacitance declared (in the
/// filter table or as parts) and the one the common-mode corner is sized with.
fn y_capacitance(
    inputs: &EmcInputs,
    assumptions: &mut Vec<String>,
    steps: &mut Vec<Step>,
) -> YCapacitance {
    let spec = &inputs.spec;
    let (max_mains_v, max_mains_frequency_hz) = (inputs.max_mains_v, inputs.max_mains_frequency_hz);
    steps.push(Step::new(
        None,
        if inputs.mains_from_power_entry {
            format!(
                "Highest mains voltage {} V and frequency {} Hz, from power entry's mains range.",
                show(max_mains_v),
                show(max_mains_frequency_hz)
            )
        } else {
            format!(
                "Highest mains voltage {} V and frequency {} Hz, from the mains table (defaults listed under assumptions).",
                show(max_mains_v),
                show(max_mains_frequency_hz)
            )
        },
    ));
    let max_y_capacitance_nf = match &inputs.touch_limit {
        Some(t) => {
            let limit_a = t.limit_ma / 1000.0;
            let max_y_f =
                limit_a / (2.0 * std::f64::consts::PI * max_mains_frequency_hz * max_mains_v);
            let max_y = round_down(max_y_f * 1e9, 0.001);
            steps.push(Step::new(
                Some(&t.rule),
                format!(
                    "Touch-current limit {} mA for a {} part under {} ({}).",
                    show(t.limit_ma),
                    t.part,
                    t.standard_title,
                    t.source
                ),
            ));
            steps.push(Step::new(
                None,
                format!(
                    "Largest Y capacitance from one line: C = I / (2 pi f V) = {} mA / (2 pi x {} Hz x {} V) = {} nF (rounded down), at the highest mains voltage and frequency.",
                    show(t.limit_ma),
                    show(max_mains_frequency_hz),
                    show(max_mains_v),
                    show(max_y)
                ),
            ));
            (max_y_f.is_finite() && max_y_f > 0.0).then_some(max_y)
        }
        None => {
            steps.push(Step::new(
                None,
                format!(
                    "The touch-current rules give no limit for a {} part under {}: the Y capacitance is not capped.",
                    inputs.touch_part, inputs.touch_standard
                ),
            ));
            None
        }
    };
    let arrangement = spec.filter.y_arrangement.unwrap_or_else(|| {
        let a = match inputs.protection_class {
            ProtectionClass::I => YArrangement::EachLine,
            _ => YArrangement::Single,
        };
        assumptions.push(format!(
            "Y capacitors arranged \"{}\" ({}; y_arrangement not stated in the emc filter table).",
            a.as_str(),
            match a {
                YArrangement::EachLine => "one from each mains line to earth, as in a Class I design",
                YArrangement::Single => "one from the rectified primary to the secondary or earth, as in a Class II design",
            }
        ));
        a
    });
    // Per line, and the common-mode capacitance it stands for (exact, unrounded).
    let (y_exact_nf, y_capacitance_from, declared_cm_nf) = match spec.filter.y_capacitance_nf {
        Some(c) => (
            Some(c),
            Some("emc filter table, y_capacitance_nf".to_string()),
            Some(c * arrangement.common_mode_factor()),
        ),
        None if !inputs.y_parts.is_empty() => {
            // The parts are every Y capacitor: their sum is the whole common-mode
            // capacitance. From each line, the line side is half of it (or the largest
            // single part, whichever is larger: the plug may be reversed).
            let total: f64 = inputs.y_parts.iter().map(|(_, c)| c).sum();
            let largest = inputs.y_parts.iter().map(|(_, c)| *c).fold(0.0, f64::max);
            let refs: Vec<&str> = inputs.y_parts.iter().map(|(r, _)| r.as_str()).collect();
            let (per_line, how) = match arrangement {
                YArrangement::EachLine if inputs.y_parts.len() > 1 => (
                    (total / 2.0).max(largest),
                    format!(
                        "Y-capacitor parts {} (effective values added: {} nF in all, the common-mode capacitance; per line the larger of half of it and the largest part)",
                        refs.join(", "),
                        show(tidy(total))
                    ),
                ),
                _ => (
                    total,
                    format!(
                        "Y-capacitor parts {} (effective values added)",
                        refs.join(", ")
                    ),
                ),
            };
            (Some(per_line), Some(how), Some(total))
        }
        None => (None, None, None),
    };
    let y_capacitance_nf = y_exact_nf.map(tidy);
    if let (Some(y), Some(from)) = (y_capacitance_nf, &y_capacitance_from) {
        let verdict = match max_y_capacitance_nf {
            Some(max) if y > max => format!("above the cap of {} nF", show(max)),
            Some(max) => format!("within the cap of {} nF", show(max)),
            None => "not capped".to_string(),
        };
        steps.push(Step::new(
            None,
            format!(
                "Declared Y capacitance per line {} nF, from {}: {verdict}.",
                show(y),
                from
            ),
        ));
    }
    let y_used_nf = match (y_exact_nf, max_y_capacitance_nf) {
        (Some(y), Some(max)) => Some(y.min(max)),
        (Some(y), None) => Some(y),
        (None, max) => max,
    };
    let y_capped = matches!((y_exact_nf, max_y_capacitance_nf), (Some(y), Some(max)) if y > max);
    YCapacitance {
        max_y_capacitance_nf,
        arrangement,
        y_exact_nf,
        y_capacitance_from,
        declared_cm_nf,
        y_capacitance_nf,
        y_used_nf,
        y_capped,
    }
}

/// The differential-mode inductance and the common-mode choke for the corners.
fn inductances(
    inputs: &EmcInputs,
    corners: &Corners,
    y: &YCapacitance,
    d: &mut EmcDerivation,
) -> Inductances {
    let spec = &inputs.spec;
    let (dm_corner_hz, cm_corner_hz) = (corners.dm_corner_hz, corners.cm_corner_hz);
    let (y_capped, declared_cm_nf, y_used_nf, arrangement) =
        (y.y_capped, y.declared_cm_nf, y.y_used_nf, y.arrangement);
    let (y_capacitance_nf, max_y_capacitance_nf) = (y.y_capacitance_nf, y.max_y_capacitance_nf);
    let f = &spec.filter;
    let (x_capacitance_uf, x_from) = match (f.x_capacitance_uf, inputs.input_x_capacitance_uf) {
        (Some(c), _) => (Some(c), "the emc filter table"),
        (None, Some(c)) => (Some(c), "the input table (x_capacitance_uf)"),
        (None, None) => (None, ""),
    };
    let dm_inductance_for_corner_uh = match (dm_corner_hz, x_capacitance_uf) {
        (Some(fc), Some(cx))
            if fc > 0.0 && !finite(inductance_for_corner_h(fc, cx * 1e-6) * 1e6) =>
        {
            d.dm_corner.push(Step::new(
                None,
                format!(
                    "The X capacitance from {x_from} is {} uF: no finite inductance puts the corner at {} Hz with it, so the inductance for the corner is not computed.",
                    show(cx),
                    show(fc)
                ),
            ));
            None
        }
        (Some(fc), Some(cx)) if fc > 0.0 => {
            let l = inductance_for_corner_h(fc, cx * 1e-6) * 1e6;
            let l = round_up(l, 0.001);
            d.dm_corner.push(Step::new(
                None,
                format!(
                    "Inductance for that corner with the X capacitance from {x_from}: L = 1 / ((2 pi f)^2 C) = 1 / ((2 pi x {} Hz)^2 x {} uF) = {} uH.",
                    show(fc),
                    show(cx),
                    show(l)
                ),
            ));
            Some(l)
        }
        (Some(_), None) => {
            d.dm_corner.push(Step::new(
                None,
                "No X capacitance (x_capacitance_uf in the emc filter table or the input table): the inductance for the corner is not computed.",
            ));
            None
        }
        _ => None,
    };
    let cm_capacitance_used_nf = if y_capped || declared_cm_nf.is_none() {
        y_used_nf.map(|y| y * arrangement.common_mode_factor())
    } else {
        declared_cm_nf
    };
    let cm_inductance_for_corner_mh = match (cm_corner_hz, cm_capacitance_used_nf, y_used_nf) {
        (Some(fc), Some(c), Some(_))
            if fc > 0.0 && !finite(inductance_for_corner_h(fc, c * 1e-9) * 1e3) =>
        {
            d.cm_corner.push(Step::new(
                None,
                format!(
                    "Common-mode capacitance {} nF: no finite choke puts the corner at {} Hz with it, so the choke for the corner is not computed.",
                    show(c),
                    show(fc)
                ),
            ));
            None
        }
        (Some(fc), Some(cm_capacitance_used_nf), Some(y_used_nf))
            if fc > 0.0 && cm_capacitance_used_nf > 0.0 =>
        {
            let l = inductance_for_corner_h(fc, cm_capacitance_used_nf * 1e-9) * 1e3;
            let l = round_up(l, 0.0001);
            d.cm_corner.push(Step::new(
                None,
                format!(
                    "Common-mode choke for that corner: L = 1 / ((2 pi f)^2 C_cm) = 1 / ((2 pi x {} Hz)^2 x {} nF) = {} mH, with C_cm = {} ({} arrangement; {}).",
                    show(fc),
                    show(tidy(cm_capacitance_used_nf)),
                    show(l),
                    if y_capped || declared_cm_nf.is_none() || spec.filter.y_capacitance_nf.is_some() {
                        format!("{} x {} nF per line", show(arrangement.common_mode_factor()), show(tidy(y_used_nf)))
                    } else {
                        "the sum of the Y-capacitor parts (not doubled: the parts are every Y capacitor)".to_string()
                    },
                    arrangement.as_str(),
                    match (y_capacitance_nf, max_y_capacitance_nf) {
                        (Some(y), Some(max)) if y > max =>
                            "the declared Y capacitance is above the touch-current cap, so the cap is used",
                        (Some(_), _) => "the declared Y capacitance",
                        (None, _) => "none declared: the largest the touch current allows",
                    }
                ),
            ));
            Some(l)
        }
        (Some(_), _, _) => {
            d.cm_corner.push(Step::new(
                None,
                "No Y capacitance known (none declared and no touch-current cap): the common-mode choke for the corner is not computed.",
            ));
            None
        }
        _ => None,
    };
    Inductances {
        x_capacitance_uf,
        dm_inductance_for_corner_uh,
        cm_capacitance_used_nf,
        cm_inductance_for_corner_mh,
    }
}

/// What the points see after the filter. A declared stage is judged by its transfer
/// function (insertion loss between a stated source impedance and the measuring network,
/// damping and resonance included); a stage only required (no parts declared) by its
/// 40 dB/decade asymptote.
fn after_filter<'a>(
    inputs: &'a EmcInputs,
    rules: &RuleBook,
    corners: &Corners,
    declared: Option<&DeclaredFilter>,
    declared_cm_nf: Option<f64>,
    margin_db: f64,
    steps: &mut Vec<Step>,
) -> AfterFilter<'a> {
    let model = rules.table::<FilterModel>();
    let model_id = model.id.as_str();
    let f = &inputs.spec.filter;
    let (dm_corner_hz, cm_corner_hz) = (corners.dm_corner_hz, corners.cm_corner_hz);
    let line = NetworkLine {
        resistance_ohm: model.line_impedance_ohm.value,
        inductance_h: model.network_inductance_uh.value * 1e-6,
    };
    let dm_stage = match (f.dm_inductance_uh, f.x_capacitance_uf) {
        (Some(l), Some(c)) if declared.is_some_and(|x| x.dm_corner_hz.is_some()) => Some(TwoPort {
            series_inductance_h: l * 1e-6,
            series_resistance_ohm: f.dm_inductor_resistance_ohm.unwrap_or(0.0),
            shunt_capacitance_f: c * 1e-6,
            damping: f.damping.map(|(rd, cd)| (rd, cd * 1e-6)),
        }),
        _ => None,
    };
    let cm_stage = match (f.cm_inductance_mh, declared_cm_nf) {
        (Some(l), Some(c)) if declared.is_some_and(|x| x.cm_corner_hz.is_some()) => Some(TwoPort {
            series_inductance_h: l * 1e-3,
            series_resistance_ohm: 0.0,
            shunt_capacitance_f: c * 1e-9,
            damping: None,
        }),
        _ => None,
    };
    let dm_source = model.dm_source_impedance_ohm.value;
    let cm_source = model.cm_source_impedance_ohm.value;
    let dm_after = dm_stage
        .is_none()
        .then(|| dm_corner_hz.map(|c| (c, "required")))
        .flatten();
    let cm_after = cm_stage
        .is_none()
        .then(|| cm_corner_hz.map(|c| (c, "required")))
        .flatten();
    let describe = |what: &str,
                    declared_stage: bool,
                    c: Option<(f64, &str)>,
                    source: f64,
                    load: &str| {
        if declared_stage {
            format!(
                "{what}: the declared stage's insertion loss, from a {} ohm source into the measuring network ({load}), damping and resonance included",
                show(source)
            )
        } else {
            match c {
                Some((hz, kind)) => format!(
                    "{what}: no stage declared; the {kind} second-order corner, {}, with its asymptote (40 dB per decade above it)",
                    frequency_words(hz)
                ),
                None => format!("{what}: no filter (no corner declared or needed)"),
            }
        }
    };
    let after_filter = format!(
        "{}; {}. The measuring network is {} ohm in parallel with {} uH per line ({}); parasitics of the parts are left out.",
        describe(
            "differential mode",
            dm_stage.is_some(),
            dm_after,
            dm_source,
            "two lines in series"
        ),
        describe(
            "common mode",
            cm_stage.is_some(),
            cm_after,
            cm_source,
            "two lines in parallel"
        ),
        show(model.line_impedance_ohm.value),
        show(model.network_inductance_uh.value),
        model.network_inductance_uh.source
    );
    steps.push(Step::new(
        Some(model_id),
        format!(
            "Insertion loss of a declared stage: IL = 20 log10 |V_without / V_with|, V_without = V_s Z_n / (Z_s + Z_n), V_with = V_s Z_p / (Z_s + Z_p) x Z_n / (Z_L + Z_n), Z_p = Z_shunt || (Z_L + Z_n); Z_shunt the X (or Y) capacitance with the damping branch, Z_L the inductance with its resistance, Z_s the source impedance ({} ohm differential, {} ohm common mode; {}), Z_n the measuring network (50 ohm || 50 uH per line). Near the resonance it can be negative: the stage amplifies.",
            show(dm_source),
            show(cm_source),
            model.dm_source_impedance_ohm.provenance
        ),
    ));
    AfterFilter {
        line,
        dm_stage,
        cm_stage,
        dm_source,
        cm_source,
        dm_after,
        cm_after,
        text: after_filter,
        margin_db,
        estimate_keys: [
            "converter",
            "input.bulk_capacitance_uf",
            "input.series_resistance_ohm",
            "emc.parasitic_capacitance_pf",
            "emc.switch_node_",
            "emc.filter",
            "emc.margin_db",
            "mains",
        ]
        .iter()
        .map(|k| k.to_string())
        .collect(),
        suspicious: &inputs.suspicious,
    }
}

/// The points for the report: every prescan point; of an estimate, the first harmonics,
/// then one every `SHOWN_STEP` in frequency, and every point that governs a figure.
fn report_points(noise: &Noise, corners: &Corners, after: &AfterFilter) -> Vec<NoisePoint> {
    let (noise_source, candidates) = (noise.source, &noise.candidates);
    let (dm_indices, cm_indices) = (&noise.dm_indices, &noise.cm_indices);
    let Corners {
        all,
        overall,
        dm2,
        dm4,
        cm2,
        cm4,
        max_required,
        ..
    } = corners;
    let (overall, dm2, dm4, cm2, cm4, max_required) =
        (*overall, *dm2, *dm4, *cm2, *cm4, *max_required);
    let judge = |c: &Candidate| after.judge(c);
    let keep: Vec<usize> = if noise_source == "estimate" {
        let mut keep = Vec::new();
        for indices in [dm_indices, cm_indices] {
            let mut last_shown: Option<f64> = None;
            for (k, &i) in indices.iter().enumerate() {
                let Some(c) = candidates.get(i) else { continue };
                let must = [overall, dm2, dm4, cm2, cm4]
                    .iter()
                    .any(|g| g.is_some_and(|(gi, _)| gi == i))
                    || max_required.is_some_and(|m| std::ptr::eq(m, c));
                let spaced = last_shown.is_none_or(|l| c.frequency_hz >= l * SHOWN_STEP);
                if k < SHOWN_FIRST || spaced || must {
                    keep.push(i);
                    last_shown = Some(c.frequency_hz);
                }
            }
        }
        keep
    } else {
        all.clone()
    };
    keep.iter()
        .filter_map(|&i| candidates.get(i))
        .map(|c| {
            let (filter_db, after, verdict) = judge(c);
            NoisePoint {
                frequency_hz: tidy(c.frequency_hz),
                mode: c.mode,
                harmonic: c.harmonic,
                detector: c.detector,
                compared_with: c.compared_with.as_str(),
                level_dbuv: round_to(c.level_dbuv, 0.01),
                limit_dbuv: round_to(c.limit_dbuv, 0.01),
                required_attenuation_db: round_up(c.required_db, 0.01),
                filter_attenuation_db: round_to(filter_db, 0.01),
                after_filter_dbuv: round_to(after, 0.01),
                verdict,
            }
        })
        .collect()
}

/// Middlebrook's criterion holds where the filter sees the converter's negative input
/// resistance: behind a PFC stage (a small capacitance after the bridge). Behind a bridge
/// and a bulk capacitor it does not: the bridge conducts only near the crests, and then
/// the filter sees the bulk capacitor's low impedance, not -V^2/P.
fn middlebrook_phase(
    inputs: &EmcInputs,
    rules: &RuleBook,
    inductances: &Inductances,
    steps: &mut Vec<Step>,
) -> MiddlebrookPhase {
    let model = rules.table::<FilterModel>();
    let model_id = model.id.as_str();
    let f = &inputs.spec.filter;
    let (x_capacitance_uf, dm_inductance_for_corner_uh) = (
        inductances.x_capacitance_uf,
        inductances.dm_inductance_for_corner_uh,
    );
    let middlebrook_applies = inputs.converter.is_some() && inputs.pfc_stage;
    let middlebrook_not_applied = (inputs.converter.is_some() && !inputs.pfc_stage).then(|| {
        let bulk = inputs
            .bulk
            .map(|b| format!(" ({} uF)", show(b.capacitance_uf)))
            .unwrap_or_default();
        format!(
            "Middlebrook's criterion not applied: the converter has no PFC stage (converter.pfc_stage not true), so the filter feeds a bridge and a bulk capacitor{bulk}; the bridge conducts only near the mains crests, and then the filter sees the bulk capacitor's low impedance, not the converter's negative resistance -V^2/P, so the criterion and its damping advice do not hold there. Set converter.pfc_stage = true for a converter with active power-factor correction (a small capacitance after the bridge), where it applies."
        )
    });
    let middlebrook = if middlebrook_applies {
        inputs.converter.as_ref().and_then(|c| {
            // Behind a PFC stage the filter sees the converter at the line voltage.
            let at_line = ConverterFigures {
                bulk_v: inputs.min_mains_v,
                ..*c
            };
            middlebrook(
                &at_line,
                f,
                x_capacitance_uf,
                dm_inductance_for_corner_uh,
                model.middlebrook_margin_db.value,
                steps,
            )
        })
    } else {
        None
    };
    if let Some(why) = &middlebrook_not_applied {
        steps.push(Step::new(None, why.clone()));
    } else if inputs.converter.is_none() {
        steps.push(Step::new(
            None,
            "Not judged: the project has no converter table, so the converter's power, efficiency and lowest bulk voltage are not known.",
        ));
    } else if middlebrook.is_none() {
        steps.push(Step::new(
            None,
            "Not judged: no differential-mode stage is declared (dm_inductance_uh and x_capacitance_uf), and none is proposed (no X capacitance, or no corner needed).",
        ));
    }
    if middlebrook.is_some() {
        steps.insert(
            0,
            Step::new(
                Some(model_id),
                format!(
                    "Margin below the converter's input impedance: {}.",
                    cite(&model.middlebrook_margin_db)
                ),
            ),
        );
    }
    MiddlebrookPhase {
        middlebrook,
        middlebrook_applies,
        middlebrook_not_applied,
    }
}

/// The limit lines as polylines for the chart, and the limits' source.
fn limit_lines(rules: &RuleBook, class: LimitClass, steps: &mut Vec<Step>) -> Vec<LimitLineOut> {
    let limits_id = rules.table::<LimitTable>().id.as_str();
    let limit_lines: Vec<LimitLineOut> = [Detector::QuasiPeak, Detector::Average]
        .iter()
        .filter_map(|&det| {
            rules.table::<LimitTable>().line(class, det).map(|line| {
                let mut vertices: Vec<[f64; 2]> = Vec::new();
                for s in &line.segments {
                    vertices.push([s.from_hz, s.from_dbuv]);
                    vertices.push([s.to_hz, s.to_dbuv]);
                }
                vertices.dedup();
                LimitLineOut {
                    detector: det.as_str(),
                    vertices,
                }
            })
        })
        .collect();
    steps.push(Step::new(
        Some(limits_id),
        format!(
            "Class {} limits: quasi-peak and average lines from {}; between a segment's ends the limit runs linearly in log f.",
            class.as_str(),
            rules.table::<LimitTable>().source
        ),
    ));
    limit_lines
}

/// The verdicts on the unrounded figures, each settled against implausible inputs.
fn verdicts(
    inputs: &EmcInputs,
    noise: &Noise,
    corners: &Corners,
    y: &YCapacitance,
    middlebrook: Option<&Middlebrook>,
    after: &AfterFilter,
) -> std::collections::BTreeMap<String, Verdict> {
    let suspicious = &inputs.suspicious;
    let f = &inputs.spec.filter;
    let candidates = &noise.candidates;
    let (dm2, cm2) = (corners.dm2, corners.cm2);
    let (y_exact_nf, declared_cm_nf) = (y.y_exact_nf, y.declared_cm_nf);
    let (max_mains_v, max_mains_frequency_hz) = (inputs.max_mains_v, inputs.max_mains_frequency_hz);
    let mut verdicts = std::collections::BTreeMap::new();
    let mut put = |name: &str, v: Verdict, keys: &[&str]| {
        verdicts.insert(name.to_string(), suspicious.settle(v, keys));
    };
    if let Some(y) = y_exact_nf {
        let cap = inputs.touch_limit.as_ref().map(|t| {
            t.limit_ma
                / 1000.0
                / (2.0 * std::f64::consts::PI * max_mains_frequency_hz * max_mains_v)
                * 1e9
        });
        put(
            "y_capacitance_nf",
            Verdict::of(cap.filter(|c| c.is_finite()).map(|c| y > c)),
            &[
                "part",
                "emc.filter.y_",
                "mains",
                "input.max_frequency_hz",
                "input.end_product_standard",
            ],
        );
    }
    let declared_dm_exact = match (f.dm_inductance_uh, f.x_capacitance_uf) {
        (Some(l), Some(c)) => Some(lc_corner_hz(l * 1e-6, c * 1e-6)).filter(|x| x.is_finite()),
        _ => None,
    };
    if let Some(fc) = declared_dm_exact {
        put(
            "dm_corner_hz",
            Verdict::of(
                dm2.map(|(_, req)| fc > req)
                    .or((!candidates.is_empty()).then_some(false)),
            ),
            &["emc", "converter", "input.bulk_capacitance_uf"],
        );
    }
    let declared_cm_exact = match (f.cm_inductance_mh, declared_cm_nf) {
        (Some(l), Some(c)) => Some(lc_corner_hz(l * 1e-3, c * 1e-9)).filter(|x| x.is_finite()),
        _ => None,
    };
    if let Some(fc) = declared_cm_exact {
        put(
            "cm_corner_hz",
            Verdict::of(
                cm2.map(|(_, req)| fc > req)
                    .or((!candidates.is_empty()).then_some(false)),
            ),
            &["emc", "converter", "part"],
        );
    }
    if let Some(m) = middlebrook {
        put(
            "middlebrook",
            Verdict::of(Some(!m.satisfied)),
            &["emc.filter", "converter", "mains"],
        );
    }
    if !candidates.is_empty() {
        let all: Vec<Verdict> = candidates.iter().map(|c| after.judge(c).2).collect();
        let worst = if all.contains(&Verdict::Fail) {
            Verdict::Fail
        } else if all.contains(&Verdict::NotJudged) {
            Verdict::NotJudged
        } else if all.contains(&Verdict::CheckInput) {
            Verdict::CheckInput
        } else {
            Verdict::Pass
        };
        verdicts.insert("points".to_string(), worst);
    }
    verdicts
}

fn corner_steps(
    steps: &mut Vec<Step>,
    what: &str,
    candidates: &[Candidate],
    considered: usize,
    second: Option<(usize, f64)>,
    fourth: Option<(usize, f64)>,
) {
    if let Some((i, fc)) = second
        && let Some(c) = candidates.get(i)
    {
        steps.push(Step::new(
            None,
            format!(
                "{what} corner, second order (40 dB/decade): fc = f / 10^(A / 40) = {} Hz / 10^({} / 40) = {} Hz, set by the point at {}, the lowest corner of the {considered} point(s) considered.",
                show(c.frequency_hz),
                show(c.required_db),
                show(corner_down(fc)),
                frequency_words(c.frequency_hz)
            ),
        ));
    }
    if let Some((i, fc)) = fourth
        && let Some(c) = candidates.get(i)
    {
        steps.push(Step::new(
            None,
            format!(
                "{what} corner, fourth order (two stages, 80 dB/decade): fc = f / 10^(A / 80) = {} Hz / 10^({} / 80) = {} Hz, set by the point at {}.",
                show(c.frequency_hz),
                show(c.required_db),
                show(corner_down(fc)),
                frequency_words(c.frequency_hz)
            ),
        ));
    }
}

#[allow(clippy::too_many_arguments)]
fn noise_steps(
    steps: &mut Vec<Step>,
    c: &ConverterFigures,
    bulk: Option<&BulkCapacitor>,
    swing_v: f64,
    parasitic_pf: f64,
    rise_ns: f64,
    model_id: &str,
    network: &Network,
    dm: &[Harmonic],
    cm: &[Harmonic],
) {
    let height = noise::pulse_height_a(c);
    steps.push(Step::new(
        None,
        format!(
            "Waveform model: the converter draws a rectangular current pulse train from the bulk capacitor, height I_pk = P_out / (efficiency x V_bulk x D) = {} / ({} x {} x {}) = {} A, duty D = {}, at {} Hz; the switch node swings {} V with the same duty. Ramps, ringing and edges are left out (an upper bound at high frequencies).",
            show(c.output_w),
            show(c.efficiency),
            show(c.bulk_v),
            show(c.max_duty),
            show(height),
            show(c.max_duty),
            show(c.switching_hz),
            show(swing_v)
        ),
    ));
    steps.push(Step::new(
        None,
        "Harmonic n of a rectangular pulse train of height A and duty D: peak 2 A |sin(n pi D)| / (n pi).",
    ));
    if let Some(bulk) = bulk {
        steps.push(Step::new(
            Some(model_id),
            format!(
                "Differential mode: harmonic current split between the bulk capacitor ({} uF, ESR {} ohm) and the measuring network, {} ohm per line, two lines in series: I_line = I_n |Z_C| / |Z_C + 2 R|; level = I_line x {} ohm, as rms in dBuV.",
                show(bulk.capacitance_uf),
                show(bulk.esr_ohm),
                show(network.line_impedance_ohm),
                show(network.line_impedance_ohm)
            ),
        ));
    }
    steps.push(Step::new(
        Some(model_id),
        format!(
            "Common mode: the switch node is a trapezoid with rise and fall time t_r = {} ns: each rectangular harmonic is multiplied by |sin(x) / x|, x = pi n f t_r, so the spectrum falls 40 dB/decade above 1 / (pi t_r) = {} MHz. Harmonics at a null of the spectrum (sin(n pi D) or the trapezoid factor zero) carry no noise and are left out.",
            show(rise_ns),
            show(round_to(1.0 / (std::f64::consts::PI * rise_ns * 1e-9) / 1e6, 0.001))
        ),
    ));
    steps.push(Step::new(
        Some(model_id),
        format!(
            "Common mode: the swing drives {} pF to earth in series with {} ohm (both lines in parallel); level = current x {} ohm, as rms in dBuV.",
            show(parasitic_pf),
            show(network.common_mode_impedance_ohm),
            show(network.common_mode_impedance_ohm)
        ),
    ));
    if let Some(h) = dm.first().or(cm.first()) {
        steps.push(Step::new(
            None,
            format!(
                "First switching harmonic in the band: n = {} at {} (switching frequencies are chosen so that the harmonics below it stay under the band; common practice, no published source).",
                h.number,
                frequency_words(h.frequency_hz)
            ),
        ));
    }
    if let Some(h) = dm.first() {
        steps.push(Step::new(
            None,
            format!(
                "Differential mode at {}: {} mA peak from the pulse train, {} mA into the network, {} dBuV.",
                frequency_words(h.frequency_hz),
                show(h.source_peak * 1000.0),
                show(h.network_current_a * 1000.0),
                show(round_to(h.level_dbuv, 0.01))
            ),
        ));
    }
    if dm.is_empty() && cm.is_empty() {
        steps.push(Step::new(
            None,
            "No switching harmonic falls inside the band: nothing to estimate.",
        ));
    }
    if let Some(h) = cm.first() {
        steps.push(Step::new(
            None,
            format!(
                "Common mode at {}: {} V peak from the swing, {} mA, {} dBuV.",
                frequency_words(h.frequency_hz),
                show(h.source_peak),
                show(h.network_current_a * 1000.0),
                show(round_to(h.level_dbuv, 0.01))
            ),
        ));
    }
}

fn declared_filter(
    f: &super::FilterSpec,
    cm_capacitance_exact_nf: Option<f64>,
    steps: &mut Vec<Step>,
) -> Option<DeclaredFilter> {
    let any = f.dm_inductance_uh.is_some()
        || f.x_capacitance_uf.is_some()
        || f.cm_inductance_mh.is_some()
        || f.y_capacitance_nf.is_some()
        || f.damping.is_some();
    if !any {
        return None;
    }
    let (mut dm_corner_hz, mut r0) = (None, None);
    if let (Some(l), Some(c)) = (f.dm_inductance_uh, f.x_capacitance_uf)
        && !(finite(lc_corner_hz(l * 1e-6, c * 1e-6))
            && finite(characteristic_impedance_ohm(l * 1e-6, c * 1e-6)))
    {
        steps.push(Step::new(
            None,
            format!(
                "Declared differential-mode corner not computed: {} uH with {} uF gives no finite corner or R0.",
                show(l),
                show(c)
            ),
        ));
    } else if let (Some(l), Some(c)) = (f.dm_inductance_uh, f.x_capacitance_uf) {
        let fc = lc_corner_hz(l * 1e-6, c * 1e-6);
        let z = characteristic_impedance_ohm(l * 1e-6, c * 1e-6);
        steps.push(Step::new(
            None,
            format!(
                "Declared differential-mode corner: f0 = 1 / (2 pi sqrt(L C)) = 1 / (2 pi sqrt({} uH x {} uF)) = {} Hz; R0 = sqrt(L / C) = {} ohm.",
                show(l),
                show(c),
                show(hz_round(fc)),
                show(round_to(z, 0.001))
            ),
        ));
        // Exact: the check compares it with the required corner (itself rounded down, to
        // the stricter side); rounding this one could put it on that corner from above.
        dm_corner_hz = Some(fc);
        r0 = Some(z);
    }
    let (mut ratio, mut optimum) = (None, None);
    if let (Some((_, cd)), Some(c), Some(z)) = (f.damping, f.x_capacitance_uf, r0)
        && !(finite(cd / c)
            && finite(optimum_parallel_damping(z, cd / c).0)
            && finite(optimum_parallel_damping(z, cd / c).1))
    {
        steps.push(Step::new(
            None,
            format!(
                "Declared damping ratio not computed: Cd = {} uF over C = {} uF gives no finite ratio or optimum Rd.",
                show(cd),
                show(c)
            ),
        ));
    } else if let (Some((_, cd)), Some(c), Some(z)) = (f.damping, f.x_capacitance_uf, r0) {
        let n = cd / c;
        let (rd, peak) = optimum_parallel_damping(z, n);
        steps.push(Step::new(
            None,
            format!(
                "Declared damping ratio n = Cd / C = {} / {} = {}; the optimum Rd for it is R0 sqrt((2+n)(4+3n) / (2 n^2 (4+n))) = {} ohm, with a peak output impedance of R0 sqrt(2 (2+n)) / n = {} ohm (Erickson and Maksimovic, 2nd ed., ch. 10; from memory).",
                show(cd),
                show(c),
                show(n),
                show(round_to(rd, 0.001)),
                show(round_to(peak, 0.001))
            ),
        ));
        ratio = Some(tidy(n));
        optimum = Some(round_to(rd, 0.001));
    }
    // Unrounded: it is a divisor (a tiny Y capacitance would round to 0 nF).
    let cm_capacitance_nf = cm_capacitance_exact_nf.map(tidy);
    let mut cm_corner_hz = None;
    if let (Some(l), Some(c)) = (f.cm_inductance_mh, cm_capacitance_exact_nf)
        && !finite(lc_corner_hz(l * 1e-3, c * 1e-9))
    {
        steps.push(Step::new(
            None,
            format!(
                "Declared common-mode corner not computed: {} mH with {} nF gives no finite corner.",
                show(l),
                show(c)
            ),
        ));
    } else if let (Some(l), Some(c)) = (f.cm_inductance_mh, cm_capacitance_exact_nf) {
        let fc = lc_corner_hz(l * 1e-3, c * 1e-9);
        steps.push(Step::new(
            None,
            format!(
                "Declared common-mode corner: f0 = 1 / (2 pi sqrt(L C_cm)) = 1 / (2 pi sqrt({} mH x {} nF)) = {} Hz.",
                show(l),
                show(c),
                show(hz_round(fc))
            ),
        ));
        // Exact, as the differential-mode corner above.
        cm_corner_hz = Some(fc);
    }
    Some(DeclaredFilter {
        dm_inductance_uh: f.dm_inductance_uh,
        dm_inductor_resistance_ohm: f.dm_inductor_resistance_ohm,
        x_capacitance_uf: f.x_capacitance_uf,
        dm_corner_hz,
        dm_characteristic_impedance_ohm: r0.map(|z| round_to(z, 0.001)),
        damping_resistance_ohm: f.damping.map(|(rd, _)| rd),
        damping_capacitance_uf: f.damping.map(|(_, cd)| cd),
        damping_ratio: ratio,
        optimum_damping_resistance_ohm: optimum,
        cm_inductance_mh: f.cm_inductance_mh,
        cm_capacitance_nf,
        cm_corner_hz,
    })
}

/// Middlebrook's criterion for the declared stage, or for the proposed one (the declared X
/// capacitor with the inductance for the required corner).
pub fn middlebrook(
    c: &ConverterFigures,
    f: &super::FilterSpec,
    x_capacitance_uf: Option<f64>,
    proposed_inductance_uh: Option<f64>,
    margin_db: f64,
    steps: &mut Vec<Step>,
) -> Option<Middlebrook> {
    let (which, l_uh, r_l, c_uf, damping) = match (f.dm_inductance_uh, f.x_capacitance_uf) {
        (Some(l), Some(cx)) => (
            "declared",
            l,
            f.dm_inductor_resistance_ohm.unwrap_or(0.0),
            cx,
            f.damping,
        ),
        (None, _) => (
            "proposed",
            proposed_inductance_uh?,
            0.0,
            x_capacitance_uf?,
            None,
        ),
        _ => return None,
    };
    let valid = [c.output_w, c.efficiency, c.bulk_v, l_uh, c_uf]
        .iter()
        .all(|v| v.is_finite() && *v > 0.0);
    if !valid {
        return None;
    }
    let stage = Stage {
        inductance_h: l_uh * 1e-6,
        inductor_resistance_ohm: r_l,
        capacitance_f: c_uf * 1e-6,
        damping: damping.map(|(rd, cd)| (rd, cd * 1e-6)),
    };
    let r0 = characteristic_impedance_ohm(stage.inductance_h, stage.capacitance_f);
    let f0 = lc_corner_hz(stage.inductance_h, stage.capacitance_f);
    let input_power_w = c.output_w / c.efficiency;
    let z_in = c.bulk_v * c.bulk_v / input_power_w;
    let allowed = z_in / 10f64.powf(margin_db / 20.0);
    if ![r0, f0, input_power_w, z_in, allowed]
        .into_iter()
        .all(finite)
        || allowed <= 0.0
    {
        steps.push(Step::new(
            None,
            format!(
                "Filter stability against the converter not checked: the {which} stage ({} uH, {} uF) and the converter figures give no finite corner, R0 or converter input impedance.",
                show(l_uh),
                show(c_uf)
            ),
        ));
        return None;
    }
    steps.push(Step::new(
        None,
        format!(
            "Converter input impedance at the lowest line voltage (behind its PFC stage): |Z_in| = V^2 / P = {}^2 / ({} / {}) = {} ohm (a constant-power load looks like -V^2/P; Middlebrook's criterion asks the filter's output impedance to stay well below it).",
            show(c.bulk_v),
            show(c.output_w),
            show(c.efficiency),
            show(round_to(z_in, 0.001))
        ),
    ));
    steps.push(Step::new(
        None,
        format!(
            "Allowed peak of the filter's output impedance: {} ohm / 10^({} / 20) = {} ohm.",
            show(round_to(z_in, 0.001)),
            show(margin_db),
            show(round_to(allowed, 0.001))
        ),
    ));
    steps.push(Step::new(
        None,
        format!(
            "The {which} stage: L = {} uH{}, C = {} uF; f0 = {} Hz, R0 = sqrt(L / C) = {} ohm{}.",
            show(l_uh),
            if r_l > 0.0 {
                format!(" with {} ohm in series", show(r_l))
            } else {
                String::new()
            },
            show(c_uf),
            show(hz_round(f0)),
            show(round_to(r0, 0.001)),
            match damping {
                Some((rd, cd)) => format!(
                    ", damped by {} ohm in series with {} uF across C",
                    show(rd),
                    show(cd)
                ),
                None => ", undamped".to_string(),
            }
        ),
    ));
    let peak = peak_output_impedance(&stage);
    match peak {
        Some((z, at)) => steps.push(Step::new(
            None,
            format!(
                "Peak output impedance |(R_L + j w L) || 1/(j w C){}| found by a frequency sweep: {} ohm at {} Hz.",
                if damping.is_some() { " || (Rd + 1/(j w Cd))" } else { "" },
                show(round_to(z, 0.001)),
                show(hz_round(at))
            ),
        )),
        None => steps.push(Step::new(
            None,
            "Peak output impedance unbounded: a lossless, undamped LC stage resonates without limit at f0.",
        )),
    }
    let satisfied = peak.is_some_and(|(z, _)| z <= allowed);
    let proposed_damping = (!satisfied).then(|| {
        let n = ratio_for_peak(r0, allowed);
        let (rd, peak) = optimum_parallel_damping(r0, n);
        if ![n, n * c_uf, rd, peak].into_iter().all(finite) {
            steps.push(Step::new(
                None,
                format!(
                    "Parallel R-C damping not proposed: for an allowed peak of {} ohm against R0 = {} ohm the ratio n = Cd / C, Cd or Rd is not a finite figure.",
                    show(round_to(allowed, 0.001)),
                    show(round_to(r0, 0.001))
                ),
            ));
            return None;
        }
        steps.push(Step::new(
            None,
            format!(
                "Proposed parallel R-C damping: the smallest n = Cd / C whose optimum damping meets the allowed peak solves R0 sqrt(2 (2+n)) / n = {} ohm: n = {}; Cd = n C = {} uF; Rd = R0 sqrt((2+n)(4+3n) / (2 n^2 (4+n))) = {} ohm; peak {} ohm (Erickson and Maksimovic, Fundamentals of Power Electronics, 2nd ed., ch. 10; from memory).",
                show(round_to(allowed, 0.001)),
                show(round_to(n, 0.001)),
                show(round_up(n * c_uf, 0.001)),
                show(round_to(rd, 0.001)),
                show(round_to(peak, 0.001))
            ),
        ));
        Some(Damping {
            ratio: round_to(n, 0.001),
            capacitance_uf: round_up(n * c_uf, 0.001),
            resistance_ohm: round_to(rd, 0.001),
            peak_output_impedance_ohm: round_to(peak, 0.001),
        })
    }).flatten();
    Some(Middlebrook {
        filter: which,
        inductance_uh: l_uh,
        capacitance_uf: c_uf,
        corner_hz: hz_round(f0),
        characteristic_impedance_ohm: round_to(r0, 0.001),
        bulk_v: c.bulk_v,
        input_power_w: tidy(input_power_w),
        converter_input_impedance_ohm: round_to(z_in, 0.001),
        margin_db,
        allowed_peak_ohm: round_to(allowed, 0.001),
        peak_output_impedance_ohm: peak.map(|(z, _)| round_to(z, 0.001)),
        peak_at_hz: peak.map(|(_, at)| hz_round(at)),
        satisfied,
        proposed_damping,
    })
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::emc::limits::limit_dbuv;

    /// `binding_limit` writes the step of the detector it keeps only; it gives what reading
    /// every detector's limit with its step and keeping the lowest (the first of equals)
    /// gives, refusals included: both classes, every set of detectors, frequencies across
    /// and beyond the band and on its transitions.
    #[test]
    fn binding_limit_is_the_lowest_detectors_limit_with_its_step() {
        let rules = RuleBook::load(None).expect("the shipped rules load");
        let table = rules.table::<LimitTable>();
        let mut frequencies = vec![
            0.0,
            -1.0,
            f64::NAN,
            f64::INFINITY,
            149_999.999,
            30.000_001e6,
        ];
        for s in table.line.iter().flat_map(|l| &l.segments) {
            frequencies.extend([s.from_hz, s.to_hz, s.from_hz.next_up(), s.to_hz.next_down()]);
        }
        for k in 0..2_000 {
            frequencies.push(140e3 * (31e6f64 / 140e3).powf(f64::from(k) / 2_000.0));
        }
        let (mut compared, mut refused) = (0, 0);
        for class in [LimitClass::A, LimitClass::B] {
            for detectors in [
                &[Detector::QuasiPeak, Detector::Average][..],
                &[Detector::Average, Detector::QuasiPeak],
                &[Detector::QuasiPeak],
                &[Detector::Average],
                &[],
            ] {
                for &f in &frequencies {
                    let mut expected: Result<Option<(Detector, f64, Step)>, OutOfBand> = Ok(None);
                    for &d in detectors {
                        match limit_dbuv(table, class, d, f) {
                            Ok((value, step)) => {
                                if let Ok(best) = &mut expected
                                    && best.as_ref().is_none_or(|b| value < b.1)
                                {
                                    *best = Some((d, value, step));
                                }
                            }
                            Err(e) => {
                                expected = Err(e);
                                break;
                            }
                        }
                    }
                    let expected = expected.and_then(|best| {
                        best.ok_or_else(|| OutOfBand {
                            message: "no detector to compare with".to_string(),
                        })
                    });
                    let got = binding_limit(&rules, class, detectors, f);
                    match (&got, &expected) {
                        (Ok((d, v, s)), Ok((ed, ev, es))) => {
                            assert_eq!((d, v.to_bits(), s), (ed, ev.to_bits(), es), "{f} Hz");
                            compared += 1;
                        }
                        (Err(e), Err(ee)) => {
                            assert_eq!(e, ee, "{f} Hz");
                            refused += 1;
                        }
                        _ => panic!("{f} Hz: {got:?} against {expected:?}"),
                    }
                }
            }
        }
        assert!(
            compared > 10_000 && refused > 50,
            "{compared} compared, {refused} refused"
        );
    }
}
