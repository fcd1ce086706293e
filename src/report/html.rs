//! The HTML page made from the report's Markdown: one self-contained file (its stylesheet
//! embedded, no external resource) with an anchor on every heading, a table of contents,
//! verdicts coloured as well as worded, tickable checkboxes and print rules (page breaks
//! before the major sections, headings kept with what follows, a running header naming
//! the design, its revision and the inputs' hash).

use std::collections::VecDeque;

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

/// The opening tag of the span that colours a table cell or list item starting with a
/// verdict's symbol (its class `v-pass`, `v-fail`, ...).
fn verdict_span(text: &str) -> Option<&'static str> {
    let mut chars = text.chars();
    let span = match chars.next()? {
        '✓' => "<span class=\"v v-pass\">",
        '✗' => "<span class=\"v v-fail\">",
        '⚠' => "<span class=\"v v-check\">",
        '○' => "<span class=\"v v-incomplete\">",
        '?' => "<span class=\"v v-not-judged\">",
        _ => return None,
    };
    (chars.next() == Some(' ')).then_some(span)
}

/// Text for an HTML attribute or element: `&`, `<`, `>` and `"` as entities, in one pass.
fn escape(text: &str) -> String {
    let mut out = String::with_capacity(text.len());
    let mut copied = 0;
    for (i, b) in text.bytes().enumerate() {
        let entity = match b {
            b'&' => "&amp;",
            b'<' => "&lt;",
            b'>' => "&gt;",
            b'"' => "&quot;",
            _ => continue,
        };
        out.push_str(&text[copied..i]);
        out.push_str(entity);
        copied = i + 1;
    }
    out.push_str(&text[copied..]);
    out
}

/// A table of at most this many body rows is kept whole on a printed page; a longer one
/// breaks between rows, its header repeated.
const SHORT_TABLE_ROWS: usize = 16;

/// The parser's events with an anchor before every heading (its text's slug, made unique
/// as GitHub does), collecting the table of contents (second-level headings) on the way.
/// Events stream through; only a heading is held until its end, for its text.
struct Anchored<'a> {
    parser: Parser<'a>,
    /// A heading's events, held back after its anchor.
    held: VecDeque<Event<'a>>,
    used: Vec<String>,
    toc: Vec<(String, String)>,
}

impl<'a> Iterator for Anchored<'a> {
    type Item = Event<'a>;

    fn next(&mut self) -> Option<Event<'a>> {
        if let Some(event) = self.held.pop_front() {
            return Some(event);
        }
        let event = self.parser.next()?;
        let Event::Start(Tag::Heading {
            level, id: None, ..
        }) = &event
        else {
            return Some(event);
        };
        let level = *level;
        self.held.push_back(event);
        let mut text = String::new();
        for inner in self.parser.by_ref() {
            let end = matches!(inner, Event::End(TagEnd::Heading(_)));
            if let Event::Text(t) | Event::Code(t) = &inner {
                text.push_str(t);
            }
            self.held.push_back(inner);
            if end {
                break;
            }
        }
        let base = heading_slug(&text);
        let mut slug = base.clone();
        let mut n = 0;
        while self.used.contains(&slug) {
            n += 1;
            slug = format!("{base}-{n}");
        }
        // The anchor goes just before the heading (the heading's own markup stays plain
        // `<h2>Title</h2>`).
        let anchor = Event::Html(format!("<a id=\"{}\"></a>\n", escape(&slug)).into());
        if level == pulldown_cmark::HeadingLevel::H2 {
            self.toc.push((slug.clone(), text));
        }
        self.used.push(slug);
        Some(anchor)
    }
}

/// The page's events: the chart and board drawings at their markers, raw HTML other than
/// anchors shown as text, tickable checkboxes, verdicts coloured, and each table wrapped
/// in a block that says whether it is short. A table is held until its end, to count its
/// rows; any other event is turned into its replacements as it arrives.
struct Styled<'a> {
    events: Anchored<'a>,
    out: VecDeque<Event<'a>>,
    /// A table's events up to its end.
    table: Vec<Event<'a>>,
    chart: Option<String>,
    drawings: std::vec::IntoIter<Option<String>>,
    open_anchors: usize,
    verdict_open: bool,
    at_cell_start: bool,
    in_item: bool,
}

impl<'a> Iterator for Styled<'a> {
    type Item = Event<'a>;

    fn next(&mut self) -> Option<Event<'a>> {
        while self.out.is_empty() {
            let event = self.events.next()?;
            // Most events (text, paragraphs, emphasis, rows) pass as they are: only what
            // `style` changes or counts goes through it.
            if passes_through(&event, self.at_cell_start) {
                self.at_cell_start = false;
                return Some(event);
            }
            if !matches!(event, Event::Start(Tag::Table(_))) {
                self.style(event, 0);
                continue;
            }
            self.table.push(event);
            for inner in self.events.by_ref() {
                let end = matches!(inner, Event::End(TagEnd::Table));
                self.table.push(inner);
                if end {
                    break;
                }
            }
            let rows = self
                .table
                .iter()
                .filter(|e| matches!(e, Event::Start(Tag::TableRow)))
                .count();
            let mut table = std::mem::take(&mut self.table);
            for event in table.drain(..) {
                self.style(event, rows);
            }
            self.table = table;
        }
        self.out.pop_front()
    }
}

/// Whether `style` would pass `event` on unchanged, its only effect to end a cell's or
/// item's start (its last arm): anything but raw HTML, a task marker, a table's, cell's or
/// item's start or end, and the text that opens a cell or item.
fn passes_through(event: &Event, at_cell_start: bool) -> bool {
    match event {
        Event::Html(_) | Event::InlineHtml(_) | Event::TaskListMarker(_) => false,
        Event::Start(Tag::Table(_) | Tag::TableCell | Tag::Item) => false,
        Event::End(TagEnd::Table | TagEnd::TableCell | TagEnd::Item) => false,
        Event::Text(_) => !at_cell_start,
        _ => true,
    }
}

impl<'a> Styled<'a> {
    /// Queues what `event` becomes; `rows` is the body rows of the table it is in.
    fn style(&mut self, event: Event<'a>, rows: usize) {
        let out = &mut self.out;
        match event {
            // The EMC template marks where the chart goes; the SVG is gapwarden's own.
            // The board template marks each measured barrier's drawing; gapwarden's own SVG.
            Event::Html(text) | Event::InlineHtml(text) if text.trim() == BOARD_COMMENT => {
                if let Some(Some(svg)) = self.drawings.next() {
                    out.push_back(Event::Html(
                        format!("<figure class=\"board\">{svg}</figure>").into(),
                    ));
                }
            }
            Event::Html(text) | Event::InlineHtml(text) if text.trim() == CHART_COMMENT => {
                if let Some(svg) = self.chart.take() {
                    out.push_back(Event::Html(
                        format!("<figure class=\"chart\" id=\"emc-chart\">{svg}</figure>").into(),
                    ));
                }
            }
            // A heading's anchor (above), or the same from a template line: kept.
            Event::Html(text) if text.trim_end().strip_suffix("</a>").is_some_and(is_anchor) => {
                out.push_back(Event::Html(text));
            }
            Event::InlineHtml(text) if is_anchor(&text) => {
                self.open_anchors += 1;
                out.push_back(Event::InlineHtml(text));
            }
            Event::InlineHtml(text) if &*text == "</a>" && self.open_anchors > 0 => {
                self.open_anchors -= 1;
                out.push_back(Event::InlineHtml(text));
            }
            // Any other raw HTML (which no escaped project string can produce, and the
            // shipped templates do not write) is shown as text.
            Event::Html(text) | Event::InlineHtml(text) => out.push_back(Event::Text(text)),
            // Checkboxes a reviewer can tick on the page (and that print as boxes).
            Event::TaskListMarker(checked) => out.push_back(Event::InlineHtml(
                if checked {
                    "<input type=\"checkbox\" checked> "
                } else {
                    "<input type=\"checkbox\"> "
                }
                .into(),
            )),
            Event::Start(Tag::Table(_)) => {
                let class = if rows <= SHORT_TABLE_ROWS {
                    "<div class=\"table short\">\n"
                } else {
                    "<div class=\"table\">\n"
                };
                out.push_back(Event::Html(class.into()));
                out.push_back(event);
            }
            Event::End(TagEnd::Table) => {
                out.push_back(event);
                out.push_back(Event::Html("</div>\n".into()));
            }
            Event::Start(Tag::TableCell) | Event::Start(Tag::Item) => {
                self.at_cell_start = true;
                self.in_item = matches!(event, Event::Start(Tag::Item));
                out.push_back(event);
            }
            // A cell's verdict is coloured to the cell's end; an item's badge only.
            Event::Text(text) if self.at_cell_start => {
                self.at_cell_start = false;
                match verdict_span(&text) {
                    Some(span) if self.in_item => {
                        out.push_back(Event::InlineHtml(span.into()));
                        out.push_back(Event::Text(text));
                        out.push_back(Event::InlineHtml("</span>".into()));
                    }
                    // The symbol alone (its word follows in bold): coloured to the cell's end.
                    Some(span) if text.trim_end().chars().count() == 1 => {
                        self.verdict_open = true;
                        out.push_back(Event::InlineHtml(span.into()));
                        out.push_back(Event::Text(text));
                    }
                    // The symbol and its word, then perhaps a remark in brackets: only the
                    // verdict is coloured.
                    Some(span) => {
                        let (verdict, rest) = match text.find(" (") {
                            Some(at) => text.split_at(at),
                            None => (&*text, ""),
                        };
                        out.push_back(Event::InlineHtml(span.into()));
                        out.push_back(Event::Text(verdict.to_string().into()));
                        out.push_back(Event::InlineHtml("</span>".into()));
                        if !rest.is_empty() {
                            out.push_back(Event::Text(rest.to_string().into()));
                        }
                    }
                    None => out.push_back(Event::Text(text)),
                }
            }
            Event::End(TagEnd::TableCell) | Event::End(TagEnd::Item) => {
                self.at_cell_start = false;
                if self.verdict_open {
                    self.verdict_open = false;
                    out.push_back(Event::InlineHtml("</span>".into()));
                }
                out.push_back(event);
            }
            // An anchor or checkbox first in a cell or item does not end its start.
            other => {
                if !matches!(other, Event::InlineHtml(_)) {
                    self.at_cell_start = false;
                }
                out.push_back(other);
            }
        }
    }
}

/// The page's body from the Markdown, and its table of contents (second-level headings).
fn body(
    markdown: &str,
    chart: Option<String>,
    drawings: Vec<Option<String>>,
) -> (String, Vec<(String, String)>) {
    let options = Options::ENABLE_TABLES | Options::ENABLE_TASKLISTS;
    let mut styled = Styled {
        events: Anchored {
            parser: Parser::new_ext(markdown, options),
            held: VecDeque::new(),
            used: Vec::new(),
            toc: Vec::new(),
        },
        out: VecDeque::new(),
        table: Vec::new(),
        chart,
        drawings: drawings.into_iter(),
        open_anchors: 0,
        verdict_open: false,
        at_cell_start: false,
        in_item: false,
    };
    // The HTML is a little longer than its Markdown.
    let mut body = String::with_capacity(markdown.len() * 3 / 2);
    html::push_html(&mut body, &mut styled);
    (body, styled.events.toc)
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
    // The contents go before the first section, after the title block.
    let first = toc
        .first()
        .and_then(|(slug, _)| body.find(&format!("<a id=\"{}\"></a>", escape(slug))));
    let (before, after) = body.split_at(first.unwrap_or(body.len()));
    let title = escape(&crate::text::visible(title));
    let mut page = String::with_capacity(STYLE.len() + body.len() + 4096);
    page.push_str("<!DOCTYPE html>\n<html lang=\"en\">\n<head>\n<meta charset=\"utf-8\">\n<meta name=\"viewport\" content=\"width=device-width, initial-scale=1\">\n<title>");
    page.push_str(&title);
    page.push_str("</title>\n<style>\n");
    page.push_str(STYLE);
    page.push_str("@page { @top-left { content: \"");
    page.push_str(running_header);
    page.push_str("\"; } }\n</style>\n</head>\n<body>\n");
    page.push_str(before);
    if first.is_some() {
        page.push_str(
            "<nav class=\"toc\" aria-label=\"Contents\"><strong>Contents</strong>\n<ol>\n",
        );
        for (slug, text) in &toc {
            page.push_str("<li><a href=\"#");
            page.push_str(&escape(slug));
            page.push_str("\">");
            page.push_str(&escape(text));
            page.push_str("</a></li>\n");
        }
        page.push_str("</ol>\n</nav>\n");
    }
    page.push_str(after);
    page.push_str("</body>\n</html>\n");
    page
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

#[cfg(test)]
mod tests {
    use super::*;

    proptest::proptest! {
        #![proptest_config(proptest::prelude::ProptestConfig::with_cases(2000))]

        /// The one-pass escaping writes what four replacements in a row write.
        #[test]
        fn escaping_in_one_pass_agrees_with_four_replacements(
            text in "([a-z -]{0,6}|&|<|>|\"|'|&amp;|µ|✓){0,20}"
        ) {
            let replaced = text
                .replace('&', "&amp;")
                .replace('<', "&lt;")
                .replace('>', "&gt;")
                .replace('"', "&quot;");
            proptest::prop_assert_eq!(escape(&text), replaced);
        }
    }

    /// Each verdict's symbol, then a space, opens the span of its class; anything else none.
    #[test]
    fn a_verdict_symbol_opens_the_span_of_its_class() {
        assert_eq!(verdict_span("✓ pass"), Some("<span class=\"v v-pass\">"));
        assert_eq!(
            verdict_span("✗ **FAIL**"),
            Some("<span class=\"v v-fail\">")
        );
        assert_eq!(verdict_span("⚠ check"), Some("<span class=\"v v-check\">"));
        assert_eq!(
            verdict_span("○ incomplete"),
            Some("<span class=\"v v-incomplete\">")
        );
        assert_eq!(
            verdict_span("? not judged"),
            Some("<span class=\"v v-not-judged\">")
        );
        assert_eq!(verdict_span("✓pass"), None);
        assert_eq!(verdict_span("pass"), None);
    }
}
