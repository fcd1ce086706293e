//! Distances measured from Gerber X2 files: hand-computable boards whose arithmetic is
//! worked out beside each assertion, the reader's refusals, and physical invariants.
//!
//! Every measured gap between two pieces of copper is rounded down by twice the chord
//! tolerance (2 x 0.002 mm: arcs and circles become chords that may lie that far inside the
//! copper), so an exact gap G is expected as G - 0.004 mm; paths round a cut-out follow its
//! chords and come out a little shorter than round the true arc, never longer.

use gapwarden::board::{self, Board, Index, gerber};
use proptest::prelude::*;

/// Measured gaps lose this much each (see the module comment).
pub(super) const GAP_LOSS: f64 = 0.004;

/// A Gerber X2 file in millimetres, format 4.6, with its file function: its body starts on
/// line 7.
pub(super) fn gbr(function: &str, body: &str) -> String {
    format!(
        "G04 test board*\n%FSLAX46Y46*%\n%MOMM*%\n%TF.FileFunction,{function}*%\n%LPD*%\nG75*\n{body}M02*\n"
    )
}

/// Millimetres as a 4.6 coordinate.
pub(super) fn c(v: f64) -> String {
    format!("{}", (v * 1e6).round() as i64)
}

/// A rectangular outline drawn with a 0.1 mm line.
fn outline(x0: f64, y0: f64, x1: f64, y1: f64) -> String {
    gbr(
        "Profile,NP",
        &format!(
            "%ADD10C,0.1*%\nD10*\nX{a}Y{b}D02*\nX{cx}Y{b}D01*\nX{cx}Y{d}D01*\nX{a}Y{d}D01*\nX{a}Y{b}D01*\n",
            a = c(x0),
            b = c(y0),
            cx = c(x1),
            d = c(y1)
        ),
    )
}

/// A round pad of diameter `d` flashed at (x, y) on net `net`.
fn pad(net: &str, x: f64, y: f64, d: f64, code: u32) -> String {
    format!(
        "%ADD{code}C,{d}*%\n%TO.N,{net}*%\nD{code}*\nX{}Y{}D03*\n%TD*%\n",
        c(x),
        c(y)
    )
}

fn board_of(files: &[(&str, String)], thickness: f64) -> Board {
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
    board::build(images, thickness).expect("the test board builds")
}

fn nets(names: &[&str]) -> Vec<String> {
    names.iter().map(|s| s.to_string()).collect()
}

fn measure(b: &Board, x: f64) -> board::BarrierMeasurement {
    Index::new(b).measure(&nets(&["A"]), &nets(&["B"]), x)
}

fn clearance(m: &board::BarrierMeasurement) -> f64 {
    m.clearance
        .as_ref()
        .expect("clearance measured")
        .distance_mm
}
fn creepage(m: &board::BarrierMeasurement) -> f64 {
    m.creepage.as_ref().expect("creepage measured").distance_mm
}

fn two_pads(gap_centres: f64) -> Vec<(&'static str, String)> {
    vec![
        (
            "top.gbr",
            gbr(
                "Copper,L1,Top",
                &(pad("A", 0.0, 0.0, 1.0, 10) + &pad("B", gap_centres, 0.0, 1.0, 11)),
            ),
        ),
        ("outline.gbr", outline(-10.0, -10.0, 30.0, 10.0)),
    ]
}

#[test]
fn two_round_pads_are_their_centre_distance_less_the_radii_apart() {
    // Pads of 1 mm diameter, centres 5 mm apart: 5 - 0.5 - 0.5 = 4.0 mm, both through air
    // and along the surface (nothing between them).
    let b = board_of(&two_pads(5.0), 1.6);
    let m = measure(&b, 1.0);
    assert!(
        (clearance(&m) - (4.0 - GAP_LOSS)).abs() < 1e-9,
        "{}",
        clearance(&m)
    );
    assert!(
        (creepage(&m) - (4.0 - GAP_LOSS)).abs() < 1e-9,
        "{}",
        creepage(&m)
    );
    let path = &m.clearance.as_ref().unwrap().path;
    assert_eq!(path.first().unwrap().layer, "top");
    // The witness runs from A's edge (0.5, 0) to B's edge (4.5, 0).
    assert!((path.first().unwrap().x_mm - 0.5).abs() < 1e-6);
    assert!((path.last().unwrap().x_mm - 4.5).abs() < 1e-6);
}

/// Pads at (0,0) and (10,0), diameter 1; a non-plated slot routed from (5,-2) to (5,2) with
/// a tool of `tool` mm.
fn slot_board(tool: f64) -> Board {
    let mut files = two_pads(10.0);
    files.push((
        "npth.gbr",
        gbr(
            "NonPlated,1,2,NPTH,Rout",
            &format!("%ADD10C,{tool}*%\nD10*\nX5000000Y-2000000D02*\nX5000000Y2000000D01*\n"),
        ),
    ));
    board_of(&files, 1.6)
}

#[test]
fn a_slot_wider_than_the_groove_width_is_walked_round_its_end() {
    // Groove width X = 1.0 mm (IEC 60664-1:2020 clause 6.2, pollution degree 2; confirmed,
    // REFERENCES [HA]); the 2 mm slot is wider, so creepage goes round an end cap: a disc of
    // radius R = 1 centred at C = (5, 2).
    // Between the pad centres (0,0) and (10,0): each centre is D = sqrt(5^2 + 2^2) =
    // sqrt(29) from C; the tangent from it is T = sqrt(D^2 - R^2) = sqrt(28); the arc over
    // the cap spans pi + 2 atan(2/5) - 2 acos(R/D) radians. Less the two pad radii (0.5).
    let d = 29f64.sqrt();
    let t = 28f64.sqrt();
    let arc = std::f64::consts::PI + 2.0 * (0.4f64).atan() - 2.0 * (1.0 / d).acos();
    let round_the_end = 2.0 * t + arc - 1.0; // 10.7176 mm
    let b = slot_board(2.0);
    let m = measure(&b, 1.0);
    let cr = creepage(&m);
    // Chords of the cap lie inside it, so the measured path is at most the true one and
    // short of it by no more than the chords' sagitta and the gaps' loss.
    assert!(
        cr <= round_the_end + 1e-9,
        "creepage {cr} > {round_the_end}"
    );
    assert!(
        cr >= round_the_end - 0.02,
        "creepage {cr} far below {round_the_end}"
    );
    assert_eq!(m.cutouts_walked_round, 1);
    // Clearance through the air over the slot is unchanged: 10 - 1 = 9 mm.
    assert!((clearance(&m) - (9.0 - GAP_LOSS)).abs() < 1e-9);
    let path = &m.creepage.as_ref().unwrap().path;
    assert!(
        path.iter().any(|p| p.y_mm > 2.5),
        "the path passes over the end cap: {path:?}"
    );
}

#[test]
fn a_slot_narrower_than_the_groove_width_is_crossed_straight() {
    // A 0.5 mm slot is narrower than X = 1.0 mm (pollution degree 2, IEC 60664-1:2020
    // clause 6.2, [HA]): the creepage path crosses it, counting its width: 10 - 1 = 9 mm.
    let b = slot_board(0.5);
    let m = measure(&b, 1.0);
    assert!(
        (creepage(&m) - (9.0 - GAP_LOSS)).abs() < 1e-9,
        "{}",
        creepage(&m)
    );
    assert_eq!(m.cutouts_bridged, 1);
}

#[test]
fn a_floating_island_in_the_gap_shortens_both_distances_by_its_width() {
    // A floating (N/C) 2 mm square centred at (5, 0) between pads 10 mm apart: the gaps
    // are 4 - 0.5 = 3.5 mm on each side, 7.0 mm in all instead of 9.0 mm.
    let mut files = two_pads(10.0);
    files[0].1 = gbr(
        "Copper,L1,Top",
        &(pad("A", 0.0, 0.0, 1.0, 10)
            + &pad("B", 10.0, 0.0, 1.0, 11)
            + "%ADD12R,2X2*%\n%TO.N,N/C*%\nD12*\nX5000000Y0D03*\n%TD*%\n"),
    );
    let b = board_of(&files, 1.6);
    let m = measure(&b, 1.0);
    assert!(
        (clearance(&m) - (7.0 - 2.0 * GAP_LOSS)).abs() < 1e-9,
        "{}",
        clearance(&m)
    );
    assert!(
        (creepage(&m) - (7.0 - 2.0 * GAP_LOSS)).abs() < 1e-9,
        "{}",
        creepage(&m)
    );
    assert_eq!(m.clearance.as_ref().unwrap().intervening_conductors, 1);
}

#[test]
fn pads_on_opposite_faces_near_the_edge_are_face_plus_thickness_plus_face_apart() {
    // Board edge at x = 10. Pad A on top at (8, 0), pad B on the bottom at (7, 0), both
    // 1 mm across: A's edge is 10 - 8.5 = 1.5 mm from the board edge, B's 10 - 7.5 = 2.5 mm;
    // with a 1.6 mm board: 1.5 + 1.6 + 2.5 = 5.6 mm, through air and along the surface.
    let files = vec![
        (
            "top.gbr",
            gbr("Copper,L1,Top", &pad("A", 8.0, 0.0, 1.0, 10)),
        ),
        (
            "bot.gbr",
            gbr("Copper,L2,Bot", &pad("B", 7.0, 0.0, 1.0, 10)),
        ),
        ("outline.gbr", outline(-10.0, -10.0, 10.0, 10.0)),
    ];
    let b = board_of(&files, 1.6);
    let m = measure(&b, 1.0);
    // Each face's step from copper to the edge loses 0.002 mm (one copper end) and the
    // passage between faces twice the rim point spacing (2 x 0.05 mm: the crossing point
    // may lie between two rim points): 5.6 - 0.004 - 0.1 = 5.496 mm.
    let exact = 1.5 + 1.6 + 2.5;
    for (what, v) in [("clearance", clearance(&m)), ("creepage", creepage(&m))] {
        assert!((v - (exact - GAP_LOSS - 0.1)).abs() < 1e-9, "{what} {v}");
    }
    let path = &m.clearance.as_ref().unwrap().path;
    assert!(m.clearance.as_ref().unwrap().between_faces);
    assert!(path.iter().any(|p| p.layer == "bottom") && path.iter().any(|p| p.layer == "top"));
}

#[test]
fn an_arc_draw_is_copper_along_the_arc() {
    // A track of 0.2 mm drawn counter-clockwise (G03) as a half circle of radius 3 centred
    // at (0,0), from (3,0) to (-3,0) through (0,3): its top is at y = 3.1. Pad B of 1 mm at
    // (0, 6): gap 6 - 0.5 - 3.1 = 2.4 mm (less the chords' sagitta at most).
    let body =
        "%ADD10C,0.2*%\n%TO.N,A*%\nD10*\nX3000000Y0D02*\nG03X-3000000Y0I-3000000J0D01*\n%TD*%\n"
            .to_string()
            + &pad("B", 0.0, 6.0, 1.0, 11);
    let files = vec![
        ("top.gbr", gbr("Copper,L1,Top", &body)),
        ("outline.gbr", outline(-10.0, -10.0, 10.0, 10.0)),
    ];
    let m = measure(&board_of(&files, 1.6), 1.0);
    let v = clearance(&m);
    assert!(v <= 2.4 + 1e-9 && v >= 2.4 - GAP_LOSS - 0.002 - 1e-9, "{v}");
}

#[test]
fn a_clockwise_full_circle_draw_is_a_ring() {
    // G02 from (3,0) back to (3,0) with centre (0,0): a full ring of radius 3 (0.2 mm
    // wide). Pad B of 1 mm at the centre: gap 3 - 0.1 - 0.5 = 2.4 mm.
    let body =
        "%ADD10C,0.2*%\n%TO.N,A*%\nD10*\nX3000000Y0D02*\nG02X3000000Y0I-3000000J0D01*\n%TD*%\n"
            .to_string()
            + &pad("B", 0.0, 0.0, 1.0, 11);
    let files = vec![
        ("top.gbr", gbr("Copper,L1,Top", &body)),
        ("outline.gbr", outline(-10.0, -10.0, 10.0, 10.0)),
    ];
    let v = clearance(&measure(&board_of(&files, 1.6), 1.0));
    assert!(v <= 2.4 + 1e-9 && v >= 2.4 - GAP_LOSS - 0.002 - 1e-9, "{v}");
}

#[test]
fn a_clear_polarity_cut_out_removes_copper() {
    // A 20 x 20 mm pour of net A centred at (0,0); a clear (LPC) 6 x 6 mm square cut out of
    // it; pad B of 1 mm in the middle: gap 3 - 0.5 = 2.5 mm to the cut-out's edge.
    let body = "%ADD10R,20X20*%\n%ADD11R,6X6*%\n%TO.N,A*%\nD10*\nX0Y0D03*\n%TD*%\n%LPC*%\nD11*\nX0Y0D03*\n%LPD*%\n"
        .to_string()
        + &pad("B", 0.0, 0.0, 1.0, 12);
    let files = vec![
        ("top.gbr", gbr("Copper,L1,Top", &body)),
        ("outline.gbr", outline(-15.0, -15.0, 15.0, 15.0)),
    ];
    let v = clearance(&measure(&board_of(&files, 1.6), 1.0));
    assert!((v - (2.5 - GAP_LOSS)).abs() < 1e-6, "{v}");
}

#[test]
fn step_and_repeat_places_copies() {
    // Pad A of 1 mm at (0,0) repeated 3 times along x every 4 mm (0, 4, 8); pad B at
    // (12, 0): the nearest copy is at 8, gap 4 - 1 = 3 mm (without the copies: 11 mm).
    let body = "%SRX3Y1I4.0J0*%\n".to_string()
        + &pad("A", 0.0, 0.0, 1.0, 10)
        + "%SR*%\n"
        + &pad("B", 12.0, 0.0, 1.0, 11);
    let files = vec![
        ("top.gbr", gbr("Copper,L1,Top", &body)),
        ("outline.gbr", outline(-10.0, -10.0, 20.0, 10.0)),
    ];
    let v = clearance(&measure(&board_of(&files, 1.6), 1.0));
    assert!((v - (3.0 - GAP_LOSS)).abs() < 1e-9, "{v}");
}

#[test]
fn inch_files_are_read_in_millimetres() {
    // Pads of 0.04 in (1.016 mm) at x = 0 and x = 0.2 in (5.08 mm), format 2.5 in inches:
    // gap 5.08 - 1.016 = 4.064 mm.
    let inch = |body: &str| {
        format!("%FSLAX25Y25*%\n%MOIN*%\n%TF.FileFunction,Copper,L1,Top*%\nG75*\n{body}M02*\n")
    };
    let body = "%ADD10C,0.04*%\n%TO.N,A*%\nD10*\nX0Y0D03*\n%TO.N,B*%\nX20000Y0D03*\n%TD*%\n";
    let files = vec![
        ("top.gbr", inch(body)),
        ("outline.gbr", outline(-10.0, -10.0, 20.0, 10.0)),
    ];
    let v = clearance(&measure(&board_of(&files, 1.6), 1.0));
    assert!((v - (4.064 - GAP_LOSS)).abs() < 1e-9, "{v}");
}

#[test]
fn an_inner_layer_is_a_distance_through_insulation_not_clearance() {
    // Only inner copper: no clearance or creepage (no air path), but its distance in the
    // layer's plane: 5 - 1 = 4 mm.
    let files = vec![
        (
            "in.gbr",
            gbr(
                "Copper,L2,Inr",
                &(pad("A", 0.0, 0.0, 1.0, 10) + &pad("B", 5.0, 0.0, 1.0, 11)),
            ),
        ),
        ("outline.gbr", outline(-10.0, -10.0, 20.0, 10.0)),
    ];
    let m = measure(&board_of(&files, 1.6), 1.0);
    assert!(m.clearance.is_none() && m.creepage.is_none());
    assert_eq!(m.inner_layers.len(), 1);
    assert_eq!(m.inner_layers[0].layer, "inner L2");
    assert!((m.inner_layers[0].distance_mm - (4.0 - GAP_LOSS)).abs() < 1e-9);
}

// ---- refusals: each names the file and, where there is one, the line ----

fn read_err(text: &str) -> gapwarden::diag::Diagnostic {
    gerber::read("fab/x.gbr", text).expect_err("the file is refused")
}

#[test]
fn a_file_that_is_not_gerber_is_refused_with_its_line() {
    let d = read_err("hello world\nthis is not a board\n");
    assert_eq!(d.file, "fab/x.gbr");
    assert_eq!(d.line, Some(1));
    assert!(d.message.contains("not a Gerber file"), "{}", d.message);
}

#[test]
fn a_broken_command_names_its_line() {
    let text = gbr("Copper,L1,Top", "%ADD10C,0.5*%\nD10*\nX1Y2D03*\nX1Y2Q07*\n");
    let d = read_err(&text);
    assert_eq!(d.line, Some(10), "{d:?}");
}

#[test]
fn an_unknown_file_function_is_refused() {
    let d = read_err(&gbr("Legend,Top", ""));
    assert!(d.message.contains("Legend,Top"), "{}", d.message);
    assert_eq!(d.line, Some(4));
}

#[test]
fn an_aperture_macro_is_refused_naming_the_line() {
    // Macros are interpreted now (tests/it/gerber_macros.rs); one that cannot be, a moire
    // (primitive 6, deprecated), is still refused at its line.
    let text = gbr("Copper,L1,Top", "%AMTARGET*6,0,0,5,0.5,0.5,2,0.1,6,0*%\n");
    let d = read_err(&text);
    assert_eq!(d.line, Some(7));
    assert!(d.message.contains("macro"), "{}", d.message);
}

#[test]
fn copper_without_net_attributes_says_to_switch_them_on() {
    let dir = std::env::temp_dir().join(format!("gapwarden-board-nonet-{}", std::process::id()));
    std::fs::create_dir_all(&dir).unwrap();
    std::fs::write(
        dir.join("top.gbr"),
        gbr("Copper,L1,Top", "%ADD10C,1*%\nD10*\nX0Y0D03*\n"),
    )
    .unwrap();
    std::fs::write(dir.join("outline.gbr"), outline(-5.0, -5.0, 5.0, 5.0)).unwrap();
    let err = board::load(&dir, &nets(&["top.gbr", "outline.gbr"]), 1.6).expect_err("refused");
    let text = err.to_string();
    assert!(
        text.contains("top.gbr") && text.contains("net attribute"),
        "{text}"
    );
    assert!(text.contains("switch net attributes on"), "{text}");
    std::fs::remove_dir_all(&dir).ok();
}

#[test]
fn a_missing_file_is_named() {
    let dir = std::env::temp_dir();
    let err = board::load(&dir, &nets(&["no-such-board-file.gbr"]), 1.6).expect_err("refused");
    let text = err.to_string();
    assert!(
        text.contains("no-such-board-file.gbr") && text.contains("no such file"),
        "{text}"
    );
}

// ---- invariants ----

proptest! {
    #![proptest_config(ProptestConfig { cases: 24, .. ProptestConfig::default() })]

    #[test]
    fn moving_pads_apart_never_shortens_either_distance(gap in 1.5f64..12.0, more in 0.0f64..5.0) {
        let near = measure(&board_of(&two_pads(gap), 1.6), 1.0);
        let far = measure(&board_of(&two_pads(gap + more), 1.6), 1.0);
        prop_assert!(clearance(&far) >= clearance(&near) - 1e-9);
        prop_assert!(creepage(&far) >= creepage(&near) - 1e-9);
    }

    #[test]
    fn a_slot_never_shortens_creepage_nor_changes_one_face_clearance(
        x in 2.5f64..7.5, half in 0.2f64..4.0, tool in 0.3f64..3.0
    ) {
        let plain = measure(&board_of(&two_pads(10.0), 1.6), 1.0);
        let mut files = two_pads(10.0);
        files.push((
            "npth.gbr",
            gbr(
                "NonPlated,1,2,NPTH,Rout",
                &format!("%ADD10C,{tool}*%\nD10*\nX{}Y{}D02*\nX{}Y{}D01*\n", c(x), c(-half), c(x), c(half)),
            ),
        ));
        let slotted = measure(&board_of(&files, 1.6), 1.0);
        prop_assert!(creepage(&slotted) >= creepage(&plain) - 1e-9, "{} < {}", creepage(&slotted), creepage(&plain));
        prop_assert!(creepage(&slotted) >= creepage(&plain) - 1e-9);
        prop_assert!((clearance(&slotted) - clearance(&plain)).abs() < 1e-9);
    }
}

// ---- end to end: the example board and the project's keys ----

fn example_json() -> serde_json::Value {
    let out = crate::common::run(&[
        "check",
        "examples/class2-adapter-board.toml",
        "--format",
        "json",
    ]);
    assert_eq!(
        out.status.code(),
        Some(0),
        "{}",
        crate::common::stderr(&out)
    );
    serde_json::from_str(&crate::common::stdout(&out)).expect("JSON report")
}

fn barrier<'a>(r: &'a serde_json::Value, id: &str) -> &'a serde_json::Value {
    r["barriers"]
        .as_array()
        .unwrap()
        .iter()
        .find(|b| b["id"] == id)
        .expect("barrier")
}

#[test]
fn the_example_board_measures_every_barrier() {
    let r = example_json();
    let pri_sec = barrier(&r, "pri-sec");
    // Clearance: T1's pins HV- at (24.5, 27) and GND_OUT at (32.5, 26), 2 mm pads, either
    // side of the slot (air): sqrt(8^2 + 1^2) - 2 = 6.0623 mm, less 0.004 mm.
    let expected_clearance = (64.0f64 + 1.0).sqrt() - 2.0 - GAP_LOSS;
    let c = pri_sec["measured_clearance_mm"].as_f64().unwrap();
    assert!((c - expected_clearance).abs() < 1e-6, "{c}");
    // Creepage: round the slot's ends is longer; the Y-capacitor's pads (1.8 mm, 10 mm
    // pitch, at y = 36.5 beyond the slot's end) are 10 - 1.8 = 8.2 mm apart, less 0.004.
    let cr = pri_sec["measured_creepage_mm"].as_f64().unwrap();
    assert!((cr - (8.2 - GAP_LOSS)).abs() < 1e-6, "{cr}");
    // No distance declared: the verdict rests on the measured ones.
    assert!(pri_sec["clearance_mm"].is_null());
    assert_eq!(pri_sec["judged_clearance_mm"].as_f64(), Some(c));
    assert_eq!(pri_sec["verdict"], "pass");
    let path = pri_sec["board"]["creepage"]["path"].as_array().unwrap();
    assert!(path.len() >= 2 && path[0]["layer"] == "top");
    // input-bulk: the neutral track's edge at y = 26.5 and C1's HV+ pad edge at 30.2 - 1 =
    // 29.2: 2.7 mm, less 0.004; declared 2.6 mm, within 5 % (0.135 mm): no warning.
    let ib = barrier(&r, "input-bulk");
    assert!((ib["measured_clearance_mm"].as_f64().unwrap() - (2.7 - GAP_LOSS)).abs() < 1e-6);
    assert_eq!(ib["judged_clearance_mm"].as_f64(), Some(2.6));
    assert!(ib["measured_differs"].as_array().unwrap().is_empty());
    // Every barrier measured; the unassigned net listed; the files hashed.
    assert_eq!(r["board"]["barriers_measured"], 3);
    assert_eq!(r["board"]["unassigned_nets"], serde_json::json!(["AUX"]));
    assert_eq!(r["board"]["files"].as_array().unwrap().len(), 5);
    assert_eq!(r["board"]["files"][0]["sha256"].as_str().unwrap().len(), 64);
}

#[test]
fn the_markdown_report_shows_the_board_and_what_it_cannot_show() {
    let out = crate::common::run(&["check", "examples/class2-adapter-board.toml"]);
    let md = crate::common::stdout(&out);
    assert!(md.contains("## Measured on the board"), "{md}");
    assert!(md.contains("component bodies and leads"));
    assert!(md.contains("AUX"));
}

/// The barrier table's "laid out" cell gives the distance the verdict rests on: with only
/// the board's figures it is the measured one, marked, never "not declared" beside a pass.
#[test]
fn the_barrier_table_shows_the_measured_distance_a_verdict_rests_on() {
    let out = crate::common::run(&["check", "examples/class2-adapter-board.toml"]);
    let md = crate::common::stdout(&out);
    let row = md
        .lines()
        .find(|l| l.starts_with("| pri-sec |"))
        .expect("the barrier table has a pri-sec row");
    assert_eq!(row.matches("(measured)").count(), 2, "{row}");
    assert!(!row.contains("not declared"), "{row}");
    // Declared figures alone read as before, unmarked.
    let out = crate::common::run(&["check", "examples/class2-adapter.toml"]);
    let md = crate::common::stdout(&out);
    let row = md
        .lines()
        .find(|l| l.starts_with("| pri-sec |"))
        .expect("the barrier table has a pri-sec row");
    assert!(!row.contains("(measured)"), "{row}");
}

/// A project in a temporary folder using the example's board files (named absolutely).
fn temp_project(
    tag: &str,
    circuits_nets: [&str; 2],
    extra_file: Option<(&str, String)>,
) -> std::path::PathBuf {
    let dir = std::env::temp_dir().join(format!("gapwarden-board-{tag}-{}", std::process::id()));
    std::fs::create_dir_all(&dir).unwrap();
    let root = crate::common::root().join("examples/board");
    let mut files: Vec<String> = [
        "top.gbr",
        "bottom.gbr",
        "outline.gbr",
        "pth.gbr",
        "npth.gbr",
    ]
    .iter()
    .map(|f| format!("\"{}\"", root.join(f).display()))
    .collect();
    if let Some((name, text)) = extra_file {
        std::fs::write(dir.join(name), text).unwrap();
        files.push(format!("\"{name}\""));
    }
    let text = format!(
        r#"[design]
name = "board keys"
protection_class = "II"
[environment]
pollution_degree = 2
overvoltage_category = "II"
altitude_m = 2000
[mains]
nominal_v = 230
[board]
files = [{}]
[[circuit]]
id = "primary"
kind = "hazardous"
nets = [{}]
[[circuit]]
id = "output"
kind = "safe"
accessible = true
nets = [{}]
[[barrier]]
id = "pri-sec"
between = ["primary", "output"]
grade = "reinforced"
working_rms_v = 250
material_group = "IIIa"
printed_board = true
clearance_mm = 7.0
creepage_mm = 8.2
"#,
        files.join(", "),
        circuits_nets[0],
        circuits_nets[1]
    );
    let path = dir.join("project.toml");
    std::fs::write(&path, text).unwrap();
    path
}

#[test]
fn a_net_not_in_the_files_is_an_error_with_near_matches() {
    let p = temp_project("missing-net", ["\"HV+\", \"HV-\"", "\"GND_OUTT\""], None);
    let out = crate::common::run(&["check", p.to_str().unwrap()]);
    assert_eq!(out.status.code(), Some(2));
    let err = crate::common::stderr(&out);
    assert!(
        err.contains("net \"GND_OUTT\" is not in the board files"),
        "{err}"
    );
    assert!(err.contains("\"GND_OUT\""), "near match named: {err}");
    assert!(
        err.contains("project.toml:20:"),
        "the line of the net: {err}"
    );
}

#[test]
fn a_declared_distance_far_from_the_measured_one_is_a_warning_and_the_smaller_governs() {
    // Declared clearance 7.0 mm against the measured 6.058 mm (more than 5 % apart): the
    // measured one governs and the difference is a warning.
    let p = temp_project(
        "differs",
        [
            "\"HV+\", \"HV-\", \"SW\", \"FB\"",
            "\"SEC_A\", \"VOUT\", \"GND_OUT\", \"OPTO_A\"",
        ],
        None,
    );
    let out = crate::common::run(&["check", p.to_str().unwrap(), "--format", "json"]);
    let r: serde_json::Value = serde_json::from_str(&crate::common::stdout(&out)).unwrap();
    let b = barrier(&r, "pri-sec");
    assert_eq!(b["measured_differs"], serde_json::json!(["clearance"]));
    let judged = b["judged_clearance_mm"].as_f64().unwrap();
    assert!((judged - ((65.0f64).sqrt() - 2.0 - GAP_LOSS)).abs() < 1e-6);
    let ids: Vec<&str> = r["findings"]
        .as_array()
        .unwrap()
        .iter()
        .map(|f| f["id"].as_str().unwrap())
        .collect();
    assert!(ids.contains(&"barrier.measured_differs"), "{ids:?}");
}

#[test]
fn a_board_file_of_an_unknown_function_is_refused() {
    let legend = gbr("Legend,Top", "");
    let p = temp_project(
        "legend",
        ["\"HV+\"", "\"VOUT\""],
        Some(("silk.gbr", legend)),
    );
    let out = crate::common::run(&["check", p.to_str().unwrap()]);
    assert_eq!(out.status.code(), Some(2));
    let err = crate::common::stderr(&out);
    assert!(
        err.contains("silk.gbr:4") && err.contains("Legend,Top"),
        "{err}"
    );
}
