//! Inrush through the input filter's differential-mode inductance: switching on at the
//! crest charges the bulk capacitor through a series L-R path, an L-R-C circuit whose
//! current peaks near V / sqrt(L / C) and whose capacitor rings above the mains peak (the
//! bridge stops the current from reversing, so the capacitor keeps its highest voltage).
//!
//! Model: source `u(t) = V_pk |cos(2 pi f t)|` (switch-on at the crest), inductance L and
//! resistance R in series, ideal bridge, bulk capacitor C from `v0`, no load (the
//! converter has not started, which also maximises the capacitor's peak):
//! `L di/dt = u - v - R i`, `C dv/dt = i` while the bridge conducts (`i > 0`, or `i = 0`
//! and `u > v`); otherwise `i = 0` and `v` holds. Classic fourth-order Runge-Kutta on a
//! fixed step, halved until the peak current, the capacitor's peak and the I²t agree
//! within 1e-5 between two steps. While the bridge blocks, the run jumps (closed form,
//! `acos`) to a few grid points before the source rises above the capacitor again, so the
//! figures are those of testing every grid point at a fraction of the cost. Every loop
//! is bounded.

use serde::Serialize;

/// Agreement between two step sizes at which the result is accepted (relative).
pub const STEP_TOLERANCE: f64 = 1e-5;
/// The first step is this fraction of the fastest time constant of the circuit.
const STEPS_PER_TIME_CONSTANT: f64 = 200.0;
/// The most halvings of the step.
const MAX_HALVINGS: usize = 6;
/// The most steps of one run (the run stops earlier once the capacitor holds the crest).
const MAX_STEPS: usize = 4_000_000;
/// Half-cycles of the mains simulated from the crest (the first pulse and the next crest).
const HALF_CYCLES: f64 = 2.0;

/// One switch-on through an L-R path into the bulk capacitor.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct LrcCircuit {
    pub peak_v: f64,
    pub frequency_hz: f64,
    pub inductance_h: f64,
    pub resistance_ohm: f64,
    pub capacitance_f: f64,
    /// The bulk capacitor's voltage at switch-on.
    pub start_v: f64,
}

/// What the switch-on did.
#[derive(Debug, Clone, Copy, PartialEq, Serialize)]
pub struct LrcInrush {
    pub peak_a: f64,
    pub i2t_a2s: f64,
    /// The bulk capacitor's highest voltage.
    pub bulk_peak_v: f64,
    /// When the current peaked, after switch-on.
    pub peak_at_s: f64,
    pub step_s: f64,
    /// The step halvings agreed within [`STEP_TOLERANCE`].
    pub converged: bool,
    /// The run reached its bound of steps before the pulse had ended.
    #[serde(skip)]
    pub truncated: bool,
}

impl LrcCircuit {
    fn usable(&self) -> bool {
        [
            self.peak_v,
            self.frequency_hz,
            self.inductance_h,
            self.capacitance_f,
        ]
        .iter()
        .all(|x| x.is_finite() && *x > 0.0)
            && self.resistance_ohm.is_finite()
            && self.resistance_ohm >= 0.0
            && self.start_v.is_finite()
            && self.start_v >= 0.0
    }

    /// Characteristic impedance sqrt(L / C).
    pub fn characteristic_impedance_ohm(&self) -> f64 {
        (self.inductance_h / self.capacitance_f).sqrt()
    }

    /// Damping ratio R / (2 sqrt(L / C)).
    pub fn damping_ratio(&self) -> f64 {
        self.resistance_ohm / (2.0 * self.characteristic_impedance_ohm())
    }
}

/// Simulates the switch-on; `None` when the circuit cannot be used (a figure not finite
/// or not above 0).
pub fn simulate(c: &LrcCircuit) -> Option<LrcInrush> {
    if !c.usable() {
        return None;
    }
    let resonance = 2.0 * std::f64::consts::PI * (c.inductance_h * c.capacitance_f).sqrt();
    let mut fastest = resonance.min(0.5 / c.frequency_hz);
    if c.resistance_ohm > 0.0 {
        fastest = fastest
            .min(c.inductance_h / c.resistance_ohm)
            .min(c.resistance_ohm * c.capacitance_f);
    }
    let duration = HALF_CYCLES * 0.5 / c.frequency_hz;
    let mut h = fastest / STEPS_PER_TIME_CONSTANT;
    if !(h.is_finite() && h > 0.0) {
        return None;
    }
    let mut previous = run(c, h, duration)?;
    for _ in 0..MAX_HALVINGS {
        if previous.truncated {
            // The step bound stopped the run before the pulse ended: not converged.
            return Some(previous);
        }
        h /= 2.0;
        let next = run(c, h, duration)?;
        let agree = |a: f64, b: f64| (a - b).abs() <= STEP_TOLERANCE * a.abs().max(b.abs());
        if agree(next.peak_a, previous.peak_a)
            && agree(next.bulk_peak_v, previous.bulk_peak_v)
            && agree(next.i2t_a2s, previous.i2t_a2s)
        {
            return Some(LrcInrush {
                converged: true,
                ..next
            });
        }
        previous = next;
    }
    Some(previous)
}

fn run(c: &LrcCircuit, h: f64, duration: f64) -> Option<LrcInrush> {
    let omega = 2.0 * std::f64::consts::PI * c.frequency_hz;
    let (l, r, cap) = (c.inductance_h, c.resistance_ohm, c.capacitance_f);
    let source = |t: f64| c.peak_v * (omega * t).cos().abs();
    // The derivative takes the source's value: the stage at t reuses the bridge test's,
    // the two midpoint stages share one (3 cosines per step instead of 5, same figures).
    let derivative = |u: f64, i: f64, v: f64| ((u - v - r * i) / l, i / cap);
    let steps = (duration / h).ceil();
    if !steps.is_finite() {
        return None;
    }
    let steps = (steps as usize).min(MAX_STEPS);
    let truncated = steps == MAX_STEPS;
    let (mut i, mut v) = (0.0f64, c.start_v);
    let mut out = LrcInrush {
        peak_a: 0.0,
        i2t_a2s: 0.0,
        bulk_peak_v: v,
        peak_at_s: 0.0,
        step_s: h,
        converged: false,
        truncated: false,
    };
    let mut n = 0usize;
    while n < steps {
        let t = n as f64 * h;
        let u_start = source(t);
        if i <= 0.0 && u_start <= v {
            // The bridge blocks: nothing flows, the capacitor holds (no load). At or above
            // the crest nothing can flow again: the event is over.
            i = 0.0;
            if v >= c.peak_v {
                return Some(out);
            }
            // Skip the blocked grid points in one go: they change nothing, so landing a
            // little before the first grid point that conducts again and testing from
            // there gives the same figures as testing each one.
            n = next_unblocked_step(n, h, omega, v / c.peak_v, steps);
            continue;
        }
        let u_mid = source(t + h / 2.0);
        let (k1i, k1v) = derivative(u_start, i, v);
        let (k2i, k2v) = derivative(u_mid, i + h / 2.0 * k1i, v + h / 2.0 * k1v);
        let (k3i, k3v) = derivative(u_mid, i + h / 2.0 * k2i, v + h / 2.0 * k2v);
        let (k4i, k4v) = derivative(source(t + h), i + h * k3i, v + h * k3v);
        let mut i_next = i + h / 6.0 * (k1i + 2.0 * k2i + 2.0 * k3i + k4i);
        let mut v_next = v + h / 6.0 * (k1v + 2.0 * k2v + 2.0 * k3v + k4v);
        let mut dt = h;
        if i_next < 0.0 {
            // The current reaches zero inside the step: the bridge stops it there. Linear
            // interpolation places the instant; the charge that flowed decides v.
            let fraction = if i > i_next { i / (i - i_next) } else { 0.0 };
            dt = h * fraction;
            v_next = v + (v_next - v) * fraction;
            i_next = 0.0;
        }
        // Trapezoidal I²t over the interval that conducted.
        out.i2t_a2s += 0.5 * (i * i + i_next * i_next) * dt;
        i = i_next;
        v = v_next;
        if !(i.is_finite() && v.is_finite()) {
            return None;
        }
        if i > out.peak_a {
            out.peak_a = i;
            out.peak_at_s = t + dt;
        }
        out.bulk_peak_v = out.bulk_peak_v.max(v);
        n += 1;
    }
    out.truncated = truncated;
    Some(out)
}

/// The grid step at which to resume testing after step `n` found the bridge blocked with
/// the capacitor at `ratio` of the crest: a few steps (and a margin for the rounding of
/// `acos` near the crest) before the instant `|cos(omega t)|` rises above `ratio` again,
/// never before `n + 1` and never past `steps`. Landing early only costs a few more
/// blocked tests; landing late would skip conduction, hence the generous margin.
fn next_unblocked_step(n: usize, h: f64, omega: f64, ratio: f64, steps: usize) -> usize {
    use std::f64::consts::PI;
    let next = n.saturating_add(1);
    let ratio = ratio.clamp(0.0, 1.0);
    let t = n as f64 * h;
    // |cos| repeats every pi of phase; within one period it exceeds `ratio` before
    // acos(ratio) and after pi - acos(ratio).
    let phase = (omega * t).rem_euclid(PI);
    let window = ratio.acos();
    if phase <= window + 1e-6 {
        // Rounding put a blocked grid point inside (or at the edge of) the window after the
        // crest: step on rather than skip what may remain of that window.
        return next;
    }
    let reopen_phase = PI - window;
    // Rounding of acos near 1 is about sqrt(machine epsilon) ~ 1.5e-8 rad; 1e-6 rad and
    // four steps of margin are far beyond it and beyond the rounding of t and omega t.
    let wait = (reopen_phase - phase - 1e-6) / omega;
    if !(wait.is_finite() && wait > 0.0) {
        return next;
    }
    let resume = t + wait;
    let k = (resume / h).floor() - 4.0;
    if !(k.is_finite() && k > next as f64) {
        return next;
    }
    if k >= steps as f64 {
        return steps;
    }
    (k as usize).clamp(next, steps)
}
