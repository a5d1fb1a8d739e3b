//! Closed-form inversions: from a target orbit (or one target quantity and
//! one burnout quantity) and the burnout radius to the burnout speed and
//! flight-path angle.
//!
//! Formulas (Bate, Mueller & White, *Fundamentals of Astrodynamics*, 1971,
//! ch. 1-2; Curtis, *Orbital Mechanics for Engineering Students*, ch. 2):
//! - horizontal speed v_t = h / r with h = sqrt(mu p);
//! - radial speed from vis-viva and h, written in well-conditioned factors:
//!   ellipse v_r^2 = 2 mu (r - rp)(ra - r) / ((rp + ra) r^2),
//!   open orbit v_r^2 = mu (r - rp)(rp (1 + e) + r (e - 1)) / (rp r^2);
//! - flight-path angle atan2(v_r, v_t), never an `acos`;
//! - true anomaly atan2(e sin nu, e cos nu) with e sin nu = v_r h / mu and,
//!   for ellipses, e cos nu = (rp (ra - r) - ra (r - rp)) / (r (rp + ra)).
//!
//! (Why this file is long: about 240 of its lines are tests and property
//! tests of the inversions.)

use crate::error::{g, mention, positive, Error};
use crate::physics::orbit::{check_fpa, Conic};
use crate::physics::state::{check_speed, forward_state, Branch, BurnoutState, APSIS_TOLERANCE};
use crate::solve::target::{conic_from_pair, Target, TargetQuantity};
use std::f64::consts::PI;

/// Both burnout states (ascending and descending) at radius `radius_m` on `conic`.
///
/// At an apsis (radius equal to it within [`APSIS_TOLERANCE`]) there is one
/// state, labelled ascending, with flight-path angle exactly 0.
///
/// # Errors
/// [`Error::BelowPeriapsis`] / [`Error::AboveApoapsis`] when the orbit never
/// passes through `radius_m`.
pub fn burnout_for_conic(
    mu_m3_s2: f64,
    conic: &Conic,
    radius_m: f64,
) -> Result<Vec<BurnoutState>, Error> {
    // One implementation, allocation-free, shared with the fast scan path.
    let (states, n) = pair_states(mu_m3_s2, conic, radius_m)?;
    Ok(states[..n].to_vec())
}

/// Both burnout states at `radius_m` on `conic`, ascending first; one at an
/// apsis. The closed-form inversion itself (formulas at the top of this module),
/// on the stack; [`burnout_for_conic`] wraps it in a `Vec`.
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
        check_speed(vt)?;
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
    check_speed(speed)?;
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

/// The burnout states on `conic` whose flight-path angle is `fpa_rad`, with
/// the burnout radius free: where on the orbit the path is inclined that much.
///
/// On a conic tan(fpa) = e sin(nu) / (1 + e cos(nu)), which rearranges to
/// sin(nu - fpa) = sin(fpa) / e: two true anomalies
/// nu = fpa + asin(sin(fpa)/e) and nu = fpa + pi - asin(sin(fpa)/e), each at
/// r = p / (1 + e cos(nu)) with the speed from vis-viva. None when
/// |sin(fpa)| > e; on an open orbit only those short of the asymptote.
/// Ordered by radius.
///
/// # Errors
/// [`Error::Infeasible`] when no point of the orbit has that angle.
pub fn burnout_for_conic_at_fpa(
    mu_m3_s2: f64,
    conic: &Conic,
    fpa_rad: f64,
) -> Result<Vec<BurnoutState>, Error> {
    check_fpa(fpa_rad)?;
    let e = conic.ecc();
    let p = conic.semi_latus_rectum_m();
    let ratio = fpa_rad.sin() / e;
    let mut out: Vec<BurnoutState> = Vec::new();
    if ratio.abs() <= 1.0 && e > 0.0 {
        let k = ratio.asin();
        for nu in [fpa_rad + k, fpa_rad + PI - k] {
            let denom = 1.0 + e * nu.cos();
            if denom.is_nan() || denom <= 0.0 {
                continue;
            }
            let r = p / denom;
            let v2 = mu_m3_s2 * (2.0 / r - conic.inv_sma_per_m());
            if !(r.is_finite() && v2 > 0.0) {
                continue;
            }
            let st = forward_state(mu_m3_s2, r, check_speed(v2.sqrt())?, fpa_rad)?;
            if !out
                .iter()
                .any(|o| (o.radius_m - r).abs() <= APSIS_TOLERANCE * r)
            {
                out.push(st);
            }
        }
    }
    if out.is_empty() {
        return Err(Error::Infeasible(format!(
            "no point of the target orbit (eccentricity {}) has a flight-path angle of {} deg: |sin(fpa)| must not exceed the eccentricity",
            g(e),
            g(fpa_rad.to_degrees())
        )));
    }
    out.sort_by(|a, b| a.radius_m.total_cmp(&b.radius_m));
    Ok(out)
}

/// The burnout states on `conic` at speed `speed_m_s`, with the burnout
/// radius free: vis-viva fixes the radius, r = 2 / (v^2/mu + 1/a), and both
/// branches follow there.
///
/// # Errors
/// [`Error::Infeasible`] when the orbit never moves at that speed, and the
/// errors of [`burnout_for_conic`].
pub fn burnout_for_conic_at_speed(
    mu_m3_s2: f64,
    conic: &Conic,
    speed_m_s: f64,
) -> Result<Vec<BurnoutState>, Error> {
    positive("burnout speed", speed_m_s, "m/s")?;
    let r = 2.0 / (speed_m_s * speed_m_s / mu_m3_s2 + conic.inv_sma_per_m());
    if !(r.is_finite() && r > 0.0) {
        return Err(Error::Infeasible(format!(
            "the target orbit never moves at {} m/s: its speeds lie above the speed at infinity",
            g(speed_m_s)
        )));
    }
    burnout_for_conic(mu_m3_s2, conic, r)
}

/// The burnout speed(s) that reach one target quantity at a given
/// flight-path angle.
///
/// - apsis radius R (periapsis or apoapsis), from energy and angular momentum
///   conservation between burnout and the apsis:
///   v^2 = 2 mu R (R - r) / (r (R - r cos g)(R + r cos g)), with
///   R - r cos g = (R - r) + 2 r sin^2(g/2) to keep digits;
/// - semi-major axis, period, C3, specific energy: vis-viva;
/// - eccentricity: with Q = r v^2/mu, e^2 = 1 - Q (2 - Q) cos^2 g, so
///   Q = 1 +- sqrt((e - sin|g|)(e + sin|g|)) / cos g (two speeds for an ellipse);
/// - semi-latus rectum: Q = p / (r cos^2 g).
///
/// # Errors
/// [`Error::Infeasible`] when no speed reaches the target at this angle;
/// [`Error::Usage`] when every speed in a range does (underdetermined).
pub fn speed_for_target(
    mu_m3_s2: f64,
    radius_m: f64,
    flight_path_angle_rad: f64,
    target: &Target,
) -> Result<Vec<BurnoutState>, Error> {
    use TargetQuantity as Q;
    positive("burnout radius", radius_m, "m")?;
    check_fpa(flight_path_angle_rad)?;
    target.validate()?;
    let r = radius_m;
    let gamma = flight_path_angle_rad;
    let gdeg = g(gamma.to_degrees());
    let mu = mu_m3_s2;
    let x = target.value;
    let speeds: Vec<f64> = match target.quantity {
        Q::PeriapsisRadius | Q::ApoapsisRadius => speeds_for_apsis(mu, r, gamma, target)?,
        Q::Sma | Q::Period | Q::C3 | Q::SpecificEnergy => speeds_for_energy(mu, r, target)?,
        Q::Ecc => speeds_for_ecc(mu, r, gamma, x)?,
        Q::SemiLatusRectum => speeds_for_semi_latus_rectum(mu, r, gamma, x)?,
        Q::TimeToApoapsis | Q::TimeToPeriapsis | Q::AngleToApoapsis => {
            return Err(Error::Usage(format!(
                "{} has no closed-form inversion",
                target.mention()
            )))
        }
    };
    let mut out = Vec::with_capacity(speeds.len());
    for v in speeds {
        if v.is_finite() && v > 0.0 {
            check_speed(v)?;
        }
        if !(v.is_finite() && v > 0.0) {
            return Err(Error::Infeasible(format!(
                "no positive burnout speed reaches {} {} {} at flight-path angle {} deg from radius {} m",
                target.mention(),
                g(x),
                target.quantity.unit(),
                gdeg,
                g(r)
            )));
        }
        let mut st = forward_state(mu, r, v, gamma)?;
        st.conic = exact_target_conic(mu, &st.conic, target);
        out.push(st);
    }
    Ok(out)
}

/// Apsis target R: v^2 = 2 mu R (R - r) / (r (R - r cos g)(R + r cos g)).
fn speeds_for_apsis(mu: f64, r: f64, gamma: f64, target: &Target) -> Result<Vec<f64>, Error> {
    use TargetQuantity as Q;
    let x = target.value;
    let c = gamma.cos().max(0.0);
    let gdeg = g(gamma.to_degrees());
    let is_apo = target.quantity == Q::ApoapsisRadius;
    let same = (x - r).abs() <= APSIS_TOLERANCE * r;
    if same && gamma == 0.0 {
        let vc = (mu / r).sqrt();
        return Err(Error::Usage(format!(
                "{} {} m equals the burnout radius with a horizontal flight-path angle: every speed {} circular speed {} m/s reaches it; give a second target quantity",
                target.mention(),
                g(x),
                if is_apo { "up to" } else { "from" },
                g(vc)
            )));
    }
    if is_apo && x <= r {
        return Err(Error::Infeasible(format!(
            "target apoapsis radius {} m is not above the burnout radius {} m",
            g(x),
            g(r)
        )));
    }
    let half = (0.5 * gamma).sin();
    let d_minus = (x - r) + 2.0 * r * half * half; // R - r cos g
    if !is_apo && (x >= r || d_minus >= 0.0) {
        return Err(Error::Infeasible(format!(
                "target periapsis radius {} m cannot be reached from burnout radius {} m at flight-path angle {} deg: expected below r cos(fpa) = {} m",
                g(x),
                g(r),
                gdeg,
                g(r * c)
            )));
    }
    let v2 = 2.0 * mu * x * (x - r) / (r * d_minus * (x + r * c));
    Ok(vec![v2.sqrt()])
}

/// Energy targets (sma, period, C3, specific energy): vis-viva.
fn speeds_for_energy(mu: f64, r: f64, target: &Target) -> Result<Vec<f64>, Error> {
    use TargetQuantity as Q;
    let x = target.value;
    let inv_a = match target.quantity {
        Q::Sma => 1.0 / x,
        Q::Period => {
            let n = 2.0 * PI / x;
            (n * n / mu).cbrt()
        }
        Q::C3 => -x / mu,
        _ => -2.0 * x / mu,
    };
    let v2 = mu * (2.0 / r - inv_a);
    if v2 <= 0.0 {
        return Err(Error::Infeasible(format!(
                "{} {} {} needs a semi-major axis of {} m, which an orbit through burnout radius {} m cannot have (expected a > r/2 = {} m or a negative, open orbit)",
                target.mention(),
                g(x),
                target.quantity.unit(),
                g(1.0 / inv_a),
                g(r),
                g(r / 2.0)
            )));
    }
    Ok(vec![v2.sqrt()])
}

/// Eccentricity e at angle g: Q = 1 +- sqrt((e - sin|g|)(e + sin|g|)) / cos g.
fn speeds_for_ecc(mu: f64, r: f64, gamma: f64, x: f64) -> Result<Vec<f64>, Error> {
    let (s, c) = gamma.sin_cos();
    let c = c.max(0.0);
    let gdeg = g(gamma.to_degrees());
    let sa = s.abs();
    if c == 0.0 {
        return Err(Error::Infeasible(format!(
                "flight-path angle {gdeg} deg is vertical: a radial trajectory has no eccentricity to target"
            )));
    }
    if x < sa {
        return Err(Error::Infeasible(format!(
                "eccentricity {} is below |sin(fpa)| = {} at flight-path angle {} deg: no orbit has it there",
                g(x),
                g(sa),
                gdeg
            )));
    }
    // e - |sin g| near a steep angle: (e - 1) + (1 - sin|g|) with
    // 1 - sin|g| = 2 sin^2(pi/4 - |g|/2), so a near-radial angle on a
    // near-parabolic target keeps its digits.
    let x_minus_sa = if sa > 0.5 {
        let h = (std::f64::consts::FRAC_PI_4 - 0.5 * gamma.abs()).sin();
        (x - 1.0) + 2.0 * h * h
    } else {
        x - sa
    };
    let d = (x_minus_sa.max(0.0) * (x + sa)).sqrt() / c;
    let mut qs = vec![1.0 + d];
    let qm = 1.0 - d;
    // The minus root is physical only for an ellipse (e < 1): for
    // e >= 1 it is zero or negative, whatever rounding says.
    if x < 1.0 && qm > 0.0 && d > 0.0 {
        qs.insert(0, qm);
    }
    if crate::physics::orbit::exactly(x, 1.0) {
        // A parabola: exactly escape speed.
        qs = vec![2.0];
    }
    Ok(qs.into_iter().map(|q| (q * mu / r).sqrt()).collect())
}

/// Semi-latus rectum p at angle g: Q = p / (r cos^2 g).
fn speeds_for_semi_latus_rectum(mu: f64, r: f64, gamma: f64, x: f64) -> Result<Vec<f64>, Error> {
    let c = gamma.cos().max(0.0);
    let gdeg = g(gamma.to_degrees());
    if c == 0.0 {
        return Err(Error::Infeasible(format!(
                "flight-path angle {gdeg} deg is vertical: a radial trajectory has zero semi-latus rectum"
            )));
    }
    let q = x / (r * c * c);
    Ok(vec![(q * mu / r).sqrt()])
}

/// The state's conic with the targeted element put back exactly where the
/// target named it (an apsis, the eccentricity, an open orbit's 1/a).
fn exact_target_conic(mu: f64, conic: &Conic, target: &Target) -> Conic {
    use TargetQuantity as Q;
    let x = target.value;
    let st_conic = *conic;
    match (target.quantity, st_conic.apoapsis_radius_m()) {
        (Q::ApoapsisRadius, Some(_)) => {
            Conic::from_apsides(st_conic.periapsis_radius_m().min(x), x).unwrap_or(st_conic)
        }
        (Q::PeriapsisRadius, Some(ra)) => Conic::from_apsides(x, ra.max(x)).unwrap_or(st_conic),
        (Q::PeriapsisRadius, None) => st_conic.with_periapsis(x),
        (Q::Ecc, _) if crate::physics::orbit::exactly(x, 1.0) => {
            Conic::from_periapsis_ecc(st_conic.periapsis_radius_m(), 1.0).unwrap_or(st_conic)
        }
        (Q::Ecc, _) => st_conic.with_ecc(x),
        (Q::Sma, None) => st_conic.with_open_inv_sma(1.0 / x),
        (Q::C3, None) => st_conic.with_open_inv_sma(-x / mu),
        (Q::SpecificEnergy, None) => st_conic.with_open_inv_sma(-2.0 * x / mu),
        _ => st_conic,
    }
}

/// The flight-path angles (both branches) that reach one shape target at a
/// given burnout speed: the speed fixes C3 = v^2 - 2 mu / r, and the pair
/// (target, C3) fixes the conic.
///
/// # Errors
/// [`Error::Usage`] when the target also fixes only the energy (sma, period,
/// C3); [`Error::Infeasible`] when a closed target meets a speed at or above
/// escape, or the orbit does not pass through the burnout radius.
pub fn fpa_for_speed(
    mu_m3_s2: f64,
    radius_m: f64,
    speed_m_s: f64,
    target: &Target,
) -> Result<Vec<BurnoutState>, Error> {
    use TargetQuantity as Q;
    positive("burnout radius", radius_m, "m")?;
    positive("burnout speed", speed_m_s, "m/s")?;
    target.validate()?;
    let r = radius_m;
    let v = speed_m_s;
    let v_esc = (2.0 * mu_m3_s2 / r).sqrt();
    match target.quantity {
        Q::Sma | Q::Period | Q::C3 | Q::SpecificEnergy => {
            let speed = mention("speed", "the burnout speed");
            return Err(Error::Usage(format!(
                "{speed} and {} both fix the orbit's energy: pair {speed} with a periapsis, apoapsis, eccentricity or semi-latus rectum",
                target.mention()
            )))
        }
        Q::ApoapsisRadius if v >= v_esc => {
            return Err(Error::Infeasible(format!(
                "burnout speed {} m/s is at or above escape speed {} m/s at burnout radius {} m, but {} needs a closed orbit",
                g(v),
                g(v_esc),
                g(r),
                target.mention()
            )))
        }
        Q::Ecc if target.value < 1.0 && v >= v_esc => {
            return Err(Error::Infeasible(format!(
                "burnout speed {} m/s is at or above escape speed {} m/s at burnout radius {} m, but eccentricity {} is a closed orbit",
                g(v),
                g(v_esc),
                g(r),
                g(target.value)
            )))
        }
        _ => {}
    }
    let c3 = (v - v_esc) * (v + v_esc);
    let energy = Target::c3_of_burnout_speed(c3);
    let conic = conic_from_pair(mu_m3_s2, target, &energy).map_err(|e| match e {
        Error::Infeasible(msg) => Error::Infeasible(format!(
            "burnout speed {} m/s at burnout radius {} m cannot reach {} {} {}: {msg}",
            g(v),
            g(r),
            target.mention(),
            g(target.value),
            target.quantity.unit()
        )),
        other => other,
    })?;
    let mut states = burnout_for_conic(mu_m3_s2, &conic, r)?;
    for st in &mut states {
        st.speed_m_s = v;
    }
    Ok(states)
}

#[cfg(test)]
#[allow(clippy::float_cmp)] // exact zeros, exact parabolas and mirror images are asserted on purpose
mod tests {
    use super::*;
    use crate::physics::orbit::forward;
    use approx::assert_relative_eq;

    const MU: f64 = crate::physics::body::EARTH_MU_M3_S2;
    const RE: f64 = crate::physics::body::EARTH_RADIUS_M;

    #[test]
    fn perigee_burnout_into_transfer_orbit_matches_vis_viva() {
        // 185 km x 35786 km transfer orbit, burnout at perigee: v = sqrt(mu (2/r - 1/a)).
        let rp = RE + 185e3;
        let ra = RE + 35_786e3;
        let c = Conic::from_apsides(rp, ra).unwrap();
        let s = burnout_for_conic(MU, &c, rp).unwrap();
        assert_eq!(s.len(), 1);
        let a = 0.5 * (rp + ra);
        assert_relative_eq!(
            s[0].speed_m_s,
            (MU * (2.0 / rp - 1.0 / a)).sqrt(),
            max_relative = 1e-14
        );
        assert_eq!(s[0].flight_path_angle_rad, 0.0);
        assert_eq!(s[0].branch, Branch::Ascending);
    }

    #[test]
    fn circular_target_gives_zero_flight_path_angle() {
        let r = RE + 500e3;
        let c = Conic::from_apsides(r, r).unwrap();
        let s = burnout_for_conic(MU, &c, r).unwrap();
        assert_eq!(s.len(), 1);
        assert_relative_eq!(s[0].speed_m_s, (MU / r).sqrt(), max_relative = 1e-15);
    }

    #[test]
    fn descending_branch_mirrors_ascending() {
        let c = Conic::from_apsides(RE + 200e3, RE + 2000e3).unwrap();
        let s = burnout_for_conic(MU, &c, RE + 800e3).unwrap();
        assert_eq!(s.len(), 2);
        assert_eq!(s[0].speed_m_s, s[1].speed_m_s);
        assert_eq!(s[0].flight_path_angle_rad, -s[1].flight_path_angle_rad);
        assert_relative_eq!(
            s[0].true_anomaly_rad + s[1].true_anomaly_rad,
            2.0 * PI,
            max_relative = 1e-15
        );
        assert!(s[0].true_anomaly_rad > 0.0 && s[0].true_anomaly_rad < PI);
    }

    #[test]
    fn inverse_then_forward_recovers_apsides() {
        let rp = RE + 300e3;
        let ra = RE + 5000e3;
        let c = Conic::from_apsides(rp, ra).unwrap();
        for st in burnout_for_conic(MU, &c, RE + 1000e3).unwrap() {
            let (back, nu) =
                forward(MU, st.radius_m, st.speed_m_s, st.flight_path_angle_rad).unwrap();
            assert_relative_eq!(back.periapsis_radius_m(), rp, max_relative = 1e-13);
            assert_relative_eq!(back.apoapsis_radius_m().unwrap(), ra, max_relative = 1e-13);
            assert_relative_eq!(nu, st.true_anomaly_rad, max_relative = 1e-12);
        }
    }

    #[test]
    fn hyperbolic_burnout_recovers_c3() {
        let c = Conic::from_periapsis_ecc(RE + 200e3, 1.3).unwrap();
        for st in burnout_for_conic(MU, &c, RE + 400e3).unwrap() {
            let (back, _) =
                forward(MU, st.radius_m, st.speed_m_s, st.flight_path_angle_rad).unwrap();
            assert_relative_eq!(back.ecc(), 1.3, max_relative = 1e-13);
            assert_relative_eq!(back.periapsis_radius_m(), RE + 200e3, max_relative = 1e-13);
        }
    }

    #[test]
    fn outside_the_apsides_is_rejected() {
        let c = Conic::from_apsides(RE + 300e3, RE + 500e3).unwrap();
        assert!(matches!(
            burnout_for_conic(MU, &c, RE + 200e3),
            Err(Error::BelowPeriapsis { .. })
        ));
        assert!(matches!(
            burnout_for_conic(MU, &c, RE + 600e3),
            Err(Error::AboveApoapsis { .. })
        ));
    }

    #[test]
    fn speed_for_apoapsis_at_angle_reaches_that_apoapsis() {
        let r = RE + 100e3;
        let ra = RE + 400e3;
        for deg in [0.0, 5.0, 45.0, 89.0, -20.0] {
            let t = Target::new(TargetQuantity::ApoapsisRadius, ra);
            let s = speed_for_target(MU, r, f64::to_radians(deg), &t).unwrap();
            let (back, _) = forward(MU, r, s[0].speed_m_s, f64::to_radians(deg)).unwrap();
            assert_relative_eq!(back.apoapsis_radius_m().unwrap(), ra, max_relative = 1e-12);
        }
    }

    #[test]
    fn vertical_shot_to_an_apoapsis_matches_energy() {
        // Straight up to height R: v^2 = 2 mu (1/r - 1/R).
        let r = RE;
        let ra = RE + 100e3;
        let t = Target::new(TargetQuantity::ApoapsisRadius, ra);
        let s = speed_for_target(MU, r, PI / 2.0, &t).unwrap();
        assert_relative_eq!(
            s[0].speed_m_s,
            (2.0 * MU * (1.0 / r - 1.0 / ra)).sqrt(),
            max_relative = 1e-13
        );
    }

    #[test]
    fn ecc_at_angle_gives_two_speeds_for_an_ellipse() {
        let r = RE + 400e3;
        let t = Target::new(TargetQuantity::Ecc, 0.1);
        let s = speed_for_target(MU, r, 2f64.to_radians(), &t).unwrap();
        assert_eq!(s.len(), 2);
        for st in &s {
            assert_relative_eq!(st.conic.ecc(), 0.1, max_relative = 1e-12);
        }
        assert!(s[0].speed_m_s < s[1].speed_m_s);
    }

    #[test]
    fn periapsis_out_of_reach_at_steep_angle_is_infeasible() {
        let r = RE + 400e3;
        let t = Target::new(TargetQuantity::PeriapsisRadius, r * 0.999);
        assert!(matches!(
            speed_for_target(MU, r, 10f64.to_radians(), &t),
            Err(Error::Infeasible(_))
        ));
    }

    #[test]
    fn speed_with_apoapsis_gives_both_angles() {
        let r = RE + 200e3;
        let ra = RE + 1000e3;
        let t = Target::new(TargetQuantity::ApoapsisRadius, ra);
        let v = 7900.0;
        let s = fpa_for_speed(MU, r, v, &t).unwrap();
        assert_eq!(s.len(), 2);
        for st in s {
            let (back, _) = forward(MU, r, v, st.flight_path_angle_rad).unwrap();
            assert_relative_eq!(back.apoapsis_radius_m().unwrap(), ra, max_relative = 1e-12);
        }
    }

    #[test]
    fn escape_speed_with_closed_target_is_infeasible() {
        let r = RE + 200e3;
        let t = Target::new(TargetQuantity::ApoapsisRadius, RE + 1000e3);
        let e = fpa_for_speed(MU, r, 11_500.0, &t).unwrap_err().to_string();
        assert!(e.contains("escape speed"), "{e}");
    }
}

#[cfg(test)]
mod properties {
    use super::*;
    use crate::physics::orbit::forward;
    use crate::strategies::{burnout_state, targeted};
    use proptest::prelude::*;

    fn close(a: f64, b: f64, rel: f64) -> bool {
        (a - b).abs() <= rel * a.abs().max(b.abs())
    }

    proptest! {
        #![proptest_config(ProptestConfig::with_cases(2000))]

        #[test]
        fn inverse_then_forward_recovers_the_target((body, conic, r) in targeted()) {
            let mu = body.mu_m3_s2;
            for st in burnout_for_conic(mu, &conic, r).unwrap() {
                let (back, nu) = forward(mu, r, st.speed_m_s, st.flight_path_angle_rad).unwrap();
                prop_assert!(close(back.periapsis_radius_m(), conic.periapsis_radius_m(), 1e-10),
                    "rp {} vs {}", back.periapsis_radius_m(), conic.periapsis_radius_m());
                if let Some(ra) = conic.apoapsis_radius_m() {
                    // Near-parabolic ellipses put ra far out; its digits follow 1/(1-e).
                    let tol = if conic.ecc() > 0.999 { 1e-10 / (1.0 - conic.ecc()) * 1e-3 } else { 1e-10 };
                    prop_assert!(close(back.apoapsis_radius_m().unwrap(), ra, tol.max(1e-10)),
                        "ra {:?} vs {}", back.apoapsis_radius_m(), ra);
                }
                // Eccentricity: relative 1e-10, plus an absolute 2.5e-12: e carries only
                // absolute digits near circular, and a burnout within the 1e-12 apsis
                // tolerance is snapped to that apsis (contract rule), moving e by up to
                // about 2e-12.
                prop_assert!((back.ecc() - conic.ecc()).abs() <= 1e-10 * conic.ecc() + 2.5e-12,
                    "e {} vs {}", back.ecc(), conic.ecc());
                if conic.ecc() > 1e-6 {
                    let d = (nu - st.true_anomaly_rad).abs();
                    prop_assert!(d.min(2.0 * PI - d) < 1e-7, "nu {} vs {}", nu, st.true_anomaly_rad);
                }
            }
        }

        #[test]
        fn forward_then_inverse_recovers_speed_and_angle((body, r, v, g) in burnout_state()) {
            let mu = body.mu_m3_s2;
            let (conic, _) = forward(mu, r, v, g).unwrap();
            let states = burnout_for_conic(mu, &conic, r).unwrap();
            let best = states
                .iter()
                .min_by(|a, b| (a.flight_path_angle_rad - g).abs().total_cmp(&(b.flight_path_angle_rad - g).abs()))
                .unwrap();
            prop_assert!(close(best.speed_m_s, v, 1e-10), "v {} vs {}", best.speed_m_s, v);
            // Near an apsis the angle follows sqrt(ra - r), and ra carries rounding
            // of ~1e-16 ra from the forward map, so the recoverable absolute
            // accuracy grows like 1e-16 / |g|.
            prop_assert!((best.flight_path_angle_rad - g).abs() <= 1e-10 * g.abs() + 1e-14 / g.abs().max(1e-300),
                "fpa {} vs {}", best.flight_path_angle_rad, g);
        }

        #[test]
        fn speed_for_each_apsis_target_reaches_it((body, r, _v, g) in burnout_state(), k in 1.0001f64..30.0) {
            let mu = body.mu_m3_s2;
            let t = Target::new(TargetQuantity::ApoapsisRadius, r * k);
            let s = speed_for_target(mu, r, g, &t).unwrap();
            let (back, _) = forward(mu, r, s[0].speed_m_s, g).unwrap();
            prop_assert!(close(back.apoapsis_radius_m().unwrap(), r * k, 1e-10));
        }

        #[test]
        fn descending_branch_mirrors_ascending_everywhere((body, conic, r) in targeted()) {
            let states = burnout_for_conic(body.mu_m3_s2, &conic, r).unwrap();
            if states.len() == 2 {
                prop_assert_eq!(states[0].speed_m_s.to_bits(), states[1].speed_m_s.to_bits());
                prop_assert_eq!(states[0].flight_path_angle_rad.to_bits(), (-states[1].flight_path_angle_rad).to_bits());
                prop_assert!(states[0].flight_path_angle_rad >= 0.0);
            }
        }
    }
}
