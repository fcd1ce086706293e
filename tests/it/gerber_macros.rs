//! Aperture macros (%AM) and aperture blocks (%AB) of the Gerber Layer Format Specification
//! (Ucamco, revision 2023.08, the commands AM and AB; from memory of it, verify against the
//! published copy): hand-computable pads measured against a plain round pad, with the
//! arithmetic beside each assertion, and the refusals, each naming the file and line.
//!
//! As in `board.rs`, every measured gap between two pieces of copper is rounded down by twice
//! the chord tolerance (2 x 0.002 mm), so an exact gap G is expected as G - 0.004 mm. Where a
//! circle is turned into chords before a boolean operation (a hole made with exposure off, a
//! thermal, a clear object) the chords lie up to 0.002 mm inside the circle, so the expected
//! value there carries that much more slack: a hole's chords bring the copper nearer, a
//! pad's outline chords take it farther away (by at most the 0.002 mm that the rounding
//! down takes off). Measured figures are floored to the micrometre, hence the 1e-6.

use gapwarden::board::{self, Board, Index, gerber};

use super::board::{GAP_LOSS, c, gbr};

const CHORD: f64 = 0.002;

fn outline() -> String {
    gbr(
        "Profile,NP",
        "%ADD10C,0.1*%\nD10*\nX-20000000Y-20000000D02*\nX20000000Y-20000000D01*\n\
         X20000000Y20000000D01*\nX-20000000Y20000000D01*\nX-20000000Y-20000000D01*\n",
    )
}

/// A plain round pad of net B, diameter `d`, at (x, y), with aperture D`code`.
fn pad_b(x: f64, y: f64, d: f64, code: u32) -> String {
    format!(
        "%ADD{code}C,{d}*%\n%TO.N,B*%\nD{code}*\nX{}Y{}D03*\n%TD*%\n",
        c(x),
        c(y)
    )
}

/// Aperture D20 flashed at (x, y) on net A.
fn flash_a(x: f64, y: f64) -> String {
    format!("%TO.N,A*%\nD20*\nX{}Y{}D03*\n%TD*%\n", c(x), c(y))
}

fn board_of(top: &str) -> Board {
    let files = [
        ("top.gbr", gbr("Copper,L1,Top", top)),
        ("outline.gbr", outline()),
    ];
    let images = files
        .iter()
        .map(|(name, text)| {
            let image = gerber::read(name, text).expect("the test file reads");
            (
                name.to_string(),
                gapwarden::sha256_hex(text.as_bytes()),
                image,
            )
        })
        .collect();
    board::build(images, 1.6).expect("the test board builds")
}

fn clearance(top: &str) -> f64 {
    let b = board_of(top);
    let m = Index::new(&b).measure(&["A".to_string()], &["B".to_string()], 1.0);
    m.clearance.expect("clearance measured").distance_mm
}

fn read_err(text: &str) -> gapwarden::diag::Diagnostic {
    gerber::read("fab/x.gbr", text).expect_err("the file is refused")
}

#[test]
fn a_macro_circle_pad_is_its_centre_distance_less_the_radii_from_a_plain_pad() {
    // Macro circle (primitive 1) of diameter $1 = 1.2 mm at the origin, flashed at (0, 0);
    // plain pad B of 1 mm at (5, 0): 5 - 0.6 - 0.5 = 3.9 mm.
    let top = "%AMDOT*1,1,$1,0,0*%\n%ADD20DOT,1.2*%\n".to_string()
        + &flash_a(0.0, 0.0)
        + &pad_b(5.0, 0.0, 1.0, 11);
    let v = clearance(&top);
    assert!((v - (3.9 - GAP_LOSS)).abs() < 1e-9, "{v}");
}

#[test]
fn a_rotated_vector_line_turns_counter_clockwise_about_the_macro_origin_with_square_ends() {
    // Vector line (20) of width 0.2 from (0, 0) to (2, 0), rotated 90 degrees about the
    // macro's origin: counter-clockwise it becomes x in [-0.1, 0.1], y in [0, 2] with a
    // square end at y = 2. Pad B of 1 mm at (0, 5): 5 - 2 - 0.5 = 2.5 mm. (Turned clockwise
    // it would be 5 - 0 - 0.5 = 4.5 mm; with a round end 5 - 2.1 - 0.5 = 2.4 mm; unrotated
    // sqrt(0^2 + (5 - 0.1)^2) - 0.5 = 4.4 mm.)
    let top = "%AMBAR*20,1,0.2,0,0,2,0,90*%\n%ADD20BAR*%\n".to_string()
        + &flash_a(0.0, 0.0)
        + &pad_b(0.0, 5.0, 1.0, 11);
    let v = clearance(&top);
    assert!((v - (2.5 - GAP_LOSS)).abs() < 1e-9, "{v}");
}

#[test]
fn a_polygon_primitive_rotated_45_degrees_is_an_upright_square() {
    // Polygon (5): 4 vertices on a circle of diameter 2 round (0, 0), the first on the
    // positive x axis, rotated 45 degrees: vertices at 45, 135, 225, 315 degrees, an upright
    // square of half side 1/sqrt(2) = 0.707107. Pad B of 1 mm at (3, 0):
    // 3 - 0.5 - 0.707107 = 1.792893 mm (unrotated, the vertex at (1, 0): 3 - 0.5 - 1 = 1.5).
    let top = "%AMDIAMOND*5,1,4,0,0,2,45*%\n%ADD20DIAMOND*%\n".to_string()
        + &flash_a(0.0, 0.0)
        + &pad_b(3.0, 0.0, 1.0, 11);
    let v = clearance(&top);
    let exact = 3.0 - 0.5 - 1.0 / 2f64.sqrt();
    assert!((v - (exact - GAP_LOSS)).abs() < 1e-6, "{v} vs {exact}");
}

#[test]
fn an_outline_with_a_centre_line_of_exposure_off_has_a_hole() {
    // Outline (4): the 4 x 4 mm square (-2,-2) (2,-2) (2,2) (-2,2) back to (-2,-2); then a
    // 2 x 2 mm center line (21) at the origin with exposure off: a square hole |x|, |y| <= 1.
    // Pad B of 0.5 mm at the hole's centre: 1 - 0.25 = 0.75 mm to the hole's edge. (Without
    // the hole B would lie on A's copper: 0 mm.)
    let top = "%AMFRAME*\n0 a square with a square hole*\n4,1,4,-2,-2,2,-2,2,2,-2,2,-2,-2,0*\n\
               21,0,2,2,0,0,0*\n%\n%ADD20FRAME*%\n"
        .to_string()
        + &flash_a(0.0, 0.0)
        + &pad_b(0.0, 0.0, 0.5, 11);
    let v = clearance(&top);
    assert!((v - (0.75 - GAP_LOSS)).abs() < 1e-9, "{v}");
}

#[test]
fn a_thermal_leaves_its_gaps_open() {
    // Thermal (7) at the origin: outer diameter 3, inner 2, gap 1 (bars |y| <= 0.5 and
    // |x| <= 0.5). Pad B of 0.2 mm at (3, 0) looks into the gap along x: the nearest copper is
    // the corner where the outer circle meets y = 0.5, at x = sqrt(1.5^2 - 0.5^2) = sqrt(2):
    // sqrt((3 - sqrt 2)^2 + 0.5^2) - 0.1 = sqrt(2.514719 + 0.25) - 0.1 = 1.562755 mm.
    // (A solid ring would be 3 - 1.5 - 0.1 = 1.4 mm.)
    let top = "%AMTHERMAL*7,0,0,3,2,1,0*%\n%ADD20THERMAL*%\n".to_string()
        + &flash_a(0.0, 0.0)
        + &pad_b(3.0, 0.0, 0.2, 11);
    let v = clearance(&top);
    // The corner lies on a chord of the outer circle, at most 0.002 mm inside it.
    let exact = ((3.0 - 2f64.sqrt()).powi(2) + 0.25).sqrt() - 0.1;
    assert!(
        v >= exact - GAP_LOSS - 1e-6 && v <= exact - GAP_LOSS + CHORD,
        "{v} vs {exact}"
    );
    // Rotated 45 degrees, the gaps lie on the diagonals and B faces the ring: 3 - 1.5 - 0.1.
    let top = "%AMTHERMAL*7,0,0,3,2,1,45*%\n%ADD20THERMAL*%\n".to_string()
        + &flash_a(0.0, 0.0)
        + &pad_b(3.0, 0.0, 0.2, 11);
    let v = clearance(&top);
    assert!(
        v <= 1.4 - GAP_LOSS + CHORD && v >= 1.4 - GAP_LOSS - 1e-6,
        "{v}"
    );
}

#[test]
fn variables_and_expressions_follow_arithmetic_precedence() {
    // D20 = VARS with $1 = 0.25, $2 = 1.
    //   $3 = 2x$1+0.5 = 0.5 + 0.5 = 1.0 (x before +; left to right it would be 1.5)
    //   circle 1: diameter $3 = 1.0 at (-$2, 0) = (-1, 0)
    //   circle 2: diameter ((($1+$2)x2-0.5)/2) = (2.5 - 0.5) / 2 = 1.0 at (-(-$2)+4, 0) = (5, 0)
    let vars = "%AMVARS*\n0 $3 = 2 x $1 + 0.5*\n$3=2x$1+0.5*\n1,1,$3,-$2,0*\n\
                1,1,((($1+$2)x2-0.5)/2),-(-$2)+4,0*\n%\n%ADD20VARS,0.25X1*%\n";
    // Pad B of 1 mm at (-4, 0): 3 - 0.5 - 0.5 = 2.0 mm from circle 1 (8 mm from circle 2).
    let v = clearance(&(vars.to_string() + &flash_a(0.0, 0.0) + &pad_b(-4.0, 0.0, 1.0, 11)));
    assert!((v - (2.0 - GAP_LOSS)).abs() < 1e-9, "{v}");
    // Pad B of 1 mm at (2.5, 0): 2.5 - 0.5 - 0.5 = 1.5 mm from circle 2 (2.5 from circle 1).
    let v = clearance(&(vars.to_string() + &flash_a(0.0, 0.0) + &pad_b(2.5, 0.0, 1.0, 11)));
    assert!((v - (1.5 - GAP_LOSS)).abs() < 1e-9, "{v}");
}

#[test]
fn a_rounded_rectangle_macro_as_design_programs_write_it() {
    // Outline (4) through the four corner-circle centres (+-0.75, +-0.5), circles (1) of
    // diameter $1+$1 = 0.5 on them, vector lines (20) of width 0.5 along the sides: a 2 x 1.5
    // mm pad with corners of radius 0.25.
    let rr = "%AMRoundRect*\n0 Rectangle with rounded corners*\n0 $1 Rounding radius*\n\
              4,1,4,$2,$3,$4,$5,$6,$7,$8,$9,$2,$3,0*\n\
              1,1,$1+$1,$2,$3*\n1,1,$1+$1,$4,$5*\n1,1,$1+$1,$6,$7*\n1,1,$1+$1,$8,$9*\n\
              20,1,$1+$1,$2,$3,$4,$5,0*\n20,1,$1+$1,$4,$5,$6,$7,0*\n\
              20,1,$1+$1,$6,$7,$8,$9,0*\n20,1,$1+$1,$8,$9,$2,$3,0*%\n\
              %ADD20RoundRect,0.25X-0.75X-0.5X0.75X-0.5X0.75X0.5X-0.75X0.5X0*%\n";
    // Its nine primitives overlap: the pad is one object (one conductor), not nine.
    let image = gerber::read(
        "top.gbr",
        &gbr("Copper,L1,Top", &(rr.to_string() + &flash_a(0.0, 0.0))),
    )
    .expect("reads");
    assert_eq!(image.objects.len(), 1, "{:?}", image.objects.len());
    // Pad B of 1 mm at (5, 0): the right side at x = 0.75 + 0.25 = 1.0: 5 - 1 - 0.5 = 3.5 mm.
    let v = clearance(&(rr.to_string() + &flash_a(0.0, 0.0) + &pad_b(5.0, 0.0, 1.0, 11)));
    assert!((v - (3.5 - GAP_LOSS)).abs() < 1e-9, "{v}");
    // Pad B at (5, 5) faces the rounded corner centred (0.75, 0.5), radius 0.25:
    // sqrt(4.25^2 + 4.5^2) - 0.25 - 0.5 = sqrt(38.3125) - 0.75 = 5.439709 mm (a sharp corner
    // at (1, 0.75) would give sqrt(4^2 + 4.25^2) - 0.5 = 5.336309 mm).
    let v = clearance(&(rr.to_string() + &flash_a(0.0, 0.0) + &pad_b(5.0, 5.0, 1.0, 11)));
    // The primitives overlap, so they are merged into one pad, its corner arcs as chords.
    let exact = 38.3125f64.sqrt() - 0.75;
    assert!(
        v >= exact - GAP_LOSS - 1e-6 && v <= exact - GAP_LOSS + CHORD,
        "{v} vs {exact}"
    );
}

#[test]
fn a_macro_in_an_inch_file_is_read_in_millimetres() {
    // Circle (1) of diameter $1 = 0.04 in (1.016 mm) at (0.1 in, 0) = (2.54 mm, 0), flashed
    // at the origin; plain pad B of 0.04 in at x = 0.3 in (7.62 mm):
    // 7.62 - 2.54 - 0.508 - 0.508 = 4.064 mm.
    let text = "%FSLAX25Y25*%\n%MOIN*%\n%TF.FileFunction,Copper,L1,Top*%\nG75*\n\
                %AMOFFSET*1,1,$1,0.1,0*%\n%ADD20OFFSET,0.04*%\n%ADD11C,0.04*%\n\
                %TO.N,A*%\nD20*\nX0Y0D03*\n%TO.N,B*%\nD11*\nX30000Y0D03*\n%TD*%\nM02*\n";
    let images = vec![
        (
            "top.gbr".to_string(),
            gapwarden::sha256_hex(text.as_bytes()),
            gerber::read("top.gbr", text).expect("reads"),
        ),
        (
            "outline.gbr".to_string(),
            gapwarden::sha256_hex(outline().as_bytes()),
            gerber::read("outline.gbr", &outline()).expect("reads"),
        ),
    ];
    let b = board::build(images, 1.6).expect("builds");
    let m = Index::new(&b).measure(&["A".to_string()], &["B".to_string()], 1.0);
    let v = m.clearance.expect("measured").distance_mm;
    assert!((v - (4.064 - GAP_LOSS)).abs() < 1e-9, "{v}");
}

#[test]
fn an_aperture_block_flashed_twice_places_two_copies_with_their_clear_hole() {
    // Block D20: a round pad of 1 mm at its origin, a clear round hole of 0.4 mm in it, a
    // dark 2 x 0.5 mm rectangle at (2, 0) (x from 1 to 3). Flashed on net A at (0, 0) and at
    // (10, 0). Pad B of 0.1 mm at (10, 0), inside the second copy's hole:
    // 0.2 - 0.05 = 0.15 mm. (Without the second copy B would be 10 - 3 - 0.05 = 6.95 mm from
    // the first; without the hole it would lie on copper: 0 mm.) The hole's circle is
    // chords before it is cut, so the gap may come out up to 0.002 mm smaller.
    let top = "%ADD10C,1*%\n%ADD11C,0.4*%\n%ADD12R,2X0.5*%\n\
               %ABD20*%\nD10*\nX0Y0D03*\n%LPC*%\nD11*\nX0Y0D03*\n%LPD*%\nD12*\nX2000000Y0D03*\n%AB*%\n\
               %TO.N,A*%\nD20*\nX0Y0D03*\nX10000000Y0D03*\n%TD*%\n"
        .to_string()
        + &pad_b(10.0, 0.0, 0.1, 13);
    let v = clearance(&top);
    assert!(
        v <= 0.15 - GAP_LOSS + 1e-6 && v >= 0.15 - GAP_LOSS - CHORD - 1e-6,
        "{v}"
    );
}

#[test]
fn a_block_flashed_clear_inverts_its_objects_polarity() {
    // A 20 x 20 mm pour of net A. Block D21: a dark 6 x 6 mm square, then a clear disc of
    // 2 mm, both at its origin. Flashed with clear polarity (LPC) at (0, 0): the square becomes
    // clear (a square hole |x|, |y| <= 3 in the pour) and the disc dark (copper of net A,
    // radius 1, back in the middle). Pad B of 0.5 mm at (1.8, 0): 1.8 - 0.25 - 1 = 0.55 mm
    // from the disc, 3 - 2.05 = 0.95 mm from the hole's edge. (Ignoring the inversion, B would
    // lie on copper: 0 mm.)
    let top = "%ADD10R,20X20*%\n%ADD11R,6X6*%\n%ADD12C,2*%\n\
               %TO.N,A*%\nD10*\nX0Y0D03*\n\
               %ABD21*%\nD11*\nX0Y0D03*\n%LPC*%\nD12*\nX0Y0D03*\n%LPD*%\n%AB*%\n\
               %LPC*%\nD21*\nX0Y0D03*\n%LPD*%\n%TD*%\n"
        .to_string()
        + &pad_b(1.8, 0.0, 0.5, 13);
    let v = clearance(&top);
    assert!((v - (0.55 - GAP_LOSS)).abs() < 1e-9, "{v}");
}

#[test]
fn nested_blocks_are_flashed_with_their_offsets_added() {
    // Inner block D21: a 1 mm pad at (1, 0). Outer block D22: D21 flashed at (2, 0), so a pad
    // at (3, 0) of the outer block. D22 flashed on net A at (0, 0): a pad at (3, 0). Pad B of
    // 1 mm at (8, 0): 5 - 0.5 - 0.5 = 4.0 mm.
    let top = "%ADD10C,1*%\n%ABD22*%\n%ABD21*%\nD10*\nX1000000Y0D03*\n%AB*%\nD21*\nX2000000Y0D03*\n%AB*%\n\
               %TO.N,A*%\nD22*\nX0Y0D03*\n%TD*%\n"
        .to_string()
        + &pad_b(8.0, 0.0, 1.0, 13);
    let v = clearance(&top);
    assert!((v - (4.0 - GAP_LOSS)).abs() < 1e-9, "{v}");
}

#[test]
fn a_macro_slot_in_a_drill_file_is_one_cut_out_walked_round() {
    // Non-plated rout file: a macro of two circles (1) of 2 mm at (5, -1) and (5, 1) and a
    // 2 x 2 mm center line (21) at (5, 0): together one slot 2 mm wide from y = -2 to 2, with
    // round ends. Pads A and B of 1 mm at (0, 0) and (10, 0). Groove width X = 1.0 mm
    // (IEC 60664-1:2020 clause 6.2, pollution degree 2; confirmed, REFERENCES [HA]): the slot
    // is wider, so creepage goes round an end cap, a disc of R = 1 centred at C = (5, 1).
    // Each pad centre is D = sqrt(5^2 + 1^2) = sqrt(26) from C; the tangent T =
    // sqrt(D^2 - R^2) = 5; the arc spans pi + 2 atan(1/5) - 2 acos(1/sqrt 26) = 0.789582 rad:
    // 2 x 5 + 0.789582 - 2 x 0.5 = 9.789582 mm. Clearance on the face is not lengthened by
    // the slot: 10 - 1 = 9 mm.
    let npth = gbr(
        "NonPlated,1,2,NPTH,Rout",
        "%AMSLOT*1,1,2,0,-1*1,1,2,0,1*21,1,2,2,0,0,0*%\n%ADD20SLOT*%\nD20*\nX5000000Y0D03*\n",
    );
    let top = gbr(
        "Copper,L1,Top",
        &("%ADD10C,1*%\n%TO.N,A*%\nD10*\nX0Y0D03*\n%TD*%\n".to_string()
            + &pad_b(10.0, 0.0, 1.0, 11)),
    );
    let files = [
        ("top.gbr", top),
        ("npth.gbr", npth),
        ("outline.gbr", outline()),
    ];
    let images = files
        .iter()
        .map(|(name, text)| {
            let image = gerber::read(name, text).expect("the test file reads");
            (
                name.to_string(),
                gapwarden::sha256_hex(text.as_bytes()),
                image,
            )
        })
        .collect();
    let b = board::build(images, 1.6).expect("the test board builds");
    let m = Index::new(&b).measure(&["A".to_string()], &["B".to_string()], 1.0);
    // The three primitives are merged into one opening, not three cut-outs.
    assert_eq!(m.cutouts_walked_round, 1);
    let arc = std::f64::consts::PI + 2.0 * 0.2f64.atan() - 2.0 * (1.0 / 26f64.sqrt()).acos();
    let round_the_end = 2.0 * 5.0 + arc - 1.0;
    let cr = m.creepage.as_ref().expect("creepage").distance_mm;
    // Chords of the cap lie inside it: the path is at most the true one, short of it by no
    // more than the chords' sagitta and the gaps' loss.
    assert!(cr <= round_the_end + 1e-9, "{cr} > {round_the_end}");
    assert!(cr >= round_the_end - 0.02, "{cr} far below {round_the_end}");
    let cl = m.clearance.as_ref().expect("clearance").distance_mm;
    assert!((cl - (9.0 - GAP_LOSS)).abs() < 1e-9, "{cl}");
}

// ---- refusals: each names the file and the line ----

#[test]
fn a_moire_primitive_is_refused_as_deprecated_naming_its_line() {
    // The macro starts on line 7; its moire (6) block on line 8.
    let text = gbr(
        "Copper,L1,Top",
        "%AMTARGET*\n6,0,0,5,0.5,0.5,2,0.1,6,0*%\n%ADD20TARGET*%\n",
    );
    let d = read_err(&text);
    assert_eq!(d.file, "fab/x.gbr");
    assert_eq!(d.line, Some(8), "{d:?}");
    assert!(
        d.message.contains("moire") && d.message.contains("deprecated"),
        "{}",
        d.message
    );
    assert!(
        d.message.contains("circles (1)"),
        "says what to do: {}",
        d.message
    );
}

#[test]
fn an_undefined_variable_is_refused_naming_the_macro_line_and_the_aperture() {
    // The circle uses $2, the aperture on line 9 gives only $1.
    let text = gbr("Copper,L1,Top", "%AMHALF*\n1,1,$1,$2,0*%\n%ADD20HALF,1*%\n");
    let d = read_err(&text);
    assert_eq!(d.line, Some(8), "{d:?}");
    assert!(d.message.contains("$2 is not defined"), "{}", d.message);
    assert!(
        d.message.contains("D20") && d.message.contains("line 9"),
        "{}",
        d.message
    );
}

#[test]
fn a_malformed_expression_is_refused_where_the_macro_is_defined() {
    for bad in ["(0.5+", "0.5xx2", "1..2", "$0", "0.5 $1", ""] {
        let text = gbr(
            "Copper,L1,Top",
            &format!("%AMBROKEN*\n0 no aperture uses it*\n1,1,{bad},0,0*%\n"),
        );
        let d = read_err(&text);
        assert_eq!(d.line, Some(9), "{bad}: {d:?}");
        assert!(d.message.contains("malformed"), "{bad}: {}", d.message);
        assert!(d.message.contains("BROKEN"), "{bad}: {}", d.message);
    }
}

#[test]
fn deeply_nested_expressions_are_refused_not_overflowed() {
    let deep = format!("{}1{}", "(".repeat(100_000), ")".repeat(100_000));
    let d = read_err(&gbr(
        "Copper,L1,Top",
        &format!("%AMDEEP*1,1,{deep},0,0*%\n"),
    ));
    assert!(d.message.contains("nested deeper"), "{}", d.message);
    let long = vec!["1"; 100_000].join("+");
    let d = read_err(&gbr(
        "Copper,L1,Top",
        &format!("%AMLONG*1,1,{long},0,0*%\n"),
    ));
    assert!(d.message.contains("operators"), "{}", d.message);
}

#[test]
fn an_unclosed_block_is_refused_naming_the_line_that_opened_it() {
    let text = gbr("Copper,L1,Top", "%ADD10C,1*%\n%ABD20*%\nD10*\nX0Y0D03*\n");
    let d = read_err(&text);
    assert_eq!(d.line, Some(8), "{d:?}");
    assert!(d.message.contains("never closed"), "{}", d.message);
    let d = read_err(&gbr("Copper,L1,Top", "%AB*%\n"));
    assert_eq!(d.line, Some(7), "{d:?}");
    assert!(d.message.contains("none is open"), "{}", d.message);
}

#[test]
fn other_macro_mistakes_name_their_line() {
    // An outline whose last point is not its first.
    let d = read_err(&gbr(
        "Copper,L1,Top",
        "%AMOPEN*4,1,3,0,0,1,0,1,1,0,1,0*%\n%ADD20OPEN*%\n",
    ));
    assert_eq!(d.line, Some(7), "{d:?}");
    assert!(d.message.contains("not closed"), "{}", d.message);
    // An exposure other than 0 or 1.
    let d = read_err(&gbr("Copper,L1,Top", "%AMX2*1,2,1,0,0*%\n%ADD20X2*%\n"));
    assert!(d.message.contains("exposure"), "{}", d.message);
    // A primitive with too few modifiers.
    let d = read_err(&gbr("Copper,L1,Top", "%AMSHORT*21,1,2,2*%\n"));
    assert!(d.message.contains("takes 6 modifiers"), "{}", d.message);
    // An aperture naming a macro never defined.
    let d = read_err(&gbr("Copper,L1,Top", "%ADD20NOSUCH,1*%\n"));
    assert_eq!(d.line, Some(7));
    assert!(d.message.contains("NOSUCH"), "{}", d.message);
    // A primitive code the specification does not have.
    let d = read_err(&gbr("Copper,L1,Top", "%AMODD*9,1,1*%\n"));
    assert!(d.message.contains("primitive code 9"), "{}", d.message);
    // A thermal whose gap leaves nothing.
    let d = read_err(&gbr(
        "Copper,L1,Top",
        "%AMT*7,0,0,1,0.5,0.8,0*%\n%ADD20T*%\n",
    ));
    assert!(d.message.contains("gap"), "{}", d.message);
    // Drawing (D01) with a macro aperture.
    let d = read_err(&gbr(
        "Copper,L1,Top",
        "%AMDOT*1,1,1,0,0*%\n%ADD20DOT*%\nD20*\nX0Y0D02*\nX1000000Y0D01*\n",
    ));
    assert_eq!(d.line, Some(11), "{d:?}");
}

// ---- no panic from a hostile macro ----

proptest::proptest! {
    #![proptest_config(proptest::prelude::ProptestConfig { cases: 256, .. proptest::prelude::ProptestConfig::default() })]

    #[test]
    fn any_macro_text_is_read_or_refused_never_a_panic(
        body in "0 [a-z ]{0,9}|\\$[1-4]=[0-9$x/+().-]{1,9}|[0-9$x/+()., =*\n-]{0,60}",
        code in proptest::sample::select(vec![1u32, 2, 20, 21, 22, 4, 5, 7]),
        args in proptest::collection::vec("[0-9$x/+().-]{1,6}|0|1|3|4", 0..14),
        params in "[0-9.X-]{0,20}",
    ) {
        // Free text, and a primitive of a real code with modifiers that often evaluate.
        let text = gbr(
            "Copper,L1,Top",
            &format!(
                "%AMFUZZ*{body}*{code},{}*%\n%ADD20FUZZ,{params}*%\n%TO.N,A*%\nD20*\nX0Y0D03*\n",
                args.join(",")
            ),
        );
        if let Err(d) = gerber::read("fuzz.gbr", &text) {
            proptest::prop_assert!(d.line.is_some(), "{d:?}");
        }
    }
}
