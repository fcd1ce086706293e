//! The work behind each command, as library functions that return text and an outcome;
//! `main.rs` only parses the command line and prints.

use std::fs::OpenOptions;
use std::io::Write;
use std::path::{Path, PathBuf};

use crate::checks::Severity;
use crate::diag::{Diagnostic, Problems, Source, suggest};
use crate::project::{
    Barrier, BetweenRows, BoardCoating, BoardConductor, BoardSpacing, Field, Grade, Material,
    MaterialGroup, OvervoltageCategory,
};
use crate::report::{Report, Templates, check_source, render_html, render_json, render_markdown};
use crate::rules::RuleBook;
use crate::spacing::{BarrierResult, Conditions, evaluate};
use crate::toml_read::NumberRule;

/// Example projects that `gapwarden new --example NAME` writes.
pub const EXAMPLES: &[(&str, &str)] = &[
    (
        "class2-adapter",
        include_str!("../examples/class2-adapter.toml"),
    ),
    (
        "class1-appliance",
        include_str!("../examples/class1-appliance.toml"),
    ),
];

#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum Format {
    Markdown,
    Html,
    Json,
}

/// Reads a project file and evaluates it.
pub fn check_file(path: &Path, rules: &RuleBook) -> Result<Report, Problems> {
    let name = path.display().to_string();
    let text = crate::read_text(path, &name)?;
    check_source(&Source::new(name, text), rules)
}

pub fn render(report: &Report, format: Format, templates: &Templates) -> Result<String, Problems> {
    match format {
        Format::Markdown => render_markdown(report, templates),
        Format::Html => render_html(report, templates),
        Format::Json => Ok(render_json(&crate::report::with_templates(
            report, templates,
        ))),
    }
}

/// Writes `text` to `out` through a temporary file in the same folder and a rename, so a
/// reader never sees half a report. Refuses to write over any of `protected`.
pub fn write_atomically(out: &Path, text: &str, protected: &[&Path]) -> Result<(), Problems> {
    let shown = out.display().to_string();
    let fail = |m: String| Problems(vec![Diagnostic::new(&shown, m)]);
    if out.is_dir() {
        return Err(fail(
            "is a folder; give a file name for the report".to_string(),
        ));
    }
    let target = resolved(out);
    for p in protected {
        if resolved(p) == target {
            return Err(fail(
                "is an input of this run; the report would overwrite it, so nothing was written"
                    .to_string(),
            ));
        }
    }
    let folder = match out.parent() {
        Some(p) if !p.as_os_str().is_empty() => p.to_path_buf(),
        _ => PathBuf::from("."),
    };
    let file_name = out
        .file_name()
        .map(|n| n.to_string_lossy().to_string())
        .unwrap_or_default();
    let temp = folder.join(format!(".{file_name}.{}.tmp", std::process::id()));
    let write = || -> std::io::Result<()> {
        let mut f = OpenOptions::new()
            .write(true)
            .create_new(true)
            .open(&temp)?;
        f.write_all(text.as_bytes())?;
        f.sync_all()?;
        std::fs::rename(&temp, out)
    };
    write().map_err(|e| {
        let _ = std::fs::remove_file(&temp);
        fail(format!("cannot write the report: {e}; nothing was written"))
    })
}

/// A path with its folder made canonical, for comparing two paths to the same file.
fn resolved(path: &Path) -> PathBuf {
    if let Ok(p) = path.canonicalize() {
        return p;
    }
    let parent = match path.parent() {
        Some(p) if !p.as_os_str().is_empty() => p,
        _ => Path::new("."),
    };
    match (parent.canonicalize(), path.file_name()) {
        (Ok(dir), Some(name)) => dir.join(name),
        _ => path.to_path_buf(),
    }
}

/// Writes a commented example project to `path`; never overwrites anything.
pub fn new_project(path: &Path, example: &str) -> Result<(), Problems> {
    let shown = path.display().to_string();
    let Some((_, text)) = EXAMPLES.iter().find(|(name, _)| *name == example) else {
        let names: Vec<&str> = EXAMPLES.iter().map(|(n, _)| *n).collect();
        let mut d = Diagnostic::new(
            "--example",
            format!(
                "no example called \"{example}\"; examples: {}",
                names.join(", ")
            ),
        );
        if let Some(best) = suggest(example, &names) {
            d = d.with_help(format!("did you mean \"{best}\"?"));
        }
        return Err(d.into());
    };
    let mut file = OpenOptions::new()
        .write(true)
        .create_new(true)
        .open(path)
        .map_err(|e| {
            let m = if e.kind() == std::io::ErrorKind::AlreadyExists {
                "already exists; gapwarden new never overwrites a file: choose another name"
                    .to_string()
            } else {
                format!("cannot be created: {e}")
            };
            Problems(vec![Diagnostic::new(&shown, m)])
        })?;
    file.write_all(text.as_bytes()).map_err(|e| {
        Problems(vec![Diagnostic::new(
            &shown,
            format!("cannot be written: {e}"),
        )])
    })
}

/// The derivation of one figure or finding, as plain text.
pub fn explain(report: &Report, item: &str) -> Result<String, Problems> {
    let mut out = String::new();
    let (barrier_id, figure) = match item.rsplit_once('.') {
        Some((b, f @ ("clearance" | "creepage"))) => (b, Some(f)),
        _ => (item, None),
    };
    if let Some(b) = report.barriers.iter().find(|b| b.id == barrier_id) {
        explain_barrier(&mut out, b, figure);
        for f in report
            .findings
            .iter()
            .filter(|f| f.subject.as_deref() == Some(b.id.as_str()))
        {
            out.push_str(&format!(
                "finding {} ({}): {}\n",
                f.id,
                severity_word(f.severity),
                f.message
            ));
        }
        return Ok(out);
    }
    let matching: Vec<_> = report.findings.iter().filter(|f| f.id == item).collect();
    if !matching.is_empty() {
        for f in matching {
            let subject = f
                .subject
                .as_deref()
                .map(|s| format!(" ({s})"))
                .unwrap_or_default();
            out.push_str(&format!(
                "{} [{}]{subject}: {}\n",
                f.id,
                severity_word(f.severity),
                f.message
            ));
            if let Some(b) = f
                .subject
                .as_deref()
                .and_then(|s| report.barriers.iter().find(|b| b.id == s))
            {
                let figure = if f.id.contains("clearance") && !f.id.contains("creepage") {
                    Some("clearance")
                } else if f.id.contains("creepage") {
                    Some("creepage")
                } else {
                    None
                };
                explain_barrier(&mut out, b, figure);
            }
        }
        return Ok(out);
    }
    if let Some(text) = report
        .power_entry
        .as_ref()
        .and_then(|p| crate::power_entry::explain(p, item))
    {
        return Ok(text);
    }
    if let Some(text) = report
        .emc
        .as_ref()
        .and_then(|e| crate::emc::explain(e, item))
    {
        return Ok(text);
    }
    if item == "readiness" {
        let r = &report.readiness;
        out.push_str(&format!("readiness: {}\n", r.state));
        for c in &r.conditions {
            out.push_str(&format!(
                "  {}: {} ({})\n",
                c.condition,
                if c.holds { "holds" } else { "fails" },
                c.detail
            ));
        }
        return Ok(out);
    }
    if item == "assumptions" {
        for a in &report.assumptions {
            out.push_str(&format!("- {a}\n"));
        }
        if report.assumptions.is_empty() {
            out.push_str("No defaults were applied.\n");
        }
        return Ok(out);
    }
    let mut known: Vec<String> = vec!["assumptions".to_string(), "readiness".to_string()];
    for b in &report.barriers {
        known.push(b.id.clone());
        known.push(format!("{}.clearance", b.id));
        known.push(format!("{}.creepage", b.id));
    }
    if report.power_entry.is_some() {
        known.extend(
            [
                "power_entry",
                "power_entry.inrush",
                "power_entry.fuse",
                "power_entry.discharge",
                "power_entry.touch",
            ]
            .map(String::from),
        );
    }
    if report.emc.is_some() {
        known.extend(
            [
                "emc",
                "emc.corner",
                "emc.limit",
                "emc.attenuation",
                "emc.filter",
                "emc.middlebrook",
                "emc.points",
            ]
            .map(String::from),
        );
    }
    known.extend(report.findings.iter().map(|f| f.id.clone()));
    known.sort();
    known.dedup();
    let refs: Vec<&str> = known.iter().map(String::as_str).collect();
    let mut d = Diagnostic::new(
        "explain",
        format!("nothing called \"{item}\" in this report"),
    )
    .with_help(format!("items: {}", refs.join(", ")));
    if let Some(best) = suggest(item, &refs) {
        d = d.with_help(format!("did you mean \"{best}\"?"));
    }
    Err(d.into())
}

fn severity_word(s: Severity) -> &'static str {
    match s {
        Severity::Blocking => "blocking",
        Severity::Warning => "warning",
        Severity::Note => "note",
    }
}

fn explain_barrier(out: &mut String, b: &BarrierResult, figure: Option<&str>) {
    use crate::spacing::show;
    let declared = |d: Option<f64>| {
        d.map(|d| format!("{} mm", show(d)))
            .unwrap_or_else(|| "not declared".to_string())
    };
    for (what, required, laid_out, steps) in [
        (
            "clearance",
            b.required_clearance_mm,
            b.clearance_mm,
            &b.derivation.clearance,
        ),
        (
            "creepage",
            b.required_creepage_mm,
            b.creepage_mm,
            &b.derivation.creepage,
        ),
    ] {
        if figure.is_some_and(|f| f != what) {
            continue;
        }
        out.push_str(&format!(
            "{}.{what}: required {} mm, laid out {} ({} insulation, verdict {})\n",
            b.id,
            show(required),
            declared(laid_out),
            b.grade.as_str(),
            b.verdict.as_str()
        ));
        for (i, s) in steps.iter().enumerate() {
            let rule = s
                .rule
                .as_deref()
                .map(|r| format!(" [{r}]"))
                .unwrap_or_default();
            out.push_str(&format!("  {}. {}{rule}\n", i + 1, s.text));
        }
    }
}

/// A list of the loaded tables, or the full text of one.
pub fn describe_rules(rules: &RuleBook, id: Option<&str>) -> Result<String, Problems> {
    let mut out = String::new();
    let Some(id) = id else {
        out.push_str("Rule files\n\n");
        for r in &rules.info {
            out.push_str(&format!(
                "{}\n  {}\n  source: {}\n  provenance: {}\n  {} ({}), sha256 {}\n",
                r.id, r.title, r.source, r.provenance, r.origin, r.file, r.sha256
            ));
        }
        out.push_str("\nChecks (id, severity, origin, defined at)\n\n");
        for c in &rules.checks {
            out.push_str(&format!(
                "{}  [{}]  {}  {}:{}\n  {}\n  source: {}\n",
                c.id,
                severity_word(c.severity),
                c.origin,
                c.file,
                c.line,
                c.title,
                c.source
            ));
        }
        return Ok(out);
    };
    if let Some(r) = rules.info(id) {
        out.push_str(&format!(
            "# {} ({} {}, sha256 {})\n",
            r.id, r.origin, r.file, r.sha256
        ));
        out.push_str(&r.text);
        return Ok(out);
    }
    if let Some(c) = rules.checks.iter().find(|c| c.id == id) {
        out.push_str(&format!(
            "{} [{}], {} ({}:{})\n{}\nover: {}\n",
            c.id,
            severity_word(c.severity),
            c.origin,
            c.file,
            c.line,
            c.title,
            c.over.path()
        ));
        if let Some(applies) = &c.applies {
            out.push_str(&format!("applies: {applies}\n"));
        }
        out.push_str(&format!(
            "condition: {}\nmessage: {}\nrationale: {}\nsource: {}\n",
            c.condition, c.message, c.rationale, c.source
        ));
        return Ok(out);
    }
    let ids: Vec<&str> = rules
        .info
        .iter()
        .map(|r| r.id.as_str())
        .chain(rules.checks.iter().map(|c| c.id.as_str()))
        .collect();
    let mut d = Diagnostic::new("rules", format!("no rule table or check \"{id}\""))
        .with_help("`gapwarden rules` lists them all");
    if let Some(best) = suggest(id, &ids) {
        d = d.with_help(format!("did you mean \"{best}\"?"));
    }
    Err(d.into())
}

/// One barrier described by command-line flags, for `gapwarden spacing`.
#[derive(Debug, Clone)]
pub struct SpacingQuery {
    pub working_rms_v: f64,
    pub working_peak_v: Option<f64>,
    pub grade: Grade,
    pub pollution_degree: u8,
    pub overvoltage_category: OvervoltageCategory,
    pub nominal_v: f64,
    pub transient_v: Option<f64>,
    pub altitude_m: f64,
    pub material_group: Option<MaterialGroup>,
    pub cti: Option<f64>,
    pub printed_board: bool,
    pub field: Field,
    pub board_conductor: BoardConductor,
    pub board_coating: BoardCoating,
    pub creepage_between_rows: BetweenRows,
    pub clearance_mm: Option<f64>,
    pub creepage_mm: Option<f64>,
}

/// Required figures for one barrier from flags; the same engine and JSON as `check`.
pub fn spacing(rules: &RuleBook, q: &SpacingQuery) -> Result<BarrierResult, Problems> {
    use crate::project::{DISTANCE_MM, VOLTAGE_V};
    let mut problems = Vec::new();
    let mut implausible = false;
    let mut judge = |flag: &str, value: Option<f64>, rule: &NumberRule| {
        if let Some(v) = value {
            match rule.judge(v) {
                Err(reason) => {
                    problems.push(Diagnostic::new("command line", reason).with_key(flag))
                }
                Ok(Some(_)) => implausible = true,
                Ok(None) => {}
            }
        }
    };
    judge("--working-rms-v", Some(q.working_rms_v), &VOLTAGE_V);
    judge("--working-peak-v", q.working_peak_v, &VOLTAGE_V);
    judge("--nominal-v", Some(q.nominal_v), &VOLTAGE_V);
    judge("--transient-v", q.transient_v, &VOLTAGE_V);
    judge("--clearance-mm", q.clearance_mm, &DISTANCE_MM);
    judge("--creepage-mm", q.creepage_mm, &DISTANCE_MM);
    if !(q.altitude_m.is_finite() && q.altitude_m >= 0.0) {
        problems.push(
            Diagnostic::new(
                "command line",
                "expected an altitude in metres above sea level, 0 or more",
            )
            .with_key("--altitude-m"),
        );
    }
    if let Some(c) = q.cti
        && !(c.is_finite() && c >= 0.0)
    {
        problems.push(
            Diagnostic::new(
                "command line",
                "expected a comparative tracking index, 0 or more",
            )
            .with_key("--cti"),
        );
    }
    if q.material_group.is_some() && q.cti.is_some() {
        problems.push(
            Diagnostic::new("command line", "give --material-group or --cti, not both")
                .with_key("--cti"),
        );
    }
    if let Some(peak) = q.working_peak_v
        && peak < q.working_rms_v
    {
        problems.push(
            Diagnostic::new("command line", "a peak is never below the rms value")
                .with_key("--working-peak-v"),
        );
    }
    if !problems.is_empty() {
        return Err(Problems(problems));
    }
    let barrier = Barrier {
        id: "spacing".to_string(),
        between: ["a".to_string(), "b".to_string()],
        grade: q.grade,
        working_rms_v: q.working_rms_v,
        working_peak_v: q.working_peak_v,
        transient_v: q.transient_v,
        working_frequency_hz: None,
        material: match (q.material_group, q.cti) {
            (Some(g), _) => Material::Group(g),
            (None, Some(c)) => Material::Cti(c),
            (None, None) => Material::Unstated,
        },
        printed_board: q.printed_board,
        field: q.field,
        board: BoardSpacing {
            conductor: q.board_conductor,
            coating: q.board_coating,
        },
        clearance_mm: q.clearance_mm,
        creepage_mm: q.creepage_mm,
        slot_width_mm: None,
        bridged_by: Vec::new(),
        description: None,
        span: 0..0,
        key_spans: Default::default(),
    };
    let cond = Conditions {
        pollution_degree: q.pollution_degree,
        overvoltage_category: q.overvoltage_category,
        altitude_m: q.altitude_m,
        nominal_v: q.nominal_v,
        creepage_between_rows: q.creepage_between_rows,
    };
    let result = evaluate(rules, &cond, &barrier).map_err(|errors| {
        Problems(
            errors
                .into_iter()
                .map(|e| {
                    let flag = match e.key.as_str() {
                        "mains.nominal_v" => "--nominal-v".to_string(),
                        "environment.altitude_m" => "--altitude-m".to_string(),
                        k => format!("--{}", k.replace('_', "-")),
                    };
                    Diagnostic::new("command line", e.message).with_key(flag)
                })
                .collect(),
        )
    });
    // As in a report: distances that would pass on an implausible value are not a pass.
    result.map(|mut r| {
        if implausible && r.verdict == crate::spacing::Verdict::Pass {
            r.verdict = crate::spacing::Verdict::CheckInput;
        }
        r
    })
}
