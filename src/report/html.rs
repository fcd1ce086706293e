//! The HTML page made from the report's Markdown: one self-contained file (its stylesheet
//! embedded, no external resource) with an anchor on every heading, a table of contents,
//! verdicts coloured as well as worded, tickable checkboxes and print rules (page breaks
//! before the major sections, headings kept with what follows, a running header naming
//! the design, its revision and the inputs' hash).

use pulldown_cmark::{Event, Options, Parser, Tag, TagEnd, html};

use super::render::{BOARD_COMMENT, CHART_COMMENT};
use super::view::heading_slug;

/// An anchor the templates place on the HTML page (`anchor()`): exactly this form, with an
/// id of letters, digits, `-`, `_` and `.`. Nothing else raw reaches the page.
fn is_anchor(text: &str) -> bool {
    text.strip_prefix("<a id=\"")
        .and_then(|rest| rest.strip_suffix("\">"))
        .is_some_and(|id| {
            !id.is_empty()
                && id
                    .chars()
                    .all(|c| c.is_ascii_alphanumeric() || matches!(c, '-' | '_' | '.'))
        })
}

/// The class of a table cell or list item that starts with a verdict's symbol.
fn verdict_class(text: &str) -> Option<&'static str> {
    let mut chars = text.chars();
    let class = match chars.next()? {
        '✓' => "pass",
        '✗' => "fail",
        '⚠' => "check",
        '○' => "incomplete",
        '?' => "not-judged",
        _ => return None,
    };
    (chars.next() == Some(' ')).then_some(class)
}

fn escape(text: &str) -> String {
    text.replace('&', "&amp;")
        .replace('<', "&lt;")
        .replace('>', "&gt;")
        .replace('"', "&quot;")
}

/// A table of at most this many body rows is kept whole on a printed page; a longer one
/// breaks between rows, its header repeated.
const SHORT_TABLE_ROWS: usize = 16;

/// The page's body from the Markdown, and its table of contents (second-level headings).
fn body(
    markdown: &str,
    chart: Option<String>,
    drawings: Vec<Option<String>>,
) -> (String, Vec<(String, String)>) {
    let options = Options::ENABLE_TABLES | Options::ENABLE_TASKLISTS;
    let mut chart = chart;
    let mut drawings = drawings.into_iter();
    let mut events: Vec<Event> = Vec::new();
    let mut used: Vec<String> = Vec::new();
    let mut toc = Vec::new();
    // Headings first: each gets the anchor of its text (made unique as GitHub does).
    let parsed: Vec<Event> = Parser::new_ext(markdown, options).collect();
    let mut i = 0;
    while i < parsed.len() {
        if let Event::Start(Tag::Heading {
            level,
            id: None,
            classes,
            attrs,
        }) = &parsed[i]
        {
            let mut text = String::new();
            let mut j = i + 1;
            while j < parsed.len() && !matches!(parsed[j], Event::End(TagEnd::Heading(_))) {
                if let Event::Text(t) | Event::Code(t) = &parsed[j] {
                    text.push_str(t);
                }
                j += 1;
            }
            let base = heading_slug(&text);
            let mut slug = base.clone();
            let mut n = 0;
            while used.contains(&slug) {
                n += 1;
                slug = format!("{base}-{n}");
            }
            used.push(slug.clone());
            if *level == pulldown_cmark::HeadingLevel::H2 {
                toc.push((slug.clone(), text));
            }
            // The anchor goes just before the heading (the heading's own markup stays
            // plain `<h2>Title</h2>`).
            events.push(Event::Html(
                format!("<a id=\"{}\"></a>\n", escape(&slug)).into(),
            ));
            events.push(Event::Start(Tag::Heading {
                level: *level,
                id: None,
                classes: classes.clone(),
                attrs: attrs.clone(),
            }));
        } else {
            events.push(parsed[i].clone());
        }
        i += 1;
    }
    // Rows of each table, in order: a short table is kept whole on a printed page.
    let mut table_rows: Vec<usize> = Vec::new();
    for e in &events {
        match e {
            Event::Start(Tag::Table(_)) => table_rows.push(0),
            Event::Start(Tag::TableRow) => {
                if let Some(n) = table_rows.last_mut() {
                    *n += 1;
                }
            }
            _ => {}
        }
    }
    let mut tables = table_rows.into_iter();
    let mut out_events: Vec<Event> = Vec::with_capacity(events.len());
    let mut open_anchors = 0usize;
    let mut verdict_open = false;
    let mut at_cell_start = false;
    let mut in_item = false;
    for event in events {
        match event {
            // The EMC template marks where the chart goes; the SVG is gapwarden's own.
            // The board template marks each measured barrier's drawing; gapwarden's own SVG.
            Event::Html(text) | Event::InlineHtml(text) if text.trim() == BOARD_COMMENT => {
                if let Some(Some(svg)) = drawings.next() {
                    out_events.push(Event::Html(
                        format!("<figure class=\"board\">{svg}</figure>").into(),
                    ));
                }
            }
            Event::Html(text) | Event::InlineHtml(text) if text.trim() == CHART_COMMENT => {
                if let Some(svg) = chart.take() {
                    out_events.push(Event::Html(
                        format!("<figure class=\"chart\" id=\"emc-chart\">{svg}</figure>").into(),
                    ));
                }
            }
            // A heading's anchor (above), or the same from a template line: kept.
            Event::Html(text) if text.trim_end().strip_suffix("</a>").is_some_and(is_anchor) => {
                out_events.push(Event::Html(text));
            }
            Event::InlineHtml(text) if is_anchor(&text) => {
                open_anchors += 1;
                out_events.push(Event::InlineHtml(text));
            }
            Event::InlineHtml(text) if &*text == "</a>" && open_anchors > 0 => {
                open_anchors -= 1;
                out_events.push(Event::InlineHtml(text));
            }
            // Any other raw HTML (which no escaped project string can produce, and the
            // shipped templates do not write) is shown as text.
            Event::Html(text) | Event::InlineHtml(text) => out_events.push(Event::Text(text)),
            // Checkboxes a reviewer can tick on the page (and that print as boxes).
            Event::TaskListMarker(checked) => out_events.push(Event::InlineHtml(
                if checked {
                    "<input type=\"checkbox\" checked> "
                } else {
                    "<input type=\"checkbox\"> "
                }
                .into(),
            )),
            Event::Start(Tag::Table(_)) => {
                let class = if tables.next().unwrap_or(0) <= SHORT_TABLE_ROWS {
                    "table short"
                } else {
                    "table"
                };
                out_events.push(Event::Html(format!("<div class=\"{class}\">\n").into()));
                out_events.push(event);
            }
            Event::End(TagEnd::Table) => {
                out_events.push(event);
                out_events.push(Event::Html("</div>\n".into()));
            }
            Event::Start(Tag::TableCell) | Event::Start(Tag::Item) => {
                at_cell_start = true;
                in_item = matches!(event, Event::Start(Tag::Item));
                out_events.push(event);
            }
            // A cell's verdict is coloured to the cell's end; an item's badge only.
            Event::Text(text) if at_cell_start => {
                at_cell_start = false;
                match verdict_class(&text) {
                    Some(class) if in_item => {
                        out_events.push(Event::InlineHtml(
                            format!("<span class=\"v v-{class}\">").into(),
                        ));
                        out_events.push(Event::Text(text));
                        out_events.push(Event::InlineHtml("</span>".into()));
                    }
                    // The symbol alone (its word follows in bold): coloured to the cell's end.
                    Some(class) if text.trim_end().chars().count() == 1 => {
                        verdict_open = true;
                        out_events.push(Event::InlineHtml(
                            format!("<span class=\"v v-{class}\">").into(),
                        ));
                        out_events.push(Event::Text(text));
                    }
                    // The symbol and its word, then perhaps a remark in brackets: only the
                    // verdict is coloured.
                    Some(class) => {
                        let (verdict, rest) = match text.find(" (") {
                            Some(at) => text.split_at(at),
                            None => (&*text, ""),
                        };
                        out_events.push(Event::InlineHtml(
                            format!("<span class=\"v v-{class}\">").into(),
                        ));
                        out_events.push(Event::Text(verdict.to_string().into()));
                        out_events.push(Event::InlineHtml("</span>".into()));
                        if !rest.is_empty() {
                            out_events.push(Event::Text(rest.to_string().into()));
                        }
                    }
                    None => out_events.push(Event::Text(text)),
                }
            }
            Event::End(TagEnd::TableCell) | Event::End(TagEnd::Item) => {
                at_cell_start = false;
                if verdict_open {
                    verdict_open = false;
                    out_events.push(Event::InlineHtml("</span>".into()));
                }
                out_events.push(event);
            }
            // An anchor or checkbox first in a cell or item does not end its start.
            other => {
                if !matches!(other, Event::InlineHtml(_)) {
                    at_cell_start = false;
                }
                out_events.push(other);
            }
        }
    }
    let mut body = String::new();
    html::push_html(&mut body, out_events.into_iter());
    (body, toc)
}

/// The whole page.
pub fn page(
    markdown: &str,
    title: &str,
    running_header: &str,
    chart: Option<String>,
    drawings: Vec<Option<String>>,
) -> String {
    let (body, toc) = body(markdown, chart, drawings);
    let mut nav = String::from(
        "<nav class=\"toc\" aria-label=\"Contents\"><strong>Contents</strong>\n<ol>\n",
    );
    for (slug, text) in &toc {
        nav.push_str(&format!(
            "<li><a href=\"#{}\">{}</a></li>\n",
            escape(slug),
            escape(text)
        ));
    }
    nav.push_str("</ol>\n</nav>\n");
    // The contents go before the first section, after the title block.
    let first = toc
        .first()
        .and_then(|(slug, _)| body.find(&format!("<a id=\"{}\"></a>", escape(slug))));
    let body = match first {
        Some(at) => format!("{}{nav}{}", &body[..at], &body[at..]),
        None => body,
    };
    let title = escape(&crate::text::visible(title));
    format!(
        "<!DOCTYPE html>\n<html lang=\"en\">\n<head>\n<meta charset=\"utf-8\">\n<meta name=\"viewport\" content=\"width=device-width, initial-scale=1\">\n<title>{title}</title>\n<style>\n{STYLE}@page {{ @top-left {{ content: \"{running_header}\"; }} }}\n</style>\n</head>\n<body>\n{body}</body>\n</html>\n"
    )
}

/// The embedded stylesheet. Colours of our own; every verdict also carries its word and
/// symbol, so a black-and-white printout loses nothing.
const STYLE: &str = r#":root { --ink: #1d2327; --rule: #b8c2cc; --head: #e9eef2; }
body { font-family: system-ui, "DejaVu Sans", sans-serif; max-width: 76rem; margin: 1.5rem auto; padding: 0 1rem; line-height: 1.45; color: var(--ink); font-size: 15px; overflow-wrap: break-word; }
h1 { font-size: 1.6rem; margin-bottom: 0.5rem; }
h2 { font-size: 1.3rem; margin-top: 2rem; padding-bottom: 0.2rem; border-bottom: 2px solid var(--rule); }
h3 { font-size: 1.08rem; margin-top: 1.4rem; }
table { border-collapse: collapse; margin: 0.8rem 0; font-size: 0.9rem; }
th, td { border: 1px solid var(--rule); padding: 0.25rem 0.5rem; text-align: left; vertical-align: top; }
td[style*="right"] { min-width: 6rem; }
th { background: var(--head); }
code { font-size: 0.85rem; word-break: break-all; }
/* A hash alone in a cell: two lines of 32 digits, not a column of seven. */
td > code:only-child { display: inline-block; width: 32ch; font-size: 0.78rem; }
/* A rule file's path has no spaces: let it break so that the table fits the page. */
#rule-tables + h2 + .table td:nth-child(5) { overflow-wrap: anywhere; min-width: 8ch; }
pre { background: #f6f8fa; padding: 0.5rem 0.75rem; overflow-x: auto; }
blockquote { border-left: 4px solid #b3541e; margin: 1rem 0; padding: 0.25rem 1rem; background: #fbf3ee; }
li { margin: 0.2rem 0; }
ul:has(> li > input[type=checkbox]) { list-style: none; padding-left: 0.5rem; }
input[type=checkbox] { width: 1rem; height: 1rem; vertical-align: -0.15rem; margin-right: 0.35rem; }
a { color: #1f4e99; }
.v { font-weight: 600; padding: 0 0.3rem; border-radius: 3px; white-space: nowrap; -webkit-print-color-adjust: exact; print-color-adjust: exact; }
.v-pass { color: #135e2a; background: #dcf3e2; }
.v-fail { color: #9c1c12; background: #fbe0dd; }
.v-check { color: #7a4d00; background: #fff0c2; }
.v-incomplete { color: #3d4b5c; background: #e6ebf1; }
.v-not-judged { color: #3d4b5c; background: #eef0f3; }
nav.toc { border: 1px solid var(--rule); background: #f7f9fb; padding: 0.5rem 1rem; margin: 1rem 0; }
nav.toc ol { columns: 3; column-gap: 2rem; margin: 0.4rem 0 0; padding-left: 1.5rem; }
nav.toc li { margin: 0.1rem 0; break-inside: avoid; }
figure.chart { margin: 1rem 0; }
figure.chart svg { max-width: 100%; height: auto; }
@page { margin: 14mm 11mm 12mm 11mm; @bottom-right { content: "page " counter(page) " of " counter(pages); font: 8pt sans-serif; color: #555; } }
@page { @top-left { font: 8pt sans-serif; color: #555; } }
@media print {
  body { max-width: none; margin: 0; padding: 0; font-size: 9pt; line-height: 1.35; }
  table { font-size: 8.5pt; }
  th, td { padding: 0.15rem 0.35rem; }
  #power-entry + h2, #input-emc-filter + h2, #derivations + h2, #rule-tables + h2, #appendix-every-check-of-the-checklist + h2 { break-before: page; }
  h1, h2, h3, h4 { break-after: avoid-page; break-inside: avoid; }
  /* A short table is kept whole; a longer one breaks between rows, never right under its
     header, and the text that introduces a table or a list stays with it. */
  div.table.short { break-inside: avoid; }
  tbody tr:first-child { break-before: avoid; }
  p:has(+ div.table), p:has(+ ul), p:has(+ ol), h3 + p { break-after: avoid; }
  tr, figure, pre, li { break-inside: avoid; }
  thead { display: table-header-group; }
  p { orphans: 3; widows: 3; }
  a { color: inherit; text-decoration: none; }
  /* Without page numbers a printed contents list is no help; page one is for what is open. */
  nav.toc { display: none; }
  figure.chart svg { max-width: 100%; }
  td > code:only-child { width: 22ch; }
}
"#;
