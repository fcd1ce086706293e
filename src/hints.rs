//! Suggestions for common mistakes, as small functions from what was written to what was
//! probably meant, so that any reader (hand-written or serde) can attach them to its
//! message: a numeral where a Roman word is expected (`protection_class = 2` means "II",
//! `material_group = "3a"` means "IIIa"), and a misspelt key in a house rule file.

use crate::diag::suggest;

/// The word among `words` that `written` stands for when it was written as an Arabic
/// numeral (`2`, `"3a"`) or in the wrong letter case (`"iiia"`), if there is one.
/// `written` is the value as the file gives it, without quotes.
pub fn word_for<'a>(written: &str, words: &[&'a str]) -> Option<&'a str> {
    let compact: String = written
        .chars()
        .filter(|c| !c.is_whitespace() && *c != '-' && *c != '_')
        .collect();
    // Letter case: "iiia" for "IIIa".
    if let Some(w) = words.iter().find(|w| w.eq_ignore_ascii_case(&compact)) {
        return Some(w);
    }
    // A numeral, with an optional letter: 2 -> II, 3a -> IIIa, 4 -> IV; 2.0 counts as 2.
    let digits: String = compact.chars().take_while(|c| c.is_ascii_digit()).collect();
    let mut rest = &compact[digits.len()..];
    if let Some(zeros) = rest.strip_prefix('.')
        && zeros.chars().all(|c| c == '0')
    {
        rest = "";
    }
    let roman = match digits.parse::<u32>().ok()? {
        1 => "I",
        2 => "II",
        3 => "III",
        4 => "IV",
        _ => return None,
    };
    let meant = format!("{roman}{}", rest.to_ascii_lowercase());
    words
        .iter()
        .find(|w| w.eq_ignore_ascii_case(&meant))
        .copied()
}

/// The help line for a value that is not one of `words`: a numeral's Roman word first,
/// then the nearest spelling.
pub fn word_help(written: &str, words: &[&str], quoted: bool) -> Option<String> {
    if let Some(w) = word_for(written, words) {
        return Some(if quoted {
            format!("did you mean \"{w}\"?")
        } else {
            format!("did you mean \"{w}\"? (a word, in quotes)")
        });
    }
    suggest(written, words).map(|best| format!("did you mean \"{best}\"?"))
}

/// From serde's "unknown field `severty`, expected one of `id`, `title`, ..." message:
/// the field written and, where one is close, the field probably meant.
pub fn unknown_field(message: &str) -> Option<(String, Option<String>)> {
    let rest = message.strip_prefix("unknown field `")?;
    let (field, rest) = rest.split_once('`')?;
    let expected: Vec<&str> = rest
        .split('`')
        .skip(1)
        .step_by(2)
        .filter(|s| !s.is_empty())
        .collect();
    let meant = suggest(field, &expected).map(str::to_string);
    Some((field.to_string(), meant))
}

/// The byte range of `key = ` at the start of a line at or after `from` in `text`: where
/// an unknown key stands inside the table that serde points at as a whole.
pub fn key_span(text: &str, from: usize, key: &str) -> Option<std::ops::Range<usize>> {
    let mut offset = text[..from.min(text.len())]
        .rfind('\n')
        .map_or(0, |i| i + 1);
    for line in text.get(offset..)?.split_inclusive('\n') {
        let trimmed = line.trim_start();
        let indent = line.len() - trimmed.len();
        if offset > from && trimmed.starts_with('[') {
            break;
        }
        if let Some(after) = trimmed.strip_prefix(key)
            && after.trim_start().starts_with('=')
        {
            let start = offset + indent;
            return Some(start..start + key.len());
        }
        offset += line.len();
    }
    None
}

#[cfg(test)]
mod tests {
    use super::*;

    const CLASS: &[&str] = &["I", "II", "III"];
    const GROUP: &[&str] = &["I", "II", "IIIa", "IIIb"];

    #[test]
    fn numerals_and_letter_case_map_to_the_roman_word() {
        assert_eq!(word_for("2", CLASS), Some("II"));
        assert_eq!(word_for("2.0", CLASS), Some("II"));
        assert_eq!(word_for("3a", GROUP), Some("IIIa"));
        assert_eq!(word_for("3B", GROUP), Some("IIIb"));
        assert_eq!(word_for("iiia", GROUP), Some("IIIa"));
        assert_eq!(word_for("3", GROUP), None, "III alone is no material group");
        assert_eq!(word_for("5", CLASS), None);
        assert_eq!(word_for("two", CLASS), None);
    }

    #[test]
    fn an_unknown_field_is_named_with_the_field_meant() {
        let m = "unknown field `severty`, expected one of `id`, `title`, `severity`, `over`";
        assert_eq!(
            unknown_field(m),
            Some(("severty".to_string(), Some("severity".to_string())))
        );
        assert_eq!(unknown_field("missing field `id`"), None);
    }

    #[test]
    fn the_key_is_found_inside_its_table() {
        let text = "[[check]]\nid = \"a\"\nseverty = \"warning\"\n[[check]]\nseverty = 1\n";
        let span = key_span(text, 0, "severty").expect("found");
        assert_eq!(&text[span.clone()], "severty");
        assert_eq!(span.start, text.find("severty").unwrap());
    }
}
