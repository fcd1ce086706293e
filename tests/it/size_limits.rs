//! Large valid designs and runaway house templates and checks: output, work and memory
//! grow with the design (never as its square), a large design renders with the shipped
//! template, diagnostics are capped, and what a house template or check builds is bounded.
//! Every large input is generated here; where memory matters the binary runs under an
//! address-space limit (`ulimit -v` in `sh -c`), so a regression fails the test instead of
//! exhausting the machine.

use crate::common;
use common::*;

use std::path::{Path, PathBuf};
use std::process::{Command, Output};
use std::sync::atomic::{AtomicUsize, Ordering};

use serde_json::Value;

/// Address-space limit for runs that must stay small, in KiB (1.5 GiB: the debug binary,
/// its threads' reserved stacks and arenas, and the work itself).
const ADDRESS_SPACE_KIB: u64 = 1_536 * 1024;

/// A scratch folder under the system temp folder, removed when dropped.
struct Scratch(PathBuf);

impl Scratch {
    fn new(tag: &str) -> Self {
        static N: AtomicUsize = AtomicUsize::new(0);
        let n = N.fetch_add(1, Ordering::SeqCst);
        let dir =
            std::env::temp_dir().join(format!("gapwarden-size-{}-{tag}-{n}", std::process::id()));
        let _ = std::fs::remove_dir_all(&dir);
        std::fs::create_dir_all(&dir).expect("scratch folder can be created");
        Scratch(dir)
    }

    fn write(&self, name: &str, text: &str) -> PathBuf {
        let path = self.0.join(name);
        if let Some(parent) = path.parent() {
            std::fs::create_dir_all(parent).expect("folder can be created");
        }
        std::fs::write(&path, text).expect("file can be written");
        path
    }
}

impl Drop for Scratch {
    fn drop(&mut self) {
        let _ = std::fs::remove_dir_all(&self.0);
    }
}

/// Runs the binary in `dir` under the address-space limit.
fn run_limited(dir: &Path, args: &[&str]) -> Output {
    let mut script = format!("ulimit -v {ADDRESS_SPACE_KIB} && exec \"$0\"");
    for i in 1..=args.len() {
        script.push_str(&format!(" \"${i}\""));
    }
    Command::new("sh")
        .current_dir(dir)
        .arg("-c")
        .arg(script)
        .arg(env!("CARGO_BIN_EXE_gapwarden"))
        .args(args)
        .output()
        .expect("sh can be started")
}

fn json(o: &Output) -> Value {
    serde_json::from_slice(&o.stdout)
        .unwrap_or_else(|e| panic!("stdout is not JSON ({e})\n{}", describe(o)))
}

const HEAD: &str =
    "[design]\nname = \"generated\"\nprotection_class = \"II\"\n\n[mains]\nnominal_v = 230\n\n";

fn circuit(id: &str, kind: &str, accessible: bool) -> String {
    format!("[[circuit]]\nid = \"{id}\"\nkind = \"{kind}\"\naccessible = {accessible}\n\n")
}

/// Reinforced at 250 V laid out at 8 mm passes with room to spare (IEC 60664-1 Table F.2
/// and F.5, from memory: reinforced at 250 V, PD2, group IIIb needs about 5 mm creepage);
/// the figures do not matter here, only that every barrier can be evaluated.
fn barrier(id: &str, a: &str, b: &str, grade: &str) -> String {
    format!(
        "[[barrier]]\nid = \"{id}\"\nbetween = [\"{a}\", \"{b}\"]\ngrade = \"{grade}\"\n\
         working_rms_v = 250\nclearance_mm = 8\ncreepage_mm = 8\n\n"
    )
}

/// A chain: a mains circuit, then `n - 1` safe circuits, each joined to the next by a
/// reinforced barrier; the last one is accessible.
fn chain(n: usize) -> String {
    let mut text = String::from(HEAD);
    for i in 0..n {
        let kind = if i == 0 { "mains" } else { "safe" };
        text.push_str(&circuit(&format!("c{i}"), kind, i == n - 1));
    }
    for i in 0..n - 1 {
        text.push_str(&barrier(
            &format!("b{i}"),
            &format!("c{i}"),
            &format!("c{}", i + 1),
            "reinforced",
        ));
    }
    text
}

fn findings_with<'a>(report: &'a Value, id: &str) -> Vec<&'a Value> {
    report["findings"]
        .as_array()
        .expect("findings is an array")
        .iter()
        .filter(|f| f["id"] == id)
        .collect()
}

// ---------------------------------------------------------------------------------------
// Item 7: isolation pairs grow with the design, not as hazardous x accessible
// ---------------------------------------------------------------------------------------

#[test]
fn isolation_of_1500_mains_and_1500_accessible_circuits_reports_one_entry_per_accessible_circuit() {
    // Each mains circuit m{i} is separated from its own output o{i} by basic insulation
    // only, and the outputs are joined by functional insulation: every one of the
    // 1500 x 1500 pairs is connected, and Class II needs double or reinforced insulation
    // (IEC 61140 clause 7.3, from memory), so every output is judged insufficient.
    let n = 1500;
    let mut text = String::from(HEAD);
    for i in 0..n {
        text.push_str(&circuit(&format!("m{i}"), "mains", false));
        text.push_str(&circuit(&format!("o{i}"), "safe", true));
    }
    for i in 0..n {
        text.push_str(&barrier(
            &format!("mo{i}"),
            &format!("m{i}"),
            &format!("o{i}"),
            "basic",
        ));
        if i + 1 < n {
            text.push_str(&barrier(
                &format!("oo{i}"),
                &format!("o{i}"),
                &format!("o{}", i + 1),
                "functional",
            ));
        }
    }
    let scratch = Scratch::new("pairs");
    scratch.write("p.toml", &text);
    let o = run_limited(&scratch.0, &["check", "p.toml", "--format", "json"]);
    assert_exit(&o, 1);
    let report = json(&o);
    let iso = &report["isolation"];
    assert_eq!(
        iso["pair_count"],
        (n * n) as u64,
        "the pairs judged are counted"
    );
    assert_eq!(iso["pairs_without_barrier"], 0);
    let pairs = iso["pairs"].as_array().unwrap();
    assert_eq!(pairs.len(), n, "one entry per accessible circuit");
    for p in pairs {
        assert_eq!(
            p["provides_level"], 1,
            "basic insulation is the weakest: {p}"
        );
        assert_eq!(p["needs_level"], 2);
        assert_eq!(p["hazardous_count"], n as u64);
    }
    // The weakest path to o7 is its own basic barrier, not a longer one.
    let o7 = pairs.iter().find(|p| p["accessible"] == "o7").unwrap();
    assert_eq!(o7["hazardous"], "m7");
    assert_eq!(o7["path"]["barriers"], serde_json::json!(["mo7"]));
    assert_eq!(findings_with(&report, "isolation.insufficient").len(), n);
}

#[test]
fn isolation_of_3000_circuits_all_mains_and_accessible_stays_small() {
    // The reproducer: every circuit is mains and accessible (6 GB before).
    let n = 3000;
    let mut text = String::from(HEAD);
    for i in 0..n {
        text.push_str(&circuit(&format!("c{i}"), "mains", true));
    }
    let scratch = Scratch::new("all-mains");
    scratch.write("p.toml", &text);
    let o = run_limited(&scratch.0, &["check", "p.toml", "--format", "json"]);
    assert_exit(&o, 1);
    let report = json(&o);
    let iso = &report["isolation"];
    assert_eq!(iso["pair_count"], (n * n) as u64);
    // No barrier at all: every pair but a circuit with itself lacks one.
    assert_eq!(iso["pairs_without_barrier"], (n * (n - 1)) as u64);
    let pairs = iso["pairs"].as_array().unwrap();
    assert!(pairs.len() <= 2 * n, "{} entries", pairs.len());
    let c5: Vec<&Value> = pairs.iter().filter(|p| p["accessible"] == "c5").collect();
    assert!(
        c5.iter()
            .any(|p| p["hazardous"] == "c5" && p["provides_level"] == 0)
    );
    assert!(
        c5.iter()
            .any(|p| p["path"].is_null() && p["hazardous_count"] == (n - 1) as u64)
    );
}

#[test]
fn class1_earth_holding_an_accessible_circuit_is_judged_when_it_lacks_basic_insulation() {
    // Class I: knob is reached from primary through reinforced insulation, and is also held
    // at earth by the control board, which has only functional insulation from primary.
    // Class I needs basic insulation between hazardous parts and earthed parts (IEC 61140
    // clause 7.2, from memory), so the earth that holds knob is judged as well.
    let text = format!(
        "{}{}{}{}{}{}",
        HEAD.replace("\"II\"", "\"I\""),
        circuit("primary", "mains", false),
        "[[circuit]]\nid = \"control\"\nkind = \"safe\"\nearthed = true\n\n",
        circuit("knob", "safe", true),
        barrier("pri-knob", "primary", "knob", "reinforced")
            + &barrier("pri-control", "primary", "control", "functional"),
        barrier("control-knob", "control", "knob", "basic"),
    );
    let scratch = Scratch::new("class1-earth");
    scratch.write("p.toml", &text);
    let o = run_limited(&scratch.0, &["check", "p.toml", "--format", "json"]);
    assert_exit(&o, 1);
    let report = json(&o);
    let pairs = report["isolation"]["pairs"].as_array().unwrap();
    assert_eq!(pairs.len(), 2, "{pairs:#?}");
    assert_eq!(
        pairs[0]["provides_level"], 2,
        "the direct path: {}",
        pairs[0]
    );
    assert!(pairs[0]["earth"].is_null());
    assert_eq!(pairs[1]["earth"], "control");
    assert_eq!(pairs[1]["needs_level"], 1);
    assert_eq!(pairs[1]["provides_level"], 0);
    let f = findings_with(&report, "isolation.insufficient");
    assert_eq!(f.len(), 1, "{f:#?}");
    assert_eq!(f[0]["subject"], "knob");
}

// ---------------------------------------------------------------------------------------
// Item 8: the structure diagram is bounded; the JSON carries the structure as data
// ---------------------------------------------------------------------------------------

#[test]
fn a_chain_of_5000_circuits_draws_a_bounded_diagram_and_lists_every_edge() {
    let n = 5000;
    let scratch = Scratch::new("chain");
    scratch.write("p.toml", &chain(n));
    let o = run_limited(&scratch.0, &["check", "p.toml", "--format", "json"]);
    assert_exit(&o, 0);
    let report = json(&o);
    let iso = &report["isolation"];
    let diagram = iso["diagram"].as_str().unwrap();
    // Drawn in full, the chain would indent each of its 4999 lines further: about
    // 3 x 4999^2 / 2 = 37 MB. Bounded, it stays under 100 kB.
    assert!(
        diagram.len() < 100_000,
        "diagram of {} bytes",
        diagram.len()
    );
    assert_eq!(iso["diagram_truncated"], true);
    assert!(diagram.contains("not drawn"), "the cut is said: {diagram}");
    let edges = iso["structure"].as_array().unwrap();
    assert_eq!(edges.len(), n - 1, "every barrier is an edge");
    assert_eq!(edges[42]["barrier"], "b42");
    assert_eq!(edges[42]["between"], serde_json::json!(["c42", "c43"]));
    // The one path is 4999 barriers long: only the last ones are listed.
    let path = &iso["pairs"][0]["path"];
    let shown = path["barriers"].as_array().unwrap().len();
    assert!(shown <= 64, "{shown} barriers listed");
    assert_eq!(path["omitted_barriers"], (n - 1 - shown) as u64);
    assert_eq!(
        path["circuits"][0], "c0",
        "the path still starts at the mains circuit"
    );
    assert_eq!(iso["pairs"][0]["provides_level"], 2);
}

// ---------------------------------------------------------------------------------------
// Item 9: the shipped template is not limited; a house template is, and says so
// ---------------------------------------------------------------------------------------

#[test]
fn a_design_of_20000_barriers_renders_with_the_shipped_template_but_not_a_limited_house_copy() {
    let scratch = Scratch::new("big-md");
    scratch.write("p.toml", &chain(20_001));
    let o = run_limited(&scratch.0, &["check", "p.toml"]);
    assert_exit(&o, 0);
    let md = stdout(&o);
    assert!(
        md.contains("| b19999 |"),
        "the last barrier is in the table"
    );

    // The same template as a house copy runs with the work allowance and runs out.
    let shipped = std::fs::read_to_string(root().join("templates/report.md.j2")).unwrap();
    scratch.write("tmpl/report.md.j2", &shipped);
    let o = run_limited(&scratch.0, &["check", "p.toml", "--templates", "tmpl"]);
    assert_exit(&o, 2);
    let err = stderr(&o);
    assert!(
        err.contains("tmpl/report.md.j2:"),
        "the house template is named: {err}"
    );
    assert!(
        err.contains("house template ran out of its work allowance"),
        "{err}"
    );
    assert!(err.contains("fuel"), "what ran out is named: {err}");
}

#[test]
fn three_hundred_by_three_hundred_isolation_pairs_render_as_markdown() {
    // The second reproducer: 300 mains circuits each behind reinforced insulation
    // from its own accessible output, the outputs joined by functional insulation.
    let n = 300;
    let mut text = String::from(HEAD);
    for i in 0..n {
        text.push_str(&circuit(&format!("m{i}"), "mains", false));
        text.push_str(&circuit(&format!("o{i}"), "safe", true));
    }
    for i in 0..n {
        text.push_str(&barrier(
            &format!("mo{i}"),
            &format!("m{i}"),
            &format!("o{i}"),
            "reinforced",
        ));
        if i + 1 < n {
            text.push_str(&barrier(
                &format!("oo{i}"),
                &format!("o{i}"),
                &format!("o{}", i + 1),
                "functional",
            ));
        }
    }
    let scratch = Scratch::new("300x300");
    scratch.write("p.toml", &text);
    let o = run_limited(&scratch.0, &["check", "p.toml"]);
    assert_exit(&o, 0);
    let md = stdout(&o);
    assert!(md.contains("(90000 pairs in all)"), "the pairs are counted");
    // Isolation rows read `| m7 | o7 | ...`; barrier rows `| mo7 | m7 – o7 | ...`.
    let rows = md
        .lines()
        .filter(|l| {
            let cells: Vec<&str> = l.split('|').map(str::trim).collect();
            cells.len() > 3 && cells[1].starts_with('m') && cells[2].starts_with('o')
        })
        .count();
    assert_eq!(rows, n, "one isolation row per accessible circuit");
}

// ---------------------------------------------------------------------------------------
// Item 10: diagnostics are capped
// ---------------------------------------------------------------------------------------

#[test]
fn five_thousand_unknown_references_print_the_first_hundred_and_count_the_rest() {
    let n = 5000;
    let mut text = String::from(HEAD);
    text.push_str(&circuit("primary", "mains", false));
    for i in 0..n {
        text.push_str(&barrier(
            &format!("b{i}"),
            "primary",
            &format!("missing{i}"),
            "basic",
        ));
    }
    let scratch = Scratch::new("refs");
    scratch.write("p.toml", &text);
    let o = run_limited(&scratch.0, &["check", "p.toml"]);
    assert_exit(&o, 2);
    let err = stderr(&o);
    let errors = err.lines().filter(|l| l.starts_with("error: ")).count();
    assert_eq!(
        errors,
        101,
        "100 problems and one count line:\n{}",
        &err[..err.len().min(2000)]
    );
    assert!(err.contains("missing0"), "the first problem is shown");
    assert!(!err.contains("missing4999"), "the last is not");
    assert!(
        err.contains(&format!("{} more problems not shown ({n} in all)", n - 100)),
        "{}",
        err.lines().last().unwrap_or_default()
    );
    assert!(err.len() < 100_000, "{} bytes of errors", err.len());
}

// ---------------------------------------------------------------------------------------
// Item 11: what a house template or house check builds is bounded
// ---------------------------------------------------------------------------------------

const DOUBLING: &str = "{% set ns = namespace(x=[1]) %}{% for i in range(40) %}{% set ns.x = ns.x + ns.x %}{% endfor %}{{ ns.x | length }}";

#[test]
fn a_house_template_doubling_a_list_stops_with_a_memory_error_naming_the_file() {
    let scratch = Scratch::new("tmpl-doubling");
    scratch.write("p.toml", &chain(3));
    scratch.write("tmpl/report.md.j2", DOUBLING);
    let o = run_limited(&scratch.0, &["check", "p.toml", "--templates", "tmpl"]);
    assert_exit(&o, 2);
    let err = stderr(&o);
    assert!(err.contains("tmpl/report.md.j2"), "{err}");
    assert!(err.contains("MB of memory"), "{err}");
}

#[test]
fn a_house_check_doubling_a_list_in_its_message_stops_with_file_and_line() {
    let scratch = Scratch::new("check-doubling");
    scratch.write("p.toml", &chain(3));
    let check = format!(
        "id = \"checks.house-size\"\ntitle = \"t\"\nsource = \"s\"\nprovenance = \"p\"\n\n\
         [[check]]\nid = \"house.doubling\"\ntitle = \"t\"\nseverity = \"note\"\nover = \"report\"\n\
         condition = \"true\"\nmessage = \"{}\"\nrationale = \"r\"\nsource = \"s\"\n",
        DOUBLING.replace('"', "\\\"")
    );
    scratch.write("house/checks/size.toml", &check);
    let o = run_limited(&scratch.0, &["check", "p.toml", "--rules", "house"]);
    assert_exit(&o, 2);
    let err = stderr(&o);
    // The [[check]] table starts on line 6 of the file written above.
    assert!(err.contains("house/checks/size.toml:6"), "{err}");
    assert!(err.contains("house.doubling"), "{err}");
    assert!(err.contains("MB of memory"), "{err}");
}

#[test]
fn a_house_template_writing_more_than_its_output_bound_stops_naming_the_file() {
    // 60,000 lines of 1 kB: 60 MB, each piece small, and well within the work allowance.
    let scratch = Scratch::new("tmpl-output");
    scratch.write("p.toml", &chain(3));
    scratch.write(
        "tmpl/report.md.j2",
        "{% set line = \"x\" * 1000 %}{% for i in range(60000) %}{{ line }}\n{% endfor %}",
    );
    let o = run_limited(&scratch.0, &["check", "p.toml", "--templates", "tmpl"]);
    assert_exit(&o, 2);
    let err = stderr(&o);
    assert!(err.contains("tmpl/report.md.j2"), "{err}");
    assert!(err.contains("wrote more than"), "{err}");
}

// ---------------------------------------------------------------------------------------
// Item 15: nesting beyond the TOML parser's limit is located
// ---------------------------------------------------------------------------------------

#[test]
fn a_20000_level_dotted_key_is_refused_with_its_line_column_and_key() {
    let mut text = String::from(HEAD);
    text.push_str(&"a.".repeat(20_000));
    text.push_str("b = 1\n");
    let scratch = Scratch::new("deep");
    scratch.write("p.toml", &text);
    let o = run_limited(&scratch.0, &["check", "p.toml"]);
    assert_exit(&o, 2);
    let err = stderr(&o);
    // HEAD has 7 lines; the dotted key is on line 8.
    assert!(err.contains("p.toml:8:"), "file, line and column: {err}");
    assert!(err.contains("`a.a.a."), "the key is named: {err}");
    assert!(err.contains("nested more than"), "{err}");
    assert!(err.len() < 2000, "{} bytes", err.len());
}
