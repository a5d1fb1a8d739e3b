//! The numbers a flight plan needs from a burnout state: times to the
//! apsides, speeds there, v-infinity and the asymptote of an open orbit,
//! and for a path that comes down, the impact (time, speed, angle, range)
//! and the time spent above a given altitude.
//!
//! Every time comes from [`crate::physics::kepler::coast_times`] applied to
//! the states at the two ends (time since periapsis of each, in its
//! cancellation-free form), so an interval is a difference of two times
//! since periapsis on the same conic, taken modulo the period on an
//! ellipse. States on the conic at a radius R follow from energy and
//! angular momentum: v^2 = v_b^2 + 2 mu (1/R - 1/r_b), v_t = h / R with
//! h = r_b v_b cos(fpa_b), fpa = atan2(+-sqrt(v^2 - v_t^2), v_t)
//! (Bate, Mueller & White, 1971, ch. 1-2). A crossing of R exists after
//! burnout only where the path reaches it: on an ellipse the descending
//! crossing, on an open orbit only when burnout is inbound (before
//! periapsis).

use crate::physics::body::Body;
use crate::physics::kepler::coast_times;
use crate::physics::state::BurnoutState;
use std::f64::consts::PI;

/// Where a path that comes down meets the surface.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Impact {
    /// Time of flight from burnout to the surface, s.
    pub time_s: f64,
    /// Inertial speed at the surface, m/s.
    pub speed_m_s: f64,
    /// Flight-path angle at the surface, rad (negative: coming down).
    pub flight_path_angle_rad: f64,
    /// Angle travelled from burnout to impact about the body's centre, rad.
    pub downrange_rad: f64,
    /// That angle as a distance over the surface of a non-rotating sphere
    /// of the body's radius, m.
    pub ground_range_m: f64,
}

/// The flight-plan numbers of one solution.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct FlightNumbers {
    /// Time from burnout to the next apoapsis, s (`None` on an open orbit,
    /// or when the path meets the surface first).
    pub to_apoapsis_s: Option<f64>,
    /// Time from burnout to the next periapsis, s (`None` when it is never
    /// reached: an open orbit already past it, or the surface first).
    pub to_periapsis_s: Option<f64>,
    /// Speed at periapsis, m/s (h / rp; `None` when the periapsis is under
    /// the surface).
    pub periapsis_speed_m_s: Option<f64>,
    /// Speed at apoapsis, m/s (h / ra; `None` on an open orbit, or when the
    /// path meets the surface before its next apoapsis).
    pub apoapsis_speed_m_s: Option<f64>,
    /// Hyperbolic excess speed, m/s (sqrt(C3); `None` on an ellipse).
    pub v_infinity_m_s: Option<f64>,
    /// Angle from the burnout position to the outgoing asymptote, rad
    /// (true anomaly of the asymptote, acos(-1/e), less burnout's).
    pub asymptote_angle_rad: Option<f64>,
    /// The impact, when the path meets the surface after burnout.
    pub impact: Option<Impact>,
    /// Time above the given altitude: until impact on a path that comes
    /// down, per revolution on an orbit (`None` on an open orbit or
    /// without an altitude).
    pub time_above_s: Option<f64>,
}

/// The state on the trajectory of `state` at radius `r` (m), climbing or
/// descending; `None` where the path never reaches that radius.
fn state_at(mu: f64, state: &BurnoutState, r: f64, descending: bool) -> Option<(f64, f64)> {
    let (rb, vb, gb) = (state.radius_m, state.speed_m_s, state.flight_path_angle_rad);
    let v2 = vb * vb + 2.0 * mu * (1.0 / r - 1.0 / rb);
    if v2.is_nan() || v2 <= 0.0 {
        return None;
    }
    let vt = rb * vb * gb.cos() / r;
    let vr2 = v2 - vt * vt;
    if vr2 < -1e-9 * v2 {
        return None;
    }
    let vr = vr2.max(0.0).sqrt();
    let g = if descending {
        (-vr).atan2(vt)
    } else {
        vr.atan2(vt)
    };
    Some((v2.sqrt(), g))
}

/// Time since periapsis at (r, v, fpa), s.
fn since(mu: f64, r: f64, v: f64, g: f64) -> Option<f64> {
    coast_times(mu, r, v, g).map(|t| t.since_periapsis_s)
}

/// Time from burnout forward to the point (r, v, fpa) on the same conic, s:
/// a difference of times since periapsis, plus a period on an ellipse when
/// the point comes round again.
fn time_to(
    mu: f64,
    state: &BurnoutState,
    period: Option<f64>,
    r: f64,
    v: f64,
    g: f64,
) -> Option<f64> {
    let t0 = since(
        mu,
        state.radius_m,
        state.speed_m_s,
        state.flight_path_angle_rad,
    )?;
    let t1 = since(mu, r, v, g)?;
    let mut dt = t1 - t0;
    if let Some(t) = period {
        if dt < 0.0 {
            dt += t;
        }
    }
    (dt >= 0.0).then_some(dt)
}

/// True anomaly in (-pi, pi] (open orbits) from [0, 2 pi).
fn signed(nu: f64) -> f64 {
    if nu > PI {
        nu - 2.0 * PI
    } else {
        nu
    }
}

/// The flight-plan numbers of `state` around `body`; `above_alt_m` asks
/// for the time above that altitude.
pub fn flight_numbers(
    body: &Body,
    state: &BurnoutState,
    above_alt_m: Option<f64>,
) -> FlightNumbers {
    flight_numbers_about(body.mu_m3_s2, body.radius_m, state, above_alt_m)
}

/// As [`flight_numbers`], for a body given by its gravitational parameter
/// (m^3/s^2) and surface radius (m).
pub fn flight_numbers_about(
    mu: f64,
    surface_radius_m: f64,
    state: &BurnoutState,
    above_alt_m: Option<f64>,
) -> FlightNumbers {
    let c = &state.conic;
    let h = c.angular_momentum_m2_s(mu);
    let rp = c.periapsis_radius_m();
    let ra = c.apoapsis_radius_m();
    let period = c.period_s(mu);
    let e = c.ecc();
    let open = ra.is_none();
    let nu_b = state.true_anomaly_rad;
    let surface = surface_radius_m;
    // The impact: where r = R after burnout, on the way down (the crossing
    // itself, and whether the path reaches it, from the feasibility check).
    let impact = crate::solve::feasibility::surface_crossing(surface, state).and_then(|x| {
        let (v, g) = state_at(mu, state, surface, true)?;
        let time_s = time_to(mu, state, period, surface, v, g)?;
        Some(Impact {
            time_s,
            speed_m_s: v,
            flight_path_angle_rad: g,
            downrange_rad: x.downrange_rad,
            ground_range_m: x.downrange_rad * surface,
        })
    });
    let coast = coast_times(
        mu,
        state.radius_m,
        state.speed_m_s,
        state.flight_path_angle_rad,
    );
    let before_impact = |t: Option<f64>| t.filter(|t| impact.is_none_or(|i| *t <= i.time_s));
    let to_apoapsis_s = before_impact(coast.and_then(|k| k.to_apoapsis_s));
    let to_periapsis_s = before_impact(coast.and_then(|k| k.to_periapsis_s));
    let v_infinity_m_s = open.then(|| c.c3_m2_s2(mu).max(0.0).sqrt());
    let asymptote_angle_rad = open.then(|| {
        // nu_inf = acos(-1/e) = atan2(sqrt(e^2 - 1), -1); pi for a parabola.
        let nu_inf = ((e - 1.0).max(0.0) * (e + 1.0)).sqrt().atan2(-1.0);
        nu_inf - signed(nu_b)
    });
    let time_above_s = above_alt_m.and_then(|alt| {
        time_above(
            mu,
            state,
            period,
            surface + alt,
            ra,
            rp,
            impact.map(|i| i.time_s),
        )
    });
    FlightNumbers {
        to_apoapsis_s,
        to_periapsis_s,
        periapsis_speed_m_s: (rp >= surface).then_some(h / rp),
        apoapsis_speed_m_s: ra
            .filter(|_| impact.is_none() || to_apoapsis_s.is_some())
            .map(|ra| h / ra),
        v_infinity_m_s,
        asymptote_angle_rad,
        impact,
        time_above_s,
    }
}

/// Time above radius `r_above`: on a path that comes down, from burnout
/// (or the climb through it) to the descent through it; on an orbit, per
/// revolution. `None` on an open orbit.
fn time_above(
    mu: f64,
    state: &BurnoutState,
    period: Option<f64>,
    r_above: f64,
    ra: Option<f64>,
    rp: f64,
    impact_s: Option<f64>,
) -> Option<f64> {
    let ra = ra?;
    if ra <= r_above {
        return Some(0.0);
    }
    let t = period?;
    if rp >= r_above && impact_s.is_none() {
        return Some(t);
    }
    let (vd, gd) = state_at(mu, state, r_above, true)?;
    let down = time_to(mu, state, Some(t), r_above, vd, gd)?;
    match impact_s {
        None => {
            // Per revolution: twice the time from the climb through it to
            // apoapsis, i.e. from the climb to the descent.
            let (vu, gu) = state_at(mu, state, r_above, false)?;
            let up = time_to(mu, state, Some(t), r_above, vu, gu)?;
            Some((down - up).rem_euclid(t))
        }
        Some(_) => {
            let above_now = state.radius_m >= r_above;
            if above_now {
                Some(down)
            } else if state.flight_path_angle_rad > 0.0 {
                let (vu, gu) = state_at(mu, state, r_above, false)?;
                let up = time_to(mu, state, Some(t), r_above, vu, gu)?;
                Some((down - up).max(0.0))
            } else {
                Some(0.0)
            }
        }
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::physics::state::forward_state;
    use approx::assert_relative_eq;

    fn earth() -> Body {
        Body::from_name("earth").unwrap()
    }

    #[test]
    fn vertical_like_sounding_shot_times_match_kepler() {
        // Burnout at 45 km, 2 km/s at 80 deg: a ballistic arc. Check values
        // from the ellipse directly: with E from r = a (1 - e cos E), the
        // time between the climb and the descent through r is symmetric
        // about apoapsis; impact time = (M_impact - M_burnout) / n.
        let b = earth();
        let mu = b.mu_m3_s2;
        let r0 = b.radius_m + 45e3;
        let st = forward_state(mu, r0, 2000.0, 80f64.to_radians()).unwrap();
        let f = flight_numbers(&b, &st, Some(100e3));
        let c = st.conic;
        let a = c.sma_m().unwrap();
        let e = c.ecc();
        let n = (mu / (a * a * a)).sqrt();
        let ecc_anom = |r: f64| ((1.0 - r / a) / e).acos(); // in [0, pi]: climbing side
        let mean = |ea: f64| ea - e * ea.sin();
        let m_b = mean(ecc_anom(r0));
        let m_imp = 2.0 * PI - mean(ecc_anom(b.radius_m));
        let imp = f.impact.expect("comes down");
        assert_relative_eq!(imp.time_s, (m_imp - m_b) / n, max_relative = 1e-9);
        assert_relative_eq!(
            f.to_apoapsis_s.unwrap(),
            (PI - m_b) / n,
            max_relative = 1e-9
        );
        let m_up = mean(ecc_anom(b.radius_m + 100e3));
        assert_relative_eq!(
            f.time_above_s.unwrap(),
            2.0 * (PI - m_up) / n,
            max_relative = 1e-9
        );
        // Energy at the surface: vis-viva; the angle is the burnout's mirrored
        // by symmetry only at r0, so check h = R v cos(fpa) instead.
        let h = c.angular_momentum_m2_s(mu);
        assert_relative_eq!(
            imp.speed_m_s.powi(2),
            mu * (2.0 / b.radius_m - 1.0 / a),
            max_relative = 1e-12
        );
        assert_relative_eq!(
            b.radius_m * imp.speed_m_s * imp.flight_path_angle_rad.cos(),
            h,
            max_relative = 1e-12
        );
        assert!(imp.flight_path_angle_rad < 0.0);
        assert!(f.to_periapsis_s.is_none(), "periapsis is under the surface");
        assert!(f.periapsis_speed_m_s.is_none());
        assert_relative_eq!(
            f.apoapsis_speed_m_s.unwrap(),
            h / c.apoapsis_radius_m().unwrap(),
            max_relative = 1e-12
        );
    }

    #[test]
    fn outbound_escape_never_impacts_and_reports_its_asymptote() {
        // 11.5 km/s at 250 km, 60 deg: an outbound hyperbola with periapsis
        // under the surface; it never comes back (issue 14, item 3).
        let b = earth();
        let mu = b.mu_m3_s2;
        let st = forward_state(mu, b.radius_m + 250e3, 11_500.0, 60f64.to_radians()).unwrap();
        let f = flight_numbers(&b, &st, None);
        assert!(f.impact.is_none());
        let e = st.conic.ecc();
        assert_relative_eq!(
            f.v_infinity_m_s.unwrap().powi(2),
            st.conic.c3_m2_s2(mu),
            max_relative = 1e-12
        );
        let nu_inf = (-1.0 / e).acos();
        assert_relative_eq!(
            f.asymptote_angle_rad.unwrap(),
            nu_inf - st.true_anomaly_rad,
            max_relative = 1e-12
        );
        // Inbound on the same hyperbola (fpa -60 deg): it does come down.
        let inbound =
            forward_state(mu, b.radius_m + 250e3, 11_500.0, (-60f64).to_radians()).unwrap();
        assert!(flight_numbers(&b, &inbound, None).impact.is_some());
    }

    #[test]
    fn circular_orbit_apsis_speeds_and_time_above() {
        let b = earth();
        let mu = b.mu_m3_s2;
        let r = b.radius_m + 500e3;
        let v = (mu / r).sqrt();
        let st = forward_state(mu, r, v, 0.0).unwrap();
        let f = flight_numbers(&b, &st, Some(400e3));
        assert_relative_eq!(f.periapsis_speed_m_s.unwrap(), v, max_relative = 1e-12);
        assert_relative_eq!(f.apoapsis_speed_m_s.unwrap(), v, max_relative = 1e-12);
        assert_relative_eq!(
            f.time_above_s.unwrap(),
            st.conic.period_s(mu).unwrap(),
            max_relative = 1e-12
        );
        assert_eq!(flight_numbers(&b, &st, Some(600e3)).time_above_s, Some(0.0));
    }
}
