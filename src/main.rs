//! The gapwarden command line: parses arguments, calls the library, prints, and returns
//! 0 (ready for review), 1 (not ready: blocking, incomplete or implausible) or 2 (unusable
//! input or command line).

use std::io::Write;
use std::path::PathBuf;
use std::process::ExitCode;

use clap::{Parser, Subcommand, ValueEnum};

use gapwarden::batch;
use gapwarden::commands::{self, Format, SpacingQuery};
use gapwarden::diag::{Diagnostic, Problems};
use gapwarden::project::{
    BetweenRows, BoardCoating, BoardConductor, Field, Grade, MaterialGroup, OvervoltageCategory,
};
use gapwarden::report::Templates;
use gapwarden::rules::RuleBook;
use gapwarden::spacing::Verdict;

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
    Check {
        /// Project files (TOML) or folders of them.
        #[arg(required = true, value_name = "PROJECT")]
        projects: Vec<PathBuf>,
        /// Output format.
        #[arg(long, value_enum, default_value_t = OutputFormat::Md)]
        format: OutputFormat,
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
        /// A folder of house rule tables that add to or override the shipped ones by id.
        #[arg(long, value_name = "DIR")]
        rules: Option<PathBuf>,
        /// A folder of house templates (report.md.j2 and the sections it includes) that
        /// replace the shipped ones of the same name.
        #[arg(long, value_name = "DIR")]
        templates: Option<PathBuf>,
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
    },
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
        /// A folder of house rule tables.
        #[arg(long, value_name = "DIR")]
        rules: Option<PathBuf>,
        /// Incomplete barriers in the new revision do not make the exit status 1.
        #[arg(long)]
        allow_incomplete: bool,
    },
    /// Write a commented starting project file. Never overwrites an existing file.
    New {
        /// Where to write the new project file.
        path: PathBuf,
        /// Which example to start from: class2-adapter or class1-appliance.
        #[arg(long, default_value = "class2-adapter", value_name = "NAME")]
        example: String,
    },
    /// Print how one figure or finding was derived.
    ///
    /// ITEM is a barrier id (both figures), BARRIER.clearance, BARRIER.creepage, a finding id
    /// such as barrier.clearance_short, "assumptions", "readiness", a power-entry item (power_entry,
    /// power_entry.fuse, power_entry.inrush_peak_a, ...) or an EMC item (emc, emc.corner,
    /// emc.middlebrook, ...).
    Explain {
        /// The project file (TOML).
        project: PathBuf,
        /// The figure or finding to explain.
        item: String,
        /// A folder of house rule tables.
        #[arg(long, value_name = "DIR")]
        rules: Option<PathBuf>,
    },
    /// List the loaded rule tables with their sources, or print one table.
    Rules {
        /// A rule table id, e.g. iec60664-1.creepage.
        id: Option<String>,
        /// A folder of house rule tables.
        #[arg(long, value_name = "DIR")]
        rules: Option<PathBuf>,
    },
    /// Required clearance and creepage of one barrier, from flags (JSON, like one entry of
    /// a report's barriers). Exit 1 when declared distances fall short, or would pass on
    /// an implausible value (verdict "check-input").
    Spacing(SpacingArgs),
}

#[derive(Clone, Copy, ValueEnum)]
enum OutputFormat {
    /// Markdown checklist
    Md,
    /// Self-contained HTML page
    Html,
    /// The report model as JSON
    Json,
}

#[derive(clap::Args)]
struct SpacingArgs {
    /// Working voltage across the barrier, V rms.
    #[arg(long, value_name = "V")]
    working_rms_v: f64,
    /// Steady-state or recurring peak working voltage, V.
    #[arg(long, value_name = "V")]
    working_peak_v: Option<f64>,
    /// Insulation grade.
    #[arg(long, value_enum, default_value_t = GradeArg::Basic)]
    grade: GradeArg,
    /// Pollution degree (1, 2 or 3).
    #[arg(long, default_value_t = 2, value_parser = clap::value_parser!(u8).range(1..=3))]
    pollution_degree: u8,
    /// Overvoltage category (I, II, III or IV).
    #[arg(long, default_value = "II", value_parser = ["I", "II", "III", "IV"])]
    overvoltage_category: String,
    /// Nominal line-to-neutral voltage of the supply system, V.
    #[arg(long, default_value_t = 230.0, value_name = "V")]
    nominal_v: f64,
    /// Transient overvoltage that replaces the rated impulse voltage from the mains, V.
    #[arg(long, value_name = "V")]
    transient_v: Option<f64>,
    /// Altitude above sea level, m.
    #[arg(long, default_value_t = 2000.0, value_name = "M")]
    altitude_m: f64,
    /// Material group (I, II, IIIa, IIIb); IIIb is assumed when neither this nor --cti is given.
    #[arg(long, value_parser = ["I", "II", "IIIa", "IIIb"])]
    material_group: Option<String>,
    /// Comparative tracking index of the insulating material.
    #[arg(long)]
    cti: Option<f64>,
    /// The barrier is on a printed board (printed-wiring creepage columns where allowed).
    #[arg(long)]
    printed_board: bool,
    /// The field is homogeneous (Case B); inhomogeneous (Case A) otherwise.
    #[arg(long)]
    homogeneous: bool,
    /// For functional spacing on a board: where the conductors are.
    #[arg(long, value_enum, default_value_t = ConductorArg::OuterLayer)]
    board_conductor: ConductorArg,
    /// For functional spacing on a board: the coating.
    #[arg(long, value_enum, default_value_t = CoatingArg::None)]
    board_coating: CoatingArg,
    /// Interpolate creepage between table rows (rounded up to 0.1 mm) instead of taking the next row.
    #[arg(long)]
    interpolate: bool,
    /// Interpolate the altitude correction factor between table rows instead of taking the next row.
    #[arg(long)]
    interpolate_altitude: bool,
    /// Clearance as laid out, mm (to get a verdict).
    #[arg(long, value_name = "MM")]
    clearance_mm: Option<f64>,
    /// Creepage as laid out, mm (to get a verdict).
    #[arg(long, value_name = "MM")]
    creepage_mm: Option<f64>,
    /// A folder of house rule tables.
    #[arg(long, value_name = "DIR")]
    rules: Option<PathBuf>,
}

#[derive(Clone, Copy, ValueEnum)]
enum GradeArg {
    Functional,
    Basic,
    Supplementary,
    Reinforced,
    Double,
}

#[derive(Clone, Copy, ValueEnum)]
enum ConductorArg {
    OuterLayer,
    InnerLayer,
    ComponentLead,
}

#[derive(Clone, Copy, ValueEnum)]
enum CoatingArg {
    None,
    Polymer,
    Conformal,
}

fn main() -> ExitCode {
    let cli = match Cli::try_parse() {
        Ok(cli) => cli,
        Err(e) => {
            let code = if e.use_stderr() { 2 } else { 0 };
            let _ = e.print();
            return ExitCode::from(code);
        }
    };
    match run(cli) {
        Ok(code) => ExitCode::from(code),
        Err(problems) => {
            eprintln!("{problems}");
            ExitCode::from(2)
        }
    }
}

fn run(cli: Cli) -> Result<u8, Problems> {
    match cli.command {
        Command::Check {
            projects,
            format,
            output,
            rules,
            templates,
            out_dir,
            jobs,
            allow_incomplete,
        } => {
            // Every file the run reads besides the designs: no report may replace one.
            let mut house_inputs: Vec<PathBuf> = Vec::new();
            if let Some(dir) = &rules {
                house_inputs.extend(gapwarden::rules::house_rule_files(dir));
            }
            if let Some(dir) = &templates {
                house_inputs.extend(gapwarden::report::house_template_files(dir));
            }
            let rules = RuleBook::load(rules.as_deref())?;
            let templates = Templates::load(templates.as_deref())?;
            let format = match format {
                OutputFormat::Md => Format::Markdown,
                OutputFormat::Html => Format::Html,
                OutputFormat::Json => Format::Json,
            };
            let single = projects.len() == 1 && !projects[0].is_dir() && out_dir.is_none();
            if single {
                let project = &projects[0];
                let report = commands::check_file(project, &rules)?;
                let text = commands::render(&report, format, &templates)?;
                match output {
                    Some(out) => {
                        let protected: Vec<&std::path::Path> = std::iter::once(project.as_path())
                            .chain(house_inputs.iter().map(PathBuf::as_path))
                            .collect();
                        commands::write_atomically(&out, &text, &protected)?
                    }
                    None => print(&text),
                }
                return Ok(report.exit_code(allow_incomplete));
            }
            if output.is_some() {
                let why = if out_dir.is_some() {
                    "give -o FILE (one design) or --out-dir DIR (one report each), not both; nothing was written"
                } else {
                    "with several designs, give --out-dir DIR for one report each"
                };
                return Err(Diagnostic::new("-o", why).into());
            }
            let (designs, notes) = batch::find_projects_noting(&projects)?;
            for note in &notes {
                eprintln!("{note}");
            }
            let jobs = jobs
                .map(usize::from)
                .unwrap_or_else(|| std::thread::available_parallelism().map_or(1, |n| n.get()));
            let outcomes = batch::check_many(&designs, &rules, &templates, format, jobs, true);
            for o in &outcomes {
                if let Err(problems) = &o.result {
                    eprintln!("{problems}");
                }
            }
            let mut worst = outcomes
                .iter()
                .map(|o| o.exit_code_allowing(allow_incomplete))
                .max()
                .unwrap_or(0);
            if let Some(dir) = &out_dir
                && let Err(problems) =
                    batch::write_reports_protecting(&outcomes, dir, format, &house_inputs)
            {
                eprintln!("{problems}");
                worst = 2;
            }
            print(&batch::summary_with(&outcomes, allow_incomplete));
            Ok(worst)
        }
        Command::Compare {
            old,
            new,
            rules,
            allow_incomplete,
        } => {
            let rules = RuleBook::load(rules.as_deref())?;
            let read = |path: &PathBuf| -> Result<(String, gapwarden::report::Report), Problems> {
                let name = path.display().to_string();
                let text = gapwarden::read_text(path, &name)?;
                let report = gapwarden::report::check_source(
                    &gapwarden::diag::Source::new(name, text.clone()),
                    &rules,
                )?;
                Ok((text, report))
            };
            let (old_result, new_result) = (read(&old), read(&new));
            let ((old_text, old_report), (new_text, new_report)) = match (old_result, new_result) {
                (Ok(a), Ok(b)) => (a, b),
                (a, b) => {
                    let problems: Vec<Diagnostic> = a
                        .err()
                        .into_iter()
                        .chain(b.err())
                        .flat_map(|p| p.0)
                        .collect();
                    return Err(Problems(problems));
                }
            };
            print(&gapwarden::compare::compare(
                &old_text,
                &old_report,
                &new_text,
                &new_report,
            ));
            Ok(new_report.exit_code(allow_incomplete))
        }
        Command::New { path, example } => {
            commands::new_project(&path, &example)?;
            let shown = path.display().to_string();
            let shown = gapwarden::text::visible(&shown);
            eprintln!(
                "wrote {shown} (from the {example} example); edit it, then run: gapwarden check {shown}"
            );
            Ok(0)
        }
        Command::Explain {
            project,
            item,
            rules,
        } => {
            let rules = RuleBook::load(rules.as_deref())?;
            let report = commands::check_file(&project, &rules)?;
            print(&commands::explain(&report, &item)?);
            Ok(0)
        }
        Command::Rules { id, rules } => {
            let rules = RuleBook::load(rules.as_deref())?;
            print(&commands::describe_rules(&rules, id.as_deref())?);
            Ok(0)
        }
        Command::Spacing(a) => {
            let rules = RuleBook::load(a.rules.as_deref())?;
            let query = SpacingQuery {
                working_rms_v: a.working_rms_v,
                working_peak_v: a.working_peak_v,
                grade: match a.grade {
                    GradeArg::Functional => Grade::Functional,
                    GradeArg::Basic => Grade::Basic,
                    GradeArg::Supplementary => Grade::Supplementary,
                    GradeArg::Reinforced => Grade::Reinforced,
                    GradeArg::Double => Grade::Double,
                },
                pollution_degree: a.pollution_degree,
                overvoltage_category: OvervoltageCategory::from_word(&a.overvoltage_category)
                    .unwrap_or(OvervoltageCategory::II),
                nominal_v: a.nominal_v,
                transient_v: a.transient_v,
                altitude_m: a.altitude_m,
                material_group: a
                    .material_group
                    .as_deref()
                    .and_then(MaterialGroup::from_word),
                cti: a.cti,
                printed_board: a.printed_board,
                field: if a.homogeneous {
                    Field::Homogeneous
                } else {
                    Field::Inhomogeneous
                },
                board_conductor: match a.board_conductor {
                    ConductorArg::OuterLayer => BoardConductor::OuterLayer,
                    ConductorArg::InnerLayer => BoardConductor::InnerLayer,
                    ConductorArg::ComponentLead => BoardConductor::ComponentLead,
                },
                board_coating: match a.board_coating {
                    CoatingArg::None => BoardCoating::None,
                    CoatingArg::Polymer => BoardCoating::Polymer,
                    CoatingArg::Conformal => BoardCoating::Conformal,
                },
                creepage_between_rows: if a.interpolate {
                    BetweenRows::Interpolate
                } else {
                    BetweenRows::NextRow
                },
                altitude_between_rows: if a.interpolate_altitude {
                    BetweenRows::Interpolate
                } else {
                    BetweenRows::NextRow
                },
                clearance_mm: a.clearance_mm,
                creepage_mm: a.creepage_mm,
            };
            let (result, warnings) = commands::spacing_with_warnings(&rules, &query)?;
            // The JSON on stdout stays one barrier's entry; what looks implausible goes to
            // stderr, as `input.suspicious_value` would in a report.
            for w in &warnings {
                eprintln!("warning: {w} (input.suspicious_value)");
            }
            print(&gapwarden::report::to_json(&result));
            Ok(match result.verdict {
                Verdict::Fail | Verdict::CheckInput => 1,
                Verdict::Pass | Verdict::Incomplete => 0,
            })
        }
    }
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
