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
    if !text.chars().any(is_hazardous) {
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

/// A number for a message, exactly as stored (shortest form that reads back the same),
/// in scientific notation where plain digits would be unreadable: 1e300, 5e-324.
pub fn exact_number(x: f64) -> String {
    if !x.is_finite() {
        return format!("{x}");
    }
    if x == 0.0 {
        return "0".to_string();
    }
    let a = x.abs();
    if !(1e-6..1e15).contains(&a) {
        format!("{x:e}")
    } else {
        format!("{x}")
    }
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
    fn a_value_is_never_printed_as_its_bound() {
        let kilo = |x: f64| format!("{}", (x / 1e3 * 1e4).round() / 1e4);
        assert_eq!(apart(149_999.999, &[150_000.0], kilo), "149999.999");
        assert_eq!(apart(140_000.0, &[150_000.0], kilo), "140");
    }
}
