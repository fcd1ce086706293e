//! A driver for profiling the board search (valgrind/perf): builds the benchmark's generated
//! 100,000-object board once and measures the barriers named on the command line
//! (`IP`, `PS`, `IS`; all three by default), printing each one's figures and time.

#[allow(dead_code)]
#[path = "../benches/board.rs"]
mod bench;

use std::time::Instant;

fn main() {
    let board = bench::build(&bench::generated_files());
    let index = gapwarden::board::Index::new(&board);
    let wanted: Vec<String> = std::env::args().skip(1).collect();
    for (a, b) in [("I", "P"), ("P", "S"), ("I", "S")] {
        if !wanted.is_empty() && !wanted.iter().any(|w| w == &format!("{a}{b}")) {
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
