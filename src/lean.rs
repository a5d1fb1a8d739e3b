//! An allocation-free closed form for the commonest case: two orbit-element
//! targets (e.g. periapsis and apoapsis) and a burnout radius, answered with
//! both branches and their sensitivities, all on the stack.
//!
//! [`crate::solve`] is the general entry point (any target set, warnings,
//! residuals, the solver report) and costs a few heap allocations per call;
//! this function gives the same states and partials, bit for bit (a unit
//! test holds them together), for callers that solve millions of pairs.
//! [`pair_states`] is the one implementation of the closed-form inversion
//! (on the stack); [`crate::invert::burnout_for_conic`] wraps it in a `Vec`.
//! The formulas and their references are documented in [`crate::invert`].
//! Feasibility warnings are not built; [`LeanSolved::suborbital`] says
//! whether the periapsis is under the surface.

use crate::body::Body;
use crate::error::{positive, Error};
use crate::invert::{Branch, BurnoutState, APSIS_TOLERANCE};
use crate::orbit::Conic;
use crate::sensitivity::{partials_for_state, Sensitivity};
use crate::target::{conic_from_pair, Target};
use std::f64::consts::PI;

/// Up to two burnout states with their partials.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct LeanSolved {
    /// The states; only the first [`LeanSolved::len`] are meaningful.
    pub states: [BurnoutState; 2],
    /// Their partials, in the same order.
    pub sensitivities: [Sensitivity; 2],
    /// 1 at an apsis (one horizontal state, labelled ascending), else 2.
    pub len: usize,
    /// Whether the orbit's periapsis is below the body's surface.
    pub suborbital: bool,
}

impl LeanSolved {
    /// The meaningful states.
    pub fn states(&self) -> &[BurnoutState] {
        &self.states[..self.len]
    }
}

/// Both burnout states at `radius_m` on `conic`, ascending first; one at an
/// apsis. The closed-form inversion itself (see [`crate::invert`] for the formulas).
///
/// # Errors
/// [`Error::BelowPeriapsis`] / [`Error::AboveApoapsis`] when the orbit never
/// passes through the radius; a radius that is not finite and positive.
pub fn pair_states(
    mu_m3_s2: f64,
    conic: &Conic,
    radius_m: f64,
) -> Result<([BurnoutState; 2], usize), Error> {
    positive("burnout radius", radius_m, "m")?;
    let rp = conic.periapsis_radius_m();
    let r = radius_m;
    if r < rp * (1.0 - APSIS_TOLERANCE) {
        return Err(Error::BelowPeriapsis {
            burnout_radius_m: r,
            periapsis_radius_m: rp,
        });
    }
    let apo = conic.apoapsis_radius_m();
    if let Some(ra) = apo {
        if r > ra * (1.0 + APSIS_TOLERANCE) {
            return Err(Error::AboveApoapsis {
                burnout_radius_m: r,
                apoapsis_radius_m: ra,
            });
        }
    }
    let p = conic.semi_latus_rectum_m();
    let h = (mu_m3_s2 * p).sqrt();
    let vt = h / r;
    let at_periapsis = (r - rp).abs() <= APSIS_TOLERANCE * rp;
    let at_apoapsis = apo.is_some_and(|ra| (r - ra).abs() <= APSIS_TOLERANCE * ra);
    let state = |branch, speed_m_s, flight_path_angle_rad, true_anomaly_rad| BurnoutState {
        branch,
        radius_m: r,
        speed_m_s,
        flight_path_angle_rad,
        true_anomaly_rad,
        conic: *conic,
    };
    if at_periapsis || at_apoapsis {
        crate::invert::check_speed(vt)?;
        let nu = if at_periapsis { 0.0 } else { PI };
        let s = state(Branch::Ascending, vt, 0.0, nu);
        return Ok(([s, s], 1));
    }
    let (vr, ecos, esin) = match apo {
        Some(ra) => {
            let s = rp + ra;
            let prod = (r - rp) * (ra - r);
            let vr = (2.0 * mu_m3_s2 * prod / s).sqrt() / r;
            let ecos = (rp * (ra - r) - ra * (r - rp)) / (r * s);
            let esin = 2.0 * (prod * rp * ra).sqrt() / (r * s);
            (vr, ecos, esin)
        }
        None => {
            let e = conic.ecc();
            let k = rp * (1.0 + e) + r * (e - 1.0);
            let vr = (mu_m3_s2 * (r - rp) * k / rp).sqrt() / r;
            let ecos = (p - r) / r;
            let esin = vr * h / mu_m3_s2;
            (vr, ecos, esin)
        }
    };
    let speed = vr.hypot(vt);
    crate::invert::check_speed(speed)?;
    let fpa = vr.atan2(vt);
    let nu = esin.atan2(ecos);
    Ok((
        [
            state(Branch::Ascending, speed, fpa, nu),
            state(Branch::Descending, speed, -fpa, 2.0 * PI - nu),
        ],
        2,
    ))
}

/// Burnout speed and flight-path angle on both branches, with partials, for
/// two orbit-element targets and a burnout radius (m), without allocating.
///
/// # Errors
/// As [`crate::solve`] for this case: [`Error::BelowSurface`], the target
/// checks, the pair errors of [`conic_from_pair`], and those of
/// [`pair_states`]. (Error values carry text, so the error path allocates.)
pub fn solve_pair(
    body: &Body,
    a: &Target,
    b: &Target,
    burnout_radius_m: f64,
) -> Result<LeanSolved, Error> {
    let r = positive("burnout radius", burnout_radius_m, "m")?;
    if r < body.radius_m {
        return Err(Error::BelowSurface {
            burnout_radius_m: r,
            surface_radius_m: body.radius_m,
        });
    }
    let mu = body.mu_m3_s2;
    let conic = conic_from_pair(mu, a, b)?;
    let (states, len) = pair_states(mu, &conic, r)?;
    let ascending = partials_for_state(mu, &states[0]);
    // The orbit is even in the flight-path angle, so the descending state's
    // partials are the ascending ones with the angle column negated; the
    // negation is exact, so this is bit for bit what the formula gives.
    let mut descending = ascending;
    for row in descending.rows.iter_mut().flatten() {
        row[1] = -row[1];
    }
    let sensitivities = [
        ascending,
        if len == 2 {
            descending
        } else {
            Sensitivity { rows: [None; 5] }
        },
    ];
    Ok(LeanSolved {
        states,
        sensitivities,
        len,
        suborbital: conic.periapsis_radius_m() < body.radius_m,
    })
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::target::TargetQuantity as Q;

    #[test]
    fn lean_pair_gives_the_same_bits_as_solve() {
        let earth = Body::from_name("earth").unwrap();
        let re = earth.radius_m;
        let pairs = [
            (
                Target::new(Q::PeriapsisRadius, re + 185e3, "--periapsis-alt"),
                Target::new(Q::ApoapsisRadius, re + 35_786e3, "--apoapsis-alt"),
            ),
            (
                Target::new(Q::PeriapsisRadius, re + 300e3, "--periapsis-alt"),
                Target::new(Q::C3, 12e6, "--c3"),
            ),
            (
                Target::new(Q::Sma, re + 500e3, "--sma"),
                Target::new(Q::Ecc, 0.01, "--ecc"),
            ),
            (
                Target::new(Q::PeriapsisRadius, re - 500e3, "--periapsis-radius"),
                Target::new(Q::ApoapsisRadius, re + 900e3, "--apoapsis-alt"),
            ),
        ];
        let mut compared = 0;
        for (a, b) in pairs {
            for alt_km in [
                0.0, 150.0, 185.0, 300.0, 420.0, 899.0, 900.0, 2_000.0, 40_000.0, 50_000.0,
            ] {
                let r = re + alt_km * 1e3;
                let problem = crate::Problem {
                    body: earth.clone(),
                    burnout_radius_m: Some(r),
                    targets: vec![a, b],
                    flight_path_angle_rad: None,
                    speed_m_s: None,
                    min_periapsis_alt_m: None,
                };
                match (crate::solve(&problem), solve_pair(&earth, &a, &b, r)) {
                    (Ok(full), Ok(lean)) => {
                        assert_eq!(full.solutions.len(), lean.len);
                        for (i, s) in full.solutions.iter().enumerate() {
                            assert_eq!(s.state, lean.states[i], "{a:?} {b:?} at {alt_km} km");
                            assert_eq!(s.sensitivity, lean.sensitivities[i]);
                        }
                        let sub = full.solutions.iter().any(|s| {
                            s.warnings
                                .iter()
                                .any(|w| w.to_string().starts_with("suborbital"))
                        });
                        assert_eq!(sub, lean.suborbital);
                        compared += 1;
                    }
                    (Err(e1), Err(e2)) => assert_eq!(e1, e2),
                    (x, y) => panic!("solve and solve_pair disagree: {x:?} vs {y:?}"),
                }
            }
        }
        assert!(compared >= 20, "only {compared} solved cases compared");
    }
}
