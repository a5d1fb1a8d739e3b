//! CSV columns and rows for solved problems (shared by `solve --format csv`,
//! `scan` and `batch`).

use crate::problem::{Solution, Solved};
use crate::sensitivity::{COLS, ROWS};
use std::io::Write;

/// Result columns after the input columns, in order.
pub const RESULT_COLUMNS: [&str; 13] = [
    "status",
    "message",
    "branch",
    "speed_m_s",
    "flight_path_angle_deg",
    "true_anomaly_deg",
    "periapsis_radius_m",
    "apoapsis_radius_m",
    "sma_m",
    "ecc",
    "period_s",
    "c3_m2_s2",
    "burnout_radius_m",
];

/// Launch-site columns, added after the result (and sensitivity) columns
/// when a launch site is among the inputs (angles in deg, speeds in m/s;
/// latitude geocentric).
pub const SITE_COLUMNS: [&str; 8] = [
    "launch_azimuth_deg",
    "azimuth_deg",
    "burnout_latitude_deg",
    "burnout_longitude_deg",
    "relative_speed_m_s",
    "relative_flight_path_angle_deg",
    "relative_azimuth_deg",
    "inclination_deg",
];

/// The values of [`SITE_COLUMNS`] for a site state.
pub fn site_values(site: Option<&crate::site::SiteState>) -> [Option<f64>; 8] {
    match site {
        None => [None; 8],
        Some(x) => [
            Some(x.launch_azimuth_rad.to_degrees()),
            Some(x.inertial_azimuth_rad.to_degrees()),
            Some(x.burnout_latitude_rad.to_degrees()),
            Some(x.burnout_longitude_rad.to_degrees()),
            Some(x.relative_speed_m_s),
            Some(x.relative_flight_path_angle_rad.to_degrees()),
            Some(x.relative_azimuth_rad.to_degrees()),
            Some(x.inclination_rad.to_degrees()),
        ],
    }
}

/// The 15 sensitivity column names `d_<row>_d_<col>`.
pub fn sensitivity_columns() -> Vec<String> {
    let mut out = Vec::with_capacity(15);
    for r in ROWS {
        for c in COLS {
            out.push(format!("d_{r}_d_{c}"));
        }
    }
    out
}

/// Shortest round-trip text of a float; empty for `None`.
pub fn fmt_opt(x: Option<f64>) -> String {
    match x {
        Some(v) if v.is_finite() => {
            let mut b = ryu::Buffer::new();
            let s = b.format_finite(v);
            s.strip_suffix(".0").unwrap_or(s).to_string()
        }
        _ => String::new(),
    }
}

/// Result fields for one solution (status `ok`).
pub fn solution_fields(mu_m3_s2: f64, s: &Solution, sensitivities: bool) -> Vec<String> {
    let st = &s.state;
    let c = &st.conic;
    let mut f = vec![
        "ok".to_string(),
        s.warnings
            .iter()
            .map(|w| w.to_string())
            .collect::<Vec<_>>()
            .join("; "),
        st.branch.name().to_string(),
        fmt_opt(Some(st.speed_m_s)),
        fmt_opt(Some(st.flight_path_angle_rad.to_degrees())),
        fmt_opt(Some(st.true_anomaly_rad.to_degrees())),
        fmt_opt(Some(c.periapsis_radius_m())),
        fmt_opt(c.apoapsis_radius_m()),
        fmt_opt(c.sma_m()),
        fmt_opt(Some(c.ecc())),
        fmt_opt(c.period_s(mu_m3_s2)),
        fmt_opt(Some(c.c3_m2_s2(mu_m3_s2))),
        fmt_opt(Some(st.radius_m)),
    ];
    if sensitivities {
        for row in s.sensitivity.rows {
            for k in 0..3 {
                f.push(fmt_opt(row.map(|r| r[k])));
            }
        }
    }
    f
}

/// Result fields for a row that did not solve.
pub fn failure_fields(status: &str, message: &str, sensitivities: bool) -> Vec<String> {
    let mut f = vec![status.to_string(), message.to_string()];
    let blanks = RESULT_COLUMNS.len() - 2 + if sensitivities { 15 } else { 0 };
    f.extend(std::iter::repeat_n(String::new(), blanks));
    f
}

/// Writes a solved problem as CSV: header, then one row per solution.
///
/// # Errors
/// I/O or CSV errors.
pub fn write(out: &mut impl Write, solved: &Solved, sensitivities: bool) -> Result<(), csv::Error> {
    let mut w = csv::Writer::from_writer(out);
    let mut header: Vec<String> = RESULT_COLUMNS.iter().map(|s| s.to_string()).collect();
    if sensitivities {
        header.extend(sensitivity_columns());
    }
    w.write_record(&header)?;
    for s in &solved.solutions {
        w.write_record(solution_fields(solved.body.mu_m3_s2, s, sensitivities))?;
    }
    w.flush()?;
    Ok(())
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn floats_round_trip_and_integers_drop_the_point() {
        assert_eq!(fmt_opt(Some(6578137.0)), "6578137");
        assert_eq!(fmt_opt(Some(0.1)), "0.1");
        assert_eq!(fmt_opt(None), "");
        let x = 1.0 / 3.0;
        assert_eq!(
            fmt_opt(Some(x)).parse::<f64>().unwrap().to_bits(),
            x.to_bits()
        );
    }

    #[test]
    fn sensitivity_columns_follow_contract_names() {
        let c = sensitivity_columns();
        assert_eq!(c.len(), 15);
        assert!(c.contains(&"d_apoapsis_radius_m_d_speed_m_s".to_string()));
    }
}
