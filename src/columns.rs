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

/// The numeric result values of a solution, in the order of
/// `RESULT_COLUMNS[3..]` (speed m/s, flight-path angle deg, true anomaly
/// deg, periapsis, apoapsis, sma m, ecc, period s, C3 m2/s2, burnout radius
/// m); `None` where the orbit lacks the quantity.
pub fn result_values(mu_m3_s2: f64, st: &crate::physics::state::BurnoutState) -> [Option<f64>; 10] {
    let c = &st.conic;
    [
        Some(st.speed_m_s),
        Some(st.flight_path_angle_rad.to_degrees()),
        Some(st.true_anomaly_rad.to_degrees()),
        Some(c.periapsis_radius_m()),
        c.apoapsis_radius_m(),
        c.sma_m(),
        Some(c.ecc()),
        c.period_s(mu_m3_s2),
        Some(c.c3_m2_s2(mu_m3_s2)),
        Some(st.radius_m),
    ]
}

/// Flight-plan columns (`--flight`), after the site columns: times to the
/// apsides, apsis speeds, v-infinity and the asymptote, the impact, and the
/// time above `--above-alt` (see [`crate::solve::flight`]); blank where a
/// number does not exist for the row.
pub const FLIGHT_COLUMNS: [&str; 12] = [
    "to_apoapsis_s",
    "to_periapsis_s",
    "periapsis_speed_m_s",
    "apoapsis_speed_m_s",
    "v_infinity_m_s",
    "asymptote_angle_deg",
    "impact_time_s",
    "impact_speed_m_s",
    "impact_flight_path_angle_deg",
    "impact_downrange_deg",
    "impact_ground_range_m",
    "time_above_s",
];

/// The values of [`FLIGHT_COLUMNS`] for a row.
pub fn flight_values(f: Option<&crate::solve::flight::FlightNumbers>) -> [Option<f64>; 12] {
    let Some(f) = f else {
        return [None; 12];
    };
    let i = f.impact;
    [
        f.to_apoapsis_s,
        f.to_periapsis_s,
        f.periapsis_speed_m_s,
        f.apoapsis_speed_m_s,
        f.v_infinity_m_s,
        f.asymptote_angle_rad.map(f64::to_degrees),
        i.map(|i| i.time_s),
        i.map(|i| i.speed_m_s),
        i.map(|i| i.flight_path_angle_rad.to_degrees()),
        i.map(|i| i.downrange_rad.to_degrees()),
        i.map(|i| i.ground_range_m),
        f.time_above_s,
    ]
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
