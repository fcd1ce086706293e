//! The EMC chart: the limit lines and the noise before and after the filter on a
//! log-frequency axis, drawn with plotters' SVG backend. Every text in it is fixed here (no
//! string from the project file), and the same report gives the same bytes.

use plotters::prelude::*;
use plotters::style::text_anchor::{HPos, Pos, VPos};

use super::EmcReport;
use crate::power_entry::Verdict;
use crate::spacing::show;

// Sized to print on A4 without scaling (about 700 CSS pixels between the margins), so the
// labels keep their size on paper. plotters writes an SVG font size of about 0.81 times
// the size it is given: 15 gives 12.1 px, the smallest text in the chart.
const WIDTH: u32 = 700;
const PLOT_HEIGHT: u32 = 400;
/// Height of the legend band under the plot, in pixels.
const LEGEND_HEIGHT: u32 = 124;
const HEIGHT: u32 = PLOT_HEIGHT + LEGEND_HEIGHT;
/// How far below the lowest limit less its margin the chart reaches, dB: points further
/// below pass by far and are drawn on the lower edge, so the limits keep the height.
const BELOW_LIMITS_DB: f64 = 60.0;
const LABEL_PX: u32 = 15;

// A palette of our own: ink-blue limits, rust for the raw noise, green for the filtered
// noise that passes, red for the filtered noise above the limit less the margin.
const QUASI_PEAK: RGBColor = RGBColor(31, 58, 104);
const AVERAGE: RGBColor = RGBColor(92, 124, 176);
const BEFORE: RGBColor = RGBColor(150, 90, 40);
const AFTER: RGBColor = RGBColor(38, 120, 72);
const FAILING: RGBColor = RGBColor(200, 30, 30);
const NOT_JUDGED: RGBColor = RGBColor(120, 120, 120);
const GRID: RGBColor = RGBColor(226, 229, 233);

/// The marker shapes: the noise's mode, whatever the filter did to it.
#[derive(Clone, Copy, PartialEq)]
enum Shape {
    /// Differential mode: a circle.
    Differential,
    /// Common mode: a square.
    Common,
    /// Measured (mode not known): a diamond.
    Measured,
}

fn shape_of(mode: &str) -> Shape {
    match mode {
        "differential" => Shape::Differential,
        "common" => Shape::Common,
        _ => Shape::Measured,
    }
}

/// One marker at a pixel position: hollow (before the filter) or filled (after), of the
/// mode's shape; a failing point is larger and crossed out as well as red.
fn marker<DB: DrawingBackend>(
    area: &DrawingArea<DB, plotters::coord::Shift>,
    at: (i32, i32),
    shape: Shape,
    style: ShapeStyle,
    size: i32,
) -> Result<(), Box<dyn std::error::Error>>
where
    DB::ErrorType: 'static,
{
    match shape {
        Shape::Differential => {
            area.draw(&(EmptyElement::at(at) + Circle::new((0, 0), size, style)))?
        }
        Shape::Common => area.draw(
            &(EmptyElement::at(at) + Rectangle::new([(-size, -size), (size, size)], style)),
        )?,
        Shape::Measured => {
            let s = size + 1;
            let corners = vec![(0, -s), (s, 0), (0, s), (-s, 0), (0, -s)];
            if style.filled {
                area.draw(&(EmptyElement::at(at) + Polygon::new(corners, style)))?
            } else {
                // A polygon is always filled: the hollow diamond is its outline.
                area.draw(&(EmptyElement::at(at) + PathElement::new(corners, style)))?
            }
        }
    }
    Ok(())
}

fn failing_marker<DB: DrawingBackend>(
    area: &DrawingArea<DB, plotters::coord::Shift>,
    at: (i32, i32),
    shape: Shape,
) -> Result<(), Box<dyn std::error::Error>>
where
    DB::ErrorType: 'static,
{
    marker(area, at, shape, FAILING.filled(), 6)?;
    area.draw(&(EmptyElement::at(at) + Cross::new((0, 0), 9, FAILING.stroke_width(2))))?;
    Ok(())
}

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
    let margin = if report.margin_db.is_finite() {
        report.margin_db.max(0.0)
    } else {
        0.0
    };
    let limits: Vec<f64> = report
        .limit_lines
        .iter()
        .flat_map(|l| l.vertices.iter().map(|v| v[1]))
        .filter(|v| v.is_finite())
        .collect();
    let lowest_limit = limits.iter().copied().fold(f64::INFINITY, f64::min);
    let floor = if lowest_limit.is_finite() {
        lowest_limit - margin - BELOW_LIMITS_DB
    } else {
        f64::NEG_INFINITY
    };
    let mut levels = limits.clone();
    levels.extend(limits.iter().map(|v| v - margin));
    for p in &report.points {
        levels.push(p.level_dbuv);
        levels.push(p.after_filter_dbuv);
    }
    levels.retain(|v| v.is_finite());
    let min = levels
        .iter()
        .copied()
        .fold(f64::INFINITY, f64::min)
        .max(floor);
    let max = levels.iter().copied().fold(f64::NEG_INFINITY, f64::max);
    if !(min.is_finite() && max.is_finite()) {
        return None;
    }
    // The range fits the data: 5 dB of room, rounded out to 10 dB.
    let y_low = ((min - 5.0) / 10.0).floor() * 10.0;
    let y_high = ((max + 5.0) / 10.0).ceil() * 10.0;
    if y_high <= y_low {
        return None;
    }
    let mut out = String::new();
    draw(report, &mut out, (low_hz, high_hz), (y_low, y_high), margin).ok()?;
    Some(out)
}

fn in_band(hz: f64, x: (f64, f64)) -> bool {
    hz.is_finite() && x.0 <= hz && hz <= x.1
}

fn in_view(hz: f64, dbuv: f64, x: (f64, f64), y: (f64, f64)) -> bool {
    in_band(hz, x) && dbuv.is_finite() && y.0 <= dbuv && dbuv <= y.1
}

fn draw(
    report: &EmcReport,
    out: &mut String,
    x: (f64, f64),
    y: (f64, f64),
    margin: f64,
) -> Result<(), Box<dyn std::error::Error>> {
    let root = SVGBackend::with_string(out, (WIDTH, HEIGHT)).into_drawing_area();
    root.fill(&WHITE)?;
    // The legend has a band of its own under the plot, so it never covers a point.
    let (plot_area, legend_area) = root.split_vertically(PLOT_HEIGHT);
    let title = format!(
        "Conducted emission on the mains port, class {} limits",
        report.limit_class.as_str()
    );
    let mut chart = ChartBuilder::on(&plot_area)
        .caption(title, ("sans-serif", 18))
        .margin(12)
        .x_label_area_size(46)
        .y_label_area_size(58)
        .build_cartesian_2d((x.0..x.1).log_scale(), y.0..y.1)?;
    chart
        .configure_mesh()
        .light_line_style(WHITE.mix(0.0))
        .bold_line_style(GRID)
        .disable_x_mesh()
        .x_labels(0)
        .x_desc("Frequency, Hz (log scale)")
        .y_desc("Level, dBµV")
        .x_label_formatter(&|_| String::new())
        .y_label_formatter(&|v: &f64| show(*v))
        .label_style(("sans-serif", LABEL_PX))
        .axis_desc_style(("sans-serif", 16))
        .draw()?;

    // Our own log grid: a line at 1 to 9 of each decade, labels at 1, 2 and 5 and the
    // band's ends.
    let tick_font = ("sans-serif", LABEL_PX)
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
            if f > x.0 * 1.5 && f < x.1 / 1.6 {
                labelled.push(f);
            }
        }
    }
    for f in labelled {
        let (px, py) = chart.backend_coord(&(f, y.0));
        // The band's top end is labelled leftwards, so it stays inside the picture.
        let font = if f == x.1 {
            tick_font.clone().pos(Pos::new(HPos::Right, VPos::Top))
        } else {
            tick_font.clone()
        };
        plot_area.draw(&Text::new(tick_label(&f), (px, py + 8), font))?;
    }

    for line in &report.limit_lines {
        let colour = if line.detector == "quasi-peak" {
            QUASI_PEAK
        } else {
            AVERAGE
        };
        let vertices: Vec<(f64, f64)> = line
            .vertices
            .iter()
            .filter(|v| in_view(v[0], v[1], x, y))
            .map(|v| (v[0], v[1]))
            .collect();
        let style = colour.stroke_width(2);
        if line.detector == "quasi-peak" {
            chart.draw_series(LineSeries::new(vertices, style))?;
        } else {
            chart.draw_series(DashedLineSeries::new(vertices, 7, 4, style))?;
        }
        // The line the points are judged against: the limit less the margin.
        if margin > 0.0 {
            let shifted: Vec<(f64, f64)> = line
                .vertices
                .iter()
                .map(|v| (v[0], v[1] - margin))
                .filter(|v| in_view(v.0, v.1, x, y))
                .collect();
            chart.draw_series(DashedLineSeries::new(shifted, 2, 3, colour.stroke_width(1)))?;
        }
    }

    // Points below the chart's floor pass by far: drawn on the lower edge.
    let place = |hz: f64, dbuv: f64| -> Option<(i32, i32)> {
        if !in_band(hz, x) || !dbuv.is_finite() {
            return None;
        }
        Some(chart.backend_coord(&(hz, dbuv.clamp(y.0, y.1))))
    };
    for p in &report.points {
        if let Some(at) = place(p.frequency_hz, p.level_dbuv) {
            marker(&plot_area, at, shape_of(p.mode), BEFORE.stroke_width(2), 4)?;
        }
    }
    // Failing points last, so nothing covers them.
    for failing in [false, true] {
        for p in report
            .points
            .iter()
            .filter(|p| (p.verdict == Verdict::Fail) == failing)
        {
            let Some(at) = place(p.frequency_hz, p.after_filter_dbuv) else {
                continue;
            };
            let shape = shape_of(p.mode);
            match p.verdict {
                Verdict::Fail => failing_marker(&plot_area, at, shape)?,
                Verdict::Pass => marker(&plot_area, at, shape, AFTER.filled(), 4)?,
                _ => marker(&plot_area, at, shape, NOT_JUDGED.filled(), 4)?,
            }
        }
    }
    let clamped = report
        .points
        .iter()
        .any(|p| p.level_dbuv < y.0 || p.after_filter_dbuv < y.0);
    legend(&legend_area, report, margin, clamped)?;
    root.present()?;
    Ok(())
}

/// The legend, in its own band: a sample of each line and marker and what it is.
fn legend<DB: DrawingBackend>(
    area: &DrawingArea<DB, plotters::coord::Shift>,
    report: &EmcReport,
    margin: f64,
    clamped: bool,
) -> Result<(), Box<dyn std::error::Error>>
where
    DB::ErrorType: 'static,
{
    let font = ("sans-serif", LABEL_PX).into_font().color(&BLACK);
    let text = |s: &str, at: (i32, i32)| Text::new(s.to_string(), (at.0, at.1 - 8), font.clone());
    let columns = [14, 250, 480];
    let rows = [16, 45, 74, 103];
    // Row 1: the lines.
    let (c, r) = (columns[0], rows[0]);
    area.draw(&PathElement::new(
        vec![(c, r), (c + 24, r)],
        QUASI_PEAK.stroke_width(2),
    ))?;
    area.draw(&text("quasi-peak limit", (c + 32, r)))?;
    let c = columns[1];
    for (a, b) in [(0, 7), (11, 18), (22, 24)] {
        area.draw(&PathElement::new(
            vec![(c + a, r), (c + b, r)],
            AVERAGE.stroke_width(2),
        ))?;
    }
    area.draw(&text("average limit", (c + 32, r)))?;
    let c = columns[2];
    if margin > 0.0 {
        for a in (0..24).step_by(5) {
            area.draw(&PathElement::new(
                vec![(c + a, r), (c + a + 2, r)],
                AVERAGE.stroke_width(1),
            ))?;
        }
        area.draw(&text(
            &format!("each limit less {} dB margin", show(margin)),
            (c + 32, r),
        ))?;
    }
    // Row 2: shapes by mode, as the noise before the filter shows them.
    let mut modes: Vec<Shape> = Vec::new();
    for p in &report.points {
        let s = shape_of(p.mode);
        if !modes.contains(&s) {
            modes.push(s);
        }
    }
    if modes.is_empty() {
        modes.push(Shape::Measured);
    }
    area.draw(&text(
        "noise without the filter (hollow):",
        (columns[0], rows[1]),
    ))?;
    for (i, s) in modes.iter().enumerate() {
        let c = columns[1] + 150 * i as i32;
        marker(area, (c + 10, rows[1]), *s, BEFORE.stroke_width(2), 4)?;
        let word = match s {
            Shape::Differential => "differential mode",
            Shape::Common => "common mode",
            Shape::Measured => "measured (mode not known)",
        };
        area.draw(&text(word, (c + 24, rows[1])))?;
    }
    // Rows 3 and 4: after the filter, by verdict.
    area.draw(&text(
        "noise after the filter (filled):",
        (columns[0], rows[2]),
    ))?;
    let shape = modes[0];
    marker(area, (columns[1] + 10, rows[2]), shape, AFTER.filled(), 4)?;
    area.draw(&text(
        "within the limit less the margin",
        (columns[1] + 24, rows[2]),
    ))?;
    failing_marker(area, (columns[1] + 10, rows[3]), shape)?;
    area.draw(&text("above it: fails", (columns[1] + 24, rows[3])))?;
    if report
        .points
        .iter()
        .any(|p| !matches!(p.verdict, Verdict::Pass | Verdict::Fail))
    {
        marker(
            area,
            (columns[2] + 10, rows[3]),
            shape,
            NOT_JUDGED.filled(),
            4,
        )?;
        area.draw(&text("not judged", (columns[2] + 24, rows[3])))?;
    }
    if clamped {
        area.draw(&text(
            "on the lower edge: lower still",
            (columns[0], rows[3]),
        ))?;
    }
    Ok(())
}
