//! Plane geometry of the board measurement: thick segments (a round pad is a segment of no
//! length with a radius, a track a segment with the aperture's radius, a polygon's edges
//! segments of no radius), distances with their closest points, point-in-polygon, and a
//! uniform grid that finds the segments near a place without looking at the whole board.
//!
//! Our own code, on purpose small: every distance the report prints comes from
//! `segment_distance`, which is exact for straight segments, and the only approximation on
//! the way (arcs and circles as chords) is bounded by `CHORD_TOLERANCE_MM` and taken off
//! every gap (see `measure`).

/// A point in board coordinates, millimetres.
pub type P = [f64; 2];

/// Largest distance between an arc and the chords that stand for it.
pub const CHORD_TOLERANCE_MM: f64 = 0.002;

pub fn sub(a: P, b: P) -> P {
    [a[0] - b[0], a[1] - b[1]]
}
pub fn add(a: P, b: P) -> P {
    [a[0] + b[0], a[1] + b[1]]
}
pub fn scale(a: P, k: f64) -> P {
    [a[0] * k, a[1] * k]
}
pub fn dot(a: P, b: P) -> f64 {
    a[0] * b[0] + a[1] * b[1]
}
pub fn cross(a: P, b: P) -> f64 {
    a[0] * b[1] - a[1] * b[0]
}
pub fn dist(a: P, b: P) -> f64 {
    (a[0] - b[0]).hypot(a[1] - b[1])
}

/// A straight segment with a radius: the set of points within `r` of the segment `a`-`b`.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Seg {
    pub a: P,
    pub b: P,
    pub r: f64,
}

impl Seg {
    pub fn bbox(&self) -> Bbox {
        Bbox {
            min: [
                self.a[0].min(self.b[0]) - self.r,
                self.a[1].min(self.b[1]) - self.r,
            ],
            max: [
                self.a[0].max(self.b[0]) + self.r,
                self.a[1].max(self.b[1]) + self.r,
            ],
        }
    }
}

/// An axis-aligned box.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Bbox {
    pub min: P,
    pub max: P,
}

impl Bbox {
    pub const EMPTY: Bbox = Bbox {
        min: [f64::INFINITY, f64::INFINITY],
        max: [f64::NEG_INFINITY, f64::NEG_INFINITY],
    };
    pub fn around(points: impl IntoIterator<Item = P>) -> Bbox {
        let mut b = Bbox::EMPTY;
        for p in points {
            b.include(p);
        }
        b
    }
    pub fn include(&mut self, p: P) {
        self.min = [self.min[0].min(p[0]), self.min[1].min(p[1])];
        self.max = [self.max[0].max(p[0]), self.max[1].max(p[1])];
    }
    pub fn union(&self, o: &Bbox) -> Bbox {
        Bbox {
            min: [self.min[0].min(o.min[0]), self.min[1].min(o.min[1])],
            max: [self.max[0].max(o.max[0]), self.max[1].max(o.max[1])],
        }
    }
    pub fn grown(&self, by: f64) -> Bbox {
        Bbox {
            min: [self.min[0] - by, self.min[1] - by],
            max: [self.max[0] + by, self.max[1] + by],
        }
    }
    /// Distance between two boxes (0 when they overlap): a lower bound of the distance
    /// between anything inside them.
    pub fn gap(&self, o: &Bbox) -> f64 {
        let (dx, dy) = self.axis_gaps(o);
        dx.hypot(dy)
    }

    /// The square of [`Bbox::gap`], without its root (for comparisons on hot paths).
    pub fn gap_squared(&self, o: &Bbox) -> f64 {
        let (dx, dy) = self.axis_gaps(o);
        dx * dx + dy * dy
    }

    /// The gaps between the boxes along x and along y (0 where they overlap).
    fn axis_gaps(&self, o: &Bbox) -> (f64, f64) {
        let dx = (o.min[0] - self.max[0])
            .max(self.min[0] - o.max[0])
            .max(0.0);
        let dy = (o.min[1] - self.max[1])
            .max(self.min[1] - o.max[1])
            .max(0.0);
        (dx, dy)
    }
    /// The segment `a`-`b` has a point in the box (its border included).
    pub fn meets_segment(&self, a: P, b: P) -> bool {
        let d = sub(b, a);
        let (mut t0, mut t1) = (0.0f64, 1.0f64);
        for k in 0..2 {
            if d[k] == 0.0 {
                if a[k] < self.min[k] || a[k] > self.max[k] {
                    return false;
                }
                continue;
            }
            let (u, v) = ((self.min[k] - a[k]) / d[k], (self.max[k] - a[k]) / d[k]);
            t0 = t0.max(u.min(v));
            t1 = t1.min(u.max(v));
            if t0 > t1 {
                return false;
            }
        }
        true
    }
    pub fn contains(&self, p: P) -> bool {
        p[0] >= self.min[0] && p[0] <= self.max[0] && p[1] >= self.min[1] && p[1] <= self.max[1]
    }
    pub fn is_empty(&self) -> bool {
        !(self.min[0] <= self.max[0] && self.min[1] <= self.max[1])
    }
}

/// Closest points of two straight segments (centre lines): `(distance, on p1-q1, on p2-q2)`.
/// Crossing segments give distance 0 at the crossing. After Ericson, Real-Time Collision
/// Detection (2005), 5.1.9, for the plane.
pub fn segment_closest(p1: P, q1: P, p2: P, q2: P) -> (f64, P, P) {
    let d1 = sub(q1, p1);
    let d2 = sub(q2, p2);
    let r = sub(p1, p2);
    let a = dot(d1, d1);
    let e = dot(d2, d2);
    let f = dot(d2, r);
    const EPS: f64 = 1e-18;
    let (s, t);
    if a <= EPS && e <= EPS {
        return (dist(p1, p2), p1, p2);
    }
    if a <= EPS {
        s = 0.0;
        t = (f / e).clamp(0.0, 1.0);
    } else {
        let c = dot(d1, r);
        if e <= EPS {
            t = 0.0;
            s = (-c / a).clamp(0.0, 1.0);
        } else {
            // Crossing segments: the closest points are the crossing itself.
            let denom = cross(d1, d2);
            if denom.abs() > EPS {
                let w = sub(p2, p1);
                let s0 = cross(w, d2) / denom;
                let t0 = cross(w, d1) / denom;
                if (0.0..=1.0).contains(&s0) && (0.0..=1.0).contains(&t0) {
                    let x = add(p1, scale(d1, s0));
                    return (0.0, x, x);
                }
            }
            let b = dot(d1, d2);
            let den = a * e - b * b;
            let mut s1 = if den > EPS {
                ((b * f - c * e) / den).clamp(0.0, 1.0)
            } else {
                0.0
            };
            let mut t1 = (b * s1 + f) / e;
            if t1 < 0.0 {
                t1 = 0.0;
                s1 = (-c / a).clamp(0.0, 1.0);
            } else if t1 > 1.0 {
                t1 = 1.0;
                s1 = ((b - c) / a).clamp(0.0, 1.0);
            }
            s = s1;
            t = t1;
        }
    }
    let c1 = add(p1, scale(d1, s));
    let c2 = add(p2, scale(d2, t));
    (dist(c1, c2), c1, c2)
}

/// Distance between two thick segments and the closest points on their outlines (0 and a
/// shared point when they touch or overlap).
pub fn seg_distance(s1: &Seg, s2: &Seg) -> (f64, P, P) {
    let (d, c1, c2) = segment_closest(s1.a, s1.b, s2.a, s2.b);
    let gap = d - s1.r - s2.r;
    if gap <= 0.0 {
        let mid = if d > 0.0 {
            add(c1, scale(sub(c2, c1), s1.r.min(d) / d))
        } else {
            c1
        };
        return (0.0, mid, mid);
    }
    let u = scale(sub(c2, c1), 1.0 / d);
    (gap, add(c1, scale(u, s1.r)), sub(c2, scale(u, s2.r)))
}

/// Distance from a point to a thick segment, with the closest point of its outline.
pub fn point_seg_distance(p: P, s: &Seg) -> (f64, P) {
    let (d, _, c) = segment_closest(p, p, s.a, s.b);
    if d <= s.r {
        return (0.0, p);
    }
    (d - s.r, add(c, scale(sub(p, c), s.r / d)))
}

/// Even-odd point-in-polygon over closed rings (the last point need not repeat the first).
pub fn point_in_rings(p: P, rings: &[Vec<P>]) -> bool {
    let mut inside = false;
    for ring in rings {
        let n = ring.len();
        if n < 3 {
            continue;
        }
        let mut j = n - 1;
        for i in 0..n {
            let (a, b) = (ring[i], ring[j]);
            if (a[1] > p[1]) != (b[1] > p[1]) {
                let x = a[0] + (p[1] - a[1]) / (b[1] - a[1]) * (b[0] - a[0]);
                if p[0] < x {
                    inside = !inside;
                }
            }
            j = i;
        }
    }
    inside
}

/// Signed area of a ring (positive counter-clockwise).
pub fn ring_area(ring: &[P]) -> f64 {
    let n = ring.len();
    let mut s = 0.0;
    for i in 0..n {
        s += cross(ring[i], ring[(i + 1) % n]);
    }
    s / 2.0
}

/// Points of an arc from angle `a0` through the sweep `sweep` (radians, signed) on a circle,
/// spaced so that no chord lies farther than `CHORD_TOLERANCE_MM` from the arc. The first
/// and last points are the arc's ends.
pub fn arc_points(centre: P, radius: f64, a0: f64, sweep: f64) -> Vec<P> {
    let n = arc_steps(radius, sweep.abs());
    (0..=n)
        .map(|i| {
            let a = a0 + sweep * i as f64 / n as f64;
            [centre[0] + radius * a.cos(), centre[1] + radius * a.sin()]
        })
        .collect()
}

/// Number of chords for an arc: the sagitta r(1 - cos(θ/2)) of each stays within the
/// tolerance (at least 1, at most 4096 for a full turn).
pub fn arc_steps(radius: f64, sweep: f64) -> usize {
    if radius <= CHORD_TOLERANCE_MM {
        return 1.max((sweep / (std::f64::consts::PI / 2.0)).ceil() as usize);
    }
    let max_step = 2.0 * (1.0 - CHORD_TOLERANCE_MM / radius).clamp(-1.0, 1.0).acos();
    ((sweep / max_step).ceil() as usize).clamp(1, 4096)
}

/// A circle as a closed ring of chords (inscribed: the ring lies within the circle).
pub fn circle_ring(centre: P, radius: f64) -> Vec<P> {
    let mut pts = arc_points(centre, radius, 0.0, std::f64::consts::TAU);
    pts.pop();
    if pts.len() < 8 {
        pts = (0..8)
            .map(|i| {
                let a = std::f64::consts::TAU * i as f64 / 8.0;
                [centre[0] + radius * a.cos(), centre[1] + radius * a.sin()]
            })
            .collect();
    }
    pts
}

/// The outline of a thick segment (a stadium) as a ring of chords.
pub fn stadium_ring(s: &Seg) -> Vec<P> {
    let d = sub(s.b, s.a);
    let len = dot(d, d).sqrt();
    if len < 1e-12 {
        return circle_ring(s.a, s.r);
    }
    let ang = d[1].atan2(d[0]);
    let half = std::f64::consts::PI;
    let mut ring = arc_points(s.b, s.r, ang - half / 2.0, half);
    ring.extend(arc_points(s.a, s.r, ang + half / 2.0, half));
    ring
}

/// Proper crossing of two segments (each strictly crosses the other's line), or touching
/// at a point inside both: returned as the parameter along `p`-`q` where they meet.
pub fn segment_meet(p: P, q: P, a: P, b: P) -> Option<(f64, bool)> {
    let r = sub(q, p);
    let s = sub(b, a);
    let den = cross(r, s);
    if den.abs() < 1e-15 {
        return None;
    }
    let w = sub(a, p);
    let t = cross(w, s) / den;
    let u = cross(w, r) / den;
    const E: f64 = 1e-9;
    if t < -E || t > 1.0 + E || u < -E || u > 1.0 + E {
        return None;
    }
    let proper = t > E && t < 1.0 - E && u > E && u < 1.0 - E;
    Some((t.clamp(0.0, 1.0), proper))
}

/// The cell a coordinate falls in, `f` in cell widths from the grid's origin, clamped to
/// `0..n` (a cast, not `floor`: the same for `f >= 0`, and far cheaper on a target
/// without a rounding instruction).
pub fn cell_index(f: f64, n: usize) -> usize {
    if f >= 0.0 { (f as usize).min(n - 1) } else { 0 }
}

/// A uniform grid over a box, each cell listing the items whose box touches it. Items are
/// numbered by the caller; compressed rows keep the memory linear in the items.
#[derive(Debug, Clone)]
pub struct Grid {
    origin: P,
    cell: f64,
    nx: usize,
    ny: usize,
    starts: Vec<u32>,
    items: Vec<u32>,
}

impl Grid {
    /// `boxes[i]` is item i's box. The cell size aims at a few items per cell.
    pub fn build(boxes: &[Bbox], hint_cell: Option<f64>) -> Grid {
        let mut all = Bbox::EMPTY;
        for b in boxes {
            if !b.is_empty() {
                all = all.union(b);
            }
        }
        if all.is_empty() {
            all = Bbox {
                min: [0.0, 0.0],
                max: [1.0, 1.0],
            };
        }
        let w = (all.max[0] - all.min[0]).max(1e-3);
        let h = (all.max[1] - all.min[1]).max(1e-3);
        let n = boxes.len().max(1) as f64;
        let mut cell = hint_cell
            .unwrap_or_else(|| (w * h / n).sqrt() * 1.5)
            .max(1e-3);
        // At most about four million cells, whatever the spread of the items.
        while (w / cell).ceil() * (h / cell).ceil() > 4.0e6 {
            cell *= 2.0;
        }
        let nx = ((w / cell).ceil() as usize).max(1);
        let ny = ((h / cell).ceil() as usize).max(1);
        let mut g = Grid {
            origin: all.min,
            cell,
            nx,
            ny,
            starts: vec![0; nx * ny + 1],
            items: Vec::new(),
        };
        for b in boxes.iter().filter(|b| !b.is_empty()) {
            let (x0, y0, x1, y1) = g.range(b);
            for y in y0..=y1 {
                for x in x0..=x1 {
                    g.starts[y * nx + x + 1] += 1;
                }
            }
        }
        for i in 0..nx * ny {
            g.starts[i + 1] += g.starts[i];
        }
        let mut fill = g.starts.clone();
        g.items = vec![0; g.starts[nx * ny] as usize];
        for (i, b) in boxes.iter().enumerate().filter(|(_, b)| !b.is_empty()) {
            let (x0, y0, x1, y1) = g.range(b);
            for y in y0..=y1 {
                for x in x0..=x1 {
                    let c = y * nx + x;
                    g.items[fill[c] as usize] = i as u32;
                    fill[c] += 1;
                }
            }
        }
        g
    }

    fn range(&self, b: &Bbox) -> (usize, usize, usize, usize) {
        let f = |v: f64, o: f64, n: usize| -> usize { cell_index((v - o) / self.cell, n) };
        (
            f(b.min[0], self.origin[0], self.nx),
            f(b.min[1], self.origin[1], self.ny),
            f(b.max[0], self.origin[0], self.nx),
            f(b.max[1], self.origin[1], self.ny),
        )
    }

    /// Calls `visit` with every item whose cell touches the box (an item may come more
    /// than once).
    pub fn query(&self, b: &Bbox, mut visit: impl FnMut(u32)) {
        self.query_until(b, |i| {
            visit(i);
            false
        });
    }

    /// As [`Grid::query`], but stops as soon as `visit` returns true (and says so).
    pub fn query_until(&self, b: &Bbox, mut visit: impl FnMut(u32) -> bool) -> bool {
        if b.is_empty() {
            return false;
        }
        // Outside the grid entirely: nothing there.
        if b.max[0] < self.origin[0]
            || b.max[1] < self.origin[1]
            || b.min[0] > self.origin[0] + self.cell * self.nx as f64
            || b.min[1] > self.origin[1] + self.cell * self.ny as f64
        {
            return false;
        }
        let (x0, y0, x1, y1) = self.range(b);
        for y in y0..=y1 {
            // The cells of a row are consecutive, and so are their items: one slice per row
            // (the same items in the same order as cell by cell).
            let (first, end) = (y * self.nx + x0, y * self.nx + x1 + 1);
            for &i in &self.items[self.starts[first] as usize..self.starts[end] as usize] {
                if visit(i) {
                    return true;
                }
            }
        }
        false
    }

    pub fn cell_mm(&self) -> f64 {
        self.cell
    }
}

/// A repeatable sequence of numbers in [0, 1) from `seed` (a 64-bit linear congruential
/// generator, top 53 bits), for the board's tests: generated boards, boxes and hops.
#[cfg(test)]
pub(crate) fn uniform_sequence(seed: u64) -> impl FnMut() -> f64 {
    let mut state = seed;
    move || {
        state = state
            .wrapping_mul(6364136223846793005)
            .wrapping_add(1442695040888963407);
        (state >> 11) as f64 / (1u64 << 53) as f64
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn parallel_segments_are_their_spacing_apart() {
        // Two horizontal segments 3 mm apart, overlapping in x: distance 3.
        let (d, a, b) = segment_closest([0.0, 0.0], [10.0, 0.0], [2.0, 3.0], [5.0, 3.0]);
        assert!((d - 3.0).abs() < 1e-12);
        assert!((a[1] - 0.0).abs() < 1e-12 && (b[1] - 3.0).abs() < 1e-12);
    }

    #[test]
    fn crossing_segments_touch() {
        let (d, a, _) = segment_closest([0.0, 0.0], [2.0, 2.0], [0.0, 2.0], [2.0, 0.0]);
        assert_eq!(d, 0.0);
        assert!((a[0] - 1.0).abs() < 1e-12);
    }

    #[test]
    fn round_pads_gap_is_centre_distance_less_radii() {
        // Centres 5 mm apart, radii 1 and 0.5: gap 5 - 1.5 = 3.5 mm.
        let s1 = Seg {
            a: [0.0, 0.0],
            b: [0.0, 0.0],
            r: 1.0,
        };
        let s2 = Seg {
            a: [3.0, 4.0],
            b: [3.0, 4.0],
            r: 0.5,
        };
        let (d, p, q) = seg_distance(&s1, &s2);
        assert!((d - 3.5).abs() < 1e-12);
        assert!((dist(p, [0.6, 0.8])) < 1e-12);
        assert!((dist(q, [2.7, 3.6])) < 1e-12);
    }

    #[test]
    fn chords_stay_within_the_tolerance() {
        let r = 3.0;
        let pts = arc_points([0.0, 0.0], r, 0.0, std::f64::consts::PI);
        for w in pts.windows(2) {
            let mid = scale(add(w[0], w[1]), 0.5);
            let sag = r - dist(mid, [0.0, 0.0]);
            assert!(sag <= CHORD_TOLERANCE_MM + 1e-12, "sagitta {sag}");
        }
    }

    #[test]
    fn point_in_square_with_hole() {
        let outer = vec![[0.0, 0.0], [10.0, 0.0], [10.0, 10.0], [0.0, 10.0]];
        let hole = vec![[4.0, 4.0], [6.0, 4.0], [6.0, 6.0], [4.0, 6.0]];
        let rings = vec![outer, hole];
        assert!(point_in_rings([1.0, 1.0], &rings));
        assert!(!point_in_rings([5.0, 5.0], &rings));
        assert!(!point_in_rings([11.0, 5.0], &rings));
    }

    #[test]
    fn grid_finds_nearby_items_only() {
        let boxes: Vec<Bbox> = (0..100)
            .map(|i| {
                let x = i as f64;
                Bbox {
                    min: [x, 0.0],
                    max: [x + 0.5, 0.5],
                }
            })
            .collect();
        let g = Grid::build(&boxes, Some(1.0));
        let mut found = std::collections::BTreeSet::new();
        g.query(
            &Bbox {
                min: [10.2, 0.0],
                max: [12.1, 0.1],
            },
            |i| {
                found.insert(i);
            },
        );
        assert!(found.contains(&10) && found.contains(&11) && found.contains(&12));
        assert!(!found.contains(&50));
    }

    /// A query takes each row's items as one slice: the same items in the same order as
    /// going over the row's cells one by one.
    #[test]
    fn a_query_gives_the_items_cell_by_cell_in_order() {
        let mut next = uniform_sequence(3);
        let mut random_box = |size: f64| {
            let (x, y) = (60.0 * next() - 5.0, 40.0 * next() - 5.0);
            Bbox {
                min: [x, y],
                max: [x + size * next(), y + size * next()],
            }
        };
        let boxes: Vec<Bbox> = (0..2_000).map(|_| random_box(3.0)).collect();
        let g = Grid::build(&boxes, None);
        let mut items_seen = 0;
        for _ in 0..500 {
            let b = random_box(20.0);
            let mut got = Vec::new();
            g.query(&b, |i| got.push(i));
            let mut expected = Vec::new();
            let inside = !(b.max[0] < g.origin[0]
                || b.max[1] < g.origin[1]
                || b.min[0] > g.origin[0] + g.cell * g.nx as f64
                || b.min[1] > g.origin[1] + g.cell * g.ny as f64);
            if inside {
                let (x0, y0, x1, y1) = g.range(&b);
                for y in y0..=y1 {
                    for x in x0..=x1 {
                        let c = y * g.nx + x;
                        expected.extend_from_slice(
                            &g.items[g.starts[c] as usize..g.starts[c + 1] as usize],
                        );
                    }
                }
            }
            assert_eq!(got, expected, "{b:?}");
            items_seen += got.len();
            // Every box that meets the query is among the items.
            for (i, other) in boxes.iter().enumerate() {
                if other.min[0] <= b.max[0]
                    && b.min[0] <= other.max[0]
                    && other.min[1] <= b.max[1]
                    && b.min[1] <= other.max[1]
                {
                    assert!(got.contains(&(i as u32)), "{i} in {b:?}");
                }
            }
        }
        assert!(items_seen > 10_000, "{items_seen}");
    }
}
