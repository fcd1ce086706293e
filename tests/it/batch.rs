//! Many designs at once and revision comparison, run through the binary: the summary,
//! one report per design, the same output whatever the number of threads, the worst exit
//! status, and `compare` on two revisions of an example.

use std::path::{Path, PathBuf};
use std::process::Output;

use assert_cmd::cargo::cargo_bin_cmd;

fn run(args: &[&str]) -> Output {
    let mut cmd = cargo_bin_cmd!("gapwarden");
    cmd.current_dir(env!("CARGO_MANIFEST_DIR")).args(args);
    cmd.output().expect("the binary runs")
}

fn stdout(o: &Output) -> String {
    String::from_utf8_lossy(&o.stdout).to_string()
}

/// A fresh folder under the system temp dir, removed at the end.
struct Scratch(PathBuf);

impl Scratch {
    fn new(name: &str) -> Self {
        let dir =
            std::env::temp_dir().join(format!("gapwarden-batch-{name}-{}", std::process::id()));
        let _ = std::fs::remove_dir_all(&dir);
        std::fs::create_dir_all(&dir).expect("temp folder");
        Scratch(dir)
    }
}

impl Drop for Scratch {
    fn drop(&mut self) {
        let _ = std::fs::remove_dir_all(&self.0);
    }
}

/// Every file under a folder with its bytes, by path relative to the folder.
fn tree(dir: &Path) -> Vec<(String, Vec<u8>)> {
    let mut out = Vec::new();
    let mut stack = vec![dir.to_path_buf()];
    while let Some(d) = stack.pop() {
        for entry in std::fs::read_dir(&d).expect("readable").flatten() {
            let p = entry.path();
            if p.is_dir() {
                stack.push(p);
            } else {
                let rel = p.strip_prefix(dir).unwrap_or(&p).display().to_string();
                out.push((rel, std::fs::read(&p).expect("readable")));
            }
        }
    }
    out.sort();
    out
}

/// A folder holding both examples, a failing fixture and some generated copies.
fn design_folder(scratch: &Scratch) -> PathBuf {
    let root = scratch.0.join("designs");
    std::fs::create_dir_all(root.join("family/rev-a")).expect("folders");
    std::fs::create_dir_all(root.join("rules")).expect("folders");
    let manifest = Path::new(env!("CARGO_MANIFEST_DIR"));
    for (from, to) in [
        ("examples/class2-adapter.toml", "adapter.toml"),
        ("examples/class1-appliance.toml", "family/appliance.toml"),
        (
            "tests/fixtures/short-clearance.toml",
            "family/rev-a/charger.toml",
        ),
    ] {
        std::fs::copy(manifest.join(from), root.join(to)).expect("copy");
    }
    let adapter =
        std::fs::read_to_string(manifest.join("examples/class2-adapter.toml")).expect("example");
    for i in 0..12 {
        let text = adapter.replace("revision = \"B\"", &format!("revision = \"gen-{i}\""));
        std::fs::write(root.join(format!("family/generated-{i:02}.toml")), text).expect("write");
    }
    // Not a project: files in a folder named `rules` are left alone.
    std::fs::write(root.join("rules/not-a-design.toml"), "id = \"x\"\n").expect("write");
    root
}

#[test]
fn a_folder_is_checked_into_one_report_each_with_a_summary_and_the_worst_exit() {
    let scratch = Scratch::new("folder");
    let root = design_folder(&scratch);
    let out = scratch.0.join("out");
    let o = run(&[
        "check",
        root.to_str().unwrap(),
        "--out-dir",
        out.to_str().unwrap(),
        "--format",
        "json",
    ]);
    // The short-clearance charger has a blocking finding: the worst status is 1.
    assert_eq!(
        o.status.code(),
        Some(1),
        "{}",
        String::from_utf8_lossy(&o.stderr)
    );
    let summary = stdout(&o);
    assert!(
        summary.contains("| design | revision | file |"),
        "{summary}"
    );
    assert!(
        summary.contains("15 designs checked; exit status 1."),
        "{summary}"
    );
    assert!(summary.contains("Bench charger 12 W"), "{summary}");
    assert!(
        !summary.contains("not-a-design"),
        "a file under rules/ was taken as a design"
    );
    // One report a design, and the summary files beside them (tests/it/commands.rs).
    let files: Vec<String> = tree(&out)
        .into_iter()
        .map(|(p, _)| p)
        .filter(|p| !p.starts_with("gapwarden-summary."))
        .collect();
    assert_eq!(files.len(), 15, "{files:?}");
    assert!(
        files.contains(&"family/rev-a/charger.json".to_string()),
        "{files:?}"
    );
    assert!(files.contains(&"adapter.json".to_string()), "{files:?}");
    // Each report is the same JSON a single check gives.
    let single = run(&["check", "examples/class2-adapter.toml", "--format", "json"]);
    let written = std::fs::read(out.join("adapter.json")).expect("written");
    let parse = |b: &[u8]| serde_json::from_slice::<serde_json::Value>(b).expect("JSON");
    let (a, b) = (parse(&written), parse(&single.stdout));
    assert_eq!(a["barriers"], b["barriers"]);
    assert_eq!(a["findings"], b["findings"]);
}

#[test]
fn the_output_is_the_same_whatever_the_number_of_threads() {
    let scratch = Scratch::new("threads");
    let root = design_folder(&scratch);
    let mut runs = Vec::new();
    for jobs in ["1", "2", "5"] {
        let out = scratch.0.join(format!("out-{jobs}"));
        let o = run(&[
            "check",
            root.to_str().unwrap(),
            "--out-dir",
            out.to_str().unwrap(),
            "--jobs",
            jobs,
        ]);
        assert_eq!(o.status.code(), Some(1));
        runs.push((stdout(&o), tree(&out)));
    }
    assert_eq!(runs[0], runs[1], "1 thread and 2 threads differ");
    assert_eq!(runs[0], runs[2], "1 thread and 5 threads differ");
}

#[test]
fn an_unusable_design_in_a_batch_is_reported_and_the_others_still_checked() {
    let scratch = Scratch::new("unusable");
    let root = design_folder(&scratch);
    std::fs::write(
        root.join("broken.toml"),
        "[design]\nname = \"x\"\nprotection_class = \"IV\"\n",
    )
    .expect("write");
    let o = run(&["check", root.to_str().unwrap()]);
    assert_eq!(o.status.code(), Some(2));
    let err = String::from_utf8_lossy(&o.stderr);
    assert!(err.contains("broken.toml:3"), "{err}");
    let summary = stdout(&o);
    assert!(summary.contains("unusable input"), "{summary}");
    assert!(
        summary.contains("16 designs checked; exit status 2."),
        "{summary}"
    );
}

#[test]
fn output_with_several_designs_needs_an_out_dir() {
    let o = run(&["check", "examples", "-o", "x.md"]);
    assert_eq!(o.status.code(), Some(2));
    assert!(String::from_utf8_lossy(&o.stderr).contains("--out-dir"));
}

#[test]
fn compare_reports_changed_figures_verdicts_findings_and_inputs() {
    let scratch = Scratch::new("compare");
    let old = Path::new(env!("CARGO_MANIFEST_DIR")).join("examples/class2-adapter.toml");
    let text = std::fs::read_to_string(&old).expect("example");
    let new_text = text
        .replace("revision = \"B\"", "revision = \"C\"")
        .replace("creepage_mm = 6.4", "creepage_mm = 2.5");
    assert_ne!(text, new_text, "the edit applies");
    let new = scratch.0.join("rev-c.toml");
    std::fs::write(&new, new_text).expect("write");
    let o = run(&["compare", old.to_str().unwrap(), new.to_str().unwrap()]);
    // The new revision has a blocking finding.
    assert_eq!(
        o.status.code(),
        Some(1),
        "{}",
        String::from_utf8_lossy(&o.stderr)
    );
    let md = stdout(&o);
    assert!(
        md.starts_with("# Revision comparison: Wall adapter 24 W"),
        "{md}"
    );
    assert!(
        md.contains("| pri-sec | creepage laid out, mm | 6.4 | 2.5 |"),
        "{md}"
    );
    assert!(
        md.contains("| pri-sec | **verdict** | Pass | **Fail** |"),
        "{md}"
    );
    assert!(
        md.contains("new Blocking: **barrier.creepage\\_short** (pri-sec)"),
        "{md}"
    );
    assert!(md.contains("| design.revision | \"B\" | \"C\" |"), "{md}");
    assert!(
        md.contains("defer to the applicable end-product standard"),
        "{md}"
    );
    // Comparing a revision with itself finds nothing.
    let same = stdout(&run(&[
        "compare",
        old.to_str().unwrap(),
        old.to_str().unwrap(),
    ]));
    assert!(
        same.contains("No required figure, margin or verdict changed."),
        "{same}"
    );
    assert!(same.contains("No finding appeared or went."), "{same}");
    assert!(same.contains("No input value changed"), "{same}");
}
