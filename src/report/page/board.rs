//! The distances measured on the board, as `templates/board.md.j2` writes them.

use super::{Md, joined};
use crate::board::BoardReport;
use crate::board::measure::MeasuredPath;
use crate::report::Report;
use crate::report::render::BOARD_COMMENT;

pub(super) fn section(md: &mut Md, r: &Report, board: &BoardReport) {
    md.s("## Measured on the board\n\nFiles (Gerber X2), board ");
    md.fig(board.thickness_mm);
    md.s(" mm thick:\n\n| file | function | objects | SHA-256 |\n|---|---|---:|---|\n");
    for f in &board.files {
        md.s("| ");
        md.text(&f.file);
        md.s(" | ");
        md.text(&f.function);
        md.s(" | ");
        md.int(f.objects);
        md.s(" | ");
        md.text(&f.sha256);
        md.s(" |\n");
    }
    md.s("\n");
    md.int(board.conductors);
    md.s(" conductors, ");
    md.int(board.cutouts);
    md.s(" cut-outs. Creepage walks round cut-outs at least X = ");
    md.fig(board.groove_width_mm);
    md.s(" mm wide and crosses narrower ones straight; arcs and circles are chords within ");
    md.fig(board.chord_tolerance_mm);
    md.s(" mm and every gap is rounded down by that; a path between the faces is taken down a rim at points ");
    md.fig(board.rim_spacing_mm);
    md.s(" mm apart and rounded down by two spacings. Copper of neither circuit on a path is crossed at no cost.\n");
    if board.unknown_net_conductors > 0 {
        md.s("\n");
        md.int(board.unknown_net_conductors);
        md.s(" copper object(s) carry no net attribute: they are taken as floating conductors.\n");
    }
    md.s("\n");
    if !board.unassigned_nets.is_empty() {
        md.s("\nNets in the files that no circuit names (an unassigned part of the design?): ");
        md.text(&board.unassigned_nets.join(", "));
        md.s(".\n");
    }
    measured_table(md, r);
    drawings_and_inner_layers(md, r);
    md.s("What the files cannot show:\n\n");
    for c in &board.cannot_show {
        md.s("- ");
        md.text(c);
        md.s("\n");
    }
}

fn measured_table(md: &mut Md, r: &Report) {
    md.s("\n| barrier | clearance declared / measured, mm | creepage declared / measured, mm | judged on, mm | path |\n|---|---|---|---|---|\n");
    for b in &r.barriers {
        let Some(m) = &b.board else { continue };
        md.s("| ");
        md.text(&b.id);
        md.s(" | ");
        md.opt_fig(b.clearance_mm);
        md.s(" / ");
        md.opt_fig(b.measured_clearance_mm);
        md.s(" | ");
        md.opt_fig(b.creepage_mm);
        md.s(" / ");
        md.opt_fig(b.measured_creepage_mm);
        md.s(" | ");
        md.opt_fig(b.judged_clearance_mm);
        md.s(" / ");
        md.opt_fig(b.judged_creepage_mm);
        md.s(" | ");
        if let Some(p) = &m.clearance {
            md.s("clearance ");
            path(md, p);
        }
        if let Some(p) = &m.creepage {
            md.s("; creepage ");
            path(md, p);
        }
        md.s(" |\n");
    }
    md.s("\n");
}

/// A measured path's points, `layer (x, y)`, joined by dashes.
fn path(md: &mut Md, p: &MeasuredPath) {
    joined(md, &p.path, " – ", "", |md, point| {
        md.text(&point.layer);
        md.s(" (");
        md.fig(point.x_mm);
        md.s(", ");
        md.fig(point.y_mm);
        md.s(")");
    });
}

fn drawings_and_inner_layers(md: &mut Md, r: &Report) {
    for b in r.barriers.iter().filter(|b| b.board.is_some()) {
        md.s("\n");
        md.text(&b.id);
        md.s(" on the board: red the copper of ");
        md.text(&b.between[0]);
        md.s(", blue of ");
        md.text(&b.between[1]);
        md.s(", grey other copper; filled on top, outlined on the bottom; solid line the creepage path, dashed the clearance path, a ring where a path passes to the other face.\n\n");
        md.s(BOARD_COMMENT);
        md.s("\n");
    }
    md.s("\n");
    for b in &r.barriers {
        let Some(m) = &b.board else { continue };
        for i in &m.inner_layers {
            md.s("- ");
            md.text(&b.id);
            md.s(": copper of both circuits on ");
            md.text(&i.layer);
            md.s(", ");
            md.fig(i.distance_mm);
            md.s(" mm apart in the layer's plane: distance through insulation, not clearance.\n");
        }
    }
    md.s("\n");
}
