//! The page written in Rust (`src/report/page/`) against the shipped templates, which stay
//! the documented definition of the layout: every project file under `tests/fixtures/` and
//! `examples/` that evaluates is rendered both ways, as plain Markdown (with and without the
//! EMC chart written beside it) and as the Markdown of the HTML page, and the two texts must
//! be the same to the byte. A change to the layout is made in both places; this test says
//! where they part.

use gapwarden::diag::Source;
use gapwarden::report::view::Page;
use gapwarden::report::{MarkdownOptions, Templates, Writer, check_source, render_page_with};
use gapwarden::rules::RuleBook;

use crate::common::{project_files, root};

/// The first line where two texts differ, with the line before it, for the failure message.
fn first_difference(native: &str, templates: &str) -> String {
    let a: Vec<&str> = native.lines().collect();
    let b: Vec<&str> = templates.lines().collect();
    let at = a
        .iter()
        .zip(&b)
        .position(|(x, y)| x != y)
        .unwrap_or(a.len().min(b.len()));
    let line = |v: &[&str], i: usize| v.get(i).copied().unwrap_or("<end of text>").to_string();
    format!(
        "line {}:\n  before:    {:?}\n  native:    {:?}\n  templates: {:?}\n  ({} lines native, {} lines templates)",
        at + 1,
        if at > 0 {
            line(&a, at - 1)
        } else {
            String::new()
        },
        line(&a, at),
        line(&b, at),
        a.len(),
        b.len()
    )
}

#[test]
fn the_native_page_is_the_templates_page_for_every_fixture_and_example() {
    let rules = RuleBook::shipped().expect("the shipped rules load");
    let templates = Templates::shipped();
    assert!(!templates.any_house(), "the shipped templates only");
    let mut files = Vec::new();
    project_files(&root().join("tests/fixtures"), &mut files);
    project_files(&root().join("examples"), &mut files);

    let chart = MarkdownOptions {
        chart_file: Some("report-emc.svg".to_string()),
    };
    let pages = [
        (Page::Markdown, MarkdownOptions::default()),
        (Page::Markdown, chart),
        (Page::Html, MarkdownOptions::default()),
    ];
    let mut rendered = Vec::new();
    let mut differences = Vec::new();
    for path in &files {
        let relative = path.strip_prefix(root()).unwrap_or(path);
        let name = relative.display().to_string();
        let Ok(text) = std::fs::read_to_string(path) else {
            continue;
        };
        // Files that do not evaluate (bad inputs, house rule tables) have no page.
        let Ok(report) = check_source(&Source::new(path.display().to_string(), text), &rules)
        else {
            continue;
        };
        for (page, options) in &pages {
            let render = |writer| {
                render_page_with(&report, &templates, *page, options, writer).unwrap_or_else(|p| {
                    panic!("{name} ({page:?}, {writer:?}) does not render: {p}")
                })
            };
            let native = render(Writer::Native);
            let interpreted = render(Writer::Templates);
            if native != interpreted {
                differences.push(format!(
                    "{name} ({page:?}, chart file {:?}): {}",
                    options.chart_file,
                    first_difference(&native, &interpreted)
                ));
            }
        }
        rendered.push(name);
    }
    assert!(
        differences.is_empty(),
        "the native page differs from the templates' in {} page(s):\n{}",
        differences.len(),
        differences.join("\n\n")
    );
    // The fixtures cover every section: a board, EMC prescan and estimate, power entry,
    // IEC 60601-1 means of protection, bridging parts, hostile names.
    for must in [
        "examples/class2-adapter.toml",
        "examples/class2-adapter-board.toml",
        "examples/medical-supply.toml",
        "tests/fixtures/hostile-names.toml",
        "tests/fixtures/emc-estimate.toml",
        "tests/fixtures/pe-adapter.toml",
        "tests/fixtures/iso-no-barrier.toml",
    ] {
        assert!(
            rendered.iter().any(|r| r == must),
            "{must} was not rendered (rendered: {rendered:?})"
        );
    }
    assert!(
        rendered.len() >= 40,
        "only {} projects rendered",
        rendered.len()
    );
}

/// Both pages of `report`, native and interpreted, the same (a message naming `what` if not).
fn assert_same_pages(report: &gapwarden::report::Report, what: &str) {
    let templates = Templates::shipped();
    for page in [Page::Markdown, Page::Html] {
        let options = MarkdownOptions::default();
        let render = |writer| {
            render_page_with(report, &templates, page, &options, writer)
                .unwrap_or_else(|p| panic!("{what} ({page:?}) does not render: {p}"))
        };
        let (native, interpreted) = (render(Writer::Native), render(Writer::Templates));
        assert!(
            native == interpreted,
            "{what} ({page:?}): {}",
            first_difference(&native, &interpreted)
        );
    }
}

fn report_of(path: &str) -> gapwarden::report::Report {
    let rules = RuleBook::shipped().expect("the shipped rules load");
    let text = std::fs::read_to_string(root().join(path)).expect("the project file reads");
    check_source(
        &Source::new(root().join(path).display().to_string(), text),
        &rules,
    )
    .expect("the project evaluates")
}

/// The template branches no fixture reaches (empty lists, absent figures, the other
/// wording of a choice), reached by changing a real report: the writer must follow the
/// templates there too.
#[test]
fn the_native_page_follows_the_templates_on_branches_no_fixture_reaches() {
    type Change = fn(&mut gapwarden::report::Report);
    let changes: [(&str, Change); 9] = [
        (
            "no finding at all, every check quiet, no revision, no assumption",
            |r| {
                r.findings.clear();
                r.finding_context.clear();
                r.summary.blocking = 0;
                r.summary.warning = 0;
                r.summary.note = 0;
                for c in &mut r.checks {
                    c.judged = 0;
                    c.raised = 0;
                }
                r.design.revision = None;
                r.design.standard_named = true;
                r.assumptions.clear();
            },
        ),
        (
            "EMC: gaps, no filter, Middlebrook not applied, no points, no assumption",
            |r| {
                let emc = r.emc.as_mut().expect("an EMC section");
                emc.noise_gaps = vec!["the rise time (emc.switch_node_rise_time_ns)".to_string()];
                emc.filter = None;
                emc.middlebrook = None;
                emc.middlebrook_not_applied = Some("no PFC stage: 1.5 A".to_string());
                emc.points.clear();
                emc.assumptions.clear();
                emc.governing_mode = None;
                emc.max_required_attenuation_hz = None;
            },
        ),
        ("EMC: no converter figures", |r| {
            let emc = r.emc.as_mut().expect("an EMC section");
            emc.middlebrook = None;
            emc.middlebrook_not_applied = None;
            emc.converter_figures_available = false;
            emc.noise_source = "none";
        }),
        ("EMC: converter figures but no stage", |r| {
            let emc = r.emc.as_mut().expect("an EMC section");
            emc.middlebrook = None;
            emc.middlebrook_not_applied = None;
            emc.converter_figures_available = true;
            emc.noise_source = "estimate";
            emc.harmonics_evaluated = emc.points.len() + 7;
        }),
        ("power entry: nothing computed, no lists", |r| {
            let pe = r.power_entry.as_mut().expect("a power-entry section");
            pe.assumptions.clear();
            pe.missing_ratings.clear();
            pe.touch.clear();
            pe.verdicts.clear();
            pe.discharge.required = false;
            pe.discharge.across_line_uf = None;
            for x in [
                &mut pe.limiter_energy_j,
                &mut pe.input_rms_a,
                &mut pe.repetitive_peak_a,
                &mut pe.power_factor,
                &mut pe.bulk_valley_v,
                &mut pe.bulk_ripple_v,
                &mut pe.hold_up_time_ms,
                &mut pe.discharge_time_constant_s,
                &mut pe.touch_current_ma,
                &mut pe.bulk_rated_v,
            ] {
                *x = None;
            }
            pe.mains.max_frequency_hz = pe.mains.min_frequency_hz + 10.0;
            for s in &mut pe.sections {
                s.inputs.clear();
                for f in &mut s.figures {
                    f.value = None;
                    f.not_computed_because = Some("IEC 62368-1 provides it".to_string());
                    f.judged_against = None;
                    f.verdict = None;
                    f.inputs.clear();
                }
            }
        }),
        ("isolation: drawing cut short, no pairs, no means", |r| {
            let iso = r.isolation.as_mut().expect("an isolation section");
            iso.diagram_truncated = true;
            iso.pairs.clear();
            iso.pair_count = 3;
            iso.pairs_without_barrier = 2;
            iso.means = Some(Vec::new());
        }),
        ("barriers: zero peak and impulse, no margins", |r| {
            for b in &mut r.barriers {
                b.working_peak_v = Some(0.0);
                b.rated_impulse_v = None;
                b.material_group = None;
                b.clearance_mm = None;
                b.clearance_margin_mm = None;
                b.creepage_margin_mm = Some(-0.00004);
                b.test_v_rms = None;
            }
        }),
        ("no sections at all", |r| {
            r.power_entry = None;
            r.emc = None;
            r.isolation = None;
            r.bridges.clear();
            r.board = None;
            for b in &mut r.barriers {
                b.board = None;
            }
        }),
        ("no barrier", |r| {
            r.barriers.clear();
            r.bridges.clear();
            r.board = None;
        }),
    ];
    let base = report_of("examples/class2-adapter.toml");
    for (what, change) in changes {
        let mut report = base.clone();
        change(&mut report);
        assert_same_pages(&report, what);
    }
    let mut board = report_of("examples/class2-adapter-board.toml");
    let b = board.board.as_mut().expect("a board section");
    b.unknown_net_conductors = 2;
    b.unassigned_nets = vec!["N$1".to_string(), "GND_2".to_string()];
    assert_same_pages(&board, "board: unnamed copper and unassigned nets");
}
