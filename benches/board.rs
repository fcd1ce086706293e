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

/// A two-layer board 200 mm wide, as tall as 50,000 objects per layer need (about 175 mm).
/// On each layer a grid at 0.8 mm pitch of 0.5 mm pads and 0.4 mm tracks 0.25 mm wide in
/// turn: the input circuit left of x = 40 (nets I0..I49), the primary from x = 48 to 100
/// (P0..P49), the secondary right of x = 108 (S0..S49); the two 8 mm gaps between them hold
/// a 2 mm milled slot each and three floating (N/C) pads each.
pub fn generated_files() -> Vec<(String, String)> {
    let header = |f: &str| {
        format!(
            "%FSLAX46Y46*%\n%MOMM*%\n%TF.FileFunction,{f}*%\n%LPD*%\nG75*\n%ADD10C,0.5*%\n%ADD11C,0.25*%\n"
        )
    };
    let mut files = Vec::new();
    let mut height = 0.0f64;
    for (function, name) in [
        ("Copper,L1,Top", "top.gbr"),
        ("Copper,L2,Bot", "bottom.gbr"),
    ] {
        let mut s = header(function);
        let mut n = 0;
        let mut j = 0;
        while n < PER_LAYER {
            for i in 0..250 {
                if n == PER_LAYER {
                    break;
                }
                let x = 0.5 + i as f64 * 0.8;
                let y = 0.5 + j as f64 * 0.8;
                let net = if x < 40.0 {
                    format!("I{}", (i + j) % 50)
                } else if (48.0..100.0).contains(&x) {
                    format!("P{}", (i + j) % 50)
                } else if x > 108.0 {
                    format!("S{}", (i + j) % 50)
                } else {
                    continue;
                };
                s.push_str(&format!("%TO.N,{net}*%\n"));
                if (i + j) % 2 == 0 {
                    s.push_str(&format!("D10*\nX{}Y{}D03*\n", c(x), c(y)));
                } else {
                    s.push_str(&format!(
                        "D11*\nX{}Y{}D02*\nX{}Y{}D01*\n",
                        c(x - 0.2),
                        c(y),
                        c(x + 0.2),
                        c(y)
                    ));
                }
                n += 1;
                height = height.max(y + 1.0);
            }
            j += 1;
        }
        s.push_str("%TO.N,N/C*%\nD10*\n");
        for x in [42.0, 102.0] {
            for y in [30.0, 80.0, 130.0] {
                s.push_str(&format!("X{}Y{}D03*\n", c(x), c(y)));
            }
        }
        s.push_str("%TD*%\nM02*\n");
        files.push((name.to_string(), s));
    }
    let mut outline = header("Profile,NP");
    outline.push_str(&format!(
        "D10*\nX-1000000Y-1000000D02*\nX201000000Y-1000000D01*\nX201000000Y{h}D01*\nX-1000000Y{h}D01*\nX-1000000Y-1000000D01*\nM02*\n",
        h = c(height + 1.0)
    ));
    files.push(("outline.gbr".to_string(), outline));
    let mut npth = header("NonPlated,1,2,NPTH,Rout");
    npth.push_str("%ADD12C,2.0*%\nD12*\n");
    for x in [44.0, 104.0] {
        npth.push_str(&format!(
            "X{}Y{}D02*\nX{}Y{}D01*\n",
            c(x),
            c(10.0),
            c(x),
            c(height - 10.0)
        ));
    }
    npth.push_str("M02*\n");
    files.push(("npth.gbr".to_string(), npth));
    files
}

pub fn build(files: &[(String, String)]) -> Board {
    let images = files
        .iter()
        .map(|(name, text)| {
            let image = gerber::read(name, text).expect("generated file reads");
            (name.clone(), gapwarden::sha256_hex(text.as_bytes()), image)
        })
        .collect();
    board::build(images, 1.6).expect("generated board builds")
}

pub fn nets(prefix: &str, n: usize) -> Vec<String> {
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

// Each sample measures with a fresh index (made outside the timing), all three barriers in
// one call as one `check` of the board does (`Index::measure_all`: the two barriers from
// the input circuit share a search, and the cut-outs and the map of cells sorted by their
// edges are prepared once).
#[divan::bench(sample_count = 5)]
fn measure_three_barriers_100k_objects(bencher: divan::Bencher) {
    let board = build(&generated_files());
    let (i, p, s) = (nets("I", 50), nets("P", 50), nets("S", 50));
    bencher
        .with_inputs(|| Index::new(&board))
        .bench_refs(|index| {
            let m = index.measure_all(
                &[
                    (i.as_slice(), p.as_slice()),
                    (p.as_slice(), s.as_slice()),
                    (i.as_slice(), s.as_slice()),
                ],
                1.0,
            );
            (
                m[0].clearance.as_ref().map(|m| m.distance_mm),
                m[1].creepage.as_ref().map(|m| m.distance_mm),
                m[2].clearance.as_ref().map(|m| m.distance_mm),
            )
        });
}

#[divan::bench(sample_count = 5)]
fn measure_one_barrier_100k_objects(bencher: divan::Bencher) {
    let board = build(&generated_files());
    let (p, s) = (nets("P", 50), nets("S", 50));
    bencher
        .with_inputs(|| Index::new(&board))
        .bench_refs(|index| index.measure(&p, &s, 1.0).clearance.map(|m| m.distance_mm));
}

/// The figures the benchmark measures are real: print them once so that a reader of the
/// benchmark output can check them (floating copper between the circuits shortens them).
#[divan::bench(sample_count = 1)]
fn print_measured_figures() {
    let board = build(&generated_files());
    let index = Index::new(&board);
    for (a, b) in [("I", "P"), ("P", "S"), ("I", "S")] {
        let m = index.measure(&nets(a, 50), &nets(b, 50), 1.0);
        eprintln!(
            "{} conductors; {a}-{b} clearance {:?} mm, creepage {:?} mm",
            board.conductors.len(),
            m.clearance.map(|c| c.distance_mm),
            m.creepage.map(|c| c.distance_mm)
        );
    }
}
