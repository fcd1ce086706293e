//! Text and numbers on their way to a reader: characters that a terminal or a page would
//! act on instead of showing (control characters, bidirectional overrides, zero-width
//! characters) are made visible as `<U+XXXX>`, and numbers in messages are printed so that
//! they read true (never rounded onto a bound, never as 300 digits).

use std::borrow::Cow;

/// True for a character that must not reach a reader as itself: every C0 control except
/// newline and tab, DEL, every C1 control, and the format characters that reorder or hide
/// text (bidirectional embeddings, overrides, isolates and marks; zero-width spaces and
/// joiners; the byte-order mark; invisible operators; tag characters). Each of these can
/// clear a terminal, set its title, or make an id read as another one.
pub fn is_hazardous(c: char) -> bool {
    // Printable ASCII, newline and tab, the bulk of every report, in two comparisons: this
    // runs for every character written.
    let code = c as u32;
    if code < 0x7f {
        return code < 0x20 && c != '\n' && c != '\t';
    }
    matches!(c,
        '\u{0}'..='\u{8}'
        | '\u{b}'..='\u{1f}'
        | '\u{7f}'..='\u{9f}'
        | '\u{ad}'              // soft hyphen: invisible
        | '\u{34f}'             // combining grapheme joiner
        | '\u{61c}'             // Arabic letter mark (bidi)
        | '\u{115f}' | '\u{1160}' | '\u{3164}' | '\u{ffa0}' // Hangul fillers: blank
        | '\u{17b4}' | '\u{17b5}'
        | '\u{180b}'..='\u{180f}'
        | '\u{200b}'..='\u{200f}' // zero-width space, non-joiner, joiner; LRM, RLM
        | '\u{2028}'..='\u{202e}' // line and paragraph separators; LRE, RLE, PDF, LRO, RLO
        | '\u{2060}'..='\u{206f}' // word joiner, invisible operators, LRI, RLI, FSI, PDI, ...
        | '\u{feff}'            // zero-width no-break space (byte-order mark)
        | '\u{fff9}'..='\u{fffb}'
        | '\u{e0000}'..='\u{e007f}' // tag characters
    )
}

/// `<U+202E>` for one character.
fn marker(c: char) -> String {
    format!("<U+{:04X}>", c as u32)
}

/// The text with every hazardous character (see [`is_hazardous`]) shown as `<U+XXXX>`;
/// newlines and tabs are kept. For anything printed to a terminal or a page.
pub fn visible(text: &str) -> Cow<'_, str> {
    // Printable ASCII with newlines and tabs, most text, is decided a byte at a time.
    if text
        .bytes()
        .all(|b| (0x20..0x7f).contains(&b) || b == b'\n' || b == b'\t')
        || !text.chars().any(is_hazardous)
    {
        return Cow::Borrowed(text);
    }
    let mut out = String::with_capacity(text.len() + 16);
    for c in text.chars() {
        if is_hazardous(c) {
            out.push_str(&marker(c));
        } else {
            out.push(c);
        }
    }
    Cow::Owned(out)
}

/// As [`visible`], for text that must stay on one line (a file name, a key): newlines,
/// carriage returns and tabs are shown as `<U+000A>` and the like too, so that a name
/// cannot start a line of its own (a forged "error:" line on a terminal).
pub fn visible_line(text: &str) -> Cow<'_, str> {
    let breaks = |c: char| matches!(c, '\n' | '\r' | '\t');
    if !text.chars().any(|c| breaks(c) || is_hazardous(c)) {
        return Cow::Borrowed(text);
    }
    let mut out = String::with_capacity(text.len() + 16);
    for c in text.chars() {
        if breaks(c) || is_hazardous(c) {
            out.push_str(&marker(c));
        } else {
            out.push(c);
        }
    }
    Cow::Owned(out)
}

/// How a number is printed in text. One formatter serves every message, derivation and
/// report line; the modes differ only in how much is rounded away first.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum Digits {
    /// Exactly as stored (the shortest form that reads back the same), in scientific
    /// notation where plain digits would be unreadable: 1e300, 5e-324. For values a user
    /// wrote, quoted back in a message about them. Not finite: `NaN`, `inf`.
    Exact,
    /// Rounded to four decimals, no trailing zeros: the report's figures (millimetres,
    /// volts, decibels). Not finite: "not computed", never inf or NaN.
    FourDecimals,
    /// Six significant digits: in scientific notation below 0.001, whole from 10000, four
    /// decimals between. For the power-entry figures, which span microfarads to kiloamperes
    /// squared seconds. Not finite: `NaN`, `inf`.
    SixSignificant,
}

/// `x` as text in the given mode. Whatever the mode, zero prints as "0" (never "-0") and a
/// magnitude of 1e15 or more in scientific notation, not as hundreds of digits.
pub fn number(x: f64, digits: Digits) -> String {
    if !x.is_finite() {
        return match digits {
            // A figure that could not be computed is never printed as inf or NaN.
            Digits::FourDecimals => "not computed".to_string(),
            Digits::Exact | Digits::SixSignificant => format!("{x}"),
        };
    }
    let four_decimals = |x: f64| (x * 1e4).round() / 1e4;
    let x = match digits {
        Digits::Exact => x,
        Digits::FourDecimals => four_decimals(x),
        Digits::SixSignificant => {
            let x = six_significant(x);
            if x != 0.0 && x.abs() < 1e-3 {
                let s = format!("{x:.5e}");
                let (mantissa, exponent) = s.split_once('e').unwrap_or((&s, "0"));
                let mantissa = mantissa.trim_end_matches('0').trim_end_matches('.');
                return format!("{mantissa}e{exponent}");
            }
            if x.abs() >= 1e4 {
                x.round()
            } else {
                four_decimals(x)
            }
        }
    };
    if x == 0.0 {
        return "0".to_string();
    }
    // Only an exact value can still be this small; a rounded one is 0 or at least 1e-4.
    let plain_from = if digits == Digits::Exact { 1e-6 } else { 0.0 };
    if x.abs() >= 1e15 || x.abs() < plain_from {
        format!("{x:e}")
    } else {
        format!("{x}")
    }
}

/// A number for a message, exactly as stored: `number(x, Digits::Exact)`.
pub fn exact_number(x: f64) -> String {
    number(x, Digits::Exact)
}

/// A number as a designer writes it, the report's usual form:
/// `number(x, Digits::FourDecimals)`.
pub fn show(x: f64) -> String {
    number(x, Digits::FourDecimals)
}

/// Rounds to six significant digits, for text only (the report model keeps figures exact).
fn six_significant(x: f64) -> f64 {
    if !x.is_finite() || x == 0.0 {
        return x;
    }
    let magnitude = x.abs().log10().floor() as i32;
    let scale = 10f64.powi(5 - magnitude);
    let rounded = (x * scale).round() / scale;
    if rounded.is_finite() { rounded } else { x }
}

/// `value` as `shown` would print it, unless that would print it the same as one of
/// `bounds` while differing from it: then exactly (`exact_number`), so that a message such
/// as "150 kHz is outside the band 150 kHz to 30 MHz" cannot arise.
pub fn apart(value: f64, bounds: &[f64], shown: impl Fn(f64) -> String) -> String {
    let s = shown(value);
    if bounds.iter().any(|&b| b != value && shown(b) == s) {
        exact_number(value)
    } else {
        s
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn controls_and_bidi_become_visible_newlines_and_tabs_stay() {
        assert_eq!(visible("a\u{1b}]0;x\u{7}b"), "a<U+001B>]0;x<U+0007>b");
        assert_eq!(visible("id\u{202e}cba"), "id<U+202E>cba");
        assert_eq!(visible("a\u{200b}b\u{feff}"), "a<U+200B>b<U+FEFF>");
        assert_eq!(visible("a\u{9b}2J"), "a<U+009B>2J");
        assert_eq!(visible("line\n\tnext"), "line\n\tnext");
        assert_eq!(visible("crlf\r"), "crlf<U+000D>");
        assert!(matches!(visible("plain µF – ok"), Cow::Borrowed(_)));
    }

    #[test]
    fn exact_numbers_use_scientific_notation_at_the_extremes() {
        assert_eq!(exact_number(1e300), "1e300");
        assert_eq!(exact_number(5e-324), "5e-324");
        assert_eq!(exact_number(149_999.999), "149999.999");
        assert_eq!(exact_number(-0.0), "0");
    }

    #[test]
    fn one_formatter_three_modes() {
        // Worked by hand: 0.000123456789 to six significant digits is 0.000123457.
        assert_eq!(number(0.000123456789, Digits::SixSignificant), "1.23457e-4");
        assert_eq!(number(12_345.678, Digits::SixSignificant), "12346");
        // 3.14159265 -> 3.14159 (six significant) -> 3.1416 (four decimals).
        assert_eq!(number(3.14159265, Digits::SixSignificant), "3.1416");
        assert_eq!(number(3.14159265, Digits::FourDecimals), "3.1416");
        assert_eq!(number(3.14159265, Digits::Exact), "3.14159265");
        for digits in [Digits::Exact, Digits::FourDecimals, Digits::SixSignificant] {
            assert_eq!(number(1e20, digits), "1e20");
            assert_eq!(number(-0.0, digits), "0");
        }
        assert_eq!(number(f64::NAN, Digits::FourDecimals), "not computed");
        assert_eq!(number(f64::INFINITY, Digits::Exact), "inf");
    }

    #[test]
    fn a_value_is_never_printed_as_its_bound() {
        let kilo = |x: f64| format!("{}", (x / 1e3 * 1e4).round() / 1e4);
        assert_eq!(apart(149_999.999, &[150_000.0], kilo), "149999.999");
        assert_eq!(apart(140_000.0, &[150_000.0], kilo), "140");
    }
}
