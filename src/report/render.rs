//! Rendering the report model: Markdown through a minijinja template, HTML from that
//! Markdown through pulldown-cmark, JSON through serde. Every string from the project
//! is escaped on its way into Markdown, and raw HTML never reaches the page.

use std::path::Path;

use minijinja::value::{Value, ValueKind};
use minijinja::{Environment, Error, ErrorKind, State};
use pulldown_cmark::{Event, Options, Parser, html};

use super::Report;
use crate::diag::{Diagnostic, Problems};
use crate::spacing::show;

/// Every shipped template (`templates/*.j2`), embedded at build time by `build.rs`.
pub use shipped::SHIPPED_TEMPLATES;

mod shipped {
    include!(concat!(env!("OUT_DIR"), "/shipped_templates.rs"));
}

/// A paragraph holding only this text is replaced by the EMC chart in the HTML report.
pub const CHART_MARKER: &str = "gapwarden-emc-chart";

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
    /// (name, source, where it came from for messages)
    files: Vec<(String, String, String)>,
    /// The environment with every template parsed, built once.
    env: Result<Environment<'static>, Problems>,
}

impl Templates {
    /// Whether any template in use came from a house folder rather than the binary.
    fn any_house(&self) -> bool {
        self.files
            .iter()
            .any(|(name, _, origin)| *origin != format!("templates/{name}"))
    }

    pub fn shipped() -> Self {
        let files: Vec<(String, String, String)> = SHIPPED_TEMPLATES
            .iter()
            .map(|(name, text)| {
                (
                    name.to_string(),
                    text.to_string(),
                    format!("templates/{name}"),
                )
            })
            .collect();
        Self::from_files(files)
    }

    fn from_files(files: Vec<(String, String, String)>) -> Self {
        let mut templates = Templates {
            files,
            env: Err(Problems(Vec::new())),
        };
        templates.env = environment(&templates);
        templates
    }

    /// The shipped templates, with any of the same name in `dir` taking their place.
    pub fn load(dir: Option<&Path>) -> Result<Self, Problems> {
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
        for (name, text, origin) in &mut files {
            let path = dir.join(&*name);
            if path.is_file() {
                let shown = path.display().to_string();
                *text = crate::read_text(&path, &shown)?;
                *origin = shown;
            }
        }
        let templates = Self::from_files(files);
        if let Err(problems) = &templates.env {
            return Err(problems.clone());
        }
        Ok(templates)
    }
}

/// Escapes text for Markdown so that it renders as itself: no emphasis, link, table cell
/// break or HTML can come from it. Line breaks become spaces.
pub fn md_escape(text: &str) -> String {
    let special = |c: char| {
        matches!(
            c,
            '\\' | '`' | '*' | '_' | '[' | ']' | '<' | '>' | '|' | '&' | '#'
        ) || c.is_control()
    };
    if !text.chars().any(special) {
        return text.to_string();
    }
    let mut out = String::with_capacity(text.len() + 8);
    for c in text.chars() {
        match c {
            '\r' | '\n' => out.push(' '),
            '\\' | '`' | '*' | '_' | '[' | ']' | '<' | '>' | '|' | '&' | '#' => {
                out.push('\\');
                out.push(c);
            }
            c if c.is_control() => out.push(' '),
            c => out.push(c),
        }
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
            ValueKind::String => out.write_str(&md_escape(value.as_str().unwrap_or_default()))?,
            ValueKind::Number => out.write_str(&number(value))?,
            ValueKind::None | ValueKind::Undefined => out.write_str("not declared")?,
            _ => out.write_str(&md_escape(&value.to_string()))?,
        }
        Ok(())
    });
    env.add_filter("signed", |value: Value| -> String {
        match f64::try_from(value) {
            Ok(x) if x > 0.0 => format!("+{}", show(x)),
            Ok(x) => show(x),
            Err(_) => "not declared".to_string(),
        }
    });
    for (name, text, origin) in &templates.files {
        env.add_template_owned(name.clone(), text.clone())
            .map_err(|e| template_problem(origin, &e))?;
    }
    Ok(env)
}

fn number(value: &Value) -> String {
    match f64::try_from(value.clone()) {
        Ok(x) => show(x),
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
    let env = templates.env.as_ref().map_err(Clone::clone)?;
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
    let context = Value::from(minijinja::value::Serde(report));
    let mut text = if templates.any_house() {
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
    // At most one blank line in a row and one trailing newline, whatever the template's
    // whitespace control left.
    while text.contains("\n\n\n") {
        text = text.replace("\n\n\n", "\n\n");
    }
    while text.ends_with("\n\n") {
        text.pop();
    }
    if !text.ends_with('\n') {
        text.push('\n');
    }
    Ok(text)
}

/// The Markdown checklist as one self-contained HTML page. Raw HTML in the Markdown (which
/// the shipped template never writes) is shown as text, never passed through as markup.
pub fn render_html(report: &Report, templates: &Templates) -> Result<String, Problems> {
    let markdown = render_markdown(report, templates)?;
    let options = Options::ENABLE_TABLES | Options::ENABLE_TASKLISTS;
    let chart = report.emc.as_ref().and_then(crate::emc::chart_svg);
    let events = Parser::new_ext(&markdown, options).map(|event| match event {
        Event::Html(text) | Event::InlineHtml(text) => Event::Text(text),
        // The EMC template marks where the chart goes; the SVG is gapwarden's own.
        Event::Text(text) if text.as_ref() == CHART_MARKER => match &chart {
            Some(svg) => Event::Html(svg.clone().into()),
            None => Event::Text("".into()),
        },
        other => other,
    });
    let mut body = String::new();
    html::push_html(&mut body, events);
    let title = html_escape(&format!("Pre-review checklist: {}", report.design.name));
    Ok(format!(
        "<!DOCTYPE html>\n<html lang=\"en\">\n<head>\n<meta charset=\"utf-8\">\n<title>{title}</title>\n<style>\n{STYLE}</style>\n</head>\n<body>\n{body}</body>\n</html>\n"
    ))
}

/// The report model as pretty-printed JSON.
pub fn render_json(report: &Report) -> String {
    let mut text =
        serde_json::to_string_pretty(report).unwrap_or_else(|e| format!("{{\"error\": \"{e}\"}}"));
    text.push('\n');
    text
}

fn html_escape(text: &str) -> String {
    text.replace('&', "&amp;")
        .replace('<', "&lt;")
        .replace('>', "&gt;")
        .replace('"', "&quot;")
}

const STYLE: &str = "body { font-family: system-ui, sans-serif; max-width: 72rem; margin: 2rem auto; padding: 0 1rem; line-height: 1.45; color: #1d2327; }
table { border-collapse: collapse; margin: 1rem 0; font-size: 0.92rem; }
th, td { border: 1px solid #b8c2cc; padding: 0.25rem 0.5rem; text-align: left; vertical-align: top; }
th { background: #e9eef2; }
code { font-size: 0.85rem; word-break: break-all; }
blockquote { border-left: 4px solid #b3541e; margin: 1rem 0; padding: 0.25rem 1rem; background: #fbf3ee; }
li { margin: 0.2rem 0; }
";
