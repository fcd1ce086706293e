//! The exact response of a series R-L-C circuit driven by a sinusoid, from any initial
//! state: the sinusoidal steady state (phasors) plus the damped homogeneous part (the 2 x 2
//! matrix exponential written out for the underdamped, critically damped and overdamped
//! cases). Textbook series RLC step/sinusoid response (any circuits textbook). The inrush
//! switch-on (`super::inrush::switch_on`) joins such pieces between the instants where the
//! bridge's source changes sign or the current stops.
//!
//! Circuit: `L di/dt = u(t) - v - R i`, `C dv/dt = i`, `u(t) = U cos(omega t)`.

/// One interval on which the source is `U cos(omega t)` and the bridge conducts, from the
/// state `(i0, v0)` at `t0`: `x(t) = x_p(t) + e^(A (t - t0)) (x0 - x_p(t0))`.
#[derive(Debug, Clone, Copy)]
pub struct Piece {
    omega: f64,
    amplitude_v: f64,
    r: f64,
    t0: f64,
    /// Particular (steady-state) solution: `i_p = ic cos + is sin`, `v_p = vc cos + vs sin`.
    ic: f64,
    is: f64,
    vc: f64,
    vs: f64,
    /// The homogeneous part's state at `t0`: `x0 - x_p(t0)`.
    di0: f64,
    dv0: f64,
    /// The homogeneous part's rates at `t0` that `at` applies (`(A + alpha I)` times the
    /// state above): the same for every instant of the piece.
    di_rate: f64,
    dv_rate: f64,
    /// Neper frequency `alpha = R / 2L` and `beta² = alpha² - omega0²`.
    alpha: f64,
    beta2: f64,
    damping: Damping,
}

#[derive(Debug, Clone, Copy)]
enum Damping {
    /// `gamma = sqrt(omega0² - alpha²)`.
    Under { gamma: f64 },
    /// `slow = alpha - beta` (written as `omega0² / (alpha + beta)`, no cancellation) and
    /// `fast = alpha + beta`.
    Over { beta: f64, slow: f64, fast: f64 },
}

/// Below this `|beta² tau²|` the series of cosh and sinh are used (near critical damping,
/// or early in the piece), where the closed forms would cancel.
const SERIES_BELOW: f64 = 1e-4;

/// The state of the circuit at one instant.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct State {
    pub i: f64,
    pub v: f64,
    /// The source `u(t)`.
    pub u: f64,
}

impl Piece {
    /// `None` where no bounded steady state exists (the source at the circuit's own
    /// resonance with too little resistance to make the phasors well conditioned) or a
    /// figure is not finite: the caller then integrates numerically instead.
    #[allow(clippy::too_many_arguments)]
    pub fn new(
        amplitude_v: f64,
        omega: f64,
        l: f64,
        r: f64,
        c: f64,
        t0: f64,
        i0: f64,
        v0: f64,
    ) -> Option<Piece> {
        // Phasors: Z = R + jX, X = omega L - 1 / (omega C); I = U / Z; V_C = I / (j omega C).
        let x = omega * l - 1.0 / (omega * c);
        let z2 = r * r + x * x;
        let scale = omega * l + 1.0 / (omega * c);
        // |Z| far below the reactances: the steady state is huge and the homogeneous part
        // cancels it; the phasor sum would lose its digits.
        if !(z2.is_finite() && z2.sqrt() > 1e-6 * scale) {
            return None;
        }
        let (re_i, im_i) = (amplitude_v * r / z2, -amplitude_v * x / z2);
        // i_p = Re(I e^(j omega t)) = Re I cos - Im I sin; V_C = -j I / (omega C).
        let (ic, is) = (re_i, -im_i);
        let (vc, vs) = (im_i / (omega * c), re_i / (omega * c));
        let (sin0, cos0) = (omega * t0).sin_cos();
        let alpha = r / (2.0 * l);
        let omega0 = 1.0 / (l * c).sqrt();
        let beta2 = (alpha - omega0) * (alpha + omega0);
        let damping = if beta2 < 0.0 {
            Damping::Under {
                gamma: (-beta2).sqrt(),
            }
        } else {
            let beta = beta2.sqrt();
            Damping::Over {
                beta,
                slow: omega0 * omega0 / (alpha + beta),
                fast: alpha + beta,
            }
        };
        let c_inv = 1.0 / c;
        let di0 = i0 - (ic * cos0 + is * sin0);
        let dv0 = v0 - (vc * cos0 + vs * sin0);
        let piece = Piece {
            omega,
            amplitude_v,
            r,
            t0,
            ic,
            is,
            vc,
            vs,
            di0,
            dv0,
            di_rate: -alpha * di0 - dv0 / l,
            dv_rate: di0 * c_inv + alpha * dv0,
            alpha,
            beta2,
            damping,
        };
        [ic, is, vc, vs, piece.di0, piece.dv0, alpha, beta2]
            .iter()
            .all(|x| x.is_finite())
            .then_some(piece)
    }

    /// `e^(-alpha tau) cosh(beta tau)` and `e^(-alpha tau) sinh(beta tau) / beta` (with
    /// `beta` imaginary when underdamped: cos and sin / gamma).
    fn homogeneous(&self, tau: f64) -> (f64, f64) {
        let q = self.beta2 * tau * tau;
        if q.abs() < SERIES_BELOW {
            let decay = (-self.alpha * tau).exp();
            let c = 1.0 + q / 2.0 * (1.0 + q / 12.0 * (1.0 + q / 30.0));
            let s = tau * (1.0 + q / 6.0 * (1.0 + q / 20.0 * (1.0 + q / 42.0)));
            return (decay * c, decay * s);
        }
        match self.damping {
            Damping::Under { gamma } => {
                let decay = (-self.alpha * tau).exp();
                let (sin, cos) = (gamma * tau).sin_cos();
                (decay * cos, decay * sin / gamma)
            }
            Damping::Over { beta, slow, fast } => {
                // e^(-alpha tau) e^(+-beta tau) as two decays: no overflow.
                let (a, b) = ((-slow * tau).exp(), (-fast * tau).exp());
                (0.5 * (a + b), 0.5 * (a - b) / beta)
            }
        }
    }

    /// The state at `t` (at or after `t0`).
    pub fn at(&self, t: f64) -> State {
        let (sin, cos) = (self.omega * t).sin_cos();
        let (ec, es) = self.homogeneous(t - self.t0);
        // e^(A tau) = e^(-alpha tau) [cosh I + sinh / beta (A + alpha I)],
        // A + alpha I = [[-alpha, -1/L], [1/C, alpha]].
        let di = ec * self.di0 + es * self.di_rate;
        let dv = ec * self.dv0 + es * self.dv_rate;
        State {
            i: self.ic * cos + self.is * sin + di,
            v: self.vc * cos + self.vs * sin + dv,
            u: self.amplitude_v * cos,
        }
    }

    /// `L di/dt` at a state: `u - v - R i` (the sign of the current's slope).
    pub fn slope_v(&self, s: &State) -> f64 {
        s.u - s.v - self.r * s.i
    }

    pub fn omega(&self) -> f64 {
        self.omega
    }

    /// The fastest rate (1/s) in the response: the sampling of a piece must resolve it
    /// while the homogeneous part lasts.
    pub fn fastest_rate(&self) -> f64 {
        let natural = match self.damping {
            Damping::Under { .. } => (self.alpha * self.alpha - self.beta2).sqrt(),
            Damping::Over { fast, .. } => fast,
        };
        natural.max(self.omega)
    }

    /// The rate that must stay resolved for as long as the homogeneous part lasts: the
    /// ringing (underdamped) or the slow decay (overdamped), and always the source.
    pub fn persistent_rate(&self) -> f64 {
        let natural = match self.damping {
            Damping::Under { .. } => (self.alpha * self.alpha - self.beta2).sqrt(),
            Damping::Over { slow, .. } => slow,
        };
        natural.max(self.omega)
    }

    /// The time after `t0` beyond which the homogeneous part has decayed below rounding
    /// (`e^(-40)`); infinite without damping.
    pub fn settled_after(&self) -> f64 {
        let rate = match self.damping {
            Damping::Under { .. } => self.alpha,
            Damping::Over { slow, .. } => slow,
        };
        if rate > 0.0 {
            40.0 / rate
        } else {
            f64::INFINITY
        }
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    /// The state at `t` as `at` wrote it before its per-piece rates were kept: the rates
    /// worked out again at every instant.
    fn straightforward_at(p: &Piece, l: f64, c: f64, t: f64) -> State {
        let (sin, cos) = (p.omega * t).sin_cos();
        let (ec, es) = p.homogeneous(t - p.t0);
        let c_inv = 1.0 / c;
        let di = ec * p.di0 + es * (-p.alpha * p.di0 - p.dv0 / l);
        let dv = ec * p.dv0 + es * (p.di0 * c_inv + p.alpha * p.dv0);
        State {
            i: p.ic * cos + p.is * sin + di,
            v: p.vc * cos + p.vs * sin + dv,
            u: p.amplitude_v * cos,
        }
    }

    #[test]
    fn state_equals_the_straightforward_formula_to_the_bit() {
        let omega = 2.0 * std::f64::consts::PI * 50.0;
        let mut checked = 0;
        // Under-, near-critically and overdamped paths, from rest and from a charged state.
        for &(l, r, c) in &[
            (470e-6, 3.2, 47e-6),
            (470e-6, 12.7, 100e-6),
            (470e-6, 5.4, 100e-6),
            (1e-3, 0.0, 10e-6),
            (100e-6, 40.0, 1000e-6),
            (2.2e-3, 1.0, 22e-6),
        ] {
            for &(amplitude, t0, i0, v0) in &[
                (373.35, 0.0, 0.0, 0.0),
                (-325.0, 0.005, 3.0, 200.0),
                (127.0, 0.0123, 0.5, 150.0),
            ] {
                let p = Piece::new(amplitude, omega, l, r, c, t0, i0, v0).expect("a usable piece");
                for k in 0..400 {
                    let t = t0 + k as f64 * 2.7e-6 + (k * k) as f64 * 1e-9;
                    let (fast, slow) = (p.at(t), straightforward_at(&p, l, c, t));
                    assert_eq!(
                        [fast.i, fast.v, fast.u].map(f64::to_bits),
                        [slow.i, slow.v, slow.u].map(f64::to_bits),
                        "L {l}, R {r}, C {c}, t {t}"
                    );
                    checked += 1;
                }
            }
        }
        assert_eq!(checked, 6 * 3 * 400);
    }
}
