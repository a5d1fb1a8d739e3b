//! The burnout state: where and how fast the vehicle is at engine cutoff,
//! which branch of its orbit it is on, and the forward map from a state to
//! its orbit (vis-viva and h = r v cos fpa; see [`crate::physics::orbit::forward`]).

use crate::error::{g, Error};
use crate::physics::orbit::{forward, Conic};

/// Relative tolerance within which a burnout radius counts as at an apsis.
pub const APSIS_TOLERANCE: f64 = 1e-12;

/// Speed of light in vacuum, m/s (exact, SI definition): no two-body answer
/// at or above it is physical.
pub const SPEED_OF_LIGHT_M_S: f64 = 299_792_458.0;

/// Checks that a computed burnout speed is finite and below the speed of light.
///
/// # Errors
/// [`Error::Infeasible`] naming the speed.
pub fn check_speed(speed_m_s: f64) -> Result<f64, Error> {
    if speed_m_s.is_finite() && speed_m_s < SPEED_OF_LIGHT_M_S {
        Ok(speed_m_s)
    } else {
        Err(Error::Infeasible(format!(
            "the target needs a burnout speed of {} m/s, not below the speed of light {} m/s: no physical trajectory reaches it (check the target's magnitude)",
            g(speed_m_s),
            g(SPEED_OF_LIGHT_M_S)
        )))
    }
}

/// Which side of the orbit burnout is on.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Hash)]
pub enum Branch {
    /// Flight-path angle >= 0, true anomaly in [0, 180] deg (climbing).
    Ascending,
    /// Flight-path angle <= 0, true anomaly in [180, 360) deg (descending).
    Descending,
}

impl Branch {
    /// Lower-case name used in machine output.
    pub fn name(self) -> &'static str {
        match self {
            Branch::Ascending => "ascending",
            Branch::Descending => "descending",
        }
    }
}

/// A burnout state on a target orbit.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct BurnoutState {
    /// Which branch.
    pub branch: Branch,
    /// Burnout radius, m.
    pub radius_m: f64,
    /// Inertial burnout speed, m/s.
    pub speed_m_s: f64,
    /// Flight-path angle above the local horizontal, rad.
    pub flight_path_angle_rad: f64,
    /// True anomaly at burnout, rad in [0, 2 pi).
    pub true_anomaly_rad: f64,
    /// The orbit this state is on.
    pub conic: Conic,
}

impl BurnoutState {
    /// Whether burnout is at an apsis: its radius equals the periapsis or
    /// apoapsis radius within [`APSIS_TOLERANCE`] relative (the contract's
    /// rule; such a state has no radial speed to speak of, and every apsis is
    /// labelled ascending).
    pub fn at_apsis(&self) -> bool {
        let r = self.radius_m;
        let near = |x: f64| (r - x).abs() <= APSIS_TOLERANCE * x;
        near(self.conic.periapsis_radius_m()) || self.conic.apoapsis_radius_m().is_some_and(near)
    }

    /// The branch as labelled: [`Branch::Ascending`] at an apsis
    /// ([`BurnoutState::at_apsis`]), else the state's own branch.
    pub fn branch_label(&self) -> Branch {
        if self.at_apsis() {
            Branch::Ascending
        } else {
            self.branch
        }
    }
}

/// The branch a flight-path angle (rad) is on: descending below 0.
pub fn branch_of(fpa_rad: f64) -> Branch {
    if fpa_rad < 0.0 {
        Branch::Descending
    } else {
        Branch::Ascending
    }
}

/// The state reached by the forward map, labelled by the sign of the angle.
///
/// # Errors
/// As [`forward`].
pub fn forward_state(
    mu_m3_s2: f64,
    radius_m: f64,
    speed_m_s: f64,
    flight_path_angle_rad: f64,
) -> Result<BurnoutState, Error> {
    let (conic, nu) = forward(mu_m3_s2, radius_m, speed_m_s, flight_path_angle_rad)?;
    Ok(BurnoutState {
        branch: branch_of(flight_path_angle_rad),
        radius_m,
        speed_m_s,
        flight_path_angle_rad,
        true_anomaly_rad: nu,
        conic,
    })
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn a_state_within_the_apsis_tolerance_is_labelled_ascending() {
        // Circular speed sqrt(mu / r) at an angle of -1e-12 rad: a radial
        // speed that is rounding only; the radius equals the periapsis to
        // far below 1e-12 relative (r - rp ~ r e nu^2 / 2).
        let (mu, r): (f64, f64) = (3.986004418e14, 6_778_137.0);
        let v = (mu / r).sqrt() * 1.001;
        let st = forward_state(mu, r, v, -1e-12).unwrap();
        assert_eq!(st.branch, Branch::Descending);
        assert!(st.at_apsis());
        assert_eq!(st.branch_label(), Branch::Ascending);
        // Half a degree down is on its way to periapsis: not an apsis.
        let st = forward_state(mu, r, v, -0.5f64.to_radians()).unwrap();
        assert!(!st.at_apsis());
        assert_eq!(st.branch_label(), Branch::Descending);
    }
}
