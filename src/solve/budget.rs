//! Error budget: linear mapping of burnout errors into orbit errors
//! (C = J P J^T), and the inverse question: how large may each burnout error
//! be for the orbit to stay within given tolerances.
//!
//! Burnout errors are ordered (speed m/s, flight-path angle rad, burnout
//! radius m); orbit rows are (periapsis radius m, apoapsis radius m, sma m,
//! ecc, period s), as in [`crate::solve::sensitivity`].
//!
//! (Why this file is long: about 250 of its lines are tests, against Monte
//! Carlo and closed forms.)

use crate::error::{g, mention, Error};
use crate::physics::state::BurnoutState;
use crate::solve::sensitivity::{partials_per_rad_for_state, ROWS};
use argmin::core::{CostFunction, Executor, State, TerminationReason, TerminationStatus};
use argmin::solver::brent::BrentRoot;
use nalgebra::{Matrix3, SymmetricEigen, Vector3};

/// Names of the burnout error components (machine keys, SI units; the angle
/// is reported in degrees at the edges).
pub const COMPONENTS: [&str; 3] = ["speed_m_s", "flight_path_angle_deg", "burnout_radius_m"];

/// 1-sigma burnout errors and their correlations.
#[derive(Debug, Clone, Copy, PartialEq, Default)]
pub struct BurnoutErrors {
    /// 1-sigma speed error, m/s.
    pub speed_sigma_m_s: f64,
    /// 1-sigma flight-path angle error, rad.
    pub fpa_sigma_rad: f64,
    /// 1-sigma burnout radius (altitude) error, m.
    pub radius_sigma_m: f64,
    /// Correlation coefficients (speed-fpa, speed-radius, fpa-radius), each in [-1, 1].
    pub correlations: [f64; 3],
}

impl BurnoutErrors {
    /// The covariance matrix P (units m/s, rad, m).
    ///
    /// # Errors
    /// Negative sigmas, correlations outside [-1, 1], or a matrix that is not
    /// positive semi-definite.
    pub fn covariance(&self) -> Result<Matrix3<f64>, Error> {
        let s = [
            self.speed_sigma_m_s,
            self.fpa_sigma_rad,
            self.radius_sigma_m,
        ];
        let names = ["speed sigma", "flight-path angle sigma", "altitude sigma"];
        for (v, n) in s.iter().zip(names) {
            if !v.is_finite() || *v < 0.0 {
                return Err(Error::OutOfRange {
                    quantity: n,
                    value: *v,
                    unit: "",
                    expected: "a finite value of 0 or more".into(),
                });
            }
        }
        let corr_names = [
            "speed-fpa correlation",
            "speed-alt correlation",
            "fpa-alt correlation",
        ];
        for (c, n) in self.correlations.iter().zip(corr_names) {
            if !c.is_finite() || c.abs() > 1.0 {
                return Err(Error::OutOfRange {
                    quantity: n,
                    value: *c,
                    unit: "",
                    expected: "between -1 and 1".into(),
                });
            }
        }
        let [c01, c02, c12] = self.correlations;
        let p = Matrix3::new(
            s[0] * s[0],
            c01 * s[0] * s[1],
            c02 * s[0] * s[2],
            c01 * s[0] * s[1],
            s[1] * s[1],
            c12 * s[1] * s[2],
            c02 * s[0] * s[2],
            c12 * s[1] * s[2],
            s[2] * s[2],
        );
        let eig = SymmetricEigen::new(p);
        let scale = p.diagonal().max();
        if eig.eigenvalues.min() < -1e-12 * scale {
            return Err(Error::Infeasible(format!(
                "the correlations ({}, {}, {}) do not form a valid covariance (not positive semi-definite)",
                g(c01),
                g(c02),
                g(c12)
            )));
        }
        Ok(p)
    }
}

/// The orbit's 1-sigma error in one quantity.
#[derive(Debug, Clone, PartialEq)]
pub struct RowError {
    /// Orbit quantity key (see [`ROWS`]).
    pub quantity: &'static str,
    /// 1-sigma error in the quantity's SI unit.
    pub one_sigma: f64,
    /// 3-sigma error.
    pub three_sigma: f64,
    /// The burnout error component that contributes most variance (of
    /// [`COMPONENTS`]), and its share of the variance when taken alone.
    pub dominant: &'static str,
    /// The dominant component's own variance contribution as a share of
    /// the row's total variance (correlations included; can exceed 1 when
    /// a correlation cancels part of it).
    pub dominant_share: f64,
    /// Mean of the quantity's change through the exact forward map (not the
    /// linearisation), SI: the nonlinear bias of the dispersed orbit.
    pub exact_mean_shift: f64,
    /// Standard deviation through the exact forward map, SI.
    pub exact_one_sigma: f64,
}

impl RowError {
    /// Whether the linear J P J^T misstates this row: the exact map's
    /// standard deviation or mean shift differs from the linear picture by
    /// more than 10 % of the larger sigma (a near-circular orbit, a strongly
    /// bent map).
    pub fn linear_misleads(&self) -> bool {
        let s = self.exact_one_sigma.max(self.one_sigma);
        s > 0.0
            && ((self.exact_one_sigma - self.one_sigma).abs() > 0.1 * s
                || self.exact_mean_shift.abs() > 0.1 * s)
    }

    /// The 3-sigma reach of the exact dispersion from the nominal: the
    /// larger of |mean shift| + 3 exact sigmas and the linear 3 sigmas.
    pub fn three_sigma_reach(&self) -> f64 {
        (self.exact_mean_shift.abs() + 3.0 * self.exact_one_sigma).max(self.three_sigma)
    }
}

/// Points of the quasi-random rule that takes the orbit's statistics
/// through the exact map (2^16): its error on E|z|, the near-circular kink,
/// is about 3e-5 relative (a unit test holds it below 1e-3).
const QMC_POINTS: u32 = 1 << 16;

/// The radical inverse of `i` in base `b` (the Halton sequence's
/// coordinate; Halton, Numer. Math. 2, 1960).
fn radical_inverse(mut i: u32, b: u32) -> f64 {
    let (mut f, mut r) = (1.0, 0.0);
    while i > 0 {
        f /= b as f64;
        r += f * (i % b) as f64;
        i /= b;
    }
    r
}

/// Three standard normals for quasi-random point `i` (1-based): Halton
/// coordinates in bases 2, 3, 5 and 7 through the Box-Muller transform
/// (Box & Muller, Ann. Math. Stat. 29, 1958). Deterministic: the same
/// inputs give the same budget.
fn standard_normals(i: u32) -> [f64; 3] {
    let tau = 2.0 * std::f64::consts::PI;
    let (u1, u2) = (radical_inverse(i, 2), radical_inverse(i, 3));
    let (u3, u4) = (radical_inverse(i, 5), radical_inverse(i, 7));
    let (s1, s2) = ((-2.0 * u1.ln()).sqrt(), (-2.0 * u3.ln()).sqrt());
    [
        s1 * (tau * u2).cos(),
        s1 * (tau * u2).sin(),
        s2 * (tau * u4).cos(),
    ]
}

/// Mean shift and standard deviation of each row through the exact
/// forward map for burnout errors ~ N(0, P): a quasi-Monte Carlo average
/// over [`QMC_POINTS`] deterministic normal points (quasi-random rather than
/// a product rule: the map has a kink at e = 0, where product Gauss rules
/// converge slowly). `None` for a row some point leaves undefined (an orbit
/// that opens).
fn exact_statistics(mu: f64, state: &BurnoutState, p: &Matrix3<f64>) -> [Option<(f64, f64)>; 5] {
    let rows = |v: f64, g: f64, r: f64| crate::solve::sensitivity::orbit_rows(mu, r, v, g);
    let Some(nominal) = rows(state.speed_m_s, state.flight_path_angle_rad, state.radius_m) else {
        return [None; 5];
    };
    // x = L z with L L^T = P, from P's eigen decomposition (P may be
    // singular: a sigma of 0).
    let eig = SymmetricEigen::new(*p);
    let mut l = Matrix3::zeros();
    for k in 0..3 {
        let lam = eig.eigenvalues[k].max(0.0);
        let col = eig.eigenvectors.column(k) * lam.sqrt();
        l.set_column(k, &col);
    }
    let mut m1 = [0.0f64; 5];
    let mut m2 = [0.0f64; 5];
    let mut defined = [true; 5];
    let w = 1.0 / QMC_POINTS as f64;
    for i in 1..=QMC_POINTS {
        let z = standard_normals(i);
        let d = l * Vector3::new(z[0], z[1], z[2]);
        let x = rows(
            state.speed_m_s + d[0],
            state.flight_path_angle_rad + d[1],
            state.radius_m + d[2],
        );
        for k in 0..5 {
            match (x.and_then(|x| x[k]), nominal[k]) {
                (Some(v), Some(n)) => {
                    let dv = v - n;
                    m1[k] += w * dv;
                    m2[k] += w * dv * dv;
                }
                _ => defined[k] = false,
            }
        }
    }
    let mut out = [None; 5];
    for i in 0..5 {
        if defined[i] && nominal[i].is_some() {
            out[i] = Some((m1[i], (m2[i] - m1[i] * m1[i]).max(0.0).sqrt()));
        }
    }
    out
}

/// Maps burnout errors through the sensitivity matrix: the 1-sigma and
/// 3-sigma orbit errors (J P J^T) and the dominant contributor of each.
/// Rows that do not exist for the orbit (apoapsis of an open orbit) are skipped.
///
/// # Errors
/// As [`BurnoutErrors::covariance`].
pub fn map_errors(
    mu_m3_s2: f64,
    state: &BurnoutState,
    errors: &BurnoutErrors,
) -> Result<Vec<RowError>, Error> {
    let p = errors.covariance()?;
    let per_rad = partials_per_rad_for_state(mu_m3_s2, state);
    let sig = [
        errors.speed_sigma_m_s,
        errors.fpa_sigma_rad,
        errors.radius_sigma_m,
    ];
    let exact = exact_statistics(mu_m3_s2, state, &p);
    let mut out = Vec::new();
    for (i, row) in per_rad.rows.iter().enumerate() {
        let Some(j) = row else {
            continue;
        };
        let jv = Vector3::new(j[0], j[1], j[2]);
        let var = (jv.transpose() * p * jv)[(0, 0)].max(0.0);
        let own: Vec<f64> = (0..3).map(|k| (j[k] * sig[k]).powi(2)).collect();
        let (k, best) =
            own.iter().enumerate().fold(
                (0, -1.0),
                |acc, (k, v)| if *v > acc.1 { (k, *v) } else { acc },
            );
        out.push(RowError {
            quantity: ROWS[i],
            one_sigma: var.sqrt(),
            three_sigma: 3.0 * var.sqrt(),
            dominant: COMPONENTS[k],
            dominant_share: if var > 0.0 { best / var } else { 0.0 },
            exact_mean_shift: exact[i].map_or(f64::NAN, |e| e.0),
            exact_one_sigma: exact[i].map_or(f64::NAN, |e| e.1),
        });
    }
    Ok(out)
}

/// Tolerances (half-widths) on orbit quantities; `None` means unconstrained.
#[derive(Debug, Clone, Copy, PartialEq, Default)]
pub struct Tolerances {
    /// Indexed like [`ROWS`]: periapsis m, apoapsis m, sma m, ecc, period s.
    pub rows: [Option<f64>; 5],
}

/// The largest error allowed in one burnout quantity alone.
#[derive(Debug, Clone, PartialEq)]
pub struct AllowedError {
    /// Burnout component (of [`COMPONENTS`]).
    pub component: &'static str,
    /// Linear estimate: min over constrained rows of tol / |partial|, in SI
    /// (m/s, rad, m); infinite when no constrained row depends on it.
    pub linear: f64,
    /// Exact largest negative excursion from the nonlinear forward map (a
    /// positive number), SI.
    pub minus: f64,
    /// Exact largest positive excursion, SI.
    pub plus: f64,
    /// The orbit quantity whose tolerance binds first (linear estimate).
    pub limited_by: Option<&'static str>,
}

/// One principal axis of the allowed joint-error ellipsoid.
#[derive(Debug, Clone, PartialEq)]
pub struct EllipsoidAxis {
    /// Half-length along the unit direction, in the scaled space where the
    /// components are (m/s, rad, m); infinite when unconstrained.
    pub half_length: f64,
    /// Unit direction (speed, angle, radius components).
    pub direction: [f64; 3],
    /// Distance along the axis (either way) at which the exact forward map
    /// first breaks a tolerance; infinite when it never does within the
    /// physical range.
    pub exact_limit: f64,
}

impl EllipsoidAxis {
    /// The half-length cut at the exact limit: the extent of the joint
    /// region along this axis.
    pub fn bounded(&self) -> f64 {
        self.half_length.min(self.exact_limit)
    }
}

/// The inverse answer: allowed burnout errors for given orbit tolerances.
#[derive(Debug, Clone, PartialEq)]
pub struct Allowed {
    /// Per burnout quantity, alone.
    pub alone: Vec<AllowedError>,
    /// The joint region sum_i (J_i dx / tol_i)^2 <= 1, to first order inside
    /// every tolerance slab, with each principal axis cut where the exact
    /// forward map first breaks a tolerance along it. Principal axes,
    /// longest first.
    pub ellipsoid_axes: Vec<EllipsoidAxis>,
    /// Largest excursion of each component over the ellipsoid with its axes
    /// cut at their exact limits (SI); infinite only when the exact map
    /// never breaks a tolerance along some axis.
    pub ellipsoid_extent: [f64; 3],
}

/// Orbit values (rows) from a burnout state, for the nonlinear checks.
fn row_values(mu: f64, r: f64, v: f64, gamma: f64) -> Option<[Option<f64>; 5]> {
    crate::solve::sensitivity::orbit_rows(mu, r, v, gamma)
}

/// Worst tolerance ratio max_i |row_i(x + d u) - row_i(x)| / tol_i minus 1,
/// along a direction u in (r, v, gamma) order.
#[derive(Clone, Copy)]
struct Edge<'a> {
    mu: f64,
    base: [f64; 3],
    nominal: [Option<f64>; 5],
    tol: &'a Tolerances,
    direction: [f64; 3],
}

impl Edge<'_> {
    fn ratio_minus_one(&self, d: f64) -> f64 {
        let mut x = self.base;
        for (xi, ui) in x.iter_mut().zip(self.direction) {
            *xi += d * ui;
        }
        let Some(vals) = row_values(self.mu, x[0], x[1], x[2]) else {
            return f64::INFINITY;
        };
        let mut worst: f64 = 0.0;
        for ((tol, nominal), value) in self.tol.rows.iter().zip(&self.nominal).zip(&vals) {
            if let (Some(t), Some(n)) = (tol, nominal) {
                match value {
                    Some(v) => worst = worst.max((v - n).abs() / t),
                    None => return f64::INFINITY,
                }
            }
        }
        worst - 1.0
    }
}

impl CostFunction for Edge<'_> {
    type Param = f64;
    type Output = f64;
    fn cost(&self, d: &f64) -> Result<f64, argmin::core::Error> {
        let r = self.ratio_minus_one(*d);
        Ok(if r.is_finite() { r } else { 1e30 })
    }
}

/// Finds the exact excursion where the first tolerance is met, starting from
/// the linear estimate: expand until outside, then Brent's root.
fn exact_edge(edge: &Edge, linear: f64, limit: f64) -> f64 {
    if !linear.is_finite() {
        return f64::INFINITY;
    }
    let mut lo = 0.0;
    let mut hi = linear.min(limit);
    let mut k = 0;
    while edge.ratio_minus_one(hi) < 0.0 {
        lo = hi;
        hi *= 1.5;
        k += 1;
        if k > 60 || hi > limit {
            return f64::INFINITY;
        }
    }
    // Shrink lo if the linear guess already overshoots far.
    while edge.ratio_minus_one(lo) > 0.0 && lo > 0.0 {
        lo *= 0.5;
    }
    let solver = BrentRoot::new(lo, hi, 1e-15);
    match Executor::new(*edge, solver)
        .configure(|s| s.param(0.5 * (lo + hi)).max_iters(200))
        .run()
    {
        // An answer counts only when Brent's method says it converged: a
        // run stopped at the iteration limit is not an edge (NaN, reported
        // as not found, like a failed run).
        Ok(res) => match res.state().get_termination_status() {
            TerminationStatus::Terminated(TerminationReason::SolverConverged) => {
                res.state().get_best_param().copied().unwrap_or(f64::NAN)
            }
            _ => f64::NAN,
        },
        Err(_) => f64::NAN,
    }
}

/// The exact excursion along a direction where the first tolerance is met,
/// without a linear estimate (an axis the first-order map leaves free):
/// grows a trial step geometrically from `start` until a tolerance breaks,
/// then takes Brent's root; infinite when none breaks before `limit`.
fn exact_edge_from(edge: &Edge, start: f64, limit: f64) -> f64 {
    let mut d = start;
    while d < limit {
        if edge.ratio_minus_one(d) >= 0.0 {
            return exact_edge(edge, d, limit);
        }
        d *= 2.0;
    }
    f64::INFINITY
}

/// The largest burnout errors allowed for the orbit to stay within `tol`.
///
/// # Errors
/// [`Error::Usage`] when no tolerance is given; [`Error::OutOfRange`] for a
/// non-positive tolerance.
pub fn allowed_errors(
    mu_m3_s2: f64,
    state: &BurnoutState,
    tol: &Tolerances,
) -> Result<Allowed, Error> {
    if tol.rows.iter().all(Option::is_none) {
        return Err(Error::Usage(format!(
            "no orbit tolerance given (e.g. {} 50km)",
            mention("apoapsis-tol", "an apoapsis tolerance")
        )));
    }
    for (i, t) in tol.rows.iter().enumerate() {
        if let Some(t) = t {
            if !(t.is_finite() && *t > 0.0) {
                return Err(Error::OutOfRange {
                    quantity: "tolerance",
                    value: *t,
                    unit: "",
                    expected: format!("a positive tolerance on {}", ROWS[i]),
                });
            }
        }
    }
    let per_rad = partials_per_rad_for_state(mu_m3_s2, state);
    let nominal = row_values(
        mu_m3_s2,
        state.radius_m,
        state.speed_m_s,
        state.flight_path_angle_rad,
    )
    .unwrap_or([None; 5]);
    // Base in (r, v, gamma) order for row_values; components are (v, gamma, r).
    let base = [state.radius_m, state.speed_m_s, state.flight_path_angle_rad];
    let component_index = [1usize, 2, 0];
    let limits = [state.speed_m_s, std::f64::consts::FRAC_PI_2, state.radius_m];
    let mut alone = Vec::new();
    let mut m = Matrix3::zeros();
    for (i, row) in per_rad.rows.iter().enumerate() {
        if let (Some(j), Some(t)) = (row, tol.rows[i]) {
            let jv = Vector3::new(j[0], j[1], j[2]) / t;
            m += jv * jv.transpose();
        }
    }
    for k in 0..3 {
        let mut linear = f64::INFINITY;
        let mut limited_by = None;
        for (i, row) in per_rad.rows.iter().enumerate() {
            if let (Some(j), Some(t)) = (row, tol.rows[i]) {
                let d = t / j[k].abs();
                if d < linear {
                    linear = d;
                    limited_by = Some(ROWS[i]);
                }
            }
        }
        let mk = |sign: f64| {
            let mut direction = [0.0; 3];
            direction[component_index[k]] = sign;
            Edge {
                mu: mu_m3_s2,
                base,
                nominal,
                tol,
                direction,
            }
        };
        // Where the first-order map leaves this error free (an angle error
        // at a circular target), the exact map still breaks a tolerance at
        // a finite size: search it from a tiny step, never call it unlimited
        // unless the map itself never gets there.
        let edge = |sign: f64| {
            if linear.is_finite() {
                exact_edge(&mk(sign), linear, limits[k])
            } else {
                exact_edge_from(&mk(sign), 1e-9 * limits[k], limits[k])
            }
        };
        alone.push(AllowedError {
            component: COMPONENTS[k],
            linear,
            minus: edge(-1.0),
            plus: edge(1.0),
            limited_by,
        });
    }
    let eig = SymmetricEigen::new(m);
    let scale = eig.eigenvalues.max().max(f64::MIN_POSITIVE);
    let mut axes: Vec<EllipsoidAxis> = (0..3)
        .map(|k| {
            let lam = eig.eigenvalues[k];
            let dir = eig.eigenvectors.column(k);
            EllipsoidAxis {
                half_length: if lam > 1e-12 * scale {
                    1.0 / lam.sqrt()
                } else {
                    f64::INFINITY
                },
                direction: [dir[0], dir[1], dir[2]],
                exact_limit: f64::INFINITY,
            }
        })
        .collect();
    axes.sort_by(|a, b| b.half_length.total_cmp(&a.half_length));
    // Cut every axis where the exact forward map first breaks a tolerance
    // (either way along it): the first-order ellipsoid is unbounded along
    // directions the tolerated quantities do not depend on to first order
    // (moving burnout along the orbit), yet the exact map breaks a
    // tolerance there at a finite distance.
    let scale_of = [state.speed_m_s, 1.0, state.radius_m];
    for ax in &mut axes {
        // Components (v, gamma, r) -> the edge's (r, v, gamma) order.
        let u = ax.direction;
        let along = |sign: f64| Edge {
            mu: mu_m3_s2,
            base,
            nominal,
            tol,
            direction: [sign * u[2], sign * u[0], sign * u[1]],
        };
        // Steps large enough to move one component by its whole size.
        let limit = (0..3)
            .map(|k| scale_of[k] / u[k].abs().max(1e-300))
            .fold(f64::INFINITY, f64::min)
            .min(limits.iter().fold(f64::INFINITY, |m, x| m.min(*x)) * 1e6);
        let exact = if ax.half_length.is_finite() {
            exact_edge(&along(1.0), ax.half_length, limit).min(exact_edge(
                &along(-1.0),
                ax.half_length,
                limit,
            ))
        } else {
            let start = 1e-9 * limit;
            exact_edge_from(&along(1.0), start, limit).min(exact_edge_from(
                &along(-1.0),
                start,
                limit,
            ))
        };
        ax.exact_limit = exact;
    }
    let extent = if axes.iter().all(|a| a.bounded().is_finite()) {
        let mut e = [0.0f64; 3];
        for (k, ek) in e.iter_mut().enumerate() {
            *ek = axes
                .iter()
                .map(|a| (a.bounded() * a.direction[k]).powi(2))
                .sum::<f64>()
                .sqrt();
        }
        e
    } else {
        [f64::INFINITY; 3]
    };
    Ok(Allowed {
        alone,
        ellipsoid_axes: axes,
        ellipsoid_extent: extent,
    })
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn quasi_random_normals_have_the_normal_moments_and_the_kink() {
        let n = QMC_POINTS;
        let mut sums = [0.0f64; 4];
        for i in 1..=n {
            for z in standard_normals(i) {
                sums[0] += z;
                sums[1] += z * z;
                sums[2] += z.abs();
                sums[3] += z.powi(4);
            }
        }
        let m = |s: f64| s / (3.0 * n as f64);
        // Standard normal: E z = 0, E z^2 = 1, E|z| = sqrt(2/pi), E z^4 = 3.
        assert!(m(sums[0]).abs() < 1e-3);
        assert!((m(sums[1]) - 1.0).abs() < 1e-3);
        let want = (2.0 / std::f64::consts::PI).sqrt();
        assert!((m(sums[2]) / want - 1.0).abs() < 1e-3, "{}", m(sums[2]));
        assert!((m(sums[3]) - 3.0).abs() < 2e-2);
    }

    #[test]
    fn circular_orbit_periapsis_statistics_follow_the_folded_normal() {
        // Only a flight-path angle error sigma: at circular speed
        // rp = r (1 - |sin g|) (e = |sin g| from e^2 = 1 - Q(2-Q)cos^2 g, Q = 1),
        // so the periapsis change is -r|sin g|: a folded normal with mean
        // -r sigma sqrt(2/pi) and sd r sigma sqrt(1 - 2/pi) (small sigma).
        let mu = crate::physics::body::EARTH_MU_M3_S2;
        let r = 6_878_137.0;
        let v = (mu / r).sqrt();
        let st = crate::physics::state::forward_state(mu, r, v, 0.0).unwrap();
        let sigma = 0.05f64.to_radians();
        let errors = BurnoutErrors {
            fpa_sigma_rad: sigma,
            ..BurnoutErrors::default()
        };
        let rows = map_errors(mu, &st, &errors).unwrap();
        let rp = &rows[0];
        let pi = std::f64::consts::PI;
        assert!(
            (rp.exact_mean_shift / (-r * sigma * (2.0 / pi).sqrt()) - 1.0).abs() < 1e-2,
            "{rp:?}"
        );
        assert!(
            (rp.exact_one_sigma / (r * sigma * (1.0 - 2.0 / pi).sqrt()) - 1.0).abs() < 1e-2,
            "{rp:?}"
        );
        assert!(
            rp.one_sigma < 1e-6 * rp.exact_one_sigma,
            "the linear map sees no periapsis error"
        );
        assert!(rp.linear_misleads());
    }

    #[test]
    fn circular_orbit_angle_allowance_is_exact_not_unlimited() {
        // Eccentricity tolerance 0.001 at a circular orbit: e = |sin g|, so
        // the allowed angle error is asin(0.001) = 0.0572958 deg either way.
        let mu = crate::physics::body::EARTH_MU_M3_S2;
        let r = 6_878_137.0;
        let st = crate::physics::state::forward_state(mu, r, (mu / r).sqrt(), 0.0).unwrap();
        let tol = Tolerances {
            rows: [None, None, None, Some(0.001), None],
        };
        let a = allowed_errors(mu, &st, &tol).unwrap();
        let fpa = &a.alone[1];
        assert!(fpa.linear.is_infinite());
        for edge in [fpa.plus, fpa.minus] {
            assert!((edge / 0.001f64.asin() - 1.0).abs() < 1e-9, "{edge}");
        }
    }
    use crate::physics::body::Body;
    use crate::physics::orbit::Conic;
    use crate::solve::invert::burnout_for_conic;
    use approx::assert_relative_eq;
    use rand::SeedableRng;
    use rand_distr::{Distribution, StandardNormal};

    fn gto_state() -> (f64, BurnoutState) {
        let b = Body::from_name("earth").unwrap();
        let c = Conic::from_apsides(b.radius_m + 185e3, b.radius_m + 35_786e3).unwrap();
        let st = burnout_for_conic(b.mu_m3_s2, &c, b.radius_m + 400e3).unwrap()[0];
        (b.mu_m3_s2, st)
    }

    #[test]
    fn linear_mapping_agrees_with_monte_carlo_of_the_forward_map() {
        // 100,000 seeded samples of correlated burnout errors through the
        // nonlinear forward map; the sample standard deviation of each orbit
        // quantity must match the linear J P J^T prediction within sampling
        // error (relative standard error of a std estimate is 1/sqrt(2N) =
        // 0.22%; we allow 1%, about 4.5 standard errors).
        let (mu, st) = gto_state();
        let errors = BurnoutErrors {
            speed_sigma_m_s: 0.5,
            fpa_sigma_rad: 0.01f64.to_radians(),
            radius_sigma_m: 200.0,
            correlations: [0.3, -0.2, 0.1],
        };
        let predicted = map_errors(mu, &st, &errors).unwrap();
        let p = errors.covariance().unwrap();
        let l = p.cholesky().unwrap().l();
        let mut rng = rand::rngs::StdRng::seed_from_u64(20261202);
        let nominal = row_values(mu, st.radius_m, st.speed_m_s, st.flight_path_angle_rad).unwrap();
        const N: usize = 100_000;
        let mut sum = [0.0f64; 5];
        let mut sum2 = [0.0f64; 5];
        for _ in 0..N {
            let z = Vector3::new(
                StandardNormal.sample(&mut rng),
                StandardNormal.sample(&mut rng),
                StandardNormal.sample(&mut rng),
            );
            let d = l * z;
            let vals = row_values(
                mu,
                st.radius_m + d[2],
                st.speed_m_s + d[0],
                st.flight_path_angle_rad + d[1],
            )
            .unwrap();
            for i in 0..5 {
                let x = vals[i].unwrap() - nominal[i].unwrap();
                sum[i] += x;
                sum2[i] += x * x;
            }
        }
        for (i, row) in predicted.iter().enumerate() {
            let mean = sum[i] / N as f64;
            let std = (sum2[i] / N as f64 - mean * mean).sqrt();
            assert_relative_eq!(std, row.one_sigma, max_relative = 1e-2);
        }
    }

    #[test]
    fn dominant_error_is_named() {
        let (mu, st) = gto_state();
        let errors = BurnoutErrors {
            speed_sigma_m_s: 10.0,
            fpa_sigma_rad: 1e-9,
            radius_sigma_m: 1.0,
            correlations: [0.0; 3],
        };
        let rows = map_errors(mu, &st, &errors).unwrap();
        let apo = rows
            .iter()
            .find(|r| r.quantity == "apoapsis_radius_m")
            .unwrap();
        assert_eq!(apo.dominant, "speed_m_s");
        assert!(apo.dominant_share > 0.99);
    }

    #[test]
    fn allowed_errors_land_on_the_tolerance_edges() {
        let (mu, st) = gto_state();
        let tol = Tolerances {
            rows: [Some(5e3), Some(50e3), None, None, None],
        };
        let a = allowed_errors(mu, &st, &tol).unwrap();
        let base = [st.radius_m, st.speed_m_s, st.flight_path_angle_rad];
        let nominal = row_values(mu, base[0], base[1], base[2]).unwrap();
        let idx = [1usize, 2, 0];
        for (k, al) in a.alone.iter().enumerate() {
            for (sign, d) in [(-1.0, al.minus), (1.0, al.plus)] {
                let mut x = base;
                x[idx[k]] += sign * d;
                let vals = row_values(mu, x[0], x[1], x[2]).unwrap();
                let worst = (0..2)
                    .map(|i| (vals[i].unwrap() - nominal[i].unwrap()).abs() / tol.rows[i].unwrap())
                    .fold(0.0, f64::max);
                // The exact edge: the binding tolerance is met, to root-finder accuracy.
                assert_relative_eq!(worst, 1.0, max_relative = 1e-9);
            }
            // Small tolerances: the linear estimate is close to the exact edges.
            assert_relative_eq!(al.linear, al.plus.min(al.minus), max_relative = 5e-2);
        }
    }

    #[test]
    fn ellipsoid_lies_inside_every_tolerance_slab() {
        let (mu, st) = gto_state();
        let tol = Tolerances {
            rows: [Some(5e3), Some(50e3), None, Some(1e-3), None],
        };
        let a = allowed_errors(mu, &st, &tol).unwrap();
        let j = crate::solve::sensitivity::partials_per_rad(
            mu,
            st.radius_m,
            st.speed_m_s,
            st.flight_path_angle_rad,
        );
        // rp, ra and e are dependent (e = (ra - rp)/(ra + rp)), so to first
        // order one direction of burnout error leaves all three unchanged: its
        // axis is unbounded, and moving along it changes nothing.
        assert_eq!(
            a.ellipsoid_axes
                .iter()
                .filter(|x| x.half_length.is_infinite())
                .count(),
            1
        );
        for axis in &a.ellipsoid_axes {
            let len = if axis.half_length.is_finite() {
                axis.half_length
            } else {
                1.0
            };
            let d = axis.direction.map(|c| c * len);
            if axis.half_length.is_infinite() {
                for i in [0usize, 1, 3] {
                    let row = j.rows[i].unwrap();
                    let scale = row.iter().map(|x| x.abs()).fold(0.0, f64::max);
                    assert!((row[0] * d[0] + row[1] * d[1] + row[2] * d[2]).abs() <= 1e-6 * scale);
                }
                continue;
            }
            for i in [0usize, 1, 3] {
                let row = j.rows[i].unwrap();
                let change = row[0] * d[0] + row[1] * d[1] + row[2] * d[2];
                assert!(
                    change.abs() <= tol.rows[i].unwrap() * (1.0 + 1e-9),
                    "row {i}: {change}"
                );
            }
        }
    }

    #[test]
    fn invalid_correlation_is_rejected() {
        let e = BurnoutErrors {
            speed_sigma_m_s: 1.0,
            fpa_sigma_rad: 1.0,
            radius_sigma_m: 1.0,
            correlations: [0.99, -0.99, 0.99],
        };
        assert!(e.covariance().is_err());
        let e2 = BurnoutErrors {
            correlations: [1.5, 0.0, 0.0],
            ..e
        };
        assert!(matches!(e2.covariance(), Err(Error::OutOfRange { .. })));
    }
}
