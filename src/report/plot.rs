//! The scan figure: required speed (top panel) and flight-path angle
//! (bottom panel) against the first swept input, one line per branch or per
//! value of the second swept input, infeasible stretches shaded, the
//! minimum marked. Drawn with plotters' SVG backend into any `impl Write`.
//!
//! SVG text is left to the viewer's fonts, so nothing is needed at build
//! time. Each line has its own stroke colour from [`SERIES_COLORS`] (in both
//! panels and in the legend), the shading is filled with
//! [`INFEASIBLE_FILL`] and the minimum is a circle filled with
//! [`MINIMUM_FILL`]: tests find the series by these.

use plotters::coord::Shift;
use plotters::prelude::*;
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

/// Fill of the shaded stretches where points did not solve.
pub const INFEASIBLE_FILL: (u8, u8, u8) = (0xd4, 0xd4, 0xd4);
/// Fill of the minimum marker.
pub const MINIMUM_FILL: (u8, u8, u8) = (0x00, 0x00, 0x00);

/// `#rrggbb` of a colour, as it appears in the SVG.
pub fn hex(c: (u8, u8, u8)) -> String {
    format!("#{:02X}{:02X}{:02X}", c.0, c.1, c.2)
}

/// One line of the figure.
#[derive(Debug, Clone, PartialEq)]
pub struct PlotSeries {
    /// Legend text.
    pub label: String,
    /// Unbroken runs of (x, speed, flight-path angle), display units.
    pub segments: Vec<Vec<(f64, f64, f64)>>,
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
    /// x-intervals where points did not solve.
    pub infeasible: Vec<(f64, f64)>,
    /// The minimum: x, speed, legend text.
    pub minimum: Option<(f64, f64, String)>,
    /// A remark under the title (e.g. which lines were left out).
    pub note: Option<String>,
}

fn rgb(c: (u8, u8, u8)) -> RGBColor {
    RGBColor(c.0, c.1, c.2)
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

type Failure = Box<dyn std::error::Error>;

fn panel(
    area: &DrawingArea<SVGBackend, Shift>,
    data: &PlotData,
    x_range: (f64, f64),
    y_of: fn(&(f64, f64, f64)) -> f64,
    y_label: &str,
    with_minimum: bool,
) -> Result<(), Failure> {
    let values = data
        .series
        .iter()
        .flat_map(|s| s.segments.iter().flatten())
        .map(y_of);
    let (lo, hi) = values.fold((f64::INFINITY, f64::NEG_INFINITY), |(a, b), v| {
        (a.min(v), b.max(v))
    });
    let (y0, y1) = padded(lo, hi);
    let mut chart = ChartBuilder::on(area)
        .margin_left(10)
        .margin_right(25)
        .margin_top(10)
        .x_label_area_size(48)
        .y_label_area_size(80)
        .build_cartesian_2d(x_range.0..x_range.1, y0..y1)?;
    chart
        .configure_mesh()
        .x_desc(data.x_label.as_str())
        .y_desc(y_label)
        .axis_desc_style(("sans-serif", 16))
        .label_style(("sans-serif", 13))
        .bold_line_style(RGBColor(0xe6, 0xe6, 0xe6))
        .light_line_style(RGBColor(0xf4, 0xf4, 0xf4))
        .draw()?;
    for (k, &(l, r)) in data.infeasible.iter().enumerate() {
        let shade = rgb(INFEASIBLE_FILL).mix(0.6).filled();
        let anno = chart.draw_series(std::iter::once(Rectangle::new([(l, y0), (r, y1)], shade)))?;
        if k == 0 {
            anno.label("no solution").legend(|(x, y)| {
                Rectangle::new([(x, y - 5), (x + 18, y + 5)], rgb(INFEASIBLE_FILL).filled())
            });
        }
    }
    for (i, s) in data.series.iter().enumerate() {
        let color = rgb(SERIES_COLORS[i % SERIES_COLORS.len()]);
        let mut labelled = false;
        for seg in &s.segments {
            if seg.is_empty() {
                continue;
            }
            let anno = if seg.len() == 1 {
                let p = seg[0];
                chart.draw_series(std::iter::once(Circle::new(
                    (p.0, y_of(&p)),
                    3,
                    color.filled(),
                )))?
            } else {
                chart.draw_series(LineSeries::new(
                    seg.iter().map(|p| (p.0, y_of(p))),
                    color.stroke_width(2),
                ))?
            };
            if !labelled {
                anno.label(s.label.as_str()).legend(move |(x, y)| {
                    PathElement::new(vec![(x, y), (x + 18, y)], color.stroke_width(2))
                });
                labelled = true;
            }
        }
    }
    if with_minimum {
        if let Some((x, v, label)) = &data.minimum {
            let marker = rgb(MINIMUM_FILL).filled();
            chart
                .draw_series(std::iter::once(Circle::new((*x, *v), 5, marker)))?
                .label(label.as_str())
                .legend(move |(x, y)| Circle::new((x + 9, y), 4, marker));
        }
    }
    chart
        .configure_series_labels()
        .position(SeriesLabelPosition::UpperRight)
        .background_style(WHITE.mix(0.85))
        .border_style(RGBColor(0x99, 0x99, 0x99))
        .label_font(("sans-serif", 13))
        .draw()?;
    Ok(())
}

/// Draws the figure as SVG into `out`.
///
/// # Errors
/// Write errors of `out`; a drawing error is reported as an I/O error.
pub fn write_svg(out: &mut impl Write, data: &PlotData) -> std::io::Result<()> {
    let mut svg = String::new();
    draw(&mut svg, data).map_err(|e| std::io::Error::other(format!("cannot draw: {e}")))?;
    out.write_all(svg.as_bytes())?;
    out.flush()
}

fn draw(svg: &mut String, data: &PlotData) -> Result<(), Failure> {
    let xs = data
        .series
        .iter()
        .flat_map(|s| s.segments.iter().flatten())
        .map(|p| p.0)
        .chain(data.infeasible.iter().flat_map(|(l, r)| [*l, *r]));
    let (lo, hi) = xs.fold((f64::INFINITY, f64::NEG_INFINITY), |(a, b), v| {
        (a.min(v), b.max(v))
    });
    let x_range = if lo.is_finite() && hi > lo {
        (lo, hi)
    } else {
        padded(lo, hi)
    };
    let root = SVGBackend::with_string(svg, (1000, 880)).into_drawing_area();
    root.fill(&WHITE)?;
    let (head, rest) = root.split_vertically(70);
    head.draw_text(
        &data.title,
        &("sans-serif", 22).into_font().color(&BLACK),
        (30, 18),
    )?;
    if let Some(note) = &data.note {
        head.draw_text(
            note,
            &("sans-serif", 13)
                .into_font()
                .color(&RGBColor(0x55, 0x55, 0x55)),
            (30, 48),
        )?;
    }
    let (panels, foot) = rest.split_vertically(770);
    let (top, bottom) = panels.split_vertically(385);
    panel(&top, data, x_range, |p| p.1, &data.speed_label, true)?;
    panel(&bottom, data, x_range, |p| p.2, &data.fpa_label, false)?;
    let grey = ("sans-serif", 11)
        .into_font()
        .color(&RGBColor(0x66, 0x66, 0x66));
    // The caution every human-readable output carries, on two lines.
    let caution = super::CAUTION;
    let cut = caution.find(" Verify").unwrap_or(caution.len());
    foot.draw_text(&caution[..cut], &grey, (30, 8))?;
    foot.draw_text(caution[cut..].trim_start(), &grey, (30, 24))?;
    root.present()?;
    Ok(())
}

#[cfg(test)]
mod tests {
    use super::*;

    fn sample() -> PlotData {
        PlotData {
            title: "Required burnout speed and flight-path angle vs burnout altitude".into(),
            x_label: "burnout altitude (km)".into(),
            speed_label: "required speed (km/s)".into(),
            fpa_label: "flight-path angle (deg)".into(),
            series: vec![
                PlotSeries {
                    label: "ascending".into(),
                    segments: vec![
                        vec![(150.0, 10.2, 2.5), (200.0, 10.1, 3.0)],
                        vec![(300.0, 10.0, 4.0), (350.0, 9.9, 4.2)],
                    ],
                },
                PlotSeries {
                    label: "descending".into(),
                    segments: vec![vec![(150.0, 10.2, -2.5), (200.0, 10.1, -3.0)]],
                },
            ],
            infeasible: vec![(225.0, 275.0)],
            minimum: Some((350.0, 9.9, "minimum 9.9000 km/s at 350 km".into())),
            note: None,
        }
    }

    #[test]
    fn figure_is_svg_with_one_polyline_per_segment_and_panel_plus_legend() {
        let mut out = Vec::new();
        write_svg(&mut out, &sample()).unwrap();
        let text = String::from_utf8(out).unwrap();
        let doc = roxmltree::Document::parse(&text).unwrap();
        let strokes = |c: (u8, u8, u8)| {
            let want = hex(c);
            doc.descendants()
                .filter(|n| {
                    n.has_tag_name("polyline") && n.attribute("stroke") == Some(want.as_str())
                })
                .count()
        };
        // ascending: 2 segments x 2 panels + 2 legend entries.
        assert_eq!(strokes(SERIES_COLORS[0]), 6);
        // descending: 1 segment x 2 panels + 2 legend entries.
        assert_eq!(strokes(SERIES_COLORS[1]), 4);
        let texts: Vec<&str> = doc
            .descendants()
            .filter(|n| n.has_tag_name("text"))
            .filter_map(|n| n.text())
            .collect();
        for want in [
            "burnout altitude (km)",
            "required speed (km/s)",
            "flight-path angle (deg)",
            "ascending",
            "descending",
            "no solution",
        ] {
            assert!(
                texts.iter().any(|t| t.trim() == want),
                "missing text {want}: {texts:?}"
            );
        }
    }
}
