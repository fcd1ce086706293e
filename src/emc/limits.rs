//! Reading a conducted-emission limit line at one frequency. Nothing outside the table's
//! band is read: such a frequency is refused with the band in the message.

use super::rules::{Detector, LimitClass, LimitSegment, LimitTable};
use crate::spacing::{Step, show};

/// A frequency the limit table does not cover.
#[derive(Debug, Clone, PartialEq)]
pub struct OutOfBand {
    pub message: String,
}

/// "150 kHz to 30 MHz" for a band given in hertz.
pub fn band_words(band: (f64, f64)) -> String {
    format!("{} to {}", frequency_words(band.0), frequency_words(band.1))
}

/// A frequency as a designer says it: "195 kHz", "5 MHz".
pub fn frequency_words(hz: f64) -> String {
    // The unit added to the number's own string (what `format!("{} MHz", ..)` writes,
    // without a second string).
    if hz >= 1e6 {
        show(hz / 1e6) + " MHz"
    } else if hz >= 1e3 {
        show(hz / 1e3) + " kHz"
    } else {
        show(hz) + " Hz"
    }
}

/// A frequency outside `band` in words that cannot read as the band's edge: 149,999.999 Hz
/// is "149999.999 Hz", never "150 kHz".
fn outside_words(hz: f64, band: (f64, f64)) -> String {
    let words = frequency_words(hz);
    // Rounded to 0.1 mHz, a tiny frequency would read "0 Hz".
    let rounds_to_zero = hz != 0.0 && hz.abs() < 1e-3;
    if rounds_to_zero
        || [band.0, band.1]
            .iter()
            .any(|&edge| edge != hz && frequency_words(edge) == words)
    {
        format!("{} Hz", crate::text::exact_number(hz))
    } else {
        words
    }
}

/// The limit in dBuV at `frequency_hz` for a class and detector, with the step that read it.
pub fn limit_dbuv(
    table: &LimitTable,
    class: LimitClass,
    detector: Detector,
    frequency_hz: f64,
) -> Result<(f64, Step), OutOfBand> {
    let reading = limit_reading(table, class, detector, frequency_hz)?;
    Ok((reading.value_dbuv, reading.step()))
}

/// A limit read from the table, its step not yet written: a caller comparing the limits of
/// several detectors writes the step of the one it keeps only ([`limit_dbuv`] writes it at
/// once).
pub struct LimitReading<'a> {
    pub value_dbuv: f64,
    table: &'a LimitTable,
    class: LimitClass,
    detector: Detector,
    frequency_hz: f64,
    segment: &'a LimitSegment,
    at_edge: bool,
}

/// [`limit_dbuv`] without its step (the same value, the same refusals).
pub fn limit_reading(
    table: &LimitTable,
    class: LimitClass,
    detector: Detector,
    frequency_hz: f64,
) -> Result<LimitReading<'_>, OutOfBand> {
    let band = table.band_hz();
    let refuse = || OutOfBand {
        message: format!(
            "{} is outside the band of the conducted-emission limits, {} (table {}); no limit is extrapolated",
            outside_words(frequency_hz, band),
            band_words(band),
            table.id
        ),
    };
    if !frequency_hz.is_finite() || frequency_hz < band.0 || frequency_hz > band.1 {
        return Err(refuse());
    }
    let Some(line) = table.line(class, detector) else {
        return Err(OutOfBand {
            message: format!(
                "table {} has no class {} {} line",
                table.id,
                class.as_str(),
                detector.as_str()
            ),
        });
    };
    // Where two segments meet, both contain the frequency; the lower limit applies.
    let Some(segment) = line
        .segments
        .iter()
        .filter(|s| s.from_hz <= frequency_hz && frequency_hz <= s.to_hz)
        .min_by(|a, b| a.at(frequency_hz).total_cmp(&b.at(frequency_hz)))
    else {
        return Err(refuse());
    };
    let at_edge = line
        .segments
        .iter()
        .filter(|s| s.from_hz <= frequency_hz && frequency_hz <= s.to_hz)
        .count()
        > 1;
    Ok(LimitReading {
        value_dbuv: segment.at(frequency_hz),
        table,
        class,
        detector,
        frequency_hz,
        segment,
        at_edge,
    })
}

impl LimitReading<'_> {
    /// The step that read the limit.
    pub fn step(&self) -> Step {
        let LimitReading {
            value_dbuv: value,
            table,
            class,
            detector,
            frequency_hz,
            segment,
            at_edge,
        } = *self;
        let how = if segment.from_dbuv == segment.to_dbuv {
            format!(
                "flat at {} dBuV from {} to {}",
                show(segment.from_dbuv),
                frequency_words(segment.from_hz),
                frequency_words(segment.to_hz)
            )
        } else {
            format!(
                "{a} - ({a} - {b}) x log10({f} / {f1}) / log10({f2} / {f1}) = {v} dBuV (linear in log f from {a} dBuV at {f1w} to {b} dBuV at {f2w})",
                a = show(segment.from_dbuv),
                b = show(segment.to_dbuv),
                f = show(frequency_hz),
                f1 = show(segment.from_hz),
                f2 = show(segment.to_hz),
                v = show(value),
                f1w = frequency_words(segment.from_hz),
                f2w = frequency_words(segment.to_hz),
            )
        };
        let edge = if at_edge {
            " At a transition frequency the lower limit applies."
        } else {
            ""
        };
        Step {
            rule: Some(table.id.clone()),
            text: [
                "Class ",
                class.as_str(),
                " ",
                detector.as_str(),
                " limit at ",
                &frequency_words(frequency_hz),
                ": ",
                &how,
                ".",
                edge,
            ]
            .concat(),
        }
    }
}
