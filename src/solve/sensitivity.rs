//! Analytic partial derivatives of the orbit with respect to the burnout state.
//!
//! With Q = r v^2 / mu, c = cos g, s = sin g, the forward map is
//! X = e cos nu = Q c^2 - 1, Y = e sin nu = Q s c, e = hypot(X, Y),
//! p = r Q c^2, rp = p / (1 + e), ra = p / (1 - e), a = r / (2 - Q),
//! T = 2 pi sqrt(a^3 / mu). Differentiating:
//! - dX = c^2 dQ - 2 Q s c dg,  dY = s c dQ + Q cos(2g) dg,
//!   dQ = (2Q/v) dv + (Q/r) dr;
//! - de = cos(nu) dX + sin(nu) dY (at e = 0 we take nu = 0: burnout at
//!   periapsis, the one-sided derivative in the direction of increasing speed);
//! - dp = (2p/v) dv + (2p/r) dr - 2 p tan(g) dg;
//! - drp = dp/(1+e) - p de/(1+e)^2,  dra = 2 da - drp (from ra = 2a - rp);
//! - da = (2 a^2 Q / (r v)) dv + (2 a^2 / r^2) dr;  dT = (3 T / (2 a)) da.

use crate::physics::state::BurnoutState;

/// Row labels of the sensitivity matrix (machine keys).
pub const ROWS: [&str; 5] = [
    "periapsis_radius_m",
    "apoapsis_radius_m",
    "sma_m",
    "ecc",
    "period_s",
];
/// Column labels of the sensitivity matrix (machine keys).
pub const COLS: [&str; 3] = ["speed_m_s", "flight_path_angle_deg", "burnout_radius_m"];

/// The 5x3 matrix of partials d(row)/d(col): rows periapsis radius (m),
/// apoapsis radius (m), sma (m), ecc (-), period (s); columns per m/s of
/// speed, per deg of flight-path angle, per m of burnout radius. A row is
/// `None` where the quantity does not exist for the orbit (apoapsis and period
/// of an open orbit, sma of a parabola).
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Sensitivity {
    /// Rows in the order of [`ROWS`].
    pub rows: [Option<[f64; 3]>; 5],
}

/// Partials with the flight-path-angle column per radian (the form the
/// error-budget mathematics uses).
pub fn partials_per_rad(
    mu_m3_s2: f64,
    radius_m: f64,
    speed_m_s: f64,
    flight_path_angle_rad: f64,
) -> Sensitivity {
    let (r, v, mu) = (radius_m, speed_m_s, mu_m3_s2);
    let (s, c) = flight_path_angle_rad.sin_cos();
    let q = r * v * v / mu;
    let x = q * c * c - 1.0;
    let y = q * s * c;
    let e = x.hypot(y);
    // At e = 0 (within the rounding of Q: a circular target's speed is
    // rounded, and which side of circular it lands on would decide the
    // apsides' labels) take nu = 0, the one-sided derivative towards higher
    // speed, as for an exact circle.
    let (cn, sn) = if e > 8.0 * f64::EPSILON * q.max(1.0) {
        (x / e, y / e)
    } else {
        (1.0, 0.0)
    };
    let dq = [2.0 * q / v, 0.0, q / r];
    let dx = [c * c * dq[0], -2.0 * q * s * c, c * c * dq[2]];
    let dy = [s * c * dq[0], q * (c * c - s * s), s * c * dq[2]];
    let de: [f64; 3] = std::array::from_fn(|k| cn * dx[k] + sn * dy[k]);
    let p = r * q * c * c;
    let dp = [
        2.0 * p / v,
        -2.0 * p * s / c.max(f64::MIN_POSITIVE),
        2.0 * p / r,
    ];
    let dp = if c == 0.0 { [0.0, 0.0, 0.0] } else { dp };
    let drp: [f64; 3] =
        std::array::from_fn(|k| dp[k] / (1.0 + e) - p * de[k] / ((1.0 + e) * (1.0 + e)));
    // Closed versus open by the energy (Q < 2), as in the forward map, not
    // by a rounded eccentricity; a near-radial ellipse keeps its rows.
    let closed = q < 2.0;
    let two_minus_q = 2.0 - q;
    let (da, dt) = if two_minus_q != 0.0 {
        let a = r / two_minus_q;
        let da = [2.0 * a * a * q / (r * v), 0.0, 2.0 * a * a / (r * r)];
        let dt = closed.then(|| {
            let t = 2.0 * std::f64::consts::PI * (a * a * a / mu).sqrt();
            std::array::from_fn(|k| 1.5 * t / a * da[k])
        });
        (Some(da), dt)
    } else {
        (None, None)
    };
    // ra = 2a - rp: well conditioned for every ellipse, near-radial included
    // (p / (1 - e) is 0/0 there).
    let dra = match (closed, da) {
        (true, Some(da)) => Some(std::array::from_fn(|k| 2.0 * da[k] - drp[k])),
        _ => None,
    };
    Sensitivity {
        rows: [Some(drp), dra, da, Some(de), dt],
    }
}

/// Partials as in the machine contract: flight-path angle column per degree.
pub fn partials(
    mu_m3_s2: f64,
    radius_m: f64,
    speed_m_s: f64,
    flight_path_angle_rad: f64,
) -> Sensitivity {
    let mut s = partials_per_rad(mu_m3_s2, radius_m, speed_m_s, flight_path_angle_rad);
    let per_deg = std::f64::consts::PI / 180.0;
    for row in s.rows.iter_mut().flatten() {
        row[1] *= per_deg;
    }
    s
}

/// Partials for a solved state, with rows nulled by the state's own conic
/// (the classification the user sees), not by an eccentricity recomputed from
/// the rounded state: an exact parabola has no sma, apoapsis or period rows.
pub fn partials_for_state(
    mu_m3_s2: f64,
    state: &crate::physics::state::BurnoutState,
) -> Sensitivity {
    rows_of_conic(
        partials(
            mu_m3_s2,
            state.radius_m,
            state.speed_m_s,
            state.flight_path_angle_rad,
        ),
        &state.conic,
    )
}

/// As [`partials_for_state`], with the flight-path-angle column per radian.
pub fn partials_per_rad_for_state(
    mu_m3_s2: f64,
    state: &crate::physics::state::BurnoutState,
) -> Sensitivity {
    rows_of_conic(
        partials_per_rad(
            mu_m3_s2,
            state.radius_m,
            state.speed_m_s,
            state.flight_path_angle_rad,
        ),
        &state.conic,
    )
}

/// Nulls the rows the conic does not have (apoapsis and period of an open
/// orbit, sma of a parabola).
fn rows_of_conic(mut s: Sensitivity, conic: &crate::physics::orbit::Conic) -> Sensitivity {
    if conic.apoapsis_radius_m().is_none() {
        s.rows[1] = None;
        s.rows[4] = None;
    }
    if conic.sma_m().is_none() {
        s.rows[2] = None;
    }
    s
}

/// The rows' values (periapsis radius, apoapsis radius, sma, ecc, period)
/// of the orbit a burnout state (r m, v m/s, fpa rad) reaches; `None` where
/// the forward map has no orbit.
pub fn orbit_rows(mu_m3_s2: f64, r: f64, v: f64, gamma: f64) -> Option<[Option<f64>; 5]> {
    let st = crate::physics::state::forward_state(mu_m3_s2, r, v, gamma).ok()?;
    let c = st.conic;
    Some([
        Some(c.periapsis_radius_m()),
        c.apoapsis_radius_m(),
        c.sma_m(),
        Some(c.ecc()),
        c.period_s(mu_m3_s2),
    ])
}

/// The burnout errors the human table's coefficients use: +-1 m/s of speed,
/// +-0.1 deg of flight-path angle, +-1 km of altitude (common practice for
/// a first look at an upper stage's dispersions).
pub const REFERENCE_STEPS: [f64; 3] = [1.0, 0.1 * std::f64::consts::PI / 180.0, 1000.0];

/// Exact changes of the rows for a burnout error of each reference size,
/// either sign, from the forward map (not the linearisation): where the map
/// bends within the step (a near-circular orbit, burnout near an apsis) the
/// two signs differ from the partials' prediction.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Responses {
    /// Error sizes in the order speed (m/s), flight-path angle (rad),
    /// burnout radius (m).
    pub steps: [f64; 3],
    /// `plus[k][i]`: change of row i for +steps\[k\] (SI; `None` where the
    /// row does not exist before or after).
    pub plus: [[Option<f64>; 5]; 3],
    /// As `plus`, for -steps\[k\].
    pub minus: [[Option<f64>; 5]; 3],
}

/// [`Responses`] of a state for `steps` (speed m/s, fpa rad, radius m).
pub fn exact_responses(mu_m3_s2: f64, state: &BurnoutState, steps: [f64; 3]) -> Responses {
    let base = [state.speed_m_s, state.flight_path_angle_rad, state.radius_m];
    let nominal = orbit_rows(
        mu_m3_s2,
        state.radius_m,
        state.speed_m_s,
        state.flight_path_angle_rad,
    )
    .unwrap_or([None; 5]);
    let delta = |k: usize, sign: f64| -> [Option<f64>; 5] {
        let mut x = base;
        x[k] += sign * steps[k];
        let Some(rows) = orbit_rows(mu_m3_s2, x[2], x[0], x[1]) else {
            return [None; 5];
        };
        let mut out = [None; 5];
        for i in 0..5 {
            out[i] = match (rows[i], nominal[i]) {
                (Some(a), Some(b)) => Some(a - b),
                _ => None,
            };
        }
        out
    };
    Responses {
        steps,
        plus: [delta(0, 1.0), delta(1, 1.0), delta(2, 1.0)],
        minus: [delta(0, -1.0), delta(1, -1.0), delta(2, -1.0)],
    }
}

/// Eccentricity below which a target counts as near-circular for the
/// response test of [`is_near_circular`].
pub const NEAR_CIRCULAR_ECC: f64 = 0.01;

/// Whether the orbit is near-circular in the sense that matters for
/// dispersions: e below [`NEAR_CIRCULAR_ECC`] and the periapsis or
/// apoapsis responding to the size of a flight-path angle error rather than
/// its sign (both signs move it the same way by more than the odd part).
/// There the apsides are not differentiable in the angle at e = 0 (the
/// change is first order in |d fpa|), and partials and J P J^T understate
/// them.
pub fn is_near_circular(state: &BurnoutState, r: &Responses) -> bool {
    if state.conic.ecc() >= NEAR_CIRCULAR_ECC {
        return false;
    }
    (0..2).any(|i| match (r.plus[1][i], r.minus[1][i]) {
        (Some(p), Some(m)) => p * m > 0.0 && (p + m).abs() > (p - m).abs(),
        _ => false,
    })
}

#[cfg(test)]
#[allow(clippy::float_cmp)] // exact zeros, exact parabolas and mirror images are asserted on purpose
mod tests {
    use super::*;
    use crate::physics::orbit::forward;
    use approx::assert_relative_eq;

    const MU: f64 = crate::physics::body::EARTH_MU_M3_S2;

    fn values(r: f64, v: f64, g: f64) -> [f64; 5] {
        let (c, _) = forward(MU, r, v, g).unwrap();
        [
            c.periapsis_radius_m(),
            c.apoapsis_radius_m().unwrap_or(f64::NAN),
            c.sma_m().unwrap_or(f64::NAN),
            c.ecc(),
            c.period_s(MU).unwrap_or(f64::NAN),
        ]
    }

    /// Central finite differences of the forward map, per m/s, per deg, per m.
    #[allow(clippy::needless_range_loop)]
    fn finite_difference(r: f64, v: f64, g: f64) -> [[f64; 3]; 5] {
        let hv = v * 1e-6;
        let hg = 1e-6;
        let hr = r * 1e-6;
        let mut out = [[0.0; 3]; 5];
        let cols = [
            (values(r, v + hv, g), values(r, v - hv, g), 2.0 * hv),
            (
                values(r, v, g + hg),
                values(r, v, g - hg),
                2.0 * hg.to_degrees(),
            ),
            (values(r + hr, v, g), values(r - hr, v, g), 2.0 * hr),
        ];
        for (k, (plus, minus, h)) in cols.iter().enumerate() {
            for i in 0..5 {
                out[i][k] = (plus[i] - minus[i]) / h;
            }
        }
        out
    }

    #[test]
    #[allow(clippy::needless_range_loop)]
    fn partials_match_central_differences_on_an_ellipse() {
        let (r, v, g) = (6_778_137.0, 8_200.0, 3f64.to_radians());
        let s = partials(MU, r, v, g);
        let fd = finite_difference(r, v, g);
        for i in 0..5 {
            let row = s.rows[i].unwrap();
            // Central differences with relative step 1e-6 carry ~1e-7 relative
            // truncation error plus rounding noise of ~1e-16 * value / step;
            // an exact zero partial is compared against that noise floor.
            let scale = fd[i].iter().fold(0.0f64, |m, x| m.max(x.abs()));
            for k in 0..3 {
                assert_relative_eq!(
                    row[k],
                    fd[i][k],
                    max_relative = 1e-5,
                    epsilon = 1e-6 * scale
                );
            }
        }
    }

    #[test]
    fn exact_parabola_has_null_sma_apoapsis_and_period_rows() {
        let conic = crate::physics::orbit::Conic::from_periapsis_ecc(6_578_137.0, 1.0).unwrap();
        let st = crate::solve::invert::burnout_for_conic(MU, &conic, 6_578_137.0).unwrap()[0];
        let s = partials_for_state(MU, &st);
        assert!(s.rows[1].is_none() && s.rows[2].is_none() && s.rows[4].is_none());
        assert!(s.rows[0].is_some() && s.rows[3].is_some());
    }

    #[test]
    fn hyperbola_has_null_apoapsis_and_period_rows() {
        let s = partials(MU, 6_778_137.0, 12_000.0, 0.1);
        assert!(s.rows[1].is_none() && s.rows[4].is_none());
        assert!(s.rows[0].is_some() && s.rows[2].is_some());
    }

    #[test]
    fn horizontal_burnout_at_periapsis_has_zero_periapsis_angle_partial() {
        let s = partials(MU, 6_778_137.0, 8_000.0, 0.0);
        assert_eq!(s.rows[0].unwrap()[1], 0.0);
    }
}

#[cfg(test)]
mod properties {
    use super::*;
    use crate::physics::orbit::forward;
    use crate::strategies::burnout_state;
    use proptest::prelude::*;

    fn values(mu: f64, r: f64, v: f64, g: f64) -> [f64; 5] {
        let (c, _) = forward(mu, r, v, g).unwrap();
        [
            c.periapsis_radius_m(),
            c.apoapsis_radius_m().unwrap_or(f64::NAN),
            c.sma_m().unwrap_or(f64::NAN),
            c.ecc(),
            c.period_s(mu).unwrap_or(f64::NAN),
        ]
    }

    proptest! {
        #![proptest_config(ProptestConfig::with_cases(1000))]

        /// Each analytic partial against a central difference of the forward map.
        #[test]
        fn partials_match_central_differences((body, r, v, g) in burnout_state()) {
            let mu = body.mu_m3_s2;
            let (c, _) = forward(mu, r, v, g).unwrap();
            // Stay away from the places where the partials do not exist or
            // the differences straddle a change of conic type.
            prop_assume!(c.ecc() > 1e-3 && (c.ecc() - 1.0).abs() > 1e-2 && g.abs() < 1.45);
            let s = partials(mu, r, v, g);
            let steps = [v * 1e-7, 1e-7, r * 1e-7];
            let per = [1.0, std::f64::consts::PI / 180.0, 1.0];
            for k in 0..3 {
                let (mut xp, mut xm) = ([r, v, g], [r, v, g]);
                let idx = [1, 2, 0][k];
                xp[idx] += steps[k];
                xm[idx] -= steps[k];
                let fp = values(mu, xp[0], xp[1], xp[2]);
                let fm = values(mu, xm[0], xm[1], xm[2]);
                for i in 0..5 {
                    let Some(row) = s.rows[i] else { continue };
                    let fd = (fp[i] - fm[i]) / (2.0 * steps[k]) * per[k];
                    let scale = [values(mu, r, v, g)[i].abs() / [v, 1.0, r][k] * per[k], fd.abs()]
                        .into_iter().fold(0.0, f64::max);
                    prop_assert!((row[k] - fd).abs() <= 1e-4 * scale + 1e-4 * fd.abs(),
                        "d{}/d{}: analytic {} vs difference {}", ROWS[i], COLS[k], row[k], fd);
                }
            }
        }
    }
}
