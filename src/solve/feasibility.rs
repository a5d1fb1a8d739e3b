//! Feasibility warnings for a solved burnout state: checks that do not stop
//! the answer but that an analyst must see.

use crate::error::g;
use crate::physics::body::Body;
use crate::physics::state::BurnoutState;
use std::f64::consts::PI;

/// A warning about a solved state.
#[derive(Debug, Clone, PartialEq)]
#[non_exhaustive]
pub enum Warning {
    /// Periapsis is below the surface: the trajectory is suborbital and meets
    /// the surface after burnout.
    Suborbital {
        /// Branch of the state warned about.
        branch: &'static str,
        /// Periapsis radius, m.
        periapsis_radius_m: f64,
        /// Surface radius, m.
        surface_radius_m: f64,
        /// True anomaly where the trajectory meets the surface, rad.
        impact_true_anomaly_rad: f64,
        /// Angle travelled from burnout to the surface, rad.
        downrange_rad: f64,
    },
    /// Periapsis is above the surface but below the lowest safe altitude.
    LowPeriapsis {
        /// Periapsis altitude, m.
        periapsis_alt_m: f64,
        /// The limit, m.
        min_alt_m: f64,
    },
    /// The roots were found by a least-squares search from starting points,
    /// which is not proven to find every root.
    SearchNotExhaustive {
        /// How many starting points were tried.
        starts: usize,
    },
    /// Somewhere along the search the residual was within its own rounding
    /// noise of zero: roots there cannot be located in double precision.
    IllConditioned,
}

impl std::fmt::Display for Warning {
    fn fmt(&self, f: &mut std::fmt::Formatter<'_>) -> std::fmt::Result {
        match self {
            Warning::Suborbital {
                branch,
                periapsis_radius_m,
                surface_radius_m,
                impact_true_anomaly_rad,
                downrange_rad,
            } => write!(
                f,
                "suborbital ({branch}): periapsis radius {} m is below the surface radius {} m; the trajectory meets the surface at true anomaly {} deg, {} deg ({} km along the surface) downrange of burnout",
                g(*periapsis_radius_m),
                g(*surface_radius_m),
                g(impact_true_anomaly_rad.to_degrees()),
                g(downrange_rad.to_degrees()),
                g(downrange_rad * surface_radius_m / 1e3)
            ),
            Warning::LowPeriapsis {
                periapsis_alt_m,
                min_alt_m,
            } => write!(
                f,
                "periapsis altitude {} m is below the minimum safe periapsis altitude {} m",
                g(*periapsis_alt_m),
                g(*min_alt_m)
            ),
            Warning::IllConditioned => write!(
                f,
                "ill-conditioned: over part of the search the target is met to within double-precision rounding, so roots there cannot be located and may be missing"
            ),
            Warning::SearchNotExhaustive { starts } => write!(
                f,
                "roots found by least squares from {starts} starting points: the search is not proven exhaustive, another burnout state may also meet the targets"
            ),
        }
    }
}

/// Checks one solved state against the body's surface and a minimum safe
/// periapsis altitude (m above the surface; `None` for no check).
pub fn check_state(
    body: &Body,
    state: &BurnoutState,
    min_periapsis_alt_m: Option<f64>,
) -> Vec<Warning> {
    let mut out = Vec::new();
    let rp = state.conic.periapsis_radius_m();
    let rs = body.radius_m;
    if rp < rs {
        // r(nu) = p / (1 + e cos nu) = rs on the way down: nu in (pi, 2 pi).
        let e = state.conic.ecc();
        let p = state.conic.semi_latus_rectum_m();
        let cos_nu = ((p / rs - 1.0) / e).clamp(-1.0, 1.0);
        let nu_impact = 2.0 * PI - cos_nu.acos();
        let downrange = (nu_impact - state.true_anomaly_rad).max(0.0);
        out.push(Warning::Suborbital {
            branch: state.branch.name(),
            periapsis_radius_m: rp,
            surface_radius_m: rs,
            impact_true_anomaly_rad: nu_impact,
            downrange_rad: downrange,
        });
    } else if let Some(min_alt) = min_periapsis_alt_m {
        if rp - rs < min_alt {
            out.push(Warning::LowPeriapsis {
                periapsis_alt_m: rp - rs,
                min_alt_m: min_alt,
            });
        }
    }
    out
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::physics::state::forward_state;
    use approx::assert_relative_eq;

    #[test]
    fn sounding_shot_meets_surface_symmetrically() {
        // Burnout at the surface, ascending: by symmetry of the conic the
        // impact true anomaly is 360 deg minus the burnout true anomaly.
        let earth = Body::from_name("earth").unwrap();
        let st = forward_state(earth.mu_m3_s2, earth.radius_m, 2000.0, 0.8).unwrap();
        let w = check_state(&earth, &st, None);
        match &w[0] {
            Warning::Suborbital {
                impact_true_anomaly_rad,
                ..
            } => assert_relative_eq!(
                *impact_true_anomaly_rad,
                2.0 * PI - st.true_anomaly_rad,
                max_relative = 1e-9
            ),
            other => panic!("unexpected {other:?}"),
        }
    }

    #[test]
    fn low_periapsis_is_flagged() {
        let earth = Body::from_name("earth").unwrap();
        let r = earth.radius_m + 120e3;
        let st = forward_state(earth.mu_m3_s2, r, (earth.mu_m3_s2 / r).sqrt(), 0.0).unwrap();
        let w = check_state(&earth, &st, Some(150e3));
        assert!(matches!(w[0], Warning::LowPeriapsis { .. }));
        assert!(check_state(&earth, &st, Some(100e3)).is_empty());
    }
}
