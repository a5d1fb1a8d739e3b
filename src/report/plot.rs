//! The scan figure, as SVG written here (no plotting library): required
//! speed (top panel) and flight-path angle (bottom panel) against the first
//! swept input, one line per (second swept value, branch, solution).
//!
//! What a reader needs to read it, and what the tests check:
//! - every line has its own colour (by second-axis value, from
//!   [`SERIES_COLORS`]) and a style by branch: ascending solid, descending
//!   dashed, so coinciding branches stay distinguishable; a further
//!   solution on the same branch is dotted;
//! - where a line has no solution it leaves a gap, and a lane in its colour
//!   under the panel's x axis marks the gap; where no line has one, the
//!   panel is shaded grey ([`INFEASIBLE_FILL`]);
//! - a suborbital stretch (the path meets the surface) is drawn thin and
//!   faded, and the legend says so;
//! - the refined minimum is marked only when it is interior; at an end of
//!   the range a note under the title says so instead;
//! - the legend sits right of the data area, never over the curves;
//! - coordinates are written with two decimals (sub-pixel, smooth curves).

use std::fmt::Write as _;
use std::io::Write;

/// Line colours, in series order (repeating after the last).
pub const SERIES_COLORS: [(u8, u8, u8); 12] = [
    (0x1f, 0x5f, 0xa8),
    (0xc2, 0x3b, 0x22),
    (0x2e, 0x8b, 0x3e),
    (0x7a, 0x3f, 0x9d),
    (0xd9, 0x8a, 0x10),
    (0x10, 0x8f, 0x9a),
    (0x8c, 0x5a, 0x2b),
    (0xb8, 0x3f, 0x86),
    (0x55, 0x55, 0x55),
    (0x6b, 0x8e, 0x0f),
    (0x0b, 0x2c, 0x6b),
    (0x8f, 0x1d, 0x1d),
];

/// Fill of the shading where no line has a solution.
pub const INFEASIBLE_FILL: (u8, u8, u8) = (0xd4, 0xd4, 0xd4);
/// Fill of the minimum marker.
pub const MINIMUM_FILL: (u8, u8, u8) = (0x00, 0x00, 0x00);
/// Dash pattern of descending lines.
pub const DESCENDING_DASH: &str = "9 5";
/// Dash pattern of a further solution on the same branch.
pub const FURTHER_DASH: &str = "2 4";

/// `#rrggbb` of a colour, as it appears in the SVG.
pub fn hex(c: (u8, u8, u8)) -> String {
    format!("#{:02X}{:02X}{:02X}", c.0, c.1, c.2)
}

/// One line of the figure.
#[derive(Debug, Clone, PartialEq)]
pub struct PlotSeries {
    /// Legend text.
    pub label: String,
    /// Colour.
    pub color: (u8, u8, u8),
    /// Dash pattern (`None`: solid).
    pub dash: Option<&'static str>,
    /// Unbroken runs of (x, speed, flight-path angle, suborbital), display
    /// units.
    pub segments: Vec<Vec<(f64, f64, f64, bool)>>,
    /// x-intervals where this line has no solution.
    pub gaps: Vec<(f64, f64)>,
}

/// Everything the figure shows, in display units.
#[derive(Debug, Clone, PartialEq)]
pub struct PlotData {
    /// Figure title.
    pub title: String,
    /// x-axis label with unit.
    pub x_label: String,
    /// Top panel's y-axis label with unit.
    pub speed_label: String,
    /// Bottom panel's y-axis label with unit.
    pub fpa_label: String,
    /// Lines.
    pub series: Vec<PlotSeries>,
    /// x-intervals where no line has a solution.
    pub infeasible: Vec<(f64, f64)>,
    /// The refined interior minimum: x, speed, legend text.
    pub minimum: Option<(f64, f64, String)>,
    /// Remarks under the title (lines left out, a minimum at an end).
    pub notes: Vec<String>,
}

/// Page and panel geometry, px.
const WIDTH: f64 = 1100.0;
const HEIGHT: f64 = 900.0;
const LEFT: f64 = 95.0;
const PLOT_RIGHT: f64 = 790.0;
const LEGEND_X: f64 = 815.0;
const PANELS: [(f64, f64); 2] = [(95.0, 430.0), (500.0, 835.0)];
/// Height of one gap lane under a panel.
const LANE: f64 = 4.0;

fn escape(s: &str) -> String {
    s.replace('&', "&amp;")
        .replace('<', "&lt;")
        .replace('>', "&gt;")
        .replace('"', "&quot;")
}

/// Tick values for [lo, hi]: steps of 1, 2 or 5 times a power of ten,
/// about six of them.
fn ticks(lo: f64, hi: f64) -> Vec<f64> {
    let span = hi - lo;
    if !(span.is_finite() && span > 0.0) {
        return vec![lo];
    }
    let raw = span / 6.0;
    let p = 10f64.powf(raw.log10().floor());
    let step = [1.0, 2.0, 5.0, 10.0]
        .iter()
        .map(|m| m * p)
        .find(|s| *s >= raw)
        .unwrap_or(10.0 * p);
    let first = (lo / step).ceil();
    (0..)
        .map(|k| (first + k as f64) * step)
        .take_while(|v| *v <= hi + 1e-9 * step)
        .collect()
}

/// A tick label: as many decimals as the step needs.
fn tick_label(v: f64, step: f64) -> String {
    let decimals = (-(step.abs().log10().floor())).max(0.0) as usize;
    let s = format!("{v:.decimals$}");
    if s == "-0" || s.starts_with("-0.") && s.trim_start_matches(['-', '0', '.']).is_empty() {
        s.trim_start_matches('-').to_string()
    } else {
        s
    }
}

fn padded(lo: f64, hi: f64) -> (f64, f64) {
    if !(lo.is_finite() && hi.is_finite()) {
        return (0.0, 1.0);
    }
    let span = hi - lo;
    if span <= 1e-12 * (1.0 + lo.abs().max(hi.abs())) {
        let d = 0.05 * lo.abs().max(1e-3);
        return (lo - d, hi + d);
    }
    (lo - 0.06 * span, hi + 0.06 * span)
}

/// Maps data to page coordinates for one panel.
struct Frame {
    x: (f64, f64),
    y: (f64, f64),
    top: f64,
    bottom: f64,
}

impl Frame {
    fn px(&self, x: f64) -> f64 {
        LEFT + (x - self.x.0) / (self.x.1 - self.x.0) * (PLOT_RIGHT - LEFT)
    }
    fn py(&self, y: f64) -> f64 {
        self.bottom - (y - self.y.0) / (self.y.1 - self.y.0) * (self.bottom - self.top)
    }
}

fn polyline(
    svg: &mut String,
    pts: &[(f64, f64)],
    color: &str,
    width: f64,
    dash: Option<&str>,
    opacity: f64,
) {
    let mut d = String::new();
    for (x, y) in pts {
        let _ = write!(d, "{x:.2},{y:.2} ");
    }
    let dash = dash.map_or(String::new(), |d| format!(" stroke-dasharray=\"{d}\""));
    let _ = writeln!(
        svg,
        "<polyline points=\"{}\" fill=\"none\" stroke=\"{color}\" stroke-width=\"{width}\" stroke-opacity=\"{opacity}\" stroke-linejoin=\"round\"{dash}/>",
        d.trim_end()
    );
}

fn text(svg: &mut String, x: f64, y: f64, size: f64, anchor: &str, fill: &str, s: &str) {
    let _ = writeln!(
        svg,
        "<text x=\"{x:.2}\" y=\"{y:.2}\" font-family=\"sans-serif\" font-size=\"{size}\" text-anchor=\"{anchor}\" fill=\"{fill}\">{}</text>",
        escape(s)
    );
}

fn panel(svg: &mut String, data: &PlotData, f: &Frame, which: usize, y_label: &str) {
    let top = f.top;
    let bottom = f.bottom;
    // Frame and grid.
    let _ = writeln!(
        svg,
        "<rect x=\"{LEFT:.2}\" y=\"{top:.2}\" width=\"{:.2}\" height=\"{:.2}\" fill=\"#FFFFFF\" stroke=\"#999999\"/>",
        PLOT_RIGHT - LEFT,
        bottom - top
    );
    for &(l, r) in &data.infeasible {
        let (a, b) = (f.px(l), f.px(r));
        let _ = writeln!(
            svg,
            "<rect class=\"no-solution\" x=\"{:.2}\" y=\"{top:.2}\" width=\"{:.2}\" height=\"{:.2}\" fill=\"{}\" fill-opacity=\"0.7\"/>",
            a.min(b),
            (b - a).abs().max(1.0),
            bottom - top,
            hex(INFEASIBLE_FILL)
        );
    }
    let xt = ticks(f.x.0, f.x.1);
    let xstep = if xt.len() > 1 { xt[1] - xt[0] } else { 1.0 };
    for v in &xt {
        let x = f.px(*v);
        let _ = writeln!(svg, "<line x1=\"{x:.2}\" y1=\"{top:.2}\" x2=\"{x:.2}\" y2=\"{bottom:.2}\" stroke=\"#EBEBEB\"/>");
        text(
            svg,
            x,
            bottom + 16.0 + LANE * data.series.len().min(8) as f64,
            12.0,
            "middle",
            "#333333",
            &tick_label(*v, xstep),
        );
    }
    let yt = ticks(f.y.0, f.y.1);
    let ystep = if yt.len() > 1 { yt[1] - yt[0] } else { 1.0 };
    for v in &yt {
        let y = f.py(*v);
        let _ = writeln!(svg, "<line x1=\"{LEFT:.2}\" y1=\"{y:.2}\" x2=\"{PLOT_RIGHT:.2}\" y2=\"{y:.2}\" stroke=\"#EBEBEB\"/>");
        text(
            svg,
            LEFT - 8.0,
            y + 4.0,
            12.0,
            "end",
            "#333333",
            &tick_label(*v, ystep),
        );
    }
    let _ = writeln!(
        svg,
        "<text x=\"{:.2}\" y=\"{:.2}\" font-family=\"sans-serif\" font-size=\"14\" text-anchor=\"middle\" fill=\"#000000\" transform=\"rotate(-90 {:.2} {:.2})\">{}</text>",
        LEFT - 62.0,
        0.5 * (top + bottom),
        LEFT - 62.0,
        0.5 * (top + bottom),
        escape(y_label)
    );
    text(
        svg,
        0.5 * (LEFT + PLOT_RIGHT),
        bottom + 34.0 + LANE * data.series.len().min(8) as f64,
        14.0,
        "middle",
        "#000000",
        &data.x_label,
    );
    // Lines, clipped to the data area.
    let _ = writeln!(svg, "<g clip-path=\"url(#data{which})\">");
    for s in &data.series {
        let color = hex(s.color);
        for seg in &s.segments {
            // Split each segment into runs of equal suborbital flag.
            let mut run: Vec<(f64, f64)> = Vec::new();
            let mut flag = None;
            for p in seg {
                let y = if which == 0 { p.1 } else { p.2 };
                let pt = (f.px(p.0), f.py(y));
                if flag.is_some_and(|fl| fl != p.3) {
                    let last = *run.last().expect("a run has points");
                    draw_run(svg, &run, &color, s.dash, flag == Some(true));
                    run = vec![last];
                }
                flag = Some(p.3);
                run.push(pt);
            }
            draw_run(svg, &run, &color, s.dash, flag == Some(true));
        }
    }
    if which == 0 {
        if let Some((x, v, _)) = &data.minimum {
            let _ = writeln!(
                svg,
                "<circle class=\"minimum\" cx=\"{:.2}\" cy=\"{:.2}\" r=\"5\" fill=\"{}\"/>",
                f.px(*x),
                f.py(*v),
                hex(MINIMUM_FILL)
            );
        }
    }
    let _ = writeln!(svg, "</g>");
    // Gap lanes under the axis, one per line, in its colour.
    for (k, s) in data.series.iter().take(8).enumerate() {
        let y = bottom + 2.0 + LANE * k as f64;
        for &(l, r) in &s.gaps {
            let (a, b) = (f.px(l), f.px(r));
            let _ = writeln!(
                svg,
                "<rect class=\"gap\" x=\"{:.2}\" y=\"{y:.2}\" width=\"{:.2}\" height=\"{:.2}\" fill=\"{}\"/>",
                a.min(b),
                (b - a).abs().max(2.0),
                LANE - 1.0,
                hex(s.color)
            );
        }
    }
}

fn draw_run(
    svg: &mut String,
    run: &[(f64, f64)],
    color: &str,
    dash: Option<&str>,
    suborbital: bool,
) {
    match run.len() {
        0 => {}
        1 => {
            let _ = writeln!(
                svg,
                "<circle cx=\"{:.2}\" cy=\"{:.2}\" r=\"3\" fill=\"{color}\" fill-opacity=\"{}\"/>",
                run[0].0,
                run[0].1,
                if suborbital { 0.45 } else { 1.0 }
            );
        }
        _ if suborbital => polyline(svg, run, color, 1.0, dash, 0.45),
        _ => polyline(svg, run, color, 2.2, dash, 1.0),
    }
}

fn legend(svg: &mut String, data: &PlotData) {
    let mut y = PANELS[0].0 + 6.0;
    text(svg, LEGEND_X, y, 13.0, "start", "#000000", "lines");
    y += 20.0;
    for s in &data.series {
        let _ = writeln!(svg, "<g class=\"legend-entry\">");
        polyline(
            svg,
            &[(LEGEND_X, y - 4.0), (LEGEND_X + 30.0, y - 4.0)],
            &hex(s.color),
            2.2,
            s.dash,
            1.0,
        );
        text(svg, LEGEND_X + 38.0, y, 12.0, "start", "#000000", &s.label);
        let _ = writeln!(svg, "</g>");
        y += 18.0;
    }
    y += 8.0;
    if data
        .series
        .iter()
        .any(|s| s.segments.iter().flatten().any(|p| p.3))
    {
        polyline(
            svg,
            &[(LEGEND_X, y - 4.0), (LEGEND_X + 30.0, y - 4.0)],
            "#555555",
            1.0,
            None,
            0.45,
        );
        text(
            svg,
            LEGEND_X + 38.0,
            y,
            12.0,
            "start",
            "#000000",
            "thin, faded: suborbital",
        );
        y += 18.0;
    }
    if data.series.iter().any(|s| !s.gaps.is_empty()) {
        let _ = writeln!(
            svg,
            "<rect x=\"{LEGEND_X:.2}\" y=\"{:.2}\" width=\"30\" height=\"3\" fill=\"#555555\"/>",
            y - 6.0
        );
        text(
            svg,
            LEGEND_X + 38.0,
            y,
            12.0,
            "start",
            "#000000",
            "lane under the axis:",
        );
        y += 15.0;
        text(
            svg,
            LEGEND_X + 38.0,
            y,
            12.0,
            "start",
            "#000000",
            "that line has no solution",
        );
        y += 18.0;
    }
    if !data.infeasible.is_empty() {
        let _ = writeln!(
            svg,
            "<rect x=\"{LEGEND_X:.2}\" y=\"{:.2}\" width=\"30\" height=\"12\" fill=\"{}\"/>",
            y - 11.0,
            hex(INFEASIBLE_FILL)
        );
        text(
            svg,
            LEGEND_X + 38.0,
            y,
            12.0,
            "start",
            "#000000",
            "no line has a solution",
        );
        y += 18.0;
    }
    if let Some((_, _, label)) = &data.minimum {
        let _ = writeln!(
            svg,
            "<circle cx=\"{:.2}\" cy=\"{:.2}\" r=\"5\" fill=\"{}\"/>",
            LEGEND_X + 15.0,
            y - 4.0,
            hex(MINIMUM_FILL)
        );
        text(svg, LEGEND_X + 38.0, y, 12.0, "start", "#000000", label);
    }
}

/// Draws the figure as SVG into `out`.
///
/// # Errors
/// Write errors of `out`.
pub fn write_svg(out: &mut impl Write, data: &PlotData) -> std::io::Result<()> {
    out.write_all(svg(data).as_bytes())?;
    out.flush()
}

/// The figure's SVG text.
pub fn svg(data: &PlotData) -> String {
    let xs = data
        .series
        .iter()
        .flat_map(|s| s.segments.iter().flatten())
        .map(|p| p.0)
        .chain(data.infeasible.iter().flat_map(|(l, r)| [*l, *r]))
        .chain(
            data.series
                .iter()
                .flat_map(|s| s.gaps.iter().flat_map(|(l, r)| [*l, *r])),
        );
    let (lo, hi) = xs.fold((f64::INFINITY, f64::NEG_INFINITY), |(a, b), v| {
        (a.min(v), b.max(v))
    });
    let x = if lo.is_finite() && hi > lo {
        (lo, hi)
    } else {
        padded(lo, hi)
    };
    let range = |pick: fn(&(f64, f64, f64, bool)) -> f64| {
        let (a, b) = data
            .series
            .iter()
            .flat_map(|s| s.segments.iter().flatten())
            .map(pick)
            .fold((f64::INFINITY, f64::NEG_INFINITY), |(a, b), v| {
                (a.min(v), b.max(v))
            });
        padded(a, b)
    };
    let frames = [
        Frame {
            x,
            y: range(|p| p.1),
            top: PANELS[0].0,
            bottom: PANELS[0].1 - 30.0,
        },
        Frame {
            x,
            y: range(|p| p.2),
            top: PANELS[1].0,
            bottom: PANELS[1].1 - 30.0,
        },
    ];
    let mut svg = String::new();
    let _ = writeln!(
        svg,
        "<svg xmlns=\"http://www.w3.org/2000/svg\" width=\"{WIDTH}\" height=\"{HEIGHT}\" viewBox=\"0 0 {WIDTH} {HEIGHT}\">"
    );
    let _ = writeln!(
        svg,
        "<rect width=\"{WIDTH}\" height=\"{HEIGHT}\" fill=\"#FFFFFF\"/>"
    );
    let _ = writeln!(svg, "<defs>");
    for (k, f) in frames.iter().enumerate() {
        let _ = writeln!(
            svg,
            "<clipPath id=\"data{k}\"><rect x=\"{LEFT:.2}\" y=\"{:.2}\" width=\"{:.2}\" height=\"{:.2}\"/></clipPath>",
            f.top,
            PLOT_RIGHT - LEFT,
            f.bottom - f.top
        );
    }
    let _ = writeln!(svg, "</defs>");
    text(&mut svg, 30.0, 32.0, 20.0, "start", "#000000", &data.title);
    for (k, note) in data.notes.iter().enumerate() {
        text(
            &mut svg,
            30.0,
            54.0 + 16.0 * k as f64,
            13.0,
            "start",
            "#555555",
            note,
        );
    }
    panel(&mut svg, data, &frames[0], 0, &data.speed_label);
    panel(&mut svg, data, &frames[1], 1, &data.fpa_label);
    legend(&mut svg, data);
    // The caution every human-readable output carries, on two lines.
    let caution = super::CAUTION;
    let cut = caution.find(" Verify").unwrap_or(caution.len());
    text(
        &mut svg,
        30.0,
        HEIGHT - 28.0,
        11.0,
        "start",
        "#666666",
        &caution[..cut],
    );
    text(
        &mut svg,
        30.0,
        HEIGHT - 12.0,
        11.0,
        "start",
        "#666666",
        caution[cut..].trim_start(),
    );
    let _ = writeln!(svg, "</svg>");
    svg
}

/// The data area of each panel on the page (left, top, right, bottom), px:
/// for tests that check where things are drawn.
pub fn data_areas() -> [(f64, f64, f64, f64); 2] {
    [
        (LEFT, PANELS[0].0, PLOT_RIGHT, PANELS[0].1 - 30.0),
        (LEFT, PANELS[1].0, PLOT_RIGHT, PANELS[1].1 - 30.0),
    ]
}

/// Where the legend starts on the page, px (x).
pub const LEGEND_LEFT: f64 = LEGEND_X;

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn ticks_are_round_steps_inside_the_range() {
        assert_eq!(ticks(0.0, 10.0), vec![0.0, 2.0, 4.0, 6.0, 8.0, 10.0]);
        let t = ticks(7.8, 8.05);
        assert!(t.iter().all(|v| (7.8..=8.05).contains(v)), "{t:?}");
        assert!((t[1] - t[0] - 0.05).abs() < 1e-12, "{t:?}");
        assert_eq!(tick_label(-0.0, 0.5), "0.0");
        assert_eq!(tick_label(7.85, 0.05), "7.85");
    }

    #[test]
    fn labels_are_escaped_and_the_caution_is_drawn() {
        let data = PlotData {
            title: "a < b & c".into(),
            x_label: "x".into(),
            speed_label: "v".into(),
            fpa_label: "g".into(),
            series: vec![PlotSeries {
                label: "ascending".into(),
                color: SERIES_COLORS[0],
                dash: None,
                segments: vec![vec![(0.0, 1.0, 2.0, false), (1.0, 1.5, 2.5, false)]],
                gaps: vec![],
            }],
            infeasible: vec![],
            minimum: None,
            notes: vec![],
        };
        let s = svg(&data);
        assert!(s.contains("a &lt; b &amp; c"));
        assert!(roxmltree::Document::parse(&s).is_ok());
        assert!(s.contains("caution: analysis support only."));
    }
}
