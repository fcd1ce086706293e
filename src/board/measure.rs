//! Clearance and creepage between two circuits' copper: a shortest-path search (Dijkstra)
//! whose nodes are conductors (crossed at no cost: intervening copper does not insulate),
//! points on the rims of the board edge and of holes and slots (where a path passes from
//! one face to the other), and, for creepage, the corners of the cut-outs a path must go
//! round. Edge weights are gaps: straight lines through air for clearance, straight lines
//! on the surface that do not cross a cut-out of at least the groove width X for creepage,
//! and `hypot(chord, thickness)` down a rim.
//!
//! Neighbours are found through a grid over the conductors' outlines. The graph is
//! complete (any node to any node on its face, any rim point to any point of its rim on
//! the other face), but its edges are taken lazily, in rings: when a node is reached at
//! distance `d`, its hops up to `FIRST_RING_MM` are relaxed, and a queue entry at
//! `d + r` opens the ring of hops from `r` to `2r`. A ring is not opened where it cannot
//! help (the figure is the same as with every edge):
//!
//! - Face hops. Any hop longer than `r` passes a point `x` at exactly `r` from the node.
//!   A map of cells (`Cells`) keeps, per cell, a distance within which copper already
//!   settled reaches the cell's centre (copper touching the cell, spread to the
//!   neighbouring cells at one cell width per step). If every cell such an `x` can lie in
//!   has a value below `d + r` (less half its diagonal and the tolerances), that copper
//!   reaches `x`, and so the hop's end, sooner; the hop is not needed, and neither is any
//!   longer one. In dense copper this stops the rings after a millimetre or two; at the
//!   edge of a gap they go on until the second circuit is reached. For creepage, the way
//!   from that copper to `x` and on is a path on the surface, which the search holds as
//!   hops round the cut-outs' corners. A cell an obstacle's edge meets has no value of its
//!   own; where its part on the surface is convex (one edge right across it, or two
//!   meeting at a corner that is convex on the surface's side), the straight line to any
//!   point of that part from the centre of a side neighbour that lies on the surface's
//!   side of those edges stays on the surface, and the neighbour's value plus the longest
//!   such line bounds it. A cell that one edge hides from the whole node (every line
//!   from the node's box to the cell crosses the edge, not at its ends) holds no `x`: a
//!   hop that crosses an edge is not on the surface. Nor does a cell wholly inside a
//!   convex cut-out (`Cells::mark_void`).
//! - Passages down a rim (creepage, along the wall): the cost `hypot(s, thickness)` is
//!   convex in the distance `s` along the rim, so once the rim point `s'` along has been
//!   reached along this face at no more than `d + hypot(s', thickness) - thickness`,
//!   every passage further that way is no shorter from there. Clearance (through the air
//!   of the hole, by the chord): a run of rim points is passed over where even its
//!   nearest point would come later than its farthest point already is reached along the
//!   other face, or copper in its cell reaches it sooner.
//! - A rim point reached from the other face goes on along this face only where the
//!   face's own copper did not reach it as soon.
//! - A corner's hops to rim points (creepage) are taken run by run (`CHUNK` consecutive
//!   points of a rim, with their box): a run is passed over where its box is farther than
//!   the ring's outer radius, or wholly within its inner radius, or where even its nearest
//!   point would be reached no sooner than its farthest point already is. The box's
//!   nearest and farthest corners bound each point's sum of squares from below and above
//!   (in floating point too: differences, squares, sums and roots are monotone), so each
//!   point of such a run would fail the point-by-point test (`surely_no_hop`) anyway; the
//!   hops taken are the same.
//! - A corner's hop to a rim point of its own cut-out, where the cut-out is convex, is a
//!   chord of the polygon. Where the chord's middle lies more than `4 ON_EDGE_MM` inside
//!   (below every edge's line), `Obstacles::visible` would find it blocked, and is not
//!   asked (`Obstacles::chord_hidden`): the depth inside a convex polygon (the least
//!   distance to its edges' lines) is concave along the chord and about zero at its ends,
//!   so on the chord's middle half it is at least half the middle's, more than
//!   `2 ON_EDGE_MM`. `visible` cuts the hop where it touches edges (at the corner at
//!   least) and tests the middle of each piece longer than 1e-9 of the hop; the piece that
//!   holds the chord's middle (or, where that one is shorter, the one beside it) has its
//!   own middle in the middle half: inside the ring and farther than `ON_EDGE_MM` from its
//!   edges, so strictly blocked.
//!
//! The search ends when the second circuit's copper is taken from the queue; no
//! hop-length limit, so no second search.
//!
//! Barriers with the same first circuit share one search (`Index::measure_all`): it goes
//! on until the copper of every second circuit `T` has been taken, reads `T`'s path when
//! `T`'s copper is first taken, crosses `T`'s copper afterwards like any conductor's, and
//! cuts a hop that would end beyond the largest of the waiting circuits' best distances
//! so far (`State::best`). Up to the moment `T`'s copper is first taken, at distance `D`,
//! it takes the same steps as `T`'s own search. Entries leave the queue in the order of
//! key, node and ring, whatever else is queued, so it is enough that both queue the same
//! entries with keys up to `D` and agree on every distance up to `D`; by induction over
//! the steps:
//!
//! - A hop ending at most `D` is taken by both. `T`'s own search cuts beyond its best
//!   distance to `T`, which is never below `D` (`D` is the least of the distances it
//!   gives `T`'s copper). The shared search cuts beyond at least its best distance to
//!   `T`, and that is not below `D` either: any hop to `T`'s copper that ends below `D`
//!   would be taken, and counted, by `T`'s own search too.
//! - A hop only one of them takes ends beyond `D`. It lowers no distance to `D` or less,
//!   and the tests it could change compare with such a distance or pass over only hops
//!   that would lower nothing.
//! - A ring entry only one of them queues has a key of at least `D`, and its hops end
//!   beyond `D`.
//!
//! A test (`barriers_sharing_a_first_circuit_measure_as_each_alone`) holds the shared
//! search to the searches one barrier at a time on generated boards.
//!
//! Two things change the work but not the steps taken: a creepage passage's ring finds
//! where its inner part ends along the rim by halving (`Index::inner_part`: the distance
//! along the rim does not fall until the rim wraps round), not point by point; and the
//! obstacles for creepage with the map of cells sorted by their edges are made once per
//! index and groove width (`Index::prepared`) and each creepage search starts from a copy,
//! the same map it would have made itself.
//!
//! Every figure is rounded down, never up: each gap loses twice `CHORD_TOLERANCE_MM` (arcs
//! and circles are chords that may lie that far inside the copper or the hole), and each
//! passage from one face to the other loses twice the rim's point spacing.

use std::cmp::Ordering;
use std::collections::{BTreeMap, BinaryHeap, HashMap, VecDeque};
use std::sync::{Arc, Mutex, PoisonError};

use serde::Serialize;

use super::geometry::{self as g, Bbox, CHORD_TOLERANCE_MM, Grid, P, Seg};
use super::{Board, Layer, Net, Shape};

/// Spacing of the points placed along each rim (board edge, holes, slots).
pub const RIM_SPACING_MM: f64 = 0.05;
/// The most second circuits one search looks for (a bit each in `State::pending`).
const MAX_TARGETS: usize = 32;
/// Rim points per run (see `Index::chunks`).
const CHUNK: u32 = 64;
/// The map of cells (`Cells`) has this many times more cells per side than the index
/// has outline segments per unit of area.
const CELL_DIVISOR: f64 = 1.0;
/// Outer radius of the first ring of hops; each further ring doubles it.
const FIRST_RING_MM: f64 = 1.0;
/// A point closer than this to a cut-out's edge is on it, not inside.
const ON_EDGE_MM: f64 = 1e-7;

/// A point of a measured path.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct PathPoint {
    /// "top", "bottom" or "inner Ln".
    pub layer: String,
    pub x_mm: f64,
    pub y_mm: f64,
}

/// One measured distance and the path that gives it.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct MeasuredPath {
    pub distance_mm: f64,
    /// From the first circuit's copper to the second's; consecutive points on the same
    /// layer are joined by a straight line, a change of layer passes down a rim.
    pub path: Vec<PathPoint>,
    /// Conductors of neither circuit the path crosses (their width is not counted).
    pub intervening_conductors: usize,
    /// The path passes from one face to the other (round the edge or through a cut-out).
    pub between_faces: bool,
}

/// Copper of the two circuits on an inner layer: its distance through the insulation in
/// the plane of the layer (not an air path; not clearance or creepage).
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct InnerDistance {
    pub layer: String,
    pub distance_mm: f64,
    pub from: PathPoint,
    pub to: PathPoint,
}

/// What the board says about one barrier.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct BarrierMeasurement {
    pub clearance: Option<MeasuredPath>,
    pub creepage: Option<MeasuredPath>,
    pub inner_layers: Vec<InnerDistance>,
    /// The groove width X used: cut-outs at least this wide are walked round.
    pub groove_width_mm: f64,
    /// Cut-outs narrower than X (or of unknown width) that creepage crosses straight.
    pub cutouts_bridged: usize,
    pub cutouts_walked_round: usize,
    /// The neighbourhood drawn for the HTML report (not in the JSON).
    #[serde(skip)]
    pub drawing_svg: Option<String>,
}

/// The board prepared for searching: outlines per layer in grids, rim points.
pub struct Index<'b> {
    pub board: &'b Board,
    /// Layer index of each conductor: 0 top, 1 bottom, 2.. inner layers.
    obj_layers: Vec<(u8, u8)>,
    obj_seg_start: Vec<u32>,
    segs: Vec<Seg>,
    seg_owner: Vec<u32>,
    seg_box: Vec<Bbox>,
    /// Per layer: the global seg ids in it, and a grid over them.
    layers: Vec<(Vec<u32>, Grid)>,
    layer_names: Vec<String>,
    /// Conductors lying inside a polygon conductor of the same layer (touching copper
    /// without touching outlines).
    inside: HashMap<u32, Vec<u32>>,
    /// Rim points: position and rim (cut-out index; the outline is `cutouts.len()`).
    rim: Vec<(P, u32)>,
    /// Each rim point's distance along its rim from the rim's first point.
    rim_at: Vec<f64>,
    /// Each rim's length.
    rim_length: Vec<f64>,
    /// Index of each rim's first point (one more entry: the number of rim points).
    rim_first: Vec<u32>,
    /// Runs of up to `CHUNK` consecutive points of one rim (first, end), each point's run,
    /// and a grid over the runs' boxes: a passage looks at a run as a whole first.
    chunks: Vec<(u32, u32)>,
    rim_chunk: Vec<u32>,
    chunk_box: Vec<Bbox>,
    chunk_grid: Grid,
    /// Which of the later prunings the search uses (all, except in tests that compare
    /// with the search without them).
    prune: Prune,
    /// The obstacles for creepage and the map of cells sorted by their edges, per groove
    /// width: the same for every barrier, so made once (`Index::prepared`).
    prepared: Mutex<Vec<Arc<Prepared>>>,
}

/// What a creepage search needs that depends on the board and the groove width only.
struct Prepared {
    groove_width_mm: f64,
    void_cells: bool,
    obstacles: Obstacles,
    bridged: usize,
    round: usize,
    /// The map of cells before any copper is reached (cloned by each search).
    cells: Cells,
}

/// Prunings that a test may switch off, to compare the figures with and without.
#[derive(Clone, Copy)]
struct Prune {
    /// Cells inside convex cut-outs hold no surface (`Cells::mark_void`).
    void_cells: bool,
    /// Clearance: runs of rim points wholly within a ring's inner radius are passed over
    /// at once (each point would be).
    inner_runs: bool,
    /// Creepage: a corner's hops to rim points are looked at run by run, and a run is
    /// passed over where its box shows every point would be.
    corner_runs: bool,
    /// Creepage: a corner's hop to a rim point of its own convex cut-out whose middle lies
    /// well inside the cut-out is known hidden without `Obstacles::visible`.
    own_chords: bool,
}

struct Obstacles {
    /// Rings; the last flag marks the board outline (whose outside is the obstacle).
    rings: Vec<(Vec<P>, Bbox, bool)>,
    edges: Vec<(P, P)>,
    /// Each ring's first edge (one more entry: the number of edges).
    ring_edges: Vec<usize>,
    /// Per edge, a normal pointing to the surface's side (away from the obstacle).
    edge_normals: Vec<P>,
    edge_grid: Grid,
    corners: Vec<P>,
    corner_grid: Grid,
    /// Each corner's ring (an index in `rings`).
    corner_ring: Vec<u32>,
    /// Per rim (the board's cut-outs, then the outline), its ring in `rings` where it is
    /// a convex cut-out walked round.
    convex_rim_ring: Vec<Option<u32>>,
}

/// A queue entry: key, node, and which ring of the node's hops it opens (0: the node
/// itself is reached; bits 16 and 17 for a rim point's two directions along its rim).
/// Packed as two integers that order as the key (as `f64::total_cmp` does), then the
/// node, then the ring: the queue compares entries at every step, integers are cheaper.
#[derive(Clone, Copy, PartialEq, Eq)]
struct Entry {
    key: u64,
    id: u64,
}
impl Entry {
    const SIGN: u64 = 1 << 63;
    fn new(key: f64, node: u32, aux: u32) -> Entry {
        let b = key.to_bits();
        Entry {
            key: b ^ (((b as i64 >> 63) as u64) >> 1) ^ Entry::SIGN,
            id: (node as u64) << 32 | aux as u64,
        }
    }
    fn parts(self) -> (f64, u32, u32) {
        let t = self.key ^ Entry::SIGN;
        let key = f64::from_bits(t ^ (((t as i64 >> 63) as u64) >> 1));
        (key, (self.id >> 32) as u32, self.id as u32)
    }
}
impl Ord for Entry {
    fn cmp(&self, o: &Self) -> Ordering {
        (o.key, o.id).cmp(&(self.key, self.id))
    }
}
impl PartialOrd for Entry {
    fn partial_cmp(&self, o: &Self) -> Option<Ordering> {
        Some(self.cmp(o))
    }
}

#[derive(Clone, Copy)]
struct Pred {
    from: u32,
    from_pt: P,
    from_layer: u8,
    to_pt: P,
    to_layer: u8,
}

const NONE: u8 = u8::MAX;

impl<'b> Index<'b> {
    pub fn new(board: &'b Board) -> Index<'b> {
        let mut inner: Vec<u32> = board
            .conductors
            .iter()
            .filter_map(|c| match c.layer {
                Layer::Inner(n) => Some(n),
                _ => None,
            })
            .collect();
        inner.sort_unstable();
        inner.dedup();
        let mut layer_names = vec!["top".to_string(), "bottom".to_string()];
        layer_names.extend(inner.iter().map(|n| Layer::Inner(*n).name()));
        let n_layers = layer_names.len();
        let mut obj_layers = Vec::with_capacity(board.conductors.len());
        let mut obj_seg_start = Vec::with_capacity(board.conductors.len() + 1);
        let mut segs = Vec::new();
        let mut seg_owner = Vec::new();
        let mut per_layer: Vec<Vec<u32>> = vec![Vec::new(); n_layers];
        for (i, c) in board.conductors.iter().enumerate() {
            let ls = match c.layer {
                Layer::Top => (0, NONE),
                Layer::Bottom => (1, NONE),
                Layer::Through => (0, 1),
                Layer::Inner(n) => (2 + inner.binary_search(&n).unwrap_or(0) as u8, NONE),
            };
            obj_layers.push(ls);
            obj_seg_start.push(segs.len() as u32);
            for s in c.segs() {
                let id = segs.len() as u32;
                segs.push(s);
                seg_owner.push(i as u32);
                per_layer[ls.0 as usize].push(id);
                if ls.1 != NONE {
                    per_layer[ls.1 as usize].push(id);
                }
            }
        }
        obj_seg_start.push(segs.len() as u32);
        let seg_box: Vec<Bbox> = segs.iter().map(|s| s.bbox()).collect();
        let layers: Vec<(Vec<u32>, Grid)> = per_layer
            .into_iter()
            .map(|ids| {
                let boxes: Vec<Bbox> = ids.iter().map(|&i| seg_box[i as usize]).collect();
                let grid = Grid::build(&boxes, None);
                (ids, grid)
            })
            .collect();

        let mut rim = Vec::new();
        let mut rim_at = Vec::new();
        let mut rim_length = Vec::new();
        let mut rim_first = Vec::new();
        let rims = board
            .cutouts
            .iter()
            .map(|c| &c.ring)
            .chain(std::iter::once(&board.outline));
        for (ri, ring) in rims.enumerate() {
            let n = ring.len();
            rim_first.push(rim.len() as u32);
            let mut along = 0.0;
            for k in 0..n {
                let (a, b) = (ring[k], ring[(k + 1) % n]);
                let len = g::dist(a, b);
                let steps = (len / RIM_SPACING_MM).ceil().max(1.0) as usize;
                for s in 0..steps {
                    let t = s as f64 / steps as f64;
                    rim.push((g::add(a, g::scale(g::sub(b, a), t)), ri as u32));
                    rim_at.push(along + t * len);
                }
                along += len;
            }
            rim_length.push(along);
        }
        rim_first.push(rim.len() as u32);
        let mut chunks = Vec::new();
        let mut rim_chunk = vec![0u32; rim.len()];
        for w in rim_first.windows(2) {
            let mut s = w[0];
            while s < w[1] {
                let e = (s + CHUNK).min(w[1]);
                for k in s..e {
                    rim_chunk[k as usize] = chunks.len() as u32;
                }
                chunks.push((s, e));
                s = e;
            }
        }
        let chunk_boxes: Vec<Bbox> = chunks
            .iter()
            .map(|&(s, e)| Bbox::around((s..e).map(|k| rim[k as usize].0)))
            .collect();
        let chunk_grid = Grid::build(&chunk_boxes, None);
        let chunk_box = chunk_boxes;

        let mut index = Index {
            board,
            obj_layers,
            obj_seg_start,
            segs,
            seg_owner,
            seg_box,
            layers,
            layer_names,
            inside: HashMap::new(),
            rim,
            rim_at,
            rim_length,
            rim_first,
            chunks,
            rim_chunk,
            chunk_box,
            chunk_grid,
            prune: Prune {
                void_cells: true,
                inner_runs: true,
                corner_runs: true,
                own_chords: true,
            },
            prepared: Mutex::new(Vec::new()),
        };
        index.find_inside();
        index
    }

    /// Conductors within polygon conductors, found once: a pad on a pour of the same
    /// copper touches it even where no outline does.
    fn find_inside(&mut self) {
        let board = self.board;
        for (i, c) in board.conductors.iter().enumerate() {
            let Shape::Rings(rings) = &c.shape else {
                continue;
            };
            let bb = c.bbox();
            let mut found = Vec::new();
            for l in [self.obj_layers[i].0, self.obj_layers[i].1] {
                if l == NONE {
                    continue;
                }
                let (ids, grid) = &self.layers[l as usize];
                grid.query(&bb, |k| {
                    let sid = ids[k as usize] as usize;
                    let v = self.seg_owner[sid];
                    if v as usize != i
                        && self.obj_seg_start[v as usize] as usize == sid
                        && bb.contains(self.segs[sid].a)
                        && g::point_in_rings(self.segs[sid].a, rings)
                    {
                        found.push(v);
                    }
                });
            }
            found.sort_unstable();
            found.dedup();
            for v in found {
                self.inside.entry(i as u32).or_default().push(v);
                self.inside.entry(v).or_default().push(i as u32);
            }
        }
    }

    fn obj_bbox(&self, o: u32) -> Bbox {
        self.segs_bbox(self.obj_segs(o))
    }

    /// The box round a run of outline segments.
    fn segs_bbox(&self, segs: std::ops::Range<usize>) -> Bbox {
        segs.fold(Bbox::EMPTY, |b, i| b.union(&self.seg_box[i]))
    }

    fn obj_segs(&self, o: u32) -> std::ops::Range<usize> {
        self.obj_seg_start[o as usize] as usize..self.obj_seg_start[o as usize + 1] as usize
    }

    fn obstacles(&self, groove_width_mm: f64) -> (Obstacles, usize, usize) {
        let board = self.board;
        let mut rings = Vec::new();
        let (mut bridged, mut round) = (0, 0);
        let mut convex_rim_ring = Vec::with_capacity(board.cutouts.len() + 1);
        for c in &board.cutouts {
            match c.width_mm {
                Some(w) if w >= groove_width_mm => {
                    round += 1;
                    convex_rim_ring.push(is_convex(&c.ring).then_some(rings.len() as u32));
                    rings.push((c.ring.clone(), Bbox::around(c.ring.iter().copied()), false));
                }
                _ => {
                    bridged += 1;
                    convex_rim_ring.push(None);
                }
            }
        }
        convex_rim_ring.push(None);
        let mut corner_ring = Vec::new();
        rings.push((
            board.outline.clone(),
            Bbox::around(board.outline.iter().copied()),
            true,
        ));
        let mut edges = Vec::new();
        let mut edge_normals = Vec::new();
        let mut corners = Vec::new();
        let mut ring_edges = Vec::new();
        for (r, (ring, _, outer)) in rings.iter().enumerate() {
            ring_edges.push(edges.len());
            let n = ring.len();
            let area_sign = g::ring_area(ring).signum();
            // The ring's inside is on the left of each edge when it runs anticlockwise;
            // the surface is the outline's inside and a cut-out's outside.
            let surface_left = *outer == (area_sign > 0.0);
            for k in 0..n {
                let (a, b, c) = (ring[(k + n - 1) % n], ring[k], ring[(k + 1) % n]);
                edges.push((b, c));
                let left = [b[1] - c[1], c[0] - b[0]];
                edge_normals.push(if surface_left {
                    left
                } else {
                    g::scale(left, -1.0)
                });
                let turn = g::cross(g::sub(b, a), g::sub(c, b)) * area_sign;
                // A hole's convex corners, and the outline's inward (reflex) corners, are
                // where a shortest path may bend.
                if (!outer && turn > 1e-12) || (*outer && turn < -1e-12) {
                    corners.push(b);
                    corner_ring.push(r as u32);
                }
            }
        }
        ring_edges.push(edges.len());
        let eb: Vec<Bbox> = edges.iter().map(|(a, b)| Bbox::around([*a, *b])).collect();
        let cb: Vec<Bbox> = corners.iter().map(|p| Bbox { min: *p, max: *p }).collect();
        (
            Obstacles {
                rings,
                // Cells as fine as the copper's: a hop looks at the edges near it only
                // (a few long edges would otherwise make the cells as large as the board).
                edge_grid: Grid::build(&eb, Some(self.layers[0].1.cell_mm())),
                edges,
                ring_edges,
                edge_normals,
                corner_grid: Grid::build(&cb, Some(1.0)),
                corners,
                corner_ring,
                convex_rim_ring,
            },
            bridged,
            round,
        )
    }

    /// Measures one barrier between the copper of nets `a` and nets `b`.
    pub fn measure(&self, a: &[String], b: &[String], groove_width_mm: f64) -> BarrierMeasurement {
        let mut all = self.measure_all(&[(a, b)], groove_width_mm);
        all.pop().expect("one measurement per barrier")
    }

    /// Measures every barrier `(a, b)`, in order: the same measurements as `measure` one
    /// barrier at a time, with one search per first circuit (barriers whose first circuit
    /// is the same copper share it; the module comment has the argument).
    pub fn measure_all(
        &self,
        barriers: &[(&[String], &[String])],
        groove_width_mm: f64,
    ) -> Vec<BarrierMeasurement> {
        let in_set = |set: &[String]| -> Vec<bool> {
            let set: std::collections::HashSet<&str> = set.iter().map(String::as_str).collect();
            self.board
                .conductors
                .iter()
                .map(|c| matches!(&c.net, Net::Named(n) if set.contains(n.as_str())))
                .collect()
        };
        let prepared = self.prepared(groove_width_mm);
        let (bridged, round) = (prepared.bridged, prepared.round);
        let mut out: Vec<BarrierMeasurement> = barriers
            .iter()
            .map(|_| BarrierMeasurement {
                clearance: None,
                creepage: None,
                inner_layers: Vec::new(),
                groove_width_mm,
                cutouts_bridged: bridged,
                cutouts_walked_round: round,
                drawing_svg: None,
            })
            .collect();
        // Barriers grouped by their first circuit's copper, in the order first met.
        let mut groups: Vec<(Vec<bool>, Vec<usize>)> = Vec::new();
        for (i, (a, _)) in barriers.iter().enumerate() {
            let is_a = in_set(a);
            match groups.iter_mut().find(|(x, _)| *x == is_a) {
                Some((_, members)) => members.push(i),
                None => groups.push((is_a, vec![i])),
            }
        }
        let outer = [0usize, 1];
        for (is_a, members) in &groups {
            // At most `MAX_TARGETS` second circuits per search (a bit each in a mask).
            for part in members.chunks(MAX_TARGETS) {
                let is_b: Vec<Vec<bool>> = part.iter().map(|&i| in_set(barriers[i].1)).collect();
                let targets: Vec<&[bool]> = is_b.iter().map(Vec::as_slice).collect();
                let clearance = self.shortest(&outer, None, is_a, &targets);
                let creepage = self.shortest(
                    &outer,
                    Some((&prepared.obstacles, &prepared.cells)),
                    is_a,
                    &targets,
                );
                for ((&i, c), p) in part.iter().zip(clearance).zip(creepage) {
                    out[i].clearance = c;
                    out[i].creepage = p;
                }
                for l in 2..self.layers.len() {
                    let found = self.shortest(&[l], None, is_a, &targets);
                    for (&i, m) in part.iter().zip(found) {
                        if let Some(m) = m
                            && let (Some(from), Some(to)) = (m.path.first(), m.path.last())
                        {
                            out[i].inner_layers.push(InnerDistance {
                                layer: self.layer_names[l].clone(),
                                distance_mm: m.distance_mm,
                                from: from.clone(),
                                to: to.clone(),
                            });
                        }
                    }
                }
            }
        }
        out
    }

    /// The shortest path from the copper of `is_a` to that of each of `targets`, with hops
    /// of unlimited length (see the module comment: hops are taken in rings of growing
    /// length, and a ring is skipped where it cannot help). `creepage`: the obstacles, and
    /// the map of cells sorted by their edges to start from. `None` for a target (or for
    /// all) whose copper, or the first circuit's, is on none of `layers`.
    fn shortest(
        &self,
        layers: &[usize],
        creepage: Option<(&Obstacles, &Cells)>,
        is_a: &[bool],
        targets: &[&[bool]],
    ) -> Vec<Option<MeasuredPath>> {
        let present = |set: &[bool]| {
            set.iter()
                .enumerate()
                .any(|(i, &x)| x && self.on_any(i as u32, layers))
        };
        let mut found: Vec<Option<MeasuredPath>> = targets.iter().map(|_| None).collect();
        if !present(is_a) {
            return found;
        }
        let (wanted, searched): (Vec<usize>, Vec<&[bool]>) = targets
            .iter()
            .enumerate()
            .filter(|(_, t)| present(t))
            .map(|(i, t)| (i, *t))
            .unzip();
        if searched.is_empty() {
            return found;
        }
        let all = self.extent();
        let most = (all.max[0] - all.min[0]).hypot(all.max[1] - all.min[1])
            + 2.0 * self.board.thickness_mm
            + 1.0;
        let (obstacles, template) = (creepage.map(|c| c.0), creepage.map(|c| c.1));
        let paths = self.search(layers, obstacles, template, is_a, &searched, all, most);
        for (i, p) in wanted.into_iter().zip(paths) {
            found[i] = p;
        }
        found
    }

    /// The box round all copper and the outline: the extent of the map of cells.
    fn extent(&self) -> Bbox {
        let all = self.layers.iter().fold(Bbox::EMPTY, |bb, (ids, _)| {
            ids.iter()
                .fold(bb, |bb, &s| bb.union(&self.seg_box[s as usize]))
        });
        all.union(&Bbox::around(self.board.outline.iter().copied()))
    }

    /// The obstacles for creepage with groove width `groove_width_mm` and the map of cells
    /// sorted by their edges (`Cells::new`), made at the first barrier that asks for them
    /// and kept: they depend on the board and the groove width only (and on whether
    /// `Prune::void_cells` is on, which a test switches), so every barrier's search starts
    /// from the same ones, as if it had made them itself.
    fn prepared(&self, groove_width_mm: f64) -> Arc<Prepared> {
        let void_cells = self.prune.void_cells;
        // A search never panics with the lock held; were it poisoned, the list is still whole.
        let mut kept = self.prepared.lock().unwrap_or_else(PoisonError::into_inner);
        if let Some(p) = kept.iter().find(|p| {
            p.groove_width_mm.to_bits() == groove_width_mm.to_bits() && p.void_cells == void_cells
        }) {
            return Arc::clone(p);
        }
        let (obstacles, bridged, round) = self.obstacles(groove_width_mm);
        let cells = Cells::new(
            self.extent(),
            self.segs.len(),
            &[0, 1],
            self.layers.len(),
            Some(&obstacles),
            void_cells,
        );
        let p = Arc::new(Prepared {
            groove_width_mm,
            void_cells,
            obstacles,
            bridged,
            round,
            cells,
        });
        kept.push(Arc::clone(&p));
        p
    }

    fn on_any(&self, o: u32, layers: &[usize]) -> bool {
        let (l0, l1) = self.obj_layers[o as usize];
        layers.contains(&(l0 as usize)) || (l1 != NONE && layers.contains(&(l1 as usize)))
    }

    #[allow(clippy::too_many_arguments)]
    fn search(
        &self,
        layers: &[usize],
        obstacles: Option<&Obstacles>,
        template: Option<&Cells>,
        is_a: &[bool],
        targets: &[&[bool]],
        all: Bbox,
        most: f64,
    ) -> Vec<Option<MeasuredPath>> {
        let n = self.board.conductors.len();
        debug_assert!(targets.len() <= MAX_TARGETS);
        // Each conductor's targets, a bit each.
        let mut target_mask = vec![0u32; n];
        for (t, is_b) in targets.iter().enumerate() {
            for (m, _) in target_mask.iter_mut().zip(is_b.iter()).filter(|(_, x)| **x) {
                *m |= 1 << t;
            }
        }
        let with_rims = layers.contains(&0) || layers.contains(&1);
        let n_rim = if with_rims { self.rim.len() } else { 0 };
        let n_corner = obstacles.map_or(0, |o| o.corners.len());
        // Rim points have two states per face: reached along the face (they then only pass
        // down the rim to the other face) and reached from the other face (they then only
        // go on along this face): a path never gains by touching a rim and turning back.
        let rim0 = n;
        let rimx0 = n + 2 * n_rim;
        let corner0 = n + 4 * n_rim;
        let total = corner0 + 2 * n_corner;
        let mut st = State {
            dist: vec![f64::INFINITY; total],
            pred: vec![None; total],
            queue: Queue::new(total),
            best: f64::INFINITY,
            best_of: vec![f64::INFINITY; targets.len()],
            pending: if targets.len() == 32 {
                u32::MAX
            } else {
                (1u32 << targets.len()) - 1
            },
            n,
            target_mask: &target_mask,
            rim0,
            rimx0,
            rim_chunk: &self.rim_chunk,
            run_max: vec![[f64::INFINITY; 2]; self.chunks.len()],
            run_dirty: vec![[true; 2]; self.chunks.len()],
        };
        let mut settled = vec![false; total];
        for (i, &x) in is_a.iter().enumerate() {
            if x && self.on_any(i as u32, layers) {
                st.dist[i] = 0.0;
                st.queue.set(i as u32, 0.0);
            }
        }
        // A creepage search starts from the map its obstacles were prepared with.
        let mut cells = match template {
            Some(t) => t.clone(),
            None => Cells::new(
                all,
                self.segs.len(),
                layers,
                self.layers.len(),
                obstacles,
                self.prune.void_cells,
            ),
        };
        let mut found: Vec<Option<MeasuredPath>> = targets.iter().map(|_| None).collect();
        let thickness = self.board.thickness_mm;
        // Each conductor at either end of a step may lie up to the chord tolerance nearer.
        let one = CHORD_TOLERANCE_MM;
        let tol = 2.0 * one;
        let visible = |p: P, q: P| obstacles.is_none_or(|o| o.visible(p, q));
        let face_of = |l: u8| layers.contains(&(l as usize));

        while let Some(entry) = st.queue.pop() {
            let (key, u, aux) = entry.parts();
            cells.advance(key);
            let ui = u as usize;
            let ring = aux & 0xffff;
            let mut dirs = aux >> 16;
            if ring == 0 {
                if settled[ui] || key > st.dist[ui] {
                    continue;
                }
                settled[ui] = true;
                if ui < n && target_mask[ui] & st.pending != 0 {
                    // The first copper of a target taken: its path is final (every node on
                    // it is settled). The search goes on while a target is left, this
                    // copper then being crossed like any other conductor's.
                    let mut reached = target_mask[ui] & st.pending;
                    while reached != 0 {
                        let t = reached.trailing_zeros() as usize;
                        reached &= reached - 1;
                        found[t] = Some(self.path_to(ui, &st, is_a, targets[t]));
                        st.pending &= !(1 << t);
                    }
                    if st.pending == 0 {
                        break;
                    }
                    st.best = st.largest_best();
                }
                if ui < n {
                    let (l0, l1) = self.obj_layers[ui];
                    for l in [l0, l1] {
                        if l != NONE && face_of(l) {
                            for si in self.obj_segs(u) {
                                cells.register_seg(l as usize, &self.segs[si], key);
                            }
                        }
                    }
                } else if ui >= corner0 {
                    if let Some(o) = obstacles {
                        let f = (ui - corner0) % 2;
                        cells.register(f, o.corners[(ui - corner0) / 2], key);
                    }
                } else if ui >= rimx0 {
                    // Reached from the other face, it goes on only along this face: where
                    // this face's own copper or a corner already reached the point as soon,
                    // that copper goes everywhere this point goes, no later.
                    if st.dist[rim0 + (ui - rimx0)] <= key {
                        continue;
                    }
                } else {
                    dirs = 3;
                }
            }
            let d = st.dist[ui];
            let k = ring.max(1);
            let lo = if ring == 0 { -1.0 } else { ring_mm(k - 1) };
            let hi_ring = ring_mm(k);
            let cap = st.best - d;
            if lo > cap {
                continue;
            }
            let hi = hi_ring.min(cap);
            let in_ring = |w: f64| w > lo && w <= hi;
            // The point node's position and face (rim points and corners).
            let point_at = |ui: usize| -> (P, u8) {
                if ui < rimx0 {
                    (self.rim[(ui - rim0) / 2].0, ((ui - rim0) % 2) as u8)
                } else if ui < corner0 {
                    (self.rim[(ui - rimx0) / 2].0, ((ui - rimx0) % 2) as u8)
                } else {
                    (
                        obstacles.map_or([0.0, 0.0], |o| o.corners[(ui - corner0) / 2]),
                        ((ui - corner0) % 2) as u8,
                    )
                }
            };
            if ring >= 2 && ui < n {
                // Hops longer than `lo` are not needed where every point at that distance
                // from this conductor is nearer to copper reached sooner (module comment).
                let ab = self.obj_bbox(u);
                let a0 = self.segs[self.obj_segs(u).start].a;
                let (l0, l1) = self.obj_layers[ui];
                let dominated = [l0, l1].iter().all(|&l| {
                    l == NONE
                        || !face_of(l)
                        || cells.dominated(l as usize, &ab, a0, lo, d, obstacles)
                });
                if dominated {
                    continue;
                }
            } else if ring >= 2 && ui >= rimx0 {
                let (p, f) = point_at(ui);
                if cells.dominated(f as usize, &Bbox { min: p, max: p }, p, lo, d, obstacles) {
                    continue;
                }
            }
            if ui < n {
                let (l0, l1) = self.obj_layers[ui];
                for l in [l0, l1] {
                    if l == NONE || !face_of(l) {
                        continue;
                    }
                    let (ids, grid) = &self.layers[l as usize];
                    // Small objects (pads, tracks) query the grid once round their box; large
                    // ones (pours) once per edge, so that a pour does not look at its whole box.
                    let all_segs = self.obj_segs(u);
                    let whole = all_segs.len() <= 8;
                    let n_groups = if whole { 1 } else { all_segs.len() };
                    for gi in 0..n_groups {
                        let group = if whole {
                            all_segs.clone()
                        } else {
                            all_segs.start + gi..all_segs.start + gi + 1
                        };
                        let gbox = self.segs_bbox(group.clone());
                        let far2 = (hi + tol) * (hi + tol);
                        // A hop from this group of edges to the point node `v` at `p` on this
                        // face (a rim point or a cut-out corner), seen past the obstacles.
                        let hop_to_point = |st: &mut State, v: usize, p: P| {
                            let pb = Bbox { min: p, max: p };
                            for si in group.clone() {
                                // The box gap is a lower bound of the true gap.
                                let lb2 = self.seg_box[si].gap_squared(&pb);
                                if lb2 > far2 || d + lb2.sqrt() - one >= st.dist[v] {
                                    continue;
                                }
                                let (gap, pu) = g::point_seg_distance(p, &self.segs[si]);
                                let w = (gap - one).max(0.0);
                                if !in_ring(w)
                                    || d + w >= st.dist[v]
                                    || (gap > 0.0 && !visible(pu, p))
                                {
                                    continue;
                                }
                                st.relax(
                                    v,
                                    d + w,
                                    Pred {
                                        from: u,
                                        from_pt: pu,
                                        from_layer: l,
                                        to_pt: p,
                                        to_layer: l,
                                    },
                                );
                            }
                        };
                        grid.query(&gbox.grown(hi + tol), |k| {
                            let sj = ids[k as usize] as usize;
                            let v = self.seg_owner[sj] as usize;
                            if v == ui
                                || st.dist[v] <= d
                                || self.seg_box[sj].gap_squared(&gbox) > far2
                            {
                                return;
                            }
                            for si in group.clone() {
                                // The box gap is a lower bound of the true gap.
                                let lb2 = self.seg_box[sj].gap_squared(&self.seg_box[si]);
                                if lb2 > far2 || d + lb2.sqrt() - tol >= st.dist[v] {
                                    continue;
                                }
                                let (gap, pu, pv) = g::seg_distance(&self.segs[si], &self.segs[sj]);
                                let w = (gap - tol).max(0.0);
                                if !in_ring(w)
                                    || d + w >= st.dist[v]
                                    || (gap > 0.0 && !visible(pu, pv))
                                {
                                    continue;
                                }
                                st.relax(
                                    v,
                                    d + w,
                                    Pred {
                                        from: u,
                                        from_pt: pu,
                                        from_layer: l,
                                        to_pt: pv,
                                        to_layer: l,
                                    },
                                );
                            }
                        });
                        if l <= 1 && with_rims {
                            // Rim points run by run: a run is passed over where even its
                            // nearest point would be reached no sooner than its farthest
                            // point already is.
                            let lf = l as usize;
                            let far = hi + tol;
                            self.chunk_grid.query(&gbox.grown(far), |c| {
                                let c = c as usize;
                                let near2 = self.chunk_box[c].gap_squared(&gbox);
                                if near2 > far * far {
                                    return;
                                }
                                let (s, e) = self.chunks[c];
                                if st.run_dirty[c][lf] {
                                    st.run_dirty[c][lf] = false;
                                    st.run_max[c][lf] = (s..e)
                                        .map(|k| st.dist[rim0 + 2 * k as usize + lf])
                                        .fold(0.0, f64::max);
                                }
                                if d + near2.sqrt() - one >= st.run_max[c][lf] {
                                    return;
                                }
                                for k in s as usize..e as usize {
                                    let p = self.rim[k].0;
                                    let v = rim0 + 2 * k + lf;
                                    if st.dist[v] <= d {
                                        continue;
                                    }
                                    hop_to_point(&mut st, v, p);
                                }
                            });
                        }
                        // Cut-out corners on this face: the gap from this group of edges to
                        // the point, seen past the obstacles.
                        let mut reach_points =
                            |grid: &Grid, base: usize, point: &dyn Fn(usize) -> P| {
                                grid.query(&gbox.grown(hi + tol), |k| {
                                    let p = point(k as usize);
                                    let v = base + 2 * k as usize + l as usize;
                                    if st.dist[v] <= d {
                                        return;
                                    }
                                    hop_to_point(&mut st, v, p);
                                });
                            };
                        if l <= 1
                            && let Some(o) = obstacles
                        {
                            reach_points(&o.corner_grid, corner0, &|k| o.corners[k]);
                        }
                    }
                    // (Most boards have no conductor inside another: no hashing then.)
                    if ring == 0
                        && !self.inside.is_empty()
                        && let Some(inside) = self.inside.get(&u)
                    {
                        let at = self.segs[self.obj_segs(u).start].a;
                        for &v in inside {
                            if self.on_any(v, &[l as usize]) {
                                st.relax(
                                    v as usize,
                                    d,
                                    Pred {
                                        from: u,
                                        from_pt: at,
                                        from_layer: l,
                                        to_pt: at,
                                        to_layer: l,
                                    },
                                );
                            }
                        }
                    }
                }
            } else if ui >= rimx0 {
                // A corner, or a rim point reached from the other face: on along face `f`.
                let (p, f) = point_at(ui);
                if face_of(f) {
                    let (ids, grid) = &self.layers[f as usize];
                    let pb = Bbox { min: p, max: p };
                    let far2 = (hi + tol) * (hi + tol);
                    grid.query(&pb.grown(hi + tol), |k| {
                        let sj = ids[k as usize] as usize;
                        let v = self.seg_owner[sj] as usize;
                        if st.dist[v] <= d {
                            return;
                        }
                        // The box gap is a lower bound of the true gap.
                        let lb2 = self.seg_box[sj].gap_squared(&pb);
                        if lb2 > far2 || d + lb2.sqrt() - one >= st.dist[v] {
                            return;
                        }
                        let (gap, pv) = g::point_seg_distance(p, &self.segs[sj]);
                        let w = (gap - one).max(0.0);
                        if !in_ring(w) || d + w >= st.dist[v] || (gap > 0.0 && !visible(p, pv)) {
                            return;
                        }
                        st.relax(
                            v,
                            d + w,
                            Pred {
                                from: u,
                                from_pt: p,
                                from_layer: f,
                                to_pt: pv,
                                to_layer: f,
                            },
                        );
                    });
                    if let Some(o) = obstacles {
                        o.corner_grid.query(&pb.grown(hi), |k| {
                            let q = o.corners[k as usize];
                            let v = corner0 + 2 * k as usize + f as usize;
                            if surely_no_hop(p, q, lo, hi, d, st.dist[v]) {
                                return;
                            }
                            let w = g::dist(p, q);
                            if v == ui || !in_ring(w) || d + w >= st.dist[v] || !visible(p, q) {
                                return;
                            }
                            st.relax(
                                v,
                                d + w,
                                Pred {
                                    from: u,
                                    from_pt: p,
                                    from_layer: f,
                                    to_pt: q,
                                    to_layer: f,
                                },
                            );
                        });
                        if ui >= corner0 {
                            // Rim points run by run: a run is passed over where every one of
                            // its points would be (`surely_no_hop` of the run's box: its
                            // nearest and farthest corners bound every point's sums).
                            let fl = f as usize;
                            let o = obstacles.expect("corners come with obstacles");
                            let own_ring = o.corner_ring[(ui - corner0) / 2];
                            self.chunk_grid.query(&pb.grown(hi), |c| {
                                let c = c as usize;
                                let (s, e) = self.chunks[c];
                                let own = self.prune.own_chords
                                    && o.convex_rim_ring[self.rim[s as usize].1 as usize]
                                        == Some(own_ring);
                                let bc = &self.chunk_box[c];
                                let near2 = bc.gap_squared(&pb);
                                let far = [
                                    (p[0] - bc.min[0]).abs().max((p[0] - bc.max[0]).abs()),
                                    (p[1] - bc.min[1]).abs().max((p[1] - bc.max[1]).abs()),
                                ];
                                if self.prune.corner_runs {
                                    if near2 > hi * hi * (1.0 + SURE_RATIO)
                                        || (lo >= 0.0
                                            && g::dot(far, far) < lo * lo * (1.0 - SURE_RATIO))
                                    {
                                        return;
                                    }
                                    if st.run_dirty[c][fl] {
                                        st.run_dirty[c][fl] = false;
                                        st.run_max[c][fl] = (s..e)
                                            .map(|k| st.dist[rim0 + 2 * k as usize + fl])
                                            .fold(0.0, f64::max);
                                    }
                                    if d + near2.sqrt() * (1.0 - SURE_RATIO) >= st.run_max[c][fl] {
                                        return;
                                    }
                                }
                                for k in s as usize..e as usize {
                                    let q = self.rim[k].0;
                                    let v = rim0 + 2 * k + fl;
                                    if surely_no_hop(p, q, lo, hi, d, st.dist[v]) {
                                        continue;
                                    }
                                    let w = g::dist(p, q);
                                    if !in_ring(w)
                                        || d + w >= st.dist[v]
                                        || (own && o.chord_hidden(own_ring, p, q))
                                        || !visible(p, q)
                                    {
                                        continue;
                                    }
                                    st.relax(
                                        v,
                                        d + w,
                                        Pred {
                                            from: u,
                                            from_pt: p,
                                            from_layer: f,
                                            to_pt: q,
                                            to_layer: f,
                                        },
                                    );
                                }
                            });
                        }
                    }
                }
            } else {
                // A rim point reached along face `f`: down the rim to the other face,
                // through the hole or round the edge.
                let kp = (ui - rim0) / 2;
                let (p, ri) = self.rim[kp];
                let f = ((ui - rim0) % 2) as u8;
                let other = 1 - f;
                if !face_of(other) {
                    continue;
                }
                // A crossing point between two rim points is at most half a spacing from
                // one: both faces' steps and this one together are at most two spacings
                // longer than through the true crossing points.
                let t2 = thickness * thickness;
                let reach = hi + 2.0 * RIM_SPACING_MM;
                let hi2 = if reach > 0.0 { reach * reach } else { -1.0 };
                let lo2 = if lo + 2.0 * RIM_SPACING_MM > 0.0 {
                    (lo + 2.0 * RIM_SPACING_MM).powi(2)
                } else {
                    -1.0
                };
                if obstacles.is_some() {
                    // Creepage: along the wall, unfolded; the rim's points in turn both ways.
                    let first = self.rim_first[ri as usize] as usize;
                    let count = self.rim_first[ri as usize + 1] as usize - first;
                    let length = self.rim_length[ri as usize];
                    let at = self.rim_at[kp];
                    for dir in 0..2u32 {
                        if dirs & (1 << dir) == 0 {
                            continue;
                        }
                        // The last point of this ring's inner part: a path that passes
                        // further this way is no shorter from there (module comment).
                        // The inner part is found by halving (`Index::inner_part`), not
                        // walked point by point: the loop below starts where it ends.
                        let (start, mut last_inner) =
                            self.inner_part(dir, kp, first, count, at, length, t2, lo2);
                        let mut done = true;
                        for j in start..count {
                            let kq = if dir == 0 {
                                first + (kp - first + j) % count
                            } else {
                                first + (kp - first + count - j) % count
                            };
                            let mut s = if dir == 0 {
                                self.rim_at[kq] - at
                            } else {
                                at - self.rim_at[kq]
                            };
                            if s < 0.0 {
                                s += length;
                            }
                            if s > length / 2.0 + 1e-9 {
                                break;
                            }
                            let e2 = s * s + t2;
                            if e2 <= lo2 {
                                last_inner = Some((kq, s));
                                continue;
                            }
                            if ring >= 2
                                && let Some((kd, sd)) = last_inner.take()
                                && st.dist[rim0 + 2 * kd + f as usize] + 1e-9
                                    < d + sd.hypot(thickness) - thickness
                            {
                                break;
                            }
                            if e2 > hi2 {
                                done = false;
                                break;
                            }
                            let w = (e2.sqrt() - 2.0 * RIM_SPACING_MM).max(0.0);
                            let v = rimx0 + 2 * kq + other as usize;
                            let nd = d + w;
                            if nd >= st.dist[v] || st.dist[rim0 + 2 * kq + other as usize] <= nd {
                                continue;
                            }
                            st.relax(
                                v,
                                nd,
                                Pred {
                                    from: u,
                                    from_pt: p,
                                    from_layer: f,
                                    to_pt: self.rim[kq].0,
                                    to_layer: other,
                                },
                            );
                        }
                        if done {
                            dirs &= !(1 << dir);
                        }
                    }
                    if dirs == 0 {
                        continue;
                    }
                } else {
                    // Clearance: straight through the air of the hole (the chord: never
                    // longer than the true path). A run of rim points is passed over where
                    // even its nearest point is reached no sooner than its farthest point
                    // already is along the other face (such a point goes nowhere new).
                    if reach >= thickness {
                        let chord = (hi2 - t2).sqrt();
                        let pb = Bbox { min: p, max: p };
                        let o = other as usize;
                        self.chunk_grid.query(&pb.grown(chord), |c| {
                            let (s, e) = self.chunks[c as usize];
                            if self.rim[s as usize].1 != ri {
                                return;
                            }
                            // The run's nearest passage, by the same sums as each point's below
                            // (no point's can come out smaller).
                            let near2 = self.chunk_box[c as usize].gap_squared(&pb) + t2;
                            if near2 > hi2 {
                                return;
                            }
                            // A run whose farthest point is within the ring's inner radius
                            // (the same sums as each point's below, which cannot exceed
                            // them) has no passage in this ring.
                            let bc = &self.chunk_box[c as usize];
                            let far_corner = [
                                (p[0] - bc.min[0]).abs().max((p[0] - bc.max[0]).abs()),
                                (p[1] - bc.min[1]).abs().max((p[1] - bc.max[1]).abs()),
                            ];
                            if self.prune.inner_runs && g::dot(far_corner, far_corner) + t2 <= lo2 {
                                return;
                            }
                            let c = c as usize;
                            if st.run_dirty[c][o] {
                                st.run_dirty[c][o] = false;
                                st.run_max[c][o] = (s..e)
                                    .map(|k| st.dist[rim0 + 2 * k as usize + o])
                                    .fold(0.0, f64::max);
                            }
                            let cost = (near2.sqrt() - 2.0 * RIM_SPACING_MM).max(0.0);
                            if d + cost >= st.run_max[c][o] {
                                return;
                            }
                            for k in s as usize..e as usize {
                                let q = self.rim[k].0;
                                let e2 = {
                                    let e = g::sub(p, q);
                                    g::dot(e, e) + t2
                                };
                                if e2 <= lo2 || e2 > hi2 {
                                    continue;
                                }
                                let nd = d + (e2.sqrt() - 2.0 * RIM_SPACING_MM).max(0.0);
                                let v = rimx0 + 2 * k + o;
                                if nd >= st.dist[v]
                                    || st.dist[rim0 + 2 * k + o] <= nd
                                    || cells.covers(o, q, nd)
                                {
                                    continue;
                                }
                                st.relax(
                                    v,
                                    nd,
                                    Pred {
                                        from: u,
                                        from_pt: p,
                                        from_layer: f,
                                        to_pt: q,
                                        to_layer: other,
                                    },
                                );
                            }
                        });
                    }
                }
            }
            if hi_ring < cap && hi_ring < most {
                st.queue
                    .rings
                    .push(Entry::new(d + hi_ring, u, (k + 1) | (dirs << 16)));
            }
        }
        found
    }

    /// The path to node `t` (settled), walked back from it to the first circuit's copper.
    fn path_to(&self, t: usize, st: &State, is_a: &[bool], is_b: &[bool]) -> MeasuredPath {
        let (n, total) = (st.n, st.dist.len());
        let mut hops = Vec::new();
        let mut v = t;
        let mut intervening = 0;
        let mut guard = 0;
        while let Some(p) = st.pred[v] {
            hops.push(p);
            v = p.from as usize;
            if v < n && !is_a[v] && !is_b[v] {
                intervening += 1;
            }
            guard += 1;
            if guard > total {
                break;
            }
        }
        hops.reverse();
        let mut path: Vec<PathPoint> = Vec::new();
        let mut between_faces = false;
        for h in &hops {
            let pf = self.point(h.from_pt, h.from_layer);
            if path.last() != Some(&pf) {
                path.push(pf);
            }
            let pt = self.point(h.to_pt, h.to_layer);
            if path.last() != Some(&pt) {
                path.push(pt);
            }
            between_faces |= h.from_layer != h.to_layer;
        }
        MeasuredPath {
            // To the micrometre: far below the tolerances already taken off.
            distance_mm: crate::spacing::tidy(st.dist[t]),
            path,
            intervening_conductors: intervening,
            between_faces,
        }
    }

    /// Where the passages of a rim point `kp` (of the rim whose points are `first..first +
    /// count`) one way along its rim (`dir` 0 forward, 1 back) leave the ring's inner part
    /// (`s * s + t2 <= lo2`): the first step `j` of the creepage passage loop that does not
    /// go on at once, and the last inner point before it (or `None`), exactly as the loop
    /// walking from `j = 0` would find them. Within the part of the rim before it wraps
    /// round (`kq` from `kp` to the rim's end forward, or to its start back) the loop's `s`
    /// is `rim_at[kq] - at` (or `at - rim_at[kq]`) with no length added (`rim_at` does not
    /// fall along a rim), so it does not fall with `j`, and neither does the loop's test
    /// for going on (`s > length / 2 + 1e-9` stops the loop, `s * s + t2 <= lo2` goes on):
    /// the first step that does not go on is found by halving, with the same sums. Where
    /// every step of that part goes on, the loop goes on from the wrap as before.
    #[allow(clippy::too_many_arguments)]
    fn inner_part(
        &self,
        dir: u32,
        kp: usize,
        first: usize,
        count: usize,
        at: f64,
        length: f64,
        t2: f64,
        lo2: f64,
    ) -> (usize, Option<(usize, f64)>) {
        // Steps `0..=m` do not wrap.
        let m = if dir == 0 {
            first + count - 1 - kp
        } else {
            kp - first
        };
        let along = |j: usize| -> (usize, f64) {
            if dir == 0 {
                (kp + j, self.rim_at[kp + j] - at)
            } else {
                (kp - j, at - self.rim_at[kp - j])
            }
        };
        let goes_on = |j: usize| {
            let s = along(j).1;
            !(s < 0.0 || s > length / 2.0 + 1e-9) && s * s + t2 <= lo2
        };
        // The first step in `0..=m` that does not go on, or `m + 1`.
        let (mut lo, mut hi) = (0usize, m + 1);
        while lo < hi {
            let mid = lo + (hi - lo) / 2;
            if goes_on(mid) {
                lo = mid + 1;
            } else {
                hi = mid;
            }
        }
        (lo, lo.checked_sub(1).map(along))
    }

    fn point(&self, p: P, layer: u8) -> PathPoint {
        PathPoint {
            layer: self
                .layer_names
                .get(layer as usize)
                .cloned()
                .unwrap_or_default(),
            x_mm: crate::spacing::tidy(p[0]),
            y_mm: crate::spacing::tidy(p[1]),
        }
    }

    /// The net names of the copper a search sees, for the report.
    pub fn layer_names(&self) -> &[String] {
        &self.layer_names
    }

    /// Per net, the conductors carrying it (for the report's list of unassigned nets).
    pub fn conductors_per_net(&self) -> BTreeMap<String, usize> {
        let mut m = BTreeMap::new();
        for c in &self.board.conductors {
            if let Net::Named(n) = &c.net {
                *m.entry(n.clone()).or_insert(0) += 1;
            }
        }
        m
    }
}

/// State of one search: tentative distances, how each node was reached, the queue.
struct State<'a> {
    dist: Vec<f64>,
    pred: Vec<Option<Pred>>,
    queue: Queue,
    /// The largest of the pending targets' `best_of`: hops that would end beyond it are
    /// not taken (see the module comment on shared searches).
    best: f64,
    /// Per target, the shortest distance to its copper found so far.
    best_of: Vec<f64>,
    /// The targets whose copper is not yet taken from the queue, a bit each.
    pending: u32,
    n: usize,
    /// Each conductor's targets, a bit each.
    target_mask: &'a [u32],
    /// Rim points reached along a face: each run's largest distance per face (an upper
    /// bound, infinite until known), and whether a distance in it fell since.
    rim0: usize,
    rimx0: usize,
    rim_chunk: &'a [u32],
    run_max: Vec<[f64; 2]>,
    run_dirty: Vec<[bool; 2]>,
}

impl State<'_> {
    fn relax(&mut self, v: usize, nd: f64, p: Pred) {
        if nd < self.dist[v] {
            let old = self.dist[v];
            self.dist[v] = nd;
            self.pred[v] = Some(p);
            self.queue.set(v as u32, nd);
            if v >= self.rim0 && v < self.rimx0 {
                // A run's largest distance changes only when it was this point's.
                let (c, f) = (
                    self.rim_chunk[(v - self.rim0) / 2] as usize,
                    (v - self.rim0) % 2,
                );
                if old >= self.run_max[c][f] {
                    self.run_dirty[c][f] = true;
                }
            }
            if v < self.n && self.target_mask[v] & self.pending != 0 {
                let mut lowered = false;
                let mut of = self.target_mask[v] & self.pending;
                while of != 0 {
                    let t = of.trailing_zeros() as usize;
                    of &= of - 1;
                    if nd < self.best_of[t] {
                        self.best_of[t] = nd;
                        lowered = true;
                    }
                }
                if lowered {
                    self.best = self.largest_best();
                }
            }
        }
    }

    /// The largest of the pending targets' best distances found so far.
    fn largest_best(&self) -> f64 {
        let mut pending = self.pending;
        let mut largest = f64::NEG_INFINITY;
        while pending != 0 {
            let t = pending.trailing_zeros() as usize;
            pending &= pending - 1;
            largest = largest.max(self.best_of[t]);
        }
        largest
    }
}

/// Decides without a `hypot` what the exact test after it would (`w = g::dist(p, q)` not
/// in the ring `(lo, hi]`, or `d + w >= reached`) where it is sure: the root of the sum of
/// squares is within a few units in the last place of `hypot`, far inside the relative
/// margin `SURE_RATIO`. The points it leaves are decided by the exact test as before.
fn surely_no_hop(p: P, q: P, lo: f64, hi: f64, d: f64, reached: f64) -> bool {
    let e = g::sub(p, q);
    let w2 = g::dot(e, e);
    (lo >= 0.0 && w2 < lo * lo * (1.0 - SURE_RATIO))
        || w2 > hi * hi * (1.0 + SURE_RATIO)
        || d + w2.sqrt() * (1.0 - SURE_RATIO) >= reached
}

/// See `surely_no_hop`.
const SURE_RATIO: f64 = 1e-12;

/// The search's queue: one entry per node reached and not yet taken, lowered in place
/// when the node's distance falls (a binary heap that knows each node's place), and a
/// heap of the rings of hops still to open. Both order as `Entry` does and no two entries
/// are equal (a node's own entry has ring 0, a ring's entry more), so taking the greater
/// of the two fronts gives the entries in the order one heap holding both would, less
/// the stale entries a heap without lowering would hold and pass over.
struct Queue {
    /// Greatest `Entry` (smallest key) first; children of `i` at `2i + 1` and `2i + 2`.
    nodes: Vec<Entry>,
    /// Each node's index in `nodes`, `NOT_QUEUED` where it has none.
    place: Vec<u32>,
    rings: BinaryHeap<Entry>,
}

const NOT_QUEUED: u32 = u32::MAX;

impl Queue {
    fn new(nodes: usize) -> Queue {
        Queue {
            nodes: Vec::new(),
            place: vec![NOT_QUEUED; nodes],
            rings: BinaryHeap::new(),
        }
    }

    /// Queues `node` at `key`, or lowers its queued key to `key`.
    fn set(&mut self, node: u32, key: f64) {
        let entry = Entry::new(key, node, 0);
        let i = match self.place[node as usize] {
            NOT_QUEUED => {
                self.nodes.push(entry);
                self.nodes.len() - 1
            }
            i => {
                debug_assert!(entry >= self.nodes[i as usize], "a queued key only falls");
                self.nodes[i as usize] = entry;
                i as usize
            }
        };
        self.sift_up(i);
    }

    fn pop(&mut self) -> Option<Entry> {
        let node_first = match (self.nodes.first(), self.rings.peek()) {
            (Some(a), Some(b)) => a > b,
            (Some(_), None) => true,
            (None, _) => false,
        };
        if !node_first {
            return self.rings.pop();
        }
        let last = self.nodes.pop()?;
        let top = match self.nodes.first_mut() {
            Some(first) => {
                let top = std::mem::replace(first, last);
                self.sift_down(0);
                top
            }
            None => last,
        };
        self.place[Queue::node(top)] = NOT_QUEUED;
        Some(top)
    }

    fn node(entry: Entry) -> usize {
        (entry.id >> 32) as usize
    }

    fn put(&mut self, i: usize, entry: Entry) {
        self.nodes[i] = entry;
        self.place[Queue::node(entry)] = i as u32;
    }

    fn sift_up(&mut self, mut i: usize) {
        let entry = self.nodes[i];
        while i > 0 {
            let parent = (i - 1) / 2;
            if self.nodes[parent] >= entry {
                break;
            }
            self.put(i, self.nodes[parent]);
            i = parent;
        }
        self.put(i, entry);
    }

    fn sift_down(&mut self, mut i: usize) {
        let entry = self.nodes[i];
        let n = self.nodes.len();
        loop {
            let left = 2 * i + 1;
            if left >= n {
                break;
            }
            let right = left + 1;
            let child = if right < n && self.nodes[right] > self.nodes[left] {
                right
            } else {
                left
            };
            if self.nodes[child] <= entry {
                break;
            }
            self.put(i, self.nodes[child]);
            i = child;
        }
        self.put(i, entry);
    }
}

/// The outer radius of hop ring `k` (ring 1 holds hops from 0 up to `FIRST_RING_MM`).
fn ring_mm(k: u32) -> f64 {
    if k == 0 {
        0.0
    } else {
        FIRST_RING_MM * (1u64 << (k - 1).min(60)) as f64
    }
}

/// `Cells::sides` of a cell that no obstacle edge meets.
const OPEN: u32 = 0;
/// `Cells::sides` of a cell whose part on the surface may not be convex.
const SHUT: u32 = u32::MAX;
/// `Cells::sides` of a cell that no hop passes through (inside a convex cut-out, away
/// from its edges; see `Cells::mark_void`).
const VOID: u32 = u32::MAX - 1;
/// A cell within this of a cut-out's edges is not `VOID`: more than twice `ON_EDGE_MM`
/// (how far inside a cut-out a hop that `Obstacles::visible` lets through may pass).
const VOID_MARGIN_MM: f64 = 1e-6;

/// A coarse map of the board for one search: per searched layer and cell, a distance
/// within which settled copper (or a corner) reaches the cell's centre: copper touching
/// the cell gives its own distance plus half the cell's diagonal, and each value spreads
/// to the four neighbours at one cell's width more (a walk between centres). For
/// creepage, the cells an obstacle's edge meets hold no value (two points in such a cell
/// may not see each other); where the cell's part on the surface is convex (one edge
/// across it, or two meeting at a corner that is convex on the surface's side), its
/// points are reached from a neighbour's centre instead (`Cells::through_side`). About
/// as many cells as outline segments, times four: memory linear in the board.
#[derive(Clone)]
struct Cells {
    origin: P,
    h: f64,
    /// Half the cell's diagonal: from its centre to any point of it.
    half: f64,
    /// Added to a cell's value for any point of it: half the diagonal and the tolerances
    /// a hop may take off at either end.
    slack: f64,
    /// Added to a side neighbour's value for any point of a cell an edge meets: from the
    /// neighbour's centre to the cell's far corners (1.58 cells), and the tolerances.
    side_slack: f64,
    nx: usize,
    ny: usize,
    min: Vec<Vec<f64>>,
    /// Creepage only, per cell: `OPEN`, `SHUT`, or 1 + the index in `halves` of the
    /// half-planes whose common part with the cell is the cell's part on the surface.
    sides: Vec<u32>,
    /// Two half-planes (the same one twice where one edge crosses the cell), each as a
    /// point on its border and a normal into the surface.
    halves: Vec<[(P, P); 2]>,
    /// Values not yet spread, as (value, cell, layer): those of copper and corners
    /// reached (`seeds`) and those spread from a cell to its neighbours (`spread`). Each
    /// queue is in order of value as it is filled (see `Cells::advance`), so the two are
    /// taken together in order by comparing their fronts, without a heap.
    seeds: VecDeque<(f64, u32, u32)>,
    spread: VecDeque<(f64, u32, u32)>,
}

impl Cells {
    fn new(
        all: Bbox,
        items: usize,
        layers: &[usize],
        n_layers: usize,
        obstacles: Option<&Obstacles>,
        void_cells: bool,
    ) -> Cells {
        let w = (all.max[0] - all.min[0]).max(1e-3);
        let ht = (all.max[1] - all.min[1]).max(1e-3);
        let budget = (8 * items + 1024) as f64;
        let mut h = (w * ht / items.max(1) as f64).sqrt().max(0.05) / CELL_DIVISOR;
        while (w / h).ceil() * (ht / h).ceil() > budget {
            h *= 1.25;
        }
        let nx = ((w / h).ceil() as usize).max(1);
        let ny = ((ht / h).ceil() as usize).max(1);
        let tolerances = 2.0 * CHORD_TOLERANCE_MM + 1e-9;
        let mut cells = Cells {
            origin: all.min,
            h,
            half: h * std::f64::consts::FRAC_1_SQRT_2,
            slack: h * std::f64::consts::FRAC_1_SQRT_2 + tolerances,
            side_slack: h * 2.5f64.sqrt() + tolerances,
            nx,
            ny,
            min: (0..n_layers)
                .map(|l| {
                    if layers.contains(&l) {
                        vec![f64::INFINITY; nx * ny]
                    } else {
                        Vec::new()
                    }
                })
                .collect(),
            sides: Vec::new(),
            halves: Vec::new(),
            seeds: VecDeque::new(),
            spread: VecDeque::new(),
        };
        if let Some(o) = obstacles {
            cells.mark_edges(o);
            if void_cells {
                cells.mark_void(o);
            }
        }
        cells
    }

    fn index(&self, v: f64, o: f64, n: usize) -> usize {
        g::cell_index((v - o) / self.h, n)
    }

    fn cell(&self, p: P) -> Option<usize> {
        let fx = (p[0] - self.origin[0]) / self.h;
        let fy = (p[1] - self.origin[1]) / self.h;
        if !(fx >= 0.0 && fy >= 0.0) {
            return None;
        }
        let (x, y) = (fx as usize, fy as usize);
        (x < self.nx && y < self.ny).then_some(y * self.nx + x)
    }

    fn rect(&self, x: usize, y: usize) -> Bbox {
        let lo = [
            self.origin[0] + x as f64 * self.h,
            self.origin[1] + y as f64 * self.h,
        ];
        Bbox {
            min: lo,
            max: [lo[0] + self.h, lo[1] + self.h],
        }
    }

    /// Sorts the cells by the obstacle edges that meet them (`sides`, `halves`).
    fn mark_edges(&mut self, o: &Obstacles) {
        let mut hits: Vec<(u32, u32)> = Vec::new();
        for (i, &(a, b)) in o.edges.iter().enumerate() {
            self.cells_near(a, b, |c| hits.push((c as u32, i as u32)));
        }
        hits.sort_unstable();
        hits.dedup();
        // The cell grown by a hair: an edge that ends on its border counts, so that a
        // single edge in a cell runs right across it (its neighbours do not meet it).
        hits.retain(|&(c, i)| {
            let (a, b) = o.edges[i as usize];
            let c = c as usize;
            self.rect(c % self.nx, c / self.nx)
                .grown(1e-9)
                .meets_segment(a, b)
        });
        self.sides = vec![OPEN; self.nx * self.ny];
        let side = |i: u32| (o.edges[i as usize].0, o.edge_normals[i as usize]);
        for run in hits.chunk_by(|p, q| p.0 == q.0) {
            let convex = match *run {
                [(_, i)] => Some([side(i), side(i)]),
                [(_, i), (_, j)] => {
                    let (e, f) = (o.edges[i as usize], o.edges[j as usize]);
                    let (first, second) = if e.1 == f.0 { (i, j) } else { (j, i) };
                    let (a, v) = o.edges[first as usize];
                    let (w, b) = o.edges[second as usize];
                    // Consecutive edges, each on the surface's side of the other.
                    (v == w && a != b && in_half(b, side(first)) && in_half(a, side(second)))
                        .then(|| [side(first), side(second)])
                }
                _ => None,
            };
            self.sides[run[0].0 as usize] = match convex {
                Some(h) => {
                    self.halves.push(h);
                    self.halves.len() as u32
                }
                None => SHUT,
            };
        }
    }

    /// Marks `VOID` the cells that lie inside a convex cut-out (walked round) and farther
    /// than `VOID_MARGIN_MM` from every obstacle edge. No hop passes through such a cell,
    /// so `dominated` need not find an `x` there (nor an edge that hides it):
    ///
    /// `Obstacles::visible` cuts a hop at the points where it touches edges; a piece
    /// between two such points crosses no edge, so it lies wholly on one side of each
    /// ring. A piece inside the cut-out `C` is let through only where its midpoint `m` is
    /// within `ON_EDGE_MM` of `C`'s edges. In a convex polygon the distance to the border
    /// is a concave function, so along the piece it is at most twice its value at `m`
    /// (for a point `t` between an end `a` and `m`, `m` lies between `t` and the other end
    /// `b`: `f(m) >= f(t) |mb| / |tb| >= f(t) / 2`). Every point of a hop inside `C` is
    /// therefore within `2 ON_EDGE_MM < VOID_MARGIN_MM` of `C`'s edges, never in a `VOID`
    /// cell. A cell that no edge comes within the margin of, with its centre inside `C`,
    /// lies wholly inside `C` (it is connected and meets no edge of `C`).
    fn mark_void(&mut self, o: &Obstacles) {
        for (ring, bb, outer) in &o.rings {
            if *outer || !is_convex(ring) {
                continue;
            }
            let x0 = self.index(bb.min[0], self.origin[0], self.nx);
            let x1 = self.index(bb.max[0], self.origin[0], self.nx);
            let y0 = self.index(bb.min[1], self.origin[1], self.ny);
            let y1 = self.index(bb.max[1], self.origin[1], self.ny);
            for y in y0..=y1 {
                for x in x0..=x1 {
                    let c = y * self.nx + x;
                    if self.sides[c] != OPEN {
                        continue;
                    }
                    let rect = self.rect(x, y);
                    let centre = [
                        (rect.min[0] + rect.max[0]) / 2.0,
                        (rect.min[1] + rect.max[1]) / 2.0,
                    ];
                    if !bb.contains(centre)
                        || !g::point_in_rings(centre, std::slice::from_ref(ring))
                    {
                        continue;
                    }
                    let near = rect.grown(VOID_MARGIN_MM);
                    let touched = o.edge_grid.query_until(&near, |k| {
                        let (a, b) = o.edges[k as usize];
                        near.meets_segment(a, b)
                    });
                    if !touched {
                        self.sides[c] = VOID;
                    }
                }
            }
        }
    }

    /// Calls `visit` with every cell the segment may meet (each at most once per call
    /// for short segments; long ones may repeat).
    fn cells_near(&self, a: P, b: P, mut visit: impl FnMut(usize)) {
        let bb = Bbox::around([a, b]);
        let (x0, x1) = (
            self.index(bb.min[0], self.origin[0], self.nx),
            self.index(bb.max[0], self.origin[0], self.nx),
        );
        let (y0, y1) = (
            self.index(bb.min[1], self.origin[1], self.ny),
            self.index(bb.max[1], self.origin[1], self.ny),
        );
        if (x1 - x0 + 1) * (y1 - y0 + 1) <= 64 {
            for y in y0..=y1 {
                for x in x0..=x1 {
                    visit(y * self.nx + x);
                }
            }
            return;
        }
        // Points half a cell apart: the segment is within a quarter cell of one of them,
        // so every cell it meets is that point's cell or a neighbour of it.
        let steps = (g::dist(a, b) / (0.5 * self.h)).ceil().max(1.0) as usize;
        for i in 0..=steps {
            let p = g::add(a, g::scale(g::sub(b, a), i as f64 / steps as f64));
            let cx = self.index(p[0], self.origin[0], self.nx);
            let cy = self.index(p[1], self.origin[1], self.ny);
            for y in cy.saturating_sub(1)..=(cy + 1).min(self.ny - 1) {
                for x in cx.saturating_sub(1)..=(cx + 1).min(self.nx - 1) {
                    visit(y * self.nx + x);
                }
            }
        }
    }

    /// A distance within which settled copper reaches every point on the surface of cell
    /// `(x, y)`, an edge's cell whose part on the surface is the common part of `halves`:
    /// through the centre of a side neighbour that no edge meets and that lies in both
    /// half-planes. The straight way from that centre to such a point stays in the two
    /// cells and on the surface's side of both half-planes, where the only edges are
    /// their borders: it is on the surface.
    fn through_side(&self, min: &[f64], x: usize, y: usize, halves: &[(P, P); 2]) -> f64 {
        let mut best = f64::INFINITY;
        let mut try_cell = |nx: usize, ny: usize| {
            let n = ny * self.nx + nx;
            if self.sides[n] != OPEN || min[n] + self.side_slack >= best {
                return;
            }
            let centre = [
                self.origin[0] + (nx as f64 + 0.5) * self.h,
                self.origin[1] + (ny as f64 + 0.5) * self.h,
            ];
            if in_half(centre, halves[0]) && in_half(centre, halves[1]) {
                best = min[n] + self.side_slack;
            }
        };
        if x > 0 {
            try_cell(x - 1, y);
        }
        if x + 1 < self.nx {
            try_cell(x + 1, y);
        }
        if y > 0 {
            try_cell(x, y - 1);
        }
        if y + 1 < self.ny {
            try_cell(x, y + 1);
        }
        best
    }

    /// Lowers the cell's value to `v` and queues it, on `seeds` (a conductor or corner
    /// reached) or on `spread` (from a neighbour).
    fn set(&mut self, l: usize, c: usize, v: f64, seed: bool) {
        if self.sides.get(c).is_some_and(|&k| k != OPEN) {
            return;
        }
        if let Some(m) = self.min.get_mut(l).and_then(|m| m.get_mut(c))
            && v < *m
        {
            *m = v;
            let queue = if seed {
                &mut self.seeds
            } else {
                &mut self.spread
            };
            debug_assert!(queue.back().is_none_or(|b| b.0 <= v), "queue out of order");
            queue.push_back((v, c as u32, l as u32));
        }
    }

    fn register(&mut self, l: usize, p: P, d: f64) {
        if let Some(c) = self.cell(p) {
            self.set(l, c, d + self.half, true);
        }
    }

    /// Spreads every value up to `until` to the neighbouring cells, in order of value (a
    /// Dijkstra search over the cells). Each queue is filled in order: a seed is the
    /// search's current key plus half a cell, and the search's keys never fall; a spread
    /// value is a taken value plus one cell, and values are taken in order. So the smaller
    /// of the two fronts is the smallest value queued. (Equal values may come in another
    /// order than a heap's; the values left after taking every one up to `until` do not
    /// depend on it.)
    fn advance(&mut self, until: f64) {
        loop {
            let (seed, spread) = (self.seeds.front().copied(), self.spread.front().copied());
            let ((v, c, l), from_seeds) = match (seed, spread) {
                (Some(a), Some(b)) if b.0 < a.0 => (b, false),
                (Some(a), _) => (a, true),
                (None, Some(b)) => (b, false),
                (None, None) => break,
            };
            if v > until {
                break;
            }
            if from_seeds {
                self.seeds.pop_front();
            } else {
                self.spread.pop_front();
            }
            let (c, l) = (c as usize, l as usize);
            if v > self.min[l][c] {
                continue;
            }
            let (x, y) = (c % self.nx, c / self.nx);
            let nv = v + self.h;
            if x > 0 {
                self.set(l, c - 1, nv, false);
            }
            if x + 1 < self.nx {
                self.set(l, c + 1, nv, false);
            }
            if y > 0 {
                self.set(l, c - self.nx, nv, false);
            }
            if y + 1 < self.ny {
                self.set(l, c + self.nx, nv, false);
            }
        }
    }

    /// Every cell the thick segment (copper) touches.
    fn register_seg(&mut self, l: usize, s: &Seg, d: f64) {
        let bb = s.bbox();
        let x0 = self.index(bb.min[0], self.origin[0], self.nx);
        let x1 = self.index(bb.max[0], self.origin[0], self.nx);
        let y0 = self.index(bb.min[1], self.origin[1], self.ny);
        let y1 = self.index(bb.max[1], self.origin[1], self.ny);
        if self.min.get(l).is_none_or(|m| m.is_empty()) {
            return;
        }
        let v = d + self.half;
        for y in y0..=y1 {
            for x in x0..=x1 {
                let c = y * self.nx + x;
                if v >= self.min[l][c] {
                    continue;
                }
                let lo = [
                    self.origin[0] + x as f64 * self.h,
                    self.origin[1] + y as f64 * self.h,
                ];
                let hi = [lo[0] + self.h, lo[1] + self.h];
                let rect = Bbox { min: lo, max: hi };
                let touches = rect.contains(s.a) || {
                    let corners = [lo, [hi[0], lo[1]], hi, [lo[0], hi[1]]];
                    (0..4).any(|i| {
                        g::segment_closest(corners[i], corners[(i + 1) % 4], s.a, s.b).0 < s.r
                    })
                };
                if touches {
                    self.set(l, c, v, true);
                }
            }
        }
    }

    /// A node at distance `d` reaches the point `q` on layer `l` no sooner than copper or
    /// a corner recorded in its cell (which goes everywhere `q` goes on that layer).
    fn covers(&self, l: usize, q: P, d: f64) -> bool {
        self.cell(q)
            .and_then(|c| self.min.get(l).and_then(|m| m.get(c)))
            .is_some_and(|m| m + self.slack <= d)
    }

    /// Every point `x` at distance `rho` from some point of a node at distance `d` (inside
    /// `bb`, which holds `a0`) lies in a cell whose points settled copper reaches within
    /// less than `d + rho` (`OPEN` cells: value plus `slack`; cells an edge meets:
    /// `through_side`), or in a cell that an obstacle's edge hides from the whole box
    /// (no hop of the node passes it). Then any hop of that node longer than `rho` passes
    /// such an `x`, which settled copper reaches sooner, and from there the hop's end
    /// sooner. (That copper is not the node itself: a hop's nearest ends are `rho` from it.)
    fn dominated(
        &self,
        l: usize,
        bb: &Bbox,
        a0: P,
        rho: f64,
        d: f64,
        obstacles: Option<&Obstacles>,
    ) -> bool {
        let Some(min) = self.min.get(l).filter(|m| !m.is_empty()) else {
            return false;
        };
        // Long edges near the node (found when first needed): the ones that can hide a
        // cell from it.
        let mut walls: Option<Vec<u32>> = None;
        let below = d + rho;
        let size = g::dist(bb.min, bb.max);
        let region = bb.grown(rho);
        let x0 = self.index(region.min[0], self.origin[0], self.nx);
        let x1 = self.index(region.max[0], self.origin[0], self.nx);
        let y0 = self.index(region.min[1], self.origin[1], self.ny);
        let y1 = self.index(region.max[1], self.origin[1], self.ny);
        let inner2 = if rho > size {
            (rho - size) * (rho - size)
        } else {
            -1.0
        };
        for y in y0..=y1 {
            // Per row, only the cells near the circle: those that may be within `rho` of the
            // box, less those wholly within `rho - size` of `a0`, each range a cell or two
            // wider than computed so that rounding cannot leave out a cell the tests below
            // would keep.
            let ylo = self.origin[1] + y as f64 * self.h;
            let yhi = ylo + self.h;
            let dy = (bb.min[1] - yhi).max(ylo - bb.max[1]).max(0.0);
            if dy * dy > rho * rho {
                continue;
            }
            let ax = (rho * rho - dy * dy).sqrt();
            let xa = self
                .index(bb.min[0] - ax, self.origin[0], self.nx)
                .saturating_sub(1)
                .max(x0);
            let xb = (self.index(bb.max[0] + ax, self.origin[0], self.nx) + 1).min(x1);
            let fy = (ylo - a0[1]).abs().max((yhi - a0[1]).abs());
            let (sa, sb) = if inner2 > fy * fy {
                let ix = (inner2 - fy * fy).sqrt();
                (
                    self.index(a0[0] - ix, self.origin[0], self.nx) + 2,
                    self.index(a0[0] + ix, self.origin[0], self.nx)
                        .saturating_sub(2),
                )
            } else {
                (1, 0)
            };
            // The cells left and right of the inner range (not every cell, filtered).
            let (left, right) = if sa <= sb {
                (xa..=xb.min(sa - 1), xa.max(sb + 1)..=xb)
            } else {
                (xa..=xb, std::ops::RangeInclusive::new(1, 0)) // nothing on the right
            };
            for x in left.chain(right) {
                let c = y * self.nx + x;
                let side = self.sides.get(c).copied().unwrap_or(OPEN);
                // A cell with no `x` (`mark_void`), or one settled copper reaches soon
                // enough, passes wherever it lies: that is tested first (most cells pass),
                // the cell's place only for the others.
                if side == VOID || (side == OPEN && min[c] + self.slack < below) {
                    continue;
                }
                let rect = self.rect(x, y);
                if rect.gap_squared(bb) > rho * rho {
                    continue;
                }
                let fx = (rect.min[0] - a0[0]).abs().max((rect.max[0] - a0[0]).abs());
                let fy = (rect.min[1] - a0[1]).abs().max((rect.max[1] - a0[1]).abs());
                if rho > size && fx * fx + fy * fy < (rho - size) * (rho - size) {
                    continue;
                }
                let reached = match side {
                    OPEN => min[c] + self.slack,
                    SHUT | VOID => f64::INFINITY,
                    k => self.through_side(min, x, y, &self.halves[k as usize - 1]),
                };
                if reached < below {
                    continue;
                }
                let Some(o) = obstacles else {
                    return false;
                };
                let walls = walls.get_or_insert_with(|| o.walls_near(&region, 2.0 * self.h));
                if !walls.iter().any(|&e| {
                    let (p, q) = o.edges[e as usize];
                    hides(p, q, bb, &rect)
                }) {
                    return false;
                }
            }
        }
        true
    }
}

/// The ring is a convex polygon: it turns one way only (or runs straight) at every
/// vertex, and once round in all (a ring that winds round twice turns one way too).
fn is_convex(ring: &[P]) -> bool {
    let n = ring.len();
    if n < 3 {
        return false;
    }
    let (mut left, mut right, mut turning) = (false, false, 0.0f64);
    for k in 0..n {
        let (a, b, c) = (ring[(k + n - 1) % n], ring[k], ring[(k + 1) % n]);
        let (u, v) = (g::sub(b, a), g::sub(c, b));
        let turn = g::cross(u, v);
        left |= turn > 0.0;
        right |= turn < 0.0;
        turning += turn.atan2(g::dot(u, v));
    }
    !(left && right) && (turning.abs() - std::f64::consts::TAU).abs() < 1e-6
}

/// The point is in the closed half-plane given as a point on its border and a normal.
fn in_half(p: P, (q, n): (P, P)) -> bool {
    g::dot(g::sub(p, q), n) >= 0.0
}

/// Every straight line from a point of box `a` to a point of box `b` properly crosses the
/// edge `p`-`q` (not at its ends): the edge's line has the boxes strictly on either side,
/// and it meets the lines between their corners (which bound all such lines) well inside
/// the edge.
fn hides(p: P, q: P, a: &Bbox, b: &Bbox) -> bool {
    let dir = g::sub(q, p);
    let len2 = g::dot(dir, dir);
    // Distances from the edge's line, scaled by its length; a millionth of a millimetre
    // keeps clear of a line that merely touches.
    let margin = 1e-6 * len2.sqrt();
    let corners = |bb: &Bbox| {
        [
            bb.min,
            [bb.max[0], bb.min[1]],
            bb.max,
            [bb.min[0], bb.max[1]],
        ]
    };
    let side = |x: P| g::cross(dir, g::sub(x, p));
    let (ca, cb) = (corners(a), corners(b));
    let (sa, sb) = (ca.map(side), cb.map(side));
    let apart = (sa.iter().all(|&s| s > margin) && sb.iter().all(|&s| s < -margin))
        || (sa.iter().all(|&s| s < -margin) && sb.iter().all(|&s| s > margin));
    if !apart || len2 == 0.0 {
        return false;
    }
    let (mut lo, mut hi) = (f64::INFINITY, f64::NEG_INFINITY);
    for (i, &u) in ca.iter().enumerate() {
        for (j, &v) in cb.iter().enumerate() {
            let x = g::add(u, g::scale(g::sub(v, u), sa[i] / (sa[i] - sb[j])));
            let t = g::dot(g::sub(x, p), dir) / len2;
            lo = lo.min(t);
            hi = hi.max(t);
        }
    }
    lo > 1e-6 && hi < 1.0 - 1e-6
}

impl Obstacles {
    /// The chord from `p` to `q` (points on convex ring `r`, a cut-out) has its middle
    /// farther than `4 ON_EDGE_MM` inside the ring: `visible` is false for it (module
    /// comment).
    fn chord_hidden(&self, r: u32, p: P, q: P) -> bool {
        let m = g::scale(g::add(p, q), 0.5);
        let r = r as usize;
        let edges = self.ring_edges[r]..self.ring_edges[r + 1];
        let margin = 4.0 * ON_EDGE_MM;
        self.edges[edges.clone()]
            .iter()
            .zip(&self.edge_normals[edges])
            .all(|(&(a, _), &n)| {
                // The normal points out of the cut-out (to the surface), as long as
                // the edge: the depth below this edge's line, scaled by its length.
                -g::dot(g::sub(m, a), n) > margin * g::dot(n, n).sqrt()
            })
    }

    /// The edges at least `min_len` long whose boxes meet `region`.
    fn walls_near(&self, region: &Bbox, min_len: f64) -> Vec<u32> {
        let mut found = Vec::new();
        self.edge_grid.query(region, |k| {
            let (a, b) = self.edges[k as usize];
            if g::dist(a, b) >= min_len {
                found.push(k);
            }
        });
        found.sort_unstable();
        found.dedup();
        found
    }

    /// The straight segment `p`-`q` stays on the board's surface: it crosses no cut-out
    /// that is walked round and does not leave the outline (running along an edge or
    /// touching a corner is allowed).
    fn visible(&self, p: P, q: P) -> bool {
        let bb = Bbox::around([p, q]);
        // Where the segment touches edges (along it, 0 to 1), on the stack: most hops
        // touch none or two (at a rim point or corner). An edge may come more than once.
        let mut ts = [0.0f64; 34];
        let mut n = 1;
        let mut spilled: Vec<f64> = Vec::new();
        let blocked = self.edge_grid.query_until(&bb, |k| {
            let (a, b) = self.edges[k as usize];
            match g::segment_meet(p, q, a, b) {
                Some((_, true)) => return true,
                Some((t, false)) if n < ts.len() - 1 => {
                    ts[n] = t;
                    n += 1;
                }
                Some((t, false)) => spilled.push(t),
                None => {}
            }
            false
        });
        if blocked {
            return false;
        }
        if n == 1 {
            return true;
        }
        ts[n] = 1.0;
        let ts = if spilled.is_empty() {
            &mut ts[..=n]
        } else {
            spilled.extend_from_slice(&ts[..=n]);
            &mut spilled[..]
        };
        ts.sort_by(f64::total_cmp);
        for w in ts.windows(2) {
            if w[1] - w[0] < 1e-9 {
                continue;
            }
            let m = g::add(p, g::scale(g::sub(q, p), (w[0] + w[1]) / 2.0));
            if self.strictly_blocked(m) {
                return false;
            }
        }
        true
    }

    fn strictly_blocked(&self, m: P) -> bool {
        for (r, (ring, bb, outer)) in self.rings.iter().enumerate() {
            if !*outer && !bb.contains(m) {
                continue;
            }
            let inside = g::point_in_rings(m, std::slice::from_ref(ring));
            if inside == *outer {
                continue;
            }
            // The ring's own edges within `ON_EDGE_MM` of the point, found through the grid.
            let own = self.ring_edges[r]..self.ring_edges[r + 1];
            let mut near_edge = false;
            self.edge_grid
                .query(&Bbox { min: m, max: m }.grown(ON_EDGE_MM), |k| {
                    let (a, b) = self.edges[k as usize];
                    near_edge |= own.contains(&(k as usize))
                        && g::point_seg_distance(m, &Seg { a, b, r: 0.0 }).0 < ON_EDGE_MM;
                });
            if !near_edge {
                return true;
            }
        }
        false
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn queue_entries_order_by_key_then_node_then_ring() {
        let keys = [0.0, -0.0, 1e-300, 0.25, 7.683149, 1e300, f64::INFINITY];
        for &a in &keys {
            for &b in &keys {
                let (ea, eb) = (Entry::new(a, 3, 1), Entry::new(b, 3, 1));
                // The queue pops the greatest: the smallest key first.
                assert_eq!(ea.cmp(&eb), b.total_cmp(&a), "{a} against {b}");
                assert_eq!(ea.parts().0.to_bits(), a.to_bits());
            }
        }
        assert!(Entry::new(1.0, 2, 9) > Entry::new(1.0, 3, 0));
        assert!(Entry::new(1.0, 2, 1) > Entry::new(1.0, 2, 2));
        assert_eq!(Entry::new(1.5, 7, 0x30005).parts(), (1.5, 7, 0x30005));
    }

    /// A generated board 30 by 20 mm: pads 0.3 to 0.7 mm wide on a 1 mm grid (net A left
    /// of x = 10, B right of x = 20, a few of no net between), on either face or plated
    /// through, and between the circuits a convex window and a slot walked round (X = 1)
    /// and a narrow slot bridged. `seed` varies everything.
    fn generated_board(seed: u64) -> Board {
        let mut next = g::uniform_sequence(seed);
        // The first number is passed over (the sequence the boards were first made with).
        next();
        let mut conductors = Vec::new();
        for j in 0..20 {
            for i in 0..30 {
                let (x, y) = (i as f64 + 0.5, j as f64 + 0.5);
                let net = if x < 10.0 {
                    Net::Named("A".into())
                } else if x > 20.0 {
                    Net::Named("B".into())
                } else if next() < 0.1 {
                    Net::NoConnect
                } else {
                    continue;
                };
                if next() < 0.3 {
                    continue;
                }
                let layer = match (next() * 3.0) as u32 {
                    0 => Layer::Top,
                    1 => Layer::Bottom,
                    _ => Layer::Through,
                };
                let r = 0.15 + 0.2 * next();
                let p = [x + 0.2 * (next() - 0.5), y + 0.2 * (next() - 0.5)];
                conductors.push(super::super::Conductor {
                    layer,
                    net,
                    shape: Shape::Segs(vec![Seg { a: p, b: p, r }]),
                    file: 0,
                    line: 0,
                });
            }
        }
        let stadium = |a: P, b: P, w: f64| -> Vec<P> {
            let d = g::sub(b, a);
            let angle = d[1].atan2(d[0]);
            let mut ring = Vec::new();
            for (centre, from) in [
                (b, angle - std::f64::consts::FRAC_PI_2),
                (a, angle + std::f64::consts::FRAC_PI_2),
            ] {
                for k in 0..=12 {
                    let t = from + std::f64::consts::PI * k as f64 / 12.0;
                    ring.push(g::add(centre, g::scale([t.cos(), t.sin()], w / 2.0)));
                }
            }
            ring
        };
        let cutout = |ring: Vec<P>, w: f64| super::super::CutOut {
            ring,
            width_mm: Some(w),
            file: 0,
            line: 0,
        };
        let (wx, wy) = (11.0 + 3.0 * next(), 2.0 + 8.0 * next());
        let window = vec![
            [wx, wy],
            [wx + 3.0 + next(), wy],
            [wx + 3.0, wy + 5.0 + next()],
            [wx, wy + 5.0],
        ];
        let sx = 16.0 + 3.0 * next();
        let slot_w = 1.2 + 2.0 * next();
        let (ny0, ny1) = (12.0 + 2.0 * next(), 16.0 + 3.0 * next());
        let cutouts = vec![
            cutout(window, 3.0),
            cutout(
                stadium(
                    [sx, 1.0 + 3.0 * next()],
                    [sx + 2.0 * (next() - 0.5), 9.0 + 6.0 * next()],
                    slot_w,
                ),
                slot_w,
            ),
            cutout(stadium([15.0, ny0], [15.5, ny1], 0.6), 0.6),
        ];
        Board {
            files: Vec::new(),
            thickness_mm: 1.6,
            conductors,
            cutouts,
            outline: vec![[-0.5, -0.5], [30.5, -0.5], [30.5, 20.5], [-0.5, 20.5]],
            nets: ["A", "B"].iter().map(|n| n.to_string()).collect(),
            unknown_net_objects: 0,
        }
    }

    #[test]
    fn cells_inside_a_convex_cut_out_change_no_measurement() {
        let (a, b) = (vec!["A".to_string()], vec!["B".to_string()]);
        let mut void_cells_seen = 0;
        for seed in 0..16 {
            let board = generated_board(seed);
            let mut index = Index::new(&board);
            let (o, _, _) = index.obstacles(1.0);
            let all = Bbox::around(board.outline.iter().copied());
            let cells = Cells::new(all, index.segs.len(), &[0, 1], 2, Some(&o), true);
            void_cells_seen += cells.sides.iter().filter(|&&k| k == VOID).count();
            let with = index.measure(&a, &b, 1.0);
            index.prune.void_cells = false;
            let without = index.measure(&a, &b, 1.0);
            assert_eq!(with, without, "seed {seed}");
        }
        // The cells are fine enough for the window and the wide slot to hold some.
        assert!(void_cells_seen > 16, "{void_cells_seen} cells marked");
    }

    #[test]
    fn passing_over_runs_inside_a_ring_changes_no_measurement() {
        let (a, b) = (vec!["A".to_string()], vec!["B".to_string()]);
        for seed in 100..116 {
            let board = generated_board(seed);
            let mut index = Index::new(&board);
            let with = index.measure(&a, &b, 1.0);
            index.prune.inner_runs = false;
            let without = index.measure(&a, &b, 1.0);
            assert_eq!(with, without, "seed {seed}");
        }
    }

    /// The first circuit on the top face only, the second on the bottom: every path
    /// passes down a rim, by way of the cut-outs' corners.
    fn on_opposite_faces(board: &mut Board) {
        for c in &mut board.conductors {
            match &c.net {
                Net::Named(n) if n == "A" => c.layer = Layer::Top,
                Net::Named(_) => c.layer = Layer::Bottom,
                // No plated floating copper to pass between the faces either.
                _ => c.layer = Layer::Top,
            }
        }
    }

    #[test]
    fn corner_hops_run_by_run_change_no_measurement() {
        let (a, b) = (vec!["A".to_string()], vec!["B".to_string()]);
        let mut between_faces = 0;
        for seed in 200..216 {
            let mut board = generated_board(seed);
            if seed % 2 == 0 {
                on_opposite_faces(&mut board);
            }
            let mut index = Index::new(&board);
            let with = index.measure(&a, &b, 1.0);
            index.prune.corner_runs = false;
            let without = index.measure(&a, &b, 1.0);
            assert_eq!(with, without, "seed {seed}");
            let (o, _, _) = index.obstacles(1.0);
            assert!(!o.corners.is_empty(), "seed {seed}: corners to hop from");
            between_faces += with.creepage.is_some_and(|c| c.between_faces) as usize;
        }
        // Half the boards' paths pass down a rim, so rim points matter to the figures.
        assert!(between_faces >= 8, "{between_faces}");
    }

    #[test]
    fn a_chord_known_hidden_is_not_visible_and_changes_no_measurement() {
        let (a, b) = (vec!["A".to_string()], vec!["B".to_string()]);
        let mut hidden = 0;
        for seed in 300..316 {
            let mut board = generated_board(seed);
            if seed % 2 == 0 {
                on_opposite_faces(&mut board);
            }
            let mut index = Index::new(&board);
            // The claim itself: every corner against every point of its own convex rim.
            let (o, _, _) = index.obstacles(1.0);
            for (k, &p) in o.corners.iter().enumerate() {
                let r = o.corner_ring[k];
                for (q, ri) in &index.rim {
                    if o.convex_rim_ring[*ri as usize] == Some(r) && o.chord_hidden(r, p, *q) {
                        hidden += 1;
                        assert!(!o.visible(p, *q), "seed {seed}: {p:?} {q:?}");
                    }
                }
            }
            let with = index.measure(&a, &b, 1.0);
            index.prune.own_chords = false;
            let without = index.measure(&a, &b, 1.0);
            assert_eq!(with, without, "seed {seed}");
        }
        assert!(hidden > 10_000, "{hidden}");
    }

    /// The creepage passage loop's first steps, walked one by one as the loop did before
    /// `Index::inner_part`: where the ring's inner part ends, and its last point.
    fn inner_part_walked(
        index: &Index,
        dir: u32,
        kp: usize,
        (first, count): (usize, usize),
        (at, length, t2, lo2): (f64, f64, f64, f64),
    ) -> (usize, Option<(usize, f64)>) {
        let mut last_inner = None;
        for j in 0..count {
            let kq = if dir == 0 {
                first + (kp - first + j) % count
            } else {
                first + (kp - first + count - j) % count
            };
            let mut s = if dir == 0 {
                index.rim_at[kq] - at
            } else {
                at - index.rim_at[kq]
            };
            if s < 0.0 {
                s += length;
            }
            if s > length / 2.0 + 1e-9 || s * s + t2 > lo2 {
                return (j, last_inner);
            }
            last_inner = Some((kq, s));
        }
        (count, last_inner)
    }

    #[test]
    fn the_inner_part_found_by_halving_is_the_one_walked() {
        let mut compared = 0;
        let mut past_the_start = 0;
        for seed in 400..404 {
            let board = generated_board(seed);
            let index = Index::new(&board);
            let t2 = board.thickness_mm * board.thickness_mm;
            for ri in 0..index.rim_length.len() {
                let first = index.rim_first[ri] as usize;
                let count = index.rim_first[ri + 1] as usize - first;
                let length = index.rim_length[ri];
                // Every ring a passage opens, from every fifth point, both ways.
                for kp in (first..first + count).step_by(5) {
                    let at = index.rim_at[kp];
                    for k in 1..8 {
                        let lo = if k == 1 { -1.0 } else { ring_mm(k - 1) };
                        let lo2 = if lo + 2.0 * RIM_SPACING_MM > 0.0 {
                            (lo + 2.0 * RIM_SPACING_MM).powi(2)
                        } else {
                            -1.0
                        };
                        for dir in 0..2 {
                            let walked = inner_part_walked(
                                &index,
                                dir,
                                kp,
                                (first, count),
                                (at, length, t2, lo2),
                            );
                            let found =
                                index.inner_part(dir, kp, first, count, at, length, t2, lo2);
                            // Where the walk stops inside the part before the wrap, the two
                            // agree exactly; past it, the loop goes on from the wrap.
                            let m = if dir == 0 {
                                first + count - 1 - kp
                            } else {
                                kp - first
                            };
                            if walked.0 <= m {
                                assert_eq!(found, walked, "rim {ri} point {kp} ring {k} dir {dir}");
                            } else {
                                assert_eq!(found.0, m + 1, "rim {ri} point {kp} ring {k}");
                                assert!(walked.0 >= found.0);
                            }
                            past_the_start += (found.0 > 0) as usize;
                            compared += 1;
                        }
                    }
                }
            }
        }
        assert!(compared > 30_000, "{compared}");
        assert!(
            past_the_start > compared / 2,
            "{past_the_start} of {compared}"
        );
    }

    /// The generated board's circuits split in five: `A` and `A2` (left, below and above
    /// y = 10), `B` and `B2` (right, likewise), and `M`, every other floating pad in the gap.
    fn five_circuits(board: &mut Board) {
        let mut floating = 0;
        for c in &mut board.conductors {
            let y = match &c.shape {
                Shape::Segs(s) => s[0].a[1],
                _ => 0.0,
            };
            let upper = if y > 10.0 { "2" } else { "" };
            c.net = match &c.net {
                Net::Named(n) => Net::Named(format!("{n}{upper}")),
                _ => {
                    floating += 1;
                    if floating % 2 == 0 {
                        Net::Named("M".into())
                    } else {
                        Net::NoConnect
                    }
                }
            };
        }
        board.nets = ["A", "A2", "B", "B2", "M"]
            .iter()
            .map(|n| n.to_string())
            .collect();
    }

    #[test]
    fn barriers_sharing_a_first_circuit_measure_as_each_alone() {
        let nets =
            |names: &[&str]| -> Vec<String> { names.iter().map(|n| n.to_string()).collect() };
        let sets = [
            nets(&["A"]),
            nets(&["A2"]),
            nets(&["B"]),
            nets(&["B2"]),
            nets(&["M"]),
            nets(&["B", "B2"]),
            nets(&["nowhere"]),
        ];
        let mut shared = 0;
        for seed in 600..606 {
            let mut board = generated_board(seed);
            if seed % 3 == 0 {
                on_opposite_faces(&mut board);
            }
            five_circuits(&mut board);
            // Every ordered pair of different sets, so that most first circuits have
            // several second circuits, near and far, among them ones the path to another
            // crosses; on one board the same barrier 40 times (two searches of at most
            // MAX_TARGETS second circuits).
            let mut barriers: Vec<(&[String], &[String])> = Vec::new();
            for a in &sets {
                for b in &sets {
                    if a != b {
                        barriers.push((a, b));
                    }
                }
            }
            if seed == 600 {
                barriers.extend(std::iter::repeat_n((&sets[0][..], &sets[2][..]), 40));
            }
            let together = Index::new(&board).measure_all(&barriers, 1.0);
            let index = Index::new(&board);
            let mut alone = HashMap::new();
            for ((a, b), m) in barriers.iter().zip(&together) {
                let own = alone
                    .entry((a.to_vec(), b.to_vec()))
                    .or_insert_with(|| index.measure(a, b, 1.0));
                assert_eq!(m, own, "seed {seed}: {a:?} to {b:?}");
                shared += usize::from(m.clearance.is_some());
            }
        }
        assert!(shared > 6 * 25 + 40, "{shared} barriers measured");
    }

    #[test]
    fn a_kept_preparation_changes_no_measurement() {
        let (a, b) = (vec!["A".to_string()], vec!["B".to_string()]);
        for seed in 500..508 {
            let mut board = generated_board(seed);
            if seed % 2 == 0 {
                on_opposite_faces(&mut board);
            }
            // One index measures the barrier both ways (the second time with what it kept
            // from the first), a fresh one the second way only.
            let kept = Index::new(&board);
            let _ = kept.measure(&a, &b, 1.0);
            let again = kept.measure(&b, &a, 1.0);
            assert_eq!(kept.prepared.lock().map(|p| p.len()).unwrap_or(0), 1);
            let fresh = Index::new(&board).measure(&b, &a, 1.0);
            assert_eq!(again, fresh, "seed {seed}");
            assert!(fresh.creepage.is_some(), "seed {seed}");
            // Another groove width is prepared apart.
            let _ = kept.measure(&a, &b, 2.5);
            assert_eq!(kept.prepared.lock().map(|p| p.len()).unwrap_or(0), 2);
            assert_eq!(
                kept.measure(&a, &b, 2.5),
                Index::new(&board).measure(&a, &b, 2.5),
                "seed {seed}"
            );
        }
    }

    #[test]
    fn a_hop_passed_over_without_its_root_fails_the_exact_test_too() {
        let mut next = g::uniform_sequence(7);
        let mut passed_over = 0;
        for i in 0..200_000 {
            let k = (next() * 7.0) as u32;
            let (lo, hi) = (
                if k == 0 { -1.0 } else { ring_mm(k - 1) },
                ring_mm(k.max(1)),
            );
            let p = [400.0 * next() - 200.0, 400.0 * next() - 200.0];
            // Lengths right at the ring's bounds half the time, anywhere otherwise.
            let length = match i % 4 {
                0 => lo.max(0.0),
                1 => hi,
                _ => 2.0 * hi * next(),
            };
            let angle = std::f64::consts::TAU * next();
            let q = g::add(p, g::scale([angle.cos(), angle.sin()], length));
            let d = 30.0 * next();
            let w = g::dist(p, q);
            let reached = if i % 3 == 0 {
                d + w
            } else {
                d + 2.0 * hi * next()
            };
            if surely_no_hop(p, q, lo, hi, d, reached) {
                passed_over += 1;
                assert!(
                    !(w > lo && w <= hi) || d + w >= reached,
                    "{p:?} {q:?} {lo} {hi}"
                );
            }
        }
        assert!(passed_over > 50_000, "{passed_over}");
    }

    #[test]
    fn the_queue_gives_the_entries_a_heap_with_stale_entries_would() {
        let mut next = g::uniform_sequence(11);
        let nodes = 300;
        let mut queue = Queue::new(nodes);
        let mut heap = BinaryHeap::new();
        let mut dist = vec![f64::INFINITY; nodes];
        let mut now = 0.0;
        let mut taken = 0;
        for step in 0..20_000 {
            if step % 3 != 0 {
                // Keys on a coarse grid, so that equal keys come often.
                let v = (next() * nodes as f64) as usize;
                let key = now + (next() * 8.0).floor() * 0.25;
                if next() < 0.8 {
                    if key < dist[v] {
                        dist[v] = key;
                        queue.set(v as u32, key);
                        heap.push(Entry::new(key, v as u32, 0));
                    }
                } else {
                    let ring = Entry::new(key, v as u32, 1 + (next() * 4.0) as u32);
                    queue.rings.push(ring);
                    heap.push(ring);
                }
                continue;
            }
            let expected = loop {
                match heap.pop() {
                    Some(e) => {
                        let (key, v, aux) = e.parts();
                        if aux == 0 && key > dist[v as usize] {
                            continue;
                        }
                        break Some(e);
                    }
                    None => break None,
                }
            };
            let got = queue.pop();
            assert!(got == expected, "step {step}");
            if let Some(e) = got {
                let (key, v, aux) = e.parts();
                now = key;
                if aux == 0 {
                    // Taken: a later key never lowers it again.
                    dist[v as usize] = f64::NEG_INFINITY;
                }
                taken += 1;
            }
        }
        assert!(taken > 2_000, "{taken}");
    }

    #[test]
    fn only_a_ring_that_turns_one_way_once_round_is_convex() {
        let square = vec![[0.0, 0.0], [1.0, 0.0], [1.0, 1.0], [0.0, 1.0]];
        assert!(is_convex(&square));
        let clockwise: Vec<P> = square.iter().rev().copied().collect();
        assert!(is_convex(&clockwise));
        let notched = vec![[0.0, 0.0], [1.0, 0.0], [0.5, 0.2], [1.0, 1.0], [0.0, 1.0]];
        assert!(!is_convex(&notched));
        let twice: Vec<P> = square.iter().chain(square.iter()).copied().collect();
        assert!(!is_convex(&twice));
    }
}
