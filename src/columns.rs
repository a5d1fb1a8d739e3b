//! The contract's result columns: one list, read by the input layer (to
//! tell an input column from a result), the engines (to name swept
//! columns) and every writer.

use crate::solve::sensitivity::{COLS, ROWS};

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
/// latitude geocentric; `plane`: northbound, southbound, eastbound or
/// westbound, which of the two planes through the site the row flies).
pub const SITE_COLUMNS: [&str; 9] = [
    "launch_azimuth_deg",
    "azimuth_deg",
    "burnout_latitude_deg",
    "burnout_longitude_deg",
    "relative_speed_m_s",
    "relative_flight_path_angle_deg",
    "relative_azimuth_deg",
    "inclination_deg",
    "plane",
];

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

/// `given_<name>` for an input column whose name equals a result column
/// written beside it (the sensitivity and site columns count when they are
/// written); the name as read otherwise.
pub fn given_name(name: &str, sensitivities: bool, site: bool) -> String {
    let taken = RESULT_COLUMNS.contains(&name)
        || (site && SITE_COLUMNS.contains(&name))
        || (sensitivities && sensitivity_columns().iter().any(|c| c == name));
    if taken {
        format!("given_{name}")
    } else {
        name.to_string()
    }
}
