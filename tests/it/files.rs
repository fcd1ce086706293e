//! Files and paths (issue 11, items 1 to 6): what `-o` and `--out-dir` do with whatever is
//! already at the path, temporary files, the run's own inputs, special files as inputs,
//! folder scans through links, and same-named designs in one output folder. Every case
//! builds its reproducer in a scratch folder; every run of the binary has a deadline, so a
//! run that would wait on a named pipe fails the test instead of hanging it.

use std::os::unix::fs::{FileTypeExt, MetadataExt, PermissionsExt};
use std::path::{Path, PathBuf};
use std::process::{Command, Stdio};
use std::sync::atomic::{AtomicUsize, Ordering};
use std::time::{Duration, Instant};

const BASE: &str = include_str!("../../examples/class2-adapter.toml");
const BIN: &str = env!("CARGO_BIN_EXE_gapwarden");

/// How long any one run may take; a check of the example takes well under a second.
const DEADLINE: Duration = Duration::from_secs(20);

/// A scratch folder under the system temp folder, removed when dropped.
struct Scratch(PathBuf);

impl Scratch {
    fn new(tag: &str) -> Self {
        static N: AtomicUsize = AtomicUsize::new(0);
        let n = N.fetch_add(1, Ordering::SeqCst);
        let dir =
            std::env::temp_dir().join(format!("gapwarden-files-{}-{tag}-{n}", std::process::id()));
        let _ = std::fs::remove_dir_all(&dir);
        std::fs::create_dir_all(&dir).expect("scratch folder");
        Scratch(dir)
    }

    fn path(&self, name: &str) -> PathBuf {
        self.0.join(name)
    }

    fn write(&self, name: &str, bytes: impl AsRef<[u8]>) -> PathBuf {
        let path = self.path(name);
        if let Some(parent) = path.parent() {
            std::fs::create_dir_all(parent).expect("scratch sub-folder");
        }
        std::fs::write(&path, bytes).expect("scratch file");
        path
    }

    fn fifo(&self, name: &str) -> PathBuf {
        let path = self.path(name);
        if let Some(parent) = path.parent() {
            std::fs::create_dir_all(parent).expect("scratch sub-folder");
        }
        let status = Command::new("mkfifo")
            .arg(&path)
            .status()
            .expect("mkfifo can be run");
        assert!(status.success(), "mkfifo failed for {}", path.display());
        path
    }

    /// Temporary files left in a folder (names starting with a dot and ending in `.tmp`).
    fn temp_files(&self, sub: &str) -> Vec<String> {
        std::fs::read_dir(self.path(sub))
            .expect("readable")
            .flatten()
            .map(|e| e.file_name().to_string_lossy().to_string())
            .filter(|n| n.starts_with('.') && n.ends_with(".tmp"))
            .collect()
    }
}

impl Drop for Scratch {
    fn drop(&mut self) {
        let _ = std::fs::remove_dir_all(&self.0);
    }
}

/// What a run printed and how it ended.
struct Run {
    code: i32,
    stdout: String,
    stderr: String,
}

impl Run {
    fn describe(&self) -> String {
        format!(
            "exit {}\n--- stderr ---\n{}\n--- stdout (first 2000 chars) ---\n{}",
            self.code,
            self.stderr,
            self.stdout.chars().take(2000).collect::<String>()
        )
    }

    fn refused(&self, naming: &str) {
        assert_eq!(
            self.code,
            2,
            "expected a refusal (exit 2)\n{}",
            self.describe()
        );
        assert!(
            self.stderr.contains(naming),
            "the message does not name {naming}\n{}",
            self.describe()
        );
        assert!(!self.stderr.contains("panicked"), "{}", self.describe());
    }
}

/// Runs the binary in `dir` with stdin closed and a deadline: a run still going after
/// `DEADLINE` is killed and fails the test. Output goes to files, so a large report cannot
/// block on a full pipe.
fn run_in(dir: &Path, args: &[&str]) -> Run {
    static N: AtomicUsize = AtomicUsize::new(0);
    let n = N.fetch_add(1, Ordering::SeqCst);
    let logs = std::env::temp_dir().join(format!("gapwarden-files-log-{}-{n}", std::process::id()));
    std::fs::create_dir_all(&logs).expect("log folder");
    let out = std::fs::File::create(logs.join("out")).expect("log file");
    let err = std::fs::File::create(logs.join("err")).expect("log file");
    let mut child = Command::new(BIN)
        .current_dir(dir)
        .args(args)
        .stdin(Stdio::null())
        .stdout(out)
        .stderr(err)
        .spawn()
        .expect("the binary starts");
    let start = Instant::now();
    let status = loop {
        if let Some(status) = child.try_wait().expect("wait") {
            break status;
        }
        if start.elapsed() > DEADLINE {
            let _ = child.kill();
            let _ = child.wait();
            let stderr = std::fs::read_to_string(logs.join("err")).unwrap_or_default();
            let _ = std::fs::remove_dir_all(&logs);
            panic!(
                "gapwarden {args:?} was still running after {DEADLINE:?} (it hangs); killed\n{stderr}"
            );
        }
        std::thread::sleep(Duration::from_millis(20));
    };
    let stdout = std::fs::read_to_string(logs.join("out")).unwrap_or_default();
    let stderr = std::fs::read_to_string(logs.join("err")).unwrap_or_default();
    let _ = std::fs::remove_dir_all(&logs);
    Run {
        code: status
            .code()
            .unwrap_or_else(|| panic!("killed by a signal\n{stderr}")),
        stdout,
        stderr,
    }
}

/// The example design under another name, so that two reports can be told apart.
fn design(name: &str) -> String {
    BASE.replace(
        "name = \"Wall adapter 24 W, universal input\"",
        &format!("name = \"{name}\""),
    )
}

/// A house table replacing the shipped altitude factors (invented figures; the example
/// design sits at 2000 m, so the run does not depend on them).
const HOUSE_ALTITUDE: &str = r#"id = "iec60664-1.altitude"
title = "House altitude factors"
source = "invented for the tests"
provenance = "House rule, no published source."
overrides = true
rows = [
  { altitude_m = 2000, factor = 1.00 },
  { altitude_m = 3000, factor = 1.14 },
]
"#;

// ---------------------------------------------------------------------------------------
// 1. `-o` never replaces what is at the path by something else
// ---------------------------------------------------------------------------------------

#[test]
fn o_onto_dev_null_writes_through_and_leaves_the_device_a_device() {
    let scratch = Scratch::new("devnull");
    scratch.write("p.toml", BASE);
    let before = std::fs::metadata("/dev/null").expect("/dev/null exists");
    assert!(
        before.file_type().is_char_device(),
        "/dev/null is not a device here"
    );
    let run = run_in(&scratch.0, &["check", "p.toml", "-o", "/dev/null"]);
    assert_eq!(run.code, 0, "{}", run.describe());
    let after = std::fs::symlink_metadata("/dev/null").expect("/dev/null still exists");
    assert!(
        after.file_type().is_char_device(),
        "/dev/null was replaced by something else"
    );
    assert_eq!(
        before.rdev(),
        after.rdev(),
        "/dev/null is another device now"
    );
    assert!(run.stdout.is_empty(), "the report was printed as well");
}

#[test]
fn o_onto_a_named_pipe_writes_the_report_into_the_pipe_and_keeps_the_pipe() {
    let scratch = Scratch::new("fifo-out");
    scratch.write("p.toml", BASE);
    let fifo = scratch.fifo("report.md");
    // The reader: opening a pipe for reading waits for the writer, so it runs beside.
    // It reports through a channel with a deadline: if nothing is ever written into the
    // pipe, the reader waits for ever and the test fails instead of waiting with it.
    let reader_path = fifo.clone();
    let (send, receive) = std::sync::mpsc::channel();
    std::thread::spawn(move || {
        let _ = send.send(std::fs::read_to_string(reader_path));
    });
    let run = run_in(&scratch.0, &["check", "p.toml", "-o", "report.md"]);
    assert_eq!(run.code, 0, "{}", run.describe());
    let meta = std::fs::symlink_metadata(&fifo).expect("still there");
    assert!(meta.file_type().is_fifo(), "the pipe was replaced");
    let received = receive
        .recv_timeout(DEADLINE)
        .expect("nothing was written into the pipe")
        .expect("pipe read");
    assert!(
        received.starts_with("# Pre-review checklist") && received.len() > 1000,
        "the pipe did not carry the report: {:?}",
        received.chars().take(200).collect::<String>()
    );
    assert!(
        scratch.temp_files("").is_empty(),
        "{:?}",
        scratch.temp_files("")
    );
}

#[test]
fn o_onto_a_symbolic_link_writes_its_target_and_keeps_the_link() {
    let scratch = Scratch::new("symlink-out");
    scratch.write("p.toml", BASE);
    let target = scratch.write("kept/target.md", "old report\n");
    std::os::unix::fs::symlink("kept/target.md", scratch.path("link.md")).unwrap();
    let run = run_in(&scratch.0, &["check", "p.toml", "-o", "link.md"]);
    assert_eq!(run.code, 0, "{}", run.describe());
    let link = std::fs::symlink_metadata(scratch.path("link.md")).unwrap();
    assert!(
        link.file_type().is_symlink(),
        "the link was replaced by a file"
    );
    assert_eq!(
        std::fs::read_link(scratch.path("link.md")).unwrap(),
        PathBuf::from("kept/target.md"),
        "the link points elsewhere now"
    );
    let written = std::fs::read_to_string(&target).unwrap();
    assert!(
        written.starts_with("# Pre-review checklist"),
        "the link's target does not hold the report: {written:?}"
    );
    assert!(scratch.temp_files("kept").is_empty());
    assert!(scratch.temp_files("").is_empty());
}

#[test]
fn o_onto_a_link_to_nothing_is_refused_and_the_link_stays() {
    let scratch = Scratch::new("dangling");
    scratch.write("p.toml", BASE);
    std::os::unix::fs::symlink("missing/nowhere.md", scratch.path("dangling.md")).unwrap();
    let run = run_in(&scratch.0, &["check", "p.toml", "-o", "dangling.md"]);
    run.refused("dangling.md");
    assert!(
        std::fs::symlink_metadata(scratch.path("dangling.md"))
            .unwrap()
            .file_type()
            .is_symlink()
    );
    assert!(scratch.temp_files("").is_empty());
}

#[test]
fn o_onto_a_read_only_file_is_refused_even_for_root_and_the_file_is_unchanged() {
    let scratch = Scratch::new("readonly-out");
    scratch.write("p.toml", BASE);
    let locked = scratch.write("locked.md", "keep me\n");
    std::fs::set_permissions(&locked, std::fs::Permissions::from_mode(0o444)).unwrap();
    let run = run_in(&scratch.0, &["check", "p.toml", "-o", "locked.md"]);
    run.refused("locked.md");
    assert!(run.stderr.contains("read-only"), "{}", run.describe());
    assert_eq!(std::fs::read_to_string(&locked).unwrap(), "keep me\n");
    assert_eq!(
        std::fs::metadata(&locked).unwrap().permissions().mode() & 0o777,
        0o444
    );
    assert!(scratch.temp_files("").is_empty());
}

#[test]
fn o_onto_a_writable_regular_file_replaces_it_keeping_its_permissions() {
    let scratch = Scratch::new("regular-out");
    scratch.write("p.toml", BASE);
    let old = scratch.write("report.md", "old\n");
    std::fs::set_permissions(&old, std::fs::Permissions::from_mode(0o640)).unwrap();
    let run = run_in(&scratch.0, &["check", "p.toml", "-o", "report.md"]);
    assert_eq!(run.code, 0, "{}", run.describe());
    let meta = std::fs::symlink_metadata(&old).unwrap();
    assert!(meta.file_type().is_file());
    assert_eq!(meta.permissions().mode() & 0o777, 0o640);
    assert!(
        std::fs::read_to_string(&old)
            .unwrap()
            .starts_with("# Pre-review checklist")
    );
    assert!(scratch.temp_files("").is_empty());
}

// ---------------------------------------------------------------------------------------
// 2. Temporary files: unique names, and only this run's own are ever removed
// ---------------------------------------------------------------------------------------

#[test]
fn a_stale_temp_file_named_after_this_process_neither_blocks_the_write_nor_is_deleted() {
    // The old name was `.NAME.PID.tmp`: a file of that name left by a killed run blocked
    // every later write from a process with the same id, and the failed run deleted it.
    let scratch = Scratch::new("stale");
    let stale_name = format!(".report.md.{}.tmp", std::process::id());
    let stale = scratch.write(&stale_name, "left by a killed run\n");
    let out = scratch.path("report.md");
    for i in 0..20 {
        gapwarden::commands::write_atomically(&out, &format!("report {i}\n"), &[])
            .unwrap_or_else(|p| panic!("write {i} failed: {p}"));
        assert_eq!(
            std::fs::read_to_string(&out).unwrap(),
            format!("report {i}\n")
        );
    }
    assert_eq!(
        std::fs::read_to_string(&stale).unwrap(),
        "left by a killed run\n",
        "a temporary file this run did not create was touched"
    );
    assert_eq!(
        scratch.temp_files(""),
        vec![stale_name],
        "a temp file was left"
    );
}

#[test]
fn the_binary_leaves_other_runs_temp_files_alone_and_leaves_none_of_its_own() {
    // In a container the process id is often small: files for every small id.
    let scratch = Scratch::new("stale-bin");
    scratch.write("p.toml", BASE);
    let mut stale = Vec::new();
    for pid in 1..=64 {
        let name = format!(".report.md.{pid}.tmp");
        scratch.write(&name, format!("stale {pid}\n"));
        stale.push(name);
    }
    for _ in 0..3 {
        let run = run_in(&scratch.0, &["check", "p.toml", "-o", "report.md"]);
        assert_eq!(run.code, 0, "{}", run.describe());
    }
    // A refused run (onto its own input) also leaves nothing behind.
    let run = run_in(&scratch.0, &["check", "p.toml", "-o", "p.toml"]);
    run.refused("p.toml");
    let mut left = scratch.temp_files("");
    left.sort();
    stale.sort();
    assert_eq!(left, stale, "temp files were removed or left over");
    for pid in 1..=64 {
        assert_eq!(
            std::fs::read_to_string(scratch.path(&format!(".report.md.{pid}.tmp"))).unwrap(),
            format!("stale {pid}\n")
        );
    }
}

#[test]
fn a_write_that_fails_halfway_removes_its_temp_file_and_keeps_the_old_report() {
    // A file-size limit of one 512-byte block (with the signal it raises ignored, so the
    // write returns an error instead of killing the process): the temp file is created,
    // then writing the report into it fails.
    let scratch = Scratch::new("failed");
    scratch.write("p.toml", BASE);
    scratch.write("report.md", "old report\n");
    let script = format!("trap '' XFSZ; ulimit -f 1; exec '{BIN}' check p.toml -o report.md");
    let o = Command::new("sh")
        .current_dir(&scratch.0)
        .args(["-c", &script])
        .stdin(Stdio::null())
        .output()
        .expect("sh runs");
    let stderr = String::from_utf8_lossy(&o.stderr);
    assert_eq!(o.status.code(), Some(2), "{stderr}");
    assert!(
        stderr.contains("report.md") && stderr.contains("nothing was written"),
        "{stderr}"
    );
    assert_eq!(
        std::fs::read_to_string(scratch.path("report.md")).unwrap(),
        "old report\n"
    );
    assert!(
        scratch.temp_files("").is_empty(),
        "{:?}",
        scratch.temp_files("")
    );
    // The same for a new path: nothing appears there.
    let script = format!("trap '' XFSZ; ulimit -f 1; exec '{BIN}' check p.toml -o new.md");
    let o = Command::new("sh")
        .current_dir(&scratch.0)
        .args(["-c", &script])
        .stdin(Stdio::null())
        .output()
        .expect("sh runs");
    assert_eq!(
        o.status.code(),
        Some(2),
        "{}",
        String::from_utf8_lossy(&o.stderr)
    );
    assert!(!scratch.path("new.md").exists());
    assert!(
        scratch.temp_files("").is_empty(),
        "{:?}",
        scratch.temp_files("")
    );
}

// ---------------------------------------------------------------------------------------
// 3. No report over any input of the run, however the path is spelt
// ---------------------------------------------------------------------------------------

#[test]
fn o_onto_a_house_rule_or_template_file_is_refused_by_any_name() {
    let scratch = Scratch::new("inputs");
    scratch.write("work/p.toml", BASE);
    let rule = scratch.write("house/altitude.toml", HOUSE_ALTITUDE);
    let template_text = std::fs::read_to_string(
        Path::new(env!("CARGO_MANIFEST_DIR")).join("templates/report.md.j2"),
    )
    .unwrap();
    let template = scratch.write("tpl/report.md.j2", &template_text);
    std::os::unix::fs::symlink("../house/altitude.toml", scratch.path("work/rule-link.md"))
        .unwrap();
    std::fs::hard_link(&template, scratch.path("work/template-hard.md")).unwrap();
    std::fs::hard_link(
        scratch.path("work/p.toml"),
        scratch.path("work/project-hard.md"),
    )
    .unwrap();
    let names = [
        "../house/altitude.toml",
        "./../house/../house/altitude.toml",
        "rule-link.md",
        "../tpl/report.md.j2",
        "template-hard.md",
        "project-hard.md",
        "../work/p.toml",
    ];
    for name in names {
        let run = run_in(
            &scratch.path("work"),
            &[
                "check",
                "p.toml",
                "--rules",
                "../house",
                "--templates",
                "../tpl",
                "-o",
                name,
            ],
        );
        run.refused(name);
        assert!(
            run.stderr.contains("is an input of this run"),
            "{}",
            run.describe()
        );
    }
    assert_eq!(std::fs::read_to_string(&rule).unwrap(), HOUSE_ALTITUDE);
    assert_eq!(std::fs::read_to_string(&template).unwrap(), template_text);
    assert_eq!(
        std::fs::read_to_string(scratch.path("work/p.toml")).unwrap(),
        BASE
    );
}

#[test]
fn out_dir_reports_never_land_on_an_input_through_a_link() {
    let scratch = Scratch::new("outdir-inputs");
    scratch.write("a.toml", design("Design A"));
    scratch.write("b.toml", design("Design B"));
    let rule = scratch.write("house/altitude.toml", HOUSE_ALTITUDE);
    std::fs::create_dir(scratch.path("out")).unwrap();
    // A link where a.md will be written, pointing at the house rule file; one where b.md
    // will be written, hard-linked to design a.
    std::os::unix::fs::symlink("../house/altitude.toml", scratch.path("out/a.md")).unwrap();
    std::fs::hard_link(scratch.path("a.toml"), scratch.path("out/b.md")).unwrap();
    let run = run_in(
        &scratch.0,
        &[
            "check",
            "a.toml",
            "b.toml",
            "--rules",
            "house",
            "--out-dir",
            "out",
        ],
    );
    run.refused("out/a.md");
    assert!(run.stderr.contains("out/b.md"), "{}", run.describe());
    assert_eq!(std::fs::read_to_string(&rule).unwrap(), HOUSE_ALTITUDE);
    assert_eq!(
        std::fs::read_to_string(scratch.path("a.toml")).unwrap(),
        design("Design A")
    );
}

// ---------------------------------------------------------------------------------------
// 4. Only regular files are read, and none above 16 MiB
// ---------------------------------------------------------------------------------------

#[test]
fn a_named_pipe_is_refused_without_waiting_by_check_compare_explain_and_folder_scans() {
    let scratch = Scratch::new("fifo-in");
    scratch.write("p.toml", BASE);
    scratch.fifo("pipe.toml");
    scratch.write("folder/good.toml", BASE);
    scratch.fifo("folder/pipe.toml");
    let cases: [&[&str]; 5] = [
        &["check", "pipe.toml"],
        &["check", "pipe.toml", "-o", "out.md"],
        &["compare", "p.toml", "pipe.toml"],
        &["explain", "pipe.toml", "assumptions"],
        &["check", "folder"],
    ];
    for args in cases {
        let run = run_in(&scratch.0, args);
        run.refused("pipe.toml");
        assert!(
            run.stderr
                .contains("is a named pipe (FIFO), not a regular file"),
            "{args:?}\n{}",
            run.describe()
        );
    }
    assert!(!scratch.path("out.md").exists());
}

#[test]
fn a_named_pipe_as_house_rule_or_template_file_is_refused_without_waiting() {
    let scratch = Scratch::new("fifo-house");
    scratch.write("p.toml", BASE);
    scratch.fifo("house/pipe.toml");
    scratch.fifo("tpl/report.md.j2");
    let run = run_in(&scratch.0, &["check", "p.toml", "--rules", "house"]);
    run.refused("house/pipe.toml");
    assert!(run.stderr.contains("named pipe"), "{}", run.describe());
    let run = run_in(&scratch.0, &["check", "p.toml", "--templates", "tpl"]);
    run.refused("tpl/report.md.j2");
    assert!(run.stderr.contains("named pipe"), "{}", run.describe());
}

#[test]
fn dev_zero_and_a_folder_are_refused_as_project_files() {
    let scratch = Scratch::new("devzero");
    scratch.write("p.toml", BASE);
    std::fs::create_dir(scratch.path("folder.toml")).unwrap();
    for args in [
        &["check", "/dev/zero"][..],
        &["compare", "p.toml", "/dev/zero"],
        &["explain", "/dev/zero", "assumptions"],
    ] {
        let run = run_in(&scratch.0, args);
        run.refused("/dev/zero");
        assert!(
            run.stderr
                .contains("is a character device, not a regular file"),
            "{}",
            run.describe()
        );
    }
    // A link to the device is followed and refused the same way.
    std::os::unix::fs::symlink("/dev/zero", scratch.path("zero.toml")).unwrap();
    let run = run_in(&scratch.0, &["check", "zero.toml"]);
    run.refused("zero.toml");
    assert!(
        run.stderr.contains("character device"),
        "{}",
        run.describe()
    );
    let run = run_in(&scratch.0, &["compare", "folder.toml", "p.toml"]);
    run.refused("folder.toml: is a folder, not a file");
}

#[test]
fn a_project_file_above_16_mib_is_refused_with_its_name_and_size() {
    let scratch = Scratch::new("large");
    // 16 MiB is the stated limit: 16 * 1024 * 1024 = 16,777,216 bytes. The file is one
    // byte more: a valid project followed by a long comment (sparse zeros would be a
    // different error).
    let limit: u64 = 16 * 1024 * 1024;
    let mut text = String::from(BASE);
    text.push('#');
    let filler = limit as usize + 1 - text.len();
    text.push_str(&"x".repeat(filler));
    assert_eq!(text.len() as u64, limit + 1);
    scratch.write("large.toml", &text);
    let run = run_in(&scratch.0, &["check", "large.toml"]);
    run.refused("large.toml");
    assert!(
        run.stderr.contains(&format!("is {} bytes", limit + 1)),
        "the size is not in the message\n{}",
        run.describe()
    );
    // At the limit exactly, the file is read (and checked as the example).
    text.pop();
    scratch.write("at-limit.toml", &text);
    let run = run_in(&scratch.0, &["check", "at-limit.toml", "--format", "json"]);
    assert_eq!(run.code, 0, "{}", run.describe());
}

// ---------------------------------------------------------------------------------------
// 5. Folder scans follow no folder link, and no file is checked twice
// ---------------------------------------------------------------------------------------

/// The data rows of a batch summary (lines starting with `| ` after the header).
fn summary_rows(stdout: &str) -> Vec<String> {
    stdout
        .lines()
        .filter(|l| l.starts_with("| ") && !l.starts_with("| design "))
        .map(String::from)
        .collect()
}

#[test]
fn links_to_the_folder_and_its_parent_are_not_followed() {
    let scratch = Scratch::new("loops");
    scratch.write("designs/one.toml", design("One"));
    scratch.write("designs/sub/two.toml", design("Two"));
    // Two links to `.` gave 2^32 paths; a link to `..` found every design again and again.
    std::os::unix::fs::symlink(".", scratch.path("designs/self-a")).unwrap();
    std::os::unix::fs::symlink(".", scratch.path("designs/sub/self-b")).unwrap();
    std::os::unix::fs::symlink("..", scratch.path("designs/sub/up")).unwrap();
    let run = run_in(&scratch.0, &["check", "designs"]);
    assert_eq!(run.code, 0, "{}", run.describe());
    let rows = summary_rows(&run.stdout);
    assert_eq!(rows.len(), 2, "each design once\n{}", run.stdout);
    assert!(rows[0].contains("| one.toml |"), "{}", run.stdout);
    assert!(rows[1].contains("| sub/two.toml |"), "{}", run.stdout);
    // A folder named again, or inside one named before, adds nothing and is no error.
    let run = run_in(
        &scratch.0,
        &["check", "designs", "designs/sub", "designs/./"],
    );
    assert_eq!(run.code, 0, "{}", run.describe());
    assert_eq!(summary_rows(&run.stdout).len(), 2, "{}", run.stdout);
}

#[test]
fn one_file_named_twice_or_through_a_link_is_checked_once() {
    let scratch = Scratch::new("twice");
    scratch.write("designs/one.toml", design("One"));
    std::fs::hard_link(scratch.path("designs/one.toml"), scratch.path("hard.toml")).unwrap();
    std::os::unix::fs::symlink("designs/one.toml", scratch.path("soft.toml")).unwrap();
    let run = run_in(
        &scratch.0,
        &[
            "check",
            "designs/one.toml",
            "./designs/one.toml",
            "designs",
            "hard.toml",
            "soft.toml",
            "designs/../designs/one.toml",
        ],
    );
    assert_eq!(run.code, 0, "{}", run.describe());
    let rows = summary_rows(&run.stdout);
    assert_eq!(rows.len(), 1, "checked more than once\n{}", run.stdout);
    assert!(
        run.stderr
            .contains("hard.toml: the same file as designs/one.toml; checked once"),
        "{}",
        run.describe()
    );
}

// ---------------------------------------------------------------------------------------
// 6. Same-named designs in one output folder
// ---------------------------------------------------------------------------------------

#[test]
fn same_named_designs_in_different_folders_get_separate_reports() {
    let scratch = Scratch::new("clash");
    scratch.write("a/x.toml", design("Design in a"));
    scratch.write("b/x.toml", design("Design in b"));
    scratch.write("c/a/x.toml", design("Design in c/a"));
    let run = run_in(
        &scratch.0,
        &["check", "a/x.toml", "b/x.toml", "c", "--out-dir", "out"],
    );
    assert_eq!(run.code, 0, "{}", run.describe());
    // `a/x.toml` and `c`'s `a/x.toml` share two names, so both take a third.
    let root = scratch.0.file_name().unwrap().to_string_lossy().to_string();
    let expected = [
        (format!("out/{root}/a/x.md"), "Design in a"),
        ("out/b/x.md".to_string(), "Design in b"),
        ("out/c/a/x.md".to_string(), "Design in c/a"),
    ];
    for (report, name) in &expected {
        let text = std::fs::read_to_string(scratch.path(report))
            .unwrap_or_else(|e| panic!("{report}: {e}\n{}", run.describe()));
        assert!(
            text.contains(&format!("# Pre-review checklist: {name}\n")),
            "{report} does not hold {name}"
        );
    }
    let rows = summary_rows(&run.stdout);
    assert_eq!(rows.len(), 3, "{}", run.stdout);
    assert!(
        rows[0].contains(&format!("| {root}/a/x.toml |")),
        "{}",
        run.stdout
    );
    assert!(rows[1].contains("| b/x.toml |"), "{}", run.stdout);
    assert!(rows[2].contains("| c/a/x.toml |"), "{}", run.stdout);
}

#[test]
fn designs_whose_reports_cannot_be_kept_apart_are_refused_naming_both() {
    let scratch = Scratch::new("clash-refused");
    // Side by side, one name apart from the extension: the path cannot tell them apart.
    scratch.write("x.toml", design("Design x.toml"));
    scratch.write("x.txt", design("Design x.txt"));
    scratch.write("y.toml", design("Design y"));
    let run = run_in(
        &scratch.0,
        &["check", "x.toml", "x.txt", "y.toml", "--out-dir", "out"],
    );
    run.refused("x.toml");
    assert!(
        run.stderr.contains("x.txt") && run.stderr.contains("neither was written"),
        "{}",
        run.describe()
    );
    assert!(
        !scratch.path("out/x.md").exists(),
        "one of the two was written"
    );
    assert!(
        scratch.path("out/y.md").exists(),
        "the design without a clash was not written"
    );
    let rows = summary_rows(&run.stdout);
    assert!(
        rows[0].contains("| x.toml |") && rows[1].contains("| x.txt |"),
        "{}",
        run.stdout
    );
}

#[test]
fn o_together_with_out_dir_is_refused_naming_both_flags_and_writes_nothing() {
    // Regression: one design with both -o and --out-dir was refused with "with several
    // designs, give --out-dir", which names the wrong cause (there is one design, and
    // --out-dir was given).
    let scratch = Scratch::new("o-and-out-dir");
    scratch.write("p.toml", BASE);
    let run = run_in(
        &scratch.0,
        &["check", "p.toml", "-o", "r.md", "--out-dir", "out"],
    );
    run.refused("-o");
    assert!(
        run.stderr.contains("--out-dir") && run.stderr.contains("not both"),
        "{}",
        run.describe()
    );
    assert!(!scratch.path("r.md").exists());
    assert!(!scratch.path("out").exists());
}

#[test]
fn o_dev_stdout_writes_through_the_descriptor_and_never_replaces_the_file_behind_it() {
    // Regression: /dev/stdout was followed as a link to the file the shell had opened and
    // that file was replaced by a rename, so `-o /dev/stdout >> log.md` destroyed the log;
    // with stdout a pipe, the link led to "pipe:[N]" and the run was refused as "a link to
    // nothing", though --help says pipes are written through.
    let scratch = Scratch::new("dev-stdout");
    scratch.write("p.toml", BASE);
    let log = scratch.write("log.md", "PRECIOUS FIRST LINE\n");
    let appending = std::fs::OpenOptions::new()
        .append(true)
        .open(&log)
        .expect("log opened for appending");
    let status = std::process::Command::new(env!("CARGO_BIN_EXE_gapwarden"))
        .current_dir(&scratch.0)
        .args(["check", "p.toml", "-o", "/dev/stdout"])
        .stdin(std::process::Stdio::null())
        .stdout(appending)
        .status()
        .expect("the binary runs");
    assert_eq!(status.code(), Some(0));
    let text = std::fs::read_to_string(&log).unwrap();
    assert!(
        text.starts_with("PRECIOUS FIRST LINE\n# Pre-review checklist"),
        "the log was not appended to: {:?}",
        text.chars().take(120).collect::<String>()
    );
    assert!(scratch.temp_files("").is_empty());
    // Stdout a pipe (what Command::output gives): the report arrives through it.
    let o = std::process::Command::new(env!("CARGO_BIN_EXE_gapwarden"))
        .current_dir(&scratch.0)
        .args(["check", "p.toml", "-o", "/dev/stdout"])
        .stdin(std::process::Stdio::null())
        .output()
        .expect("the binary runs");
    assert_eq!(
        o.status.code(),
        Some(0),
        "{}",
        String::from_utf8_lossy(&o.stderr)
    );
    assert!(String::from_utf8_lossy(&o.stdout).starts_with("# Pre-review checklist"));
    // Standard input is no place for a report.
    let run = run_in(&scratch.0, &["check", "p.toml", "-o", "/dev/stdin"]);
    run.refused("/dev/stdin");
}
