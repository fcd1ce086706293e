//! Clearance and creepage between two circuits' copper: a shortest-path search (Dijkstra)
//! whose nodes are conductors (crossed at no cost: intervening copper does not insulate),
//! points on the rims of the board edge and of holes and slots (where a path passes from
//! one face to the other), and, for creepage, the corners of the cut-outs a path must go
//! round. Edge weights are gaps: straight lines through air for clearance, straight lines
//! on the surface that do not cross a cut-out of at least the groove width X for creepage,
//! and `hypot(chord, thickness)` down a rim.
//!
//! Neighbours are found through a grid over the conductors' outlines, so the work grows
//! with the copper near the gap, not with the board. Hops are limited to a reach that
//! grows until the distance found is within it, which makes the result exact: a path with
//! a longer hop is longer than the reach.
//!
//! Every figure is rounded down, never up: each gap loses twice `CHORD_TOLERANCE_MM` (arcs
//! and circles are chords that may lie that far inside the copper or the hole), and each
//! passage from one face to the other loses twice the rim's point spacing.

use std::cmp::Ordering;
use std::collections::{BTreeMap, BinaryHeap, HashMap};

use serde::Serialize;

use super::geometry::{self as g, Bbox, CHORD_TOLERANCE_MM, Grid, P, Seg};
use super::{Board, Layer, Net, Shape};

/// Spacing of the points placed along each rim (board edge, holes, slots).
pub const RIM_SPACING_MM: f64 = 0.05;
/// First reach of a hop; grown when no path is found within it.
const FIRST_REACH_MM: f64 = 4.0;
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
    rim_grid: Grid,
}

struct Obstacles {
    /// Rings; the last flag marks the board outline (whose outside is the obstacle).
    rings: Vec<(Vec<P>, Bbox, bool)>,
    edges: Vec<(P, P)>,
    edge_grid: Grid,
    corners: Vec<P>,
    corner_grid: Grid,
}

#[derive(Clone, Copy, PartialEq)]
struct Entry(f64, u32);
impl Eq for Entry {}
impl Ord for Entry {
    fn cmp(&self, o: &Self) -> Ordering {
        o.0.total_cmp(&self.0).then(o.1.cmp(&self.1))
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
        let rims = board
            .cutouts
            .iter()
            .map(|c| &c.ring)
            .chain(std::iter::once(&board.outline));
        for (ri, ring) in rims.enumerate() {
            let n = ring.len();
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
        let rim_boxes: Vec<Bbox> = rim.iter().map(|(p, _)| Bbox { min: *p, max: *p }).collect();
        let rim_grid = Grid::build(&rim_boxes, Some(1.0));

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
            rim_grid,
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

    fn obj_segs(&self, o: u32) -> std::ops::Range<usize> {
        self.obj_seg_start[o as usize] as usize..self.obj_seg_start[o as usize + 1] as usize
    }

    fn obstacles(&self, groove_width_mm: f64) -> (Obstacles, usize, usize) {
        let board = self.board;
        let mut rings = Vec::new();
        let (mut bridged, mut round) = (0, 0);
        for c in &board.cutouts {
            match c.width_mm {
                Some(w) if w >= groove_width_mm => {
                    round += 1;
                    rings.push((c.ring.clone(), Bbox::around(c.ring.iter().copied()), false));
                }
                _ => bridged += 1,
            }
        }
        rings.push((
            board.outline.clone(),
            Bbox::around(board.outline.iter().copied()),
            true,
        ));
        let mut edges = Vec::new();
        let mut corners = Vec::new();
        for (ring, _, outer) in &rings {
            let n = ring.len();
            let area_sign = g::ring_area(ring).signum();
            for k in 0..n {
                let (a, b, c) = (ring[(k + n - 1) % n], ring[k], ring[(k + 1) % n]);
                edges.push((b, c));
                let turn = g::cross(g::sub(b, a), g::sub(c, b)) * area_sign;
                // A hole's convex corners, and the outline's inward (reflex) corners, are
                // where a shortest path may bend.
                if (!outer && turn > 1e-12) || (*outer && turn < -1e-12) {
                    corners.push(b);
                }
            }
        }
        let eb: Vec<Bbox> = edges.iter().map(|(a, b)| Bbox::around([*a, *b])).collect();
        let cb: Vec<Bbox> = corners.iter().map(|p| Bbox { min: *p, max: *p }).collect();
        (
            Obstacles {
                rings,
                edge_grid: Grid::build(&eb, None),
                edges,
                corner_grid: Grid::build(&cb, Some(1.0)),
                corners,
            },
            bridged,
            round,
        )
    }

    /// Measures one barrier between the copper of nets `a` and nets `b`.
    pub fn measure(&self, a: &[String], b: &[String], groove_width_mm: f64) -> BarrierMeasurement {
        let in_set = |set: &[String]| -> Vec<bool> {
            let set: std::collections::HashSet<&str> = set.iter().map(String::as_str).collect();
            self.board
                .conductors
                .iter()
                .map(|c| matches!(&c.net, Net::Named(n) if set.contains(n.as_str())))
                .collect()
        };
        let (is_a, is_b) = (in_set(a), in_set(b));
        let (obstacles, bridged, round) = self.obstacles(groove_width_mm);
        let outer = [0usize, 1];
        let clearance = self.shortest(&outer, None, &is_a, &is_b);
        let creepage = self.shortest(&outer, Some(&obstacles), &is_a, &is_b);
        let mut inner_layers = Vec::new();
        for l in 2..self.layers.len() {
            if let Some(m) = self.shortest(&[l], None, &is_a, &is_b)
                && let (Some(from), Some(to)) = (m.path.first(), m.path.last())
            {
                inner_layers.push(InnerDistance {
                    layer: self.layer_names[l].clone(),
                    distance_mm: m.distance_mm,
                    from: from.clone(),
                    to: to.clone(),
                });
            }
        }
        BarrierMeasurement {
            clearance,
            creepage,
            inner_layers,
            groove_width_mm,
            cutouts_bridged: bridged,
            cutouts_walked_round: round,
            drawing_svg: None,
        }
    }

    /// The shortest path with hops of unlimited length: searched with a reach that grows
    /// until the distance found is within it.
    fn shortest(
        &self,
        layers: &[usize],
        obstacles: Option<&Obstacles>,
        is_a: &[bool],
        is_b: &[bool],
    ) -> Option<MeasuredPath> {
        let present = |set: &[bool]| {
            set.iter()
                .enumerate()
                .any(|(i, &x)| x && self.on_any(i as u32, layers))
        };
        if !present(is_a) || !present(is_b) {
            return None;
        }
        let all = self.layers.iter().fold(Bbox::EMPTY, |bb, (ids, _)| {
            ids.iter()
                .fold(bb, |bb, &s| bb.union(&self.seg_box[s as usize]))
        });
        let all = all.union(&Bbox::around(self.board.outline.iter().copied()));
        let most = (all.max[0] - all.min[0]).hypot(all.max[1] - all.min[1])
            + 2.0 * self.board.thickness_mm
            + 1.0;
        let mut reach = FIRST_REACH_MM;
        loop {
            match self.search(layers, obstacles, is_a, is_b, reach, f64::INFINITY) {
                Some(found) if found.distance_mm <= reach => return Some(found),
                Some(found) => {
                    // The path found is a real one: no shorter path has a step longer than
                    // it, and no step that cannot end below it needs looking at. The
                    // micrometre covers the rounding of the figure.
                    let bound = found.distance_mm + 1e-6;
                    return self.search(layers, obstacles, is_a, is_b, bound, bound);
                }
                None if reach >= most => return None,
                None => reach = (reach * 2.0).min(most),
            }
        }
    }

    fn on_any(&self, o: u32, layers: &[usize]) -> bool {
        let (l0, l1) = self.obj_layers[o as usize];
        layers.contains(&(l0 as usize)) || (l1 != NONE && layers.contains(&(l1 as usize)))
    }

    fn search(
        &self,
        layers: &[usize],
        obstacles: Option<&Obstacles>,
        is_a: &[bool],
        is_b: &[bool],
        reach: f64,
        bound: f64,
    ) -> Option<MeasuredPath> {
        let n = self.board.conductors.len();
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
        let mut dist = vec![f64::INFINITY; total];
        let mut pred: Vec<Option<Pred>> = vec![None; total];
        let mut heap = BinaryHeap::new();
        for (i, &x) in is_a.iter().enumerate() {
            if x && self.on_any(i as u32, layers) {
                dist[i] = 0.0;
                heap.push(Entry(0.0, i as u32));
            }
        }
        // Steps that cannot end within `bound` (the length of a path known to exist) are
        // not taken; the search stops at the second circuit's first copper as before.
        let mut best = bound;
        let mut target = None;
        let thickness = self.board.thickness_mm;
        // Each conductor at either end of a step may lie up to the chord tolerance nearer.
        let one = CHORD_TOLERANCE_MM;
        let tol = 2.0 * one;
        let visible = |p: P, q: P| obstacles.is_none_or(|o| o.visible(p, q));

        while let Some(Entry(d, u)) = heap.pop() {
            if d > dist[u as usize] {
                continue;
            }
            if d >= best && target.is_some() {
                break;
            }
            let ui = u as usize;
            if ui < n && is_b[ui] {
                target = Some(u);
                break;
            }
            let r = reach.min(best - d);
            if r < 0.0 {
                continue;
            }
            let mut relax =
                |v: usize, w: f64, p: Pred, dist: &mut Vec<f64>, heap: &mut BinaryHeap<Entry>| {
                    let nd = d + w.max(0.0);
                    if nd < dist[v] {
                        dist[v] = nd;
                        pred[v] = Some(p);
                        heap.push(Entry(nd, v as u32));
                        if v < n && is_b[v] && nd < best {
                            best = nd;
                        }
                    }
                };
            if ui < n {
                let (l0, l1) = self.obj_layers[ui];
                for l in [l0, l1] {
                    if l == NONE || !layers.contains(&(l as usize)) {
                        continue;
                    }
                    let (ids, grid) = &self.layers[l as usize];
                    // Small objects (pads, tracks) query the grid once round their box; large
                    // ones (pours) once per edge, so that a pour does not look at its whole box.
                    let all = self.obj_segs(u);
                    let groups: Vec<std::ops::Range<usize>> = if all.len() <= 8 {
                        vec![all]
                    } else {
                        all.map(|i| i..i + 1).collect()
                    };
                    for group in groups {
                        let gbox = group
                            .clone()
                            .fold(Bbox::EMPTY, |b, i| b.union(&self.seg_box[i]));
                        grid.query(&gbox.grown(r + tol), |k| {
                            let sj = ids[k as usize] as usize;
                            let v = self.seg_owner[sj] as usize;
                            if v == ui || dist[v] <= d || self.seg_box[sj].gap(&gbox) > r + tol {
                                return;
                            }
                            for si in group.clone() {
                                if self.seg_box[sj].gap(&self.seg_box[si]) > r + tol {
                                    continue;
                                }
                                let (gap, pu, pv) = g::seg_distance(&self.segs[si], &self.segs[sj]);
                                let w = (gap - tol).max(0.0);
                                if w > r || d + w >= dist[v] || (gap > 0.0 && !visible(pu, pv)) {
                                    continue;
                                }
                                relax(
                                    v,
                                    w,
                                    Pred {
                                        from: u,
                                        from_pt: pu,
                                        from_layer: l,
                                        to_pt: pv,
                                        to_layer: l,
                                    },
                                    &mut dist,
                                    &mut heap,
                                );
                            }
                        });
                        // Rim points and cut-out corners on this face are reached alike: the
                        // gap from this group of edges to the point, seen past the obstacles.
                        let mut reach_points =
                            |grid: &Grid, base: usize, point: &dyn Fn(usize) -> P| {
                                grid.query(&gbox.grown(r + tol), |k| {
                                    let p = point(k as usize);
                                    let v = base + 2 * k as usize + l as usize;
                                    if dist[v] <= d {
                                        return;
                                    }
                                    for si in group.clone() {
                                        let (gap, pu) = g::point_seg_distance(p, &self.segs[si]);
                                        let w = (gap - one).max(0.0);
                                        if w > r
                                            || d + w >= dist[v]
                                            || (gap > 0.0 && !visible(pu, p))
                                        {
                                            continue;
                                        }
                                        relax(
                                            v,
                                            w,
                                            Pred {
                                                from: u,
                                                from_pt: pu,
                                                from_layer: l,
                                                to_pt: p,
                                                to_layer: l,
                                            },
                                            &mut dist,
                                            &mut heap,
                                        );
                                    }
                                });
                            };
                        if l <= 1 && with_rims {
                            reach_points(&self.rim_grid, rim0, &|k| self.rim[k].0);
                        }
                        if l <= 1
                            && let Some(o) = obstacles
                        {
                            reach_points(&o.corner_grid, corner0, &|k| o.corners[k]);
                        }
                    }
                    if let Some(inside) = self.inside.get(&u) {
                        let at = self.segs[self.obj_segs(u).start].a;
                        for &v in inside {
                            if self.on_any(v, &[l as usize]) {
                                relax(
                                    v as usize,
                                    0.0,
                                    Pred {
                                        from: u,
                                        from_pt: at,
                                        from_layer: l,
                                        to_pt: at,
                                        to_layer: l,
                                    },
                                    &mut dist,
                                    &mut heap,
                                );
                            }
                        }
                    }
                }
                continue;
            }
            // A rim point or a corner, on face `f`.
            let (p, f, rim_of) = if ui < rimx0 {
                let k = (ui - rim0) / 2;
                (self.rim[k].0, ((ui - rim0) % 2) as u8, Some(self.rim[k].1))
            } else if ui < corner0 {
                let k = (ui - rimx0) / 2;
                (self.rim[k].0, ((ui - rimx0) % 2) as u8, None)
            } else {
                let k = (ui - corner0) / 2;
                (
                    obstacles.map_or([0.0, 0.0], |o| o.corners[k]),
                    ((ui - corner0) % 2) as u8,
                    None,
                )
            };
            if rim_of.is_none() && layers.contains(&(f as usize)) {
                let (ids, grid) = &self.layers[f as usize];
                let pb = Bbox { min: p, max: p };
                grid.query(&pb.grown(r + tol), |k| {
                    let sj = ids[k as usize] as usize;
                    let v = self.seg_owner[sj] as usize;
                    if dist[v] <= d {
                        return;
                    }
                    let (gap, pv) = g::point_seg_distance(p, &self.segs[sj]);
                    let w = (gap - one).max(0.0);
                    if w > r || d + w >= dist[v] || (gap > 0.0 && !visible(p, pv)) {
                        return;
                    }
                    relax(
                        v,
                        w,
                        Pred {
                            from: u,
                            from_pt: p,
                            from_layer: f,
                            to_pt: pv,
                            to_layer: f,
                        },
                        &mut dist,
                        &mut heap,
                    );
                });
                if let Some(o) = obstacles {
                    o.corner_grid.query(&pb.grown(r), |k| {
                        let q = o.corners[k as usize];
                        let v = corner0 + 2 * k as usize + f as usize;
                        let w = g::dist(p, q);
                        if v == ui || w > r || d + w >= dist[v] || !visible(p, q) {
                            return;
                        }
                        relax(
                            v,
                            w,
                            Pred {
                                from: u,
                                from_pt: p,
                                from_layer: f,
                                to_pt: q,
                                to_layer: f,
                            },
                            &mut dist,
                            &mut heap,
                        );
                    });
                    if ui >= corner0 {
                        self.rim_grid.query(&pb.grown(r), |k| {
                            let (q, _) = self.rim[k as usize];
                            let v = rim0 + 2 * k as usize + f as usize;
                            let w = g::dist(p, q);
                            if w > r || d + w >= dist[v] || !visible(p, q) {
                                return;
                            }
                            relax(
                                v,
                                w,
                                Pred {
                                    from: u,
                                    from_pt: p,
                                    from_layer: f,
                                    to_pt: q,
                                    to_layer: f,
                                },
                                &mut dist,
                                &mut heap,
                            );
                        });
                    }
                }
            }
            // Down the rim to the other face: through the hole or round the edge.
            if let Some(ri) = rim_of {
                let other = 1 - f;
                if !layers.contains(&(other as usize)) {
                    continue;
                }
                let pb = Bbox { min: p, max: p };
                let at = self.rim_at[(ui - rim0) / 2];
                let length = self.rim_length[ri as usize];
                self.rim_grid.query(&pb.grown(r), |k| {
                    let (q, rj) = self.rim[k as usize];
                    if rj != ri {
                        return;
                    }
                    let v = rimx0 + 2 * k as usize + other as usize;
                    // Clearance: straight through the air of the hole (the chord: never
                    // longer than the true path). Creepage: along the wall, unfolded.
                    let lim = r.min(dist[v] - d);
                    if lim < 0.0 {
                        return;
                    }
                    // Cheap and conservative rejection before the exact figure: the step is
                    // at least its chord and the thickness, less two spacings.
                    let chord2 = {
                        let e = g::sub(p, q);
                        g::dot(e, e)
                    };
                    let most = lim + 2.0 * RIM_SPACING_MM;
                    if chord2 + thickness * thickness > most * most * (1.0 + 1e-9) + 1e-12 {
                        return;
                    }
                    let across = if obstacles.is_some() {
                        let s = (self.rim_at[k as usize] - at).abs();
                        s.min(length - s)
                    } else {
                        g::dist(p, q)
                    };
                    // A crossing point between two rim points is at most half a spacing
                    // from one: both faces' steps and this one together are at most two
                    // spacings longer than through the true crossing points.
                    let w = (across.hypot(thickness) - 2.0 * RIM_SPACING_MM).max(0.0);
                    if w > r || d + w >= dist[v] {
                        return;
                    }
                    relax(
                        v,
                        w,
                        Pred {
                            from: u,
                            from_pt: p,
                            from_layer: f,
                            to_pt: q,
                            to_layer: other,
                        },
                        &mut dist,
                        &mut heap,
                    );
                });
            }
        }
        let t = target? as usize;
        // The path, walked back from the second circuit's copper.
        let mut hops = Vec::new();
        let mut v = t;
        let mut intervening = 0;
        let mut guard = 0;
        while let Some(p) = pred[v] {
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
        Some(MeasuredPath {
            // To the micrometre: far below the tolerances already taken off.
            distance_mm: crate::spacing::tidy(dist[t]),
            path,
            intervening_conductors: intervening,
            between_faces,
        })
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

impl Obstacles {
    /// The straight segment `p`-`q` stays on the board's surface: it crosses no cut-out
    /// that is walked round and does not leave the outline (running along an edge or
    /// touching a corner is allowed).
    fn visible(&self, p: P, q: P) -> bool {
        let bb = Bbox::around([p, q]);
        let mut ts = Vec::new();
        let mut blocked = false;
        self.edge_grid.query(&bb, |k| {
            if blocked {
                return;
            }
            let (a, b) = self.edges[k as usize];
            if let Some((t, proper)) = g::segment_meet(p, q, a, b) {
                if proper {
                    blocked = true;
                } else {
                    ts.push(t);
                }
            }
        });
        if blocked {
            return false;
        }
        if ts.is_empty() {
            return true;
        }
        ts.push(0.0);
        ts.push(1.0);
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
        for (ring, bb, outer) in &self.rings {
            if !*outer && !bb.contains(m) {
                continue;
            }
            let inside = g::point_in_rings(m, std::slice::from_ref(ring));
            if inside == *outer {
                continue;
            }
            let n = ring.len();
            let near_edge = (0..n).any(|k| {
                let s = Seg {
                    a: ring[k],
                    b: ring[(k + 1) % n],
                    r: 0.0,
                };
                g::point_seg_distance(m, &s).0 < ON_EDGE_MM
            });
            if !near_edge {
                return true;
            }
        }
        false
    }
}
