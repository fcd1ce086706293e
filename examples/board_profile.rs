//! A driver for profiling the board search (valgrind/perf): builds the benchmark's generated
//! 100,000-object board once and measures the barriers named on the command line
//! (`IP`, `PS`, `IS`, each alone), printing each one's figures and time; with none named,
//! all three together as `check` measures them (`Index::measure_all`).

#[allow(dead_code)]
#[path = "../benches/board.rs"]
mod bench;

use std::time::Instant;

fn main() {
    let board = bench::build(&bench::generated_files());
    let index = gapwarden::board::Index::new(&board);
    let wanted: Vec<String> = std::env::args().skip(1).collect();
    let all = [("I", "P"), ("P", "S"), ("I", "S")];
    if wanted.is_empty() {
        // All three together, as `check` measures them (`Index::measure_all`).
        let nets: Vec<(Vec<String>, Vec<String>)> = all
            .iter()
            .map(|(a, b)| (bench::nets(a, 50), bench::nets(b, 50)))
            .collect();
        let pairs: Vec<(&[String], &[String])> = nets
            .iter()
            .map(|(a, b)| (a.as_slice(), b.as_slice()))
            .collect();
        let t = Instant::now();
        let measured = index.measure_all(&pairs, 1.0);
        let took = t.elapsed().as_secs_f64();
        for ((a, b), m) in all.iter().zip(measured) {
            eprintln!(
                "{a}-{b}: clearance {:?} mm, creepage {:?} mm",
                m.clearance.map(|c| c.distance_mm),
                m.creepage.map(|c| c.distance_mm),
            );
        }
        eprintln!("all three together: {took:.3} s");
        return;
    }
    for (a, b) in all {
        if !wanted.iter().any(|w| w == &format!("{a}{b}")) {
            continue;
        }
        let t = Instant::now();
        let m = index.measure(&bench::nets(a, 50), &bench::nets(b, 50), 1.0);
        eprintln!(
            "{a}-{b}: clearance {:?} mm, creepage {:?} mm, {:.3} s",
            m.clearance.map(|c| c.distance_mm),
            m.creepage.map(|c| c.distance_mm),
            t.elapsed().as_secs_f64()
        );
    }
}
