//! The noise to beat when no prescan was taken: an estimate of the differential-mode and
//! common-mode levels at each switching harmonic inside the band, from plain numbers (the
//! converter's power, efficiency, bulk voltage, switching frequency and duty, the bulk
//! capacitor, the switch-node swing and its parasitic capacitance to earth).
//!
//! Waveform model: the converter draws from the bulk capacitor a rectangular pulse train of
//! height I_pk = P_out / (efficiency x V_bulk x D) and duty D at the switching frequency
//! (ramps, ringing, rise and fall times neglected: an upper bound at high frequencies). The
//! switch node swings by a rectangular pulse train of height V_swing and the same duty.
//! The n-th harmonic of a rectangular pulse train of height A and duty D has the peak
//! amplitude 2 A |sin(n pi D)| / (n pi) (Fourier series of a pulse train, any signals text).
//! Each harmonic is taken as a continuous sine, so the quasi-peak and average readings are
//! both its rms value (conservative: the bridge conducts only near the mains peaks).

use serde::Serialize;

use crate::spacing::show;

/// At most this many harmonics are evaluated (a switching frequency of 300 Hz or more).
pub const MAX_HARMONICS: u64 = 100_000;

/// Plain-number inputs of the estimate; units in the names.
#[derive(Debug, Clone, Copy, PartialEq, Serialize)]
pub struct ConverterFigures {
    pub output_w: f64,
    /// Efficiency as a fraction, above 0 and at most 1.
    pub efficiency: f64,
    /// Lowest bulk voltage at which the converter regulates.
    pub bulk_v: f64,
    pub switching_hz: f64,
    /// Maximum duty as a fraction, above 0 and below 1.
    pub max_duty: f64,
}

/// The bulk capacitor the converter draws its pulses from.
#[derive(Debug, Clone, Copy, PartialEq, Serialize)]
pub struct BulkCapacitor {
    pub capacitance_uf: f64,
    /// Equivalent series resistance (an upper bound is conservative: more noise reaches
    /// the line).
    pub esr_ohm: f64,
}

/// The common-mode path: the switch-node swing and its parasitic capacitance to earth.
#[derive(Debug, Clone, Copy, PartialEq, Serialize)]
pub struct CommonModePath {
    pub switch_node_swing_v: f64,
    pub parasitic_capacitance_pf: f64,
    /// Rise (and fall) time of the switch node: the trapezoid's spectrum is the
    /// rectangle's times |sin(x) / x|, x = pi n f t_r.
    pub rise_time_s: f64,
}

/// A harmonic whose |sin(n pi D)| (or trapezoid factor) is below this carries no noise:
/// a null of the spectrum, left out rather than shown at -200 dBuV.
pub const NULL_FRACTION: f64 = 1e-9;

/// |sin(x) / x| for x = pi n f t_r: the trapezoid's extra fall, 1 at x = 0.
pub fn trapezoid_factor(n: u64, switching_hz: f64, rise_time_s: f64) -> f64 {
    let x = std::f64::consts::PI * n as f64 * switching_hz * rise_time_s;
    if x.abs() < 1e-12 {
        1.0
    } else {
        (x.sin() / x).abs()
    }
}

/// The measuring network as the estimate sees it.
#[derive(Debug, Clone, Copy, PartialEq, Serialize)]
pub struct Network {
    /// Per line (differential-mode current flows through two of them in series).
    pub line_impedance_ohm: f64,
    /// Both lines in parallel, as common-mode current sees them.
    pub common_mode_impedance_ohm: f64,
}

/// One estimated harmonic.
#[derive(Debug, Clone, Copy, PartialEq, Serialize)]
pub struct Harmonic {
    pub number: u64,
    pub frequency_hz: f64,
    /// Peak amplitude of the source (A for differential mode, V for common mode).
    pub source_peak: f64,
    /// Peak current into the measuring network.
    pub network_current_a: f64,
    /// rms level at the measuring network's output.
    pub level_dbuv: f64,
}

/// Peak amplitude of the n-th harmonic of a rectangular pulse train of height `height`
/// and duty `duty`: 2 height |sin(n pi duty)| / (n pi).
pub fn pulse_harmonic_peak(height: f64, duty: f64, n: u64) -> f64 {
    let n = n as f64;
    2.0 * height * (n * std::f64::consts::PI * duty).sin().abs() / (n * std::f64::consts::PI)
}

/// The first and last harmonic numbers inside `band_hz` (inclusive), or `None` when no
/// harmonic falls inside; an error when there would be more than [`MAX_HARMONICS`].
pub fn harmonics_in_band(
    switching_hz: f64,
    band_hz: (f64, f64),
) -> Result<Option<(u64, u64)>, String> {
    if !(switching_hz.is_finite() && switching_hz > 0.0) {
        return Err(format!(
            "switching frequency {switching_hz} Hz: expected a finite figure above 0"
        ));
    }
    // A whisker of tolerance so that 2 x 75 kHz counts as 150 kHz.
    let first = (band_hz.0 / switching_hz - 1e-9).ceil().max(1.0);
    let last = (band_hz.1 / switching_hz + 1e-9).floor();
    if last < first {
        return Ok(None);
    }
    if last - first + 1.0 > MAX_HARMONICS as f64 {
        return Err(format!(
            "a switching frequency of {} Hz puts more than {MAX_HARMONICS} harmonics in the band; the estimate stops there",
            show(switching_hz)
        ));
    }
    Ok(Some((first as u64, last as u64)))
}

fn check_inputs(c: &ConverterFigures) -> Result<(), String> {
    let checks = [
        ("output_w", c.output_w, c.output_w > 0.0),
        (
            "efficiency",
            c.efficiency,
            c.efficiency > 0.0 && c.efficiency <= 1.0,
        ),
        ("bulk_v", c.bulk_v, c.bulk_v > 0.0),
        ("switching_hz", c.switching_hz, c.switching_hz > 0.0),
        ("max_duty", c.max_duty, c.max_duty > 0.0 && c.max_duty < 1.0),
    ];
    for (name, value, ok) in checks {
        if !(value.is_finite() && ok) {
            return Err(format!("{name} = {value} cannot be used by the estimate"));
        }
    }
    Ok(())
}

/// dBuV of the rms value of a sine of peak amplitude `peak_v`.
pub fn dbuv_of_peak(peak_v: f64) -> f64 {
    20.0 * (peak_v / std::f64::consts::SQRT_2 / 1e-6).log10()
}

/// Height of the rectangular input current pulse: P_out / (efficiency x V_bulk x D).
pub fn pulse_height_a(c: &ConverterFigures) -> f64 {
    c.output_w / (c.efficiency * c.bulk_v * c.max_duty)
}

/// Differential-mode harmonics inside the band. The n-th harmonic current splits between
/// the bulk capacitor (ESR + 1/(j w C)) and the two lines of the measuring network in
/// series (2 x 50 ohm); the level is that line current times one line's impedance.
pub fn differential_mode(
    c: &ConverterFigures,
    bulk: &BulkCapacitor,
    network: &Network,
    band_hz: (f64, f64),
) -> Result<Vec<Harmonic>, String> {
    check_inputs(c)?;
    if !(bulk.capacitance_uf.is_finite() && bulk.capacitance_uf > 0.0) {
        return Err(format!(
            "bulk capacitance {} uF cannot be used by the estimate",
            bulk.capacitance_uf
        ));
    }
    if !(bulk.esr_ohm.is_finite() && bulk.esr_ohm >= 0.0) {
        return Err(format!(
            "bulk ESR {} ohm cannot be used by the estimate",
            bulk.esr_ohm
        ));
    }
    let Some((first, last)) = harmonics_in_band(c.switching_hz, band_hz)? else {
        return Ok(Vec::new());
    };
    let height = pulse_height_a(c);
    let r_line = network.line_impedance_ohm;
    let capacitance_f = bulk.capacitance_uf * 1e-6;
    let mut out = Vec::with_capacity((last - first + 1) as usize);
    for n in first..=last {
        let f = n as f64 * c.switching_hz;
        let w = 2.0 * std::f64::consts::PI * f;
        // A null of the pulse train (n D whole) carries no noise: nothing to show.
        if (n as f64 * std::f64::consts::PI * c.max_duty).sin().abs() <= NULL_FRACTION {
            continue;
        }
        let source = pulse_harmonic_peak(height, c.max_duty, n);
        // Z_c = ESR - j / (w C); current divider Z_c / (Z_c + 2 R_line).
        let (zr, zi) = (bulk.esr_ohm, -1.0 / (w * capacitance_f));
        let z_mag = zr.hypot(zi);
        let sum_mag = (zr + 2.0 * r_line).hypot(zi);
        let line_current = source * z_mag / sum_mag;
        if line_current <= 0.0 {
            continue;
        }
        out.push(Harmonic {
            number: n,
            frequency_hz: f,
            source_peak: source,
            network_current_a: line_current,
            level_dbuv: dbuv_of_peak(line_current * r_line),
        });
    }
    Ok(out)
}

/// Common-mode harmonics inside the band: the switch-node swing (a trapezoid: the
/// rectangle's harmonic times |sin(x)/x|, x = pi n f t_r, so -40 dB/decade above
/// 1 / (pi t_r)) drives its parasitic
/// capacitance in series with the measuring network's common-mode impedance (25 ohm);
/// the level is that current times 25 ohm.
pub fn common_mode(
    c: &ConverterFigures,
    path: &CommonModePath,
    network: &Network,
    band_hz: (f64, f64),
) -> Result<Vec<Harmonic>, String> {
    check_inputs(c)?;
    if !(path.rise_time_s.is_finite() && path.rise_time_s >= 0.0) {
        return Err(format!(
            "switch_node_rise_time = {} s cannot be used by the estimate",
            path.rise_time_s
        ));
    }
    for (name, value) in [
        ("switch_node_swing_v", path.switch_node_swing_v),
        ("parasitic_capacitance_pf", path.parasitic_capacitance_pf),
    ] {
        if !(value.is_finite() && value > 0.0) {
            return Err(format!("{name} = {value} cannot be used by the estimate"));
        }
    }
    let Some((first, last)) = harmonics_in_band(c.switching_hz, band_hz)? else {
        return Ok(Vec::new());
    };
    let r_cm = network.common_mode_impedance_ohm;
    let capacitance_f = path.parasitic_capacitance_pf * 1e-12;
    let mut out = Vec::with_capacity((last - first + 1) as usize);
    for n in first..=last {
        let f = n as f64 * c.switching_hz;
        let w = 2.0 * std::f64::consts::PI * f;
        let trapezoid = trapezoid_factor(n, c.switching_hz, path.rise_time_s);
        if (n as f64 * std::f64::consts::PI * c.max_duty).sin().abs() <= NULL_FRACTION
            || trapezoid <= NULL_FRACTION
        {
            continue;
        }
        let source = pulse_harmonic_peak(path.switch_node_swing_v, c.max_duty, n) * trapezoid;
        let z_mag = r_cm.hypot(1.0 / (w * capacitance_f));
        let current = source / z_mag;
        if current <= 0.0 {
            continue;
        }
        out.push(Harmonic {
            number: n,
            frequency_hz: f,
            source_peak: source,
            network_current_a: current,
            level_dbuv: dbuv_of_peak(current * r_cm),
        });
    }
    Ok(out)
}
