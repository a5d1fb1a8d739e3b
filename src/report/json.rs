//! JSON wire types (serialize-only, SI with units in the keys) and writer.

use crate::solve::problem::{Solution, Solved};
use crate::solve::sensitivity::{COLS, ROWS};
use serde::Serialize;
use std::io::Write;

/// `body` object.
#[derive(Serialize)]
pub struct BodyJson {
    /// Body name.
    pub name: String,
    /// GM, m^3/s^2.
    pub mu_m3_s2: f64,
    /// Equatorial radius, m.
    pub radius_m: f64,
}

/// `orbit` object.
#[derive(Serialize, Clone)]
pub struct OrbitJson {
    /// Periapsis radius, m.
    pub periapsis_radius_m: f64,
    /// Apoapsis radius, m (null for open orbits).
    pub apoapsis_radius_m: Option<f64>,
    /// Semi-major axis, m (null for a parabola; negative for a hyperbola).
    pub sma_m: Option<f64>,
    /// Eccentricity.
    pub ecc: f64,
    /// Period, s (null for open orbits).
    pub period_s: Option<f64>,
    /// Specific orbital energy, J/kg.
    pub specific_energy_j_kg: f64,
    /// Specific angular momentum, m^2/s.
    pub angular_momentum_m2_s: f64,
    /// C3, m^2/s^2.
    pub c3_m2_s2: f64,
    /// Semi-latus rectum, m (addition to the contract).
    pub semi_latus_rectum_m: f64,
    /// Periapsis altitude above the equatorial radius, m (addition).
    pub periapsis_alt_m: f64,
    /// Apoapsis altitude, m (addition; null for open orbits).
    pub apoapsis_alt_m: Option<f64>,
    /// Inclination, deg (with a launch site only).
    #[serde(skip_serializing_if = "Option::is_none")]
    pub inclination_deg: Option<f64>,
}

/// Surface-relative burnout velocity.
#[derive(Serialize)]
pub struct RelativeJson {
    /// Speed relative to the rotating surface, m/s.
    pub speed_m_s: f64,
    /// Flight-path angle relative to the rotating surface, deg.
    pub flight_path_angle_deg: f64,
    /// Heading relative to the rotating surface, deg from north through east.
    pub azimuth_deg: f64,
}

/// `sensitivity` object.
#[derive(Serialize)]
pub struct SensitivityJson {
    /// Row names.
    pub rows: [&'static str; 5],
    /// Column names.
    pub cols: [&'static str; 3],
    /// Partials; a row is null where the quantity does not exist.
    pub matrix: Vec<Option<[f64; 3]>>,
}

/// One entry of `solutions`.
#[derive(Serialize)]
pub struct SolutionJson {
    /// `ascending` or `descending`.
    pub branch: &'static str,
    /// Burnout radius of this solution, m.
    pub burnout_radius_m: f64,
    /// Burnout altitude of this solution, m (addition).
    pub burnout_alt_m: f64,
    /// Burnout speed, m/s.
    pub speed_m_s: f64,
    /// Flight-path angle from the local horizontal, deg.
    pub flight_path_angle_deg: f64,
    /// Zenith angle from the local vertical, deg (addition).
    pub zenith_angle_deg: f64,
    /// True anomaly at burnout, deg.
    pub true_anomaly_deg: f64,
    /// Radial and horizontal speed components, m/s (addition).
    pub radial_speed_m_s: f64,
    /// Horizontal speed, m/s (addition).
    pub horizontal_speed_m_s: f64,
    /// The orbit of this solution (addition; differs between entries only
    /// when a target set has two speeds).
    pub orbit: OrbitJson,
    /// Partials.
    pub sensitivity: SensitivityJson,
    /// Warnings for this solution (addition).
    pub warnings: Vec<String>,
    /// Inertial azimuth at burnout, deg (with a site).
    #[serde(skip_serializing_if = "Option::is_none")]
    pub azimuth_deg: Option<f64>,
    /// Geocentric latitude of the burnout point, deg (with a site).
    #[serde(skip_serializing_if = "Option::is_none")]
    pub burnout_latitude_deg: Option<f64>,
    /// Longitude of the burnout point, deg (with a site).
    #[serde(skip_serializing_if = "Option::is_none")]
    pub burnout_longitude_deg: Option<f64>,
    /// Surface-relative burnout velocity (with a site).
    #[serde(skip_serializing_if = "Option::is_none")]
    pub relative: Option<RelativeJson>,
    /// Achieved minus targeted value of each target at this solution, SI
    /// (addition; the `solver` residuals are those of the first solution).
    pub residuals: serde_json::Map<String, serde_json::Value>,
    /// Launch azimuth at the site as flown, deg (with a site; addition).
    #[serde(skip_serializing_if = "Option::is_none")]
    pub launch_azimuth_deg: Option<f64>,
    /// Eastward speed of the surface at burnout, m/s (with a site; addition).
    #[serde(skip_serializing_if = "Option::is_none")]
    pub rotation_speed_m_s: Option<f64>,
    /// The plane flown from the site: `northbound`, `southbound`,
    /// `eastbound` or `westbound` (with a site; addition; the branch stays
    /// the sign of the radial speed).
    #[serde(skip_serializing_if = "Option::is_none")]
    pub plane: Option<&'static str>,
    /// Flight-plan numbers: times to the apsides, apsis speeds, v-infinity
    /// and asymptote, impact, time above `--above-alt` (addition).
    pub flight: serde_json::Value,
    /// Exact changes of the orbit for reference burnout errors of either
    /// sign, from the forward map (addition; see `near_circular`).
    pub response: ResponseJson,
    /// Whether the orbit is near-circular, where the apsides move with the
    /// size of a flight-path angle error, not its sign, and the partials in
    /// the angle are not a linear coefficient (addition).
    pub near_circular: bool,
}

/// Exact changes of the rows (the sensitivity's rows, SI) for burnout
/// errors of the sizes given, each sign, each error alone.
#[derive(Debug, Serialize)]
pub struct ResponseJson {
    /// Error sizes: `speed_m_s`, `flight_path_angle_deg`, `burnout_radius_m`.
    pub steps: serde_json::Map<String, serde_json::Value>,
    /// For +step of each column: `{column: {row: change}}` (null where the
    /// row does not exist).
    pub plus: serde_json::Map<String, serde_json::Value>,
    /// As `plus`, for -step.
    pub minus: serde_json::Map<String, serde_json::Value>,
}

fn response_json(mu: f64, s: &Solution) -> (ResponseJson, bool) {
    use crate::solve::sensitivity::{exact_responses, is_near_circular, REFERENCE_STEPS};
    let r = exact_responses(mu, &s.state, REFERENCE_STEPS);
    let table = |d: &[[Option<f64>; 5]; 3]| {
        let mut m = serde_json::Map::new();
        for (k, col) in COLS.iter().enumerate() {
            let mut rows = serde_json::Map::new();
            for (i, row) in ROWS.iter().enumerate() {
                rows.insert(row.to_string(), serde_json::json!(d[k][i]));
            }
            m.insert(col.to_string(), serde_json::Value::Object(rows));
        }
        m
    };
    let mut steps = serde_json::Map::new();
    steps.insert(COLS[0].into(), serde_json::json!(r.steps[0]));
    steps.insert(COLS[1].into(), serde_json::json!(r.steps[1].to_degrees()));
    steps.insert(COLS[2].into(), serde_json::json!(r.steps[2]));
    (
        ResponseJson {
            steps,
            plus: table(&r.plus),
            minus: table(&r.minus),
        },
        is_near_circular(&s.state, &r),
    )
}

/// `solver` object.
#[derive(Serialize)]
pub struct SolverJson {
    /// `closed-form` or the numerical method.
    pub method: String,
    /// Iterations.
    pub iterations: u64,
    /// Termination reason.
    pub termination: String,
    /// Achieved minus targeted value per target key, SI.
    pub residuals: serde_json::Map<String, serde_json::Value>,
}

/// The whole `solve` document.
#[derive(Serialize)]
pub struct SolveJson {
    /// Body.
    pub body: BodyJson,
    /// Burnout radius shared by every solution, m; null when the solutions
    /// lie at different radii (each solution carries its own).
    pub burnout_radius_m: Option<f64>,
    /// Burnout altitude, m (addition; null like `burnout_radius_m`).
    pub burnout_alt_m: Option<f64>,
    /// Circular speed at burnout radius, m/s (addition; null like
    /// `burnout_radius_m`).
    pub circular_speed_m_s: Option<f64>,
    /// Escape speed at burnout radius, m/s (addition; null likewise).
    pub escape_speed_m_s: Option<f64>,
    /// Orbit of the first solution.
    pub orbit: Option<OrbitJson>,
    /// Solutions.
    pub solutions: Vec<SolutionJson>,
    /// Warnings.
    pub warnings: Vec<String>,
    /// How it was solved.
    pub solver: SolverJson,
    /// The inputs answered, in SI (addition): burnout point, fixed speed and
    /// angle, targets by key, site, options.
    pub inputs: serde_json::Value,
}

/// The problem's inputs in SI (radians as degrees, keys with units).
fn inputs_json(solved: &Solved) -> serde_json::Value {
    let p = &solved.problem;
    let mut targets = serde_json::Map::new();
    for t in &p.targets {
        let v = if t.quantity == crate::solve::target::TargetQuantity::AngleToApoapsis {
            t.value.to_degrees()
        } else {
            t.value
        };
        targets.insert(t.quantity.key().to_string(), serde_json::json!(v));
    }
    let site = p.site.map(|s| {
        serde_json::json!({
            "latitude_deg": s.latitude_geodetic_rad.to_degrees(),
            "longitude_deg": s.longitude_rad.to_degrees(),
            "azimuth_deg": s.azimuth_rad.map(f64::to_degrees),
            "downrange_deg": s.downrange_rad.to_degrees(),
            "inclination_deg": s.inclination_rad.map(f64::to_degrees),
        })
    });
    serde_json::json!({
        "burnout_radius_m": p.burnout_radius_m,
        "speed_m_s": p.speed_m_s,
        "flight_path_angle_deg": p.flight_path_angle_rad.map(f64::to_degrees),
        "targets": targets,
        "site": site,
        "min_periapsis_alt_m": p.min_periapsis_alt_m,
        "above_alt_m": p.above_alt_m,
    })
}

/// The flight-plan numbers of a solution (see [`crate::solve::flight`]).
fn flight_json(solved: &Solved, s: &Solution) -> serde_json::Value {
    let f =
        crate::solve::flight::flight_numbers(&solved.body, &s.state, solved.problem.above_alt_m);
    let from_site = s
        .site
        .and(solved.problem.site)
        .map(|site| site.downrange_rad);
    serde_json::json!({
        "to_apoapsis_s": f.to_apoapsis_s,
        "to_periapsis_s": f.to_periapsis_s,
        "periapsis_speed_m_s": f.periapsis_speed_m_s,
        "apoapsis_speed_m_s": f.apoapsis_speed_m_s,
        "v_infinity_m_s": f.v_infinity_m_s,
        "asymptote_angle_deg": f.asymptote_angle_rad.map(f64::to_degrees),
        "impact": f.impact.map(|i| serde_json::json!({
            "time_s": i.time_s,
            "speed_m_s": i.speed_m_s,
            "flight_path_angle_deg": i.flight_path_angle_rad.to_degrees(),
            "downrange_deg": i.downrange_rad.to_degrees(),
            "ground_range_m": i.ground_range_m,
            "ground_range_from_site_m": from_site.map(|d| (d + i.downrange_rad) * solved.body.radius_m),
        })),
        "above_alt_m": solved.problem.above_alt_m,
        "time_above_s": f.time_above_s,
    })
}

/// Orbit object of a solution.
pub fn orbit_json(mu: f64, surface_m: f64, s: &Solution) -> OrbitJson {
    let c = &s.state.conic;
    OrbitJson {
        periapsis_radius_m: c.periapsis_radius_m(),
        apoapsis_radius_m: c.apoapsis_radius_m(),
        sma_m: c.sma_m(),
        ecc: c.ecc(),
        period_s: c.period_s(mu),
        specific_energy_j_kg: c.specific_energy_j_kg(mu),
        angular_momentum_m2_s: c.angular_momentum_m2_s(mu),
        c3_m2_s2: c.c3_m2_s2(mu),
        semi_latus_rectum_m: c.semi_latus_rectum_m(),
        periapsis_alt_m: c.periapsis_radius_m() - surface_m,
        apoapsis_alt_m: c.apoapsis_radius_m().map(|r| r - surface_m),
        inclination_deg: s.site.map(|x| x.inclination_rad.to_degrees()),
    }
}

fn solution_json(mu: f64, surface_m: f64, s: &Solution) -> SolutionJson {
    let st = &s.state;
    let (response, near_circular) = response_json(mu, s);
    let (sin_g, cos_g) = st.flight_path_angle_rad.sin_cos();
    SolutionJson {
        branch: st.branch.name(),
        burnout_radius_m: st.radius_m,
        burnout_alt_m: st.radius_m - surface_m,
        speed_m_s: st.speed_m_s,
        flight_path_angle_deg: st.flight_path_angle_rad.to_degrees(),
        zenith_angle_deg: 90.0 - st.flight_path_angle_rad.to_degrees(),
        true_anomaly_deg: st.true_anomaly_rad.to_degrees(),
        radial_speed_m_s: st.speed_m_s * sin_g,
        horizontal_speed_m_s: st.speed_m_s * cos_g,
        orbit: orbit_json(mu, surface_m, s),
        sensitivity: SensitivityJson {
            rows: ROWS,
            cols: COLS,
            matrix: s.sensitivity.rows.to_vec(),
        },
        warnings: s.warnings.iter().map(|w| w.to_string()).collect(),
        azimuth_deg: s.site.map(|x| x.inertial_azimuth_rad.to_degrees()),
        burnout_latitude_deg: s.site.map(|x| x.burnout_latitude_rad.to_degrees()),
        burnout_longitude_deg: s.site.map(|x| x.burnout_longitude_rad.to_degrees()),
        relative: s.site.map(|x| RelativeJson {
            speed_m_s: x.relative_speed_m_s,
            flight_path_angle_deg: x.relative_flight_path_angle_rad.to_degrees(),
            azimuth_deg: x.relative_azimuth_rad.to_degrees(),
        }),
        residuals: residual_map(&s.residuals),
        launch_azimuth_deg: s.site.map(|x| x.launch_azimuth_rad.to_degrees()),
        rotation_speed_m_s: s.site.map(|x| x.rotation_speed_m_s),
        plane: s
            .site
            .map(|x| crate::physics::site::plane_label(x.launch_azimuth_rad)),
        flight: serde_json::Value::Null,
        response,
        near_circular,
    }
}

fn residual_map(residuals: &[(String, f64)]) -> serde_json::Map<String, serde_json::Value> {
    residuals
        .iter()
        .map(|(k, v)| (k.clone(), serde_json::json!(v)))
        .collect()
}

/// Builds the wire document for a solved problem.
pub fn document(solved: &Solved) -> SolveJson {
    let mu = solved.body.mu_m3_s2;
    let surface = solved.body.radius_m;
    let solutions: Vec<SolutionJson> = solved
        .solutions
        .iter()
        .map(|s| {
            let mut j = solution_json(mu, surface, s);
            j.flight = flight_json(solved, s);
            j
        })
        .collect();
    let residuals = residual_map(&solved.solver.residuals);
    let shared = solved.shared_burnout_radius_m();
    SolveJson {
        body: BodyJson {
            name: solved.body.name.clone(),
            mu_m3_s2: mu,
            radius_m: surface,
        },
        burnout_radius_m: shared,
        burnout_alt_m: shared.map(|r| r - surface),
        circular_speed_m_s: shared.map(|r| solved.body.circular_speed_m_s(r)),
        escape_speed_m_s: shared.map(|r| solved.body.escape_speed_m_s(r)),
        orbit: solutions.first().map(|s| s.orbit.clone()),
        solutions,
        warnings: solved.warnings(),
        solver: SolverJson {
            method: solved.solver.method.clone(),
            iterations: solved.solver.iterations,
            termination: solved.solver.termination.clone(),
            residuals,
        },
        inputs: inputs_json(solved),
    }
}

/// Writes the solved problem as pretty JSON followed by a newline.
///
/// # Errors
/// I/O errors of `out`.
pub fn write(out: &mut impl Write, solved: &Solved) -> std::io::Result<()> {
    serde_json::to_writer_pretty(&mut *out, &document(solved))?;
    writeln!(out)
}
