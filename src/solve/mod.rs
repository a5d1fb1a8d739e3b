//! Problem in, solution out: the solvers of the targeting problem.
//!
//! [`solve`] is the one dispatcher: closed forms where they exist
//! ([`invert`]), the numerical line searches and least squares
//! ([`numeric`]) otherwise, and the coupled launch-azimuth solve ([`launch`])
//! when the problem carries a launch site. [`fast_pair`] is the
//! allocation-free road for the commonest case, bit for bit the same.

pub mod budget;
pub mod fast_pair;
pub mod feasibility;
pub mod flight;
pub mod invert;
pub mod launch;
pub mod numeric;
pub mod problem;
pub mod sensitivity;
pub mod target;

use crate::error::{mention, positive, Error};
use crate::physics::state::{forward_state, BurnoutState};
use invert::{burnout_for_conic, fpa_for_speed, speed_for_target};
use problem::{closed_form_report, finish, Problem, Solved};
use target::{conic_from_pair, Target};

/// Solves a targeting problem: the one dispatcher.
///
/// Closed forms answer: two orbit-element targets; one target with a fixed
/// flight-path angle or speed; speed and angle with no target (the forward
/// problem). Any other combination goes to the numerical solver.
///
/// # Errors
/// [`Error::BelowSurface`] for a burnout radius under the surface; the errors
/// of the inversions; [`Error::Usage`] for an under-specified problem.
pub fn solve(problem: &Problem) -> Result<Solved, Error> {
    match &problem.site {
        Some(site) => launch::solve_with_site(problem, site),
        None => solve_planar(problem),
    }
}

/// The problem without its launch site: burnout state and orbit in the
/// orbit plane, whatever the plane's orientation.
pub(crate) fn solve_planar(problem: &Problem) -> Result<Solved, Error> {
    let body = &problem.body;
    let mu = body.mu_m3_s2;
    for t in &problem.targets {
        t.validate()?;
    }
    if let Some(v) = problem.speed_m_s {
        positive("burnout speed", v, "m/s")?;
    }
    if let Some(fpa) = problem.flight_path_angle_rad {
        crate::physics::orbit::check_fpa(fpa)?;
    }
    let Some(r) = problem.burnout_radius_m else {
        if let Some(solved) = free_radius_closed_form(problem)? {
            return Ok(solved);
        }
        if problem.speed_m_s.is_none() && problem.flight_path_angle_rad.is_none() {
            return Err(Error::Usage(format!(
                "missing burnout point: give {} or {} (or {} or {} with target quantities to solve for the burnout altitude)",
                mention("burnout-alt", "a burnout altitude"),
                mention("burnout-radius", "a burnout radius"),
                mention("fpa", "a flight-path angle"),
                mention("speed", "a speed")
            )));
        }
        if problem.targets.is_empty() {
            return Err(Error::Usage(format!(
                "{} and {} without a burnout point need a target quantity to solve for the burnout altitude",
                mention("speed", "speed"),
                mention("fpa", "flight-path angle")
            )));
        }
        return numeric::solve_numeric(problem);
    };
    let r = body.check_burnout_radius(r)?;
    let elements: Vec<&Target> = problem
        .targets
        .iter()
        .filter(|t| t.quantity.is_orbit_element())
        .collect();
    let all_elements = elements.len() == problem.targets.len();
    let n = problem.targets.len();
    let states: Vec<BurnoutState> = match (n, problem.flight_path_angle_rad, problem.speed_m_s) {
        (0, Some(fpa), Some(v)) => vec![forward_state(mu, r, v, fpa)?],
        (2, None, None) if all_elements => {
            let conic = conic_from_pair(mu, elements[0], elements[1])?;
            burnout_for_conic(mu, &conic, r)?
        }
        (1, Some(fpa), None) if all_elements => speed_for_target(mu, r, fpa, elements[0])?,
        (1, None, Some(v)) if all_elements => fpa_for_speed(mu, r, v, elements[0])?,
        (0, _, _) => {
            let (fpa, speed) = (
                mention("fpa", "a flight-path angle"),
                mention("speed", "a speed"),
            );
            return Err(Error::Usage(format!(
                "nothing to target: give two target quantities (e.g. {} and {}), one with {fpa} or {speed}, or {speed} and {fpa} for the orbit they reach",
                mention("periapsis_radius_m", "a periapsis"),
                mention("apoapsis_radius_m", "an apoapsis"),
            )))
        }
        (1, None, None) => {
            return Err(Error::Usage(format!(
                "{} alone leaves burnout speed and flight-path angle both free: add a second target quantity, or {} or {}",
                problem.targets[0].mention(),
                mention("fpa", "a flight-path angle"),
                mention("speed", "a speed")
            )))
        }
        _ => return numeric::solve_numeric(problem),
    };
    Ok(finish(problem, states, closed_form_report(problem, None)))
}

/// Burnout radius free, two orbit-element targets and one of speed or
/// flight-path angle: the target conic is known, and the radius follows in
/// closed form (vis-viva for a speed, the conic's own angle for a
/// flight-path angle). `Ok(None)` when the problem is not of that kind.
fn free_radius_closed_form(problem: &Problem) -> Result<Option<Solved>, Error> {
    let mu = problem.body.mu_m3_s2;
    let [a, b] = problem.targets.as_slice() else {
        return Ok(None);
    };
    if !(a.quantity.is_orbit_element() && b.quantity.is_orbit_element()) {
        return Ok(None);
    }
    let states = match (problem.speed_m_s, problem.flight_path_angle_rad) {
        (Some(v), None) => invert::burnout_for_conic_at_speed(mu, &conic_from_pair(mu, a, b)?, v)?,
        (None, Some(fpa)) => {
            invert::burnout_for_conic_at_fpa(mu, &conic_from_pair(mu, a, b)?, fpa)?
        }
        _ => return Ok(None),
    };
    let surface = problem.body.radius_m;
    let lowest = states.first().map(|s| s.radius_m);
    let states: Vec<BurnoutState> = states
        .into_iter()
        .filter(|s| s.radius_m >= surface)
        .collect();
    if states.is_empty() {
        return Err(Error::BelowSurface {
            burnout_radius_m: lowest.unwrap_or(f64::NAN),
            surface_radius_m: surface,
        });
    }
    Ok(Some(finish(
        problem,
        states,
        closed_form_report(problem, None),
    )))
}
