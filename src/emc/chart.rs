//! The EMC chart: the limit lines and the noise before and after the filter on a
//! log-frequency axis, drawn with plotters' SVG backend. Every text in it is fixed here (no
//! string from the project file), and the same report gives the same bytes.

use plotters::prelude::*;
use plotters::style::text_anchor::{HPos, Pos, VPos};

use super::EmcReport;
use crate::spacing::show;

const WIDTH: u32 = 820;
const HEIGHT: u32 = 460;
/// Lowest level the chart shows, dBuV: anything filtered further is off the chart.
const FLOOR_DBUV: f64 = -40.0;

// A palette of our own: ink-blue limits, rust for the raw noise, green for the filtered.
const QUASI_PEAK: RGBColor = RGBColor(31, 58, 104);
const AVERAGE: RGBColor = RGBColor(92, 124, 176);
const BEFORE: RGBColor = RGBColor(150, 90, 40);
const AFTER: RGBColor = RGBColor(38, 120, 72);
/// Width of the legend column on the right, in pixels.
const LEGEND_WIDTH: u32 = 190;
const GRID: RGBColor = RGBColor(226, 229, 233);

/// A frequency tick label in kHz or MHz.
fn tick_label(hz: &f64) -> String {
    if *hz >= 1e6 {
        format!("{} MHz", show(*hz / 1e6))
    } else {
        format!("{} kHz", show(*hz / 1e3))
    }
}

/// The chart as an SVG document, or `None` if there is nothing sound to draw.
pub fn svg(report: &EmcReport) -> Option<String> {
    let [low_hz, high_hz] = report.band_hz;
    if !(low_hz.is_finite() && high_hz.is_finite() && 0.0 < low_hz && low_hz < high_hz) {
        return None;
    }
    let mut levels: Vec<f64> = report
        .limit_lines
        .iter()
        .flat_map(|l| l.vertices.iter().map(|v| v[1]))
        .collect();
    for p in &report.points {
        levels.push(p.level_dbuv);
        levels.push(p.after_filter_dbuv);
    }
    levels.retain(|v| v.is_finite());
    let min = levels.iter().copied().fold(f64::INFINITY, f64::min);
    let max = levels.iter().copied().fold(f64::NEG_INFINITY, f64::max);
    if !(min.is_finite() && max.is_finite()) {
        return None;
    }
    let y_low = (((min - 5.0) / 10.0).floor() * 10.0).max(FLOOR_DBUV);
    let y_high = ((max + 5.0) / 10.0).ceil() * 10.0;
    if y_high <= y_low {
        return None;
    }
    let mut out = String::new();
    draw(report, &mut out, (low_hz, high_hz), (y_low, y_high)).ok()?;
    Some(out)
}

fn in_view(hz: f64, dbuv: f64, x: (f64, f64), y: (f64, f64)) -> bool {
    hz.is_finite() && dbuv.is_finite() && x.0 <= hz && hz <= x.1 && y.0 <= dbuv && dbuv <= y.1
}

fn draw(
    report: &EmcReport,
    out: &mut String,
    x: (f64, f64),
    y: (f64, f64),
) -> Result<(), Box<dyn std::error::Error>> {
    let root = SVGBackend::with_string(out, (WIDTH, HEIGHT)).into_drawing_area();
    root.fill(&WHITE)?;
    // The legend has a column of its own, so it never covers a point.
    let (plot_area, legend_area) = root.split_horizontally(WIDTH - LEGEND_WIDTH);
    let title = format!(
        "Conducted emission on the mains port, class {} limits",
        report.limit_class.as_str()
    );
    let mut chart = ChartBuilder::on(&plot_area)
        .caption(title, ("sans-serif", 17))
        .margin(14)
        .x_label_area_size(46)
        .y_label_area_size(58)
        .build_cartesian_2d((x.0..x.1).log_scale(), y.0..y.1)?;
    chart
        .configure_mesh()
        .light_line_style(GRID)
        .bold_line_style(GRID.mix(0.0))
        .disable_x_mesh()
        .x_labels(0)
        .x_desc("Frequency, Hz (log scale)")
        .y_desc("Level, dBµV")
        .x_label_formatter(&|_| String::new())
        .y_label_formatter(&|v: &f64| show(*v))
        .label_style(("sans-serif", 12))
        .axis_desc_style(("sans-serif", 13))
        .draw()?;

    // Our own log grid: a line at 1 to 9 of each decade, labels at 1, 2 and 5 and the
    // band's ends.
    let tick_font = ("sans-serif", 12)
        .into_font()
        .color(&BLACK)
        .pos(Pos::new(HPos::Center, VPos::Top));
    for decade in [1e4, 1e5, 1e6, 1e7, 1e8] {
        for m in 1..=9 {
            let f = decade * f64::from(m);
            if f < x.0 || f > x.1 {
                continue;
            }
            chart.draw_series(LineSeries::new([(f, y.0), (f, y.1)], GRID))?;
        }
    }
    let mut labelled: Vec<f64> = vec![x.0, x.1];
    for decade in [1e4, 1e5, 1e6, 1e7, 1e8] {
        for m in [1.0, 2.0, 5.0] {
            let f = decade * m;
            // Leave out a label that would crowd an end of the band.
            if f > x.0 * 1.5 && f < x.1 / 1.2 {
                labelled.push(f);
            }
        }
    }
    for f in labelled {
        let (px, py) = chart.backend_coord(&(f, y.0));
        plot_area.draw(&Text::new(tick_label(&f), (px, py + 8), tick_font.clone()))?;
    }

    for line in &report.limit_lines {
        let vertices: Vec<(f64, f64)> = line
            .vertices
            .iter()
            .filter(|v| in_view(v[0], v[1], x, y))
            .map(|v| (v[0], v[1]))
            .collect();
        let colour = if line.detector == "quasi-peak" {
            QUASI_PEAK
        } else {
            AVERAGE
        };
        let style = colour.stroke_width(2);
        if line.detector == "quasi-peak" {
            chart.draw_series(LineSeries::new(vertices, style))?;
        } else {
            chart.draw_series(DashedLineSeries::new(vertices, 7, 4, style))?;
        }
    }

    let before: Vec<(f64, f64)> = report
        .points
        .iter()
        .map(|p| (p.frequency_hz, p.level_dbuv))
        .filter(|(f, l)| in_view(*f, *l, x, y))
        .collect();
    let after: Vec<(f64, f64)> = report
        .points
        .iter()
        .map(|p| (p.frequency_hz, p.after_filter_dbuv))
        .filter(|(f, l)| in_view(*f, *l, x, y))
        .collect();
    if !before.is_empty() {
        chart.draw_series(
            before
                .iter()
                .map(|&(f, l)| Circle::new((f, l), 4, BEFORE.stroke_width(2))),
        )?;
    }
    if !after.is_empty() {
        chart.draw_series(
            after
                .iter()
                .map(|&(f, l)| TriangleMarker::new((f, l), 5, AFTER.filled())),
        )?;
    }
    legend(&legend_area)?;
    root.present()?;
    Ok(())
}

/// The legend, in its own column: a sample of each series and what it is.
fn legend<DB: DrawingBackend>(
    area: &DrawingArea<DB, plotters::coord::Shift>,
) -> Result<(), Box<dyn std::error::Error>>
where
    DB::ErrorType: 'static,
{
    let font = ("sans-serif", 12).into_font().color(&BLACK);
    let top = 60;
    let row = 24;
    let entries = [
        "quasi-peak limit",
        "average limit",
        "noise without the filter",
        "noise after the filter",
    ];
    for (i, text) in entries.iter().enumerate() {
        let y = top + row * i as i32;
        match i {
            0 => area.draw(&PathElement::new(
                vec![(8, y), (32, y)],
                QUASI_PEAK.stroke_width(2),
            ))?,
            1 => {
                area.draw(&PathElement::new(
                    vec![(8, y), (15, y)],
                    AVERAGE.stroke_width(2),
                ))?;
                area.draw(&PathElement::new(
                    vec![(19, y), (26, y)],
                    AVERAGE.stroke_width(2),
                ))?;
                area.draw(&PathElement::new(
                    vec![(30, y), (32, y)],
                    AVERAGE.stroke_width(2),
                ))?;
            }
            2 => area.draw(&Circle::new((20, y), 4, BEFORE.stroke_width(2)))?,
            _ => area.draw(&TriangleMarker::new((20, y), 5, AFTER.filled()))?,
        }
        area.draw(&Text::new(*text, (40, y - 7), font.clone()))?;
    }
    Ok(())
}
