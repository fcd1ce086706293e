//! Benchmarks of the power-entry evaluation (divan). Run `cargo bench --bench power_entry`.
//!
//! `one_operating_point`: the rectifier simulated to its periodic steady state at one mains
//! voltage and frequency (the figure quoted for "one operating point"), for a few designs:
//! the 24 W adapter at low line, a stiff charging path (0.1 ohm, 100 uF), a slow one
//! (10 ohm, 1000 uF, many half-cycles to settle) and a very large capacitor (1 F).
//! `evaluate_adapter`: the whole power-entry evaluation of tests/fixtures/pe-adapter.toml
//! (two operating points, inrush, fuse, discharge, touch current, test voltages).
//! `inrush_switch_on`: the L-R-C switch-on of the shipped Class II example at a hot restart
//! (373 V crest, 470 uH, 3.2 ohm, 47 uF), solved in closed form (`switch_on`, what the
//! report uses) and stepped (`simulate`, RK4 with step halvings).

use gapwarden::diag::Source;
use gapwarden::power_entry::inrush::{LrcCircuit, simulate, switch_on};
use gapwarden::power_entry::rectifier::{Rectifier, steady_state};
use gapwarden::project::read_project;
use gapwarden::rules::RuleBook;

fn main() {
    divan::main();
}

const DESIGNS: [(&str, Rectifier); 4] = [
    (
        "adapter-90v",
        Rectifier {
            v_rms: 90.0,
            frequency_hz: 50.0,
            series_ohm: 1.0,
            capacitance_f: 47e-6,
            load_w: 27.9,
            diode_drop_v: 2.0,
        },
    ),
    (
        "stiff-0.1ohm",
        Rectifier {
            v_rms: 230.0,
            frequency_hz: 50.0,
            series_ohm: 0.1,
            capacitance_f: 100e-6,
            load_w: 100.0,
            diode_drop_v: 0.0,
        },
    ),
    (
        "slow-10ohm",
        Rectifier {
            v_rms: 230.0,
            frequency_hz: 50.0,
            series_ohm: 10.0,
            capacitance_f: 1000e-6,
            load_w: 200.0,
            diode_drop_v: 0.0,
        },
    ),
    (
        "capacitor-1f",
        Rectifier {
            v_rms: 230.0,
            frequency_hz: 50.0,
            series_ohm: 0.5,
            capacitance_f: 1.0,
            load_w: 28.0,
            diode_drop_v: 0.0,
        },
    ),
];

#[divan::bench(args = ["adapter-90v", "stiff-0.1ohm", "slow-10ohm", "capacitor-1f"])]
fn one_operating_point(bencher: divan::Bencher, name: &str) {
    let design = DESIGNS
        .iter()
        .find(|(n, _)| *n == name)
        .map(|(_, d)| *d)
        .expect("the design is listed");
    bencher.bench_local(|| steady_state(divan::black_box(&design)));
}

#[divan::bench]
fn evaluate_adapter(bencher: divan::Bencher) {
    let rules = RuleBook::shipped().expect("the shipped rules load");
    let text = include_str!("../tests/fixtures/pe-adapter.toml");
    let source = Source::new("pe-adapter.toml", text);
    let project = read_project(&source).expect("the fixture reads");
    bencher.bench_local(|| {
        gapwarden::power_entry::evaluate(
            divan::black_box(&project),
            divan::black_box(&rules),
            &[],
            &source,
        )
    });
}

#[divan::bench(args = ["closed-form", "stepped"])]
fn inrush_switch_on(bencher: divan::Bencher, method: &str) {
    let circuit = LrcCircuit {
        peak_v: std::f64::consts::SQRT_2 * 264.0,
        frequency_hz: 50.0,
        inductance_h: 470e-6,
        resistance_ohm: 3.2,
        capacitance_f: 47e-6,
        start_v: 0.0,
    };
    let solve = if method == "stepped" {
        simulate
    } else {
        switch_on
    };
    bencher.bench_local(|| solve(divan::black_box(&circuit)));
}
