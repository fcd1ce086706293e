//! Filter arithmetic: corners from required attenuation, LC corners and the inductance for a
//! corner, the filter's output impedance and its peak, and parallel R-C damping.
//!
//! Formulas (textbook): a second-order LC low-pass has its corner at f0 = 1 / (2 pi sqrt(L C))
//! and falls 40 dB per decade above it; its characteristic impedance is R0 = sqrt(L / C).
//! Parallel R-C damping (a resistor Rd in series with a capacitor Cd = n C, across C): the
//! optimum Rd = R0 sqrt((2 + n)(4 + 3 n) / (2 n^2 (4 + n))) gives the lowest peak output
//! impedance, R0 sqrt(2 (2 + n)) / n (Erickson and Maksimovic, Fundamentals of Power
//! Electronics, 2nd ed., ch. 10; from memory).

use std::f64::consts::PI;

/// The highest corner of a low-pass falling `db_per_decade` above its corner that still
/// attenuates `attenuation_db` at `frequency_hz`: f / 10^(A / slope). Only for A above 0.
pub fn corner_for_attenuation(frequency_hz: f64, attenuation_db: f64, db_per_decade: f64) -> f64 {
    frequency_hz / 10f64.powf(attenuation_db / db_per_decade)
}

/// Asymptotic attenuation of a low-pass with corner `corner_hz` at `frequency_hz`:
/// slope x log10(f / fc) above the corner, 0 at and below it.
pub fn asymptotic_attenuation_db(corner_hz: f64, frequency_hz: f64, db_per_decade: f64) -> f64 {
    if frequency_hz > corner_hz {
        db_per_decade * (frequency_hz / corner_hz).log10()
    } else {
        0.0
    }
}

/// f0 = 1 / (2 pi sqrt(L C)).
pub fn lc_corner_hz(inductance_h: f64, capacitance_f: f64) -> f64 {
    1.0 / (2.0 * PI * (inductance_h * capacitance_f).sqrt())
}

/// The inductance that puts an LC corner at `corner_hz` with capacitance C: 1 / ((2 pi f)^2 C).
pub fn inductance_for_corner_h(corner_hz: f64, capacitance_f: f64) -> f64 {
    1.0 / ((2.0 * PI * corner_hz).powi(2) * capacitance_f)
}

/// R0 = sqrt(L / C).
pub fn characteristic_impedance_ohm(inductance_h: f64, capacitance_f: f64) -> f64 {
    (inductance_h / capacitance_f).sqrt()
}

/// Optimum parallel damping for the ratio n = Cd / C: (Rd, peak output impedance), both
/// in ohms, from R0 (Erickson and Maksimovic, 2nd ed., ch. 10; from memory).
pub fn optimum_parallel_damping(r0_ohm: f64, n: f64) -> (f64, f64) {
    let q = ((2.0 + n) * (4.0 + 3.0 * n) / (2.0 * n * n * (4.0 + n))).sqrt();
    let peak = r0_ohm * (2.0 * (2.0 + n)).sqrt() / n;
    (r0_ohm * q, peak)
}

/// The smallest ratio n = Cd / C whose optimum damping brings the peak down to
/// `target_ohm`: the positive root of k^2 n^2 - 2 n - 4 = 0 with k = target / R0.
pub fn ratio_for_peak(r0_ohm: f64, target_ohm: f64) -> f64 {
    let k2 = (target_ohm / r0_ohm).powi(2);
    (1.0 + (1.0 + 4.0 * k2).sqrt()) / k2
}

/// An LC filter stage as the converter sees it from its input.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Stage {
    pub inductance_h: f64,
    /// Series resistance of the inductance (0 for an ideal part).
    pub inductor_resistance_ohm: f64,
    pub capacitance_f: f64,
    /// Parallel damping branch across C: (Rd in ohms, Cd in farads).
    pub damping: Option<(f64, f64)>,
}

/// |Z_out| at `frequency_hz`: (R_L + j w L) in parallel with 1/(j w C) and Rd + 1/(j w Cd).
pub fn output_impedance_ohm(stage: &Stage, frequency_hz: f64) -> f64 {
    let w = 2.0 * PI * frequency_hz;
    // Admittances as (real, imaginary).
    let (rl, xl) = (stage.inductor_resistance_ohm, w * stage.inductance_h);
    let d = rl * rl + xl * xl;
    let mut g = rl / d;
    let mut b = -xl / d;
    b += w * stage.capacitance_f;
    if let Some((rd, cd)) = stage.damping {
        let xc = 1.0 / (w * cd);
        let dd = rd * rd + xc * xc;
        g += rd / dd;
        b += xc / dd;
    }
    1.0 / g.hypot(b)
}

/// Peak of |Z_out| and where it sits, found by a log sweep around the corner and a golden
/// section refinement. `None` for a lossless, undamped stage (the peak is unbounded).
pub fn peak_output_impedance(stage: &Stage) -> Option<(f64, f64)> {
    let usable = [stage.inductance_h, stage.capacitance_f]
        .iter()
        .all(|v| v.is_finite() && *v > 0.0)
        && stage.inductor_resistance_ohm.is_finite()
        && stage.inductor_resistance_ohm >= 0.0;
    if !usable {
        return None;
    }
    let damping_ratio = match stage.damping {
        Some((rd, cd)) if rd.is_finite() && rd > 0.0 && cd.is_finite() && cd > 0.0 => {
            cd / stage.capacitance_f
        }
        Some(_) => return None,
        None if stage.inductor_resistance_ohm > 0.0 => 0.0,
        None => return None,
    };
    let f0 = lc_corner_hz(stage.inductance_h, stage.capacitance_f);
    let low = (f0 / (10.0 * (1.0 + damping_ratio).sqrt())).ln();
    let high = (f0 * 10.0).ln();
    const POINTS: usize = 4000;
    let at = |ln_f: f64| output_impedance_ohm(stage, ln_f.exp());
    let mut best = (f64::NEG_INFINITY, 0usize);
    for i in 0..=POINTS {
        let x = low + (high - low) * i as f64 / POINTS as f64;
        let z = at(x);
        if z > best.0 {
            best = (z, i);
        }
    }
    let step = (high - low) / POINTS as f64;
    let centre = low + step * best.1 as f64;
    let (mut a, mut b) = (centre - step, centre + step);
    let ratio = (5f64.sqrt() - 1.0) / 2.0;
    for _ in 0..80 {
        let c = b - ratio * (b - a);
        let d = a + ratio * (b - a);
        if at(c) > at(d) {
            b = d;
        } else {
            a = c;
        }
    }
    let x = (a + b) / 2.0;
    let refined = at(x);
    let (peak, ln_f) = if refined >= best.0 {
        (refined, x)
    } else {
        (best.0, centre)
    };
    (peak.is_finite()).then(|| (peak, ln_f.exp()))
}

/// A complex number, for the filter's transfer function (no crate needed for four
/// operations).
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Complex {
    pub re: f64,
    pub im: f64,
}

impl Complex {
    pub const fn new(re: f64, im: f64) -> Self {
        Complex { re, im }
    }
    pub fn plus(self, o: Complex) -> Complex {
        Complex::new(self.re + o.re, self.im + o.im)
    }
    pub fn times(self, o: Complex) -> Complex {
        Complex::new(
            self.re * o.re - self.im * o.im,
            self.re * o.im + self.im * o.re,
        )
    }
    pub fn over(self, o: Complex) -> Complex {
        let d = o.re * o.re + o.im * o.im;
        Complex::new(
            (self.re * o.re + self.im * o.im) / d,
            (self.im * o.re - self.re * o.im) / d,
        )
    }
    pub fn abs(self) -> f64 {
        self.re.hypot(self.im)
    }
    /// Two impedances in parallel.
    pub fn parallel(self, o: Complex) -> Complex {
        self.times(o).over(self.plus(o))
    }
}

/// One line of the measuring network: a resistance in parallel with an inductance
/// (CISPR 16-1-2: 50 ohm in parallel with 50 uH).
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct NetworkLine {
    pub resistance_ohm: f64,
    pub inductance_h: f64,
}

impl NetworkLine {
    pub fn impedance(&self, frequency_hz: f64) -> Complex {
        let w = 2.0 * PI * frequency_hz;
        Complex::new(self.resistance_ohm, 0.0).parallel(Complex::new(0.0, w * self.inductance_h))
    }
}

/// A filter stage between a noise source and the measuring network: a shunt branch on
/// the source side (the X or Y capacitance, with a parallel R-C damping branch) and a
/// series branch towards the network (the inductance with its resistance).
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct TwoPort {
    pub series_inductance_h: f64,
    pub series_resistance_ohm: f64,
    pub shunt_capacitance_f: f64,
    /// (Rd in ohms, Cd in farads) across the shunt capacitance.
    pub damping: Option<(f64, f64)>,
}

/// Insertion loss in dB of `stage` between a resistive source impedance and a load (the
/// measuring network as the mode sees it): 20 log10 |V_load without / V_load with|.
/// Negative near the resonance where the stage amplifies.
pub fn insertion_loss_db(
    stage: &TwoPort,
    source_ohm: f64,
    load: Complex,
    frequency_hz: f64,
) -> f64 {
    let w = 2.0 * PI * frequency_hz;
    let zs = Complex::new(source_ohm, 0.0);
    let mut shunt = Complex::new(0.0, -1.0 / (w * stage.shunt_capacitance_f));
    if let Some((rd, cd)) = stage.damping {
        shunt = shunt.parallel(Complex::new(rd, -1.0 / (w * cd)));
    }
    let series = Complex::new(stage.series_resistance_ohm, w * stage.series_inductance_h);
    // Without the stage: V0 = Vs Zl / (Zs + Zl).
    let without = load.over(zs.plus(load));
    // With it: Vx = Vs Zp / (Zs + Zp), Zp = shunt || (series + Zl); V = Vx Zl / (series + Zl).
    let zp = shunt.parallel(series.plus(load));
    let with = zp.over(zs.plus(zp)).times(load.over(series.plus(load)));
    let ratio = without.over(with);
    20.0 * ratio.abs().log10()
}
