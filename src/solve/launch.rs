//! The coupled launch-site solve: the launch azimuth found together with the
//! planar unknowns when the target includes an inclination (geometry in
//! [`crate::physics::site`]).

use crate::error::{g, mention, Error};
use crate::physics::body::Body;
use crate::physics::site::{
    azimuths_for_inclination, geocentric_latitude, great_circle, site_state, validate, SiteInputs,
    SiteState,
};
use std::f64::consts::PI;

/// The coupled site problem: launch azimuth plus the planar unknowns, with
/// the planar targets and the inclination as residuals.
struct SiteSystem<'a> {
    body: &'a Body,
    site: &'a SiteInputs,
    planar: &'a crate::solve::numeric::System,
    inclination_rad: f64,
}

impl SiteSystem<'_> {
    fn state(&self, x: &[f64]) -> (f64, f64, f64, f64) {
        let (r, v, gamma) = self.planar.state_of(&x[1..]);
        (x[0], r, v, gamma)
    }
}

impl crate::solve::numeric::Residuals for SiteSystem<'_> {
    fn residuals_x(&self, x: &[f64]) -> Option<Vec<f64>> {
        let (az, r, v, gamma) = self.state(x);
        if r < self.body.radius_m {
            return None;
        }
        let mut res = self.planar.residuals_at(r, v, gamma)?;
        let st = site_state(self.body, self.site, az, r, v, gamma).ok()?;
        res.push(st.inclination_rad - self.inclination_rad);
        Some(res)
    }
}

/// Solves a problem flown from a launch site.
///
/// Without a target inclination the launch azimuth is required and the
/// planar answer is decorated with the site geometry. With one, and no
/// azimuth, launch azimuth and the planar unknowns are solved together on
/// argmin's trust-region least-squares solver, started from the
/// non-rotating closed-form answer (both branches) and the two azimuths of
/// cos i = cos(lat) sin(beta) at the site (northbound, southbound). With both
/// an azimuth and an inclination, the inclination is a check.
///
/// # Errors
/// [`Error::Usage`] when neither azimuth nor inclination is given;
/// [`Error::Infeasible`] when the inclination cannot be reached (named with
/// the latitude); the errors of [`crate::solve::solve`].
pub fn solve_with_site(
    problem: &crate::solve::problem::Problem,
    site: &SiteInputs,
) -> Result<crate::solve::problem::Solved, Error> {
    validate(site)?;
    let planar = super::solve_planar(problem)?;
    // A given launch azimuth decorates the planar answer; a target
    // inclination beside it is a check.
    if let Some(az) = site.azimuth_rad {
        return with_given_azimuth(problem, site, planar, az);
    }
    let Some(i_t) = site.inclination_rad else {
        return Err(Error::Usage(format!(
            "a launch site needs {} or a target {}",
            mention("azimuth", "a launch azimuth"),
            mention("inclination", "inclination")
        )));
    };
    let body = &problem.body;
    let system = crate::solve::numeric::System::new(problem)?;
    let coupled = SiteSystem {
        body,
        site,
        planar: &system,
        inclination_rad: i_t,
    };
    let runs = coupled_runs(&coupled, &planar, &system);
    // A start accepted only when polished to the root tolerance: where the
    // inclination barely changes with azimuth (near a pole), an unconverged
    // start can sit within a looser tolerance of the target anywhere.
    let tol = crate::solve::numeric::ROOT_TOLERANCE;
    let mut good: Vec<&crate::solve::numeric::Run> = runs
        .iter()
        .filter(|r| crate::solve::numeric::max_abs(&r.residuals) <= tol)
        .collect();
    good.sort_by(|a, b| {
        crate::solve::numeric::max_abs(&a.residuals)
            .total_cmp(&crate::solve::numeric::max_abs(&b.residuals))
    });
    if good.is_empty() {
        return Err(no_azimuth(body, site, i_t));
    }
    let (mut states, mut sites) = distinct_roots(&coupled, &planar, &good)?;
    // The planar answer already dropped roots that meet the surface before
    // a targeted apsis; a coupled run polished away from one is held to the
    // same rule.
    let keep = crate::solve::feasibility::reaching_coast_events(body, &problem.targets, &states)?;
    if keep.len() < states.len() {
        states = keep.iter().map(|&i| states[i]).collect();
        sites = keep.iter().map(|&i| sites[i]).collect();
    }
    Ok(assemble(problem, i_t, good[0], states, sites))
}

/// The planar answer flown at a given launch azimuth; a target inclination
/// beside it must agree.
fn with_given_azimuth(
    problem: &crate::solve::problem::Problem,
    site: &SiteInputs,
    planar: crate::solve::problem::Solved,
    az: f64,
) -> Result<crate::solve::problem::Solved, Error> {
    let body = &problem.body;
    let mut solved = planar;
    for s in &mut solved.solutions {
        let st = &s.state;
        let ss = site_state(
            body,
            site,
            az,
            st.radius_m,
            st.speed_m_s,
            st.flight_path_angle_rad,
        )?;
        if let Some(i_t) = site.inclination_rad {
            let d = ss.inclination_rad - i_t;
            if d.abs() > 1e-9 {
                return Err(Error::Infeasible(format!(
                        "the targets conflict: launch azimuth {} deg gives inclination {} deg, not the target {} deg (residual {} deg)",
                        g(az.to_degrees()),
                        g(ss.inclination_rad.to_degrees()),
                        g(i_t.to_degrees()),
                        g(d.to_degrees())
                    )));
            }
        }
        s.site = Some(ss);
    }
    if site.inclination_rad.is_some() {
        solved
            .solver
            .residuals
            .push(("inclination_deg".into(), 0.0));
    }
    Ok(solved)
}

/// The two azimuths of the non-rotating relation at the site, then a ring
/// of starts every 30 deg (with downrange, or an inclination close to the
/// latitude, the northbound and southbound roots move apart from the
/// site's pair and need their own starts), each from every planar answer.
fn coupled_runs(
    coupled: &SiteSystem,
    planar: &crate::solve::problem::Solved,
    system: &crate::solve::numeric::System,
) -> Vec<crate::solve::numeric::Run> {
    let lat_site = geocentric_latitude(coupled.body, coupled.site.latitude_geodetic_rad);
    let mut az_seeds: Vec<f64> = match azimuths_for_inclination(lat_site, coupled.inclination_rad) {
        Ok((n, s)) => vec![n, s],
        Err(_) => Vec::new(),
    };
    az_seeds.extend((0..12).map(|k| k as f64 * PI / 6.0));
    let mut runs = Vec::new();
    for sol in &planar.solutions {
        let st = &sol.state;
        let planar_x = system.coords_of(st.radius_m, st.speed_m_s, st.flight_path_angle_rad);
        for az in &az_seeds {
            let mut x0 = vec![*az];
            x0.extend_from_slice(&planar_x);
            if let Some(run) = crate::solve::numeric::trust_region(coupled, x0) {
                runs.push(run);
            }
        }
    }
    runs
}

/// Why no azimuth reaches the inclination: usually an inclination below
/// the burnout latitude (named), else the speed and downrange.
fn no_azimuth(body: &Body, site: &SiteInputs, i_t: f64) -> Error {
    let lat_site = geocentric_latitude(body, site.latitude_geodetic_rad);
    let first = azimuths_for_inclination(lat_site, i_t).map_or(0.0, |(n, _)| n);
    let (lat_b, _, _) = great_circle(lat_site, site.longitude_rad, first, site.downrange_rad);
    if let Err(e) = azimuths_for_inclination(lat_b, i_t) {
        return e;
    }
    Error::Infeasible(format!(
        "no launch azimuth from latitude {} deg reaches inclination {} deg at this burnout speed and downrange",
        g(site.latitude_geodetic_rad.to_degrees()),
        g(i_t.to_degrees())
    ))
}

/// The distinct roots among the accepted runs, each with its site state.
/// The planar part of a coupled root is one of the planar answers (the
/// in-plane targets do not depend on the azimuth): that state itself is
/// taken, with its exact target conic, rather than the forward map of the
/// rounded root (whose e ~ 1e-17 on a circular target can put burnout at
/// apoapsis, true anomaly 180 deg, and flip the partials' apsides).
fn distinct_roots(
    coupled: &SiteSystem,
    planar: &crate::solve::problem::Solved,
    good: &[&crate::solve::numeric::Run],
) -> Result<(Vec<crate::physics::state::BurnoutState>, Vec<SiteState>), Error> {
    let (body, site) = (coupled.body, coupled.site);
    let mut states = Vec::new();
    let mut sites: Vec<SiteState> = Vec::new();
    for run in good {
        let (az, r, v, gamma) = coupled.state(&run.x);
        let az = az.rem_euclid(2.0 * PI);
        let dup = sites.iter().zip(&states).any(
            |(s, st): (&SiteState, &crate::physics::state::BurnoutState)| {
                let d = (s.launch_azimuth_rad - az).rem_euclid(2.0 * PI);
                // The inclination's sensitivity to azimuth scales with
                // cos(latitude): near a pole a root is only located to
                // about 1e-6 / cos(lat) rad, so merge within that.
                let radius = 1e-6 / s.burnout_latitude_rad.cos().max(1e-3);
                d.min(2.0 * PI - d) < radius
                    && (st.speed_m_s - v).abs() < 1e-7 * v
                    && (st.flight_path_angle_rad - gamma).abs() < 1e-7
            },
        );
        if dup {
            continue;
        }
        let planar_twin = planar.solutions.iter().map(|s| s.state).find(|p| {
            (p.radius_m - r).abs() <= 1e-9 * r
                && (p.speed_m_s - v).abs() <= 1e-9 * v
                && (p.flight_path_angle_rad - gamma).abs() <= 1e-9
        });
        let st = match planar_twin {
            Some(p) => p,
            None => crate::physics::state::forward_state(body.mu_m3_s2, r, v, gamma)?,
        };
        sites.push(site_state(
            body,
            site,
            az,
            st.radius_m,
            st.speed_m_s,
            st.flight_path_angle_rad,
        )?);
        states.push(st);
    }
    Ok((states, sites))
}

/// The solved problem: states finished as any answer, each with its own
/// site state, ascending first and by launch azimuth.
fn assemble(
    problem: &crate::solve::problem::Problem,
    i_t: f64,
    best: &crate::solve::numeric::Run,
    states: Vec<crate::physics::state::BurnoutState>,
    sites: Vec<SiteState>,
) -> crate::solve::problem::Solved {
    use crate::solve::problem::{finish, SolverReport};
    let mu = problem.body.mu_m3_s2;
    let mut residuals = crate::solve::problem::target_residuals(mu, &problem.targets, &states[0]);
    residuals.push((
        "inclination_deg".into(),
        (sites[0].inclination_rad - i_t).to_degrees(),
    ));
    let report = SolverReport {
        method: "trust-region on launch azimuth with the burnout state, seeded from the non-rotating closed form (argmin)".into(),
        iterations: best.iterations,
        termination: best.termination.clone(),
        residuals,
    };
    let mut solved = finish(problem, states.clone(), report);
    // finish() orders solutions; attach each site state to its own state
    // (northbound and southbound share one planar state, so take each once).
    let mut used = vec![false; states.len()];
    for s in &mut solved.solutions {
        if let Some(k) = (0..states.len()).find(|&k| !used[k] && states[k] == s.state) {
            used[k] = true;
            s.site = Some(sites[k]);
        }
    }
    solved.solutions.sort_by(|a, b| {
        let key = |s: &crate::solve::problem::Solution| {
            s.site.map(|x| x.launch_azimuth_rad).unwrap_or(0.0)
        };
        (a.state.branch as u8)
            .cmp(&(b.state.branch as u8))
            .then(key(a).total_cmp(&key(b)))
    });
    solved
}
