//! A drawing of one barrier's neighbourhood on the board for the HTML report: the copper of
//! its two circuits and of others, the cut-outs, the outline and the measured paths. Made of
//! numbers only (no project text), in board millimetres with y upwards; readable in black
//! and white: top copper filled, bottom copper outlined, creepage solid, clearance dashed.

use std::fmt::Write;

use super::geometry::Bbox;
use super::measure::{BarrierMeasurement, PathPoint};
use super::{Board, Layer, Net, Shape};

/// At most this many conductors drawn in one picture (a dense board stays printable).
const MAX_DRAWN: usize = 4000;

fn f(x: f64) -> String {
    format!("{:.3}", x)
}

/// The SVG of a barrier's neighbourhood, or `None` when nothing was measured.
pub fn drawing(
    board: &Board,
    a: &[String],
    b: &[String],
    m: &BarrierMeasurement,
) -> Option<String> {
    let paths: Vec<&Vec<PathPoint>> = [&m.creepage, &m.clearance]
        .into_iter()
        .flatten()
        .map(|p| &p.path)
        .collect();
    if paths.is_empty() {
        return None;
    }
    let mut view = Bbox::around(
        paths
            .iter()
            .flat_map(|p| p.iter().map(|q| [q.x_mm, q.y_mm])),
    );
    let grow = ((view.max[0] - view.min[0]).max(view.max[1] - view.min[1]) * 0.25).max(3.0);
    view = view.grown(grow);
    let (w, h) = (view.max[0] - view.min[0], view.max[1] - view.min[1]);
    let mut s = String::new();
    let _ = write!(
        s,
        "<svg xmlns=\"http://www.w3.org/2000/svg\" viewBox=\"{} {} {} {}\" width=\"480\" style=\"max-width:100%;border:1px solid #888;background:#fff\">\
         <g transform=\"scale(1,-1)\">",
        f(view.min[0]),
        f(-view.max[1]),
        f(w),
        f(h)
    );
    let stroke = (w.max(h) / 400.0).max(0.02);
    // Outline and cut-outs.
    let ring_path = |ring: &[[f64; 2]]| -> String {
        let mut d = String::new();
        for (i, p) in ring.iter().enumerate() {
            let _ = write!(
                d,
                "{}{} {} ",
                if i == 0 { "M" } else { "L" },
                f(p[0]),
                f(p[1])
            );
        }
        d.push('Z');
        d
    };
    let _ = write!(
        s,
        "<path d=\"{}\" fill=\"#f4f1e4\" stroke=\"#000\" stroke-width=\"{}\"/>",
        ring_path(&board.outline),
        f(stroke * 2.0)
    );
    for c in &board.cutouts {
        let bb = Bbox::around(c.ring.iter().copied());
        if bb.gap(&view) > 0.0 {
            continue;
        }
        let _ = write!(
            s,
            "<path d=\"{}\" fill=\"#fff\" stroke=\"#000\" stroke-width=\"{}\"/>",
            ring_path(&c.ring),
            f(stroke * 2.0)
        );
    }
    // Copper: bottom first (outlined), then top (filled).
    let colour = |net: &Net| match net {
        Net::Named(n) if a.contains(n) => "#c0392b",
        Net::Named(n) if b.contains(n) => "#1f5fa8",
        _ => "#8c8c8c",
    };
    let mut drawn = 0;
    for bottom in [true, false] {
        for c in &board.conductors {
            let on_bottom = matches!(c.layer, Layer::Bottom);
            let on_top = matches!(c.layer, Layer::Top | Layer::Through);
            if (bottom && !on_bottom) || (!bottom && !on_top) || c.bbox().gap(&view) > 0.0 {
                continue;
            }
            drawn += 1;
            if drawn > MAX_DRAWN {
                break;
            }
            let col = colour(&c.net);
            let (fill, opacity) = if bottom { ("none", "1") } else { (col, "0.55") };
            match &c.shape {
                Shape::Segs(segs) => {
                    for sg in segs {
                        if bottom {
                            let _ = write!(
                                s,
                                "<line x1=\"{}\" y1=\"{}\" x2=\"{}\" y2=\"{}\" stroke=\"{col}\" stroke-width=\"{}\" stroke-linecap=\"round\" stroke-opacity=\"0.35\"/>",
                                f(sg.a[0]),
                                f(sg.a[1]),
                                f(sg.b[0]),
                                f(sg.b[1]),
                                f(2.0 * sg.r)
                            );
                        } else {
                            let _ = write!(
                                s,
                                "<line x1=\"{}\" y1=\"{}\" x2=\"{}\" y2=\"{}\" stroke=\"{col}\" stroke-width=\"{}\" stroke-linecap=\"round\" stroke-opacity=\"{opacity}\"/>",
                                f(sg.a[0]),
                                f(sg.a[1]),
                                f(sg.b[0]),
                                f(sg.b[1]),
                                f(2.0 * sg.r)
                            );
                        }
                    }
                }
                Shape::Rings(rings) => {
                    let d: String = rings
                        .iter()
                        .map(|r| ring_path(r))
                        .collect::<Vec<_>>()
                        .join(" ");
                    let _ = write!(
                        s,
                        "<path d=\"{d}\" fill=\"{fill}\" fill-opacity=\"{opacity}\" fill-rule=\"evenodd\" stroke=\"{col}\" stroke-width=\"{}\"{}/>",
                        f(stroke),
                        if bottom {
                            format!(
                                " stroke-dasharray=\"{} {}\"",
                                f(stroke * 4.0),
                                f(stroke * 3.0)
                            )
                        } else {
                            String::new()
                        }
                    );
                }
            }
        }
    }
    // The paths: creepage solid, clearance dashed; a change of face marked by a ring.
    for (path, dashed) in [(&m.creepage, false), (&m.clearance, true)] {
        let Some(p) = path else { continue };
        let pts: Vec<String> = p
            .path
            .iter()
            .map(|q| format!("{},{}", f(q.x_mm), f(q.y_mm)))
            .collect();
        let _ = write!(
            s,
            "<polyline points=\"{}\" fill=\"none\" stroke=\"#000\" stroke-width=\"{}\"{}/>",
            pts.join(" "),
            f(stroke * 3.0),
            if dashed {
                format!(
                    " stroke-dasharray=\"{} {}\"",
                    f(stroke * 8.0),
                    f(stroke * 5.0)
                )
            } else {
                String::new()
            }
        );
        for w in p.path.windows(2) {
            if w[0].layer != w[1].layer {
                let _ = write!(
                    s,
                    "<circle cx=\"{}\" cy=\"{}\" r=\"{}\" fill=\"none\" stroke=\"#000\" stroke-width=\"{}\"/>",
                    f(w[0].x_mm),
                    f(w[0].y_mm),
                    f(stroke * 8.0),
                    f(stroke * 2.0)
                );
            }
        }
    }
    s.push_str("</g></svg>");
    Some(s)
}
