//! The EMC chart: the limit lines and the noise before and after the filter on a
//! log-frequency axis, written as SVG by a small writer of our own (lines, polylines,
//! markers and text; no plotting library). Every text in it is fixed here (no string from
//! the project file), and the same report gives the same bytes.

use std::fmt::Write;

use super::EmcReport;
use crate::power_entry::Verdict;
use crate::spacing::show;

// Sized to print on A4 without scaling (about 700 CSS pixels between the margins), so the
// labels keep their size on paper; the smallest text is 12.1 px.
const WIDTH: u32 = 700;
const PLOT_HEIGHT: u32 = 400;
/// Height of the legend band under the plot, in pixels.
const LEGEND_HEIGHT: u32 = 124;
const HEIGHT: u32 = PLOT_HEIGHT + LEGEND_HEIGHT;
/// The plotting box, in pixels: room on the left for the level labels and the axis title,
/// above for the chart's title and below for the frequency labels and the axis title.
const LEFT: f64 = 70.0;
const RIGHT: f64 = 687.0;
const TOP: f64 = 37.0;
const BOTTOM: f64 = 341.0;
/// How far below the lowest limit less its margin the chart reaches, dB: points further
/// below pass by far and are drawn on the lower edge, so the limits keep the height.
const BELOW_LIMITS_DB: f64 = 60.0;
/// At most this many level labels; the step between them is 10, 20 or 50 dB (or more).
const MAX_LEVEL_LABELS: f64 = 10.0;

// Font sizes in px: labels, axis titles, the chart's title.
const LABEL_PX: &str = "12.1";
const AXIS_PX: &str = "12.9";
const TITLE_PX: &str = "14.5";

// A palette of our own: ink-blue limits, rust for the raw noise, green for the filtered
// noise that passes, red for the filtered noise above the limit less the margin.
const QUASI_PEAK: &str = "#1F3A68";
const AVERAGE: &str = "#5C7CB0";
const BEFORE: &str = "#965A28";
const AFTER: &str = "#267848";
const FAILING: &str = "#C81E1E";
const NOT_JUDGED: &str = "#787878";
const GRID: &str = "#E2E5E9";
const INK: &str = "#000000";

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

/// How a marker is painted: an outline (before the filter) or filled (after).
#[derive(Clone, Copy)]
enum Paint {
    Outline(&'static str),
    Fill(&'static str),
}

/// A coordinate in pixels, to a tenth of a pixel, without a trailing ".0".
struct Px(f64);

impl std::fmt::Display for Px {
    fn fmt(&self, f: &mut std::fmt::Formatter<'_>) -> std::fmt::Result {
        let tenths = (self.0 * 10.0).round();
        if tenths.abs() < 1e15 {
            // Whole tenths: the digits of the integer, as `{:.1}` prints them.
            f.write_str(crate::text::decimal_in(tenths as i64, 1, &mut [0; 24]))
        } else if tenths % 10.0 == 0.0 {
            write!(f, "{}", tenths / 10.0)
        } else {
            write!(f, "{:.1}", tenths / 10.0)
        }
    }
}

/// The SVG being written. Writing to a `String` cannot fail, so the results of `write!`
/// are dropped.
struct Svg {
    out: String,
}

impl Svg {
    /// A polyline through `points`; `dashes` is a stroke-dasharray ("7 4") or empty.
    fn polyline(&mut self, points: &[(f64, f64)], colour: &str, width: u32, dashes: &str) {
        if points.len() < 2 {
            return;
        }
        let _ = write!(
            self.out,
            "<polyline fill=\"none\" stroke=\"{colour}\" stroke-width=\"{width}\""
        );
        if !dashes.is_empty() {
            let _ = write!(self.out, " stroke-dasharray=\"{dashes}\"");
        }
        self.out.push_str(" points=\"");
        for (i, (x, y)) in points.iter().enumerate() {
            if i > 0 {
                self.out.push(' ');
            }
            let _ = write!(self.out, "{},{}", Px(*x), Px(*y));
        }
        self.out.push_str("\"/>\n");
    }

    fn line(&mut self, from: (f64, f64), to: (f64, f64), colour: &str, width: u32) {
        let _ = writeln!(
            self.out,
            "<line x1=\"{}\" y1=\"{}\" x2=\"{}\" y2=\"{}\" stroke=\"{colour}\" stroke-width=\"{width}\"/>",
            Px(from.0),
            Px(from.1),
            Px(to.0),
            Px(to.1)
        );
    }

    /// Text at `at`; `anchor` is start, middle or end; `dy` places it against `at`
    /// ("0.76em": `at` is its top; "0.5ex": its middle; "-0.5ex": a little above).
    fn text(&mut self, s: &str, at: (f64, f64), anchor: &str, dy: &str, size: &str) {
        let _ = write!(
            self.out,
            "<text x=\"{}\" y=\"{}\" dy=\"{dy}\" text-anchor=\"{anchor}\" font-size=\"{size}\" fill=\"{INK}\">",
            Px(at.0),
            Px(at.1)
        );
        for c in s.chars() {
            match c {
                '&' => self.out.push_str("&amp;"),
                '<' => self.out.push_str("&lt;"),
                '>' => self.out.push_str("&gt;"),
                c => self.out.push(c),
            }
        }
        self.out.push_str("</text>\n");
    }

    /// One marker centred on `at`, of the mode's shape, `size` pixels from its centre to
    /// its side.
    fn marker(&mut self, at: (f64, f64), shape: Shape, paint: Paint, size: f64) {
        let (x, y) = at;
        let style = match paint {
            Paint::Outline(c) => format!("fill=\"none\" stroke=\"{c}\" stroke-width=\"2\""),
            Paint::Fill(c) => format!("fill=\"{c}\""),
        };
        match shape {
            Shape::Differential => {
                let _ = writeln!(
                    self.out,
                    "<circle cx=\"{}\" cy=\"{}\" r=\"{}\" {style}/>",
                    Px(x),
                    Px(y),
                    Px(size)
                );
            }
            Shape::Common => {
                let _ = writeln!(
                    self.out,
                    "<rect x=\"{}\" y=\"{}\" width=\"{}\" height=\"{}\" {style}/>",
                    Px(x - size),
                    Px(y - size),
                    Px(2.0 * size),
                    Px(2.0 * size)
                );
            }
            Shape::Measured => {
                let s = size + 1.0;
                let corners = format!(
                    "{},{} {},{} {},{} {},{}",
                    Px(x),
                    Px(y - s),
                    Px(x + s),
                    Px(y),
                    Px(x),
                    Px(y + s),
                    Px(x - s),
                    Px(y)
                );
                match paint {
                    Paint::Fill(_) => {
                        let _ = writeln!(self.out, "<polygon points=\"{corners}\" {style}/>");
                    }
                    // The hollow diamond is an outline that returns to its first corner.
                    Paint::Outline(_) => {
                        let _ = writeln!(
                            self.out,
                            "<polyline points=\"{corners} {},{}\" {style}/>",
                            Px(x),
                            Px(y - s)
                        );
                    }
                }
            }
        }
    }

    /// A failing point: larger, red and crossed out.
    fn failing_marker(&mut self, at: (f64, f64), shape: Shape) {
        self.marker(at, shape, Paint::Fill(FAILING), 6.0);
        let (x, y) = at;
        self.line((x - 9.0, y + 9.0), (x + 9.0, y - 9.0), FAILING, 2);
        self.line((x - 9.0, y - 9.0), (x + 9.0, y + 9.0), FAILING, 2);
    }
}

/// A frequency tick label in kHz or MHz.
fn tick_label(hz: f64) -> String {
    if hz >= 1e6 {
        format!("{} MHz", show(hz / 1e6))
    } else {
        format!("{} kHz", show(hz / 1e3))
    }
}

/// What the chart shows: the frequency band, the level range (dBµV) and the margin.
struct Frame {
    x: (f64, f64),
    y: (f64, f64),
    margin: f64,
}

impl Frame {
    /// The horizontal pixel of a frequency (log scale).
    fn px(&self, hz: f64) -> f64 {
        LEFT + (hz / self.x.0).ln() / (self.x.1 / self.x.0).ln() * (RIGHT - LEFT)
    }

    /// The vertical pixel of a level.
    fn py(&self, dbuv: f64) -> f64 {
        BOTTOM - (dbuv - self.y.0) / (self.y.1 - self.y.0) * (BOTTOM - TOP)
    }

    fn at(&self, hz: f64, dbuv: f64) -> (f64, f64) {
        (self.px(hz), self.py(dbuv))
    }

    fn in_band(&self, hz: f64) -> bool {
        hz.is_finite() && self.x.0 <= hz && hz <= self.x.1
    }

    fn in_view(&self, hz: f64, dbuv: f64) -> bool {
        self.in_band(hz) && dbuv.is_finite() && self.y.0 <= dbuv && dbuv <= self.y.1
    }
}

/// The band, level range and margin of the chart, or `None` if there is nothing sound to
/// draw.
fn frame(report: &EmcReport) -> Option<Frame> {
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
    if !(y_high > y_low && (y_high - y_low).is_finite()) {
        return None;
    }
    Some(Frame {
        x: (low_hz, high_hz),
        y: (y_low, y_high),
        margin,
    })
}

/// Whether the report has a chart (`svg` gives one), decided without drawing it.
pub fn drawable(report: &EmcReport) -> bool {
    frame(report).is_some()
}

/// The chart as an SVG document, or `None` if there is nothing sound to draw.
pub fn svg(report: &EmcReport) -> Option<String> {
    let frame = frame(report)?;
    let mut svg = Svg {
        out: String::with_capacity(12 * 1024),
    };
    draw(report, &frame, &mut svg);
    Some(svg.out)
}

/// The levels labelled on the vertical axis: multiples of the smallest step of 10, 20 or
/// 50 dB (times a power of ten) that gives at most `MAX_LEVEL_LABELS` of them.
fn level_ticks(y: (f64, f64)) -> Vec<f64> {
    let mut decade = 1.0;
    loop {
        for step in [10.0, 20.0, 50.0].map(|s| s * decade) {
            let first = (y.0 / step).ceil();
            let last = (y.1 / step).floor();
            if last - first + 1.0 <= MAX_LEVEL_LABELS {
                return (first as i64..=last as i64)
                    .map(|k| k as f64 * step)
                    .collect();
            }
        }
        decade *= 10.0;
    }
}

fn draw(report: &EmcReport, f: &Frame, svg: &mut Svg) {
    let (x, y, margin) = (f.x, f.y, f.margin);
    let _ = writeln!(
        svg.out,
        "<svg width=\"{WIDTH}\" height=\"{HEIGHT}\" viewBox=\"0 0 {WIDTH} {HEIGHT}\" xmlns=\"http://www.w3.org/2000/svg\" font-family=\"sans-serif\">"
    );
    let _ = writeln!(
        svg.out,
        "<rect x=\"0\" y=\"0\" width=\"{WIDTH}\" height=\"{HEIGHT}\" fill=\"#FFFFFF\"/>"
    );
    let title = format!(
        "Conducted emission on the mains port, class {} limits",
        report.limit_class.as_str()
    );
    svg.text(
        &title,
        (f64::from(WIDTH) / 2.0, 17.0),
        "middle",
        "0.76em",
        TITLE_PX,
    );

    // The grid: a line at each labelled level, and at 1 to 9 of each decade of frequency.
    let levels = level_ticks(y);
    for &level in &levels {
        let py = f.py(level);
        svg.line((LEFT, py), (RIGHT, py), GRID, 1);
    }
    for decade in [1e4, 1e5, 1e6, 1e7, 1e8] {
        for m in 1..=9 {
            let hz = decade * f64::from(m);
            if f.in_band(hz) {
                let px = f.px(hz);
                svg.line((px, BOTTOM), (px, TOP), GRID, 1);
            }
        }
    }

    // The axes, their ticks, labels and titles (with units).
    svg.polyline(&[(LEFT - 1.0, TOP), (LEFT - 1.0, BOTTOM)], INK, 1, "");
    for &level in &levels {
        let py = f.py(level);
        svg.line((LEFT - 6.0, py), (LEFT - 1.0, py), INK, 1);
        svg.text(&show(level), (LEFT - 10.0, py), "end", "0.5ex", LABEL_PX);
    }
    svg.polyline(&[(LEFT, BOTTOM + 1.0), (RIGHT, BOTTOM + 1.0)], INK, 1, "");
    // Labels at 1, 2 and 5 of each decade and at the band's ends.
    let mut labelled: Vec<f64> = vec![x.0, x.1];
    for decade in [1e4, 1e5, 1e6, 1e7, 1e8] {
        for m in [1.0, 2.0, 5.0] {
            let hz = decade * m;
            // Leave out a label that would crowd an end of the band.
            if hz > x.0 * 1.5 && hz < x.1 / 1.6 {
                labelled.push(hz);
            }
        }
    }
    for hz in labelled {
        let px = f.px(hz);
        svg.line((px, BOTTOM + 1.0), (px, BOTTOM + 6.0), INK, 1);
        // The band's top end is labelled leftwards, so it stays inside the picture.
        let anchor = if hz == x.1 { "end" } else { "middle" };
        svg.text(
            &tick_label(hz),
            (px, BOTTOM + 8.0),
            anchor,
            "0.76em",
            LABEL_PX,
        );
    }
    let middle = ((LEFT + RIGHT) / 2.0, (TOP + BOTTOM) / 2.0);
    let _ = writeln!(
        svg.out,
        "<text x=\"12\" y=\"{}\" dy=\"0.76em\" text-anchor=\"middle\" font-size=\"{AXIS_PX}\" fill=\"{INK}\" transform=\"rotate(270, 12, {})\">Level, dBµV</text>",
        Px(middle.1),
        Px(middle.1)
    );
    svg.text(
        "Frequency, Hz (log scale)",
        (middle.0, f64::from(PLOT_HEIGHT) - 12.0),
        "middle",
        "-0.5ex",
        AXIS_PX,
    );

    for line in &report.limit_lines {
        let quasi_peak = line.detector == "quasi-peak";
        let colour = if quasi_peak { QUASI_PEAK } else { AVERAGE };
        let vertices: Vec<(f64, f64)> = line
            .vertices
            .iter()
            .filter(|v| f.in_view(v[0], v[1]))
            .map(|v| f.at(v[0], v[1]))
            .collect();
        svg.polyline(&vertices, colour, 2, if quasi_peak { "" } else { "7 4" });
        // The line the points are judged against: the limit less the margin.
        if margin > 0.0 {
            let shifted: Vec<(f64, f64)> = line
                .vertices
                .iter()
                .map(|v| (v[0], v[1] - margin))
                .filter(|v| f.in_view(v.0, v.1))
                .map(|v| f.at(v.0, v.1))
                .collect();
            svg.polyline(&shifted, colour, 1, "2 3");
        }
    }

    // Points below the chart's floor pass by far: drawn on the lower edge.
    let place = |hz: f64, dbuv: f64| -> Option<(f64, f64)> {
        if !f.in_band(hz) || !dbuv.is_finite() {
            return None;
        }
        Some(f.at(hz, dbuv.clamp(y.0, y.1)))
    };
    for p in &report.points {
        if let Some(at) = place(p.frequency_hz, p.level_dbuv) {
            svg.marker(at, shape_of(p.mode), Paint::Outline(BEFORE), 4.0);
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
                Verdict::Fail => svg.failing_marker(at, shape),
                Verdict::Pass => svg.marker(at, shape, Paint::Fill(AFTER), 4.0),
                _ => svg.marker(at, shape, Paint::Fill(NOT_JUDGED), 4.0),
            }
        }
    }
    let clamped = report
        .points
        .iter()
        .any(|p| p.level_dbuv < y.0 || p.after_filter_dbuv < y.0);
    legend(svg, report, margin, clamped);
    svg.out.push_str("</svg>\n");
}

/// The legend, in its own band under the plot (so it never covers a point): a sample of
/// each line and marker and what it is.
fn legend(svg: &mut Svg, report: &EmcReport, margin: f64, clamped: bool) {
    let top = f64::from(PLOT_HEIGHT);
    let columns = [14.0, 250.0, 480.0];
    let rows = [16.0, 45.0, 74.0, 103.0].map(|r| top + r);
    // Text beside a sample on row `r`: its top 8 px above the row's middle.
    let text = |svg: &mut Svg, s: &str, at: (f64, f64)| {
        svg.text(s, (at.0, at.1 - 8.0), "start", "0.76em", LABEL_PX)
    };
    // Row 1: the lines.
    let (c, r) = (columns[0], rows[0]);
    svg.polyline(&[(c, r), (c + 24.0, r)], QUASI_PEAK, 2, "");
    text(svg, "quasi-peak limit", (c + 32.0, r));
    let c = columns[1];
    svg.polyline(&[(c, r), (c + 24.0, r)], AVERAGE, 2, "7 4");
    text(svg, "average limit", (c + 32.0, r));
    let c = columns[2];
    if margin > 0.0 {
        svg.polyline(&[(c, r), (c + 22.0, r)], AVERAGE, 1, "2 3");
        text(
            svg,
            &format!("each limit less {} dB margin", show(margin)),
            (c + 32.0, r),
        );
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
    text(
        svg,
        "noise without the filter (hollow):",
        (columns[0], rows[1]),
    );
    for (i, s) in modes.iter().enumerate() {
        let c = columns[1] + 150.0 * i as f64;
        svg.marker((c + 10.0, rows[1]), *s, Paint::Outline(BEFORE), 4.0);
        let word = match s {
            Shape::Differential => "differential mode",
            Shape::Common => "common mode",
            Shape::Measured => "measured (mode not known)",
        };
        text(svg, word, (c + 24.0, rows[1]));
    }
    // Rows 3 and 4: after the filter, by verdict.
    text(
        svg,
        "noise after the filter (filled):",
        (columns[0], rows[2]),
    );
    let shape = modes[0];
    svg.marker((columns[1] + 10.0, rows[2]), shape, Paint::Fill(AFTER), 4.0);
    text(
        svg,
        "within the limit less the margin",
        (columns[1] + 24.0, rows[2]),
    );
    svg.failing_marker((columns[1] + 10.0, rows[3]), shape);
    text(svg, "above it: fails", (columns[1] + 24.0, rows[3]));
    if report
        .points
        .iter()
        .any(|p| !matches!(p.verdict, Verdict::Pass | Verdict::Fail))
    {
        svg.marker(
            (columns[2] + 10.0, rows[3]),
            shape,
            Paint::Fill(NOT_JUDGED),
            4.0,
        );
        text(svg, "not judged", (columns[2] + 24.0, rows[3]));
    }
    if clamped {
        text(svg, "on the lower edge: lower still", (columns[0], rows[3]));
    }
}

#[cfg(test)]
mod tests {
    use super::Px;

    /// A coordinate prints as the standard library prints its tenths (`{}` for a whole
    /// number, `{:.1}` otherwise), over a sweep of the chart's range and beyond, both signs.
    #[test]
    fn coordinates_print_as_the_standard_formatting_prints_them() {
        let by_std = |x: f64| {
            let tenths = (x * 10.0).round();
            if tenths == 0.0 {
                "0".to_string()
            } else if tenths % 10.0 == 0.0 {
                format!("{}", tenths / 10.0)
            } else {
                format!("{:.1}", tenths / 10.0)
            }
        };
        for i in -30_000..30_000 {
            for x in [i as f64 * 0.0173, i as f64 * 0.05, i as f64 * 1234.5678] {
                assert_eq!(Px(x).to_string(), by_std(x), "{x}");
            }
        }
    }
}
