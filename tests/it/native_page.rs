//! The page written in Rust (`src/report/page/`) against the shipped templates, which stay
//! the documented definition of the layout: every project file under `tests/fixtures/` and
//! `examples/` that evaluates is rendered both ways, as plain Markdown (with and without the
//! EMC chart written beside it) and as the Markdown of the HTML page, and the two texts must
//! be the same to the byte. A change to the layout is made in both places; this test says
//! where they part.

use std::path::{Path, PathBuf};

use gapwarden::diag::Source;
use gapwarden::report::view::Page;
use gapwarden::report::{MarkdownOptions, Templates, Writer, check_source, render_page_with};
use gapwarden::rules::RuleBook;

use crate::common::root;

/// Every `.toml` file under `dir`, in a stable order.
fn project_files(dir: &Path, out: &mut Vec<PathBuf>) {
    let Ok(entries) = std::fs::read_dir(dir) else {
        return;
    };
    let mut paths: Vec<PathBuf> = entries.filter_map(|e| e.ok().map(|e| e.path())).collect();
    paths.sort();
    for path in paths {
        if path.is_dir() {
            project_files(&path, out);
        } else if path.extension().is_some_and(|e| e == "toml") {
            out.push(path);
        }
    }
}

/// The first line where two texts differ, with the line before it, for the failure message.
fn first_difference(native: &str, templates: &str) -> String {
    let a: Vec<&str> = native.lines().collect();
    let b: Vec<&str> = templates.lines().collect();
    let at = a
        .iter()
        .zip(&b)
        .position(|(x, y)| x != y)
        .unwrap_or(a.len().min(b.len()));
    let line = |v: &[&str], i: usize| v.get(i).copied().unwrap_or("<end of text>").to_string();
    format!(
        "line {}:\n  before:    {:?}\n  native:    {:?}\n  templates: {:?}\n  ({} lines native, {} lines templates)",
        at + 1,
        if at > 0 { line(&a, at - 1) } else { String::new() },
        line(&a, at),
        line(&b, at),
        a.len(),
        b.len()
    )
}

#[test]
fn the_native_page_is_the_templates_page_for_every_fixture_and_example() {
    let rules = RuleBook::shipped().expect("the shipped rules load");
    let templates = Templates::shipped();
    assert!(!templates.any_house(), "the shipped templates only");
    let mut files = Vec::new();
    project_files(&root().join("tests/fixtures"), &mut files);
    project_files(&root().join("examples"), &mut files);

    let chart = MarkdownOptions {
        chart_file: Some("report-emc.svg".to_string()),
    };
    let pages = [
        (Page::Markdown, MarkdownOptions::default()),
        (Page::Markdown, chart),
        (Page::Html, MarkdownOptions::default()),
    ];
    let mut rendered = Vec::new();
    let mut differences = Vec::new();
    for path in &files {
        let relative = path.strip_prefix(root()).unwrap_or(path);
        let name = relative.display().to_string();
        let Ok(text) = std::fs::read_to_string(path) else {
            continue;
        };
        // Files that do not evaluate (bad inputs, house rule tables) have no page.
        let Ok(report) = check_source(&Source::new(path.display().to_string(), text), &rules)
        else {
            continue;
        };
        for (page, options) in &pages {
            let render = |writer| {
                render_page_with(&report, &templates, *page, options, writer)
                    .unwrap_or_else(|p| panic!("{name} ({page:?}, {writer:?}) does not render: {p}"))
            };
            let native = render(Writer::Native);
            let interpreted = render(Writer::Templates);
            if native != interpreted {
                differences.push(format!(
                    "{name} ({page:?}, chart file {:?}): {}",
                    options.chart_file,
                    first_difference(&native, &interpreted)
                ));
            }
        }
        rendered.push(name);
    }
    assert!(
        differences.is_empty(),
        "the native page differs from the templates' in {} page(s):\n{}",
        differences.len(),
        differences.join("\n\n")
    );
    // The fixtures cover every section: a board, EMC prescan and estimate, power entry,
    // IEC 60601-1 means of protection, bridging parts, hostile names.
    for must in [
        "examples/class2-adapter.toml",
        "examples/class2-adapter-board.toml",
        "examples/medical-supply.toml",
        "tests/fixtures/hostile-names.toml",
        "tests/fixtures/emc-estimate.toml",
        "tests/fixtures/pe-adapter.toml",
        "tests/fixtures/iso-no-barrier.toml",
    ] {
        assert!(
            rendered.iter().any(|r| r == must),
            "{must} was not rendered (rendered: {rendered:?})"
        );
    }
    assert!(rendered.len() >= 40, "only {} projects rendered", rendered.len());
}
