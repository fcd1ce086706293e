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
//! at a zero crossing of the mains, where the bridge is off): the stable one, the highest
//! root of `map(v) - v`, found by Newton steps kept inside bounds proven from the monotone
//! map (never the unstable root below it or the collapse boundary), with a bounded number of
//! half-cycles. Every loop is bounded.

use std::rc::Rc;

use serde::Serialize;

/// Steps per half-cycle of the mains the adaptive search starts from. With this step,
/// halving it changes the input RMS current by well under 0.5 % over the designs in
/// `tests/it/power_entry.rs`; where R C is shorter than a step it is not enough, so
/// [`steady_state`] doubles it until the energy balances.
pub const STEPS_PER_HALF_CYCLE: usize = 2000;

/// The most steps per half-cycle the adaptive search goes to (2000 doubled 8 times).
pub const MAX_STEPS_PER_HALF_CYCLE: usize = 512_000;

/// The adaptive search accepts a step when the energy balances within this fraction of the
/// input power and the RMS current, repetitive peak and valley change by less than it
/// when the step is halved.
pub const ENERGY_TOLERANCE: f64 = 1e-3;

/// The most half-cycles simulated in the search for the steady state.
pub const MAX_HALF_CYCLES: usize = 80;

/// Steady state: the bulk voltage at the end of a half-cycle equals the voltage at its
/// start within this fraction of the source peak.
pub const STEADY_STATE_TOLERANCE: f64 = 1e-7;

/// Below this fraction of the source peak the constant-power load is taken to have
/// collapsed the bulk voltage (no steady state exists).
const COLLAPSE_FRACTION: f64 = 0.01;

/// Probes from a coarser step's steady state (the guess and Newton steps from it) before
/// the search starts from the top.
const WARM_PROBES: usize = 3;

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
    /// Half-cycles simulated at the final step size (from [`steady_state`], they start from
    /// the steady state found at the coarser step).
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
    /// |P_in - (P + R I_rms² + V_d I_avg)| / P_in: what the discretisation loses.
    pub energy_balance_error: f64,
    /// The adaptive step met [`ENERGY_TOLERANCE`] (always true from `steady_state_with`).
    pub step_converged: bool,
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
    sum_i: f64,
    sum_ui: f64,
    peak_i: f64,
    /// The valley without the onsets still in `onsets` ([`HalfCycle::settle`] adds them).
    v_min: f64,
    v_max: f64,
    conducting_steps: usize,
    /// Where conduction started, `(v_n, n)`, its valley not yet placed: the bisection
    /// costs fifty sines and only the accepted start's tally needs it (a minimum does not
    /// depend on the order of its terms).
    onsets: [(f64, usize); PENDING_ONSETS],
    pending: usize,
}

/// Onsets a half-cycle keeps for later; beyond them (a current that starts and stops
/// again and again) each is placed at once.
const PENDING_ONSETS: usize = 4;

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

/// The steady state with an adaptive step: from [`STEPS_PER_HALF_CYCLE`], the step is
/// halved until the energy balances within [`ENERGY_TOLERANCE`] of the input power and the
/// RMS current, repetitive peak and valley move by less than that fraction between the
/// last two steps (at most [`MAX_STEPS_PER_HALF_CYCLE`]; `step_converged` says whether it
/// got there).
///
/// Each finer step starts its search for the steady state from the coarser one's (one or
/// two half-cycles usually settle it) and reuses the coarser grid's source samples.
pub fn steady_state(r: &Rectifier) -> SteadyState {
    steady_state_sharing(r, &mut SourceGrids::default())
}

/// [`steady_state`], taking the source's sample grids from `grids` (and leaving the ones
/// it builds there): operating points at the same mains frequency sample the same sine,
/// each scaled by its own peak, so the second point builds none (the same figures to the
/// bit).
pub fn steady_state_sharing(r: &Rectifier, grids: &mut SourceGrids) -> SteadyState {
    let mut steps = STEPS_PER_HALF_CYCLE;
    let (mut previous, mut warm) = solve(r, steps, None, None, Some(&mut *grids));
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
        let (next, next_warm) = solve(r, steps, None, warm.as_ref(), Some(&mut *grids));
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
    solve(r, steps, waveform, None, None).0
}

/// The grids of `|sin(omega t)|` that [`steady_state_sharing`] has built, by mains
/// frequency and steps per half-cycle. Within [`steady_state_sharing`] a grid of given
/// steps is always built the same way (the first directly, each finer one from the one
/// before), so the key names its every sample.
#[derive(Default)]
pub struct SourceGrids {
    built: Vec<(u64, usize, Rc<UnitGrid>)>,
}

impl SourceGrids {
    fn get(&self, frequency_hz: f64, steps: usize) -> Option<Rc<UnitGrid>> {
        self.built
            .iter()
            .find(|(f, s, _)| *f == frequency_hz.to_bits() && *s == steps)
            .map(|(_, _, g)| Rc::clone(g))
    }
}

/// What a solved step size hands to the next, finer one: its grid and steady-state start.
struct Warm {
    sim: HalfCycle,
    start_v: f64,
}

/// [`steady_state_with`], optionally warm-started from a coarser solution of the same
/// rectifier (`steps` twice its steps) and with the grids built so far; also returns what
/// the next finer step can start from.
fn solve(
    r: &Rectifier,
    steps: usize,
    waveform: Option<&mut Waveform>,
    warm: Option<&Warm>,
    grids: Option<&mut SourceGrids>,
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
    let half_period = 0.5 / r.frequency_hz;
    let h = half_period / steps as f64;
    let omega = 2.0 * std::f64::consts::PI * r.frequency_hz;
    let build = || match warm {
        // Every other sample is the coarse one (the same instant to the last bit: `h`
        // halves exactly).
        Some(w) if w.sim.grid.unit.len() * 2 == steps => UnitGrid::refined(&w.sim.grid, omega, h),
        _ => UnitGrid::new(omega, h, steps),
    };
    let grid = match grids {
        Some(g) => match g.get(r.frequency_hz, steps) {
            Some(found) => found,
            None => {
                let made = Rc::new(build());
                g.built
                    .push((r.frequency_hz.to_bits(), steps, Rc::clone(&made)));
                made
            }
        },
        None => Rc::new(build()),
    };
    let sim = HalfCycle::new(r, h, omega, grid);
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
            sim.run(start, &mut tally, recorder)
                .is_ok()
                .then_some(tally)
        }
    };
    let tally = tally.map(|t| sim.settle(t));
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
    /// `floor²`, and what the load alone takes from `v²` in one step (`2 P h / C`).
    floor_square: f64,
    per_step: f64,
    /// The implicit step's coefficients at the start of a conduction interval (backward
    /// Euler) and after it (second-order BDF): the same in every step.
    starting: Implicit,
    continuing: Implicit,
    /// `|sin(omega t)|` at the grid's instants; `peak` times it is `|u|`.
    grid: Rc<UnitGrid>,
}

/// One implicit step `a v_{n+1} = A + k ((u - v)/R - P/v)`, `A = a v_n - b v_{n-1}`: its
/// quadratic's coefficients that do not depend on the state.
#[derive(Clone, Copy)]
struct Implicit {
    a: f64,
    b: f64,
    k: f64,
    /// With `qa = 1 + k / R`: `4 qa k P` and `2 qa`.
    qa_k_p4: f64,
    qa2: f64,
}

impl Implicit {
    fn new((a, b, beta): (f64, f64, f64), h: f64, rr: f64, c: f64, p: f64) -> Self {
        let k = beta * h / c;
        let qa = 1.0 + k / rr;
        Implicit {
            a,
            b,
            k,
            qa_k_p4: 4.0 * qa * k * p,
            qa2: 2.0 * qa,
        }
    }
}

/// `|sin(omega t)|` at t = h, 2h, ..., T/2 (index n holds t = (n + 1) h), and the largest
/// of each run of [`BLOCK`] samples (`unit[BLOCK j..]`), so that a blocked stretch passes
/// a run whose every sample stays below the bulk voltage without looking at each (scaled
/// by the peak, the largest of a run is the peak times its largest: rounding is
/// monotone).
struct UnitGrid {
    unit: Vec<f64>,
    block_max: Vec<f64>,
}

/// Samples per entry of `UnitGrid::block_max`.
const BLOCK: usize = 32;

/// The largest sample of each run (a comparison does what `f64::max` did: a NaN sample
/// never replaces the running maximum, and no maximum is NaN or -0).
fn block_maxima(source: &[f64]) -> Vec<f64> {
    source
        .chunks(BLOCK)
        .map(|run| {
            run.iter()
                .fold(f64::NEG_INFINITY, |m, &x| if x > m { x } else { m })
        })
        .collect()
}

impl UnitGrid {
    fn new(omega: f64, h: f64, steps: usize) -> Self {
        let unit = rectified_sine(omega, h, 1, 1, steps);
        UnitGrid {
            block_max: block_maxima(&unit),
            unit,
        }
    }

    /// The grid of `coarse` with twice the steps (`h` half its step): every other sample
    /// is the coarse one.
    fn refined(coarse: &UnitGrid, omega: f64, h: f64) -> Self {
        let between = rectified_sine(omega, h, 1, 2, coarse.unit.len());
        let mut unit = Vec::with_capacity(2 * coarse.unit.len());
        for (&new, &old) in between.iter().zip(&coarse.unit) {
            unit.push(new);
            unit.push(old);
        }
        UnitGrid {
            block_max: block_maxima(&unit),
            unit,
        }
    }
}

impl HalfCycle {
    fn new(r: &Rectifier, h: f64, omega: f64, grid: Rc<UnitGrid>) -> Self {
        let peak = r.source_peak_v();
        let (rr, c, p) = (r.series_ohm, r.capacitance_f, r.load_w);
        let floor = COLLAPSE_FRACTION * peak;
        HalfCycle {
            h,
            omega,
            peak,
            drop: r.diode_drop_v,
            r: rr,
            c,
            p,
            floor,
            floor_square: floor * floor,
            per_step: 2.0 * p * h / c,
            starting: Implicit::new((1.0, 0.0, 1.0), h, rr, c, p),
            continuing: Implicit::new((4.0 / 3.0, 1.0 / 3.0, 2.0 / 3.0), h, rr, c, p),
            grid,
        }
    }

    /// One half-cycle from `v0` at a zero crossing; returns the voltage at the next one and
    /// its derivative with respect to `v0` (the slope of the discrete half-cycle map). The
    /// tally is written only when the half-cycle completes; its onsets still wait for
    /// [`HalfCycle::settle`].
    fn run(
        &self,
        v0: f64,
        tally: &mut Tally,
        wave: Option<&mut Waveform>,
    ) -> Result<(f64, f64), Collapse> {
        match wave {
            Some(w) => self.run_recording::<true>(v0, tally, Some(w)),
            None => self.run_recording::<false>(v0, tally, None),
        }
    }

    /// [`HalfCycle::run`], compiled once without the recorder (what every probe runs) and
    /// once with it.
    ///
    /// Of `f64::max` and `f64::min` (which look after NaN and the sign of zero) the tally
    /// needs only comparisons: every voltage compared is finite and above the collapse
    /// floor, and every current finite and at least +0 (a current below zero is clamped to
    /// +0: `u - v` is never -0, nor is it divided by `R` into one).
    fn run_recording<const RECORD: bool>(
        &self,
        v0: f64,
        tally: &mut Tally,
        mut wave: Option<&mut Waveform>,
    ) -> Result<(f64, f64), Collapse> {
        let rr = self.r;
        let (peak, drop, floor) = (self.peak, self.drop, self.floor);
        let (floor_square, per_step) = (self.floor_square, self.per_step);
        let unit = &self.grid.unit[..];
        let block_max = &self.grid.block_max[..];
        let mut t = Tally {
            v_min: v0,
            v_max: v0,
            ..Tally::default()
        };
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
        let steps = unit.len();
        let mut n = 0;
        while n < steps {
            let source = peak * unit[n];
            let u = source - drop;
            // The load alone discharging for one step, `v^2 - 2 P h / C`.
            let square = v * v - per_step;
            if square <= floor_square {
                return Err(Collapse);
            }
            let v_off = square.sqrt();
            if u <= v_off && !RECORD {
                // A blocked stretch, most of a half-cycle, in closed form: the load alone
                // discharges, `v_{n+m}^2 = v_n^2 - 2 P m h / C`, and the slope of the map
                // telescopes to `dv_n v_n / v_{n+m}`. The stretch ends at the first step
                // whose source exceeds the voltage it would discharge to (compared
                // squared: no root per step). Nothing flows, so the sums and the peak stay;
                // v only falls, so of the tally only the valley moves, to its last voltage.
                if !(v_off.is_finite() && v_off > floor) {
                    return Err(Collapse);
                }
                let (v_start, dv_start) = (v, dv);
                let start_square = v * v;
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
                        let top = peak * block_max[at / BLOCK] - drop;
                        if last_square > floor_square && (top <= 0.0 || top * top <= last_square) {
                            m += BLOCK;
                            continue;
                        }
                    }
                    let next_square = square_after(m + 1);
                    if next_square <= floor_square {
                        return Err(Collapse);
                    }
                    let u = peak * unit[n + m] - drop;
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
                if v < t.v_min {
                    t.v_min = v;
                }
                continue;
            }
            let (v_next, i, dv_next) = if u > v_off {
                // Implicit step: a v_{n+1} = A + k ((u - v)/R - P/v), a quadratic in v.
                let q = if conducting {
                    &self.continuing
                } else {
                    &self.starting
                };
                let big_a = q.a * v - q.b * v_prev;
                let qb = big_a + q.k * u / rr;
                let disc = qb * qb - q.qa_k_p4;
                if disc < 0.0 {
                    return Err(Collapse);
                }
                let root = disc.sqrt();
                let v_next = (qb + root) / q.qa2;
                let dv_next = (1.0 + qb / root) / q.qa2 * (q.a * dv - q.b * dv_prev);
                if !conducting {
                    if t.pending < PENDING_ONSETS {
                        t.onsets[t.pending] = (v, n);
                        t.pending += 1;
                    } else {
                        t.v_min = t.v_min.min(self.onset_voltage(v, n));
                    }
                }
                conducting = true;
                let i = (u - v_next) / rr;
                (v_next, if i > 0.0 { i } else { 0.0 }, dv_next)
            } else {
                conducting = false;
                (v_off, 0.0, v / v_off * dv)
            };
            // Finite and above the floor (NaN fails both).
            if !(v_next > floor && v_next < f64::INFINITY) {
                return Err(Collapse);
            }
            t.sum_i2 += i * i;
            t.sum_i += i;
            t.sum_ui += source * i;
            if i > t.peak_i {
                t.peak_i = i;
            }
            if v_next < t.v_min {
                t.v_min = v_next;
            }
            if v_next > t.v_max {
                t.v_max = v_next;
            }
            if i > 0.0 {
                t.conducting_steps += 1;
            }
            if RECORD && let Some(w) = wave.as_deref_mut() {
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
        *tally = t;
        Ok((v, dv))
    }

    /// The tally with the valleys at its pending onsets placed.
    fn settle(&self, mut t: Tally) -> Tally {
        for &(v_n, n) in &t.onsets[..t.pending] {
            t.v_min = t.v_min.min(self.onset_voltage(v_n, n));
        }
        t.pending = 0;
        t
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
        let (end, slope) = self.run(v, &mut tally, None).ok()?;
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

/// `|sin(omega t)|` at `t = (first + k stride) h` for `k` in `0..count`: an exact sine
/// every [`SINE_ANCHOR`] samples and a rotation by `omega stride h` in between (each adds
/// about one rounding unit, so at most about 16 of them: 4e-15 of the peak). The peak scales
/// each sample where it is used (`peak * |sin|`, as it always was).
fn rectified_sine(omega: f64, h: f64, first: usize, stride: usize, count: usize) -> Vec<f64> {
    let (sin_step, cos_step) = (omega * stride as f64 * h).sin_cos();
    let mut out = vec![0.0; count];
    for (j, run) in out.chunks_mut(SINE_ANCHOR).enumerate() {
        let k = j * SINE_ANCHOR;
        let (mut sin, mut cos) = (omega * (first + k * stride) as f64 * h).sin_cos();
        run[0] = sin.abs();
        for x in &mut run[1..] {
            (sin, cos) = (
                sin * cos_step + cos * sin_step,
                cos * cos_step - sin * sin_step,
            );
            *x = sin.abs();
        }
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

#[cfg(test)]
mod reference;

#[cfg(test)]
mod tests {
    use super::*;

    /// Every field of two steady states, floats compared by their bits.
    fn assert_same(fast: &SteadyState, slow: &SteadyState, what: &str) {
        let bits = |s: &SteadyState| {
            [
                s.source_peak_v,
                s.input_rms_a,
                s.repetitive_peak_a,
                s.input_power_w,
                s.power_factor,
                s.bulk_valley_v,
                s.bulk_peak_v,
                s.bulk_ripple_v,
                s.conduction_ms,
                s.energy_balance_error,
            ]
            .map(f64::to_bits)
        };
        assert_eq!(bits(fast), bits(slow), "{what}: {fast:?} against {slow:?}");
        let flags = |s: &SteadyState| {
            (
                s.sustained,
                s.converged,
                s.step_converged,
                s.half_cycles,
                s.steps_per_half_cycle,
            )
        };
        assert_eq!(flags(fast), flags(slow), "{what}");
    }

    /// Designs from a fixed pseudo-random walk over the ranges the tool meets (universal
    /// input, 47 to 400 Hz, stiff to slow charging paths, no load to heavy loads, with and
    /// without a bridge drop), plus a collapsing one and a tiny source.
    fn designs() -> Vec<Rectifier> {
        let mut state = 0x2545_f491_4f6c_dd1d_u64;
        let mut pick = |choices: &[f64]| {
            state ^= state << 13;
            state ^= state >> 7;
            state ^= state << 17;
            choices[(state % choices.len() as u64) as usize]
        };
        let mut out = Vec::new();
        for _ in 0..200 {
            out.push(Rectifier {
                v_rms: pick(&[85.0, 90.0, 100.0, 115.0, 230.0, 240.0, 264.0, 277.0]),
                frequency_hz: pick(&[47.0, 50.0, 60.0, 63.0, 400.0]),
                series_ohm: pick(&[0.3, 1.0, 3.2, 4.7, 10.0, 22.0]),
                capacitance_f: pick(&[10e-6, 22e-6, 47e-6, 100e-6, 330e-6]),
                load_w: pick(&[0.0, 5.0, 24.0 / 0.86, 27.906976744186046, 75.0, 150.0]),
                diode_drop_v: pick(&[0.0, 1.4, 2.0]),
            });
        }
        out.push(Rectifier {
            v_rms: 90.0,
            frequency_hz: 50.0,
            series_ohm: 3.2,
            capacitance_f: 1e-6,
            load_w: 500.0,
            diode_drop_v: 2.0,
        });
        out.push(Rectifier {
            v_rms: 1.0,
            frequency_hz: 50.0,
            series_ohm: 1.0,
            capacitance_f: 47e-6,
            load_w: 1.0,
            diode_drop_v: 2.0,
        });
        out
    }

    #[test]
    fn steady_state_equals_the_straightforward_simulation_to_the_bit() {
        let (mut sustained, mut refined) = (0, 0);
        for r in designs() {
            let fast = steady_state(&r);
            assert_same(&fast, &reference::steady_state(&r), &format!("{r:?}"));
            sustained += usize::from(fast.sustained);
            refined += usize::from(fast.steps_per_half_cycle > STEPS_PER_HALF_CYCLE);
        }
        eprintln!("{sustained} sustained, {refined} refined");
        // The walk must exercise the search, not only collapses.
        assert!(
            sustained >= 100 && refined >= 50,
            "{sustained} sustained, {refined} refined"
        );
    }

    #[test]
    fn operating_points_sharing_their_grids_equal_the_straightforward_simulation_to_the_bit() {
        // Low and high line of each design at one frequency, then the other way round,
        // each pair sharing its grids (the second point builds none).
        for r in designs().into_iter().take(16) {
            let high = Rectifier { v_rms: 264.0, ..r };
            for order in [[r, high], [high, r]] {
                let mut grids = SourceGrids::default();
                for point in order {
                    assert_same(
                        &steady_state_sharing(&point, &mut grids),
                        &reference::steady_state(&point),
                        &format!("{point:?}"),
                    );
                }
            }
        }
    }

    #[test]
    fn recorded_half_cycle_equals_the_straightforward_simulation_to_the_bit() {
        for (k, r) in designs().into_iter().take(12).enumerate() {
            let steps = [16, 100, 2000, 3001][k % 4];
            let (mut fast, mut slow) = (Waveform::default(), Waveform::default());
            let a = steady_state_with(&r, steps, Some(&mut fast));
            let b = reference::steady_state_with(&r, steps, Some(&mut slow));
            assert_same(&a, &b, &format!("{r:?} at {steps} steps"));
            let bits = |w: &Waveform| {
                [&w.source_v, &w.current_a, &w.bulk_v]
                    .map(|v| v.iter().map(|x| x.to_bits()).collect::<Vec<_>>())
            };
            assert_eq!(fast.step_s.to_bits(), slow.step_s.to_bits());
            assert_eq!(bits(&fast), bits(&slow), "{r:?} at {steps} steps");
        }
    }
}
