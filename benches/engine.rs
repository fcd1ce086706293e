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
        altitude_between_rows: BetweenRows::NextRow,
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

/// The figures of an example without the checklist: shows what the checks cost.
#[divan::bench]
fn figures_only_of_class2_example(bencher: divan::Bencher) {
    let rules = rules();
    let source = Source::new("class2-adapter.toml", EXAMPLES[0].1);
    bencher.bench_local(|| gapwarden::report::figures(&source, &rules).expect("example reads"));
}

/// A small generated design, varied by `seed`: the size of a typical adapter.
pub fn small_design(seed: usize) -> String {
    let grades = ["reinforced", "double", "basic", "functional"];
    let mut text = format!(
        "[design]\nname = \"generated {seed}\"\nrevision = \"{}\"\nprotection_class = \"II\"\n\n[environment]\npollution_degree = {}\novervoltage_category = \"II\"\naltitude_m = {}\n\n[mains]\nnominal_v = {}\n\n",
        seed % 7,
        1 + seed % 3,
        1000 + (seed % 5) * 500,
        if seed % 2 == 0 { 230 } else { 120 }
    );
    for (id, kind, accessible) in [
        ("input", "mains", false),
        ("primary", "hazardous", false),
        ("aux", "safe", false),
        ("output", "safe", true),
    ] {
        text.push_str(&format!(
            "[[circuit]]\nid = \"{id}\"\nkind = \"{kind}\"\naccessible = {accessible}\n\n"
        ));
    }
    for (i, (id, a, b)) in [
        ("pri-sec", "primary", "output"),
        ("in-out", "input", "output"),
        ("pri-aux", "primary", "aux"),
        ("in-pri", "input", "primary"),
    ]
    .iter()
    .enumerate()
    {
        let grade = if i < 2 {
            grades[seed % 2]
        } else {
            grades[2 + (seed + i) % 2]
        };
        text.push_str(&format!(
            "[[barrier]]\nid = \"{id}\"\nbetween = [\"{a}\", \"{b}\"]\ngrade = \"{grade}\"\nworking_rms_v = {}\nmaterial_group = \"IIIa\"\nprinted_board = true\nclearance_mm = {}\ncreepage_mm = {}\n{}\n",
            100 + (seed * 37 + i * 11) % 300,
            2.0 + (seed % 9) as f64,
            2.5 + (seed % 9) as f64,
            if i == 0 { "bridged_by = [\"CY1\", \"U1\"]\n" } else { "" }
        ));
    }
    text.push_str("[[part]]\nref = \"CY1\"\nkind = \"y-capacitor\"\nsubclass = \"Y1\"\nrated_ac_v = 300\ncapacitance_nf = 1.0\n\n");
    text.push_str("[[part]]\nref = \"U1\"\nkind = \"optocoupler\"\nisolation_test_v_rms = 5000\nexternal_clearance_mm = 8\nexternal_creepage_mm = 8\ndistance_through_insulation_mm = 0.4\n");
    text
}

/// 1,000 generated designs checked and rendered to Markdown on one thread.
#[divan::bench(sample_count = 10)]
fn batch_of_1000_generated_designs(bencher: divan::Bencher) {
    let rules = rules();
    let templates = Templates::shipped();
    let sources: Vec<Source> = (0..1000)
        .map(|i| Source::new(format!("generated-{i}.toml"), small_design(i)))
        .collect();
    bencher.bench_local(|| {
        for source in &sources {
            let report = check_source(source, &rules).expect("generated design checks");
            divan::black_box(render_markdown(&report, &templates).expect("renders"));
        }
    });
}

/// The checklist alone over an example's figures (the context already serialised).
#[divan::bench]
fn checklist_only_of_class2_example(bencher: divan::Bencher) {
    let rules = rules();
    let source = Source::new("class2-adapter.toml", EXAMPLES[0].1);
    let report = gapwarden::report::figures(&source, &rules).expect("example reads");
    let context = minijinja::Value::from(minijinja::value::Serde(&report));
    bencher.bench_local(|| gapwarden::checks::run_checks(&rules, &context).expect("checks run"));
}

/// Serialising an example's figures into the checklist's context.
#[divan::bench]
fn context_of_class2_example(bencher: divan::Bencher) {
    let rules = rules();
    let source = Source::new("class2-adapter.toml", EXAMPLES[0].1);
    let report = gapwarden::report::figures(&source, &rules).expect("example reads");
    bencher.bench_local(|| minijinja::Value::from(minijinja::value::Serde(&report)));
}

/// Rendering an example's finished report to Markdown.
#[divan::bench]
fn markdown_only_of_class2_example(bencher: divan::Bencher) {
    let rules = rules();
    let templates = Templates::shipped();
    let source = Source::new("class2-adapter.toml", EXAMPLES[0].1);
    let report = check_source(&source, &rules).expect("example checks");
    bencher.bench_local(|| render_markdown(&report, &templates).expect("renders"));
}
