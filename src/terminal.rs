//! The short summary `check` prints on a terminal instead of the full report: the verdict,
//! what blocks, what to look at, and where the full report is, coloured where colour is
//! wanted (`--color`, `NO_COLOR`). Scripts never see it: piped, or with `--format`, `check`
//! prints the full report.

use crate::checks::{Finding, Severity};
use crate::report::Report;
use crate::text::visible_line;

/// `--color`: whether the terminal summary is coloured.
#[derive(Debug, Clone, Copy, PartialEq, Eq, clap::ValueEnum)]
pub enum ColorChoice {
    /// On a terminal, unless NO_COLOR is set to a non-empty value
    Auto,
    /// Always, even with NO_COLOR set (an explicit request wins)
    Always,
    /// Never
    Never,
}

impl ColorChoice {
    /// Whether to colour: `always` wins over `NO_COLOR` (no-color.org asks that an explicit
    /// command-line choice override the variable); `auto` colours a terminal unless
    /// `no_color` (NO_COLOR set and not empty).
    pub fn enabled(self, terminal: bool, no_color: bool) -> bool {
        match self {
            ColorChoice::Always => true,
            ColorChoice::Never => false,
            ColorChoice::Auto => terminal && !no_color,
        }
    }
}

/// Findings of one severity listed before "and N more in the full report": a summary
/// that scrolls off the screen is no summary.
pub const MAX_LISTED: usize = 12;

/// ANSI styles, or nothing when colour is off.
struct Style {
    colour: bool,
}

impl Style {
    fn paint(&self, code: &str, text: &str) -> String {
        if self.colour {
            format!("\x1b[{code}m{text}\x1b[0m")
        } else {
            text.to_string()
        }
    }
    fn good(&self, t: &str) -> String {
        self.paint("1;32", t)
    }
    fn bad(&self, t: &str) -> String {
        self.paint("1;31", t)
    }
    fn warn(&self, t: &str) -> String {
        self.paint("1;33", t)
    }
    fn dim(&self, t: &str) -> String {
        self.paint("2", t)
    }
}

/// Where the full report is: written to a file (`-o`), or how to get one.
#[derive(Debug, Clone, Copy)]
pub enum ReportPlace<'a> {
    /// `-o FILE`: the report was written there.
    Written(&'a str),
    /// Nothing was written; `project` is the path as the user gave it.
    NotWritten { project: &'a str },
}

/// The summary, one screen at most. Every project string passes `visible_line`, so the
/// text is safe to print as it is (the only escapes in it are the colour codes).
/// Verdict and findings carry a word and a symbol, never colour alone.
pub fn terminal_summary(report: &Report, place: ReportPlace, colour: bool) -> String {
    let s = Style { colour };
    let mut out = String::new();
    let revision = report
        .design
        .revision
        .as_deref()
        .map(|r| format!(" (revision {})", visible_line(r)))
        .unwrap_or_default();
    out.push_str(&format!(
        "{}{revision}\n",
        visible_line(&report.design.name)
    ));
    if report.readiness.ready {
        out.push_str(&format!("{}\n", s.good("✓ READY FOR REVIEW")));
    } else {
        let state = visible_line(&report.readiness.state).to_uppercase();
        out.push_str(&format!("{}\n", s.bad(&format!("✗ {state}"))));
        // One sentence per failing condition ("1 blocking finding: ...").
        for reason in &report.readiness.reasons {
            out.push_str(&format!("  {} {}\n", s.bad("✗"), visible_line(reason)));
        }
    }
    let sum = &report.summary;
    out.push_str(&format!(
        "{}\n",
        s.dim(&format!(
            "{} barrier{}: {} pass, {} fail, {} incomplete, {} check input; {} blocking, {} warning{}, {} note{}",
            sum.barriers,
            plural(sum.barriers),
            sum.pass,
            sum.fail,
            sum.incomplete,
            sum.check_input,
            sum.blocking,
            sum.warning,
            plural(sum.warning),
            sum.note,
            plural(sum.note)
        ))
    ));
    let list = |out: &mut String, severity: Severity, heading: String, mark: String| {
        let found: Vec<&Finding> = report
            .findings
            .iter()
            .filter(|f| f.severity == severity)
            .collect();
        if found.is_empty() {
            return;
        }
        out.push_str(&format!("\n{heading} ({}):\n", found.len()));
        for f in found.iter().take(MAX_LISTED) {
            let subject = f
                .subject
                .as_deref()
                .map(|x| format!(" ({})", visible_line(x)))
                .unwrap_or_default();
            out.push_str(&format!(
                "  {mark} {}{subject}: {}\n",
                visible_line(&f.id),
                crate::text::round_figures(&visible_line(&f.message))
            ));
        }
        if found.len() > MAX_LISTED {
            out.push_str(&format!(
                "  ... and {} more in the full report\n",
                found.len() - MAX_LISTED
            ));
        }
    };
    list(
        &mut out,
        Severity::Blocking,
        s.bad("Blocking: fix before review"),
        s.bad("✗"),
    );
    list(
        &mut out,
        Severity::Warning,
        s.warn("Warnings: look at these"),
        s.warn("!"),
    );
    out.push('\n');
    match place {
        ReportPlace::Written(file) => {
            out.push_str(&format!("Full report: {}\n", visible_line(file)));
        }
        ReportPlace::NotWritten { project } => {
            let p = shell_word(&visible_line(project));
            out.push_str(&format!(
                "Full report: not written. Write it:  gapwarden check {p} -o report.md\n\
                 Print it:  add --format md (or html, json)\n\
                 Explain one figure or finding:  gapwarden explain {p} ITEM\n"
            ));
        }
    }
    out
}

fn plural(n: usize) -> &'static str {
    if n == 1 { "" } else { "s" }
}

/// A path as one shell word, quoted only where it needs to be.
fn shell_word(path: &str) -> String {
    let plain = |c: char| c.is_ascii_alphanumeric() || "-_./+,:@%".contains(c);
    if !path.is_empty() && path.chars().all(plain) {
        path.to_string()
    } else {
        format!("'{}'", path.replace('\'', "'\\''"))
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn always_overrides_no_color_and_auto_honours_it() {
        assert!(ColorChoice::Always.enabled(false, true));
        assert!(!ColorChoice::Never.enabled(true, false));
        assert!(ColorChoice::Auto.enabled(true, false));
        assert!(!ColorChoice::Auto.enabled(true, true));
        assert!(!ColorChoice::Auto.enabled(false, false));
    }

    #[test]
    fn a_path_with_spaces_is_quoted_for_the_shell() {
        assert_eq!(shell_word("a/b.toml"), "a/b.toml");
        assert_eq!(shell_word("my design.toml"), "'my design.toml'");
        assert_eq!(shell_word("it's.toml"), "'it'\\''s.toml'");
    }
}
