//! Distances measured from the board's fabrication files (Gerber X2): the files are read
//! (`gerber`), turned into conductors per net, cut-outs and the board outline in millimetres
//! (here), and each barrier's clearance and creepage measured between the copper of its two
//! circuits (`measure`), with the path that gives it.
//!
//! What fabrication data cannot show is said in `CANNOT_SHOW`; the report prints it.

pub mod geometry;
pub mod gerber;
pub mod measure;
pub mod svg;

use std::collections::BTreeSet;
use std::path::Path;

use serde::Serialize;

use crate::diag::{Diagnostic, Problems};
use geometry::{self as g, Bbox, P, Seg};
pub use gerber::{Net, Role, Shape, Side};
pub use measure::{BarrierMeasurement, Index, InnerDistance, PathPoint};

/// Board thickness where `[board]` does not give one (the common 1.6 mm laminate).
pub const DEFAULT_THICKNESS_MM: f64 = 1.6;

/// Said in every report that measures from the board.
pub const CANNOT_SHOW: &[&str] = &[
    "The fabrication files show the bare board's copper, holes and outline only: component bodies and leads, heat sinks, the transformer's construction (bobbin, tape, margins), the enclosure, coating, potting, solder mask and solder fillets are not in them and are not measured.",
    "A measured distance is between the copper of the nets assigned to each circuit as the files carry them; a net assigned to the wrong circuit, or copper added by assembly (jumpers, wires), changes it.",
    "Between the top and the bottom copper, the path round the board edge or through a hole or slot is taken with the board's thickness as given in [board] thickness_mm; the stack-up of inner layers (distance through insulation) is not in the files.",
];

/// Where a conductor lies.
#[derive(Debug, Clone, Copy, PartialEq, Eq, PartialOrd, Ord, Hash)]
pub enum Layer {
    Top,
    Bottom,
    /// Inner copper layer, numbered as the file's `.FileFunction` numbers it.
    Inner(u32),
    /// A plated hole: on both outer faces at once.
    Through,
}

impl Layer {
    pub fn name(self) -> String {
        match self {
            Layer::Top => "top".to_string(),
            Layer::Bottom => "bottom".to_string(),
            Layer::Inner(n) => format!("inner L{n}"),
            Layer::Through => "plated hole".to_string(),
        }
    }
}

/// One file read, for the report.
#[derive(Debug, Clone, Serialize)]
pub struct BoardFile {
    /// As written in `[board] files`.
    pub file: String,
    pub sha256: String,
    /// The `.FileFunction` value.
    pub function: String,
    pub objects: usize,
}

/// A piece of copper.
#[derive(Debug, Clone, PartialEq)]
pub struct Conductor {
    pub layer: Layer,
    pub net: Net,
    pub shape: Shape,
    pub file: usize,
    pub line: usize,
}

/// A hole or slot through the board (non-plated), or an inner cut-out of the profile.
#[derive(Debug, Clone, PartialEq)]
pub struct CutOut {
    pub ring: Vec<P>,
    /// Narrowest width, where known: the drill or rout tool diameter, or the width of a
    /// convex outline. `None`: unknown, so it is bridged for creepage (the shorter path).
    pub width_mm: Option<f64>,
    pub file: usize,
    pub line: usize,
}

/// The board as read from its files.
#[derive(Debug, Clone)]
pub struct Board {
    pub files: Vec<BoardFile>,
    pub thickness_mm: f64,
    pub conductors: Vec<Conductor>,
    pub cutouts: Vec<CutOut>,
    /// The outer outline, counter-clockwise.
    pub outline: Vec<P>,
    /// Every net name the copper and plated-hole files carry.
    pub nets: BTreeSet<String>,
    /// Conductors of unknown net (no `.N`) in files that otherwise carry nets.
    pub unknown_net_objects: usize,
}

/// Reads the files of `[board]`. `folder` is the project file's folder; `files` as written.
pub fn load(folder: &Path, files: &[String], thickness_mm: f64) -> Result<Board, Problems> {
    let mut problems = Vec::new();
    let mut images = Vec::new();
    for name in files {
        let path = folder.join(name);
        let text = match crate::read_text(&path, name) {
            Ok(t) => t,
            Err(d) => {
                problems.push(d.with_key("board.files"));
                continue;
            }
        };
        match gerber::read(name, &text) {
            Ok(image) => {
                if matches!(image.role, Role::Copper { .. }) && !image.has_nets {
                    problems.push(
                        Diagnostic::new(
                            name,
                            format!(
                                "copper layer ({}) has no net attribute (.N) on any object, so \
                                 its copper cannot be assigned to circuits",
                                image.function
                            ),
                        )
                        .with_help(
                            "switch net attributes on when writing the files (Gerber X2 with \
                             object attributes, %TO.N,...*%)",
                        ),
                    );
                    continue;
                }
                images.push((name.clone(), crate::sha256_hex(text.as_bytes()), image));
            }
            Err(d) => problems.push(d),
        }
    }
    if !problems.is_empty() {
        return Err(Problems(problems));
    }
    build(images, thickness_mm).map_err(|d| Problems(vec![d]))
}

/// Turns the read files into the board: polarity applied, cut-outs and outline built.
pub fn build(
    images: Vec<(String, String, gerber::Image)>,
    thickness_mm: f64,
) -> Result<Board, Diagnostic> {
    let mut board = Board {
        files: Vec::new(),
        thickness_mm,
        conductors: Vec::new(),
        cutouts: Vec::new(),
        outline: Vec::new(),
        nets: BTreeSet::new(),
        unknown_net_objects: 0,
    };
    let mut outline_found = false;
    let mut copper_found = false;
    let names: Vec<String> = images.iter().map(|(n, _, _)| n.clone()).collect();
    for (fi, (name, sha, image)) in images.into_iter().enumerate() {
        board.files.push(BoardFile {
            file: name.clone(),
            sha256: sha,
            function: image.function.clone(),
            objects: image.objects.len(),
        });
        match image.role {
            Role::Copper { layer, side } => {
                copper_found = true;
                let layer = match side {
                    Side::Top => Layer::Top,
                    Side::Bottom => Layer::Bottom,
                    Side::Inner => Layer::Inner(layer),
                };
                let start = board.conductors.len();
                add_with_polarity(&mut board.conductors, start, image.objects, layer, fi);
            }
            Role::Plated => {
                let start = board.conductors.len();
                add_with_polarity(
                    &mut board.conductors,
                    start,
                    image.objects,
                    Layer::Through,
                    fi,
                );
            }
            Role::NonPlated => {
                for o in image.objects.into_iter().filter(|o| o.dark) {
                    push_cutouts(&mut board.cutouts, &o.shape, o.width_mm, fi, o.line);
                }
            }
            Role::Profile => {
                if outline_found {
                    return Err(Diagnostic::new(
                        &name,
                        "a second profile file; give the board outline once",
                    ));
                }
                outline_found = true;
                let mut loops = chain_loops(&name, &image.outline_segments)?;
                if loops.is_empty() {
                    return Err(Diagnostic::new(
                        &name,
                        "the profile file draws no closed outline",
                    ));
                }
                loops.sort_by(|a, b| g::ring_area(b).abs().total_cmp(&g::ring_area(a).abs()));
                let mut outer = loops.remove(0);
                if g::ring_area(&outer) < 0.0 {
                    outer.reverse();
                }
                board.outline = outer;
                for ring in loops {
                    let width = convex_width(&ring);
                    board.cutouts.push(CutOut {
                        ring,
                        width_mm: width,
                        file: fi,
                        line: 0,
                    });
                }
            }
        }
    }
    if !copper_found {
        return Err(Diagnostic::new(
            names.first().map_or("[board]", |n| n.as_str()),
            "[board] files hold no copper layer (.FileFunction Copper,...): nothing to measure",
        )
        .with_key("board.files"));
    }
    if !outline_found {
        return Err(Diagnostic::new(
            names.first().map_or("[board]", |n| n.as_str()),
            "[board] files hold no board profile (.FileFunction Profile,NP): the board edge is \
             needed for paths round it; add the profile file",
        )
        .with_key("board.files"));
    }
    // Each name once through a hash set first: most objects repeat a net already seen, and
    // a sorted set of strings compares whole names at every level for each of them.
    let mut seen: std::collections::HashSet<&str> = std::collections::HashSet::new();
    for c in &board.conductors {
        match &c.net {
            Net::Named(n) => {
                seen.insert(n);
            }
            Net::Unknown => board.unknown_net_objects += 1,
            Net::NoConnect => {}
        }
    }
    board.nets = seen.into_iter().map(str::to_string).collect();
    Ok(board)
}

/// Adds a file's objects in order: a clear object removes copper from the dark objects of
/// the same file drawn before it (Gerber's polarity is within one file, in file order).
fn add_with_polarity(
    out: &mut Vec<Conductor>,
    start: usize,
    objects: Vec<gerber::Object>,
    layer: Layer,
    file: usize,
) {
    use geo::BooleanOps;
    for o in objects {
        if o.dark {
            out.push(Conductor {
                layer,
                net: o.net,
                shape: o.shape,
                file,
                line: o.line,
            });
            continue;
        }
        let clear_box = o.shape.bbox();
        let clear = to_geo(&o.shape);
        let mut k = start;
        while k < out.len() {
            if out[k].shape.bbox().gap(&clear_box) > 0.0 {
                k += 1;
                continue;
            }
            let rest = to_geo(&out[k].shape).difference(&clear);
            let pieces: Vec<Shape> = rest
                .0
                .iter()
                .map(from_geo)
                .filter(|s| !s_is_empty(s))
                .collect();
            let base = out.remove(k);
            let n = pieces.len();
            for (j, shape) in pieces.into_iter().enumerate() {
                out.insert(
                    k + j,
                    Conductor {
                        shape,
                        ..base.clone()
                    },
                );
            }
            k += n;
        }
    }
}

fn s_is_empty(s: &Shape) -> bool {
    match s {
        Shape::Rings(r) => r.iter().all(|r| r.len() < 3),
        Shape::Segs(s) => s.is_empty(),
    }
}

fn ring_to_geo(ring: &[P]) -> geo::LineString<f64> {
    geo::LineString::from(ring.iter().map(|p| (p[0], p[1])).collect::<Vec<_>>())
}

/// A shape as geo polygons (arcs already chords; round ends as chords within tolerance).
fn to_geo(shape: &Shape) -> geo::MultiPolygon<f64> {
    use geo::BooleanOps;
    match shape {
        Shape::Rings(rings) => {
            let Some((first, rest)) = rings.split_first() else {
                return geo::MultiPolygon::new(vec![]);
            };
            geo::MultiPolygon::new(vec![geo::Polygon::new(
                ring_to_geo(first),
                rest.iter().map(|r| ring_to_geo(r)).collect(),
            )])
        }
        Shape::Segs(segs) => {
            let mut acc = geo::MultiPolygon::new(vec![]);
            for s in segs {
                let p = geo::Polygon::new(ring_to_geo(&g::stadium_ring(s)), vec![]);
                acc = if acc.0.is_empty() {
                    geo::MultiPolygon::new(vec![p])
                } else {
                    acc.union(&p)
                };
            }
            acc
        }
    }
}

fn from_geo(p: &geo::Polygon<f64>) -> Shape {
    let ring = |ls: &geo::LineString<f64>| -> Vec<P> {
        let mut v: Vec<P> = ls.0.iter().map(|c| [c.x, c.y]).collect();
        if v.len() > 1 && v.first() == v.last() {
            v.pop();
        }
        v
    };
    let mut rings = vec![ring(p.exterior())];
    rings.extend(p.interiors().iter().map(ring));
    Shape::Rings(rings)
}

fn push_cutouts(
    out: &mut Vec<CutOut>,
    shape: &Shape,
    width: Option<f64>,
    file: usize,
    line: usize,
) {
    match shape {
        Shape::Segs(segs) => {
            for s in segs {
                out.push(CutOut {
                    ring: g::stadium_ring(s),
                    width_mm: Some(2.0 * s.r),
                    file,
                    line,
                });
            }
        }
        Shape::Rings(rings) => {
            for r in rings {
                let w = width.or_else(|| convex_width(r));
                let mut ring = r.clone();
                if g::ring_area(&ring) < 0.0 {
                    ring.reverse();
                }
                out.push(CutOut {
                    ring,
                    width_mm: w,
                    file,
                    line,
                });
            }
        }
    }
}

/// The width of a convex ring (the least distance between two parallel lines holding it);
/// `None` for a ring that is not convex, whose narrowest part this version does not find.
pub fn convex_width(ring: &[P]) -> Option<f64> {
    let n = ring.len();
    if n < 3 {
        return None;
    }
    let sign = g::ring_area(ring).signum();
    for i in 0..n {
        let (a, b, c) = (ring[i], ring[(i + 1) % n], ring[(i + 2) % n]);
        if g::cross(g::sub(b, a), g::sub(c, b)) * sign < -1e-12 {
            return None;
        }
    }
    let mut best = f64::INFINITY;
    for i in 0..n {
        let (a, b) = (ring[i], ring[(i + 1) % n]);
        let len = g::dist(a, b);
        if len < 1e-12 {
            continue;
        }
        let far = ring
            .iter()
            .map(|p| (g::cross(g::sub(b, a), g::sub(*p, a)) / len).abs())
            .fold(0.0, f64::max);
        best = best.min(far);
    }
    best.is_finite().then_some(best)
}

/// Joins drawn segments end to end into closed loops.
fn chain_loops(file: &str, segs: &[(P, P, usize)]) -> Result<Vec<Vec<P>>, Diagnostic> {
    use std::collections::HashMap;
    let key = |p: P| ((p[0] * 1e4).round() as i64, (p[1] * 1e4).round() as i64);
    let mut at: HashMap<(i64, i64), Vec<usize>> = HashMap::new();
    for (i, (a, b, _)) in segs.iter().enumerate() {
        if key(*a) == key(*b) {
            continue;
        }
        at.entry(key(*a)).or_default().push(i);
        at.entry(key(*b)).or_default().push(i);
    }
    let mut used = vec![false; segs.len()];
    let mut loops = Vec::new();
    for start in 0..segs.len() {
        if used[start] || key(segs[start].0) == key(segs[start].1) {
            continue;
        }
        used[start] = true;
        let first = segs[start].0;
        let mut ring = vec![first];
        let mut cur = segs[start].1;
        loop {
            if key(cur) == key(first) {
                break;
            }
            ring.push(cur);
            let next = at
                .get(&key(cur))
                .and_then(|v| v.iter().copied().find(|&j| !used[j]));
            let Some(j) = next else {
                return Err(Diagnostic {
                    line: Some(segs[start].2),
                    ..Diagnostic::new(
                        file,
                        format!(
                            "the board profile is not closed: the outline drawn from here ends \
                             open at ({:.4}, {:.4}) mm",
                            cur[0], cur[1]
                        ),
                    )
                });
            };
            used[j] = true;
            cur = if key(segs[j].0) == key(cur) {
                segs[j].1
            } else {
                segs[j].0
            };
        }
        if ring.len() >= 3 {
            loops.push(ring);
        }
    }
    Ok(loops)
}

impl Conductor {
    /// The conductor's outline as thick segments (polygon edges have no radius).
    pub fn segs(&self) -> Vec<Seg> {
        match &self.shape {
            Shape::Segs(s) => s.clone(),
            Shape::Rings(rings) => rings
                .iter()
                .flat_map(|r| {
                    (0..r.len()).map(move |i| Seg {
                        a: r[i],
                        b: r[(i + 1) % r.len()],
                        r: 0.0,
                    })
                })
                .collect(),
        }
    }

    pub fn bbox(&self) -> Bbox {
        self.shape.bbox()
    }

    /// The point lies in the conductor's copper.
    pub fn contains(&self, p: P) -> bool {
        match &self.shape {
            Shape::Segs(segs) => segs.iter().any(|s| g::point_seg_distance(p, s).0 <= 0.0),
            Shape::Rings(rings) => g::point_in_rings(p, rings),
        }
    }
}

/// The board section of the report: what was read and what the measurement cannot show.
#[derive(Debug, Clone, Serialize)]
pub struct BoardReport {
    pub files: Vec<BoardFile>,
    pub thickness_mm: f64,
    /// Nets the files carry that no circuit names (perhaps an unassigned part of the design).
    pub unassigned_nets: Vec<String>,
    /// Copper objects without a net attribute, taken as floating conductors.
    pub unknown_net_conductors: usize,
    pub conductors: usize,
    pub cutouts: usize,
    /// The groove width X: cut-outs at least this wide are walked round by creepage.
    pub groove_width_mm: f64,
    /// Arcs and circles are chords within this; every gap is rounded down by it.
    pub chord_tolerance_mm: f64,
    /// Spacing of the points on rims where a path passes between faces.
    pub rim_spacing_mm: f64,
    pub barriers_measured: usize,
    /// What the fabrication files cannot show.
    pub cannot_show: Vec<&'static str>,
}

/// Reads `[board]`, checks the circuits' nets against the files, and measures every
/// barrier between two circuits with nets: the measured figures, the witness and the
/// verdict on the smaller of declared and measured go into each barrier's result.
pub fn apply(
    project: &crate::project::Project,
    source: &crate::diag::Source,
    rules: &crate::rules::RuleBook,
    barriers: &mut [crate::spacing::BarrierResult],
) -> Result<Option<BoardReport>, Problems> {
    use crate::rules::Table;
    use crate::spacing::{Step, verdict};
    use crate::text::show;
    let Some(spec) = &project.board else {
        return Ok(None);
    };
    let folder = match Path::new(&source.name).parent() {
        Some(p) if !p.as_os_str().is_empty() => p.to_path_buf(),
        _ => std::path::PathBuf::from("."),
    };
    let names: Vec<String> = spec.files.iter().map(|f| f.value.clone()).collect();
    let board = load(&folder, &names, spec.thickness_mm)?;

    // Every net a circuit names must be in the files, and in one circuit only.
    let mut problems = Vec::new();
    let known: Vec<&str> = board.nets.iter().map(String::as_str).collect();
    let mut owner: std::collections::BTreeMap<&str, &str> = std::collections::BTreeMap::new();
    for c in &project.circuits {
        for net in &c.nets {
            let key = format!("circuit \"{}\".nets", c.id);
            if !board.nets.contains(&net.value) {
                let mut near: Vec<(f64, &str)> = known
                    .iter()
                    .map(|k| {
                        (
                            strsim::jaro_winkler(&net.value.to_lowercase(), &k.to_lowercase()),
                            *k,
                        )
                    })
                    .filter(|(s, _)| *s >= 0.7)
                    .collect();
                near.sort_by(|a, b| b.0.total_cmp(&a.0));
                let mut d = source
                    .diag(
                        &net.span,
                        format!(
                            "net \"{}\" is not in the board files ({} nets there)",
                            net.value,
                            known.len()
                        ),
                    )
                    .with_key(key);
                if !near.is_empty() {
                    let list: Vec<String> = near
                        .iter()
                        .take(3)
                        .map(|(_, n)| format!("\"{n}\""))
                        .collect();
                    d = d.with_help(format!("near matches in the files: {}", list.join(", ")));
                }
                problems.push(d);
            } else if let Some(other) = owner.insert(net.value.as_str(), c.id.as_str())
                && other != c.id
            {
                problems.push(
                    source
                        .diag(
                            &net.span,
                            format!(
                                "net \"{}\" is named by circuit \"{other}\" too; a net belongs to one circuit",
                                net.value
                            ),
                        )
                        .with_key(key),
                );
            }
        }
    }
    if !problems.is_empty() {
        return Err(Problems(problems));
    }

    let index = Index::new(&board);
    let pd = project.environment.pollution_degree.clamp(1, 3);
    let groove_width_mm =
        rules.table::<crate::rules::GrooveTable>().min_width_mm[(pd - 1) as usize];
    let files_text: Vec<String> = board
        .files
        .iter()
        .map(|f| format!("{} ({}, SHA-256 {})", f.file, f.function, f.sha256))
        .collect();
    let nets_of = |id: &str| -> Vec<String> {
        project
            .circuits
            .iter()
            .find(|c| c.id == id)
            .map(|c| c.nets.iter().map(|n| n.value.clone()).collect())
            .unwrap_or_default()
    };
    // Every barrier whose circuits both name nets is measured, all in one call: barriers
    // with the same first circuit share its searches (`Index::measure_all`).
    let nets: Vec<(Vec<String>, Vec<String>)> = barriers
        .iter()
        .map(|b| (nets_of(&b.between[0]), nets_of(&b.between[1])))
        .collect();
    let wanted: Vec<usize> = (0..barriers.len())
        .filter(|&i| !nets[i].0.is_empty() && !nets[i].1.is_empty())
        .collect();
    let pairs: Vec<(&[String], &[String])> = wanted
        .iter()
        .map(|&i| (nets[i].0.as_slice(), nets[i].1.as_slice()))
        .collect();
    let measurements = index.measure_all(&pairs, groove_width_mm);
    let mut measured = 0;
    for (i, mut m) in wanted.into_iter().zip(measurements) {
        let b = &mut barriers[i];
        let (a, z) = &nets[i];
        m.drawing_svg = svg::drawing(&board, a, z, &m);
        measured += 1;
        let point =
            |p: &PathPoint| format!("({}, {}) mm on {}", show(p.x_mm), show(p.y_mm), p.layer);
        let describe = |what: &str, path: &Option<measure::MeasuredPath>| -> String {
            match path {
                None => format!(
                    "Measured {what}: none, the copper of \"{}\" or \"{}\" is on no outer layer.",
                    b.between[0], b.between[1]
                ),
                Some(p) => format!(
                    "Measured {what} {} mm on the board files {}: from {} to {}{}{}; arcs and circles as chords within {} mm, each gap rounded down by it.",
                    show(p.distance_mm),
                    files_text.join(", "),
                    p.path.first().map(point).unwrap_or_default(),
                    p.path.last().map(point).unwrap_or_default(),
                    if p.intervening_conductors > 0 {
                        format!(
                            ", crossing {} conductor(s) of neither circuit at no cost",
                            p.intervening_conductors
                        )
                    } else {
                        String::new()
                    },
                    if p.between_faces {
                        format!(
                            ", passing between the faces with the board {} mm thick",
                            show(board.thickness_mm)
                        )
                    } else {
                        String::new()
                    },
                    show(g::CHORD_TOLERANCE_MM)
                ),
            }
        };
        b.derivation
            .clearance
            .push(Step::new(None, describe("clearance", &m.clearance)));
        let mut creep = describe("creepage", &m.creepage);
        creep.push_str(&format!(
            " Cut-outs at least X = {} mm wide (pollution degree {pd}, {}) are walked round ({} here), narrower ones crossed straight ({}).",
            show(groove_width_mm),
            rules.table::<crate::rules::GrooveTable>().source,
            m.cutouts_walked_round,
            m.cutouts_bridged
        ));
        b.derivation
            .creepage
            .push(Step::new(Some(crate::rules::GrooveTable::ID), creep));
        for inner in &m.inner_layers {
            b.derivation.clearance.push(Step::new(
                None,
                format!(
                    "Copper of both circuits on {}: {} mm apart in the layer's plane, from {} to {}; this is distance through insulation, not clearance (the stack-up is not in the files).",
                    inner.layer,
                    show(inner.distance_mm),
                    point(&inner.from),
                    point(&inner.to)
                ),
            ));
        }
        b.measured_clearance_mm = m.clearance.as_ref().map(|p| p.distance_mm);
        b.measured_creepage_mm = m.creepage.as_ref().map(|p| p.distance_mm);
        let smaller = |d: Option<f64>, m: Option<f64>| match (d, m) {
            (Some(d), Some(m)) => Some(d.min(m)),
            (d, m) => d.or(m),
        };
        b.judged_clearance_mm = smaller(b.clearance_mm, b.measured_clearance_mm);
        b.judged_creepage_mm = smaller(b.creepage_mm, b.measured_creepage_mm);
        let differs = |d: Option<f64>, m: Option<f64>| matches!((d, m), (Some(d), Some(m)) if (d - m).abs() > (0.05 * d.min(m)).max(0.1));
        if differs(b.clearance_mm, b.measured_clearance_mm) {
            b.measured_differs.push("clearance");
        }
        if differs(b.creepage_mm, b.measured_creepage_mm) {
            b.measured_differs.push("creepage");
        }
        // The margins and each figure's verdict rest on the distance that governs.
        b.clearance_margin_mm = b
            .judged_clearance_mm
            .map(|d| crate::insulation::spacing::margin(d, b.required_clearance_mm));
        b.creepage_margin_mm = b
            .judged_creepage_mm
            .map(|d| crate::insulation::spacing::margin(d, b.required_creepage_mm));
        for (figure, judged, required) in [
            (
                &mut b.derivation.clearance,
                b.judged_clearance_mm,
                b.required_clearance_mm,
            ),
            (
                &mut b.derivation.creepage,
                b.judged_creepage_mm,
                b.required_creepage_mm,
            ),
        ] {
            figure.verdict = Some(match judged {
                Some(d) => crate::derivation::Verdict::of(Some(d < required)),
                None => crate::derivation::Verdict::Incomplete,
            });
        }
        b.verdict = verdict(
            b.judged_clearance_mm,
            b.required_clearance_mm,
            b.judged_creepage_mm,
            b.required_creepage_mm,
        );
        b.board = Some(m);
    }
    let named: BTreeSet<&str> = project
        .circuits
        .iter()
        .flat_map(|c| c.nets.iter().map(|n| n.value.as_str()))
        .collect();
    Ok(Some(BoardReport {
        unassigned_nets: board
            .nets
            .iter()
            .filter(|n| !named.contains(n.as_str()))
            .cloned()
            .collect(),
        unknown_net_conductors: board.unknown_net_objects,
        conductors: board.conductors.len(),
        cutouts: board.cutouts.len(),
        files: board.files.clone(),
        thickness_mm: board.thickness_mm,
        groove_width_mm,
        chord_tolerance_mm: g::CHORD_TOLERANCE_MM,
        rim_spacing_mm: measure::RIM_SPACING_MM,
        barriers_measured: measured,
        cannot_show: CANNOT_SHOW.to_vec(),
    }))
}
