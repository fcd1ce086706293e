//! The gapwarden command line: parses arguments, calls the library, prints, and maps the
//! library's `ExitStatus` to the process's exit code (0 ready for review, 1 not ready:
//! blocking, incomplete or implausible, 2 unusable input or command line).

use std::io::Write;
use std::path::PathBuf;
use std::process::ExitCode;

use clap::{CommandFactory, Parser, Subcommand};

use gapwarden::ExitStatus;
use gapwarden::commands::{self, CheckRequest, Format, SpacingFlags, SpacingFormat};
use gapwarden::diag::Problems;
use gapwarden::rules::RuleBook;
use gapwarden::terminal::ColorChoice;

/// Pre-review checklist for the insulation of a mains-connected power supply.
///
/// Reads a TOML project file describing the insulation barriers, computes the required
/// clearance and creepage of each from IEC 60664-1 (and IPC-2221B for functional spacing on
/// boards), and writes a checklist in which every figure is traced to its table. Advisory
/// only: defer to the applicable end-product standard, local electrical codes and licensed
/// or accredited review.
#[derive(Parser)]
#[command(name = "gapwarden", version, max_term_width = 100)]
struct Cli {
    #[command(subcommand)]
    command: Command,
}

#[derive(Subcommand)]
enum Command {
    /// Evaluate project files and print the pre-review checklist.
    ///
    /// One file: its checklist is printed (or written with -o). Several files or a folder
    /// (every *.toml inside, searched recursively, except in folders named rules,
    /// templates, target or starting with a dot; links to folders are not followed, and a
    /// file met twice is checked once): one report each into --out-dir, and a summary
    /// table. Inputs must be regular files of at most 16 MiB. Exit status, the worst over
    /// all designs: 0 ready for review (nothing blocking, no barrier incomplete, no input
    /// implausible), 1 not ready, 2 an input or
    /// the command line could not be used.
    Check(CheckArgs),
    /// Compare two revisions of a design: what changed in the inputs, and in the required
    /// figures, margins, verdicts and findings (Markdown for a design-review record).
    ///
    /// Exit status: 0 the new revision is ready for review, 1 it is not (blocking findings,
    /// incomplete barriers or implausible inputs), 2 an input could not be used.
    Compare {
        /// The earlier revision's project file.
        old: PathBuf,
        /// The later revision's project file.
        new: PathBuf,
        #[command(flatten)]
        rules: HouseRules,
        /// Incomplete barriers in the new revision do not make the exit status 1.
        #[arg(long)]
        allow_incomplete: bool,
        /// Output format of the comparison.
        #[arg(long, value_enum, default_value_t = Format::Markdown)]
        format: Format,
        /// Write the comparison to this file instead of printing it (same rules as
        /// `check -o`; neither project file can be overwritten).
        #[arg(short = 'o', long = "output", value_name = "FILE")]
        output: Option<PathBuf>,
    },
    /// Write a commented starting project file. Never overwrites an existing file.
    ///
    /// Without --example: a blank template with every section, the required keys marked
    /// and no distances, so that `check` says "not ready" until the layout is described.
    New {
        /// Where to write the new project file.
        path: PathBuf,
        /// Start from a shipped example instead: class2-adapter or class1-appliance.
        #[arg(long, value_name = "NAME")]
        example: Option<String>,
    },
    /// Print how one figure or finding was derived.
    ///
    /// ITEM is a barrier id (both figures), BARRIER.clearance, BARRIER.creepage, a part
    /// reference (its ratings against every barrier it bridges), a finding id such as
    /// barrier.clearance_short (with its check's rationale and source), "assumptions"
    /// (every default the report applied), "readiness", "isolation", a power-entry item or figure
    /// (power_entry, power_entry.fuse, power_entry.inrush_peak_a, ...) or an EMC item or
    /// figure (emc, emc.corner, emc.dm_corner_hz, emc.middlebrook, ...). An unknown ITEM
    /// lists them all.
    Explain {
        /// The project file (TOML).
        project: PathBuf,
        /// The figure or finding to explain.
        item: String,
        #[command(flatten)]
        rules: HouseRules,
    },
    /// List the loaded rule tables with their sources, or print one table.
    Rules {
        /// A rule table id, e.g. iec60664-1.creepage.
        id: Option<String>,
        #[command(flatten)]
        rules: HouseRules,
    },
    /// Required clearance and creepage of one barrier, from flags: a table, or with
    /// --format json one entry of a report's barriers. Exit 1 when declared distances fall
    /// short, or would pass on an implausible value (verdict "check-input").
    Spacing {
        #[command(flatten)]
        flags: SpacingFlags,
        /// Output format: a readable table, or JSON (the fields of one report barrier).
        #[arg(long, value_enum, default_value_t = SpacingFormat::Table)]
        format: SpacingFormat,
        #[command(flatten)]
        rules: HouseRules,
    },
    /// Print a shell completion script for gapwarden.
    ///
    /// For bash: `gapwarden completions bash > ~/.local/share/bash-completion/completions/gapwarden`.
    Completions {
        /// The shell to write completions for.
        #[arg(value_enum)]
        shell: clap_complete::Shell,
    },
    /// Print gapwarden's manual page (roff), generated from the same definitions as --help.
    ///
    /// For example: `gapwarden man > gapwarden.1 && man ./gapwarden.1`.
    Man,
    /// Print the JSON Schema of the project file, for editors that complete and check TOML.
    ///
    /// Every key with its type, unit, allowed words or limits, default and description,
    /// generated from the types the reader itself uses. Save it beside your projects
    /// (gapwarden schema > gapwarden.schema.json) and point the editor at it, e.g. with a
    /// first line `#:schema ./gapwarden.schema.json` in the project file.
    Schema,
}

// `check`'s arguments (no doc comment: the variant's is the subcommand's help). A struct of
// their own so that `parse` can read a `check` command line with these arguments alone.
#[derive(clap::Args, Debug, PartialEq)]
struct CheckArgs {
    /// Project files (TOML) or folders of them.
    #[arg(required = true, value_name = "PROJECT")]
    projects: Vec<PathBuf>,
    /// Output format (default: Markdown).
    ///
    /// Without --format, on a terminal, a short summary is printed instead of the full
    /// report (verdict, blocking items, warnings, where the report is); piped, or with
    /// --format, the full report.
    #[arg(long, value_enum)]
    format: Option<Format>,
    /// Colour in the terminal summary: auto (on a terminal, unless NO_COLOR is set),
    /// always or never.
    #[arg(long, value_enum, default_value_t = ColorChoice::Auto, value_name = "WHEN")]
    color: ColorChoice,
    /// Write the report to this file instead of printing it.
    ///
    /// A regular file or a new path is written atomically (a temporary file beside it,
    /// then a rename); a symbolic link is followed and its target written, the link
    /// kept; a character device (/dev/null, a terminal) or a named pipe is written
    /// through (a pipe waits for its reader); /dev/stdout, /dev/stderr and /dev/fd/1 or
    /// 2 are written through the descriptor the run holds (appending where the shell
    /// opened it so), other descriptors are refused. Refused, with nothing written: a
    /// read-only file (owner's write bit clear, even for root), a folder, a block
    /// device, a socket, a link to nothing, and any input of the run (project file,
    /// --rules or --templates file), however it is named.
    #[arg(short = 'o', long = "output", value_name = "FILE")]
    output: Option<PathBuf>,
    #[command(flatten)]
    rules: HouseRules,
    #[command(flatten)]
    templates: HouseTemplates,
    /// With several designs: write one report each into this folder, mirroring as
    /// much of each design's path as keeps same-named designs apart (same rules as -o
    /// for what is already there).
    #[arg(long, value_name = "DIR")]
    out_dir: Option<PathBuf>,
    /// Designs checked at once (default: the number of cores).
    #[arg(long, value_name = "N", value_parser = clap::value_parser!(u16).range(1..))]
    jobs: Option<u16>,
    /// Early layout work: incomplete barriers (distances not yet declared) do not make
    /// the exit status 1. The report still says "not ready". A design that declares no
    /// barrier at all still exits 1.
    #[arg(long)]
    allow_incomplete: bool,
}

/// `--rules`, declared once for every command that reads rule tables.
#[derive(clap::Args, Debug, PartialEq)]
struct HouseRules {
    /// A folder of house rule tables that add to or override the shipped ones by id.
    #[arg(long, value_name = "DIR")]
    rules: Option<PathBuf>,
}

impl HouseRules {
    fn load(&self) -> Result<RuleBook, Problems> {
        RuleBook::load(self.rules.as_deref())
    }
}

/// `--templates`, declared once.
#[derive(clap::Args, Debug, PartialEq)]
struct HouseTemplates {
    /// A folder of house templates (report.md.j2 and the sections it includes) that
    /// replace the shipped ones of the same name.
    ///
    /// With --format json no template is parsed: house templates are only read and named,
    /// with their SHA-256, in the report's house section.
    #[arg(long, value_name = "DIR")]
    templates: Option<PathBuf>,
}

/// Counts what house templates and house checks allocate, so that a runaway one stops
/// with a message instead of exhausting the machine's memory.
#[global_allocator]
static ALLOCATOR: gapwarden::memory_guard::GuardedAllocator =
    gapwarden::memory_guard::GuardedAllocator;

fn main() -> ExitCode {
    let cli = match parse(std::env::args_os()) {
        Ok(cli) => cli,
        Err(e) => {
            // --help and --version are not errors.
            let status = if e.use_stderr() {
                ExitStatus::Unusable
            } else {
                ExitStatus::Ready
            };
            let _ = e.print();
            return status.into();
        }
    };
    match run(cli) {
        Ok(status) => status.into(),
        Err(problems) => {
            eprintln!("{problems}");
            ExitStatus::Unusable.into()
        }
    }
}

/// The command line as `Cli::try_parse_from` reads it. A `check` command line is first read
/// by a command made of `check`'s own arguments only: building every subcommand's
/// arguments and help texts (`spacing` alone has some thirty) was about two thirds of the
/// command line's cost, some 100,000 instructions a run. The same argument definitions
/// (`CheckArgs`) read it, and clap's subcommand `check` takes nothing from the top level
/// that parsing depends on (no global arguments, no propagated version), so what they
/// accept they read as the whole command would. Anything they refuse (an error, --help)
/// goes to the whole command, whose message is then the one printed. `tests` holds the
/// two to the same result over generated command lines.
fn parse<I>(args: I) -> Result<Cli, clap::Error>
where
    I: IntoIterator<Item = std::ffi::OsString>,
{
    let args: Vec<std::ffi::OsString> = args.into_iter().collect();
    match check_alone(&args) {
        Some(check) => Ok(Cli {
            command: Command::Check(check),
        }),
        None => Cli::try_parse_from(args),
    }
}

/// `check`'s arguments read by a command of their own, where the command line is a
/// `check` one they accept (see `parse`).
fn check_alone(args: &[std::ffi::OsString]) -> Option<CheckArgs> {
    use clap::{Args, FromArgMatches};
    if args.get(1).is_none_or(|a| a != "check") {
        return None;
    }
    let mut matches = CheckArgs::augment_args(clap::Command::new("check"))
        .try_get_matches_from(&args[1..])
        .ok()?;
    CheckArgs::from_arg_matches_mut(&mut matches).ok()
}

fn run(cli: Cli) -> Result<ExitStatus, Problems> {
    match cli.command {
        Command::Check(CheckArgs {
            projects,
            format,
            color,
            output,
            rules,
            templates,
            out_dir,
            jobs,
            allow_incomplete,
        }) => {
            use std::io::IsTerminal;
            // The summary replaces the report only where a person reads it and asked for
            // no particular format; scripts (a pipe, a file, --format) get the report.
            let terminal = std::io::stdout().is_terminal();
            let summary = (format.is_none() && terminal).then(|| {
                color.enabled(
                    terminal,
                    std::env::var_os("NO_COLOR").is_some_and(|v| !v.is_empty()),
                )
            });
            commands::check(
                &CheckRequest {
                    projects: &projects,
                    format: format.unwrap_or(Format::Markdown),
                    output: output.as_deref(),
                    rules_dir: rules.rules.as_deref(),
                    templates_dir: templates.templates.as_deref(),
                    out_dir: out_dir.as_deref(),
                    jobs: jobs.map(usize::from),
                    allow_incomplete,
                    terminal_summary: summary,
                },
                &mut print,
                &mut print_styled,
            )
        }
        Command::Compare {
            old,
            new,
            rules,
            allow_incomplete,
            format,
            output,
        } => {
            let comparison = gapwarden::compare::compare_files(&old, &new, &rules.load()?)?;
            let text = comparison.render(format);
            match output {
                Some(out) => commands::write_atomically(&out, &text, &[&old, &new])?,
                None => print(&text),
            }
            Ok(comparison.exit_status(allow_incomplete))
        }
        Command::New { path, example } => {
            commands::new_project(&path, example.as_deref())?;
            let shown = path.display().to_string();
            let shown = gapwarden::text::visible_line(&shown);
            let from = match &example {
                Some(name) => format!("from the {} example", gapwarden::text::visible_line(name)),
                None => "a blank template: fill in the keys marked (required)".to_string(),
            };
            eprintln!("wrote {shown} ({from}); edit it, then run: gapwarden check {shown}");
            Ok(ExitStatus::Ready)
        }
        Command::Explain {
            project,
            item,
            rules,
        } => {
            let rules = rules.load()?;
            let report = commands::check_file(&project, &rules)?;
            print(&commands::explain_with_rules(&report, Some(&rules), &item)?);
            Ok(ExitStatus::Ready)
        }
        Command::Rules { id, rules } => {
            print(&commands::describe_rules(&rules.load()?, id.as_deref())?);
            Ok(ExitStatus::Ready)
        }
        Command::Spacing {
            flags,
            format,
            rules,
        } => {
            let (result, warnings) = commands::spacing_under(
                &rules.load()?,
                &flags.query(),
                flags.standard,
                flags.means,
            )?;
            // The JSON on stdout stays one barrier's entry; what looks implausible goes to
            // stderr, as `input.suspicious_value` would in a report.
            for w in &warnings {
                eprintln!("warning: {w} (input.suspicious_value)");
            }
            print(&commands::render_spacing(&result, format));
            Ok(commands::spacing_exit_status(&result))
        }
        Command::Schema => {
            print(&gapwarden::schema::project_schema_json());
            Ok(ExitStatus::Ready)
        }
        Command::Completions { shell } => {
            let mut script = Vec::new();
            clap_complete::generate(shell, &mut Cli::command(), "gapwarden", &mut script);
            print(&String::from_utf8_lossy(&script));
            Ok(ExitStatus::Ready)
        }
        Command::Man => {
            let mut page = Vec::new();
            clap_mangen::Man::new(Cli::command())
                .render(&mut page)
                .map_err(|e| {
                    gapwarden::diag::Diagnostic::new("man", format!("cannot render: {e}"))
                })?;
            print(&String::from_utf8_lossy(&page));
            Ok(ExitStatus::Ready)
        }
    }
}

/// Prints text that is already safe for a terminal (every project string in it made
/// visible) and may carry colour: the terminal summary.
fn print_styled(text: &str) {
    let mut out = std::io::stdout().lock();
    let _ = out.write_all(text.as_bytes());
    let _ = out.flush();
}

/// Prints to stdout; a closed pipe (`| head`) is not an error worth a panic. A control or
/// bidi character from a project string (in `explain`, `rules`, a summary) is shown as
/// `<U+XXXX>`, never sent to the terminal.
fn print(text: &str) {
    let text = gapwarden::text::visible(text);
    let mut out = std::io::stdout().lock();
    let _ = out.write_all(text.as_bytes());
    let _ = out.flush();
}

#[cfg(test)]
mod tests {
    use super::*;
    use std::ffi::OsString;

    /// Generated command lines (words of every `check` argument, their values right and
    /// wrong, `=` and attached forms, `--`, help, unknown flags, empty and non-UTF-8
    /// words): wherever `check`'s arguments alone accept one, the whole command reads the
    /// same `check` from it.
    #[test]
    fn check_alone_reads_what_the_whole_command_reads() {
        #[cfg(unix)]
        let not_utf8 = {
            use std::os::unix::ffi::OsStringExt;
            OsString::from_vec(vec![b'a', 0xff, b'.', b't'])
        };
        #[cfg(not(unix))]
        let not_utf8 = OsString::from("a\u{fffd}.t");
        let mut words: Vec<OsString> = [
            "check",
            "a.toml",
            "b.toml",
            "dir/",
            "-",
            "",
            " ",
            "--format",
            "json",
            "md",
            "markdown",
            "html",
            "JSON",
            "--format=json",
            "--format=html",
            "-o",
            "--output",
            "--output=x.json",
            "-ox.json",
            "-o=x",
            "--color",
            "always",
            "never",
            "auto",
            "--color=never",
            "--rules",
            "--rules=r",
            "--templates",
            "t",
            "--out-dir",
            "out",
            "--jobs",
            "0",
            "2",
            "--jobs=3",
            "65536",
            "--allow-incomplete",
            "--allow-incomplete=true",
            "--",
            "-h",
            "--help",
            "help",
            "--version",
            "-V",
            "-x",
            "--bogus",
            "--form",
            "compare",
            "spacing",
            "-oo",
        ]
        .map(OsString::from)
        .to_vec();
        words.push(not_utf8);
        let mut state: u64 = 0x2545_F491_4F6C_DD1D;
        let mut next = move || {
            state ^= state << 13;
            state ^= state >> 7;
            state ^= state << 17;
            state
        };
        let (mut read, mut refused) = (0, 0);
        for case in 0..20_000 {
            let mut args = vec![OsString::from("gapwarden")];
            // Nearly always `check` first, as the fast path needs; now and then another word.
            if case % 10 != 0 {
                args.push(OsString::from("check"));
            }
            for _ in 0..next() % 8 {
                args.push(words[(next() % words.len() as u64) as usize].clone());
            }
            let Some(alone) = check_alone(&args) else {
                refused += 1;
                continue;
            };
            read += 1;
            match Cli::try_parse_from(&args) {
                Ok(Cli {
                    command: Command::Check(whole),
                }) => assert_eq!(alone, whole, "{args:?}"),
                Ok(_) => panic!("{args:?}: the whole command read another subcommand"),
                Err(e) => panic!("{args:?}: the whole command refused it: {e}"),
            }
        }
        assert!(
            read > 3_000 && refused > 3_000,
            "{read} read, {refused} refused"
        );
    }
}
