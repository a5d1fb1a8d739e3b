//! Time of flight on a conic from Kepler's equation, in forms that keep their
//! digits near e = 0 and e = 1.
//!
//! - Ellipse: E = atan2(sqrt(1 - e^2) sin nu, e + cos nu),
//!   M = E - e sin E written as (1 - e) E + e (E - sin E);
//! - hyperbola: sinh F = sqrt(e^2 - 1) sin nu / (1 + e cos nu),
//!   M = e sinh F - F written as (e - 1) sinh F + (sinh F - F);
//! - parabola: Barker's equation, t = sqrt(p^3/mu) (D + D^3/3) / 2 with D = tan(nu/2).
//!
//! (Vallado, *Fundamentals of Astrodynamics and Applications*, 4th ed., sec. 2.2-2.3;
//! Curtis, *Orbital Mechanics for Engineering Students*, ch. 3.)

use crate::orbit::Conic;
use std::f64::consts::PI;

/// x - sin x, accurate for small x (series below 0.5 rad).
fn x_minus_sin(x: f64) -> f64 {
    if x.abs() < 0.5 {
        let x2 = x * x;
        // x^3/3! - x^5/5! + x^7/7! - ... ; 12 terms reach 1e-30 relative at x = 0.5.
        let mut term = x * x2 / 6.0;
        let mut sum = term;
        for k in 1..12 {
            let k = k as f64;
            term *= -x2 / ((2.0 * k + 2.0) * (2.0 * k + 3.0));
            sum += term;
        }
        sum
    } else {
        x - x.sin()
    }
}

/// sinh x - x, accurate for small x.
fn sinh_minus_x(x: f64) -> f64 {
    if x.abs() < 0.5 {
        let x2 = x * x;
        let mut term = x * x2 / 6.0;
        let mut sum = term;
        for k in 1..12 {
            let k = k as f64;
            term *= x2 / ((2.0 * k + 2.0) * (2.0 * k + 3.0));
            sum += term;
        }
        sum
    } else {
        x.sinh() - x
    }
}

/// Time since periapsis passage at true anomaly `nu_rad`, s.
///
/// Ellipse: in [0, period) for nu in [0, 2 pi). Open orbits: negative before
/// periapsis (nu in (pi, 2 pi), taken as nu - 2 pi), positive after.
pub fn time_since_periapsis_s(mu_m3_s2: f64, conic: &Conic, nu_rad: f64) -> f64 {
    let e = conic.ecc();
    let nu = nu_rad.rem_euclid(2.0 * PI);
    if e < 1.0 {
        let a = conic.sma_m().unwrap_or(f64::NAN);
        let n = (mu_m3_s2 / (a * a * a)).sqrt();
        let big_e = ((1.0 - e * e).sqrt() * nu.sin())
            .atan2(e + nu.cos())
            .rem_euclid(2.0 * PI);
        let m = (1.0 - e) * big_e + e * x_minus_sin(big_e);
        m / n
    } else {
        let nu_s = if nu > PI { nu - 2.0 * PI } else { nu };
        if crate::orbit::exactly(e, 1.0) {
            let p = conic.semi_latus_rectum_m();
            let d = (0.5 * nu_s).tan();
            0.5 * (p * p * p / mu_m3_s2).sqrt() * (d + d * d * d / 3.0)
        } else {
            let a = -conic.sma_m().unwrap_or(f64::NAN);
            let n = (mu_m3_s2 / (a * a * a)).sqrt();
            let sh = (e * e - 1.0).sqrt() * nu_s.sin() / (1.0 + e * nu_s.cos());
            let f = sh.asinh();
            let m = (e - 1.0) * sh + sinh_minus_x(f);
            m / n
        }
    }
}

/// Time of flight from true anomaly `nu_rad` to the next apoapsis, s; `None`
/// for open orbits (no apoapsis).
pub fn time_to_apoapsis_s(mu_m3_s2: f64, conic: &Conic, nu_rad: f64) -> Option<f64> {
    let period = conic.period_s(mu_m3_s2)?;
    let t = time_since_periapsis_s(mu_m3_s2, conic, nu_rad);
    Some((0.5 * period - t).rem_euclid(period))
}

/// Time of flight from true anomaly `nu_rad` to the next periapsis, s; for an
/// open orbit only while approaching periapsis, else `None`.
pub fn time_to_periapsis_s(mu_m3_s2: f64, conic: &Conic, nu_rad: f64) -> Option<f64> {
    let t = time_since_periapsis_s(mu_m3_s2, conic, nu_rad);
    match conic.period_s(mu_m3_s2) {
        Some(period) => Some((period - t).rem_euclid(period)),
        None if t <= 0.0 => Some(-t),
        None => None,
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use approx::assert_relative_eq;

    const MU: f64 = crate::body::EARTH_MU_M3_S2;

    #[test]
    fn half_period_from_periapsis_to_apoapsis() {
        let c = Conic::from_apsides(7e6, 9e6).unwrap();
        let t = time_to_apoapsis_s(MU, &c, 0.0).unwrap();
        assert_relative_eq!(t, 0.5 * c.period_s(MU).unwrap(), max_relative = 1e-14);
    }

    #[test]
    fn curtis_example_time_since_perigee() {
        // Curtis, Orbital Mechanics for Engineering Students (3rd ed., Example 3.1;
        // from memory): rp = 9600 km, ra = 21000 km, mu = 398600 km^3/s^2;
        // time from perigee to nu = 120 deg is 4077 s (printed to 4 digits).
        let c = Conic::from_apsides(9.6e6, 21e6).unwrap();
        let t = time_since_periapsis_s(3.986e14, &c, 120f64.to_radians());
        assert_relative_eq!(t, 4077.0, max_relative = 5e-4);
    }

    #[test]
    fn series_branches_join_continuously() {
        for x in [0.49999999, 0.5, 0.50000001] {
            assert_relative_eq!(x_minus_sin(x), x - f64::sin(x), max_relative = 1e-9);
            assert_relative_eq!(sinh_minus_x(x), f64::sinh(x) - x, max_relative = 1e-9);
        }
    }

    #[test]
    fn near_parabolic_ellipse_and_hyperbola_approach_barker() {
        let rp = 7e6;
        let nu = 1.0;
        let par = time_since_periapsis_s(MU, &Conic::from_periapsis_ecc(rp, 1.0).unwrap(), nu);
        let ell =
            time_since_periapsis_s(MU, &Conic::from_periapsis_ecc(rp, 1.0 - 1e-9).unwrap(), nu);
        let hyp =
            time_since_periapsis_s(MU, &Conic::from_periapsis_ecc(rp, 1.0 + 1e-9).unwrap(), nu);
        assert_relative_eq!(ell, par, max_relative = 1e-8);
        assert_relative_eq!(hyp, par, max_relative = 1e-8);
    }

    #[test]
    fn open_orbit_time_to_periapsis_only_when_approaching() {
        let c = Conic::from_periapsis_ecc(7e6, 1.5).unwrap();
        assert!(time_to_periapsis_s(MU, &c, 0.5).is_none());
        let t = time_to_periapsis_s(MU, &c, 2.0 * PI - 0.5).unwrap();
        assert_relative_eq!(t, time_since_periapsis_s(MU, &c, 0.5), max_relative = 1e-13);
    }
}
