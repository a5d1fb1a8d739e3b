//! The scan figure as a reader sees it (issue 14): per-line gaps, the
//! suborbital stretches, the legend outside the data, smooth coordinates,
//! and the figure rendered to pixels.

use crate::scan::run_in;
use burnout::report::plot::{data_areas, hex, LEGEND_LEFT, SERIES_COLORS};

fn svg_of(dir: &std::path::Path, args: &[&str]) -> String {
    let r = run_in(dir, args);
    assert_eq!(r.code, Some(0), "{}", r.stderr);
    std::fs::read_to_string(dir.join("fig.svg")).expect("the figure was written")
}

/// Renders an SVG to an RGBA pixmap with resvg (text is left out: no
/// fonts are loaded, the tests look at shapes).
pub fn render(svg: &str) -> resvg::tiny_skia::Pixmap {
    let tree =
        resvg::usvg::Tree::from_str(svg, &resvg::usvg::Options::default()).expect("valid SVG");
    let size = tree.size().to_int_size();
    let mut pixmap = resvg::tiny_skia::Pixmap::new(size.width(), size.height()).unwrap();
    resvg::render(
        &tree,
        resvg::tiny_skia::Transform::default(),
        &mut pixmap.as_mut(),
    );
    pixmap
}

fn has_color_in(p: &resvg::tiny_skia::Pixmap, c: (u8, u8, u8), area: (f64, f64, f64, f64)) -> bool {
    let (l, t, r, b) = area;
    (t as u32..b as u32).any(|y| {
        (l as u32..r as u32).any(|x| {
            p.pixel(x, y)
                .is_some_and(|px| (px.red(), px.green(), px.blue()) == c && px.alpha() == 255)
        })
    })
}

/// Two apoapsis values from burnout altitudes 200-600 km: the 300 km
/// apoapsis cannot be reached from above 300 km, so that line has a gap
/// (its lane under the axis, in its colour) while the other line goes on:
/// no grey band, which would hide that the other line solves.
#[test]
fn a_line_without_solutions_shows_its_own_gap_not_a_band_for_all() {
    let dir = tempfile::tempdir().unwrap();
    let svg = svg_of(
        dir.path(),
        &[
            "scan",
            "--burnout-alt",
            "200km..600km:20km",
            "--periapsis-alt",
            "200km",
            "--apoapsis-alt",
            "300km..1000km:700km",
            "--branch",
            "ascending",
            "--out",
            "fig.csv",
            "--plot",
            "fig.svg",
        ],
    );
    let keep = std::path::Path::new(env!("CARGO_TARGET_TMPDIR")).join("figure-two-lines.png");
    std::fs::write(keep, render(&svg).encode_png().unwrap()).unwrap();
    let doc = roxmltree::Document::parse(&svg).unwrap();
    let gaps: Vec<_> = doc
        .descendants()
        .filter(|n| n.has_tag_name("rect") && n.attribute("class") == Some("gap"))
        .collect();
    assert!(!gaps.is_empty());
    assert!(
        gaps.iter()
            .all(|g| g.attribute("fill") == Some(hex(SERIES_COLORS[0]).as_str())),
        "only the 300 km line has a gap"
    );
    let bands = doc
        .descendants()
        .filter(|n| n.has_tag_name("rect") && n.attribute("class") == Some("no-solution"))
        .count();
    assert_eq!(bands, 0);
    // Smooth curves: coordinates with decimals, not whole pixels.
    let fractional = doc
        .descendants()
        .filter(|n| n.has_tag_name("polyline"))
        .filter_map(|n| n.attribute("points"))
        .flat_map(|p| p.split([' ', ',']).map(str::to_string).collect::<Vec<_>>())
        .filter(|v| v.parse::<f64>().is_ok_and(|x| x.fract() != 0.0))
        .count();
    assert!(fractional > 20, "sub-pixel coordinates expected");
}

/// An angle scan at a fixed apoapsis: the steep rows are suborbital and are
/// drawn thin and faded, and the legend says what that means; the legend
/// lies right of both data areas; rendered, each line's colour appears
/// inside the data area and in the legend.
#[test]
fn suborbital_stretches_are_marked_and_the_legend_is_outside_the_data() {
    let dir = tempfile::tempdir().unwrap();
    let svg = svg_of(
        dir.path(),
        &[
            "scan",
            "--burnout-alt",
            "250",
            "--apoapsis-alt",
            "800",
            "--fpa=-10deg..10deg:0.5deg",
            "--out",
            "fig.csv",
            "--plot",
            "fig.svg",
        ],
    );
    let doc = roxmltree::Document::parse(&svg).unwrap();
    let faded = doc
        .descendants()
        .filter(|n| n.has_tag_name("polyline") && n.attribute("stroke-opacity") == Some("0.45"))
        .count();
    assert!(faded >= 2, "suborbital stretches drawn faded");
    let texts: Vec<&str> = doc
        .descendants()
        .filter_map(|n| n.has_tag_name("text").then(|| n.text()).flatten())
        .collect();
    assert!(texts.contains(&"thin, faded: suborbital"), "{texts:?}");
    let [top, bottom] = data_areas();
    assert!(LEGEND_LEFT > top.2 && LEGEND_LEFT > bottom.2);
    for entry in doc
        .descendants()
        .filter(|n| n.attribute("class") == Some("legend-entry"))
    {
        for t in entry.descendants().filter(|n| n.has_tag_name("text")) {
            let x: f64 = t.attribute("x").unwrap().parse().unwrap();
            assert!(x > top.2, "legend text at x {x} inside the data area");
        }
    }
    let png = render(&svg);
    // Kept for a person to look at: target/tmp/figure-fpa-scan.png.
    let keep = std::path::Path::new(env!("CARGO_TARGET_TMPDIR")).join("figure-fpa-scan.png");
    std::fs::write(keep, png.encode_png().unwrap()).unwrap();
    let legend_area = (LEGEND_LEFT, top.1, LEGEND_LEFT + 40.0, top.3);
    for c in [SERIES_COLORS[0], SERIES_COLORS[1]] {
        assert!(has_color_in(&png, c, top), "{c:?} drawn in the speed panel");
        assert!(
            has_color_in(&png, c, bottom),
            "{c:?} drawn in the angle panel"
        );
        assert!(has_color_in(&png, c, legend_area), "{c:?} in the legend");
    }
}
