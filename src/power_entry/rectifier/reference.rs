//! The rectifier's steady state as it was computed before its fast paths (a private copy
//! for the tests): every figure of the fast implementation must equal this one to the bit.

use super::{
    ENERGY_TOLERANCE, MAX_HALF_CYCLES, MAX_STEPS_PER_HALF_CYCLE, Rectifier, STEADY_STATE_TOLERANCE,
    STEPS_PER_HALF_CYCLE, SteadyState, Waveform,
};

const COLLAPSE_FRACTION: f64 = 0.01;
const WARM_PROBES: usize = 3;
const ONSET_BISECTIONS: usize = 50;

#[derive(Debug, Clone, Copy, Default)]
struct Tally {
    sum_i2: f64,
    sum_i: f64,
    sum_ui: f64,
    peak_i: f64,
    v_min: f64,
    v_max: f64,
    conducting_steps: usize,
}

struct Collapse;

/// The steady state with an adaptive step: from [`STEPS_PER_HALF_CYCLE`], the step is
/// halved until the energy balances within [`ENERGY_TOLERANCE`] of the input power and the
/// RMS current, repetitive peak and valley move by less than that fraction between the
/// last two steps (at most [`MAX_STEPS_PER_HALF_CYCLE`]; `step_converged` says whether it
/// got there).
///
/// Each finer step starts its search for the steady state from the coarser one's (one or
/// two half-cycles usually settle it) and reuses the coarser grid's source samples.
pub fn steady_state(r: &Rectifier) -> SteadyState {
    let mut steps = STEPS_PER_HALF_CYCLE;
    let (mut previous, mut warm) = solve(r, steps, None, None);
    let moved = |a: f64, b: f64| (a - b).abs() > ENERGY_TOLERANCE * a.abs().max(b.abs());
    loop {
        if !previous.sustained {
            return previous;
        }
        if steps * 2 > MAX_STEPS_PER_HALF_CYCLE {
            return SteadyState {
                step_converged: previous.energy_balance_error <= ENERGY_TOLERANCE,
                ..previous
            };
        }
        steps *= 2;
        let (next, next_warm) = solve(r, steps, None, warm.as_ref());
        warm = next_warm;
        if !next.sustained {
            return next;
        }
        let settled = next.energy_balance_error <= ENERGY_TOLERANCE
            && !moved(next.input_rms_a, previous.input_rms_a)
            && !moved(next.repetitive_peak_a, previous.repetitive_peak_a)
            && !moved(next.bulk_valley_v, previous.bulk_valley_v);
        if settled {
            return next;
        }
        previous = next;
    }
}

/// The steady state with `steps` per half-cycle (at least 16), and optionally the samples
/// of the final half-cycle.
pub fn steady_state_with(
    r: &Rectifier,
    steps: usize,
    waveform: Option<&mut Waveform>,
) -> SteadyState {
    solve(r, steps, waveform, None).0
}

/// What a solved step size hands to the next, finer one: its grid and steady-state start.
struct Warm {
    sim: HalfCycle,
    start_v: f64,
}

/// [`steady_state_with`], optionally warm-started from a coarser solution of the same
/// rectifier (`steps` twice its steps); also returns what the next finer step can start
/// from.
fn solve(
    r: &Rectifier,
    steps: usize,
    waveform: Option<&mut Waveform>,
    warm: Option<&Warm>,
) -> (SteadyState, Option<Warm>) {
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
        energy_balance_error: f64::NAN,
        step_converged: false,
    };
    let top = peak - r.diode_drop_v;
    if !r.usable() || top <= 0.0 {
        return (unsustained(0), None);
    }
    let sim = match warm {
        Some(w) if w.sim.source.len() * 2 == steps => HalfCycle::refined(&w.sim, r),
        _ => HalfCycle::new(r, steps),
    };
    let guess = warm.map(|w| w.start_v);
    let (start, mut half_cycles, converged, probed) = match sim.fixed_point(top, guess) {
        Ok(found) => found,
        Err(n) => return (unsustained(n), None),
    };
    let mut recorder = waveform;
    // The half-cycle from the accepted start has been run already (as the probe that
    // settled); run it again only for a start no probe ran from, or to record it.
    let tally = match probed {
        Some(t) if recorder.is_none() => Some(t),
        _ => {
            let mut tally = Tally::default();
            if let Some(w) = recorder.as_deref_mut() {
                *w = Waveform {
                    step_s: sim.h,
                    ..Waveform::default()
                };
            }
            half_cycles += 1;
            sim.run(start, Some(&mut tally), recorder)
                .is_ok()
                .then_some(tally)
        }
    };
    let Some(tally) = tally.filter(|t| !t.v_min.is_nan() && t.v_min > sim.floor) else {
        // A valley at the collapse floor is a collapsed bulk, not an operating point.
        return (unsustained(half_cycles), None);
    };
    let n = steps as f64;
    let input_rms_a = (tally.sum_i2 / n).sqrt();
    let input_power_w = tally.sum_ui / n;
    let apparent = r.v_rms * input_rms_a;
    let accounted =
        r.load_w + r.series_ohm * input_rms_a * input_rms_a + r.diode_drop_v * tally.sum_i / n;
    let energy_balance_error = if input_power_w > 0.0 {
        (input_power_w - accounted).abs() / input_power_w
    } else {
        0.0
    };
    let state = SteadyState {
        sustained: true,
        converged,
        half_cycles,
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
        energy_balance_error,
        step_converged: true,
    };
    (
        state,
        Some(Warm {
            sim,
            start_v: start,
        }),
    )
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
    /// The largest of `source` in each run of [`BLOCK`] samples (`source[BLOCK j..]`), so
    /// that a blocked stretch passes a run whose every sample stays below the bulk voltage
    /// without looking at each.
    block_max: Vec<f64>,
}

/// Samples per entry of `HalfCycle::block_max`.
const BLOCK: usize = 32;

fn block_maxima(source: &[f64]) -> Vec<f64> {
    source
        .chunks(BLOCK)
        .map(|run| run.iter().copied().fold(f64::NEG_INFINITY, f64::max))
        .collect()
}

impl HalfCycle {
    /// The grid of `coarse` (the same rectifier) with twice the steps: every other sample
    /// is the coarse one (the same instant to the last bit: `h` halves exactly).
    fn refined(coarse: &HalfCycle, r: &Rectifier) -> Self {
        let steps = coarse.source.len() * 2;
        let half_period = 0.5 / r.frequency_hz;
        let h = half_period / steps as f64;
        let (omega, peak) = (coarse.omega, coarse.peak);
        let between = rectified_sine(peak, omega, h, 1, 2, coarse.source.len());
        let mut source = Vec::with_capacity(steps);
        for (&new, &old) in between.iter().zip(&coarse.source) {
            source.push(new);
            source.push(old);
        }
        HalfCycle {
            h,
            block_max: block_maxima(&source),
            source,
            ..*coarse
        }
    }

    fn new(r: &Rectifier, steps: usize) -> Self {
        let half_period = 0.5 / r.frequency_hz;
        let h = half_period / steps as f64;
        let omega = 2.0 * std::f64::consts::PI * r.frequency_hz;
        let peak = r.source_peak_v();
        let source = rectified_sine(peak, omega, h, 1, 1, steps);
        HalfCycle {
            h,
            omega,
            peak,
            drop: r.diode_drop_v,
            r: r.series_ohm,
            c: r.capacitance_f,
            p: r.load_w,
            floor: COLLAPSE_FRACTION * peak,
            block_max: block_maxima(&source),
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

    /// One half-cycle from `v0` at a zero crossing; returns the voltage at the next one and
    /// its derivative with respect to `v0` (the slope of the discrete half-cycle map).
    fn run(
        &self,
        v0: f64,
        mut tally: Option<&mut Tally>,
        mut wave: Option<&mut Waveform>,
    ) -> Result<(f64, f64), Collapse> {
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
        let mut dv_prev = 1.0;
        let mut dv = 1.0;
        let mut conducting = false;
        let steps = self.source.len();
        let mut n = 0;
        while n < steps {
            let source = self.source[n];
            let u = source - self.drop;
            let v_off = self.discharged(v, h)?;
            if u <= v_off && wave.is_none() {
                // A blocked stretch, most of a half-cycle, in closed form: the load alone
                // discharges, `v_{n+m}^2 = v_n^2 - 2 P m h / C`, and the slope of the map
                // telescopes to `dv_n v_n / v_{n+m}`. The stretch ends at the first step
                // whose source exceeds the voltage it would discharge to (compared
                // squared: no root per step). Nothing flows, so the sums and the peak stay;
                // v only falls, so of the tally only the valley moves, to its last voltage.
                if !(v_off.is_finite() && v_off > self.floor) {
                    return Err(Collapse);
                }
                let (v_start, dv_start) = (v, dv);
                let (start_square, per_step) = (v * v, 2.0 * p * h / c);
                let floor_square = self.floor * self.floor;
                let square_after = |m: usize| start_square - per_step * m as f64;
                let mut m = 1;
                while n + m < steps {
                    // A whole run of samples at once where none can end the stretch: the
                    // voltage falls through the run, so its last square is the least, and
                    // if that is above the floor and no sample's square exceeds it, the
                    // steps below would find nothing there (the same comparisons, bounded).
                    let at = n + m;
                    if at % BLOCK == 0 && at + BLOCK <= steps {
                        let last_square = square_after(m + BLOCK);
                        let top = self.block_max[at / BLOCK] - self.drop;
                        if last_square > floor_square && (top <= 0.0 || top * top <= last_square) {
                            m += BLOCK;
                            continue;
                        }
                    }
                    let next_square = square_after(m + 1);
                    if next_square <= floor_square {
                        return Err(Collapse);
                    }
                    let u = self.source[n + m] - self.drop;
                    if u > 0.0 && u * u > next_square {
                        break;
                    }
                    m += 1;
                }
                v_prev = if m == 1 {
                    v
                } else {
                    square_after(m - 1).sqrt()
                };
                v = if m == 1 {
                    v_off
                } else {
                    square_after(m).sqrt()
                };
                dv_prev = dv_start * v_start / v_prev;
                dv = dv_start * v_start / v;
                n += m;
                conducting = false;
                if let Some(t) = tally.as_deref_mut() {
                    t.v_min = t.v_min.min(v);
                }
                continue;
            }
            let (v_next, i, dv_next) = if u > v_off {
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
                let root = disc.sqrt();
                let v_next = (qb + root) / (2.0 * qa);
                let dv_next = (1.0 + qb / root) / (2.0 * qa) * (a * dv - b * dv_prev);
                if !conducting && let Some(t) = tally.as_deref_mut() {
                    let onset = self.onset_voltage(v, n);
                    t.v_min = t.v_min.min(onset);
                }
                conducting = true;
                (v_next, ((u - v_next) / rr).max(0.0), dv_next)
            } else {
                conducting = false;
                (v_off, 0.0, v / v_off * dv)
            };
            if !(v_next.is_finite() && v_next > self.floor) {
                return Err(Collapse);
            }
            if let Some(t) = tally.as_deref_mut() {
                t.sum_i2 += i * i;
                t.sum_i += i;
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
            dv_prev = dv;
            dv = dv_next;
            n += 1;
        }
        Ok((v, dv))
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

    /// `g(v) = map(v) - v` and its slope at one start voltage, or `None` on collapse.
    /// The half-cycle's tally comes with it: if this start is accepted, its run need not
    /// be repeated.
    fn probe(&self, v: f64) -> Option<Probe> {
        let mut tally = Tally::default();
        let (end, slope) = self.run(v, Some(&mut tally), None).ok()?;
        Some(Probe {
            v,
            g: end - v,
            s: slope - 1.0,
            tally,
        })
    }

    /// The start voltage that repeats after one half-cycle: `(voltage, half-cycles run,
    /// converged, the tally of the half-cycle from that start where a probe ran it)`, or
    /// `Err(half-cycles run)` when no start sustains the load.
    ///
    /// A `guess` (the steady state at a coarser step) is tried first, with up to
    /// [`WARM_PROBES`] Newton steps from it; a probe there is accepted on the same terms as
    /// any other (settled, with `g` falling through the root), otherwise the search below
    /// runs as if there had been no guess.
    ///
    /// With a constant-power load `g(v) = map(v) - v` has two roots: the stable steady
    /// state (where `g` falls through zero) and, below it, an unstable one (where it
    /// rises); below the unstable root the bulk collapses. A point with `g < 0` alone does
    /// not tell which side it is on, so the search only trusts what it can prove:
    ///
    /// * the map is monotone, so the map of a start above the stable root is again above
    ///   it; `top` is above it, hence `upper = map(hi)` for every such `hi` is too, and so
    ///   is every start at or above `upper`;
    /// * `g > 0` only between the two roots, so such a start is below the stable root, and
    ///   once one is known every start above it with `g < 0` is above the stable root.
    ///
    /// Newton steps (the slope of the map comes with each run) aim a little below the
    /// predicted root to find a `g > 0` start quickly; probes that cannot be placed are
    /// remembered and trusted later only if a proven bound covers them. A collapse from a
    /// start proven above the stable root means there is none. A root is accepted only
    /// where `g` falls through it (`g' < 0`), and a bracket only with a proven lower end.
    fn fixed_point(&self, top: f64, guess: Option<f64>) -> Result<FixedPoint, usize> {
        /// How far below the predicted root a probe aims (fraction of the Newton step).
        const OVERSHOOT: f64 = 0.1;
        let tolerance = STEADY_STATE_TOLERANCE * self.peak;
        let falling = |p: &Probe| p.s.is_finite() && p.s < 0.0;
        let settled =
            |p: &Probe| falling(p) && p.g.abs() <= tolerance && (p.g / p.s).abs() <= tolerance;
        let newton = |p: &Probe| falling(p).then(|| p.v - p.g / p.s);

        let mut runs = 0;
        let mut next = guess.filter(|&g| g.is_finite() && g > self.floor && g <= top);
        for _ in 0..WARM_PROBES {
            let Some(x) = next else { break };
            runs += 1;
            let Some(p) = self.probe(x) else { break };
            if settled(&p) {
                return Ok((p.v, runs, true, Some(p.tally)));
            }
            next = newton(&p).filter(|&n| n.is_finite() && n > self.floor && n <= top);
        }

        runs += 1;
        let Some(first) = self.probe(top) else {
            return Err(runs);
        };
        if first.g >= 0.0 || settled(&first) {
            return Ok((top, runs, true, Some(first.tally)));
        }
        // Lowest evaluated start proven above the stable root (g < 0).
        let mut hi = first;
        // Highest start with g > 0 (proven below the stable root, above the unstable one).
        let mut lo: Option<Probe> = None;
        // Unplaced probes with g < 0 and a falling g (likely above the stable root).
        let mut pending: Vec<Probe> = Vec::new();
        // The latest such probe, to continue Newton steps from.
        let mut chain: Option<Probe> = None;
        // Highest unplaced probe that collapsed or had a rising g (likely below).
        let mut bad: Option<f64> = None;
        let mut last_proven = true;

        while runs < MAX_HALF_CYCLES {
            // Absorb pending probes that a proven bound now covers.
            loop {
                let upper = hi.v + hi.g;
                let covered = pending
                    .iter()
                    .copied()
                    .filter(|c| c.v < hi.v && (c.v >= upper || lo.is_some_and(|l| c.v > l.v)))
                    .min_by(|a, b| a.v.total_cmp(&b.v));
                match covered {
                    Some(c) => hi = c,
                    None => break,
                }
            }
            pending.retain(|c| c.v < hi.v);
            let upper = hi.v + hi.g;
            if bad.is_some_and(|b| b >= upper) {
                bad = None;
            }
            let x = if let Some(l) = lo {
                if upper - l.v <= tolerance {
                    return Ok((0.5 * (l.v + upper), runs, true, None));
                }
                // `upper` itself is proven: a stiff path makes the map nearly flat, and then
                // the steady state lies at `map(hi)`.
                let inside = |x: f64| x.is_finite() && x > l.v && x <= upper;
                let (near, far) = if l.g.abs() < hi.g.abs() {
                    (l, hi)
                } else {
                    (hi, l)
                };
                [newton(&near), newton(&far)]
                    .into_iter()
                    .flatten()
                    .find(|&x| inside(x))
                    .unwrap_or(0.5 * (l.v + upper))
            } else {
                let base = chain.unwrap_or(hi);
                let floor = bad.unwrap_or(self.floor);
                match newton(&base).map(|root| root - OVERSHOOT * (base.v - root)) {
                    Some(t) if t.is_finite() && t > floor && t < upper => t,
                    Some(t) if t.is_finite() && t >= upper => upper,
                    _ if last_proven => 0.5 * (floor + upper),
                    _ => upper,
                }
            };
            runs += 1;
            let proven_above = x >= upper || lo.is_some_and(|l| x > l.v);
            last_proven = proven_above;
            let Some(p) = self.probe(x) else {
                if proven_above {
                    // The bulk collapses even from above the stable root: there is none.
                    return Err(runs);
                }
                chain = None;
                bad = Some(bad.map_or(x, |b| b.max(x)));
                continue;
            };
            if settled(&p) {
                return Ok((p.v, runs, true, Some(p.tally)));
            }
            if p.g > 0.0 {
                lo = Some(lo.map_or(p, |l| if p.v > l.v { p } else { l }));
                chain = None;
            } else if proven_above {
                if p.v < hi.v {
                    hi = p;
                }
                chain = None;
            } else if falling(&p) {
                pending.push(p);
                chain = Some(p);
            } else {
                chain = None;
                bad = Some(bad.map_or(x, |b| b.max(x)));
            }
        }
        match lo {
            // Both sides are known: the steady state exists, not yet found to tolerance.
            Some(l) => Ok((0.5 * (l.v + hi.v + hi.g), runs, false, None)),
            // No start was ever shown to gain charge over a half-cycle.
            None => Err(runs),
        }
    }
}

/// Samples between two exact sines in [`rectified_sine`].
const SINE_ANCHOR: usize = 16;

/// `peak |sin(omega t)|` at `t = (first + k stride) h` for `k` in `0..count`: an exact sine
/// every [`SINE_ANCHOR`] samples and a rotation by `omega stride h` in between (each adds
/// about one rounding unit, so at most about 16 of them: 4e-15 of the peak).
fn rectified_sine(
    peak: f64,
    omega: f64,
    h: f64,
    first: usize,
    stride: usize,
    count: usize,
) -> Vec<f64> {
    let (sin_step, cos_step) = (omega * stride as f64 * h).sin_cos();
    let mut out = Vec::with_capacity(count);
    let (mut sin, mut cos) = (0.0f64, 1.0f64);
    for k in 0..count {
        (sin, cos) = if k % SINE_ANCHOR == 0 {
            (omega * (first + k * stride) as f64 * h).sin_cos()
        } else {
            (
                sin * cos_step + cos * sin_step,
                cos * cos_step - sin * sin_step,
            )
        };
        out.push(peak * sin.abs());
    }
    out
}

/// One evaluation of the half-cycle map: start `v`, `g = map(v) - v` and `s = g'(v)`.
#[derive(Debug, Clone, Copy)]
struct Probe {
    v: f64,
    g: f64,
    s: f64,
    tally: Tally,
}

/// What [`HalfCycle::fixed_point`] found: start voltage, half-cycles run, converged, and
/// the tally of the half-cycle from that start where a probe ran it.
type FixedPoint = (f64, usize, bool, Option<Tally>);
