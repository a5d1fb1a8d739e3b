//! An allocation-free closed form for the commonest case: two orbit-element
//! targets (e.g. periapsis and apoapsis) and a burnout radius, answered with
//! both branches and their sensitivities, all on the stack.
//!
//! [`crate::solve()`] is the general entry point (any target set, warnings,
//! residuals, the solver report) and costs a few heap allocations per call;
//! this function gives the same states and partials, bit for bit (a unit
//! test holds them together), for callers that solve millions of pairs.
//! The inversion itself is [`pair_states`], the allocation-free form of
//! [`crate::solve::invert::burnout_for_conic`]; the formulas and their references are documented
//! in [`crate::solve::invert`].
//! Feasibility warnings are not built; [`LeanSolved::suborbital`] says
//! whether the periapsis is under the surface.

use crate::error::Error;
use crate::physics::body::Body;
use crate::physics::state::BurnoutState;
use crate::solve::invert::pair_states;
use crate::solve::sensitivity::{partials_for_state, Sensitivity};
use crate::solve::target::{conic_from_pair, Target};

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

/// Burnout speed and flight-path angle on both branches, with partials, for
/// two orbit-element targets and a burnout radius (m), without allocating.
///
/// # Errors
/// As [`crate::solve()`] for this case: [`Error::BelowSurface`], the target
/// checks, the pair errors of [`conic_from_pair`], and those of
/// [`pair_states`]. (Error values carry text, so the error path allocates.)
pub fn solve_pair(
    body: &Body,
    a: &Target,
    b: &Target,
    burnout_radius_m: f64,
) -> Result<LeanSolved, Error> {
    let r = body.check_burnout_radius(burnout_radius_m)?;
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
    use crate::solve::target::TargetQuantity as Q;

    #[test]
    fn lean_pair_gives_the_same_bits_as_solve() {
        let earth = Body::from_name("earth").unwrap();
        let re = earth.radius_m;
        let pairs = [
            (
                Target::new(Q::PeriapsisRadius, re + 185e3),
                Target::new(Q::ApoapsisRadius, re + 35_786e3),
            ),
            (
                Target::new(Q::PeriapsisRadius, re + 300e3),
                Target::new(Q::C3, 12e6),
            ),
            (Target::new(Q::Sma, re + 500e3), Target::new(Q::Ecc, 0.01)),
            (
                Target::new(Q::PeriapsisRadius, re - 500e3),
                Target::new(Q::ApoapsisRadius, re + 900e3),
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
                    site: None,
                    above_alt_m: None,
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
