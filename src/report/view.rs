//! What the Markdown and HTML report need besides the report model itself: where each
//! finding's section and derivation are (anchors and titles), a verdict for the table rows
//! the model judges only through findings (bridging parts, isolation pairs), and where the
//! EMC chart is. Built in Rust, so the templates still decide nothing; never in the JSON.

use serde::Serialize;

use super::Report;
use crate::checks::Severity;
use crate::spacing::Verdict;

/// Which page the templates are rendering: plain Markdown (links would not survive being
/// pasted into a review system, so places are named in words) or the HTML page (live
/// links and anchors on every barrier, finding and figure).
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum Page {
    Markdown,
    Html,
}

/// Options of a Markdown rendering.
#[derive(Debug, Clone, Default)]
pub struct MarkdownOptions {
    /// The EMC chart was written as an SVG file beside the report, under this name
    /// (relative to the report): the Markdown links it.
    pub chart_file: Option<String>,
}

/// A place in the report: its title in words and its anchor on the HTML page.
#[derive(Debug, Clone, Serialize)]
pub struct Place {
    pub title: String,
    pub anchor: String,
}

/// Where a finding sends its reader.
#[derive(Debug, Clone, Serialize)]
pub struct FindingPlaces {
    /// The finding's own anchor on the HTML page.
    pub anchor: String,
    /// The section that shows what it is about.
    pub section: Place,
    /// The figure's derivation (or the row that judges it), where one is known.
    pub derivation: Option<Place>,
}

#[derive(Debug, Clone, Serialize)]
pub struct View {
    pub html: bool,
    /// Markdown only: the SVG file of the EMC chart beside the report, to link.
    pub chart_file: Option<String>,
    /// The report has an EMC chart (HTML draws it).
    pub has_chart: bool,
    /// Parallel to `findings`.
    pub findings: Vec<FindingPlaces>,
    /// Parallel to `bridges`: "pass" where no blocking finding or warning names the part,
    /// "fail" where a blocking one does, "check" where only a warning does.
    pub bridge_verdicts: Vec<&'static str>,
    /// Parallel to `isolation.pairs`: "fail" where the weakest path does not provide the
    /// grade the protection class needs (or there is none) or one of its barriers fails;
    /// else the worst of its barriers' verdicts ("incomplete", "check-input", "pass").
    pub pair_verdicts: Vec<&'static str>,
    /// Checks that judged nothing and raised nothing (left out of the Markdown table).
    pub quiet_checks: usize,
    /// The design's name, revision and inputs hash for the printed page's running header.
    pub running_header: String,
}

/// An anchor made of the characters an HTML id and a URL fragment take as they are.
pub fn anchor_id(text: &str) -> String {
    text.chars()
        .map(|c| {
            if c.is_ascii_alphanumeric() || matches!(c, '-' | '_' | '.') {
                c.to_ascii_lowercase()
            } else {
                '-'
            }
        })
        .collect()
}

/// The anchor a heading gets on the HTML page: its text in lower case, letters, digits,
/// `-` and `_` kept, spaces as `-`, everything else dropped (the form GitHub uses too).
pub fn heading_slug(text: &str) -> String {
    let mut out = String::new();
    for c in text.chars().flat_map(char::to_lowercase) {
        if c.is_alphanumeric() || c == '-' || c == '_' {
            out.push(c);
        } else if c == ' ' {
            out.push('-');
        }
    }
    out
}

/// The word and symbol of a verdict, so that it never rests on colour alone.
pub fn verdict_label(word: &str) -> String {
    let symbol = match word {
        "pass" | "met" => "✓",
        "fail" | "not met" => "✗",
        "incomplete" => "○",
        "check-input" | "check" => "⚠",
        "not-judged" => "?",
        "not required" => "–",
        _ => return word.to_string(),
    };
    format!("{symbol} {word}")
}

fn place(title: &str, anchor: &str) -> Place {
    Place {
        title: title.to_string(),
        anchor: anchor.to_string(),
    }
}

/// The title and anchor of a power-entry figure's section, and the figure's own anchor.
fn power_entry_figure(report: &Report, verdict: &str) -> Option<Place> {
    let pe = report.power_entry.as_ref()?;
    let id = format!("power_entry.{verdict}");
    pe.sections.iter().find_map(|s| {
        s.figures.iter().find(|f| f.id == id).map(|f| Place {
            title: format!("{} ({})", f.title, s.title),
            anchor: format!("fig-{}", anchor_id(&f.id)),
        })
    })
}

fn emc_figure(verdict: &str) -> Option<Place> {
    let title = match verdict {
        "dm_corner_hz" => "differential-mode corner",
        "cm_corner_hz" => "common-mode corner",
        "y_capacitance_nf" => "declared Y capacitance",
        "points" => {
            return Some(place(
                "noise before and after the filter",
                "noise-before-and-after-the-filter",
            ));
        }
        "middlebrook" => {
            return Some(place(
                "Middlebrook's criterion",
                "filter-and-converter-middlebrooks-criterion",
            ));
        }
        _ => return None,
    };
    Some(Place {
        title: title.to_string(),
        anchor: format!("fig-emc.{}", anchor_id(verdict)),
    })
}

fn places(report: &Report, index: usize) -> FindingPlaces {
    let f = &report.findings[index];
    let context = report.finding_context.get(index);
    let over = context.map_or("", |c| c.over.as_str());
    let verdicts: &[String] = context.map_or(&[], |c| c.verdicts.as_slice());
    let area = f.id.split('.').next().unwrap_or("");
    let subject = f.subject.as_deref();
    let barrier_derivation = |id: &str| Place {
        title: format!("derivation of {id}"),
        anchor: format!("derivation-{}", heading_slug(id)),
    };
    let (section, derivation) = if over == "barriers" || (over.is_empty() && area == "barrier") {
        let derivation = subject
            .filter(|s| report.barriers.iter().any(|b| b.id == *s))
            .map(barrier_derivation);
        (place("Barriers", "barriers"), derivation)
    } else if over == "bridges" || area == "part" {
        let derivation = subject
            .and_then(|s| report.bridges.iter().position(|b| b.part == s))
            .map(|i| Place {
                title: format!(
                    "{} across {}",
                    report.bridges[i].part, report.bridges[i].barrier
                ),
                anchor: format!("part-{}", i + 1),
            });
        (place("Bridging parts", "bridging-parts"), derivation)
    } else if over == "isolation_pairs" || area == "isolation" {
        let derivation = report.isolation.as_ref().and_then(|iso| {
            let i = iso
                .pairs
                .iter()
                .position(|p| subject == Some(p.accessible.as_str()))?;
            Some(Place {
                title: format!("path to {}", iso.pairs[i].accessible),
                anchor: format!("pair-{}", i + 1),
            })
        });
        (place("Isolation", "isolation"), derivation)
    } else if over.starts_with("power_entry") || area == "power_entry" {
        let derivation = verdicts.iter().find_map(|v| power_entry_figure(report, v));
        (place("Power entry", "power-entry"), derivation)
    } else if over.starts_with("emc") || area == "emc" {
        let derivation = verdicts
            .iter()
            .find_map(|v| emc_figure(v))
            .or_else(|| Some(place("EMC derivation", "emc-derivation")));
        (place("Input EMC filter", "input-emc-filter"), derivation)
    } else if over == "input_warnings" || area == "input" {
        (place("Conditions", "conditions"), None)
    } else {
        (place("Open items", "open-items"), None)
    };
    FindingPlaces {
        anchor: format!("finding-{}", index + 1),
        section,
        derivation,
    }
}

/// The verdict of a bridging part's row: the worst finding that names it.
fn bridge_verdict(report: &Report, part: &str) -> &'static str {
    let mut verdict = "pass";
    for f in report
        .findings
        .iter()
        .filter(|f| f.subject.as_deref() == Some(part) && f.id.starts_with("part."))
    {
        match f.severity {
            Severity::Blocking => return "fail",
            Severity::Warning => verdict = "check",
            Severity::Note => {}
        }
    }
    verdict
}

/// CSS string text: every character but letters, digits and spaces as a CSS escape, so
/// that nothing from the project file can end the string or the stylesheet.
fn css_string(text: &str) -> String {
    let mut out = String::new();
    for c in crate::text::visible_line(text).chars() {
        if c.is_ascii_alphanumeric() || c == ' ' {
            out.push(c);
        } else {
            out.push_str(&format!("\\{:x} ", c as u32));
        }
    }
    out
}

pub fn build(report: &Report, page: Page, options: &MarkdownOptions) -> View {
    let html = page == Page::Html;
    let has_chart = report.emc.as_ref().is_some_and(crate::emc::has_chart);
    let pair_verdicts = report
        .isolation
        .as_ref()
        .map(|iso| {
            iso.pairs
                .iter()
                .map(|p| {
                    let Some(path) = &p.path else { return "fail" };
                    if p.provides_level < p.needs_level {
                        return "fail";
                    }
                    // The grade is enough; the path is only as good as its barriers.
                    let mut verdict = "pass";
                    for id in &path.barriers {
                        match report
                            .barriers
                            .iter()
                            .find(|b| &b.id == id)
                            .map(|b| b.verdict)
                        {
                            Some(Verdict::Fail) => return "fail",
                            Some(Verdict::Incomplete) => verdict = "incomplete",
                            Some(Verdict::CheckInput) if verdict == "pass" => {
                                verdict = "check-input"
                            }
                            _ => {}
                        }
                    }
                    verdict
                })
                .collect()
        })
        .unwrap_or_default();
    let revision = report.design.revision.as_deref().unwrap_or("not stated");
    let hash: String = report.inputs_sha256.chars().take(12).collect();
    View {
        html,
        chart_file: if html {
            None
        } else {
            options.chart_file.clone().filter(|_| has_chart)
        },
        has_chart,
        findings: (0..report.findings.len())
            .map(|i| places(report, i))
            .collect(),
        bridge_verdicts: report
            .bridges
            .iter()
            .map(|b| bridge_verdict(report, &b.part))
            .collect(),
        pair_verdicts,
        quiet_checks: report
            .checks
            .iter()
            .filter(|c| c.judged == 0 && c.raised == 0)
            .count(),
        running_header: css_string(&format!(
            "{} · revision {} · inputs SHA-256 {}…",
            report.design.name, revision, hash
        )),
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn slugs_follow_the_headings() {
        assert_eq!(
            heading_slug("Filter and converter (Middlebrook's criterion)"),
            "filter-and-converter-middlebrooks-criterion"
        );
        assert_eq!(heading_slug("Derivation: pri-sec"), "derivation-pri-sec");
        assert_eq!(
            anchor_id("power_entry.test_voltage.a b"),
            "power_entry.test_voltage.a-b"
        );
    }

    #[test]
    fn a_css_string_cannot_close_itself_or_the_style() {
        let s = css_string("a\"</style>\\ b");
        assert!(
            !s.contains('"') && !s.contains('<') && !s.contains("\\\\"),
            "{s}"
        );
        assert!(s.starts_with('a') && s.ends_with(" b"), "{s}");
    }

    #[test]
    fn every_verdict_has_a_symbol_and_its_word() {
        for (word, label) in [
            ("pass", "✓ pass"),
            ("fail", "✗ fail"),
            ("incomplete", "○ incomplete"),
            ("check-input", "⚠ check-input"),
            ("not-judged", "? not-judged"),
        ] {
            assert_eq!(verdict_label(word), label);
        }
    }
}
