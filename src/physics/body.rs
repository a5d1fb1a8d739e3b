//! Central bodies: gravitational parameter, equatorial radius, rotation.

use crate::error::{mention, positive, Error};
use std::f64::consts::PI;

/// A central body.
#[derive(Debug, Clone, PartialEq)]
pub struct Body {
    /// Name as given by the user or the catalog.
    pub name: String,
    /// Gravitational parameter GM, m^3/s^2.
    pub mu_m3_s2: f64,
    /// Equatorial radius, m (the "surface" for feasibility checks).
    pub radius_m: f64,
    /// Second zonal harmonic J2 (dimensionless), where known.
    pub j2: Option<f64>,
    /// Sidereal rotation rate, rad/s (negative for retrograde rotation).
    pub rotation_rate_rad_s: Option<f64>,
    /// Default lowest periapsis altitude considered safe, m, if any.
    pub min_safe_periapsis_alt_m: Option<f64>,
}

const DAY_S: f64 = 86_400.0;

/// Converts a rotation rate in deg/day (the form used by the IAU rotational
/// elements reports) to rad/s.
fn deg_per_day(w: f64) -> f64 {
    w * PI / 180.0 / DAY_S
}

/// Earth GM, m^3/s^2 (including the atmosphere).
// Source: IERS Conventions (2010), IERS Technical Note 36, Table 1.1 (GM of the
// Earth, TT-compatible), also the WGS 84 value (NIMA TR8350.2, 3rd ed.).
pub const EARTH_MU_M3_S2: f64 = 3.986004418e14;
/// Earth equatorial radius, m.
// Source: WGS 84 semi-major axis, NIMA TR8350.2, 3rd ed., Table 3.1 (defining parameter).
pub const EARTH_RADIUS_M: f64 = 6_378_137.0;
/// Earth J2 (dynamical form factor).
// Source: IERS Conventions (2010), Table 1.1, J2 = 1.0826359e-3.
pub const EARTH_J2: f64 = 1.082_635_9e-3;
/// Earth's nominal mean angular velocity, rad/s.
// Source: WGS 84 defining parameter omega (NIMA TR8350.2, Table 3.1) and IERS
// Conventions (2010), Table 1.1.
pub const EARTH_ROTATION_RAD_S: f64 = 7.292_115e-5;
/// Lowest periapsis altitude above Earth treated as safe by default, m.
// Common practice: below roughly 150 km drag brings an orbit down within hours
// to a day or two, so analysts flag such perigees. A rule of thumb, not a standard.
pub const EARTH_MIN_SAFE_PERIAPSIS_ALT_M: f64 = 150_000.0;

/// Moon GM, m^3/s^2.
// Source: JPL planetary ephemeris DE421 (Folkner et al. 2008), GM = 4902.800066 km^3/s^2
// (digits from memory).
pub const MOON_MU_M3_S2: f64 = 4.902_800_066e12;
/// Moon mean radius, m.
// Source: IAU WGCCRE report 2015 (Archinal et al. 2018), mean radius 1737.4 km.
pub const MOON_RADIUS_M: f64 = 1_737_400.0;

/// Mars GM, m^3/s^2.
// Source: JPL DE421 value 42828.375214 km^3/s^2 as listed by the IAU 2009
// system of constants' planetary mass ratios (digits from memory).
pub const MARS_MU_M3_S2: f64 = 4.282_837_521_4e13;
/// Mars equatorial radius, m.
// Source: IAU WGCCRE report 2015 (Archinal et al. 2018), 3396.19 km.
pub const MARS_RADIUS_M: f64 = 3_396_190.0;

/// Venus GM, m^3/s^2.
// Source: JPL DE421, 324858.592 km^3/s^2 (digits from memory).
pub const VENUS_MU_M3_S2: f64 = 3.248_585_92e14;
/// Venus radius, m.
// Source: IAU WGCCRE report 2015, 6051.8 km.
pub const VENUS_RADIUS_M: f64 = 6_051_800.0;

/// Mercury GM, m^3/s^2.
// Source: JPL DE421, 22032.09 km^3/s^2 (digits from memory).
pub const MERCURY_MU_M3_S2: f64 = 2.203_209e13;
/// Mercury radius, m.
// Source: IAU WGCCRE report 2015, 2440.53 km.
pub const MERCURY_RADIUS_M: f64 = 2_440_530.0;

/// Jupiter GM, m^3/s^2.
// Source: JPL DE421 system GM 126712764.8 km^3/s^2 (digits from memory).
pub const JUPITER_MU_M3_S2: f64 = 1.267_127_648e17;
/// Jupiter equatorial radius (1 bar level), m.
// Source: IAU WGCCRE report 2015, 71492 km.
pub const JUPITER_RADIUS_M: f64 = 71_492_000.0;

/// Sun GM, m^3/s^2 (TDB-compatible).
// Source: IERS Conventions (2010), Table 1.1 (GM_sun = 1.32712442099e20 TCB;
// TDB-compatible 1.32712440041e20).
pub const SUN_MU_M3_S2: f64 = 1.327_124_400_41e20;
/// Sun nominal radius, m.
// Source: IAU 2015 Resolution B3, nominal solar radius 695700 km.
pub const SUN_RADIUS_M: f64 = 695_700_000.0;

/// Names of the built-in bodies, in catalog order.
pub const CATALOG: &[&str] = &[
    "earth", "moon", "mars", "venus", "mercury", "jupiter", "sun",
];

impl Body {
    /// Looks up a built-in body by name (case-insensitive).
    ///
    /// Rotation rates for bodies other than Earth come from the prime-meridian
    /// rates W (deg/day) of the IAU WGCCRE report 2015 (Archinal et al. 2018);
    /// digits from memory.
    ///
    /// # Errors
    /// [`Error::Usage`] for an unknown name, listing the catalog.
    pub fn from_name(name: &str) -> Result<Body, Error> {
        let key = name.trim().to_ascii_lowercase();
        let (mu, radius, j2, rot, min_alt) = match key.as_str() {
            "earth" => (
                EARTH_MU_M3_S2,
                EARTH_RADIUS_M,
                Some(EARTH_J2),
                EARTH_ROTATION_RAD_S,
                Some(EARTH_MIN_SAFE_PERIAPSIS_ALT_M),
            ),
            "moon" => (
                MOON_MU_M3_S2,
                MOON_RADIUS_M,
                None,
                deg_per_day(13.176_358),
                None,
            ),
            "mars" => (
                MARS_MU_M3_S2,
                MARS_RADIUS_M,
                None,
                deg_per_day(350.891_982_443_3),
                None,
            ),
            "venus" => (
                VENUS_MU_M3_S2,
                VENUS_RADIUS_M,
                None,
                deg_per_day(-1.481_368_8),
                None,
            ),
            "mercury" => (
                MERCURY_MU_M3_S2,
                MERCURY_RADIUS_M,
                None,
                deg_per_day(6.138_510_8),
                None,
            ),
            "jupiter" => (
                JUPITER_MU_M3_S2,
                JUPITER_RADIUS_M,
                None,
                deg_per_day(870.536),
                None,
            ),
            "sun" => (SUN_MU_M3_S2, SUN_RADIUS_M, None, deg_per_day(14.1844), None),
            _ => {
                return Err(Error::Usage(format!(
                    "unknown body '{name}' for {}: expected one of {} (or give {} and {})",
                    mention("body", "the body"),
                    CATALOG.join(", "),
                    mention("mu", "a gravitational parameter"),
                    mention("radius", "a radius")
                )))
            }
        };
        Ok(Body {
            name: key,
            mu_m3_s2: mu,
            radius_m: radius,
            j2,
            rotation_rate_rad_s: Some(rot),
            min_safe_periapsis_alt_m: min_alt,
        })
    }

    /// A burnout radius checked against the body: finite, positive and not
    /// below the surface.
    ///
    /// # Errors
    /// [`Error::NotFinite`] / [`Error::NotPositive`]; [`Error::BelowSurface`].
    pub fn check_burnout_radius(&self, radius_m: f64) -> Result<f64, Error> {
        let r = positive("burnout radius", radius_m, "m")?;
        if r < self.radius_m {
            return Err(Error::BelowSurface {
                burnout_radius_m: r,
                surface_radius_m: self.radius_m,
            });
        }
        Ok(r)
    }

    /// A user-defined body.
    ///
    /// # Errors
    /// [`Error::NotPositive`] / [`Error::NotFinite`] when `mu_m3_s2` or
    /// `radius_m` is not a finite positive number.
    pub fn custom(mu_m3_s2: f64, radius_m: f64) -> Result<Body, Error> {
        positive("gravitational parameter", mu_m3_s2, "m3/s2")?;
        positive("body radius", radius_m, "m")?;
        Ok(Body {
            name: "custom".into(),
            mu_m3_s2,
            radius_m,
            j2: None,
            rotation_rate_rad_s: None,
            min_safe_periapsis_alt_m: None,
        })
    }

    /// Circular speed at radius `r_m`, m/s: sqrt(mu / r).
    pub fn circular_speed_m_s(&self, r_m: f64) -> f64 {
        (self.mu_m3_s2 / r_m).sqrt()
    }

    /// Escape speed at radius `r_m`, m/s: sqrt(2 mu / r).
    pub fn escape_speed_m_s(&self, r_m: f64) -> f64 {
        (2.0 * self.mu_m3_s2 / r_m).sqrt()
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use approx::assert_relative_eq;

    #[test]
    fn earth_constants_match_their_standards() {
        let e = Body::from_name("Earth").unwrap();
        // IERS Conventions (2010), Table 1.1: GM = 3.986004418e14 m^3/s^2.
        assert_relative_eq!(e.mu_m3_s2, 3.986004418e14, max_relative = 1e-15);
        // WGS 84 (NIMA TR8350.2): a = 6378137 m, omega = 7.292115e-5 rad/s.
        assert_relative_eq!(e.radius_m, 6_378_137.0, max_relative = 1e-15);
        assert_relative_eq!(
            e.rotation_rate_rad_s.unwrap(),
            7.292115e-5,
            max_relative = 1e-15
        );
        // IERS Conventions (2010), Table 1.1: J2 = 1.0826359e-3.
        assert_relative_eq!(e.j2.unwrap(), 1.0826359e-3, max_relative = 1e-15);
    }

    #[test]
    fn earth_circular_speed_at_surface() {
        // Independent check: sqrt(GM/a) with the WGS 84 values is 7905.37 m/s
        // (the first cosmic velocity, common textbook figure ~7.905 km/s).
        let e = Body::from_name("earth").unwrap();
        assert_relative_eq!(
            e.circular_speed_m_s(e.radius_m),
            7905.366,
            max_relative = 1e-6
        );
    }

    #[test]
    fn sidereal_periods_are_as_published() {
        // Moon's sidereal rotation period 27.321661 d (synchronous with its orbit;
        // astronomical almanac figure, from memory).
        let m = Body::from_name("moon").unwrap();
        let period_d = 2.0 * PI / m.rotation_rate_rad_s.unwrap() / DAY_S;
        assert_relative_eq!(period_d, 27.321661, max_relative = 1e-5);
        // Mars sidereal day 24.6229 h (from memory).
        let mars = Body::from_name("mars").unwrap();
        let h = 2.0 * PI / mars.rotation_rate_rad_s.unwrap() / 3600.0;
        assert_relative_eq!(h, 24.6229, max_relative = 1e-5);
        // Venus rotates retrograde.
        assert!(
            Body::from_name("venus")
                .unwrap()
                .rotation_rate_rad_s
                .unwrap()
                < 0.0
        );
    }

    #[test]
    fn every_catalog_body_resolves() {
        for name in CATALOG {
            let b = Body::from_name(name).unwrap();
            assert!(b.mu_m3_s2 > 0.0 && b.radius_m > 0.0);
        }
    }

    #[test]
    fn unknown_body_lists_catalog() {
        let e = Body::from_name("pluto").unwrap_err().to_string();
        assert!(e.contains("'pluto'") && e.contains("jupiter"), "{e}");
    }

    #[test]
    fn custom_body_rejects_bad_values() {
        assert!(Body::custom(-1.0, 1.0).is_err());
        assert!(Body::custom(1.0, f64::NAN).is_err());
        assert!(Body::custom(1e14, 6e6).is_ok());
    }
}
