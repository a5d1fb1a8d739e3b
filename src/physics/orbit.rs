//! Conic orbits: the quantities of a Keplerian orbit and the forward map from
//! a burnout state to its orbit.
//!
//! An orbit is held as periapsis radius and eccentricity, plus the apoapsis
//! radius for ellipses and the inverse semi-major axis 1/a. Keeping each as
//! given or as computed from the energy (rather than recomputing one from
//! another) keeps differences such as `ra - r` exact near apoapsis, a given
//! small eccentricity exact near circular, and C3 = -mu/a exact on
//! near-radial and near-parabolic open orbits, where 1 - e cancels.

use crate::error::{finite, positive, Error};
use std::f64::consts::PI;

/// A Keplerian conic about a body of gravitational parameter mu.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Conic {
    periapsis_radius_m: f64,
    ecc: f64,
    apoapsis_radius_m: Option<f64>,
    /// 1/a, 1/m: positive for ellipses, 0 for the parabola, negative for hyperbolas.
    inv_sma_per_m: f64,
}

/// The shape class of a conic.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum ConicKind {
    /// e = 0.
    Circular,
    /// 0 < e < 1.
    Elliptic,
    /// e = 1.
    Parabolic,
    /// e > 1.
    Hyperbolic,
}

impl Conic {
    /// An ellipse (or circle) from periapsis and apoapsis radii, m.
    ///
    /// e = (ra - rp) / (ra + rp).
    ///
    /// # Errors
    /// Non-positive or non-finite radii; `rp > ra` ([`Error::Infeasible`]).
    pub fn from_apsides(periapsis_radius_m: f64, apoapsis_radius_m: f64) -> Result<Conic, Error> {
        positive("periapsis radius", periapsis_radius_m, "m")?;
        positive("apoapsis radius", apoapsis_radius_m, "m")?;
        if periapsis_radius_m > apoapsis_radius_m {
            return Err(Error::Infeasible(format!(
                "periapsis radius {} m is above apoapsis radius {} m",
                crate::error::g(periapsis_radius_m),
                crate::error::g(apoapsis_radius_m)
            )));
        }
        let sum = apoapsis_radius_m + periapsis_radius_m;
        Ok(Conic {
            periapsis_radius_m,
            ecc: (apoapsis_radius_m - periapsis_radius_m) / sum,
            apoapsis_radius_m: Some(apoapsis_radius_m),
            inv_sma_per_m: 2.0 / sum,
        })
    }

    /// An ellipse from its apsides with a given eccentricity kept as given
    /// (a small eccentricity recomputed from rounded apsides would lose its
    /// relative digits).
    ///
    /// # Errors
    /// As [`Conic::from_apsides`].
    pub fn from_apsides_keeping_ecc(
        periapsis_radius_m: f64,
        apoapsis_radius_m: f64,
        ecc: f64,
    ) -> Result<Conic, Error> {
        let mut c = Conic::from_apsides(periapsis_radius_m, apoapsis_radius_m)?;
        c.ecc = check_ecc(ecc)?;
        Ok(c)
    }

    /// Any conic from periapsis radius, m, and eccentricity.
    ///
    /// # Errors
    /// Non-positive periapsis, negative or non-finite eccentricity.
    pub fn from_periapsis_ecc(periapsis_radius_m: f64, ecc: f64) -> Result<Conic, Error> {
        positive("periapsis radius", periapsis_radius_m, "m")?;
        check_ecc(ecc)?;
        let apo = if ecc < 1.0 {
            Some(periapsis_radius_m * (1.0 + ecc) / (1.0 - ecc))
        } else {
            None
        };
        Ok(Conic {
            periapsis_radius_m,
            ecc,
            apoapsis_radius_m: apo,
            inv_sma_per_m: (1.0 - ecc) / periapsis_radius_m,
        })
    }

    /// An open conic (parabola or hyperbola) from periapsis radius, m, and a
    /// given inverse semi-major axis 1/a (1/m, 0 or negative) kept exactly,
    /// e = 1 - rp/a.
    ///
    /// # Errors
    /// Non-positive periapsis; a positive `inv_sma_per_m` (that is an ellipse).
    pub fn open_from_periapsis_inv_sma(
        periapsis_radius_m: f64,
        inv_sma_per_m: f64,
    ) -> Result<Conic, Error> {
        positive("periapsis radius", periapsis_radius_m, "m")?;
        finite("inverse semi-major axis", inv_sma_per_m)?;
        if inv_sma_per_m > 0.0 {
            return Err(Error::Infeasible("an open orbit needs 1/a <= 0".into()));
        }
        Ok(Conic {
            periapsis_radius_m,
            ecc: 1.0 - periapsis_radius_m * inv_sma_per_m,
            apoapsis_radius_m: None,
            inv_sma_per_m,
        })
    }

    /// Periapsis radius, m.
    pub fn periapsis_radius_m(&self) -> f64 {
        self.periapsis_radius_m
    }

    /// Apoapsis radius, m; `None` for parabolas and hyperbolas.
    pub fn apoapsis_radius_m(&self) -> Option<f64> {
        self.apoapsis_radius_m
    }

    /// Eccentricity.
    pub fn ecc(&self) -> f64 {
        self.ecc
    }

    /// The conic's class: closed or open by its energy (1/a), not by a
    /// rounded eccentricity.
    pub fn kind(&self) -> ConicKind {
        if self.apoapsis_radius_m.is_some() {
            if exactly(self.ecc, 0.0) {
                ConicKind::Circular
            } else {
                ConicKind::Elliptic
            }
        } else if exactly(self.inv_sma_per_m, 0.0) {
            ConicKind::Parabolic
        } else {
            ConicKind::Hyperbolic
        }
    }

    /// Semi-major axis, m: (rp + ra)/2 for ellipses, 1/(1/a) < 0 for
    /// hyperbolas, `None` for a parabola.
    pub fn sma_m(&self) -> Option<f64> {
        match self.apoapsis_radius_m {
            Some(ra) => Some(0.5 * (self.periapsis_radius_m + ra)),
            None if exactly(self.inv_sma_per_m, 0.0) => None,
            None => Some(1.0 / self.inv_sma_per_m),
        }
    }

    /// Inverse semi-major axis 1/a, 1/m (0 for a parabola, negative for a
    /// hyperbola).
    pub fn inv_sma_per_m(&self) -> f64 {
        self.inv_sma_per_m
    }

    /// Semi-latus rectum p, m: 2 rp ra / (rp + ra) for ellipses, rp (1 + e) otherwise.
    pub fn semi_latus_rectum_m(&self) -> f64 {
        match self.apoapsis_radius_m {
            Some(ra) => 2.0 * self.periapsis_radius_m * ra / (self.periapsis_radius_m + ra),
            None => self.periapsis_radius_m * (1.0 + self.ecc),
        }
    }

    /// Characteristic energy C3 = -mu/a = v_inf^2, m^2/s^2 (0 for a parabola).
    pub fn c3_m2_s2(&self, mu_m3_s2: f64) -> f64 {
        match self.apoapsis_radius_m {
            Some(ra) => -2.0 * mu_m3_s2 / (self.periapsis_radius_m + ra),
            // + 0.0 turns the parabola's -0 into 0.
            None => -mu_m3_s2 * self.inv_sma_per_m + 0.0,
        }
    }

    /// Specific orbital energy C3/2, J/kg.
    pub fn specific_energy_j_kg(&self, mu_m3_s2: f64) -> f64 {
        0.5 * self.c3_m2_s2(mu_m3_s2)
    }

    /// Specific angular momentum h = sqrt(mu p), m^2/s.
    pub fn angular_momentum_m2_s(&self, mu_m3_s2: f64) -> f64 {
        (mu_m3_s2 * self.semi_latus_rectum_m()).sqrt()
    }

    /// Orbital period 2 pi sqrt(a^3/mu), s; `None` unless elliptic.
    pub fn period_s(&self, mu_m3_s2: f64) -> Option<f64> {
        self.apoapsis_radius_m.map(|_| {
            let a = self.sma_m().unwrap_or(f64::NAN);
            2.0 * PI * (a * a * a / mu_m3_s2).sqrt()
        })
    }

    /// Radius at true anomaly `nu_rad`, m: p / (1 + e cos nu). May be negative
    /// or infinite outside a hyperbola's asymptotes.
    pub fn radius_at_m(&self, nu_rad: f64) -> f64 {
        self.semi_latus_rectum_m() / (1.0 + self.ecc * nu_rad.cos())
    }

    /// The same conic with the eccentricity replaced by a given value (used
    /// where the user targeted the eccentricity, so that it is echoed exactly
    /// rather than recomputed from a rounded state).
    pub(crate) fn with_ecc(mut self, ecc: f64) -> Conic {
        self.ecc = ecc;
        self
    }

    /// The same conic with the periapsis radius replaced by a given value
    /// (a targeted periapsis echoed exactly on an open orbit).
    pub(crate) fn with_periapsis(mut self, periapsis_radius_m: f64) -> Conic {
        self.periapsis_radius_m = periapsis_radius_m;
        self
    }

    /// For an open conic, the same conic with 1/a replaced by a given value
    /// (a targeted C3 or sma echoed exactly); ellipses are returned unchanged.
    pub(crate) fn with_open_inv_sma(mut self, inv_sma_per_m: f64) -> Conic {
        if self.apoapsis_radius_m.is_none() && inv_sma_per_m < 0.0 {
            self.inv_sma_per_m = inv_sma_per_m;
        }
        self
    }
}

/// Whether `x` is exactly `value`. Used for the exact parabola (e = 1, Q = 2)
/// only: a near-parabolic conic stays an ellipse or hyperbola with its own
/// (large) semi-major axis, which the formulas handle.
#[allow(clippy::float_cmp)]
pub(crate) fn exactly(x: f64, value: f64) -> bool {
    x == value
}

/// Validates an eccentricity.
pub(crate) fn check_ecc(ecc: f64) -> Result<f64, Error> {
    finite("eccentricity", ecc)?;
    if ecc < 0.0 {
        return Err(Error::OutOfRange {
            quantity: "eccentricity",
            value: ecc,
            unit: "",
            expected: "0 or more".into(),
        });
    }
    Ok(ecc)
}

/// The orbit reached from a burnout state (the forward problem).
///
/// With Q = r v^2 / mu: e cos(nu) = Q cos^2(g) - 1, e sin(nu) = Q sin(g) cos(g),
/// p = r Q cos^2(g), rp = p / (1 + e), ra = p / (1 - e)
/// (Bate, Mueller & White, *Fundamentals of Astrodynamics*, 1971, sec. 2.3-2.5).
///
/// Returns the conic and the true anomaly at burnout, rad in [0, 2 pi).
///
/// # Errors
/// Non-finite or non-positive radius or speed; a flight-path angle outside
/// [-90, 90] deg; a purely radial (degenerate, h = 0) trajectory.
pub fn forward(
    mu_m3_s2: f64,
    radius_m: f64,
    speed_m_s: f64,
    flight_path_angle_rad: f64,
) -> Result<(Conic, f64), Error> {
    positive("burnout radius", radius_m, "m")?;
    positive("burnout speed", speed_m_s, "m/s")?;
    check_fpa(flight_path_angle_rad)?;
    let (s, c) = flight_path_angle_rad.sin_cos();
    if c <= 0.0 {
        return Err(Error::Infeasible(format!(
            "flight-path angle {} deg is vertical: a purely radial trajectory has no orbit plane or periapsis",
            crate::error::g(flight_path_angle_rad.to_degrees())
        )));
    }
    let EnergyRatio {
        q,
        q_minus_1,
        two_minus_q,
    } = EnergyRatio::new(mu_m3_s2, radius_m, speed_m_s);
    // e cos nu = Q cos^2 - 1 = (Q - 1) - Q sin^2: no cancellation near circular.
    let ecos = q_minus_1 - q * s * s;
    let esin = q * s * c;
    let ecc = ecos.hypot(esin);
    let p = radius_m * q * c * c;
    let rp = p / (1.0 + ecc);
    let nu = esin.atan2(ecos).rem_euclid(2.0 * PI);
    // The energy sign (Q < 2), not the rounded eccentricity, decides closed
    // versus open: near-radial ellipses have e within rounding of 1.
    let conic = if two_minus_q > 0.0 {
        // ra = 2a - rp with a = r / (2 - Q): no 1 - e cancellation.
        let ra = 2.0 * radius_m / two_minus_q - rp;
        // A closed orbit keeps e below 1 even when rounding says otherwise
        // (a vertical shot is the limit of an ellipse with rp -> 0).
        let ecc = if ecc < 1.0 {
            ecc
        } else {
            ((ra - rp) / (ra + rp)).min(1.0 - f64::EPSILON / 2.0)
        };
        Conic {
            periapsis_radius_m: rp,
            ecc,
            apoapsis_radius_m: Some(ra),
            inv_sma_per_m: two_minus_q / radius_m,
        }
    } else {
        // 1/a from the energy, (2 - Q)/r: C3 and sma stay exact where
        // e - 1 cancels (near-radial and near-parabolic hyperbolas).
        let inv_a = two_minus_q / radius_m;
        Conic {
            periapsis_radius_m: rp,
            ecc: if exactly(two_minus_q, 0.0) {
                1.0
            } else {
                ecc.max(1.0 + f64::EPSILON)
            },
            apoapsis_radius_m: None,
            inv_sma_per_m: inv_a,
        }
    };
    Ok((conic, nu))
}

/// The energy ratio Q = r v^2 / mu of a burnout state, with Q - 1 and 2 - Q
/// carried to about twice double precision.
///
/// Q is formed as an unevaluated sum hi + lo with error-free products
/// (fused multiply-add), so Q - 1 (near-circular speed) and 2 - Q (near
/// escape) keep their relative digits down to about 1e-30 of Q instead of
/// the 1e-16 / |2 - Q| a plain product leaves: 1/a, C3 and the coast times
/// of near-parabolic orbits depend on 2 - Q alone.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct EnergyRatio {
    /// Q = r v^2 / mu (rounded to double).
    pub q: f64,
    /// Q - 1, accurate to a few units of 1e-16 |Q - 1| + 1e-30 Q.
    pub q_minus_1: f64,
    /// 2 - Q (= r / a), accurate likewise; 0 exactly only on a parabola
    /// to that precision.
    pub two_minus_q: f64,
}

impl EnergyRatio {
    /// The energy ratio of a state at `radius_m` moving at `speed_m_s`.
    pub fn new(mu_m3_s2: f64, radius_m: f64, speed_m_s: f64) -> EnergyRatio {
        let v = speed_m_s;
        // v^2 = vv + vv_lo exactly.
        let vv = v * v;
        let vv_lo = v.mul_add(v, -vv);
        // r v^2 = rvv + rvv_lo (to about 2^-104).
        let rvv = radius_m * vv;
        let rvv_lo = radius_m.mul_add(vv, -rvv) + radius_m * vv_lo;
        // Q = (rvv + rvv_lo) / mu = q + q_lo.
        let q = rvv / mu_m3_s2;
        let rem = (-q).mul_add(mu_m3_s2, rvv) + rvv_lo;
        let q_lo = rem / mu_m3_s2;
        if !(q.is_finite() && q_lo.is_finite()) {
            return EnergyRatio {
                q,
                q_minus_1: q - 1.0,
                two_minus_q: 2.0 - q,
            };
        }
        // q - 1 and 2 - q are exact where they are small (Sterbenz).
        EnergyRatio {
            q,
            q_minus_1: (q - 1.0) + q_lo,
            two_minus_q: (2.0 - q) - q_lo,
        }
    }
}

/// Validates a flight-path angle (rad) in [-pi/2, pi/2].
pub(crate) fn check_fpa(fpa_rad: f64) -> Result<f64, Error> {
    finite("flight-path angle", fpa_rad)?;
    if fpa_rad.abs() > PI / 2.0 * (1.0 + 1e-15) {
        return Err(Error::OutOfRange {
            quantity: "flight-path angle",
            value: fpa_rad.to_degrees(),
            unit: "deg",
            expected: "between -90 and 90 deg from the local horizontal".into(),
        });
    }
    Ok(fpa_rad)
}

#[cfg(test)]
#[allow(clippy::float_cmp)] // exact zeros, exact parabolas and mirror images are asserted on purpose
mod tests {
    use super::*;
    use approx::assert_relative_eq;

    const MU: f64 = crate::physics::body::EARTH_MU_M3_S2;

    #[test]
    fn apsides_give_textbook_quantities() {
        let c = Conic::from_apsides(6_563_137.0, 42_164_137.0).unwrap();
        assert_relative_eq!(c.sma_m().unwrap(), 24_363_637.0, max_relative = 1e-15);
        assert_relative_eq!(c.ecc(), 35_601_000.0 / 48_727_274.0, max_relative = 1e-15);
        assert_relative_eq!(c.c3_m2_s2(MU), -MU / 24_363_637.0, max_relative = 1e-15);
        assert_eq!(c.kind(), ConicKind::Elliptic);
    }

    #[test]
    fn circular_orbit_has_zero_ecc_and_equal_apsides() {
        let c = Conic::from_apsides(7e6, 7e6).unwrap();
        assert_eq!(c.kind(), ConicKind::Circular);
        assert_relative_eq!(c.semi_latus_rectum_m(), 7e6, max_relative = 1e-15);
    }

    #[test]
    fn hyperbola_has_negative_sma_and_positive_c3() {
        let c = Conic::from_periapsis_ecc(7e6, 1.5).unwrap();
        assert_relative_eq!(c.sma_m().unwrap(), -14e6, max_relative = 1e-15);
        assert_relative_eq!(c.c3_m2_s2(MU), MU / 14e6, max_relative = 1e-15);
        assert!(c.apoapsis_radius_m().is_none() && c.period_s(MU).is_none());
    }

    #[test]
    fn parabola_has_no_sma_and_zero_c3() {
        let c = Conic::from_periapsis_ecc(7e6, 1.0).unwrap();
        assert!(c.sma_m().is_none());
        assert_eq!(c.c3_m2_s2(MU), 0.0);
        assert_relative_eq!(c.semi_latus_rectum_m(), 14e6);
    }

    #[test]
    fn rp_above_ra_is_rejected() {
        assert!(matches!(
            Conic::from_apsides(8e6, 7e6),
            Err(Error::Infeasible(_))
        ));
        assert!(Conic::from_apsides(-1.0, 7e6).is_err());
    }

    #[test]
    fn curtis_state_vector_to_elements_example() {
        // Curtis, Orbital Mechanics for Engineering Students, 3rd ed., Example 4.3
        // (from memory; digits as printed to 4 significant figures):
        // r = (-6045, -3490, 2500) km, v = (-3.457, 6.618, 2.533) km/s,
        // mu = 398600 km^3/s^2 give h = 58310 km^2/s, e = 0.1712, theta = 28.45 deg,
        // v_r = 0.5575 km/s.
        let mu = 398_600e9;
        let r_vec = [-6045e3, -3490e3, 2500e3];
        let v_vec = [-3457.0, 6618.0, 2533.0];
        let dot = |a: &[f64; 3], b: &[f64; 3]| a[0] * b[0] + a[1] * b[1] + a[2] * b[2];
        let r = dot(&r_vec, &r_vec).sqrt();
        let v = dot(&v_vec, &v_vec).sqrt();
        let vr = dot(&r_vec, &v_vec) / r;
        let fpa = (vr / v).asin();
        let (c, nu) = forward(mu, r, v, fpa).unwrap();
        assert_relative_eq!(vr, 557.5, max_relative = 2e-4);
        assert_relative_eq!(c.angular_momentum_m2_s(mu), 58_310e6, max_relative = 2e-4);
        assert_relative_eq!(c.ecc(), 0.1712, max_relative = 5e-4);
        assert_relative_eq!(nu.to_degrees(), 28.45, max_relative = 5e-4);
    }

    #[test]
    fn horizontal_circular_speed_gives_a_circle() {
        let r = 7_000_000.0;
        let v = (MU / r).sqrt();
        let (c, _) = forward(MU, r, v, 0.0).unwrap();
        assert!(c.ecc() < 1e-15);
        assert_relative_eq!(c.periapsis_radius_m(), r, max_relative = 1e-15);
    }

    #[test]
    fn forward_at_escape_speed_is_parabolic() {
        let r = 7_000_000.0;
        let v = (2.0 * MU / r).sqrt();
        let (c, _) = forward(MU, r, v, 0.3).unwrap();
        assert_relative_eq!(c.ecc(), 1.0, max_relative = 1e-14);
    }

    #[test]
    fn vertical_shot_is_a_near_rectilinear_ellipse() {
        // Straight up: apoapsis from energy, 1/R = 1/r - v^2/(2 mu).
        let (c, _) = forward(MU, 7e6, 3e3, PI / 2.0).unwrap();
        assert_relative_eq!(
            c.apoapsis_radius_m().unwrap(),
            1.0 / (1.0 / 7e6 - 9e6 / (2.0 * MU)),
            max_relative = 1e-14
        );
        assert_relative_eq!(c.ecc(), 1.0, max_relative = 1e-14);
    }

    #[test]
    fn forward_rejects_out_of_range_angles() {
        assert!(forward(MU, 7e6, 7e3, 2.0).is_err());
        assert!(forward(MU, 7e6, -7e3, 0.0).is_err());
    }

    #[test]
    fn near_radial_hyperbola_keeps_its_c3() {
        // Regression: C3 from mu (e - 1)/rp cancelled for e -> 1 with rp -> 0;
        // the energy form v^2 - 2 mu/r does not (checked against a 50-digit
        // independent computation: 1625257.673 m^2/s^2 at 300 km, 11 km/s).
        let r = crate::physics::body::EARTH_RADIUS_M + 300e3;
        let (c, _) = forward(MU, r, 11_000.0, 89.99999f64.to_radians()).unwrap();
        assert_relative_eq!(
            c.c3_m2_s2(MU),
            11_000.0f64.powi(2) - 2.0 * MU / r,
            max_relative = 1e-12
        );
        assert_relative_eq!(c.c3_m2_s2(MU), 1_625_257.673, max_relative = 1e-9);
        assert_eq!(c.kind(), ConicKind::Hyperbolic);
    }
}
