//! Benchmarks of the engine (divan): one barrier's spacing, a full check of each example,
//! and the isolation-path analysis on a generated large design. Run `cargo bench`.

use gapwarden::commands::{EXAMPLES, SpacingQuery, spacing};
use gapwarden::diag::Source;
use gapwarden::project::{
    BetweenRows, BoardCoating, BoardConductor, Field, Grade, MaterialGroup, OvervoltageCategory,
    Project, read_project,
};
use gapwarden::report::{Templates, check_source, render_markdown};
use gapwarden::rules::RuleBook;

fn main() {
    divan::main();
}

fn rules() -> RuleBook {
    RuleBook::shipped().expect("the shipped rules load")
}

#[divan::bench]
fn one_barrier_spacing(bencher: divan::Bencher) {
    let rules = rules();
    let query = SpacingQuery {
        working_rms_v: 250.0,
        working_peak_v: Some(520.0),
        grade: Grade::Reinforced,
        pollution_degree: 2,
        overvoltage_category: OvervoltageCategory::II,
        nominal_v: 230.0,
        transient_v: None,
        altitude_m: 3000.0,
        material_group: Some(MaterialGroup::IIIa),
        cti: None,
        printed_board: true,
        field: Field::Inhomogeneous,
        board_conductor: BoardConductor::OuterLayer,
        board_coating: BoardCoating::None,
        creepage_between_rows: BetweenRows::NextRow,
        clearance_mm: Some(6.2),
        creepage_mm: Some(6.4),
    };
    bencher.bench_local(|| spacing(divan::black_box(&rules), divan::black_box(&query)));
}

/// Parse, compute, run the checklist and render the Markdown of one shipped example.
#[divan::bench(args = ["class2-adapter", "class1-appliance"])]
fn full_check_of_example(bencher: divan::Bencher, name: &str) {
    let rules = rules();
    let templates = Templates::shipped();
    let text = EXAMPLES
        .iter()
        .find(|(n, _)| *n == name)
        .map(|(_, t)| *t)
        .expect("example exists");
    let source = Source::new(format!("{name}.toml"), text);
    bencher.bench_local(|| {
        let report = check_source(&source, &rules).expect("example checks");
        render_markdown(&report, &templates).expect("renders")
    });
}

/// A generated design: `circuits` circuits (one in ten hazardous, one in five accessible)
/// and `barriers` barriers between pseudo-random pairs, with grades cycling.
pub fn generated_design(circuits: usize, barriers: usize) -> String {
    let mut text = String::from(
        "[design]\nname = \"generated\"\nrevision = \"1\"\nprotection_class = \"II\"\n\n[environment]\npollution_degree = 2\novervoltage_category = \"II\"\naltitude_m = 2000\n\n[mains]\nnominal_v = 230\n\n",
    );
    for i in 0..circuits {
        let (kind, accessible) = match i % 10 {
            0 => ("hazardous", false),
            1 | 2 => ("safe", true),
            _ => ("safe", false),
        };
        text.push_str(&format!(
            "[[circuit]]\nid = \"c{i}\"\nkind = \"{kind}\"\naccessible = {accessible}\n\n"
        ));
    }
    let grades = [
        "functional",
        "basic",
        "supplementary",
        "reinforced",
        "double",
    ];
    let mut state: u64 = 0x9e37_79b9_7f4a_7c15;
    let mut next = || {
        // xorshift: deterministic, no dependency.
        state ^= state << 13;
        state ^= state >> 7;
        state ^= state << 17;
        state
    };
    for b in 0..barriers {
        let x = (next() % circuits as u64) as usize;
        let mut y = (next() % circuits as u64) as usize;
        if y == x {
            y = (x + 1) % circuits;
        }
        let grade = grades[(next() % grades.len() as u64) as usize];
        text.push_str(&format!(
            "[[barrier]]\nid = \"b{b}\"\nbetween = [\"c{x}\", \"c{y}\"]\ngrade = \"{grade}\"\nworking_rms_v = 250\nmaterial_group = \"IIIa\"\nclearance_mm = 8\ncreepage_mm = 8\n\n"
        ));
    }
    text
}

/// The isolation-path analysis alone on 500 circuits and 2,000 barriers.
#[divan::bench]
fn isolation_paths_500_circuits_2000_barriers(bencher: divan::Bencher) {
    let text = generated_design(500, 2000);
    let project: Project =
        read_project(&Source::new("generated.toml", text)).expect("generated design reads");
    bencher.bench_local(|| gapwarden::isolation::analyse(divan::black_box(&project)));
}
