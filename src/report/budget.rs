//! Error-budget reports: human table and JSON.

use crate::solve::budget::{Allowed, RowError, Tolerances};
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
    /// The orbit tolerances given (to say whether the dispersion fits).
    pub tolerances: Option<&'a Tolerances>,
    /// Warnings about the inputs (e.g. a sigma implausible for its unit).
    pub warnings: Vec<String>,
}

/// The tolerance on a row quantity, if one was given.
fn tolerance_of(tol: Option<&Tolerances>, quantity: &str) -> Option<f64> {
    let i = crate::solve::sensitivity::ROWS
        .iter()
        .position(|q| *q == quantity)?;
    tol.and_then(|t| t.rows[i])
}

#[derive(Serialize)]
struct RowJson {
    one_sigma: f64,
    three_sigma: f64,
    dominant: &'static str,
    dominant_share: f64,
    exact_mean_shift: Option<f64>,
    exact_one_sigma: Option<f64>,
    linear_misleads: bool,
    three_sigma_reach: f64,
    tolerance: Option<f64>,
    fits: Option<bool>,
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
    warnings: Vec<String>,
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
                warnings: r.warnings.clone(),
                orbit_errors: r.mapped.as_ref().map(|rows| {
                    rows.iter()
                        .map(|row| {
                            (
                                row.quantity.to_string(),
                                serde_json::to_value({
                                    let tol = tolerance_of(r.tolerances, row.quantity);
                                    RowJson {
                                        one_sigma: row.one_sigma,
                                        three_sigma: row.three_sigma,
                                        dominant: row.dominant,
                                        dominant_share: row.dominant_share,
                                        exact_mean_shift: finite(row.exact_mean_shift),
                                        exact_one_sigma: finite(row.exact_one_sigma),
                                        linear_misleads: row.linear_misleads(),
                                        three_sigma_reach: row.three_sigma_reach(),
                                        tolerance: tol,
                                        fits: tol.map(|t| row.three_sigma_reach() <= t),
                                    }
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
        0 => format!("{} m/s", super::sig5(x, 1e7)),
        1 => format!("{} deg", super::sig5(x.to_degrees(), 1e7)),
        _ => format!("{} m", super::sig5(x, 1e7)),
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
            "error budget, {} branch: burnout speed {:.3} m/s, flight-path angle {:.4} deg, radius {:.1} m",
            st.branch.name(),
            st.speed_m_s,
            st.flight_path_angle_rad.to_degrees(),
            st.radius_m
        )?;
        for w in &r.warnings {
            writeln!(out, "  warning: {w}")?;
        }
        if let Some(rows) = &r.mapped {
            writeln!(out)?;
            writeln!(
                out,
                "  orbit errors from the burnout errors: linear (J P J^T) and through the exact forward map (Gauss-Hermite):"
            )?;
            writeln!(
                out,
                "  {:<16} {:>12} {:>12} {:>12} {:>12}   dominant burnout error",
                "quantity", "1-sigma", "3-sigma", "exact 1-sig", "exact mean"
            )?;
            for row in rows {
                let k = row_scale(row.quantity);
                writeln!(
                    out,
                    "  {:<16} {:>12} {:>12} {:>12} {:>12}   {} ({:.0}% of the total variance alone)",
                    row_label(row.quantity, "km"),
                    super::sig5(row.one_sigma * k, 1e7),
                    super::sig5(row.three_sigma * k, 1e7),
                    super::sig5(row.exact_one_sigma * k, 1e7),
                    super::sig5(row.exact_mean_shift * k, 1e7),
                    component_label(row.dominant),
                    100.0 * row.dominant_share
                )?;
            }
            for row in rows.iter().filter(|row| row.linear_misleads()) {
                let k = row_scale(row.quantity);
                let unit = if row.quantity.ends_with("_m") {
                    " km"
                } else {
                    ""
                };
                writeln!(
                    out,
                    "  {}: the linear budget misstates it (the map bends within the dispersion, e.g. a near-circular orbit): exact 1-sigma {}{unit}, mean shift {}{unit}",
                    row_label(row.quantity, "km"),
                    super::sig5(row.exact_one_sigma * k, 1e7),
                    super::sig5(row.exact_mean_shift * k, 1e7)
                )?;
            }
            let checked: Vec<_> = rows
                .iter()
                .filter_map(|row| tolerance_of(r.tolerances, row.quantity).map(|t| (row, t)))
                .collect();
            if !checked.is_empty() {
                writeln!(out)?;
                writeln!(
                    out,
                    "  3-sigma dispersion against the tolerances (reach: |exact mean shift| + 3 exact sigmas, or the linear 3 sigmas if larger):"
                )?;
                for (row, t) in checked {
                    let k = row_scale(row.quantity);
                    let reach = row.three_sigma_reach();
                    writeln!(
                        out,
                        "  {:<16} reach {:>12} vs tolerance +/-{:<12} {}",
                        row_label(row.quantity, "km"),
                        super::sig5(reach * k, 1e7),
                        super::sig5(t * k, 1e7),
                        if reach <= t {
                            format!("fits ({:.0}% of the tolerance)", 100.0 * reach / t)
                        } else {
                            format!("DOES NOT FIT ({:.2}x the tolerance)", reach / t)
                        }
                    )?;
                }
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
                        .unwrap_or_else(|| {
                            if e.linear.is_finite() || !e.plus.is_finite() {
                                "none".into()
                            } else {
                                "second order only (exact map)".into()
                            }
                        })
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
                        super::sig5(ax.half_length, 1e7)
                    } else {
                        "unbounded".into()
                    },
                    if ax.exact_limit.is_finite() {
                        super::sig5(ax.exact_limit, 1e7)
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
