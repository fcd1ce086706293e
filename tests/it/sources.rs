//! Tests and rules cite only sources named in the repository: every bracketed citation tag
//! (`[N20]`, `[TI1]`, ...) used in a file under rules/ or tests/ is defined in
//! rules/SOURCES.md, and no test or rule file points at reference notes outside it.

use crate::common;
use common::*;

use std::collections::{BTreeMap, BTreeSet};
use std::path::{Path, PathBuf};

const SOURCES: &str = "rules/SOURCES.md";

/// Every text file under `dir` (recursively), skipping build output.
fn text_files(dir: &Path, out: &mut Vec<PathBuf>) {
    let Ok(entries) = std::fs::read_dir(dir) else {
        return;
    };
    for entry in entries.flatten() {
        let path = entry.path();
        if path.is_dir() {
            text_files(&path, out);
        } else if path
            .extension()
            .is_some_and(|x| ["rs", "toml", "md", "snap", "j2"].iter().any(|e| x == *e))
        {
            out.push(path);
        }
    }
}

/// The citation tags in a text: `[TAG]` with TAG a capital letter and up to five more
/// capitals or digits, standing after a space, an opening parenthesis, a comma or the start
/// of a line. That excludes code (`&[T]`, `part[U3]`, `prescan[N]`) and keys.
fn cited_tags(text: &str) -> Vec<(usize, String)> {
    let mut found = Vec::new();
    for (n, line) in text.lines().enumerate() {
        let bytes = line.as_bytes();
        let mut i = 0;
        while let Some(offset) = line[i..].find('[') {
            let start = i + offset;
            i = start + 1;
            let before_ok = start == 0 || matches!(bytes[start - 1], b' ' | b'(' | b',' | b'\t');
            let Some(len) = line[start + 1..].find(']') else {
                break;
            };
            let tag = &line[start + 1..start + 1 + len];
            let shaped = (1..=6).contains(&tag.len())
                && tag.as_bytes()[0].is_ascii_uppercase()
                && tag
                    .bytes()
                    .all(|b| b.is_ascii_uppercase() || b.is_ascii_digit());
            if before_ok && shaped {
                found.push((n + 1, tag.to_string()));
            }
        }
    }
    found
}

/// The tags rules/SOURCES.md defines: list items that open with the bracketed tag and
/// go on to describe the source.
fn defined_tags() -> BTreeMap<String, String> {
    let text = std::fs::read_to_string(root().join(SOURCES)).expect("rules/SOURCES.md exists");
    text.lines()
        .filter_map(|line| {
            let rest = line.strip_prefix("- [")?;
            let (tag, description) = rest.split_once(']')?;
            Some((tag.to_string(), description.trim().to_string()))
        })
        .collect()
}

fn short(path: &Path) -> String {
    path.strip_prefix(root())
        .unwrap_or(path)
        .display()
        .to_string()
}

#[test]
fn every_cited_source_tag_is_defined_in_rules_sources() {
    let defined = defined_tags();
    for expected in ["N20", "TI1", "W", "HA", "SE", "GM", "LF"] {
        assert!(
            defined.contains_key(expected),
            "{SOURCES} lacks [{expected}]"
        );
    }
    for (tag, description) in &defined {
        assert!(
            description.len() > 20,
            "{SOURCES}: [{tag}] is not described: {description:?}"
        );
    }
    let mut files = Vec::new();
    text_files(&root().join("rules"), &mut files);
    text_files(&root().join("tests"), &mut files);
    files.sort();
    let mut undefined = Vec::new();
    let mut cited = BTreeSet::new();
    for path in &files {
        let Ok(text) = std::fs::read_to_string(path) else {
            continue; // fixtures with bytes that are not UTF-8 on purpose
        };
        for (line, tag) in cited_tags(&text) {
            cited.insert(tag.clone());
            if !defined.contains_key(&tag) {
                undefined.push(format!("{}:{line}: [{tag}]", short(path)));
            }
        }
    }
    assert!(
        cited.contains("N20") && cited.contains("TI1"),
        "the scan found no citations at all: {cited:?}"
    );
    assert!(
        undefined.is_empty(),
        "citation tags not defined in {SOURCES} (add the source there, described plainly):\n{}",
        undefined.join("\n")
    );
}

#[test]
fn tests_and_rules_point_at_no_reference_notes_outside_the_repository() {
    // The reference notes the project started from live outside the repository; what the
    // tests rest on is restated in rules/SOURCES.md. Built from parts so this file does not
    // match itself.
    let outside = [
        format!("/work/{}/", "shared"),
        format!("{}.md", ["REFER", "ENCES"].concat()),
    ];
    let mut files = Vec::new();
    text_files(&root().join("rules"), &mut files);
    text_files(&root().join("tests"), &mut files);
    let mut hits = Vec::new();
    for path in &files {
        let Ok(text) = std::fs::read_to_string(path) else {
            continue;
        };
        for (n, line) in text.lines().enumerate() {
            if outside.iter().any(|o| line.contains(o.as_str())) {
                hits.push(format!("{}:{}: {}", short(path), n + 1, line.trim()));
            }
        }
    }
    assert!(
        hits.is_empty(),
        "cite {SOURCES} (or the published source) instead:\n{}",
        hits.join("\n")
    );
}

#[test]
fn the_tag_scanner_finds_citations_and_skips_code() {
    let text = "// Table F.8 (confirmed [N20]), spot checks [TI1], [TI3]\n\
                fn run<S>(args: &[S]) {} // part[U3] prescan[N] \"[X]\"\n\
                [W] at the start; lower [ab] and long [ABCDEFG] are not tags";
    let tags: Vec<String> = cited_tags(text).into_iter().map(|(_, t)| t).collect();
    assert_eq!(tags, ["N20", "TI1", "TI3", "W"]);
}
