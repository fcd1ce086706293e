//! Benchmarks of the board measurement (divan) on a generated two-layer board with 100,000
//! copper objects: reading the Gerber files, preparing the index, and measuring every
//! barrier (three, between three circuits). Run `cargo bench --bench board`.

use gapwarden::board::{self, Board, Index, gerber};

fn main() {
    divan::main();
}

/// Objects per copper layer (two layers: 100,000 in all).
const PER_LAYER: usize = 50_000;

fn c(v: f64) -> String {
    format!("{}", (v * 1e6).round() as i64)
}

/// A 200 x 160 mm board. On each layer: a grid of 250 x 200 objects at 0.8 mm pitch, 0.5 mm
/// pads and 0.4 mm tracks 0.25 mm wide in turn; columns left of x = 60 belong to the primary
/// (nets P0..P49), right of x = 140 to the secondary (S0..S49), a band x = 90..110 to a third
/// circuit (F0..F9), and the rest is floating copper (N/C) the paths cross. A 2 mm milled slot
/// runs down each floating field.
fn generated_files() -> Vec<(String, String)> {
    let header = |f: &str| {
        format!("%FSLAX46Y46*%\n%MOMM*%\n%TF.FileFunction,{f}*%\n%LPD*%\nG75*\n%ADD10C,0.5*%\n%ADD11C,0.25*%\n")
    };
    let mut files = Vec::new();
    for (function, name) in [("Copper,L1,Top", "top.gbr"), ("Copper,L2,Bot", "bottom.gbr")] {
        let mut s = header(function);
        let cols = 250;
        let mut n = 0;
        'grid: for j in 0..200 {
            for i in 0..cols {
                if n == PER_LAYER {
                    break 'grid;
                }
                let x = 0.5 + i as f64 * 0.8;
                let y = 0.5 + j as f64 * 0.8;
                let net = if x < 60.0 {
                    format!("P{}", (i + j) % 50)
                } else if x > 140.0 {
                    format!("S{}", (i + j) % 50)
                } else if (90.0..110.0).contains(&x) {
                    format!("F{}", (i + j) % 10)
                } else {
                    "N/C".to_string()
                };
                s.push_str(&format!("%TO.N,{net}*%\n"));
                if (i + j) % 2 == 0 {
                    s.push_str(&format!("D10*\nX{}Y{}D03*\n", c(x), c(y)));
                } else {
                    s.push_str(&format!("D11*\nX{}Y{}D02*\nX{}Y{}D01*\n", c(x - 0.2), c(y), c(x + 0.2), c(y)));
                }
                n += 1;
            }
        }
        s.push_str("%TD*%\nM02*\n");
        files.push((name.to_string(), s));
    }
    let mut outline = header("Profile,NP");
    outline.push_str("D10*\nX-1000000Y-1000000D02*\nX201000000Y-1000000D01*\nX201000000Y161000000D01*\nX-1000000Y161000000D01*\nX-1000000Y-1000000D01*\nM02*\n");
    files.push(("outline.gbr".to_string(), outline));
    let mut npth = header("NonPlated,1,2,NPTH,Rout");
    npth.push_str("%ADD12C,2.0*%\nD12*\n");
    for x in [75.0, 125.0] {
        npth.push_str(&format!("X{}Y{}D02*\nX{}Y{}D01*\n", c(x), c(20.0), c(x), c(140.0)));
    }
    npth.push_str("M02*\n");
    files.push(("npth.gbr".to_string(), npth));
    files
}

fn build(files: &[(String, String)]) -> Board {
    let images = files
        .iter()
        .map(|(name, text)| {
            let image = gerber::read(name, text).expect("generated file reads");
            (name.clone(), gapwarden::sha256_hex(text.as_bytes()), image)
        })
        .collect();
    board::build(images, 1.6).expect("generated board builds")
}

fn nets(prefix: &str, n: usize) -> Vec<String> {
    (0..n).map(|i| format!("{prefix}{i}")).collect()
}

#[divan::bench(sample_count = 5)]
fn read_100k_objects(bencher: divan::Bencher) {
    let files = generated_files();
    bencher.bench(|| build(divan::black_box(&files)));
}

#[divan::bench(sample_count = 5)]
fn index_100k_objects(bencher: divan::Bencher) {
    let board = build(&generated_files());
    bencher.bench(|| Index::new(divan::black_box(&board)).layer_names().len());
}

#[divan::bench(sample_count = 5)]
fn measure_three_barriers_100k_objects(bencher: divan::Bencher) {
    let board = build(&generated_files());
    let index = Index::new(&board);
    let (p, s, f) = (nets("P", 50), nets("S", 50), nets("F", 10));
    bencher.bench(|| {
        let a = index.measure(&p, &s, 1.0);
        let b = index.measure(&p, &f, 1.0);
        let c = index.measure(&f, &s, 1.0);
        (a.clearance.map(|m| m.distance_mm), b.creepage.map(|m| m.distance_mm), c.clearance.map(|m| m.distance_mm))
    });
}

/// The figures the benchmark measures are real: print them once so that a reader of the
/// benchmark output can check them (floating copper between the circuits shortens them).
#[divan::bench(sample_count = 1)]
fn print_measured_figures() {
    let board = build(&generated_files());
    let index = Index::new(&board);
    let m = index.measure(&nets("P", 50), &nets("S", 50), 1.0);
    eprintln!(
        "{} conductors; primary-secondary clearance {:?} mm, creepage {:?} mm",
        board.conductors.len(),
        m.clearance.map(|c| c.distance_mm),
        m.creepage.map(|c| c.distance_mm)
    );
}
