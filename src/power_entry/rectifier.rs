//! The capacitor-input rectifier in the time domain: an ideal full-wave bridge (with an
//! optional total forward drop), a series resistance, the bulk capacitor and a
//! constant-power load, run to its periodic steady state.
//!
//! Model, for one half-cycle of the mains (the bridge makes every half-cycle alike):
//! `u(t) = V_pk |sin(2 pi f t)| - V_d`; the bridge conducts while `u > v` and then
//! `C dv/dt = (u - v) / R - P / v`; otherwise `C dv/dt = -P / v`, whose exact solution
//! `v(t)^2 = v0^2 - 2 P t / C` is used. Conduction steps are implicit (backward Euler at the
//! start of a conduction interval, second-order BDF after it), so a charging path much
//! faster than the step (R C of microseconds) stays stable; each implicit step is a
//! quadratic in `v` solved in closed form.
//!
//! The steady state is the fixed point of the half-cycle map `v(0) -> v(T/2)` (starting
//! at a zero crossing of the mains, where the bridge is off), found by a secant search
//! kept inside a bracket, with a bounded number of half-cycles. Every loop is bounded.

use serde::Serialize;

/// Steps per half-cycle of the mains. With this step, halving it changes the input RMS
/// current by well under 0.5 % over the designs in `tests/power_entry.rs`.
pub const STEPS_PER_HALF_CYCLE: usize = 2000;

/// The most half-cycles simulated in the search for the steady state.
pub const MAX_HALF_CYCLES: usize = 80;

/// Steady state: the bulk voltage at the end of a half-cycle equals the voltage at its
/// start within this fraction of the source peak.
pub const STEADY_STATE_TOLERANCE: f64 = 1e-7;

/// Below this fraction of the source peak the constant-power load is taken to have
/// collapsed the bulk voltage (no steady state exists).
const COLLAPSE_FRACTION: f64 = 0.01;

/// Bisection steps used to place the start of conduction inside one step (for the valley).
const ONSET_BISECTIONS: usize = 50;

/// One operating point of the rectifier.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Rectifier {
    pub v_rms: f64,
    pub frequency_hz: f64,
    /// Total series resistance of the charging path, ohms (above 0).
    pub series_ohm: f64,
    pub capacitance_f: f64,
    /// Power the load draws from the bulk capacitor, watts (0 or more).
    pub load_w: f64,
    /// Total forward drop of the two conducting bridge diodes, volts.
    pub diode_drop_v: f64,
}

/// The periodic steady state of one operating point.
#[derive(Debug, Clone, Copy, PartialEq, Serialize)]
pub struct SteadyState {
    /// False when the load cannot be supplied: the bulk voltage collapses.
    pub sustained: bool,
    /// The half-cycle map reached its fixed point within the tolerance.
    pub converged: bool,
    pub half_cycles: usize,
    pub steps_per_half_cycle: usize,
    pub source_peak_v: f64,
    pub input_rms_a: f64,
    /// The peak of the current pulse that recurs every half-cycle.
    pub repetitive_peak_a: f64,
    /// Real power drawn from the mains (load, resistance and bridge losses).
    pub input_power_w: f64,
    pub power_factor: f64,
    pub bulk_valley_v: f64,
    pub bulk_peak_v: f64,
    pub bulk_ripple_v: f64,
    /// Conduction time per half-cycle.
    pub conduction_ms: f64,
}

/// Samples of one steady-state half-cycle at the step points (for independent checks).
#[derive(Debug, Clone, Default, PartialEq)]
pub struct Waveform {
    pub step_s: f64,
    /// Source voltage |u| (before the diode drop), bridge current and bulk voltage at
    /// t = 0, h, 2h, ..., T/2.
    pub source_v: Vec<f64>,
    pub current_a: Vec<f64>,
    pub bulk_v: Vec<f64>,
}

/// What one half-cycle did.
#[derive(Debug, Clone, Copy, Default)]
struct Tally {
    sum_i2: f64,
    sum_ui: f64,
    peak_i: f64,
    v_min: f64,
    v_max: f64,
    conducting_steps: usize,
}

struct Collapse;

impl Rectifier {
    pub fn source_peak_v(&self) -> f64 {
        std::f64::consts::SQRT_2 * self.v_rms
    }

    fn usable(&self) -> bool {
        [
            self.v_rms,
            self.frequency_hz,
            self.series_ohm,
            self.capacitance_f,
        ]
        .iter()
        .all(|x| x.is_finite() && *x > 0.0)
            && self.load_w.is_finite()
            && self.load_w >= 0.0
            && self.diode_drop_v.is_finite()
            && self.diode_drop_v >= 0.0
    }
}

/// The steady state with the standard step.
pub fn steady_state(r: &Rectifier) -> SteadyState {
    steady_state_with(r, STEPS_PER_HALF_CYCLE, None)
}

/// The steady state with `steps` per half-cycle (at least 16), and optionally the samples
/// of the final half-cycle.
pub fn steady_state_with(
    r: &Rectifier,
    steps: usize,
    waveform: Option<&mut Waveform>,
) -> SteadyState {
    let steps = steps.clamp(16, 1_000_000);
    let peak = r.source_peak_v();
    let unsustained = |half_cycles| SteadyState {
        sustained: false,
        converged: false,
        half_cycles,
        steps_per_half_cycle: steps,
        source_peak_v: peak,
        input_rms_a: f64::NAN,
        repetitive_peak_a: f64::NAN,
        input_power_w: f64::NAN,
        power_factor: f64::NAN,
        bulk_valley_v: 0.0,
        bulk_peak_v: f64::NAN,
        bulk_ripple_v: f64::NAN,
        conduction_ms: f64::NAN,
    };
    let top = peak - r.diode_drop_v;
    if !r.usable() || top <= 0.0 {
        return unsustained(0);
    }
    let sim = HalfCycle::new(r, steps);
    let (start, half_cycles, converged) = match sim.fixed_point(top) {
        Ok(found) => found,
        Err(n) => return unsustained(n),
    };
    let mut tally = Tally::default();
    let mut recorder = waveform;
    if let Some(w) = recorder.as_deref_mut() {
        *w = Waveform {
            step_s: sim.h,
            ..Waveform::default()
        };
    }
    if sim.run(start, Some(&mut tally), recorder).is_err() {
        return unsustained(half_cycles + 1);
    }
    let n = steps as f64;
    let input_rms_a = (tally.sum_i2 / n).sqrt();
    let input_power_w = tally.sum_ui / n;
    let apparent = r.v_rms * input_rms_a;
    SteadyState {
        sustained: true,
        converged,
        half_cycles: half_cycles + 1,
        steps_per_half_cycle: steps,
        source_peak_v: peak,
        input_rms_a,
        repetitive_peak_a: tally.peak_i,
        input_power_w,
        power_factor: if apparent > 0.0 {
            (input_power_w / apparent).min(1.0)
        } else {
            f64::NAN
        },
        bulk_valley_v: tally.v_min,
        bulk_peak_v: tally.v_max,
        bulk_ripple_v: tally.v_max - tally.v_min,
        conduction_ms: tally.conducting_steps as f64 * sim.h * 1e3,
    }
}

/// One half-cycle on a fixed grid, with the source precomputed.
struct HalfCycle {
    h: f64,
    omega: f64,
    peak: f64,
    drop: f64,
    r: f64,
    c: f64,
    p: f64,
    floor: f64,
    /// |u| at t = h, 2h, ..., T/2 (index n holds t = (n + 1) h).
    source: Vec<f64>,
}

impl HalfCycle {
    fn new(r: &Rectifier, steps: usize) -> Self {
        let half_period = 0.5 / r.frequency_hz;
        let h = half_period / steps as f64;
        let omega = 2.0 * std::f64::consts::PI * r.frequency_hz;
        let peak = r.source_peak_v();
        let source = (1..=steps)
            .map(|n| peak * (omega * n as f64 * h).sin().abs())
            .collect();
        HalfCycle {
            h,
            omega,
            peak,
            drop: r.diode_drop_v,
            r: r.series_ohm,
            c: r.capacitance_f,
            p: r.load_w,
            floor: COLLAPSE_FRACTION * peak,
            source,
        }
    }

    /// The bulk voltage after the load alone has drawn from it for `dt`.
    fn discharged(&self, v: f64, dt: f64) -> Result<f64, Collapse> {
        let square = v * v - 2.0 * self.p * dt / self.c;
        if square <= self.floor * self.floor {
            return Err(Collapse);
        }
        Ok(square.sqrt())
    }

    /// One half-cycle from `v0` at a zero crossing; returns the voltage at the next one.
    fn run(
        &self,
        v0: f64,
        mut tally: Option<&mut Tally>,
        mut wave: Option<&mut Waveform>,
    ) -> Result<f64, Collapse> {
        let (h, rr, c, p) = (self.h, self.r, self.c, self.p);
        if let Some(t) = tally.as_deref_mut() {
            *t = Tally {
                v_min: v0,
                v_max: v0,
                ..Tally::default()
            };
        }
        if let Some(w) = wave.as_deref_mut() {
            w.source_v.push(0.0);
            w.current_a.push(0.0);
            w.bulk_v.push(v0);
        }
        let mut v_prev = v0;
        let mut v = v0;
        let mut conducting = false;
        for (n, &source) in self.source.iter().enumerate() {
            let u = source - self.drop;
            let v_off = self.discharged(v, h)?;
            let (v_next, i) = if u > v_off {
                // Implicit step: a v_{n+1} = A + k ((u - v)/R - P/v), a quadratic in v.
                let (a, b, beta) = if conducting {
                    (4.0 / 3.0, 1.0 / 3.0, 2.0 / 3.0)
                } else {
                    (1.0, 0.0, 1.0)
                };
                let k = beta * h / c;
                let big_a = a * v - b * v_prev;
                let qa = 1.0 + k / rr;
                let qb = big_a + k * u / rr;
                let disc = qb * qb - 4.0 * qa * k * p;
                if disc < 0.0 {
                    return Err(Collapse);
                }
                let v_next = (qb + disc.sqrt()) / (2.0 * qa);
                if !conducting && let Some(t) = tally.as_deref_mut() {
                    let onset = self.onset_voltage(v, n);
                    t.v_min = t.v_min.min(onset);
                }
                conducting = true;
                (v_next, ((u - v_next) / rr).max(0.0))
            } else {
                conducting = false;
                (v_off, 0.0)
            };
            if !(v_next.is_finite() && v_next > self.floor) {
                return Err(Collapse);
            }
            if let Some(t) = tally.as_deref_mut() {
                t.sum_i2 += i * i;
                t.sum_ui += source * i;
                t.peak_i = t.peak_i.max(i);
                t.v_min = t.v_min.min(v_next);
                t.v_max = t.v_max.max(v_next);
                if i > 0.0 {
                    t.conducting_steps += 1;
                }
            }
            if let Some(w) = wave.as_deref_mut() {
                w.source_v.push(source);
                w.current_a.push(i);
                w.bulk_v.push(v_next);
            }
            v_prev = v;
            v = v_next;
        }
        Ok(v)
    }

    /// The bulk voltage at the instant conduction starts inside step `n` (from `v_n` at
    /// t_n, discharging exactly until the source reaches it): the true valley.
    fn onset_voltage(&self, v_n: f64, n: usize) -> f64 {
        let t_n = n as f64 * self.h;
        let gap = |dt: f64| -> f64 {
            let u = self.peak * (self.omega * (t_n + dt)).sin().abs() - self.drop;
            let square = v_n * v_n - 2.0 * self.p * dt / self.c;
            u - square.max(0.0).sqrt()
        };
        let (mut lo, mut hi) = (0.0, self.h);
        if gap(lo) >= 0.0 {
            return v_n;
        }
        for _ in 0..ONSET_BISECTIONS {
            let mid = 0.5 * (lo + hi);
            if gap(mid) >= 0.0 {
                hi = mid;
            } else {
                lo = mid;
            }
        }
        (v_n * v_n - 2.0 * self.p * hi / self.c).max(0.0).sqrt()
    }

    /// The start voltage that repeats after one half-cycle: `(voltage, half-cycles run,
    /// converged)`, or `Err(half-cycles run)` when no start sustains the load.
    ///
    /// `g(v) = map(v) - v` falls with `v` and is zero at the steady state. Where the
    /// charging path is slow (R C much longer than a half-cycle) its slope is close to 0,
    /// so a small `g` can still be far from the fixed point: the test is on the secant's
    /// predicted correction `g / g'` as well as on `g`.
    fn fixed_point(&self, top: f64) -> Result<(f64, usize, bool), usize> {
        let tolerance = STEADY_STATE_TOLERANCE * self.peak;
        // The fixed point lies between `lower` (g > 0, or collapse) and `upper` (g < 0).
        let mut upper = top;
        let mut lower = self.floor;
        let mut last: Option<(f64, f64)> = None;
        let mut v = top;
        for runs in 1..=MAX_HALF_CYCLES {
            let g = match self.run(v, None, None) {
                Ok(end) => end - v,
                Err(Collapse) => {
                    // From the highest possible start the load collapses: no steady state.
                    if v >= top {
                        return Err(runs);
                    }
                    lower = v;
                    last = None;
                    v = 0.5 * (lower + upper);
                    continue;
                }
            };
            if g == 0.0 {
                return Ok((v, runs, true));
            }
            if g < 0.0 {
                upper = upper.min(v);
            } else {
                lower = lower.max(v);
            }
            let slope = last.and_then(|(v1, g1)| {
                let s = (g - g1) / (v - v1);
                (s.is_finite() && s < 0.0).then_some(s)
            });
            if let Some(s) = slope
                && g.abs() <= tolerance
                && (g / s).abs() <= tolerance
            {
                return Ok((v, runs, true));
            }
            if upper - lower <= tolerance {
                return Ok((0.5 * (lower + upper), runs, true));
            }
            last = Some((v, g));
            // Secant (or, without a slope yet, the plain map, which from above stays
            // above the fixed point); bisection when the step leaves the bracket.
            let inside = |x: f64| x.is_finite() && x > lower && x < upper;
            let next = slope.map_or(v + g, |s| v - g / s);
            v = if inside(next) {
                next
            } else if inside(v + g) {
                v + g
            } else {
                0.5 * (lower + upper)
            };
        }
        Ok((v, MAX_HALF_CYCLES, false))
    }
}
