//! Error-budget reports: human table and JSON.

use crate::error::g;
use crate::solve::budget::{Allowed, RowError};
use crate::solve::problem::Solution;
use serde::Serialize;
use std::io::Write;

/// One solution's budget.
pub struct BudgetReport<'a> {
    /// The solution analysed.
    pub solution: &'a Solution,
    /// Mapped 1-sigma errors, if burnout errors were given.
    pub mapped: Option<Vec<RowError>>,
    /// Allowed errors, if tolerances were given.
    pub allowed: Option<Allowed>,
}

#[derive(Serialize)]
struct RowJson {
    one_sigma: f64,
    three_sigma: f64,
    dominant: &'static str,
    dominant_share: f64,
}

#[derive(Serialize)]
struct AllowedJson {
    linear: Option<f64>,
    minus: Option<f64>,
    plus: Option<f64>,
    limited_by: Option<&'static str>,
}

#[derive(Serialize)]
struct AxisJson {
    half_length: Option<f64>,
    direction: [f64; 3],
    exact_limit: Option<f64>,
}

#[derive(Serialize)]
struct EllipsoidJson {
    units: [&'static str; 3],
    axes: Vec<AxisJson>,
    extent: serde_json::Map<String, serde_json::Value>,
}

#[derive(Serialize)]
struct EntryJson {
    branch: &'static str,
    speed_m_s: f64,
    flight_path_angle_deg: f64,
    burnout_radius_m: f64,
    orbit_errors: Option<serde_json::Map<String, serde_json::Value>>,
    allowed_alone: Option<serde_json::Map<String, serde_json::Value>>,
    allowed_joint: Option<EllipsoidJson>,
}

fn finite(x: f64) -> Option<f64> {
    x.is_finite().then_some(x)
}

/// Converts an SI burnout component (m/s, rad, m) to its reported unit
/// (m/s, deg, m).
fn reported(component: usize, x: f64) -> f64 {
    if component == 1 {
        x.to_degrees()
    } else {
        x
    }
}

/// Writes the budget as JSON: `{"budget": [ ... ]}`; angles in deg.
///
/// # Errors
/// I/O errors.
pub fn write_json(out: &mut impl Write, reports: &[BudgetReport]) -> std::io::Result<()> {
    let entries: Vec<EntryJson> = reports
        .iter()
        .map(|r| {
            let st = &r.solution.state;
            EntryJson {
                branch: st.branch.name(),
                speed_m_s: st.speed_m_s,
                flight_path_angle_deg: st.flight_path_angle_rad.to_degrees(),
                burnout_radius_m: st.radius_m,
                orbit_errors: r.mapped.as_ref().map(|rows| {
                    rows.iter()
                        .map(|row| {
                            (
                                row.quantity.to_string(),
                                serde_json::to_value(RowJson {
                                    one_sigma: row.one_sigma,
                                    three_sigma: row.three_sigma,
                                    dominant: row.dominant,
                                    dominant_share: row.dominant_share,
                                })
                                .unwrap_or_default(),
                            )
                        })
                        .collect()
                }),
                allowed_alone: r.allowed.as_ref().map(|a| {
                    a.alone
                        .iter()
                        .enumerate()
                        .map(|(k, e)| {
                            (
                                e.component.to_string(),
                                serde_json::to_value(AllowedJson {
                                    linear: finite(reported(k, e.linear)),
                                    minus: finite(reported(k, e.minus)),
                                    plus: finite(reported(k, e.plus)),
                                    limited_by: e.limited_by,
                                })
                                .unwrap_or_default(),
                            )
                        })
                        .collect()
                }),
                allowed_joint: r.allowed.as_ref().map(|a| EllipsoidJson {
                    units: ["m/s", "rad", "m"],
                    axes: a
                        .ellipsoid_axes
                        .iter()
                        .map(|ax| AxisJson {
                            half_length: finite(ax.half_length),
                            direction: ax.direction,
                            exact_limit: finite(ax.exact_limit),
                        })
                        .collect(),
                    extent: crate::solve::budget::COMPONENTS
                        .iter()
                        .enumerate()
                        .map(|(k, c)| {
                            (
                                c.to_string(),
                                serde_json::json!(finite(reported(k, a.ellipsoid_extent[k]))),
                            )
                        })
                        .collect(),
                }),
            }
        })
        .collect();
    serde_json::to_writer_pretty(&mut *out, &serde_json::json!({ "budget": entries }))?;
    writeln!(out)
}

fn row_label(q: &str, length_unit: &str) -> String {
    match q {
        "periapsis_radius_m" => format!("periapsis ({length_unit})"),
        "apoapsis_radius_m" => format!("apoapsis ({length_unit})"),
        "sma_m" => format!("sma ({length_unit})"),
        "ecc" => "ecc".into(),
        "period_s" => "period (s)".into(),
        other => other.into(),
    }
}

fn row_scale(q: &str) -> f64 {
    if q.ends_with("_m") {
        1e-3
    } else {
        1.0
    }
}

fn component_label(c: &str) -> &'static str {
    match c {
        "speed_m_s" => "speed",
        "flight_path_angle_deg" => "flight-path angle",
        _ => "burnout altitude",
    }
}

fn component_value(k: usize, x: f64) -> String {
    if !x.is_finite() {
        return "unlimited".into();
    }
    match k {
        0 => format!("{} m/s", g(x)),
        1 => format!("{} deg", g(x.to_degrees())),
        _ => format!("{} m", g(x)),
    }
}

/// Writes the human-readable budget.
///
/// # Errors
/// I/O errors.
pub fn write_table(out: &mut impl Write, reports: &[BudgetReport]) -> std::io::Result<()> {
    for r in reports {
        let st = &r.solution.state;
        writeln!(
            out,
            "error budget, {} branch: burnout speed {} m/s, flight-path angle {} deg, radius {} m",
            st.branch.name(),
            g(st.speed_m_s),
            g(st.flight_path_angle_rad.to_degrees()),
            g(st.radius_m)
        )?;
        if let Some(rows) = &r.mapped {
            writeln!(out)?;
            writeln!(
                out,
                "  orbit errors from the burnout errors (linear, J P J^T):"
            )?;
            writeln!(
                out,
                "  {:<16} {:>14} {:>14}   dominant burnout error",
                "quantity", "1-sigma", "3-sigma"
            )?;
            for row in rows {
                let k = row_scale(row.quantity);
                writeln!(
                    out,
                    "  {:<16} {:>14} {:>14}   {} ({:.0}% of variance alone)",
                    row_label(row.quantity, "km"),
                    g(row.one_sigma * k),
                    g(row.three_sigma * k),
                    component_label(row.dominant),
                    100.0 * row.dominant_share
                )?;
            }
        }
        if let Some(a) = &r.allowed {
            writeln!(out)?;
            writeln!(
                out,
                "  largest burnout error allowed, each alone (exact edges from the forward map):"
            )?;
            for (k, e) in a.alone.iter().enumerate() {
                writeln!(
                    out,
                    "  {:<18} -{} / +{}   (linear {}; first limit: {})",
                    component_label(e.component),
                    component_value(k, e.minus),
                    component_value(k, e.plus),
                    component_value(k, e.linear),
                    e.limited_by
                        .map(|q| row_label(q, "").replace(" ()", ""))
                        .unwrap_or_else(|| "none".into())
                )?;
            }
            writeln!(out)?;
            writeln!(out, "  joint region (first-order ellipsoid inside every tolerance, each axis cut where the exact forward map first breaks one):")?;
            for (k, c) in crate::solve::budget::COMPONENTS.iter().enumerate() {
                writeln!(
                    out,
                    "  {:<18} up to +/-{} on the ellipsoid",
                    component_label(c),
                    component_value(k, a.ellipsoid_extent[k])
                )?;
            }
            writeln!(out, "  principal axes (components in m/s, rad, m):")?;
            for ax in &a.ellipsoid_axes {
                writeln!(
                    out,
                    "  axis half-length {:>12} (exact limit {:>12}) along (speed m/s {:+.4}, fpa rad {:+.4}, radius m {:+.4})",
                    if ax.half_length.is_finite() {
                        g(ax.half_length)
                    } else {
                        "unbounded".into()
                    },
                    if ax.exact_limit.is_finite() {
                        g(ax.exact_limit)
                    } else {
                        "none found".into()
                    },
                    ax.direction[0],
                    ax.direction[1],
                    ax.direction[2]
                )?;
            }
            if a.ellipsoid_axes
                .iter()
                .any(|ax| ax.half_length.is_infinite())
            {
                writeln!(
                    out,
                    "  an unbounded axis: the tolerances do not constrain that combination of burnout errors to first order; its extent above is where the exact map breaks a tolerance (not safe beyond it)"
                )?;
            }
        }
        writeln!(out)?;
    }
    writeln!(out, "{}", super::CAUTION)
}
