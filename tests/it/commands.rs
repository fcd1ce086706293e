//! The commands around the report, run through the binary: the terminal summary and its
//! colour, shell completions and the man page, `new`'s blank template and examples,
//! `spacing`'s table and JSON, `compare --format` and `-o`, `explain` of parts, figures,
//! checks and assumptions, the batch summary files, and the hints for common mistakes.
//!
//! Distances quoted below come from rules/SOURCES.md: a 230 V system in overvoltage category
//! II has a rated impulse of 2500 V (IEC 60664-1:2020 Table F.1); reinforced insulation
//! reads one step up, 4000 V (clause 5.1.6); Table F.2 Case A at 4 kV gives 3.0 mm.

use crate::common;
use common::*;

use std::path::PathBuf;
use std::process::Output;
use std::sync::atomic::{AtomicUsize, Ordering};

use serde_json::Value;

const CLASS2: &str = "examples/class2-adapter.toml";
const CLASS1: &str = "examples/class1-appliance.toml";
const SHORT: &str = "tests/fixtures/short-clearance.toml";

/// A fresh folder under the system temp folder, removed when dropped.
struct Scratch(PathBuf);

impl Scratch {
    fn new(tag: &str) -> Self {
        static N: AtomicUsize = AtomicUsize::new(0);
        let n = N.fetch_add(1, Ordering::SeqCst);
        let dir = std::env::temp_dir().join(format!(
            "gapwarden-commands-test-{}-{tag}-{n}",
            std::process::id()
        ));
        let _ = std::fs::remove_dir_all(&dir);
        std::fs::create_dir_all(&dir).expect("scratch folder can be created");
        Scratch(dir)
    }

    fn path(&self, name: &str) -> PathBuf {
        self.0.join(name)
    }

    fn write(&self, name: &str, text: &str) -> String {
        let p = self.path(name);
        if let Some(parent) = p.parent() {
            std::fs::create_dir_all(parent).expect("folder");
        }
        std::fs::write(&p, text).expect("written");
        p.to_str().expect("UTF-8 path").to_string()
    }
}

impl Drop for Scratch {
    fn drop(&mut self) {
        let _ = std::fs::remove_dir_all(&self.0);
    }
}

fn json(o: &Output) -> Value {
    serde_json::from_slice(&o.stdout)
        .unwrap_or_else(|e| panic!("stdout is not JSON: {e}\n{}", describe(o)))
}

fn example_text(path: &str) -> String {
    std::fs::read_to_string(root().join(path)).expect("example readable")
}

// ---------------------------------------------------------------------------------------
// The terminal summary (run under a pseudo-terminal made by `script`)
// ---------------------------------------------------------------------------------------

/// Runs the binary with `args` on a pseudo-terminal, as a person at a shell would, and
/// returns what the terminal showed (line ends as `\n`). `env` is added to the
/// environment. util-linux's `script` provides the terminal; the test fails without it
/// rather than pass by skipping.
fn on_terminal(args: &[&str], env: &[(&str, &str)]) -> (String, i32) {
    let quote = |s: &str| format!("'{}'", s.replace('\'', "'\\''"));
    let mut line = quote(env!("CARGO_BIN_EXE_gapwarden"));
    for a in args {
        line.push(' ');
        line.push_str(&quote(a));
    }
    let mut cmd = std::process::Command::new("script");
    cmd.args(["-qec", &line, "/dev/null"])
        .current_dir(root())
        .env_remove("NO_COLOR");
    for (k, v) in env {
        cmd.env(k, v);
    }
    let out = cmd
        .stdin(std::process::Stdio::null())
        .output()
        .expect("`script` (util-linux) runs the binary on a pseudo-terminal");
    let text = String::from_utf8_lossy(&out.stdout).replace("\r\n", "\n");
    (text, out.status.code().unwrap_or(-1))
}

#[test]
fn on_a_terminal_check_prints_a_coloured_summary_of_what_blocks() {
    let (text, code) = on_terminal(&["check", SHORT, "--color", "always"], &[]);
    // The fixture declares 2.4 mm across reinforced insulation that needs 3.0 mm (module
    // docs): not ready, exit 1, one blocking finding 0.6 mm short.
    assert_eq!(code, 1, "{text}");
    assert!(text.contains("\x1b[1;31m"), "no colour: {text:?}");
    assert!(text.contains("NOT READY: BLOCKING"), "{text}");
    assert!(text.contains("Blocking: fix before review"), "{text}");
    assert!(
        text.contains("barrier.clearance_short (gap-under-t1)")
            && text.contains("0.6 mm short of the 3 mm required"),
        "{text}"
    );
    assert!(text.contains("Full report: not written"), "{text}");
    assert!(
        !text.contains("## Barriers") && !text.contains("# Pre-review checklist"),
        "the full report was printed on a terminal\n{text}"
    );
    assert!(text.lines().count() < 20, "not concise: {text}");
}

#[test]
fn no_color_and_color_never_leave_the_summary_plain_and_always_overrides_no_color() {
    for (args, env) in [
        (vec!["check", CLASS1], vec![("NO_COLOR", "1")]),
        (vec!["check", CLASS1, "--color", "never"], vec![]),
    ] {
        let (text, code) = on_terminal(&args, &env);
        // The appliance example keeps one barrier incomplete on purpose: not ready, exit 1.
        assert_eq!(code, 1, "{text}");
        assert!(!text.contains('\x1b'), "{args:?} {env:?}: {text:?}");
        // Without colour the verdict still reads by word and symbol.
        assert!(text.contains("✗ NOT READY: INCOMPLETE"), "{text}");
        assert!(
            text.contains("Warnings: look at these") && text.contains("! barrier.creepage_missing"),
            "{text}"
        );
    }
    let (text, _) = on_terminal(
        &["check", CLASS1, "--color", "always"],
        &[("NO_COLOR", "1")],
    );
    assert!(
        text.contains('\x1b'),
        "--color always is an explicit request: {text:?}"
    );
    // auto on a terminal without NO_COLOR: coloured.
    let (text, code) = on_terminal(&["check", CLASS2], &[]);
    assert_eq!(code, 0, "{text}");
    assert!(text.contains("\x1b[1;32m✓ READY FOR REVIEW"), "{text:?}");
}

#[test]
fn piped_or_with_format_check_prints_the_full_report_as_before() {
    // Piped (the test harness captures stdout): the Markdown report, never the summary,
    // and no colour codes even when asked for.
    let o = run(&["check", SHORT, "--color", "always"]);
    assert_exit(&o, 1);
    let md = stdout(&o);
    assert!(md.starts_with("# Pre-review checklist: "), "{md}");
    assert!(!md.contains('\x1b'));
    // On a terminal with --format, the report too.
    let (text, code) = on_terminal(&["check", SHORT, "--format", "md"], &[]);
    assert_eq!(code, 1);
    assert!(text.starts_with("# Pre-review checklist: "), "{text}");
    assert!(!text.contains('\x1b'));
}

#[test]
fn on_a_terminal_with_o_the_report_is_written_and_the_summary_names_it() {
    let scratch = Scratch::new("summary-o");
    let out = scratch.path("report.md");
    let out_s = out.to_str().unwrap();
    let (text, code) = on_terminal(&["check", SHORT, "-o", out_s], &[]);
    assert_eq!(code, 1, "{text}");
    assert!(text.contains(&format!("Full report: {out_s}")), "{text}");
    let written = std::fs::read(&out).expect("the report was written");
    assert_eq!(
        written,
        run(&["check", SHORT]).stdout,
        "the file is the full report"
    );
}

// ---------------------------------------------------------------------------------------
// Completions and the man page
// ---------------------------------------------------------------------------------------

#[test]
fn completions_for_bash_cover_every_command_and_flag() {
    let o = run(&["completions", "bash"]);
    assert_exit(&o, 0);
    let script = stdout(&o);
    assert!(script.contains("_gapwarden()"), "{script}");
    assert!(script.contains("complete -F _gapwarden"), "{script}");
    for word in [
        "check",
        "compare",
        "new",
        "explain",
        "rules",
        "spacing",
        "completions",
        "man",
        "--allow-incomplete",
        "--out-dir",
        "--working-rms-v",
        "--color",
    ] {
        assert!(script.contains(word), "bash completions lack {word}");
    }
    // The other shells clap_complete knows are generated too.
    for shell in ["zsh", "fish", "elvish", "powershell"] {
        let o = run(&["completions", shell]);
        assert_exit(&o, 0);
        assert!(stdout(&o).contains("spacing"), "{shell}");
    }
    assert_exit(&run(&["completions", "tcsh"]), 2);
}

#[test]
fn the_man_page_renders_from_the_clap_definitions() {
    let o = run(&["man"]);
    assert_exit(&o, 0);
    let page = stdout(&o);
    assert!(page.contains(".TH gapwarden 1"), "{page}");
    assert!(page.contains(".SH NAME"), "{page}");
    assert!(page.contains("Pre\\-review checklist") || page.contains("Pre-review checklist"));
    for command in ["check", "compare", "explain", "spacing", "completions"] {
        assert!(
            page.contains(&format!("gapwarden\\-{command}")) || page.contains(command),
            "{command}"
        );
    }
    // Where a roff formatter is installed, the page formats without a warning.
    if let Ok(r) = std::process::Command::new("groff")
        .args(["-man", "-Tutf8", "-ww", "-z"])
        .stdin(std::process::Stdio::piped())
        .stderr(std::process::Stdio::piped())
        .spawn()
    {
        use std::io::Write;
        let mut r = r;
        r.stdin.take().unwrap().write_all(page.as_bytes()).unwrap();
        let out = r.wait_with_output().unwrap();
        assert!(out.status.success());
        assert!(
            out.stderr.is_empty(),
            "{}",
            String::from_utf8_lossy(&out.stderr)
        );
    }
}

// ---------------------------------------------------------------------------------------
// new
// ---------------------------------------------------------------------------------------

#[test]
fn new_writes_a_blank_template_that_is_honestly_not_ready() {
    let scratch = Scratch::new("new-blank");
    let p = scratch.path("my design.toml");
    let p_s = p.to_str().unwrap();
    let o = run(&["new", p_s]);
    assert_exit(&o, 0);
    assert!(stderr(&o).contains("blank template"), "{}", describe(&o));
    let text = std::fs::read_to_string(&p).expect("written");
    let first = text.lines().next().unwrap();
    assert!(first.starts_with("# ") && first.contains(p_s), "{first}");
    assert!(!text.contains("examples/"), "names an example's path");
    // Every section, the optional ones commented out.
    for section in [
        "[design]",
        "[environment]",
        "[mains]",
        "[[circuit]]",
        "[[barrier]]",
    ] {
        assert!(text.lines().any(|l| l == section), "{section} missing");
    }
    for section in [
        "# [[part]]",
        "# [input]",
        "# [input.limiter]",
        "# [input.fuse]",
        "# [converter]",
        "# [emc]",
        "# [[emc.prescan]]",
        "# [emc.filter]",
    ] {
        let header = |l: &str| l == section || l.starts_with(&format!("{section} "));
        assert!(text.lines().any(header), "{section} missing");
    }
    // Required keys are marked; no distance is given.
    for key in [
        "name",
        "protection_class",
        "nominal_v",
        "id",
        "kind",
        "between",
        "grade",
        "working_rms_v",
    ] {
        assert!(
            text.lines()
                .any(|l| l.starts_with(&format!("{key} =")) && l.contains("required")),
            "{key} not marked required"
        );
    }
    for key in ["clearance_mm", "creepage_mm"] {
        assert!(
            !text.lines().any(|l| l.starts_with(key)),
            "{key} is given in a blank template"
        );
    }

    let o = run(&["check", p_s, "--format", "json"]);
    assert_exit(&o, 1);
    let r = json(&o);
    assert_eq!(r["readiness"]["state"], "not ready: incomplete");
    let barriers = r["barriers"].as_array().unwrap();
    assert!(!barriers.is_empty());
    assert!(barriers.iter().all(|b| b["verdict"] == "incomplete"));
    // The template's barrier: reinforced, 250 V rms on a 230 V OVC II system -> 3.0 mm
    // (module docs); material group IIIb assumed, PD2, general column 250 V: 2.5 mm
    // (IEC 60664-1 Table F.5, [TI1]) x 2 for reinforced = 5.0 mm.
    assert_eq!(barriers[0]["required_clearance_mm"].as_f64(), Some(3.0));
    assert_eq!(barriers[0]["required_creepage_mm"].as_f64(), Some(5.0));
    // Nothing blocks: early layout work may go on with --allow-incomplete.
    assert_exit(&run(&["check", p_s, "--allow-incomplete"]), 0);
}

#[test]
fn new_with_an_example_names_the_file_written_not_the_examples_path() {
    let scratch = Scratch::new("new-example");
    for (name, source) in [("class2-adapter", CLASS2), ("class1-appliance", CLASS1)] {
        let p = scratch.path(&format!("{name}-copy.toml"));
        let p_s = p.to_str().unwrap();
        let o = run(&["new", p_s, "--example", name]);
        assert_exit(&o, 0);
        let text = std::fs::read_to_string(&p).unwrap();
        let first = text.lines().next().unwrap();
        assert!(first.contains(&format!("gapwarden check {p_s}")), "{first}");
        assert!(!text.contains(source), "{name}: still names {source}");
        // Everything from [design] on is the example as shipped.
        let body = |t: &str| t[t.find("[design]").unwrap()..].to_string();
        assert_eq!(body(&text), body(&example_text(source)));
    }
    let o = run(&[
        "new",
        scratch.path("x.toml").to_str().unwrap(),
        "--example",
        "class2-adaptor",
    ]);
    assert_exit(&o, 2);
    assert!(
        stderr(&o).contains("did you mean \"class2-adapter\""),
        "{}",
        describe(&o)
    );
}

// ---------------------------------------------------------------------------------------
// spacing
// ---------------------------------------------------------------------------------------

const SPACING: &[&str] = &[
    "spacing",
    "--working-rms-v",
    "250",
    "--grade",
    "reinforced",
    "--material-group",
    "IIIa",
    "--printed-board",
    "--clearance-mm",
    "2",
    "--creepage-mm",
    "9",
];

#[test]
fn spacing_prints_a_readable_table_by_default() {
    let o = run(SPACING);
    // 2 mm declared against 3.0 mm required (module docs): fail, exit 1.
    assert_exit(&o, 1);
    let text = stdout(&o);
    assert!(
        serde_json::from_str::<Value>(&text).is_err(),
        "JSON by default"
    );
    let row = |name: &str| {
        text.lines()
            .find(|l| l.starts_with(name))
            .unwrap_or_else(|| panic!("no {name} row\n{text}"))
            .split_whitespace()
            .collect::<Vec<_>>()
            .join(" ")
    };
    assert!(
        row("clearance").starts_with("clearance 3 mm 2 mm -1 mm transient"),
        "{text}"
    );
    // Creepage: PD2, printed wiring, group I-IIIa at 250 V 1.0 mm x 2 = 2.0 mm for
    // reinforced (rules/SOURCES.md), raised to the 3.0 mm clearance; 9 mm declared: +6 mm.
    assert!(
        row("creepage").starts_with("creepage 3 mm 9 mm +6 mm clearance"),
        "{text}"
    );
    assert!(text.contains("verdict: FAIL"), "{text}");
    assert!(
        text.contains("Table F.2"),
        "the derivation steps are shown\n{text}"
    );
}

#[test]
fn spacing_format_json_is_one_barrier_without_made_up_circuit_names() {
    let mut args = SPACING.to_vec();
    args.extend(["--format", "json"]);
    let o = run(&args);
    assert_exit(&o, 1);
    let v = json(&o);
    assert_eq!(v["verdict"], "fail");
    assert_eq!(v["required_clearance_mm"].as_f64(), Some(3.0));
    assert!(v["between"].is_null(), "{}", v["between"]);
    assert!(!stdout(&o).contains("\"a\"") && !stdout(&o).contains("\"b\""));
    for key in [
        "id",
        "required_creepage_mm",
        "clearance_mm",
        "creepage_mm",
        "derivation",
    ] {
        assert!(v.get(key).is_some(), "{key}");
    }
}

// ---------------------------------------------------------------------------------------
// compare
// ---------------------------------------------------------------------------------------

fn figure<'a>(m: &'a Value, subject: &str, name: &str) -> &'a Value {
    m["figures"]
        .as_array()
        .unwrap()
        .iter()
        .find(|f| f["subject"] == subject && f["figure"] == name)
        .unwrap_or_else(|| panic!("no figure {subject} {name}: {}", m["figures"]))
}

#[test]
fn compare_format_json_lists_barrier_power_entry_and_emc_figures() {
    let scratch = Scratch::new("compare-json");
    let text = example_text(CLASS2);
    let edited = text
        .replace("revision = \"B\"", "revision = \"C\"")
        .replace("creepage_mm = 6.4", "creepage_mm = 2.5")
        .replace("cold_ohm = 10", "cold_ohm = 20")
        .replace("margin_db = 6", "margin_db = 10");
    assert_eq!(edited.matches("cold_ohm = 20").count(), 1);
    let new = scratch.write("rev-c.toml", &edited);
    let o = run(&["compare", CLASS2, &new, "--format", "json"]);
    assert_exit(&o, 1);
    let m = json(&o);
    assert_eq!(m["old"]["revision"], "B");
    assert_eq!(m["new"]["revision"], "C");
    let creepage = figure(&m, "pri-sec", "creepage laid out, mm");
    assert_eq!(creepage["old_value"].as_f64(), Some(6.4));
    assert_eq!(creepage["new_value"].as_f64(), Some(2.5));
    assert_eq!(figure(&m, "pri-sec", "verdict")["new"], "Fail");
    // A cold limiter of twice the resistance lowers the switch-on peak (Ohm's law: the
    // peak is about the crest voltage over the circuit's resistance).
    let inrush = figure(&m, "power_entry", "inrush_peak_a");
    assert!(
        inrush["new_value"].as_f64().unwrap() < inrush["old_value"].as_f64().unwrap(),
        "{inrush}"
    );
    // Required attenuation = noise - (limit - margin): 4 dB more margin, 4 dB more needed.
    let att = figure(&m, "emc", "required_attenuation_db");
    let rise = att["new_value"].as_f64().unwrap() - att["old_value"].as_f64().unwrap();
    assert!((rise - 4.0).abs() < 1e-9, "{att}");
    let findings = m["findings"].as_array().unwrap();
    assert!(
        findings.iter().any(|f| f["change"] == "new"
            && f["id"] == "barrier.creepage_short"
            && f["subject"] == "pri-sec"),
        "{findings:?}"
    );
    assert!(
        m["inputs"]
            .as_array()
            .unwrap()
            .iter()
            .any(|i| i["key"] == "design.revision")
    );
}

#[test]
fn a_finding_whose_message_changed_is_changed_not_new_and_gone() {
    let scratch = Scratch::new("compare-changed");
    let text = example_text(SHORT);
    let new = scratch.write(
        "rev-d.toml",
        &text.replace("clearance_mm = 2.4", "clearance_mm = 2.0"),
    );
    let o = run(&["compare", SHORT, &new, "--format", "json"]);
    assert_exit(&o, 1);
    let m = json(&o);
    let same_id: Vec<&Value> = m["findings"]
        .as_array()
        .unwrap()
        .iter()
        .filter(|f| f["id"] == "barrier.clearance_short")
        .collect();
    assert_eq!(same_id.len(), 1, "{same_id:?}");
    let f = same_id[0];
    assert_eq!(f["change"], "changed");
    // 3.0 mm required (module docs): 2.4 mm is 0.6 mm short, 2.0 mm is 1 mm short.
    assert!(
        f["old_message"].as_str().unwrap().contains("0.6 mm short"),
        "{f}"
    );
    assert!(f["message"].as_str().unwrap().contains("1 mm short"), "{f}");
    let md = stdout(&run(&["compare", SHORT, &new]));
    assert!(
        md.contains("- changed Blocking: barrier.clearance\\_short (gap-under-t1)"),
        "{md}"
    );
    assert!(
        !md.contains("- new Blocking") && !md.contains("- gone Blocking"),
        "{md}"
    );
}

#[test]
fn compare_o_writes_the_comparison_and_never_over_a_revision() {
    let scratch = Scratch::new("compare-o");
    for (format, name) in [("md", "cmp.md"), ("html", "cmp.html"), ("json", "cmp.json")] {
        let printed = run(&["compare", CLASS1, CLASS2, "--format", format]);
        assert_exit(&printed, 0);
        let out = scratch.path(name);
        let o = run(&[
            "compare",
            CLASS1,
            CLASS2,
            "--format",
            format,
            "-o",
            out.to_str().unwrap(),
        ]);
        assert_exit(&o, 0);
        assert!(o.stdout.is_empty(), "{}", describe(&o));
        assert_eq!(std::fs::read(&out).unwrap(), printed.stdout, "{format}");
    }
    let html = std::fs::read_to_string(scratch.path("cmp.html")).unwrap();
    assert!(
        html.starts_with("<!DOCTYPE html>") && html.contains("<table>"),
        "{html}"
    );
    assert!(!html.contains("http://") && !html.contains("https://") && !html.contains(" src="));
    // The later revision's file is an input: refused, unchanged.
    let copy = scratch.write("new.toml", &example_text(CLASS2));
    let o = run(&["compare", CLASS1, &copy, "-o", &copy]);
    assert_exit(&o, 2);
    assert_eq!(
        std::fs::read_to_string(&copy).unwrap(),
        example_text(CLASS2)
    );
}

// ---------------------------------------------------------------------------------------
// explain
// ---------------------------------------------------------------------------------------

#[test]
fn explain_a_part_shows_its_ratings_against_the_barrier_it_bridges() {
    let o = run(&["explain", CLASS2, "CY1"]);
    assert_exit(&o, 0);
    let text = stdout(&o);
    // The example's CY1: a Y1 capacitor, 250 V ac, 1.0 nF, across pri-sec (reinforced).
    assert!(
        text.contains("CY1 (y-capacitor) across pri-sec (reinforced insulation"),
        "{text}"
    );
    assert!(text.contains("subclass = Y1"), "{text}");
    assert!(text.contains("rated_ac_v = 250"), "{text}");
    assert!(text.contains("capacitance_nf = 1"), "{text}");
    let o = run(&["explain", CLASS2, "U3"]);
    assert_exit(&o, 0);
    assert!(
        stdout(&o).contains("isolation_test_v_rms = 5000"),
        "{}",
        stdout(&o)
    );
}

#[test]
fn explain_a_finding_gives_its_checks_rationale_and_source() {
    let o = run(&["explain", SHORT, "barrier.clearance_short"]);
    assert_exit(&o, 0);
    let text = stdout(&o);
    assert!(text.contains("check barrier.clearance_short:"), "{text}");
    assert!(text.contains("rationale: "), "{text}");
    assert!(text.contains("source: IEC 60664-1"), "{text}");
    assert!(
        text.contains("gap-under-t1.clearance: required 3 mm"),
        "{text}"
    );
}

#[test]
fn explain_covers_every_assumption_and_every_power_entry_and_emc_figure() {
    let (_, report) = {
        let o = run(&["check", CLASS2, "--format", "json"]);
        let v = json(&o);
        (o, v)
    };
    let o = run(&["explain", CLASS2, "assumptions"]);
    assert_exit(&o, 0);
    let text = stdout(&o);
    let mut shown = 0;
    for list in [
        &report["assumptions"],
        &report["power_entry"]["assumptions"],
        &report["emc"]["assumptions"],
    ] {
        for a in list.as_array().unwrap() {
            shown += 1;
            assert!(text.contains(a.as_str().unwrap()), "missing {a}\n{text}");
        }
    }
    assert!(
        shown > 3,
        "the report shows more than the project's own assumptions"
    );
    // Every numeric top-level figure of the EMC section can be explained by its JSON name.
    for (field, value) in report["emc"].as_object().unwrap() {
        if !value.is_number() || matches!(field.as_str(), "harmonics_evaluated") {
            continue;
        }
        let o = run(&["explain", CLASS2, &format!("emc.{field}")]);
        assert_exit(&o, 0);
        assert!(
            stdout(&o).starts_with(&format!("emc.{field} = ")),
            "{}",
            stdout(&o)
        );
    }
    // Every power-entry figure of the report's sections, and the contract's fields.
    for section in report["power_entry"]["sections"].as_array().unwrap() {
        for f in section["figures"].as_array().unwrap() {
            let id = f["id"].as_str().unwrap();
            assert_exit(&run(&["explain", CLASS2, id]), 0);
        }
    }
    for field in [
        "inrush_peak_a",
        "inrush_i2t_a2s",
        "limiter_energy_j",
        "hot_restart_peak_a",
        "input_rms_a",
        "power_factor",
        "bulk_valley_v",
        "discharge_time_constant_s",
        "touch_current_ma",
    ] {
        let o = run(&["explain", CLASS2, &format!("power_entry.{field}")]);
        assert_exit(&o, 0);
        assert!(
            stdout(&o).contains("formula") || stdout(&o).contains("power_entry."),
            "{field}"
        );
    }
    // The isolation section: the pair the Class II example judges, and its structure.
    let o = run(&["explain", CLASS2, "isolation"]);
    assert_exit(&o, 0);
    let text = stdout(&o);
    assert!(text.contains("ac-input -> output"), "{text}");
    assert!(text.contains("input-output (reinforced)"), "{text}");
    // An unknown item lists parts and figures among the items.
    let o = run(&["explain", CLASS2, "nothing-here"]);
    assert_exit(&o, 2);
    let err = stderr(&o);
    for item in [
        "CY1",
        "emc.dm_corner_hz",
        "power_entry.inrush_peak_a",
        "assumptions",
    ] {
        assert!(err.contains(item), "{item}: {err}");
    }
}

// ---------------------------------------------------------------------------------------
// Batch summary files
// ---------------------------------------------------------------------------------------

#[test]
fn batch_with_out_dir_writes_a_markdown_and_json_summary_beside_the_reports() {
    let scratch = Scratch::new("batch-summary");
    let out = scratch.path("out");
    let o = run(&["check", CLASS2, SHORT, "--out-dir", out.to_str().unwrap()]);
    // The short-clearance fixture is not ready: the run exits 1.
    assert_exit(&o, 1);
    let md = std::fs::read_to_string(out.join("gapwarden-summary.md")).expect("summary.md");
    assert!(md.starts_with("# Summary of 2 designs"), "{md}");
    assert!(md.contains("| design | revision | file |"), "{md}");
    assert!(md.contains("2 designs checked; exit status 1."), "{md}");
    let j: Value = serde_json::from_str(
        &std::fs::read_to_string(out.join("gapwarden-summary.json")).expect("summary.json"),
    )
    .expect("JSON");
    assert_eq!(j["designs_checked"], 2);
    assert_eq!(j["exit_status"], 1);
    let designs = j["designs"].as_array().unwrap();
    assert_eq!(designs[0]["file"], "class2-adapter.toml");
    assert_eq!(designs[0]["ready"], true);
    assert_eq!(designs[1]["blocking"], 1);
    for d in designs {
        let report = d["report"].as_str().expect("a report path");
        assert!(out.join(report).is_file(), "{report}");
    }
    assert!(
        stdout(&o).contains("gapwarden-summary.md"),
        "{}",
        stdout(&o)
    );
}

#[test]
fn batch_without_out_dir_prints_the_summary_and_says_no_report_was_written() {
    let o = run(&["check", CLASS2, SHORT]);
    assert_exit(&o, 1);
    let text = stdout(&o);
    assert!(text.contains("2 designs checked; exit status 1."), "{text}");
    assert!(text.contains("No reports were written"), "{text}");
}

// ---------------------------------------------------------------------------------------
// Hints for common mistakes
// ---------------------------------------------------------------------------------------

#[test]
fn a_numeral_where_a_roman_word_is_expected_gets_the_word() {
    let scratch = Scratch::new("hints");
    let text = example_text(CLASS2);
    let p = scratch.write(
        "class.toml",
        &text.replacen("protection_class = \"II\"", "protection_class = 2", 1),
    );
    let o = run(&["check", &p]);
    assert_exit(&o, 2);
    let err = stderr(&o);
    assert!(err.contains("design.protection_class"), "{err}");
    assert!(err.contains("did you mean \"II\"?"), "{err}");

    let p = scratch.write(
        "group.toml",
        &text.replacen("material_group = \"IIIa\"", "material_group = \"3a\"", 1),
    );
    let o = run(&["check", &p]);
    assert_exit(&o, 2);
    let err = stderr(&o);
    assert!(err.contains("barrier[1].material_group"), "{err}");
    assert!(err.contains("did you mean \"IIIa\"?"), "{err}");
}

#[test]
fn a_house_checks_unknown_field_is_named_at_its_line_with_the_field_meant() {
    let scratch = Scratch::new("hints-house");
    let rules = "id = \"house.checks\"\ntitle = \"t\"\nsource = \"s\"\nprovenance = \"p\"\n\n\
                 [[check]]\nid = \"house.gap\"\ntitle = \"Gap\"\nseverty = \"warning\"\n\
                 over = \"barriers\"\ncondition = { field = \"clearance_mm\", lt = 7.0 }\n\
                 message = \"m\"\nrationale = \"r\"\nsource = \"s\"\n";
    scratch.write("house/checks.toml", rules);
    let dir = scratch.path("house");
    let o = run(&["check", CLASS2, "--rules", dir.to_str().unwrap()]);
    assert_exit(&o, 2);
    let err = stderr(&o);
    // `severty` stands on line 9 of the file above.
    assert!(err.contains("checks.toml:9:1"), "{err}");
    assert!(err.contains("unknown field `severty`"), "{err}");
    assert!(err.contains("did you mean `severity`?"), "{err}");
}
