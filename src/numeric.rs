//! Numerical targeting on argmin for target sets without a closed form.
//!
//! Unknowns are whichever of burnout speed, flight-path angle and burnout
//! radius the problem leaves free (one or two). Targets may be any mix of
//! orbit elements and the coast quantities (time to apoapsis or periapsis,
//! angle to apoapsis).
//!
//! - One unknown, one target: the residual is sampled over the whole physical
//!   domain of the unknown (512 points), every sign change is refined with
//!   argmin's Brent root finder, and every sampled local minimum of |f| is
//!   refined with argmin's Brent minimiser to catch tangent (double) roots.
//!   Roots closer together than one sample spacing could merge; that is the
//!   limit of the completeness claim.
//! - Burnout radius fixed, speed and angle free, two targets of which one is
//!   an orbit element: the states that meet the element exactly form one or
//!   two sheets parametrised by the flight-path angle (closed form); the
//!   other target's residual is bracketed along each sheet over the whole
//!   angle range (1024 samples) and refined with Brent's root, so every root
//!   is found up to the sampling resolution; each is then polished by the
//!   trust-region solver below.
//! - Otherwise (two unknowns, or more targets than unknowns): argmin's
//!   trust-region method (Steihaug subproblem) on 0.5 |f|^2 with the
//!   Gauss-Newton Hessian J^T J, on nalgebra vectors, from the closed-form states
//!   where some pair of targets has one, and from a grid of starting points
//!   over the domain. Converged results are de-duplicated. For square systems
//!   every distinct root found is reported; the grid makes missing a root
//!   unlikely but is not a proof.
//! - Over-specified sets are weighted least squares, each residual divided by
//!   its target's scale (relative for radii, sma, period, times; absolute for
//!   eccentricity and angles; C3 relative to mu / r). When the best fit leaves
//!   a scaled residual above [`AGREEMENT_TOLERANCE`], the targets conflict and
//!   the error lists each residual in its own unit.
//!
//! The solver works on smooth surrogates (1/ra, 1/a rather than ra, a and the
//! period, which jump at the parabola); residuals are reported in the targets'
//! own units.

use crate::body::Body;
use crate::error::{g, Error};
use crate::invert::{burnout_for_conic, forward_state, BurnoutState};
use crate::kepler::{time_to_apoapsis_s, time_to_periapsis_s};
use crate::orbit::forward;
use crate::problem::{finish, Problem, Solved, SolverReport};
use crate::target::{conic_from_pair, Target, TargetQuantity};
use argmin::core::{CostFunction, Executor, Gradient, Hessian, State, TerminationStatus};
use argmin::solver::brent::{BrentOpt, BrentRoot};
use argmin::solver::trustregion::{Steihaug, TrustRegion};
use nalgebra::{DMatrix, DVector};
use std::f64::consts::{FRAC_PI_2, PI};

/// Largest scaled residual at which over-specified targets count as agreeing.
pub const AGREEMENT_TOLERANCE: f64 = 1e-9;
/// Largest scaled residual at which a square system counts as solved.
pub const ROOT_TOLERANCE: f64 = 1e-11;

/// A burnout quantity that can be left free.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum Unknown {
    /// Burnout speed.
    Speed,
    /// Flight-path angle.
    FlightPathAngle,
    /// Burnout radius.
    Radius,
}

impl Unknown {
    fn name(self) -> &'static str {
        match self {
            Unknown::Speed => "speed",
            Unknown::FlightPathAngle => "flight-path angle",
            Unknown::Radius => "burnout radius",
        }
    }
}

/// The targeting system: fixed burnout quantities, unknowns, targets.
#[derive(Debug, Clone)]
pub struct System {
    mu: f64,
    body_radius_m: f64,
    fixed_radius_m: Option<f64>,
    fixed_speed_m_s: Option<f64>,
    fixed_fpa_rad: Option<f64>,
    unknowns: Vec<Unknown>,
    targets: Vec<Target>,
    /// Reference radius for scaling, m.
    r_ref: f64,
    /// Upper end of the radius domain, m.
    r_max: f64,
}

impl System {
    /// Sets up the system for a problem.
    ///
    /// # Errors
    /// [`Error::Usage`] when nothing or everything is free.
    pub fn new(problem: &Problem) -> Result<System, Error> {
        let mut unknowns = Vec::new();
        if problem.speed_m_s.is_none() {
            unknowns.push(Unknown::Speed);
        }
        if problem.flight_path_angle_rad.is_none() {
            unknowns.push(Unknown::FlightPathAngle);
        }
        if problem.burnout_radius_m.is_none() {
            unknowns.push(Unknown::Radius);
        }
        if unknowns.len() == 3 {
            return Err(Error::Usage(
                "speed, flight-path angle and burnout radius are all free: fix at least one (--burnout-alt, --fpa or --speed)".into(),
            ));
        }
        let body: &Body = &problem.body;
        let target_radius_max = problem
            .targets
            .iter()
            .filter(|t| {
                matches!(
                    t.quantity,
                    TargetQuantity::PeriapsisRadius
                        | TargetQuantity::ApoapsisRadius
                        | TargetQuantity::Sma
                        | TargetQuantity::SemiLatusRectum
                )
            })
            .map(|t| t.value.abs())
            .fold(0.0, f64::max);
        let r_ref = problem.burnout_radius_m.unwrap_or(body.radius_m);
        Ok(System {
            mu: body.mu_m3_s2,
            body_radius_m: body.radius_m,
            fixed_radius_m: problem.burnout_radius_m,
            fixed_speed_m_s: problem.speed_m_s,
            fixed_fpa_rad: problem.flight_path_angle_rad,
            unknowns,
            targets: problem.targets.clone(),
            r_ref,
            r_max: (2.0 * target_radius_max).max(50.0 * body.radius_m),
        })
    }

    /// Number of unknowns.
    pub fn dim(&self) -> usize {
        self.unknowns.len()
    }

    fn v_ref(&self) -> f64 {
        (self.mu / self.r_ref).sqrt()
    }

    /// Burnout (r, v, fpa) from unconstrained coordinates x:
    /// v = v_ref exp(x), fpa = (pi/2) tanh(x), r = R (1 + exp(x)).
    pub(crate) fn state_of(&self, x: &[f64]) -> (f64, f64, f64) {
        let mut r = self.fixed_radius_m.unwrap_or(f64::NAN);
        let mut v = self.fixed_speed_m_s.unwrap_or(f64::NAN);
        let mut gamma = self.fixed_fpa_rad.unwrap_or(f64::NAN);
        for (u, xi) in self.unknowns.iter().zip(x) {
            match u {
                Unknown::Speed => v = self.v_ref() * xi.exp(),
                Unknown::FlightPathAngle => gamma = FRAC_PI_2 * xi.tanh(),
                Unknown::Radius => r = self.body_radius_m * (1.0 + xi.exp()),
            }
        }
        (r, v, gamma)
    }

    /// Inverse of [`System::state_of`].
    pub(crate) fn coords_of(&self, r: f64, v: f64, gamma: f64) -> Vec<f64> {
        self.unknowns
            .iter()
            .map(|u| match u {
                Unknown::Speed => (v / self.v_ref()).ln(),
                Unknown::FlightPathAngle => {
                    (gamma / FRAC_PI_2).clamp(-1.0 + 1e-16, 1.0 - 1e-16).atanh()
                }
                Unknown::Radius => ((r / self.body_radius_m - 1.0).max(1e-300)).ln(),
            })
            .collect()
    }

    /// Scaled, smooth residual of each target at a burnout state; `None` where
    /// a target does not exist for the trial orbit (e.g. time to apoapsis on
    /// an open orbit).
    pub fn residuals_at(&self, r: f64, v: f64, gamma: f64) -> Option<Vec<f64>> {
        if !(r.is_finite() && v.is_finite() && gamma.is_finite()) || r <= 0.0 || v <= 0.0 {
            return None;
        }
        let mu = self.mu;
        let (s, c) = gamma.sin_cos();
        let q = r * v * v / mu;
        let e = (q * c * c - 1.0).hypot(q * s * c);
        let p = r * q * c * c;
        let inv_a = (2.0 - q) / r;
        let mut out = Vec::with_capacity(self.targets.len());
        let mut conic_nu = None;
        for t in &self.targets {
            use TargetQuantity as Q;
            let x = t.value;
            let res = match t.quantity {
                Q::PeriapsisRadius => p / (1.0 + e) / x - 1.0,
                Q::ApoapsisRadius => x * (1.0 - e) / p - 1.0,
                Q::Sma => x * inv_a - 1.0,
                Q::Period => {
                    let n = 2.0 * PI / x;
                    let a_t = (mu / (n * n)).cbrt();
                    a_t * inv_a - 1.0
                }
                Q::C3 => (-mu * inv_a - x) * self.r_ref / mu,
                Q::SpecificEnergy => (-0.5 * mu * inv_a - x) * self.r_ref / mu,
                Q::Ecc => e - x,
                Q::SemiLatusRectum => p / x - 1.0,
                Q::TimeToApoapsis | Q::TimeToPeriapsis | Q::AngleToApoapsis => {
                    if conic_nu.is_none() {
                        conic_nu = Some(forward(mu, r, v, gamma).ok()?);
                    }
                    let (conic, nu) = conic_nu?;
                    match t.quantity {
                        Q::TimeToApoapsis => time_to_apoapsis_s(mu, &conic, nu)? / x - 1.0,
                        Q::TimeToPeriapsis => time_to_periapsis_s(mu, &conic, nu)? / x - 1.0,
                        _ => {
                            conic.apoapsis_radius_m()?;
                            let d = (PI - nu - x).rem_euclid(2.0 * PI);
                            if d > PI {
                                d - 2.0 * PI
                            } else {
                                d
                            }
                        }
                    }
                }
            };
            if !res.is_finite() {
                return None;
            }
            out.push(res);
        }
        Some(out)
    }

    fn residuals_x(&self, x: &[f64]) -> Option<Vec<f64>> {
        let (r, v, gamma) = self.state_of(x);
        if r < self.body_radius_m {
            return None;
        }
        self.residuals_at(r, v, gamma)
    }
}

/// A system of scaled residuals over unconstrained coordinates, for the
/// trust-region least-squares solver.
pub(crate) trait Residuals {
    /// Residual vector at `x`, `None` where a target is undefined.
    fn residuals_x(&self, x: &[f64]) -> Option<Vec<f64>>;
}

impl Residuals for System {
    fn residuals_x(&self, x: &[f64]) -> Option<Vec<f64>> {
        System::residuals_x(self, x)
    }
}

pub(crate) fn max_abs(v: &[f64]) -> f64 {
    v.iter().fold(0.0, |m, x| m.max(x.abs()))
}

/// The least-squares problem 0.5 |f(x)|^2 over unconstrained coordinates,
/// with gradient J^T f and the Gauss-Newton Hessian J^T J, for argmin's
/// trust-region method. Where a target is undefined the cost is huge, so the
/// trust region rejects the step and shrinks.
struct LeastSquares<'a, S: Residuals> {
    system: &'a S,
}

/// Cost assigned where a target does not exist for the trial orbit.
const UNDEFINED_COST: f64 = 1e30;

impl<S: Residuals> LeastSquares<'_, S> {
    /// Central-difference Jacobian in the unconstrained coordinates (it only
    /// steers the iteration; reported sensitivities are analytic).
    fn jacobian(&self, x: &DVector<f64>) -> Option<(DVector<f64>, DMatrix<f64>)> {
        let f0 = DVector::from_vec(self.system.residuals_x(x.as_slice())?);
        let m = f0.len();
        let n = x.len();
        let mut jac = DMatrix::zeros(m, n);
        for k in 0..n {
            let h = 1e-6 * x[k].abs().max(1.0);
            let mut xp = x.clone();
            let mut xm = x.clone();
            xp[k] += h;
            xm[k] -= h;
            let fp = self.system.residuals_x(xp.as_slice());
            let fm = self.system.residuals_x(xm.as_slice());
            for i in 0..m {
                jac[(i, k)] = match (&fp, &fm) {
                    (Some(a), Some(b)) => (a[i] - b[i]) / (2.0 * h),
                    (Some(a), None) => (a[i] - f0[i]) / h,
                    (None, Some(b)) => (f0[i] - b[i]) / h,
                    (None, None) => return None,
                };
            }
        }
        Some((f0, jac))
    }
}

impl<S: Residuals> CostFunction for LeastSquares<'_, S> {
    type Param = DVector<f64>;
    type Output = f64;
    fn cost(&self, x: &Self::Param) -> Result<f64, argmin::core::Error> {
        Ok(self
            .system
            .residuals_x(x.as_slice())
            .map(|r| 0.5 * r.iter().map(|v| v * v).sum::<f64>())
            .unwrap_or(UNDEFINED_COST))
    }
}

impl<S: Residuals> Gradient for LeastSquares<'_, S> {
    type Param = DVector<f64>;
    type Gradient = DVector<f64>;
    fn gradient(&self, x: &Self::Param) -> Result<Self::Gradient, argmin::core::Error> {
        let (f, j) = self
            .jacobian(x)
            .ok_or_else(|| argmin::core::Error::msg("target undefined near trial state"))?;
        Ok(j.transpose() * f)
    }
}

impl<S: Residuals> Hessian for LeastSquares<'_, S> {
    type Param = DVector<f64>;
    type Hessian = DMatrix<f64>;
    fn hessian(&self, x: &Self::Param) -> Result<Self::Hessian, argmin::core::Error> {
        let (_, j) = self
            .jacobian(x)
            .ok_or_else(|| argmin::core::Error::msg("target undefined near trial state"))?;
        Ok(j.transpose() * &j)
    }
}

/// Result of one least-squares run.
pub(crate) struct Run {
    pub(crate) x: Vec<f64>,
    pub(crate) residuals: Vec<f64>,
    pub(crate) iterations: u64,
    pub(crate) termination: String,
}

pub(crate) fn trust_region<S: Residuals>(system: &S, x0: Vec<f64>) -> Option<Run> {
    let x0 = DVector::from_vec(x0);
    system.residuals_x(x0.as_slice())?;
    let sub: Steihaug<DVector<f64>, f64> =
        Steihaug::new().with_epsilon(1e-14).ok()?.with_max_iters(20);
    let solver = TrustRegion::new(sub)
        .with_radius(0.5)
        .ok()?
        .with_max_radius(10.0)
        .ok()?;
    let op = LeastSquares { system };
    let res = Executor::new(op, solver)
        .configure(|s| s.param(x0).max_iters(200).target_cost(1e-30))
        .run()
        .ok()?;
    let state = res.state();
    let x = state.get_best_param()?.as_slice().to_vec();
    let residuals = system.residuals_x(&x)?;
    let termination = match state.get_termination_status() {
        TerminationStatus::Terminated(reason) => reason.text().to_string(),
        TerminationStatus::NotTerminated => "not terminated".to_string(),
    };
    Some(Run {
        x,
        residuals,
        iterations: state.get_iter(),
        termination,
    })
}

/// Scalar residual of a one-unknown, one-target system in its natural
/// coordinate (speed m/s, angle rad, or radius m).
struct Scalar<'a> {
    system: &'a System,
}

impl Scalar<'_> {
    fn eval(&self, y: f64) -> Option<f64> {
        let x = natural_to_coords(self.system, y);
        self.system.residuals_x(&[x]).map(|r| r[0])
    }
}

impl CostFunction for Scalar<'_> {
    type Param = f64;
    type Output = f64;
    fn cost(&self, y: &f64) -> Result<f64, argmin::core::Error> {
        self.eval(*y)
            .ok_or_else(|| argmin::core::Error::msg("target undefined at trial state"))
    }
}

/// |f|, for the Brent minimiser that catches tangent roots.
struct AbsScalar<'a> {
    inner: Scalar<'a>,
}

impl CostFunction for AbsScalar<'_> {
    type Param = f64;
    type Output = f64;
    fn cost(&self, y: &f64) -> Result<f64, argmin::core::Error> {
        Ok(self.inner.eval(*y).map(f64::abs).unwrap_or(f64::MAX))
    }
}

fn natural_to_coords(system: &System, y: f64) -> f64 {
    match system.unknowns[0] {
        Unknown::Speed => (y / system.v_ref()).ln(),
        Unknown::FlightPathAngle => (y / FRAC_PI_2).clamp(-1.0 + 1e-16, 1.0 - 1e-16).atanh(),
        Unknown::Radius => ((y / system.body_radius_m - 1.0).max(1e-300)).ln(),
    }
}

/// The physical domain of the single unknown, in natural units, and whether
/// to sample it logarithmically.
fn domain(system: &System) -> (f64, f64, bool) {
    match system.unknowns[0] {
        Unknown::Speed => {
            let r = system.fixed_radius_m.unwrap_or(system.r_ref);
            let v_esc = (2.0 * system.mu / r).sqrt();
            (1e-4 * v_esc, 20.0 * v_esc, true)
        }
        Unknown::FlightPathAngle => (-FRAC_PI_2 * (1.0 - 1e-9), FRAC_PI_2 * (1.0 - 1e-9), false),
        Unknown::Radius => (system.body_radius_m, system.r_max, true),
    }
}

/// From `inside` (where `f` is defined, with value `f_inside`) toward
/// `outside` (where it is not): finds the edge of definedness by bisection,
/// then probes back from it at geometrically growing distances (the value at
/// the very edge is often rounding noise, e.g. a period near escape) for a
/// point whose residual has the other sign. Returns that point and value.
fn edge_bracket(f: &Scalar, inside: f64, outside: f64, f_inside: f64) -> Option<(f64, f64)> {
    let (mut a, mut b) = (inside, outside);
    for _ in 0..80 {
        let m = 0.5 * (a + b);
        if f.eval(m).is_some() {
            a = m;
        } else {
            b = m;
        }
    }
    let edge = a;
    let span = edge - inside;
    (1..=14).rev().find_map(|k| {
        let x = edge - span * 10f64.powi(-k);
        f.eval(x)
            .filter(|v| v.is_finite() && v.signum() != f_inside.signum())
            .map(|v| (x, v))
    })
}

/// All roots of a one-unknown, one-target system. Returns (natural value,
/// iterations, termination) for each.
fn scalar_roots(system: &System) -> Vec<(f64, u64, String)> {
    const SAMPLES: usize = 512;
    let (lo, hi, log) = domain(system);
    let grid: Vec<f64> = (0..SAMPLES)
        .map(|k| {
            let t = k as f64 / (SAMPLES - 1) as f64;
            if log {
                lo * (hi / lo).powf(t)
            } else {
                lo + (hi - lo) * t
            }
        })
        .collect();
    let f = Scalar { system };
    let vals: Vec<Option<f64>> = grid.iter().map(|y| f.eval(*y)).collect();
    let mut roots: Vec<(f64, u64, String)> = Vec::new();
    let push = |y: f64, it: u64, term: String, roots: &mut Vec<(f64, u64, String)>| {
        if let Some(res) = f.eval(y) {
            if res.abs() <= ROOT_TOLERANCE
                && !roots
                    .iter()
                    .any(|(z, _, _)| (z - y).abs() <= 1e-9 * y.abs().max(1e-9))
            {
                roots.push((y, it, term));
            }
        }
    };
    for k in 0..SAMPLES - 1 {
        // Where the target stops existing between two samples (e.g. time
        // to apoapsis as the speed nears escape), bracket against the last
        // point where it still exists, found by bisection.
        let (lo_x, hi_x, a, b) = match (vals[k], vals[k + 1]) {
            (Some(a), Some(b)) => (grid[k], grid[k + 1], a, b),
            (Some(a), None) => match edge_bracket(&f, grid[k], grid[k + 1], a) {
                Some((x, b)) => (grid[k], x, a, b),
                None => continue,
            },
            (None, Some(b)) => match edge_bracket(&f, grid[k + 1], grid[k], b) {
                Some((x, a)) => (x, grid[k + 1], a, b),
                None => continue,
            },
            (None, None) => continue,
        };
        if a == 0.0 {
            push(lo_x, 0, "exact".into(), &mut roots);
            continue;
        }
        if a.signum() != b.signum() {
            let solver = BrentRoot::new(lo_x, hi_x, 1e-15);
            if let Ok(res) = Executor::new(Scalar { system }, solver)
                .configure(|s| s.param(0.5 * (lo_x + hi_x)).max_iters(200))
                .run()
            {
                let st = res.state();
                if let Some(y) = st.get_best_param() {
                    push(
                        *y,
                        st.get_iter(),
                        st.get_termination_status().to_string(),
                        &mut roots,
                    );
                }
            }
        }
    }
    // Tangent roots: sampled local minima of |f| that do not change sign.
    for k in 1..SAMPLES - 1 {
        let (Some(a), Some(b), Some(c)) = (vals[k - 1], vals[k], vals[k + 1]) else {
            continue;
        };
        if b.abs() < a.abs()
            && b.abs() < c.abs()
            && a.signum() == b.signum()
            && b.signum() == c.signum()
        {
            let solver = BrentOpt::new(grid[k - 1], grid[k + 1]).set_tolerance(1e-15, 1e-300);
            if let Ok(res) = Executor::new(
                AbsScalar {
                    inner: Scalar { system },
                },
                solver,
            )
            .configure(|s| s.param(grid[k]).max_iters(200))
            .run()
            {
                let st = res.state();
                if let Some(y) = st.get_best_param() {
                    push(
                        *y,
                        st.get_iter(),
                        st.get_termination_status().to_string(),
                        &mut roots,
                    );
                }
            }
        }
    }
    roots.sort_by(|a, b| a.0.total_cmp(&b.0));
    roots
}

/// One sheet of the one-parameter family of burnout states that meet an
/// orbit-element target exactly: for each flight-path angle, the k-th speed
/// of [`crate::invert::speed_for_target`]. The other target's residual along
/// it is a function of the angle alone.
struct Sheet<'a> {
    system: &'a System,
    radius_m: f64,
    element: &'a Target,
    other: usize,
    k: usize,
}

impl Sheet<'_> {
    fn eval(&self, gamma: f64) -> Option<f64> {
        let speeds =
            crate::invert::speed_for_target(self.system.mu, self.radius_m, gamma, self.element)
                .ok()?;
        let v = speeds.get(self.k)?.speed_m_s;
        self.system
            .residuals_at(self.radius_m, v, gamma)
            .map(|r| r[self.other])
    }
    fn speed(&self, gamma: f64) -> Option<f64> {
        crate::invert::speed_for_target(self.system.mu, self.radius_m, gamma, self.element)
            .ok()?
            .get(self.k)
            .map(|st| st.speed_m_s)
    }
}

impl CostFunction for Sheet<'_> {
    type Param = f64;
    type Output = f64;
    fn cost(&self, gamma: &f64) -> Result<f64, argmin::core::Error> {
        self.eval(*gamma)
            .ok_or_else(|| argmin::core::Error::msg("off the sheet"))
    }
}

/// With the burnout radius fixed, speed and angle free, and two targets of
/// which one is an orbit element: every root, by bracketing the other
/// target's residual over the flight-path angle (1024 samples from -90 to
/// 90 deg) on each sheet of states that meet the element exactly, refined
/// with argmin's Brent root. Returns (r, v, fpa) of each root.
fn sheet_roots(system: &System) -> (Vec<(f64, f64, f64)>, u64) {
    let Some(r) = system.fixed_radius_m else {
        return (Vec::new(), 0);
    };
    if system.unknowns != [Unknown::Speed, Unknown::FlightPathAngle] || system.targets.len() != 2 {
        return (Vec::new(), 0);
    }
    let Some(e_idx) = system
        .targets
        .iter()
        .position(|t| t.quantity.is_orbit_element())
    else {
        return (Vec::new(), 0);
    };
    let mut iterations = 0;
    let other = 1 - e_idx;
    const SAMPLES: usize = 1024;
    let lim = FRAC_PI_2 * (1.0 - 1e-7);
    let grid: Vec<f64> = (0..SAMPLES)
        .map(|k| -lim + 2.0 * lim * k as f64 / (SAMPLES - 1) as f64)
        .collect();
    let mut out = Vec::new();
    for k in 0..2 {
        let sheet = Sheet {
            system,
            radius_m: r,
            element: &system.targets[e_idx],
            other,
            k,
        };
        let vals: Vec<Option<f64>> = grid.iter().map(|g| sheet.eval(*g)).collect();
        for j in 0..SAMPLES - 1 {
            let (Some(a), Some(b)) = (vals[j], vals[j + 1]) else {
                continue;
            };
            if a.signum() == b.signum() && a != 0.0 {
                continue;
            }
            let solver = BrentRoot::new(grid[j], grid[j + 1], 1e-15);
            let sheet_j = Sheet {
                system,
                radius_m: r,
                element: &system.targets[e_idx],
                other,
                k,
            };
            if let Ok(res) = Executor::new(sheet_j, solver)
                .configure(|st| st.param(0.5 * (grid[j] + grid[j + 1])).max_iters(200))
                .run()
            {
                iterations += res.state().get_iter();
                if let Some(g) = res.state().get_best_param().copied() {
                    if let (Some(v), Some(f)) = (sheet.speed(g), sheet.eval(g)) {
                        // A sign change across a jump (e.g. time to apoapsis
                        // wrapping at apoapsis) is not a root.
                        if f.abs() <= 1e-9 {
                            out.push((r, v, g));
                        }
                    }
                }
            }
        }
    }
    (out, iterations)
}

/// Starting points: closed-form states where some pair of orbit-element
/// targets has one, then a grid over the domain.
fn seeds(system: &System) -> Vec<Vec<f64>> {
    let mut out = Vec::new();
    if let Some(r) = system.fixed_radius_m {
        let elements: Vec<&Target> = system
            .targets
            .iter()
            .filter(|t| t.quantity.is_orbit_element())
            .collect();
        'pairs: for i in 0..elements.len() {
            for j in i + 1..elements.len() {
                if let Ok(conic) = conic_from_pair(system.mu, elements[i], elements[j]) {
                    if let Ok(states) = burnout_for_conic(system.mu, &conic, r) {
                        for st in states {
                            out.push(system.coords_of(r, st.speed_m_s, st.flight_path_angle_rad));
                        }
                        break 'pairs;
                    }
                }
            }
        }
    }
    let axis = |u: Unknown| -> Vec<f64> {
        match u {
            // v from 0.14 to 2.6 v_ref.
            Unknown::Speed => (-4..=2).map(|k| 0.3 * k as f64 + 0.15).collect(),
            // fpa from about -80 to +80 deg.
            Unknown::FlightPathAngle => (-4..=4).map(|k| 0.4 * k as f64).collect(),
            // r from R (1 + 1e-3) to R (1 + 50).
            Unknown::Radius => (0..7).map(|k| -6.9 + 1.8 * k as f64).collect(),
        }
    };
    match system.unknowns.as_slice() {
        [u] => out.extend(axis(*u).into_iter().map(|a| vec![a])),
        [u, w] => {
            for a in axis(*u) {
                for b in axis(*w) {
                    out.push(vec![a, b]);
                }
            }
        }
        _ => {}
    }
    out
}

/// Solves a problem the closed forms do not cover.
///
/// # Errors
/// [`Error::Usage`] for under-determined sets; [`Error::Infeasible`] when
/// over-specified targets conflict (with each residual in its own unit);
/// [`Error::NoConvergence`] when no start converges.
pub fn solve_numeric(problem: &Problem) -> Result<Solved, Error> {
    let system = System::new(problem)?;
    solve_system(problem, &system, None)
}

/// As [`solve_numeric`], but starting only from `start` (r, v, fpa) when
/// given: used to show convergence from poor guesses.
///
/// # Errors
/// As [`solve_numeric`].
pub fn solve_from(problem: &Problem, start: (f64, f64, f64)) -> Result<Solved, Error> {
    let system = System::new(problem)?;
    solve_system(problem, &system, Some(start))
}

fn solve_system(
    problem: &Problem,
    system: &System,
    start: Option<(f64, f64, f64)>,
) -> Result<Solved, Error> {
    let n = system.dim();
    let m = system.targets.len();
    if n == 0 {
        return check_fixed_state(problem, system);
    }
    if m < n {
        let free: Vec<&str> = system.unknowns.iter().map(|u| u.name()).collect();
        return Err(Error::Usage(format!(
            "{} target quantit{} for {} free burnout quantities ({}): add a target or fix one of them",
            m,
            if m == 1 { "y" } else { "ies" },
            n,
            free.join(", ")
        )));
    }
    let mu = system.mu;
    // One unknown, one target, no forced start: bracket the whole domain.
    if n == 1 && m == 1 && start.is_none() {
        let roots = scalar_roots(system);
        if roots.is_empty() {
            return Err(no_solution(problem, system));
        }
        let iterations = roots.iter().map(|r| r.1).sum();
        let termination = roots[0].2.clone();
        let states: Vec<BurnoutState> = roots
            .iter()
            .filter_map(|(y, _, _)| {
                let (r, v, gamma) = system.state_of(&[natural_to_coords(system, *y)]);
                forward_state(mu, r, v, gamma).ok()
            })
            .collect();
        return Ok(report(
            problem,
            system,
            states,
            "brent-root (argmin), bracketed over the domain",
            iterations,
            termination,
        ));
    }
    let mut bracketed = false;
    let mut bracket_iterations = 0;
    let starts: Vec<Vec<f64>> = match start {
        Some((r, v, gamma)) => vec![system.coords_of(r, v, gamma)],
        None => {
            // Bracketed roots first (complete along each sheet), then the
            // closed-form and grid starts.
            let (roots, iters) = sheet_roots(system);
            bracket_iterations = iters;
            let mut v: Vec<Vec<f64>> = roots
                .into_iter()
                .map(|(r, v, g)| system.coords_of(r, v, g))
                .collect();
            bracketed = !v.is_empty();
            v.extend(seeds(system));
            v
        }
    };
    let mut runs: Vec<Run> = starts
        .into_iter()
        .filter_map(|x0| trust_region(system, x0))
        .collect();
    let tol = if m == n {
        ROOT_TOLERANCE
    } else {
        AGREEMENT_TOLERANCE
    };
    // Runs within tolerance keep their start order (closed-form starts first,
    // so an exact closed-form state is the one reported); the rest follow by
    // residual.
    runs.sort_by(|a, b| {
        let (ra, rb) = (max_abs(&a.residuals), max_abs(&b.residuals));
        (ra > tol).cmp(&(rb > tol)).then(if ra > tol {
            ra.total_cmp(&rb)
        } else {
            std::cmp::Ordering::Equal
        })
    });
    let Some(best) = runs.first() else {
        return Err(Error::NoConvergence {
            method: "trust-region (argmin)".into(),
            iterations: 0,
            residual: f64::NAN,
            termination: "no starting point gave a defined residual".into(),
        });
    };
    let best_res = max_abs(&best.residuals);
    if best_res > tol {
        if m > n {
            let (r, v, gamma) = system.state_of(&best.x);
            return Err(conflict(problem, system, r, v, gamma));
        }
        return Err(Error::NoConvergence {
            method: "trust-region (argmin)".into(),
            iterations: best.iterations,
            residual: best_res,
            termination: best.termination.clone(),
        });
    }
    let iterations = best.iterations + bracket_iterations;
    let termination = best.termination.clone();
    let mut states: Vec<BurnoutState> = Vec::new();
    for run in runs.iter().filter(|r| max_abs(&r.residuals) <= tol) {
        let (r, v, gamma) = system.state_of(&run.x);
        let dup = states.iter().any(|s| {
            (s.speed_m_s - v).abs() <= 1e-7 * v
                && (s.flight_path_angle_rad - gamma).abs() <= 1e-7
                && (s.radius_m - r).abs() <= 1e-7 * r
        });
        if !dup {
            if let (Ok(_), Ok(st)) = (
                crate::invert::check_speed(v),
                forward_state(mu, r, v, gamma),
            ) {
                states.push(st);
            }
        }
    }
    let method = if m > n {
        "trust-region least squares, gauss-newton hessian (argmin)"
    } else if bracketed {
        "brent-root bracketed over the flight-path angle, trust-region polish (argmin)"
    } else {
        "trust-region, gauss-newton hessian (argmin)"
    };
    Ok(report(
        problem,
        system,
        states,
        method,
        iterations,
        termination,
    ))
}

fn report(
    problem: &Problem,
    system: &System,
    states: Vec<BurnoutState>,
    method: &str,
    iterations: u64,
    termination: String,
) -> Solved {
    let residuals = states
        .first()
        .map(|st| crate::problem::target_residuals(system.mu, &system.targets, st))
        .unwrap_or_default();
    finish(
        problem,
        states,
        SolverReport {
            method: method.into(),
            iterations,
            termination,
            residuals,
        },
    )
}

fn describe_residuals(system: &System, st: &BurnoutState) -> String {
    crate::problem::target_residuals(system.mu, &system.targets, st)
        .iter()
        .zip(&system.targets)
        .map(|((_, d), t)| {
            let unit = if t.quantity == TargetQuantity::AngleToApoapsis {
                "deg"
            } else {
                t.quantity.unit()
            };
            format!("{} {} {}", t.flag, g(*d), unit)
                .trim_end()
                .to_string()
        })
        .collect::<Vec<_>>()
        .join(", ")
}

fn conflict(problem: &Problem, system: &System, r: f64, v: f64, gamma: f64) -> Error {
    let flags: Vec<&str> = problem.targets.iter().map(|t| t.flag).collect();
    match forward_state(system.mu, r, v, gamma) {
        Ok(st) => Error::Infeasible(format!(
            "the targets {} conflict: the best fit (speed {} m/s, flight-path angle {} deg, burnout radius {} m) leaves residuals {}",
            flags.join(", "),
            g(v),
            g(gamma.to_degrees()),
            g(r),
            describe_residuals(system, &st)
        )),
        Err(e) => e,
    }
}

fn no_solution(problem: &Problem, system: &System) -> Error {
    let flags: Vec<&str> = problem.targets.iter().map(|t| t.flag).collect();
    let fixed: Vec<String> = [
        system
            .fixed_radius_m
            .map(|r| format!("burnout radius {} m", g(r))),
        system
            .fixed_speed_m_s
            .map(|v| format!("speed {} m/s", g(v))),
        system
            .fixed_fpa_rad
            .map(|f| format!("flight-path angle {} deg", g(f.to_degrees()))),
    ]
    .into_iter()
    .flatten()
    .collect();
    Error::Infeasible(format!(
        "no {} reaches {} with {}: the residual has no root over the whole domain",
        system.unknowns[0].name(),
        flags.join(", "),
        fixed.join(", ")
    ))
}

/// All of speed, angle and radius fixed: the targets are checks on the
/// forward state.
fn check_fixed_state(problem: &Problem, system: &System) -> Result<Solved, Error> {
    let (r, v, gamma) = system.state_of(&[]);
    let st = forward_state(system.mu, r, v, gamma)?;
    let res = system.residuals_at(r, v, gamma).unwrap_or_default();
    if res.len() != system.targets.len() || max_abs(&res) > AGREEMENT_TOLERANCE {
        return Err(conflict(problem, system, r, v, gamma));
    }
    Ok(report(
        problem,
        system,
        vec![st],
        "closed-form check of a fixed burnout state",
        0,
        "targets agree".into(),
    ))
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::orbit::Conic;
    use approx::assert_relative_eq;
    use TargetQuantity as Q;

    fn earth() -> Body {
        Body::from_name("earth").unwrap()
    }

    fn problem(r: Option<f64>, v: Option<f64>, g: Option<f64>, targets: Vec<Target>) -> Problem {
        Problem {
            body: earth(),
            burnout_radius_m: r,
            targets,
            flight_path_angle_rad: g,
            speed_m_s: v,
            min_periapsis_alt_m: None,
        }
    }

    #[test]
    fn numerical_solver_reproduces_a_closed_form_pair_from_a_poor_guess() {
        let re = earth().radius_m;
        let (rp, ra, r) = (re + 200e3, re + 35_786e3, re + 600e3);
        let p = problem(
            Some(r),
            None,
            None,
            vec![
                Target::new(Q::PeriapsisRadius, rp, "--periapsis-radius"),
                Target::new(Q::ApoapsisRadius, ra, "--apoapsis-radius"),
            ],
        );
        let exact =
            burnout_for_conic(earth().mu_m3_s2, &Conic::from_apsides(rp, ra).unwrap(), r).unwrap();
        let s = solve_from(&p, (r, 7_000.0, 0.3)).unwrap();
        let got = &s.solutions[0].state;
        assert_relative_eq!(got.speed_m_s, exact[0].speed_m_s, max_relative = 1e-10);
        assert_relative_eq!(
            got.flight_path_angle_rad,
            exact[0].flight_path_angle_rad,
            max_relative = 1e-10
        );
        assert!(s.solver.method.contains("trust-region"));
    }

    #[test]
    fn time_to_apoapsis_with_fixed_angle_finds_the_speed() {
        // Build a known answer with the forward map and Kepler's equation,
        // then ask for the speed that gives that coast time.
        let re = earth().radius_m;
        let r = re + 300e3;
        let g = 2f64.to_radians();
        let v = 8_500.0;
        let (conic, nu) = forward(earth().mu_m3_s2, r, v, g).unwrap();
        let tof = time_to_apoapsis_s(earth().mu_m3_s2, &conic, nu).unwrap();
        let p = problem(
            Some(r),
            None,
            Some(g),
            vec![Target::new(Q::TimeToApoapsis, tof, "--time-to-apoapsis")],
        );
        let s = solve_numeric(&p).unwrap();
        assert!(
            s.solutions
                .iter()
                .any(|sol| (sol.state.speed_m_s - v).abs() < 1e-7 * v),
            "{:?}",
            s.solutions
        );
        assert!(s.solver.method.contains("brent"));
    }

    #[test]
    fn two_speeds_for_one_eccentricity_are_both_found_by_bracketing() {
        // e with fixed fpa has two roots on an ellipse (below and above circular speed).
        let re = earth().radius_m;
        let r = re + 400e3;
        let g = 1f64.to_radians();
        let p = problem(
            Some(r),
            None,
            Some(g),
            vec![Target::new(Q::Ecc, 0.05, "--ecc")],
        );
        let system = System::new(&p).unwrap();
        let s = solve_system(&p, &system, None).unwrap();
        assert_eq!(s.solutions.len(), 2);
        let closed = crate::invert::speed_for_target(
            earth().mu_m3_s2,
            r,
            g,
            &Target::new(Q::Ecc, 0.05, "--ecc"),
        )
        .unwrap();
        for (a, b) in s.solutions.iter().zip(&closed) {
            assert_relative_eq!(a.state.speed_m_s, b.speed_m_s, max_relative = 1e-10);
        }
    }

    #[test]
    fn consistent_over_specified_targets_have_near_zero_residuals() {
        let re = earth().radius_m;
        let c = Conic::from_apsides(re + 200e3, re + 2_000e3).unwrap();
        let p = problem(
            Some(re + 500e3),
            None,
            None,
            vec![
                Target::new(Q::PeriapsisRadius, re + 200e3, "--periapsis-alt"),
                Target::new(Q::ApoapsisRadius, re + 2_000e3, "--apoapsis-alt"),
                Target::new(Q::Sma, c.sma_m().unwrap(), "--sma"),
            ],
        );
        let s = solve_numeric(&p).unwrap();
        assert_eq!(s.solutions.len(), 2, "both branches");
        for (_, r) in &s.solver.residuals {
            assert!(r.abs() < 1e-6, "residual {r} m");
        }
    }

    #[test]
    fn conflicting_over_specified_targets_report_each_residual() {
        let re = earth().radius_m;
        let p = problem(
            Some(re + 500e3),
            None,
            None,
            vec![
                Target::new(Q::PeriapsisRadius, re + 200e3, "--periapsis-alt"),
                Target::new(Q::ApoapsisRadius, re + 2_000e3, "--apoapsis-alt"),
                Target::new(Q::Sma, re + 5_000e3, "--sma"),
            ],
        );
        let e = solve_numeric(&p).unwrap_err();
        let msg = e.to_string();
        assert!(matches!(e, Error::Infeasible(_)));
        assert!(
            msg.contains("conflict") && msg.contains("--sma") && msg.contains("--apoapsis-alt"),
            "{msg}"
        );
    }

    #[test]
    fn burnout_radius_is_solved_when_speed_and_angle_are_fixed() {
        // Horizontal burnout at the speed that makes radius R the periapsis of
        // a 400 km apoapsis orbit: free the radius and target the apoapsis.
        let re = earth().radius_m;
        let mu = earth().mu_m3_s2;
        let r_true = re + 250e3;
        let ra = re + 400e3;
        let v = (mu * (2.0 / r_true - 2.0 / (r_true + ra))).sqrt();
        let p = problem(
            None,
            Some(v),
            Some(0.0),
            vec![Target::new(Q::ApoapsisRadius, ra, "--apoapsis-radius")],
        );
        let s = solve_numeric(&p).unwrap();
        assert!(
            s.solutions
                .iter()
                .any(|sol| (sol.state.radius_m - r_true).abs() < 1e-6 * r_true),
            "{:?}",
            s.solutions
                .iter()
                .map(|s| s.state.radius_m)
                .collect::<Vec<_>>()
        );
    }

    #[test]
    fn coast_time_near_escape_is_bracketed_at_the_edge_of_the_domain() {
        // Regression: a 7-day coast to periapsis needs a speed just below
        // escape, where the residual stops existing between two samples; the
        // root lies between the last defined sample and that edge. Root from
        // an independent 60-digit check: 11024.877 m/s.
        let re = earth().radius_m;
        let p = problem(
            Some(re + 46_744.815_995_133_28),
            None,
            Some(30.598_773_071_413_46f64.to_radians()),
            vec![Target::new(
                Q::TimeToPeriapsis,
                621_000.589_055_352_7,
                "--time-to-periapsis",
            )],
        );
        let s = solve_numeric(&p).unwrap();
        assert_relative_eq!(
            s.solutions[0].state.speed_m_s,
            11_024.877_179,
            max_relative = 1e-9
        );
    }

    #[test]
    fn unreachable_target_is_infeasible() {
        let re = earth().radius_m;
        // Climbing (fpa > 0) puts burnout before apoapsis, so the angle still
        // to travel to apoapsis is below 180 deg at any speed: 270 is unreachable.
        let p = problem(
            Some(re + 500e3),
            None,
            Some(0.3),
            vec![Target::new(
                Q::AngleToApoapsis,
                270f64.to_radians(),
                "--angle-to-apoapsis",
            )],
        );
        let e = solve_numeric(&p).unwrap_err();
        assert_eq!(e.class(), crate::ErrorClass::Infeasible);
    }
}

#[cfg(test)]
mod properties {
    use super::*;
    use crate::orbit::Conic;
    use crate::strategies::body;
    use proptest::prelude::*;
    use TargetQuantity as Q;

    /// A target orbit away from the double roots (burnout at an apsis) where
    /// a least-squares iteration can only converge like the square root of
    /// its tolerance: burnout between 5% and 95% of the way from periapsis.
    fn case() -> impl Strategy<Value = (Body, Conic, f64)> {
        (
            body(),
            1.02f64..8.0,
            prop_oneof![0.01f64..0.9, 1.1f64..4.0],
            0.05f64..0.95,
        )
            .prop_map(|(b, k, e, u)| {
                let rp = b.radius_m * k;
                let conic = Conic::from_periapsis_ecc(rp, e).unwrap();
                let r = match conic.apoapsis_radius_m() {
                    Some(ra) => rp + u * (ra - rp),
                    None => rp * (1.0 + 4.0 * u),
                };
                (b, conic, r)
            })
    }

    fn pair(mu: f64, c: &Conic, which: usize) -> (Target, Target) {
        let rp = Target::new(
            Q::PeriapsisRadius,
            c.periapsis_radius_m(),
            "--periapsis-radius",
        );
        let e = Target::new(Q::Ecc, c.ecc(), "--ecc");
        let c3 = Target::new(Q::C3, c.c3_m2_s2(mu), "--c3");
        let p = Target::new(
            Q::SemiLatusRectum,
            c.semi_latus_rectum_m(),
            "--semi-latus-rectum",
        );
        match (which, c.apoapsis_radius_m()) {
            (0, Some(ra)) => (rp, Target::new(Q::ApoapsisRadius, ra, "--apoapsis-radius")),
            (1, _) => (rp, e),
            (2, _) => (rp, c3),
            (3, Some(_)) => (
                e,
                Target::new(Q::Period, c.period_s(mu).unwrap(), "--period"),
            ),
            (3, None) => (e, Target::new(Q::Sma, c.sma_m().unwrap(), "--sma")),
            _ => (e, p),
        }
    }

    proptest! {
        #![proptest_config(ProptestConfig::with_cases(300))]

        /// The numerical solver, started from a poor guess, lands on one of
        /// the closed-form states to 1e-10 relative.
        #[test]
        fn numerical_solver_reproduces_closed_form_pairs(
            (b, conic, r) in case(),
            which in 0usize..5,
            v_factor in 0.6f64..1.4,
            g_deg in -30.0f64..30.0,
        ) {
            let mu = b.mu_m3_s2;
            let (t1, t2) = pair(mu, &conic, which);
            let exact = burnout_for_conic(mu, &conic, r).unwrap();
            let problem = Problem {
                body: b.clone(),
                burnout_radius_m: Some(r),
                targets: vec![t1, t2],
                flight_path_angle_rad: None,
                speed_m_s: None,
                min_periapsis_alt_m: None,
            };
            let v0 = v_factor * exact[0].speed_m_s;
            match solve_from(&problem, (r, v0, g_deg.to_radians())) {
                Ok(s) => {
                    let got = s.solutions[0].state;
                    let hit = exact.iter().any(|x| {
                        (got.speed_m_s - x.speed_m_s).abs() <= 1e-10 * x.speed_m_s
                            && (got.flight_path_angle_rad - x.flight_path_angle_rad).abs()
                                <= 1e-10 * x.flight_path_angle_rad.abs()
                    });
                    prop_assert!(hit, "got v {} fpa {} vs {:?}", got.speed_m_s, got.flight_path_angle_rad,
                        exact.iter().map(|x| (x.speed_m_s, x.flight_path_angle_rad)).collect::<Vec<_>>());
                }
                // A single poor start may fail to converge; it must then say so
                // (never a silent best effort), and the full multi-start solve
                // must still find the answer.
                Err(Error::NoConvergence { .. }) => {
                    let s = solve_numeric(&problem).unwrap();
                    prop_assert!(!s.solutions.is_empty());
                }
                Err(e) => prop_assert!(false, "unexpected error {e}"),
            }
        }
    }
}
