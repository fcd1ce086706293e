//! Inrush through the input filter's differential-mode inductance: switching on at the
//! crest charges the bulk capacitor through a series L-R path, an L-R-C circuit whose
//! current peaks near V / sqrt(L / C) and whose capacitor rings above the mains peak (the
//! bridge stops the current from reversing, so the capacitor keeps its highest voltage).
//!
//! Model: source `u(t) = V_pk |cos(2 pi f t)|` (switch-on at the crest), inductance L and
//! resistance R in series, ideal bridge, bulk capacitor C from `v0`, no load (the
//! converter has not started, which also maximises the capacitor's peak):
//! `L di/dt = u - v - R i`, `C dv/dt = i` while the bridge conducts (`i > 0`, or `i = 0`
//! and `u > v`); otherwise `i = 0` and `v` holds.
//!
//! [`switch_on`], which the report uses, solves it exactly: piece by piece, each piece a
//! linear series R-L-C driven by a sinusoid (`super::series_rlc`). [`simulate`] steps it:
//! classic fourth-order Runge-Kutta on a fixed step, halved until the peak current, the
//! capacitor's peak and the I²t agree within 1e-5 between two steps; while the bridge
//! blocks, the run jumps (closed form, `acos`) to a few grid points before the source
//! rises above the capacitor again, so the figures are those of testing every grid point
//! at a fraction of the cost. It answers where the closed form does not apply (a source
//! at the circuit's own resonance with almost no resistance). Every loop is bounded.

use serde::Serialize;

use super::series_rlc::{Piece, State};

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
    /// Solved in closed form ([`switch_on`]) rather than stepped ([`simulate`]); `step_s`
    /// is then the longest interval between two samples of the exact solution.
    pub closed_form: bool,
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

/// The switch-on solved exactly: between the instants where the rectified source changes
/// sign (the zeros of `cos`) and where the bridge stops the current, the circuit is a
/// linear series R-L-C driven by `+-V_pk cos(omega t)`, whose response is known in closed
/// form ([`super::series_rlc::Piece`], textbook series RLC step/sinusoid response). The
/// current's peak, its end and the capacitor's highest voltage are located on that exact
/// solution (sampled finely enough that no extremum or zero can hide between two samples,
/// then bisected to rounding), and the I²t integrated by three-point Gauss-Legendre
/// between the samples: no step size to converge. Where the closed form does not apply
/// (a source at the circuit's own resonance with almost no resistance) or its bounds are
/// reached, the stepping simulation [`simulate`] answers instead. `None` when the circuit
/// cannot be used.
pub fn switch_on(c: &LrcCircuit) -> Option<LrcInrush> {
    if !c.usable() {
        return None;
    }
    exact(c).or_else(|| simulate(c))
}

/// Samples per unit of the fastest time constant in a piece (1 / rate): at this density a
/// sum of the circuit's few exponentials and sinusoids cannot turn twice between two
/// samples, and three-point Gauss-Legendre integrates i² to about 1e-11 of a step's share.
const SAMPLES_PER_TIME_CONSTANT: f64 = 12.0;
/// The most pieces (source half-waves, conduction pulses, reopenings) of one switch-on.
const MAX_PIECES: usize = 64;
/// The most samples of the exact solution in one switch-on.
const MAX_SAMPLES: usize = 200_000;
/// Bisections to place an event (beyond about 60 the interval no longer shrinks).
const BISECTIONS: usize = 80;
/// Halvings of the first sample after the bridge reopens, to see the current start.
const FIRST_SAMPLE_HALVINGS: usize = 40;

/// How one piece ended.
enum PieceEnd {
    /// The current fell to zero at `at`; the bridge blocks with the capacitor at `v`.
    Stopped { at: f64, v: f64 },
    /// The piece reached its end (a zero of the source or the end of the window) still
    /// conducting.
    Reached { i: f64, v: f64 },
}

fn exact(c: &LrcCircuit) -> Option<LrcInrush> {
    let omega = 2.0 * std::f64::consts::PI * c.frequency_hz;
    let duration = HALF_CYCLES * 0.5 / c.frequency_hz;
    let mut out = LrcInrush {
        peak_a: 0.0,
        i2t_a2s: 0.0,
        bulk_peak_v: c.start_v,
        peak_at_s: 0.0,
        step_s: 0.0,
        converged: true,
        truncated: false,
        closed_form: true,
    };
    let (mut t, mut i, mut v) = (0.0f64, 0.0f64, c.start_v);
    // Switch-on at the crest: the bridge conducts at once unless the capacitor already
    // holds the crest.
    let mut conducting = c.peak_v > v;
    let mut samples = 0usize;
    for _ in 0..MAX_PIECES {
        if !conducting {
            // No load: the capacitor holds. At or above the crest nothing flows again.
            if v >= c.peak_v {
                return Some(out);
            }
            t = reopening(t, v / c.peak_v, omega);
            i = 0.0;
            conducting = true;
        }
        if t >= duration {
            return Some(out);
        }
        let kink = next_source_zero(t, omega);
        let end = kink.min(duration);
        let sign = if (omega * 0.5 * (t + end)).cos() >= 0.0 {
            1.0
        } else {
            -1.0
        };
        let piece = Piece::new(
            sign * c.peak_v,
            omega,
            c.inductance_h,
            c.resistance_ohm,
            c.capacitance_f,
            t,
            i,
            v,
        )?;
        match scan(&piece, t, end, i, &mut out, &mut samples)? {
            PieceEnd::Stopped { at, v: held } => {
                t = at;
                i = 0.0;
                v = held;
                conducting = false;
            }
            PieceEnd::Reached { i: i_end, v: v_end } => {
                t = end;
                i = i_end;
                v = v_end;
            }
        }
    }
    // Too many pieces for a switch-on: leave it to the stepping simulation.
    None
}

/// Follows one piece from `t0` to `end`, recording the current's peak, the I²t and the
/// capacitor's highest voltage in `out`.
fn scan(
    piece: &Piece,
    t0: f64,
    end: f64,
    i0: f64,
    out: &mut LrcInrush,
    samples: &mut usize,
) -> Option<PieceEnd> {
    let n = SAMPLES_PER_TIME_CONSTANT;
    let fastest = piece.fastest_rate();
    let persistent = piece.persistent_rate();
    let settled = piece.settled_after();
    let mut ta = t0;
    let mut a = piece.at(t0);
    let mut slope_a = piece.slope_v(&a);
    // Restarted from a blocked bridge: the first sample must see the current start.
    let mut fresh = i0 <= 0.0;
    loop {
        let tau = ta - t0;
        // Finely at first (the fast decay), coarser as it dies out, never coarser than the
        // rates that last (the ringing or slow decay, then the source alone).
        let lasting = if tau < settled {
            persistent
        } else {
            piece.omega()
        };
        let mut h = (tau.max(1.0 / fastest) / n).min(1.0 / (n * lasting));
        let (mut tb, mut b) = step_to(piece, ta, h, end, samples)?;
        if fresh {
            let mut halvings = 0;
            while b.i <= 0.0 && halvings < FIRST_SAMPLE_HALVINGS {
                h *= 0.5;
                (tb, b) = step_to(piece, ta, h, end, samples)?;
                halvings += 1;
            }
            if b.i <= 0.0 {
                // No current to speak of: the bridge stays blocked past this instant.
                return Some(PieceEnd::Stopped { at: tb, v: a.v });
            }
            fresh = false;
        }
        out.step_s = out.step_s.max(tb - ta);
        let slope_b = piece.slope_v(&b);
        // A dip between two samples that reaches zero stops the current there too.
        let mut stop_before = None;
        if b.i > 0.0 && slope_a < 0.0 && slope_b > 0.0 {
            let t_min = bisect(ta, tb, |t| piece.slope_v(&piece.at(t)) < 0.0);
            if piece.at(t_min).i <= 0.0 {
                stop_before = Some(t_min);
            }
        }
        if b.i <= 0.0 || stop_before.is_some() {
            let hi = stop_before.unwrap_or(tb);
            let tz = bisect(ta, hi, |t| piece.at(t).i > 0.0);
            if slope_a > 0.0 {
                record_peak(piece, ta, tz, out);
            }
            out.i2t_a2s += i_squared(piece, ta, tz);
            let z = piece.at(tz);
            out.bulk_peak_v = out.bulk_peak_v.max(z.v);
            return Some(PieceEnd::Stopped { at: tz, v: z.v });
        }
        if slope_a > 0.0 && slope_b <= 0.0 {
            record_peak(piece, ta, tb, out);
        }
        if b.i > out.peak_a {
            out.peak_a = b.i;
            out.peak_at_s = tb;
        }
        out.i2t_a2s += i_squared(piece, ta, tb);
        out.bulk_peak_v = out.bulk_peak_v.max(b.v);
        if tb >= end {
            return Some(PieceEnd::Reached { i: b.i, v: b.v });
        }
        ta = tb;
        a = b;
        slope_a = slope_b;
    }
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
        closed_form: false,
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

/// The sample `h` after `ta` (not past `end`), counted against [`MAX_SAMPLES`]; `None`
/// when the bound is reached or the solution is not finite.
fn step_to(piece: &Piece, ta: f64, h: f64, end: f64, samples: &mut usize) -> Option<(f64, State)> {
    *samples += 1;
    if *samples > MAX_SAMPLES {
        return None;
    }
    let tb = (ta + h).min(end);
    let b = piece.at(tb);
    (b.i.is_finite() && b.v.is_finite() && tb > ta).then_some((tb, b))
}

/// The instant in `[lo, hi]` where `holds` turns false (it holds at `lo`, not at `hi`), to
/// rounding.
fn bisect(mut lo: f64, mut hi: f64, holds: impl Fn(f64) -> bool) -> f64 {
    for _ in 0..BISECTIONS {
        let mid = 0.5 * (lo + hi);
        if mid <= lo || mid >= hi {
            break;
        }
        if holds(mid) {
            lo = mid;
        } else {
            hi = mid;
        }
    }
    hi
}

/// The current's maximum between `lo` (rising) and `hi` (falling), kept if the highest yet.
fn record_peak(piece: &Piece, lo: f64, hi: f64, out: &mut LrcInrush) {
    let t = bisect(lo, hi, |t| piece.slope_v(&piece.at(t)) > 0.0);
    let i = piece.at(t).i;
    if i > out.peak_a {
        out.peak_a = i;
        out.peak_at_s = t;
    }
}

/// The integral of i² over `[a, b]`: three-point Gauss-Legendre (exact for polynomials up
/// to the fifth degree; the samples are close enough for that to hold to rounding).
fn i_squared(piece: &Piece, a: f64, b: f64) -> f64 {
    let (mid, half) = (0.5 * (a + b), 0.5 * (b - a));
    let offset = half * (0.6f64).sqrt();
    let i2 = |t: f64| {
        let i = piece.at(t).i;
        i * i
    };
    half * (5.0 * i2(mid - offset) + 8.0 * i2(mid) + 5.0 * i2(mid + offset)) / 9.0
}

/// The first zero of `cos(omega t)` after `t`: where the rectified source changes sign.
fn next_source_zero(t: f64, omega: f64) -> f64 {
    use std::f64::consts::{FRAC_PI_2, PI};
    let k = ((omega * t - FRAC_PI_2) / PI).floor() + 1.0;
    let zero = (FRAC_PI_2 + k * PI) / omega;
    if zero > t {
        zero
    } else {
        (FRAC_PI_2 + (k + 1.0) * PI) / omega
    }
}

/// The instant, at or after `t`, at which the rectified source `|cos(omega t)|` rises
/// above `ratio` (the blocked capacitor's share of the crest) again.
fn reopening(t: f64, ratio: f64, omega: f64) -> f64 {
    use std::f64::consts::PI;
    let window = ratio.clamp(0.0, 1.0).acos();
    let phase = (omega * t).rem_euclid(PI);
    if phase < PI - window {
        t + (PI - window - phase) / omega
    } else {
        t
    }
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
