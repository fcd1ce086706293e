//! Rendering the report model: Markdown through a minijinja template, HTML from that
//! Markdown through pulldown-cmark, JSON through serde. Every string from the project
//! is escaped on its way into Markdown, and raw HTML never reaches the page.

use std::borrow::Cow;
use std::path::Path;
use std::sync::OnceLock;

use minijinja::value::{Value, ValueKind};
use minijinja::{Environment, Error, ErrorKind, State};

use super::Report;
use super::view::{self, MarkdownOptions, Page};
use crate::diag::{Diagnostic, Problems};
use crate::text::{figure, round_figures};

/// Every shipped template (`templates/*.j2`), embedded at build time by `build.rs`.
pub use shipped::SHIPPED_TEMPLATES;

mod shipped {
    include!(concat!(env!("OUT_DIR"), "/shipped_templates.rs"));
}

/// A template line holding only this text marks where the EMC chart goes in the HTML report.
pub const CHART_MARKER: &str = "gapwarden-emc-chart";

/// What a marker line becomes when the templates are loaded: an HTML comment. A string
/// from the project cannot produce it, because every `<` in one is escaped on its way into
/// the Markdown; only the comment (an HTML event, not text) is replaced by the chart.
pub const CHART_COMMENT: &str = "<!-- gapwarden-emc-chart -->";
/// A template line holding only this text marks where the next barrier's board drawing goes
/// in the HTML report (the board template writes one per measured barrier, in order).
pub const BOARD_MARKER: &str = "gapwarden-board-drawing";
pub const BOARD_COMMENT: &str = "<!-- gapwarden-board-drawing -->";

/// The template rendered first; it includes the others by name.
const TEMPLATE_NAME: &str = "report.md.j2";

/// Bounds on a house template's work, so that it cannot loop forever. The shipped
/// templates are not limited: their work grows with the report, and a large valid design
/// must not fail for want of an allowance.
const TEMPLATE_FUEL: u64 = 5_000_000;
/// The most a house template may write, in bytes.
pub const TEMPLATE_MAX_OUTPUT_BYTES: usize = 32 * 1024 * 1024;
const TEMPLATE_RECURSION: usize = 50;

/// The templates in use: the shipped ones, each replaced by a house copy of the same name
/// where a folder holds one.
pub struct Templates {
    /// (name, source, where it came from for messages); a shipped template's source is
    /// the binary's own text, not a copy.
    files: Vec<(String, Cow<'static, str>, String)>,
    /// The environment with every template parsed, built on first use: a JSON report never
    /// needs it (parsing is about a tenth of a whole run of the Class II example).
    env: OnceLock<Result<Environment<'static>, Problems>>,
    /// House templates in force (name, SHA-256 of the file as read), for the report's
    /// first lines.
    house: Vec<super::HouseFile>,
}

impl Templates {
    /// Whether any template in use came from a house folder rather than the binary.
    pub fn any_house(&self) -> bool {
        self.files
            .iter()
            .any(|(name, _, origin)| *origin != format!("templates/{name}"))
    }

    pub fn shipped() -> Self {
        let files: Vec<(String, Cow<'static, str>, String)> = SHIPPED_TEMPLATES
            .iter()
            .map(|(name, text)| {
                (
                    name.to_string(),
                    Cow::Borrowed(*text),
                    format!("templates/{name}"),
                )
            })
            .collect();
        Self::from_files(files)
    }

    /// The templates as read; their marker lines become comments only when they are parsed
    /// (`environment`), which the native page and a JSON report never need.
    fn from_files(files: Vec<(String, Cow<'static, str>, String)>) -> Self {
        Templates {
            files,
            env: OnceLock::new(),
            house: Vec::new(),
        }
    }

    /// Every template parsed (once, on first call).
    fn env(&self) -> &Result<Environment<'static>, Problems> {
        self.env.get_or_init(|| environment(self))
    }

    /// The shipped templates, with any of the same name in `dir` taking their place, all
    /// parsed now so that a broken house template stops the run before any design is read.
    /// Without house templates nothing is built: the page is written natively.
    pub fn load(dir: Option<&Path>) -> Result<Self, Problems> {
        let templates = Self::read(dir)?;
        if !templates.any_house() {
            return Ok(templates);
        }
        if let Err(problems) = templates.env() {
            return Err(problems.clone());
        }
        Ok(templates)
    }

    /// As `load`, but nothing is parsed until a report is rendered as Markdown or HTML:
    /// house templates are read and hashed (a JSON report names them), not compiled.
    pub fn read(dir: Option<&Path>) -> Result<Self, Problems> {
        let mut templates = Self::shipped();
        let Some(dir) = dir else {
            return Ok(templates);
        };
        if !dir.is_dir() {
            return Err(Diagnostic::new(
                &dir.display().to_string(),
                "is not a folder of templates",
            )
            .into());
        }
        let mut files = std::mem::take(&mut templates.files);
        let mut house = Vec::new();
        for (name, text, origin) in &mut files {
            let path = dir.join(&*name);
            // Anything of that name is read (a pipe or device is refused there, not skipped).
            if path.symlink_metadata().is_ok() {
                let shown = path.display().to_string();
                *text = Cow::Owned(crate::read_text(&path, &shown)?);
                *origin = shown;
                house.push(super::HouseFile {
                    file: name.clone(),
                    sha256: crate::sha256_hex(text.as_bytes()),
                    id: name.clone(),
                    effect: "replaced",
                    kind: "template",
                });
            }
        }
        let mut templates = Self::from_files(files);
        templates.house = house;
        Ok(templates)
    }
}

/// The house template files `load(Some(dir))` reads: those in `dir` named like a shipped
/// template. A report must never be written over one of them.
pub fn house_template_files(dir: &Path) -> Vec<std::path::PathBuf> {
    SHIPPED_TEMPLATES
        .iter()
        .map(|(name, _)| dir.join(name))
        .filter(|p| p.symlink_metadata().is_ok())
        .collect()
}

impl Templates {
    /// The house templates in force, each with its SHA-256.
    pub fn house(&self) -> &[super::HouseFile] {
        &self.house
    }
}

/// The report with the house templates in force recorded in its `house` section (the
/// report is built before the templates are known). Borrowed when there are none.
pub fn with_templates<'r>(report: &'r Report, templates: &Templates) -> Cow<'r, Report> {
    if templates.house.is_empty() {
        return Cow::Borrowed(report);
    }
    let mut report = report.clone();
    report.house.templates = templates.house.clone();
    report.house.in_force = true;
    Cow::Owned(report)
}

/// The report's first lines after the title, written by gapwarden rather than by the
/// template so that no house template can leave them out: readiness for review, and any
/// house rules and house templates in force with their SHA-256.
fn preamble(report: &Report) -> String {
    let e = md_escape;
    let r = &report.readiness;
    let mut out = String::new();
    if r.ready {
        out.push_str("**Ready for review: yes.** Nothing is blocking, no barrier is incomplete and no input looks implausible.\n");
    } else {
        let holds: Vec<String> = r
            .conditions
            .iter()
            .map(|c| {
                format!(
                    "{} ({})",
                    c.condition,
                    if c.holds { "holds" } else { "fails" }
                )
            })
            .collect();
        out.push_str(&format!(
            "**Ready for review: no ({}).** Ready needs {}.\n\n",
            e(&r.state),
            holds.join(", ")
        ));
        for reason in &r.reasons {
            out.push_str(&format!("- {}\n", e(&round_figures(reason))));
        }
    }
    let h = &report.house;
    if !h.rules.is_empty() {
        out.push_str(&format!(
            "\n**House rules in force: the shipped rules were changed.** {} table{} replaced, {} added; {} check{} changed, {} added{}.\n\n",
            h.tables_replaced,
            if h.tables_replaced == 1 { "" } else { "s" },
            h.tables_added,
            h.checks_changed,
            if h.checks_changed == 1 { "" } else { "s" },
            h.checks_added,
            if h.checks_removed > 0 {
                format!(", **{} removed**", h.checks_removed)
            } else {
                String::new()
            }
        ));
        for f in &h.rules {
            let what = match (f.kind, f.effect) {
                ("checks", _) => "house checks",
                (_, "replaced") => "house table replacing the shipped one",
                _ => "house table, new",
            };
            out.push_str(&format!(
                "- {} (id {}, {what}), SHA-256 {}\n",
                e(&f.file),
                e(&f.id),
                f.sha256
            ));
        }
    }
    if !h.templates.is_empty() {
        out.push_str(&format!(
            "\n**House templates in force: the shipped report layout was changed.** {} template{} replaced.\n\n",
            h.templates.len(),
            if h.templates.len() == 1 { "" } else { "s" }
        ));
        for f in &h.templates {
            out.push_str(&format!(
                "- house template {} (replaces the shipped one), SHA-256 {}\n",
                e(&f.file),
                f.sha256
            ));
        }
    }
    out
}

/// `text` with the preamble after its first line when that is a heading, else before it.
fn insert_preamble(text: &str, preamble: &str) -> String {
    let (head, rest) = match text.split_once('\n') {
        Some((first, rest)) if first.starts_with("# ") => (first, rest),
        _ => ("", text),
    };
    let mut out = String::with_capacity(text.len() + preamble.len() + 3);
    if !head.is_empty() {
        out.push_str(head);
        out.push_str("\n\n");
    }
    out.push_str(preamble);
    out.push('\n');
    out.push_str(rest);
    out
}

/// The template source with each line that holds only the chart marker turned into the
/// chart comment (template text, never a value the template prints).
fn mark_chart(text: &str) -> String {
    if !text.contains(CHART_MARKER) && !text.contains(BOARD_MARKER) {
        return text.to_string();
    }
    text.split_inclusive('\n')
        .map(|line| {
            let end = &line[line.trim_end().len()..];
            if line.trim() == CHART_MARKER {
                format!("{CHART_COMMENT}{end}")
            } else if line.trim() == BOARD_MARKER {
                format!("{BOARD_COMMENT}{end}")
            } else {
                line.to_string()
            }
        })
        .collect()
}

/// Escapes text for Markdown so that it renders as itself: no emphasis, link, table cell
/// break or HTML can come from it. Line breaks become spaces; other control characters,
/// bidirectional overrides and zero-width characters are shown as `<U+XXXX>`.
pub fn md_escape(text: &str) -> String {
    let mut out = String::with_capacity(text.len());
    // Writing to a String cannot fail.
    let _ = md_escape_to(text, &mut out);
    out
}

/// As [`md_escape`], written to `out`: runs of plain characters (most of every value) are
/// skipped eight bytes at a time and copied whole, and only the characters that change,
/// and those outside ASCII, are looked at one by one.
pub(super) fn md_escape_to<W: std::fmt::Write + ?Sized>(
    text: &str,
    out: &mut W,
) -> std::fmt::Result {
    escape_to(text, out, false)
}

/// `md_escape(&round_figures(text))` in one pass, written to `out`: a value of the page
/// (the templates' formatter). Rounding changes only numbers, into digits, a point and a
/// sign, which escaping leaves be; so each number is rounded where the scan meets it.
pub(super) fn md_escape_rounded_to<W: std::fmt::Write + ?Sized>(
    text: &str,
    out: &mut W,
) -> std::fmt::Result {
    escape_to(text, out, true)
}

fn escape_to<W: std::fmt::Write + ?Sized>(
    text: &str,
    out: &mut W,
    round: bool,
) -> std::fmt::Result {
    let bytes = text.as_bytes();
    let mut copied = 0;
    let mut i = 0;
    loop {
        i += if round {
            crate::text::markdown_prose_run(&bytes[i..])
        } else {
            crate::text::markdown_plain_run(&bytes[i..])
        };
        if i >= bytes.len() {
            break;
        }
        if round && bytes[i].is_ascii_digit() {
            let (end, figure) = crate::text::figure_at(text, i);
            if let Some(x) = figure {
                out.write_str(&text[copied..i])?;
                out.write_str(&crate::text::figure(x))?;
                copied = end;
            }
            i = end;
            continue;
        }
        let Some(c) = text[i..].chars().next() else {
            break;
        };
        let next = i + c.len_utf8();
        match c {
            '\r' | '\n' | '\t' => {
                out.write_str(&text[copied..i])?;
                out.write_char(' ')?;
                copied = next;
            }
            '\\' | '`' | '*' | '_' | '[' | ']' | '<' | '>' | '|' | '&' | '#' => {
                out.write_str(&text[copied..i])?;
                out.write_char('\\')?;
                out.write_char(c)?;
                copied = next;
            }
            // Not escaped: `<U+` cannot open an HTML tag, so it reads as written.
            c if c.is_control() || crate::text::is_hazardous(c) => {
                out.write_str(&text[copied..i])?;
                let mut buf = [0u8; 4];
                out.write_str(&crate::text::visible(c.encode_utf8(&mut buf)))?;
                copied = next;
            }
            _ => {}
        }
        i = next;
    }
    out.write_str(&text[copied..])
}

/// The rendered page tidied: at most one blank line in a row (a run of three or more line
/// breaks becomes two) and exactly one trailing newline, whatever the template's whitespace
/// control left. One pass over the text.
fn tidy_blank_lines(text: &str) -> String {
    let mut out = String::with_capacity(text.len() + 1);
    let mut copied = 0;
    let bytes = text.as_bytes();
    let mut i = 0;
    // From one newline to the next (found by `find`, a word at a time, not byte by byte).
    while let Some(next) = text[i..].find('\n') {
        i += next;
        let run_start = i;
        while i < bytes.len() && bytes[i] == b'\n' {
            i += 1;
        }
        if i - run_start > 2 {
            out.push_str(&text[copied..run_start + 2]);
            copied = i;
        }
    }
    out.push_str(&text[copied..]);
    while out.ends_with("\n\n") {
        out.pop();
    }
    if !out.ends_with('\n') {
        out.push('\n');
    }
    out
}

fn environment(templates: &Templates) -> Result<Environment<'static>, Problems> {
    let mut env = Environment::new();
    if templates.any_house() {
        env.set_fuel(Some(TEMPLATE_FUEL));
    }
    env.set_recursion_limit(TEMPLATE_RECURSION);
    env.set_undefined_behavior(minijinja::UndefinedBehavior::Strict);
    env.set_formatter(|out, _state: &mut State, value: &Value| {
        match value.kind() {
            // Marked safe only by the template, for text it places in a code block itself.
            ValueKind::String if value.is_safe() => {
                out.write_str(value.as_str().unwrap_or_default())?
            }
            // Figures inside prose (derivations, messages) are rounded as the report's own
            // figures are; ids and names go through the `id` filter, which leaves them be.
            ValueKind::String => md_escape_rounded_to(value.as_str().unwrap_or_default(), out)?,
            ValueKind::Number => out.write_str(&report_number(value))?,
            ValueKind::None | ValueKind::Undefined => out.write_str("not declared")?,
            _ => out.write_str(&md_escape(&value.to_string()))?,
        }
        Ok(())
    });
    env.add_filter("signed", |value: Value| -> String {
        signed(f64::try_from(value).ok())
    });
    // A name or id from the project file: escaped, never rounded (an id is not a figure).
    env.add_filter("id", |value: Value| -> Value {
        let text = match value.as_str() {
            Some(s) => s.to_string(),
            None if value.is_none() || value.is_undefined() => "not declared".to_string(),
            None => value.to_string(),
        };
        Value::from_safe_string(md_escape(&text))
    });
    // A verdict word with its symbol (word and symbol, never colour alone).
    env.add_filter("verdict", |value: Value| -> String {
        match value.as_str() {
            Some(word) => view::verdict_label(word),
            None => "–".to_string(),
        }
    });
    // The symbol of a verdict alone, for cells that print the word themselves.
    env.add_filter("symbol", |value: Value| -> String {
        symbol(value.as_str().unwrap_or_default())
    });
    // A number as the report prints it, as a string to join with others.
    env.add_filter("num", |value: Value| -> String { report_number(&value) });
    // An anchor on the HTML page (nothing in Markdown): `<a id="..."></a>`, its id made of
    // letters, digits, `-`, `_` and `.` only.
    env.add_function("anchor", |state: &State, name: String| -> Value {
        if is_html(state) {
            Value::from_safe_string(anchor_html(&name))
        } else {
            Value::from_safe_string(String::new())
        }
    });
    // A place in the report: a live link on the HTML page, its title in words in Markdown.
    env.add_function("link", |state: &State, place: Value| -> Value {
        let title = place
            .get_attr("title")
            .ok()
            .and_then(|t| t.as_str().map(str::to_string))
            .unwrap_or_default();
        let anchor = place
            .get_attr("anchor")
            .ok()
            .and_then(|t| t.as_str().map(str::to_string))
            .unwrap_or_default();
        Value::from_safe_string(link_text(&title, &anchor, is_html(state)))
    });
    if templates.any_house() {
        // Parsed now, so that a broken house template stops the run before any design is
        // read.
        for (name, text, origin) in &templates.files {
            env.add_template_owned(name.clone(), mark_chart(text))
                .map_err(|e| template_problem(origin, &e))?;
        }
    } else {
        // The shipped templates (tested) are parsed when first rendered or included: a
        // report without a board never parses the board's.
        let files: Vec<(String, String)> = templates
            .files
            .iter()
            .map(|(name, text, _)| (name.clone(), mark_chart(text)))
            .collect();
        env.set_loader(move |name| {
            Ok(files
                .iter()
                .find(|(n, _)| n == name)
                .map(|(_, text)| text.clone()))
        });
    }
    Ok(env)
}

/// A margin with its sign (the templates' `signed` filter). A margin smaller than a tenth
/// of a micrometre is shown as such, with its sign: a shortfall too small to print is still
/// a shortfall, never "0".
pub(super) fn signed(margin: Option<f64>) -> String {
    match margin {
        Some(x) if x > 0.0 && x < 1e-4 => "+<0.0001".to_string(),
        Some(x) if x < 0.0 && x > -1e-4 => "-<0.0001".to_string(),
        Some(x) if x > 0.0 => format!("+{}", figure(x)),
        Some(x) => figure(x),
        None => "not declared".to_string(),
    }
}

/// The symbol of a verdict alone, for cells that print the word themselves (the `symbol`
/// filter); nothing for a word without one.
pub(super) fn symbol(word: &str) -> String {
    let label = view::verdict_label(word);
    match label.split_once(' ') {
        Some((symbol, rest)) if rest == word => symbol.to_string(),
        _ => String::new(),
    }
}

/// An anchor on the HTML page (the `anchor` function): `<a id="..."></a>`, its id made of
/// letters, digits, `-`, `_` and `.` only.
pub(super) fn anchor_html(name: &str) -> String {
    format!("<a id=\"{}\"></a>", view::anchor_id(name))
}

/// A place in the report (the `link` function): a live link on the HTML page, its title in
/// words in Markdown.
pub(super) fn link_text(title: &str, anchor: &str, html: bool) -> String {
    let title = md_escape(&round_figures(title));
    if html {
        format!("[{title}](#{})", view::anchor_id(anchor))
    } else {
        title
    }
}

/// Whether the template renders the HTML page (the `view.html` flag of its context).
fn is_html(state: &State) -> bool {
    state
        .lookup("view")
        .and_then(|v| v.get_attr("html").ok())
        .is_some_and(|v| v.is_true())
}

/// A number as the Markdown and HTML report print it: a whole number (a count) as it is,
/// a figure to four significant digits.
fn report_number(value: &Value) -> String {
    if value.is_integer() {
        return value.to_string();
    }
    match f64::try_from(value.clone()) {
        Ok(x) => figure(x),
        Err(_) => value.to_string(),
    }
}

/// A template value as the report prints it: numbers through the one formatter, anything
/// else as itself (the `num` filter of checks' messages prints the same way).
pub(crate) fn number(value: &Value) -> String {
    match f64::try_from(value.clone()) {
        Ok(x) => crate::text::show(x),
        Err(_) => value.to_string(),
    }
}

/// The innermost template error: an error inside an included template arrives wrapped
/// in the including template's "error in ..." one.
fn innermost(e: &Error) -> &Error {
    let mut inner = e;
    while let Some(next) = std::error::Error::source(inner).and_then(|s| s.downcast_ref::<Error>())
    {
        inner = next;
    }
    inner
}

fn template_problem(origin: &str, e: &Error) -> Problems {
    let e = innermost(e);
    let reason = match e.kind() {
        ErrorKind::OutOfFuel => format!(
            "the house template ran out of its work allowance ({TEMPLATE_FUEL} units of fuel, \
             spent on instructions and on the bytes, list slots and items it creates or \
             visits): a loop that does not end, or values that grow too large?"
        ),
        ErrorKind::WriteFailure => format!(
            "the house template wrote more than {} MB; house templates are limited to that",
            TEMPLATE_MAX_OUTPUT_BYTES / (1024 * 1024)
        ),
        kind => match e.detail() {
            Some(detail) => format!("{kind}: {detail}"),
            None => kind.to_string(),
        },
    };
    let mut d = Diagnostic::new(origin, format!("template error: {reason}"));
    d.line = e.line();
    Problems(vec![d])
}

/// Collects a house template's output and refuses to grow past `max` bytes.
struct BoundedOutput {
    text: Vec<u8>,
    max: usize,
}

impl std::io::Write for BoundedOutput {
    fn write(&mut self, buf: &[u8]) -> std::io::Result<usize> {
        if self.text.len() + buf.len() > self.max {
            return Err(std::io::Error::other(format!(
                "the house template wrote more than {} MB",
                self.max / (1024 * 1024)
            )));
        }
        self.text.extend_from_slice(buf);
        Ok(buf.len())
    }

    fn flush(&mut self) -> std::io::Result<()> {
        Ok(())
    }
}

/// The report as a Markdown checklist.
pub fn render_markdown(report: &Report, templates: &Templates) -> Result<String, Problems> {
    render_page(
        report,
        templates,
        Page::Markdown,
        &MarkdownOptions::default(),
    )
}

/// The report as a Markdown checklist, with the EMC chart linked where `options` says it
/// was written beside the report.
pub fn render_markdown_with(
    report: &Report,
    templates: &Templates,
    options: &MarkdownOptions,
) -> Result<String, Problems> {
    render_page(report, templates, Page::Markdown, options)
}

/// Which writer makes a page's Markdown.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum Writer {
    /// The Rust writer of `page/` (the shipped layout only; the default without house
    /// templates).
    Native,
    /// The templates, parsed and interpreted by minijinja (always, with house templates).
    Templates,
}

/// The Markdown for one page: plain Markdown, or the Markdown the HTML page is made from
/// (with anchors and live links). Written natively unless a house template is in force.
fn render_page(
    report: &Report,
    templates: &Templates,
    page: Page,
    options: &MarkdownOptions,
) -> Result<String, Problems> {
    render_page_with(report, templates, page, options, Writer::Native)
}

/// As the page is rendered, with the writer named: the equivalence test renders every
/// fixture with both. House templates are always interpreted, whatever `writer` says.
pub fn render_page_with(
    report: &Report,
    templates: &Templates,
    page: Page,
    options: &MarkdownOptions,
    writer: Writer,
) -> Result<String, Problems> {
    let text = if writer == Writer::Native && !templates.any_house() {
        let report = with_templates(report, templates);
        let view = view::build(&report, page, options);
        tidy(&super::page::write(&report, &view, &preamble(&report)))
    } else {
        interpret(report, templates, page, options)?
    };
    Ok(text)
}

/// The page's text with the preamble, blank lines tidied, line breaks as `\n`, and no
/// control or bidi character left visible only to a machine.
fn finish(report: &Report, text: &str) -> String {
    tidy(&insert_preamble(text, &preamble(report)))
}

/// As [`finish`], for a page that has its preamble already.
fn tidy(text: &str) -> String {
    match tidy_plain(text) {
        Some(tidied) => tidied,
        None => tidy_and_show(text),
    }
}

/// The page tidied (`tidy_blank_lines`), its `\r\n` made `\n` and every control or bidi
/// character shown as `<U+XXXX>`: the general path, for a page that holds any of them.
fn tidy_and_show(text: &str) -> String {
    let mut text = tidy_blank_lines(text);
    if text.contains('\r') {
        text = text.replace("\r\n", "\n");
    }
    // Text a template writes itself (or marks safe, such as the structure diagram) has not
    // passed through md_escape: no control or bidi character reaches the reader from it.
    match crate::text::visible(&text) {
        Cow::Borrowed(_) => text,
        Cow::Owned(shown) => shown,
    }
}

/// As [`tidy_and_show`] in one pass, for the usual page that holds no carriage return and
/// no character to show as `<U+XXXX>` (then tidying is all there is to do); `None` for any
/// other page. Runs of printable ASCII are skipped eight bytes at a time.
fn tidy_plain(text: &str) -> Option<String> {
    let bytes = text.as_bytes();
    let mut out = String::with_capacity(text.len() + 1);
    let mut copied = 0;
    let mut i = 0;
    loop {
        i += crate::text::printable_ascii_run(&bytes[i..]);
        let Some(&b) = bytes.get(i) else {
            break;
        };
        match b {
            b'\n' => {
                let run_start = i;
                while bytes.get(i) == Some(&b'\n') {
                    i += 1;
                }
                if i - run_start > 2 {
                    out.push_str(&text[copied..run_start + 2]);
                    copied = i;
                }
            }
            b'\t' => i += 1,
            0x80.. => {
                let c = text[i..].chars().next()?;
                if crate::text::is_hazardous(c) {
                    return None;
                }
                i += c.len_utf8();
            }
            // A carriage return, or another control character or DEL.
            _ => return None,
        }
    }
    out.push_str(&text[copied..]);
    while out.ends_with("\n\n") {
        out.pop();
    }
    if !out.ends_with('\n') {
        out.push('\n');
    }
    Some(out)
}

/// The page through the templates.
fn interpret(
    report: &Report,
    templates: &Templates,
    page: Page,
    options: &MarkdownOptions,
) -> Result<String, Problems> {
    let env = templates.env().as_ref().map_err(Clone::clone)?;
    let origin = |e: &Error| {
        let name = innermost(e).name().unwrap_or(TEMPLATE_NAME);
        templates
            .files
            .iter()
            .find(|(n, _, _)| n == name)
            .map(|(_, _, o)| o.clone())
            .unwrap_or_else(|| format!("templates/{name}"))
    };
    let template = env
        .get_template(TEMPLATE_NAME)
        .map_err(|e| template_problem(&origin(&e), &e))?;
    let report = with_templates(report, templates);
    let view = view::build(&report, page, options);
    let context = minijinja::context! {
        view => Value::from(minijinja::value::Serde(&view)),
        ..Value::from(minijinja::value::Serde(&*report))
    };
    let text = if templates.any_house() {
        // A house template is bounded in what it writes and in the memory it takes.
        let house: Vec<&str> = templates
            .files
            .iter()
            .filter(|(name, _, o)| *o != format!("templates/{name}"))
            .map(|(_, _, o)| o.as_str())
            .collect();
        let what = format!("house template {}", house.join(", "));
        let mut out = BoundedOutput {
            text: Vec::new(),
            max: TEMPLATE_MAX_OUTPUT_BYTES,
        };
        crate::memory_guard::bounded(&what, crate::memory_guard::HOUSE_MEMORY_LIMIT_BYTES, || {
            template.render_captured_to(context, &mut out).map(|_| ())
        })
        .map_err(|e| template_problem(&origin(&e), &e))?;
        String::from_utf8(out.text).map_err(|_| {
            Problems::from(Diagnostic::new(
                &what,
                "template error: output is not UTF-8",
            ))
        })?
    } else {
        template
            .render(context)
            .map_err(|e| template_problem(&origin(&e), &e))?
    };
    Ok(finish(&report, &text))
}

/// The Markdown checklist as one self-contained HTML page. Raw HTML in the Markdown (which
/// the shipped template writes only as anchors of a fixed form) is shown as text, never
/// passed through as markup.
pub fn render_html(report: &Report, templates: &Templates) -> Result<String, Problems> {
    let markdown = render_page(report, templates, Page::Html, &MarkdownOptions::default())?;
    let report = with_templates(report, templates);
    let view = view::build(&report, Page::Html, &MarkdownOptions::default());
    // Taken at the first marker; any later one is dropped, so the chart appears once.
    let chart = report.emc.as_ref().and_then(crate::emc::chart_svg);
    // The board drawings, in the order the board template marks them (measured barriers).
    let drawings: Vec<Option<String>> = report
        .barriers
        .iter()
        .filter_map(|b| b.board.as_ref())
        .map(|m| m.drawing_svg.clone())
        .collect();
    Ok(super::html::page(
        &markdown,
        &format!("Pre-review checklist: {}", report.design.name),
        &view.running_header,
        chart,
        drawings,
    ))
}

/// The report model as pretty-printed JSON.
pub fn render_json(report: &Report) -> String {
    to_json(report)
}

/// Pretty-printed JSON as gapwarden writes it (see [`super::json`]), with a final newline.
pub fn to_json<T: serde::Serialize + ?Sized>(value: &T) -> String {
    let mut text = match super::json::pretty(value) {
        Ok(text) => text,
        Err(e) => format!("{{\"error\": \"{e}\"}}"),
    };
    text.push('\n');
    text
}

#[cfg(test)]
mod tests {
    use super::*;

    /// `md_escape` as first written, looking at every character: the reference for the
    /// eight-bytes-at-a-time skip over plain text.
    fn md_escape_reference(text: &str) -> String {
        let mut out = String::new();
        for c in text.chars() {
            match c {
                '\r' | '\n' | '\t' => out.push(' '),
                '\\' | '`' | '*' | '_' | '[' | ']' | '<' | '>' | '|' | '&' | '#' => {
                    out.push('\\');
                    out.push(c);
                }
                c if c.is_control() || crate::text::is_hazardous(c) => {
                    out.push_str(&format!("<U+{:04X}>", c as u32));
                }
                c => out.push(c),
            }
        }
        out
    }

    proptest::proptest! {
        #![proptest_config(proptest::prelude::ProptestConfig::with_cases(4000))]

        /// Prose of numbers of every length (with points, signs and units), Markdown
        /// characters, ids and non-ASCII: rounding while escaping writes what rounding and
        /// then escaping write.
        #[test]
        fn escaping_with_rounding_agrees_with_rounding_then_escaping(
            text in "([0-9]{1,8}|[0-9]{1,6}\\.[0-9]{1,7}|-|\\.|,|:| |Hz|V|mm|µF|A²s|CY|\\(|=|_|/|#|\\*|\\||<|\\\\|`|\\[|\\]|\n|\x1b|\u{202e}|é|x){0,40}"
        ) {
            let mut fused = String::new();
            md_escape_rounded_to(&text, &mut fused).unwrap();
            proptest::prop_assert_eq!(fused, md_escape(&round_figures(&text)));
        }
    }

    /// The page tidied as first written, in three passes: blank lines, carriage returns,
    /// then hidden characters made visible.
    fn finish_reference(text: &str) -> String {
        let mut text = tidy_blank_lines(text);
        if text.contains('\r') {
            text = text.replace("\r\n", "\n");
        }
        crate::text::visible(&text).into_owned()
    }

    proptest::proptest! {
        #![proptest_config(proptest::prelude::ProptestConfig::with_cases(4000))]

        /// Text of plain runs of every length among every character Markdown escaping
        /// changes, controls, DEL, bidi and zero-width characters, and other non-ASCII.
        #[test]
        fn markdown_escaping_agrees_with_the_reference(
            text in "([a-z ]{0,12}|[\\\\`*_\\[\\]<>|&#^}~=()]|[\\x00-\\x1f\\x7f]|[\\u{80}-\\u{9f}]|µ|Ω|✓|–|\\u{202e}|\\u{200b}|\\u{feff}|\\u{e0041}){0,30}"
        ) {
            proptest::prop_assert_eq!(md_escape(&text), md_escape_reference(&text));
        }

        /// Pages of lines, runs of line breaks, carriage returns, tabs, controls, bidi
        /// characters and other non-ASCII: the one-pass tidying agrees with the three passes
        /// wherever it answers, and the page always ends as the reference's does.
        #[test]
        fn tidying_the_page_agrees_with_the_reference(
            text in "([a-z #|]{0,20}|\\n{1,5}|\\r\\n|\\r|\\t|\\x1b|\\x7f|µ|✓|\\u{202e}|\\u{200b}|\\u{9b}){0,30}"
        ) {
            let expected = finish_reference(&text);
            let plain = tidy_plain(&text);
            if let Some(tidied) = &plain {
                proptest::prop_assert_eq!(tidied, &expected);
            }
            proptest::prop_assert_eq!(plain.unwrap_or_else(|| tidy_and_show(&text)), expected);
        }
    }

    /// The usual page takes the one pass: tidied, nothing to show.
    #[test]
    fn a_page_without_hidden_characters_is_tidied_in_one_pass() {
        // Worked by hand: four line breaks become two, the trailing ones one.
        assert_eq!(
            tidy_plain("# T\n\n\n\nµ ✓ a\tb\n\n\n").as_deref(),
            Some("# T\n\nµ ✓ a\tb\n")
        );
        assert_eq!(tidy_plain("a\r\nb"), None);
        assert_eq!(tidy_plain("id\u{202e}x"), None);
    }
}
