//! The report as a reviewer reads it (issue 14, "The report"): what is open comes first,
//! every judged figure carries a verdict in words and symbols, numbers carry at most four
//! significant digits, the HTML page is self-contained and prints cleanly, the Markdown
//! stays plain, and the EMC chart makes failing points stand out.

use crate::common::*;

const CLASS2: &str = "examples/class2-adapter.toml";
const CLASS1: &str = "examples/class1-appliance.toml";
const SHORT: &str = "tests/fixtures/short-clearance.toml";

/// Every design the layout tests read: both examples and fixtures that raise blocking
/// findings, estimate EMC noise, declare a filter or lack inputs.
const DESIGNS: &[&str] = &[
    CLASS2,
    CLASS1,
    SHORT,
    "tests/fixtures/emc-estimate.toml",
    "tests/fixtures/emc-prescan.toml",
    "tests/fixtures/emc-declared-filter.toml",
    "tests/fixtures/emc-y-above-limit.toml",
    "tests/fixtures/pe-adapter.toml",
    "tests/fixtures/pe-no-fuse.toml",
    "tests/fixtures/pe-class1-each-line.toml",
    "tests/fixtures/part-opto-thin-insulation.toml",
    "tests/fixtures/part-transformer-tape-layers.toml",
    "tests/fixtures/iso-class2-basic-only.toml",
    "tests/fixtures/iso-class2-creepage-not-measured.toml",
];

fn markdown(project: &str) -> String {
    let o = run(&["check", project]);
    assert!(matches!(code(&o), 0 | 1), "{project}: {}", describe(&o));
    stdout(&o)
}

fn html(project: &str) -> String {
    let o = run(&["check", project, "--format", "html"]);
    assert!(matches!(code(&o), 0 | 1), "{project}: {}", describe(&o));
    stdout(&o)
}

fn json(project: &str) -> serde_json::Value {
    let o = run(&["check", project, "--format", "json"]);
    serde_json::from_slice(&o.stdout).expect("JSON report")
}

/// Fenced code blocks and inline code spans left out: text, not figures.
fn prose(md: &str) -> String {
    let mut out = String::new();
    let mut fenced = false;
    for line in md.lines() {
        if line.starts_with("```") {
            fenced = !fenced;
            continue;
        }
        if fenced {
            continue;
        }
        // Inline code spans (hashes) are removed.
        let mut in_code = false;
        for c in line.chars() {
            if c == '`' {
                in_code = !in_code;
                continue;
            }
            if !in_code {
                out.push(c);
            }
        }
        out.push('\n');
    }
    out
}

/// Numbers standing on their own in `text` (not inside an id, a hash, a dotted version, a
/// standard's number such as `IEC 60664-1`), with the count of their significant digits:
/// leading zeros never count, trailing zeros of a whole number do not either (17200 Hz is
/// four significant digits, 0.0829 three).
fn figures_in(text: &str) -> Vec<(String, usize)> {
    let chars: Vec<char> = text.chars().collect();
    let mut out = Vec::new();
    let mut i = 0;
    while i < chars.len() {
        if !chars[i].is_ascii_digit() {
            i += 1;
            continue;
        }
        let start = i;
        while i < chars.len() && (chars[i].is_ascii_digit() || chars[i] == '.') {
            i += 1;
        }
        let token: String = chars[start..i].iter().collect();
        let token = token.trim_end_matches('.').to_string();
        let before = if start > 0 {
            Some(chars[start - 1])
        } else {
            None
        };
        let after = chars.get(start + token.chars().count()).copied();
        let glued = |c: Option<char>| {
            c.is_some_and(|c| c.is_alphanumeric() || matches!(c, '_' | '-' | ':' | '/' | '\\'))
        };
        let preceded_by = |word: &str| {
            let head: String = chars[..start].iter().collect();
            head.ends_with(word)
        };
        // A negative figure: "-0.99" after a space.
        let sign = before == Some('-')
            && (start < 2 || chars[start - 2].is_whitespace() || chars[start - 2] == '(');
        let standard = ["IEC ", "EN ", "CISPR ", "ISO ", "UL ", "IPC-", "IEC 6"]
            .iter()
            .any(|w| preceded_by(w));
        if (glued(before) && !sign) || glued(after) || token.matches('.').count() > 1 || standard {
            continue;
        }
        let digits: String = token.chars().filter(char::is_ascii_digit).collect();
        let significant = if token.contains('.') {
            digits.trim_start_matches('0').len()
        } else {
            digits.trim_start_matches('0').trim_end_matches('0').len()
        };
        out.push((token, significant));
    }
    out
}

#[test]
fn the_figure_scanner_counts_significant_digits_as_a_reader_does() {
    let found = figures_in(
        "35.5574 A, 0.0829 mA, 17200 Hz, 1000000 Ω, -0.99 dB, IEC 60664-1, EN 55032, CY1, 0.1.0",
    );
    let counts: Vec<usize> = found.iter().map(|(_, n)| *n).collect();
    // 35.5574: six; 0.0829: three; 17200: three; 1000000: one; -0.99: two. The standards'
    // numbers, the part reference and the version are not figures.
    assert_eq!(counts, [6, 3, 3, 1, 2], "{found:?}");
}

#[test]
fn no_markdown_number_has_more_than_four_significant_digits() {
    for project in DESIGNS {
        let md = markdown(project);
        let text = prose(&md);
        let long: Vec<String> = figures_in(&text)
            .into_iter()
            .filter(|(_, n)| *n > 4)
            .map(|(t, _)| t)
            .collect();
        assert!(
            long.is_empty(),
            "{project}: figures with more than four significant digits: {long:?}"
        );
    }
    // The issue's own examples: 35.5574 A of inrush (sqrt(2) x 264 V / 10.5 ohm = 35.557 A)
    // reads 35.56 A; the same figure stays whole in the JSON.
    let md = markdown("tests/fixtures/pe-adapter.toml");
    assert!(md.contains("35.56 A"), "{md}");
    assert!(!md.contains("35.5574"));
    let report = json("tests/fixtures/pe-adapter.toml");
    let peak = report["power_entry"]["inrush_peak_a"].as_f64().unwrap();
    assert!((peak - 2f64.sqrt() * 264.0 / 10.5).abs() < 1e-9, "{peak}");
}

#[test]
fn blocking_findings_and_warnings_come_before_the_barrier_table() {
    for project in [SHORT, CLASS2, "tests/fixtures/iso-class2-basic-only.toml"] {
        let report = json(project);
        let findings = report["findings"].as_array().unwrap();
        for page in [markdown(project), html(project)] {
            let barriers = page
                .find("Barriers</h2>")
                .or_else(|| page.find("\n## Barriers\n"))
                .expect("barrier section");
            let verdict = page.find("Ready for review").expect("readiness");
            assert!(verdict < barriers);
            let mut open = 0;
            for f in findings.iter().filter(|f| f["severity"] != "note") {
                let id = f["id"].as_str().unwrap();
                let shown = if page.starts_with("<!DOCTYPE") {
                    format!("<strong>{id}</strong>")
                } else {
                    format!("**{}**", id.replace('_', "\\_"))
                };
                let at = page
                    .find(&shown)
                    .unwrap_or_else(|| panic!("{project}: {id} missing"));
                assert!(
                    at > verdict && at < barriers,
                    "{project}: {id} after the barrier table"
                );
                open += 1;
            }
            if project == SHORT {
                assert!(open > 0, "the fixture raises a blocking finding");
            }
        }
    }
}

#[test]
fn each_open_item_links_its_section_and_derivation_on_the_html_page_and_names_them_in_markdown() {
    let page = html(SHORT);
    let md = markdown(SHORT);
    let report = json(SHORT);
    let blocking: Vec<&serde_json::Value> = report["findings"]
        .as_array()
        .unwrap()
        .iter()
        .filter(|f| {
            f["severity"] == "blocking" && f["id"].as_str().unwrap().starts_with("barrier.")
        })
        .collect();
    assert!(!blocking.is_empty());
    for f in blocking {
        let subject = f["subject"].as_str().unwrap();
        // The derivation's heading is "Derivation: <barrier>", its anchor derivation-<barrier>.
        let link = format!("href=\"#derivation-{subject}\"");
        assert!(page.contains(&link), "{link} missing");
        assert!(page.contains(&format!("id=\"derivation-{subject}\"")));
        assert!(
            md.contains(&format!("See Barriers; derivation of {subject}.")),
            "{md}"
        );
    }
}

/// Well-formedness of an HTML page as gapwarden writes it: every element closed in order
/// (void elements aside), attributes quoted.
fn html_parses(page: &str) -> Result<(), String> {
    const VOID: &[&str] = &["meta", "input", "br", "hr", "img", "link"];
    let body = page.strip_prefix("<!DOCTYPE html>").ok_or("no doctype")?;
    let mut stack: Vec<String> = Vec::new();
    let mut rest = body;
    while let Some(open) = rest.find('<') {
        rest = &rest[open + 1..];
        let close = rest.find('>').ok_or("unterminated tag")?;
        let tag = &rest[..close];
        rest = &rest[close + 1..];
        if let Some(name) = tag.strip_prefix('/') {
            let top = stack.pop().ok_or(format!("</{name}> with nothing open"))?;
            if top != name.trim() {
                return Err(format!("</{name}> closes <{top}>"));
            }
            continue;
        }
        let self_closing = tag.ends_with('/');
        let name: String = tag
            .chars()
            .take_while(|c| c.is_ascii_alphanumeric())
            .collect::<String>()
            .to_ascii_lowercase();
        if name.is_empty() {
            return Err(format!("bad tag <{tag}>"));
        }
        if tag.matches('"').count() % 2 != 0 {
            return Err(format!("unbalanced quotes in <{tag}>"));
        }
        if !self_closing && !VOID.contains(&name.as_str()) {
            stack.push(name);
        }
    }
    if stack.is_empty() {
        Ok(())
    } else {
        Err(format!("unclosed: {stack:?}"))
    }
}

#[test]
fn the_html_page_parses_is_self_contained_and_every_internal_link_lands() {
    for project in DESIGNS {
        let page = html(project);
        html_parses(&page).unwrap_or_else(|e| panic!("{project}: {e}"));
        let lower = page.to_ascii_lowercase();
        for external in [
            "http:", "https:", "src=", "<link", "<script", "@import", "url(", "//cdn",
        ] {
            let allowed = external == "http:"
                && lower.matches("http:").count()
                    == lower
                        .matches("xmlns=\"http://www.w3.org/2000/svg\"")
                        .count();
            assert!(
                allowed || !lower.contains(external),
                "{project}: external reference {external}"
            );
        }
        // Every link is to an anchor on the page, and the anchor exists.
        for part in page.split("href=\"").skip(1) {
            let target = &part[..part.find('"').unwrap()];
            let id = target
                .strip_prefix('#')
                .unwrap_or_else(|| panic!("{project}: link {target}"));
            assert!(
                page.contains(&format!("id=\"{id}\"")),
                "{project}: no anchor {id}"
            );
        }
    }
}

#[test]
fn the_html_page_carries_contents_anchors_print_rules_and_tickable_boxes() {
    let page = html(CLASS2);
    let report = json(CLASS2);
    assert!(page.contains("<nav class=\"toc\""));
    for heading in [
        "open-items",
        "barriers",
        "power-entry",
        "input-emc-filter",
        "derivations",
    ] {
        assert!(
            page.contains(&format!("href=\"#{heading}\"")),
            "contents lack {heading}"
        );
    }
    // Anchors on every barrier, finding and power-entry figure.
    for i in 1..=report["barriers"].as_array().unwrap().len() {
        assert!(page.contains(&format!("id=\"barrier-{i}\"")));
    }
    for i in 1..=report["findings"].as_array().unwrap().len() {
        assert!(page.contains(&format!("id=\"finding-{i}\"")));
    }
    for s in report["power_entry"]["sections"].as_array().unwrap() {
        for f in s["figures"].as_array().unwrap() {
            let id = f["id"].as_str().unwrap().to_ascii_lowercase();
            assert!(page.contains(&format!("id=\"fig-{id}\"")), "{id}");
        }
    }
    // Print: page breaks before the major sections, headings kept with what follows, and a
    // running header with the design, revision and the inputs' hash.
    assert!(page.contains("@media print"));
    assert!(page.contains("break-before: page"));
    assert!(page.contains("break-after: avoid-page"));
    let header = page.find("@top-left { content:").expect("running header");
    let header = &page[header..header + 300];
    // The design name is written with CSS escapes for everything but letters and digits.
    assert!(header.contains("Wall adapter 24 W"), "{header}");
    assert!(header.contains("revision B"), "{header}");
    let hash = &report["inputs_sha256"].as_str().unwrap()[..12];
    assert!(header.contains(hash), "{header}");
    // Checkboxes a reviewer can tick: none disabled.
    let boxes = page.matches("<input type=\"checkbox\"").count();
    assert_eq!(boxes, report["findings"].as_array().unwrap().len());
    assert!(!page.contains("disabled"));
}

#[test]
fn verdicts_are_words_and_symbols_in_every_table() {
    let md = markdown(CLASS2);
    // The hot restart exceeds the bridge's surge rating (64.08 A against 50 A).
    let row = md
        .lines()
        .find(|l| l.starts_with("| peak at a hot restart |"))
        .unwrap();
    assert!(row.ends_with("| ✗ fail |"), "{row}");
    let row = md
        .lines()
        .find(|l| l.starts_with("| inrush peak at switch-on"))
        .unwrap();
    assert!(row.ends_with("| ✓ pass |"), "{row}");
    let row = md.lines().find(|l| l.starts_with("| pri-sec |")).unwrap();
    assert!(row.ends_with("| ✓ **PASS** |"), "{row}");
    // EMC: the figure table and every point.
    for line in md
        .lines()
        .filter(|l| l.starts_with("| 195 |") || l.starts_with("| 390 |"))
    {
        assert!(
            line.ends_with("| ✗ fail |") || line.ends_with("| ✓ pass |"),
            "{line}"
        );
    }
    let row = md
        .lines()
        .find(|l| l.starts_with("| differential-mode corner, second order"))
        .unwrap();
    assert!(row.contains("| ✗ fail (declared"), "{row}");
    // Every cell of a verdict column is a word with its symbol, or "–" where nothing is
    // judged.
    let mut columns = 0;
    let mut verdict_col: Option<usize> = None;
    for line in md.lines() {
        if !line.starts_with('|') {
            verdict_col = None;
            continue;
        }
        // Cells split at every pipe that is not escaped.
        let mut cells: Vec<String> = vec![String::new()];
        let mut escaped = false;
        for c in line.chars() {
            if c == '|' && !escaped {
                cells.push(String::new());
            } else if let Some(cell) = cells.last_mut() {
                cell.push(c);
            }
            escaped = c == '\\' && !escaped;
        }
        let cells: Vec<&str> = cells[1..cells.len() - 1].iter().map(|c| c.trim()).collect();
        match verdict_col {
            None => {
                verdict_col = cells.iter().position(|c| *c == "verdict");
                if verdict_col.is_some() {
                    columns += 1;
                }
            }
            // The delimiter row.
            Some(_) if line.starts_with("|-") || line.starts_with("|:") => {}
            Some(i) => {
                let cell = cells[i];
                assert!(
                    cell == "–"
                        || ["✓ ", "✗ ", "⚠ ", "○ ", "? ", "– "]
                            .iter()
                            .any(|s| cell.starts_with(s)),
                    "verdict without a symbol: {cell} in {line}"
                );
            }
        }
    }
    assert!(columns >= 8, "tables with a verdict column: {columns}");
}

#[test]
fn the_checks_run_table_lists_what_judged_and_the_html_appendix_lists_all() {
    let report = json(CLASS2);
    let checks = report["checks"].as_array().unwrap();
    let quiet: Vec<&str> = checks
        .iter()
        .filter(|c| c["judged"] == 0 && c["raised"] == 0)
        .map(|c| c["id"].as_str().unwrap())
        .collect();
    assert!(
        !quiet.is_empty(),
        "the example has checks with nothing to judge"
    );
    let md = markdown(CLASS2);
    let start = md.find("\n## Checks run\n").unwrap();
    let end = start + 1 + md[start + 1..].find("\n## ").unwrap();
    let section = &md[start..end];
    for id in &quiet {
        let shown = format!("| {}:", id.replace('_', "\\_"));
        assert!(!section.contains(&shown), "{id} had nothing to judge");
        assert!(!md.contains(&shown), "{id} appears in the Markdown");
    }
    assert!(!section.contains("nothing to judge |"));
    let rows = section
        .lines()
        .filter(|l| l.starts_with("| ") && !l.starts_with("| check |"))
        .count();
    assert_eq!(rows, checks.len() - quiet.len());
    let page = html(CLASS2);
    let appendix = &page[page
        .find("id=\"appendix-every-check-of-the-checklist\"")
        .expect("appendix")..];
    for c in checks {
        assert!(
            appendix.contains(&format!("<td>{}:", c["id"].as_str().unwrap())),
            "{}",
            c["id"]
        );
    }
}

#[test]
fn the_markdown_has_no_html_only_placeholder_and_says_where_the_chart_is() {
    let md = markdown(CLASS2);
    assert!(!md.contains("gapwarden-emc-chart"));
    assert!(!md.contains("<!--"));
    assert!(md.contains("drawn in the HTML report"), "{md}");

    let dir = std::env::temp_dir().join(format!("gapwarden-chart-{}", std::process::id()));
    let _ = std::fs::remove_dir_all(&dir);
    std::fs::create_dir_all(&dir).unwrap();
    let out = dir.join("review copy.md");
    let o = run(&["check", CLASS2, "-o", out.to_str().unwrap()]);
    assert_exit(&o, 0);
    let written = std::fs::read_to_string(&out).unwrap();
    let svg = std::fs::read_to_string(dir.join("review copy.emc-chart.svg"))
        .expect("chart beside the report");
    assert!(svg.starts_with("<svg") && svg.contains("</svg>"));
    assert!(
        written.contains("](review%20copy.emc-chart.svg)"),
        "{written}"
    );
    assert!(!written.contains("drawn in the HTML report"));

    // One report a design with --out-dir: each Markdown report has its chart beside it.
    let batch = dir.join("batch");
    let o = run(&[
        "check",
        CLASS2,
        CLASS1,
        "--out-dir",
        batch.to_str().unwrap(),
    ]);
    assert!(matches!(code(&o), 0 | 1), "{}", describe(&o));
    let md = std::fs::read_to_string(batch.join("class2-adapter.md")).unwrap();
    assert!(md.contains("](class2-adapter.emc-chart.svg)"));
    assert!(batch.join("class2-adapter.emc-chart.svg").is_file());
    // The Class I example has no EMC table: no chart, no link.
    assert!(!batch.join("class1-appliance.emc-chart.svg").exists());
    let _ = std::fs::remove_dir_all(&dir);
}

#[test]
fn markdown_tables_stay_valid_github_tables() {
    for project in DESIGNS {
        let md = markdown(project);
        let mut header: Option<usize> = None;
        let mut fenced = false;
        for line in md.lines() {
            if line.starts_with("```") {
                fenced = !fenced;
            }
            if fenced || !line.starts_with('|') {
                header = None;
                continue;
            }
            let cells = line.matches('|').count() - line.matches("\\|").count();
            match header {
                None => header = Some(cells),
                Some(h) => assert_eq!(cells, h, "{project}: {line}"),
            }
        }
    }
}

#[test]
fn declared_ratings_keep_every_value_and_leave_no_dangling_separator() {
    // Regression: "test 5000 V rms; package 8 / 8 mm;  " lost the optocoupler's 0.4 mm
    // distance through insulation (examples/class2-adapter.toml, part U3) and ended in a
    // separator.
    let md = markdown(CLASS2);
    let row = md
        .lines()
        .find(|l| l.starts_with("| pri-sec | U3 |"))
        .expect("U3 row");
    assert!(row.contains("test 5000 V rms"), "{row}");
    assert!(row.contains("package clearance 8 / creepage 8 mm"), "{row}");
    assert!(row.contains("distance through insulation 0.4 mm"), "{row}");
    let row = md
        .lines()
        .find(|l| l.starts_with("| pri-sec | CY1 |"))
        .expect("CY1 row");
    assert!(row.contains("Y1; 1 nF; 250 V ac |"), "{row}");
    for project in DESIGNS {
        let md = markdown(project);
        for line in md.lines().filter(|l| l.starts_with('|')) {
            assert!(
                !line.contains("; |") && !line.contains(";  "),
                "{project}: {line}"
            );
        }
    }
}

#[test]
fn the_cautions_point_to_the_tables_where_they_are_and_the_readme_has_one_cautions_heading() {
    let md = markdown(CLASS2);
    assert!(!md.contains("Each table below"));
    let cautions = md.find("\n## Cautions\n").unwrap();
    let tables = md.find("\n## Rule tables\n").unwrap();
    assert!(
        tables < cautions,
        "the rule tables come before the cautions"
    );
    assert!(
        md[cautions..].contains("The list of rule tables in this report says how each was checked")
    );
    let readme = std::fs::read_to_string(root().join("README.md")).unwrap();
    assert_eq!(readme.matches("\n## Cautions\n").count(), 1);
}

#[test]
fn the_emc_chart_marks_failing_points_modes_and_the_margin_with_readable_labels() {
    use gapwarden::diag::Source;
    let chart_of = |name: &str| {
        let path = format!("tests/fixtures/{name}");
        let text = std::fs::read_to_string(root().join(&path)).unwrap();
        let report = gapwarden::report::check_source(&Source::new(path, text), &shipped_rules())
            .expect("checks");
        let emc = report.emc.expect("emc");
        (gapwarden::emc::chart_svg(&emc).expect("chart"), emc)
    };
    // The Class II example: the 195 kHz point is above the limit less the margin after the
    // filter (56.53 dBuV against 53.82 - 6 dBuV, CISPR 32 class B average at 195 kHz).
    let (svg, emc) = chart_of("../../examples/class2-adapter.toml");
    let failing = emc
        .points
        .iter()
        .filter(|p| p.verdict.as_str() == "fail")
        .count();
    assert!(failing > 0);
    // Failing points are red and crossed out (a cross of two lines each).
    assert!(svg.contains("#C81E1E"), "the failing colour");
    assert!(svg.contains("above it: fails"));
    assert!(svg.contains("less 6 dB margin"));
    // Labels at least 12 px.
    for part in svg.split("font-size=\"").skip(1) {
        let size: f64 = part[..part.find('"').unwrap()]
            .trim_end_matches("px")
            .parse()
            .unwrap();
        assert!(size >= 12.0, "label of {size} px");
    }
    // The vertical range fits the data: the highest level is under the top of the chart,
    // and the top is within 20 dB of it.
    let highest = emc
        .points
        .iter()
        .map(|p| p.level_dbuv)
        .fold(f64::MIN, f64::max);
    let ticks: Vec<f64> = svg
        .split('>')
        .filter_map(|s| s.split('<').next())
        .filter_map(|t| t.trim().parse::<f64>().ok())
        .collect();
    let top = ticks.iter().copied().fold(f64::MIN, f64::max);
    assert!(
        top >= highest && top - highest < 20.0,
        "top {top} for {highest}"
    );

    // emc-estimate: differential mode as circles, common mode as squares.
    let (svg, emc) = chart_of("emc-estimate.toml");
    let dm = emc
        .points
        .iter()
        .filter(|p| p.mode == "differential")
        .count();
    let cm = emc.points.iter().filter(|p| p.mode == "common").count();
    assert!(dm > 0 && cm > 0);
    // Each point before and after the filter, plus the legend's samples.
    assert!(svg.matches("<circle").count() >= 2 * dm, "circles");
    assert!(svg.matches("<rect").count() >= 2 * cm, "squares");
    assert!(svg.contains("differential mode") && svg.contains("common mode"));
}

#[test]
fn class2_adapter_report_html_snapshot() {
    let page = html(CLASS2);
    insta::assert_snapshot!("class2_adapter_report_html", page);
}

#[test]
fn short_clearance_report_md_snapshot() {
    let md = markdown(SHORT);
    insta::assert_snapshot!("short_clearance_report_md", md);
}

/// Characters for the escaping tests, each with what the Markdown escaping (`md_escape`)
/// and the terminal/page filter (`text::visible`) write for it, as their documentation
/// says: Markdown syntax gets a backslash, line breaks and tabs become spaces in a value,
/// control characters, bidirectional overrides and zero-width characters are shown as
/// `<U+XXXX>`, anything else is kept.
const ESCAPES: &[(char, &str, &str)] = &[
    ('a', "a", "a"),
    ('Z', "Z", "Z"),
    ('7', "7", "7"),
    (' ', " ", " "),
    ('.', ".", "."),
    ('-', "-", "-"),
    ('\\', "\\\\", "\\"),
    ('`', "\\`", "`"),
    ('*', "\\*", "*"),
    ('_', "\\_", "_"),
    ('[', "\\[", "["),
    (']', "\\]", "]"),
    ('<', "\\<", "<"),
    ('>', "\\>", ">"),
    ('|', "\\|", "|"),
    ('&', "\\&", "&"),
    ('#', "\\#", "#"),
    ('\n', " ", "\n"),
    ('\r', " ", "<U+000D>"),
    ('\t', " ", "\t"),
    ('\u{1}', "<U+0001>", "<U+0001>"),
    ('\u{1b}', "<U+001B>", "<U+001B>"),
    ('\u{7f}', "<U+007F>", "<U+007F>"),
    ('\u{85}', "<U+0085>", "<U+0085>"),
    ('\u{200b}', "<U+200B>", "<U+200B>"),
    ('\u{202e}', "<U+202E>", "<U+202E>"),
    ('\u{2066}', "<U+2066>", "<U+2066>"),
    ('\u{feff}', "<U+FEFF>", "<U+FEFF>"),
    ('µ', "µ", "µ"),
    ('–', "–", "–"),
    ('✗', "✗", "✗"),
    ('Ω', "Ω", "Ω"),
    ('日', "日", "日"),
    ('😀', "😀", "😀"),
];

mod escaping {
    use super::ESCAPES;
    use proptest::prelude::*;

    proptest! {
        #![proptest_config(ProptestConfig { cases: 256, .. ProptestConfig::default() })]

        #[test]
        fn markdown_escaping_writes_each_character_by_the_rules(
            picks in proptest::collection::vec(0..ESCAPES.len(), 0..48)
        ) {
            let text: String = picks.iter().map(|&i| ESCAPES[i].0).collect();
            let expected: String = picks.iter().map(|&i| ESCAPES[i].1).collect();
            prop_assert_eq!(gapwarden::report::md_escape(&text), expected);
        }

        #[test]
        fn visible_text_shows_hazardous_characters_and_keeps_the_rest(
            picks in proptest::collection::vec(0..ESCAPES.len(), 0..48)
        ) {
            let text: String = picks.iter().map(|&i| ESCAPES[i].0).collect();
            let expected: String = picks.iter().map(|&i| ESCAPES[i].2).collect();
            prop_assert_eq!(gapwarden::text::visible(&text).into_owned(), expected);
        }
    }
}

#[test]
fn a_house_templates_blank_lines_and_carriage_returns_are_tidied() {
    // Whatever whitespace a template leaves, the report has at most one blank line in a
    // row, no carriage return and exactly one newline at the end.
    let dir = std::env::temp_dir().join(format!("gapwarden-tidy-{}", std::process::id()));
    let _ = std::fs::remove_dir_all(&dir);
    std::fs::create_dir_all(&dir).expect("scratch folder");
    std::fs::write(
        dir.join("report.md.j2"),
        "# Checklist {{ design.name | id }}\r\n\n\n\n\nFirst\r\nsecond\n\n\n\n\n\nthird\n\n\n\n",
    )
    .expect("template written");
    let o = run(&[
        "check",
        CLASS2,
        "--templates",
        dir.to_str().expect("UTF-8 path"),
        "--format",
        "md",
    ]);
    let _ = std::fs::remove_dir_all(&dir);
    assert!(matches!(code(&o), 0 | 1), "{}", describe(&o));
    let md = stdout(&o);
    assert!(md.starts_with("# Checklist "), "{md}");
    assert!(!md.contains("\n\n\n"), "{md:?}");
    assert!(!md.contains('\r'), "{md:?}");
    assert!(md.ends_with("third\n"), "{md:?}");
    assert!(md.contains("\n\nFirst\nsecond\n\nthird\n"), "{md:?}");
}
