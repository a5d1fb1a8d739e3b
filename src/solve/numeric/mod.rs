//! Numerical targeting on argmin for target sets without a closed form.
//!
//! (Why one long file: the line search, its sheets, the least-squares
//! fallback and their tests share the `System` residuals; the planned
//! restructuring splits it into `solve/numeric/{bracket,least_squares}`.)
//!
//! Unknowns are whichever of burnout speed, flight-path angle and burnout
//! radius the problem leaves free (one or two). Targets may be any mix of
//! orbit elements and the coast quantities (time to apoapsis or periapsis,
//! angle to apoapsis).
//!
//! - Every problem that reduces to one residual along a line is solved
//!   completely there (`Line` and `line_roots`): one free quantity with one
//!   target; burnout radius fixed with speed and angle free and an orbit
//!   element beside another target (the flight-path angle along the
//!   closed-form states meeting the element); an angle-to-apoapsis target
//!   beside another (the eccentricity along the states at that true
//!   anomaly). Grids are dense where the residual bends, every sign change
//!   goes to argmin's Brent root, every sampled extremum to Brent's
//!   minimiser (a pair of close roots or a double root), and acceptance is
//!   scaled by the residual's own rounding, never a fixed tolerance.
//! - Over-specified sets solve a complete square subset and check the other
//!   targets to [`AGREEMENT_TOLERANCE`]; when none agrees the targets
//!   conflict and the error lists each residual in its own unit.
//! - Target sets whose solutions would form a continuous family are
//!   refused (`check_not_a_family`).
//! - Only systems no complete method covers (two free quantities with
//!   neither kind of target) use argmin's trust-region method (Steihaug
//!   subproblem) on 0.5 |f|^2 with the Gauss-Newton Hessian J^T J, from
//!   closed-form and grid starts; each such answer carries a warning that
//!   the search is not proven exhaustive.
//!
//! The solver works on smooth surrogates (1/ra, 1/a rather than ra, a and the
//! period, which jump at the parabola); residuals are reported in the targets'
//! own units.

use crate::error::{g, Error};
use crate::physics::body::Body;
#[cfg(test)]
use crate::physics::kepler::coast_times;
use crate::physics::kepler::coast_times_at;
use crate::physics::orbit::EnergyRatio;
use crate::physics::state::{forward_state, BurnoutState};
use crate::solve::feasibility::Warning;
use crate::solve::invert::burnout_for_conic;
use crate::solve::problem::{finish, Problem, Solved, SolverReport};
use crate::solve::target::{conic_from_pair, Target, TargetQuantity};
use argmin::core::{CostFunction, Executor, Gradient, Hessian, State, TerminationStatus};
use argmin::solver::brent::{BrentOpt, BrentRoot};
use argmin::solver::trustregion::{Steihaug, TrustRegion};
use nalgebra::{DMatrix, DVector};
use std::f64::consts::{FRAC_PI_2, PI};

/// Largest scaled residual at which over-specified targets count as agreeing.
pub const AGREEMENT_TOLERANCE: f64 = 1e-9;
/// A free burnout radius is sought up to this many body radii (or twice the
/// largest targeted radius): a burnout farther out is not a burnout from
/// this body.
pub const MAX_FREE_RADIUS_BODY_RADII: f64 = 1e4;
/// Largest scaled residual at which a square system counts as solved by
/// the least-squares path.
pub const ROOT_TOLERANCE: f64 = 1e-11;
/// The rounding floor of a scaled residual evaluated at an exact root (the
/// bracketing paths add the rounding of the root itself times the slope).
pub const RESIDUAL_FLOOR: f64 = 1e-12;

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

    /// Upper end of the burnout-radius domain when the radius is free, m:
    /// [`MAX_FREE_RADIUS_BODY_RADII`] body radii, or twice the largest
    /// targeted radius if that is farther.
    fn radius_domain_max_m(&self) -> f64 {
        self.r_max
            .max(MAX_FREE_RADIUS_BODY_RADII * self.body_radius_m)
    }

    /// Scaled, smooth residual of each target at a burnout state; `None` where
    /// a target does not exist for the trial orbit (e.g. time to apoapsis on
    /// an open orbit).
    pub fn residuals_at(&self, r: f64, v: f64, gamma: f64) -> Option<Vec<f64>> {
        (0..self.targets.len())
            .map(|i| self.residual_of(i, r, v, gamma))
            .collect()
    }

    /// Scaled, smooth residual of target `i` at a burnout state; `None` where
    /// it does not exist for the trial orbit.
    fn residual_of(&self, i: usize, r: f64, v: f64, gamma: f64) -> Option<f64> {
        if !(r.is_finite() && v.is_finite() && gamma.is_finite()) || r <= 0.0 || v <= 0.0 {
            return None;
        }
        self.residual_with(i, r, gamma, EnergyRatio::new(self.mu, r, v))
    }

    /// As [`System::residual_of`], with the state's energy ratio given
    /// (more exactly than the speed carries it, where a caller knows it).
    fn residual_with(&self, i: usize, r: f64, gamma: f64, energy: EnergyRatio) -> Option<f64> {
        let mu = self.mu;
        let t = self.targets.get(i)?;
        let (s, c) = gamma.sin_cos();
        let EnergyRatio {
            q,
            q_minus_1,
            two_minus_q,
        } = energy;
        let e = (q_minus_1 - q * s * s).hypot(q * s * c);
        let p = r * q * c * c;
        let inv_a = two_minus_q / r;
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
            Q::TimeToApoapsis => coast_times_at(mu, r, gamma, energy)?.to_apoapsis_s? / x - 1.0,
            Q::TimeToPeriapsis => coast_times_at(mu, r, gamma, energy)?.to_periapsis_s? / x - 1.0,
            Q::AngleToApoapsis => {
                let d = (crate::physics::kepler::angle_to_apoapsis_rad(energy, gamma)? - x)
                    .rem_euclid(2.0 * PI);
                if d > PI {
                    d - 2.0 * PI
                } else {
                    d
                }
            }
        };
        res.is_finite().then_some(res)
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

/// A one-parameter curve of burnout states with one scalar residual along
/// it: the single free quantity of a one-unknown system, or the flight-path
/// angle along a sheet of states that meet an orbit-element target exactly.
trait Line {
    /// Burnout state (r, v, fpa) at parameter `y`, `None` off the curve.
    fn state(&self, y: f64) -> Option<(f64, f64, f64)>;
    /// Residual at `y`, `None` where the target does not exist.
    fn eval(&self, y: f64) -> Option<f64> {
        let (r, v, g) = self.state(y)?;
        self.residual_at(r, v, g)
    }
    /// The residual at a burnout state (r, v, fpa).
    fn residual_at(&self, r: f64, v: f64, g: f64) -> Option<f64>;
    /// Whether the speed and the angle are derived from the parameter (and
    /// carry its rounding into the residual) rather than given or equal to it.
    fn derived(&self) -> (bool, bool) {
        (true, true)
    }
    /// The scale on which the residual can change near `y` (the distance to
    /// the nearest singular end of the parameter), for finite-difference
    /// steps.
    fn scale(&self, y: f64) -> f64 {
        y.abs()
    }
}

/// Distance of a flight-path angle to 0 or to +-90 deg, whichever is nearer.
fn fpa_scale(g: f64) -> f64 {
    g.abs().min(FRAC_PI_2 - g.abs()).max(1e-300)
}

/// Brent's root (argmin) on a [`Line`].
struct LineCost<'a, L: Line>(&'a L);

impl<L: Line> CostFunction for LineCost<'_, L> {
    type Param = f64;
    type Output = f64;
    fn cost(&self, y: &f64) -> Result<f64, argmin::core::Error> {
        self.0
            .eval(*y)
            .ok_or_else(|| argmin::core::Error::msg("target undefined at trial state"))
    }
}

/// `sign * f`, for Brent's minimiser looking for the extremum of f nearest
/// zero between two samples (where two close roots or a double root hide).
struct ExtremumCost<'a, L: Line>(&'a L, f64);

impl<L: Line> CostFunction for ExtremumCost<'_, L> {
    type Param = f64;
    type Output = f64;
    fn cost(&self, y: &f64) -> Result<f64, argmin::core::Error> {
        Ok(self.0.eval(*y).map(|f| self.1 * f).unwrap_or(f64::MAX))
    }
}

/// A root found along a line.
#[derive(Debug, Clone, Copy)]
struct LineRoot {
    y: f64,
    residual: f64,
    iterations: u64,
    /// Found as a touching extremum (no sign change): a double root.
    double: bool,
}

/// Residual that a true root can show when evaluated in double precision,
/// for a residual with slope `slope` (per unit of y) at `y`: the rounding
/// of y itself (Brent stops within a few units of it) times the slope,
/// plus the evaluation's own rounding floor [`RESIDUAL_FLOOR`].
fn acceptance(y: f64, slope: f64) -> f64 {
    RESIDUAL_FLOOR + 16.0 * f64::EPSILON * y.abs() * slope.abs()
}

/// Central-difference slope of a line's residual at `y` (only for the
/// acceptance bound; one-sided where one side is undefined).
fn slope<L: Line>(line: &L, y: f64, f0: f64) -> f64 {
    // At least a few units in the last place of y, so the step is real.
    let h = (1e-7 * line.scale(y))
        .max(64.0 * f64::EPSILON * y.abs())
        .max(1e-300);
    match (line.eval(y + h), line.eval(y - h)) {
        (Some(a), Some(b)) => (a - b) / (2.0 * h),
        (Some(a), None) => (a - f0) / h,
        (None, Some(b)) => (f0 - b) / h,
        (None, None) => 0.0,
    }
}

/// The residual a true root can show from the rounding of the burnout
/// state where the line computes it (a speed and angle derived from the
/// parameter, each to a few units of 1e-16 relative): each partial of the
/// residual times that rounding. The fixed inputs are exact doubles and
/// the parameter's own rounding is [`acceptance`]'s.
fn state_noise<L: Line>(line: &L, y: f64) -> f64 {
    let Some((r, v, g)) = line.state(y) else {
        return 0.0;
    };
    let (speed, angle) = line.derived();
    let h = 1e-7;
    let d = |a: Option<f64>, b: Option<f64>| match (a, b) {
        (Some(a), Some(b)) => ((a - b) / (2.0 * h)).abs(),
        _ => 0.0,
    };
    let dv = if speed {
        d(
            line.residual_at(r, v * (1.0 + h), g),
            line.residual_at(r, v * (1.0 - h), g),
        )
    } else {
        0.0
    };
    let dg = if angle {
        d(
            line.residual_at(r, v, g + h * g.abs().max(1e-12)),
            line.residual_at(r, v, g - h * g.abs().max(1e-12)),
        )
    } else {
        0.0
    };
    8.0 * f64::EPSILON * (dv + dg)
}

/// Accepts `y` as a root when its residual is within what rounding allows
/// there: the rounding of y times the slope, the rounding of the state
/// ([`state_noise`]) and the evaluation floor. A sign change across a jump
/// (e.g. a coast time wrapping at an apsis) is not a root: its residual
/// stays of order one.
fn accept<L: Line>(line: &L, y: f64, iterations: u64, double: bool) -> Option<LineRoot> {
    let f = line.eval(y)?;
    let allowed = acceptance(y, slope(line, y, f)) + state_noise(line, y);
    (f.abs() <= allowed).then_some(LineRoot {
        y,
        residual: f,
        iterations,
        double,
    })
}

fn brent_root<L: Line>(line: &L, a: f64, b: f64) -> Option<LineRoot> {
    let (lo, hi) = if a < b { (a, b) } else { (b, a) };
    let solver = BrentRoot::new(lo, hi, 1e-300);
    let res = Executor::new(LineCost(line), solver)
        .configure(|s| s.param(0.5 * (lo + hi)).max_iters(300))
        .run()
        .ok()?;
    let st = res.state();
    let y = *st.get_best_param()?;
    accept(line, y, st.get_iter(), false)
}

/// From `inside` (where the residual is defined, with value `f_inside`)
/// toward `outside` (where it is not): finds the edge of definedness by
/// bisection, then probes back from it at geometrically growing distances
/// (the value at the very edge is often rounding noise, e.g. a period near
/// escape) for a point whose residual has the other sign.
fn edge_bracket<L: Line>(line: &L, inside: f64, outside: f64, f_inside: f64) -> Option<(f64, f64)> {
    let (mut a, mut b) = (inside, outside);
    for _ in 0..80 {
        let m = 0.5 * (a + b);
        if line.eval(m).is_some() {
            a = m;
        } else {
            b = m;
        }
    }
    let edge = a;
    let span = edge - inside;
    (1..=14).rev().find_map(|k| {
        let x = edge - span * 10f64.powi(-k);
        line.eval(x)
            .filter(|v| v.is_finite() && v.signum() != f_inside.signum())
            .map(|v| (x, v))
    })
}

/// Every root of a line's residual over a sorted grid of parameters.
///
/// 1. Each pair of neighbouring samples whose residuals differ in sign is a
///    bracket for Brent's root; where the residual stops existing between
///    two samples the bracket is taken against the edge of existence.
/// 2. Each sampled extremum of the residual (the differences change sign)
///    that does not cross zero is refined with Brent's minimiser: if the
///    refined extremum crosses zero, two roots hide between the samples and
///    each side is bracketed; if it touches zero it is a double root.
///
/// So a root is missed only where the residual has two extrema (or a jump
/// and an extremum) between two neighbouring samples; the grids are made
/// dense where the residual can bend that fast (see [`grid_for`]).
/// Candidates are accepted by [`accept`], and merged only when they agree
/// to 1e-12 relative (a double root with a simple root within 1e-7).
fn line_roots<L: Line>(line: &L, grid: &[f64]) -> (Vec<LineRoot>, bool) {
    let vals: Vec<Option<f64>> = grid.iter().map(|y| line.eval(*y)).collect();
    let mut found: Vec<LineRoot> = Vec::new();
    let mut flat = false;
    for k in 0..grid.len().saturating_sub(1) {
        let (lo, hi, a, b) = match (vals[k], vals[k + 1]) {
            (Some(a), Some(b)) => (grid[k], grid[k + 1], a, b),
            (Some(a), None) => match edge_bracket(line, grid[k], grid[k + 1], a) {
                Some((x, b)) => (grid[k], x, a, b),
                None => continue,
            },
            (None, Some(b)) => match edge_bracket(line, grid[k + 1], grid[k], b) {
                Some((x, a)) => (x, grid[k + 1], a, b),
                None => continue,
            },
            (None, None) => continue,
        };
        if a == 0.0 {
            found.extend(accept(line, lo, 0, false));
        } else if b != 0.0 && a.signum() != b.signum() {
            // A sign change between two samples that both lie within the
            // rounding noise of the residual is noise, not a located root.
            if a.abs() <= noise_at(line, lo) && b.abs() <= noise_at(line, hi) {
                flat = true;
                continue;
            }
            found.extend(brent_root(line, lo, hi));
        }
    }
    if let (Some(&y), Some(Some(f))) = (grid.last(), vals.last()) {
        if *f == 0.0 {
            found.extend(accept(line, y, 0, false));
        }
    }
    for k in 1..grid.len().saturating_sub(1) {
        let (Some(a), Some(b), Some(c)) = (vals[k - 1], vals[k], vals[k + 1]) else {
            continue;
        };
        let extremum = (b - a) * (c - b) < 0.0;
        let one_side = a.signum() == b.signum() && b.signum() == c.signum() && b != 0.0;
        // Only an extremum that bends toward zero can hide roots.
        if !(extremum && one_side && b.abs() < a.abs().max(c.abs())) {
            continue;
        }
        // An extremum inside the noise band is noise.
        if a.abs() <= noise_at(line, grid[k - 1]) || c.abs() <= noise_at(line, grid[k + 1]) {
            flat |= b.abs() <= noise_at(line, grid[k]);
            continue;
        }
        let sign = b.signum();
        let solver = BrentOpt::new(grid[k - 1], grid[k + 1]).set_tolerance(1e-15, 1e-300);
        let Ok(res) = Executor::new(ExtremumCost(line, sign), solver)
            .configure(|s| s.param(grid[k]).max_iters(300))
            .run()
        else {
            continue;
        };
        let st = res.state();
        let Some(&y) = st.get_best_param() else {
            continue;
        };
        let Some(f) = line.eval(y) else { continue };
        if (f < 0.0) != (sign < 0.0) {
            found.extend(brent_root(line, grid[k - 1], y));
            found.extend(brent_root(line, y, grid[k + 1]));
        } else if let Some(root) = accept(line, y, st.get_iter(), true) {
            found.push(root);
        }
    }
    found.sort_by(|a, b| a.y.total_cmp(&b.y));
    let mut out: Vec<LineRoot> = Vec::new();
    for r in found {
        if let Some(last) = out.last_mut() {
            let scale = last.y.abs().max(r.y.abs());
            let near = (r.y - last.y).abs() <= 1e-12 * scale
                || ((r.double || last.double) && (r.y - last.y).abs() <= 1e-7 * scale);
            if near {
                if r.residual.abs() < last.residual.abs() || last.double && !r.double {
                    *last = LineRoot {
                        iterations: last.iterations + r.iterations,
                        ..r
                    };
                }
                continue;
            }
        }
        out.push(r);
    }
    (out, flat)
}

/// The residual's rounding noise at `y`: the rounding of y times the slope,
/// the state's rounding, and an evaluation floor of 64 units of 1e-16 (the
/// residuals are sums of well-conditioned terms). A sign change between two
/// samples both inside this band is noise; [`accept`]'s looser
/// [`RESIDUAL_FLOOR`] only judges a refined root.
fn noise_at<L: Line>(line: &L, y: f64) -> f64 {
    match line.eval(y) {
        Some(f) => {
            64.0 * f64::EPSILON
                + 16.0 * f64::EPSILON * y.abs() * slope(line, y, f).abs()
                + state_noise(line, y)
        }
        None => 0.0,
    }
}

/// Energy ratios Q = r v^2 / mu at which coast-time residuals bend fastest:
/// uniform in log(Q / (2 - Q)) over closed orbits (so a coast time, which
/// grows like (2 - Q)^(-3/2) toward escape, changes by a bounded factor per
/// step), clustered geometrically on both sides of Q = 1 (near-circular
/// orbits, where the apsides swing through a small flight-path angle), and
/// uniform in log(Q - 2) beyond escape.
fn energy_ratio_grid() -> Vec<f64> {
    let mut q: Vec<f64> = Vec::new();
    // log(Q/(2-Q)) from -20 to 36: 2 - Q down to about 1e-15.
    let steps = 1120;
    q.extend((0..=steps).map(|k| {
        let w = -20.0 + 56.0 * k as f64 / steps as f64;
        2.0 / (1.0 + (-w).exp())
    }));
    for k in 0..=112 {
        let d = 10f64.powf(-1.0 - k as f64 / 8.0);
        q.push(1.0 - d);
        q.push(1.0 + d);
    }
    q.extend((0..=340).map(|k| 2.0 + 10f64.powf(-15.0 + k as f64 * 0.05)));
    q.retain(|x| x.is_finite() && *x > 0.0);
    q.sort_by(f64::total_cmp);
    q.dedup();
    q
}

/// Flight-path angles, rad: uniform over (-90, 90) deg, geometric toward 0
/// (down to 1e-14 rad: near-circular crowding) and toward +-90 deg (down to
/// 1e-9 of 90 deg: near-radial).
fn fpa_grid() -> Vec<f64> {
    let lim = FRAC_PI_2 * (1.0 - 1e-9);
    let mut g: Vec<f64> = (0..=2048)
        .map(|k| -lim + 2.0 * lim * k as f64 / 2048.0)
        .collect();
    g.push(0.0);
    for k in 0..=104 {
        let d = 10f64.powf(-1.0 - k as f64 / 8.0);
        g.push(d);
        g.push(-d);
    }
    for k in 0..=64 {
        let d = 10f64.powf(-1.0 - k as f64 / 8.0);
        if d < FRAC_PI_2 - lim {
            break;
        }
        g.push(FRAC_PI_2 - d);
        g.push(-(FRAC_PI_2 - d));
    }
    g.retain(|x| x.abs() <= lim);
    g.sort_by(f64::total_cmp);
    g.dedup();
    g
}

/// The sample grid for the single free quantity of a one-unknown system,
/// in its natural unit (m/s, rad or m).
fn grid_for(system: &System) -> Vec<f64> {
    let mu = system.mu;
    let mut g: Vec<f64> = match system.unknowns[0] {
        Unknown::Speed => {
            let r = system.fixed_radius_m.unwrap_or(system.r_ref);
            let v_esc = (2.0 * mu / r).sqrt();
            let (lo, hi) = (1e-4 * v_esc, 20.0 * v_esc);
            energy_ratio_grid()
                .into_iter()
                .map(|q| (q * mu / r).sqrt())
                .filter(|v| (lo..=hi).contains(v))
                .collect()
        }
        Unknown::FlightPathAngle => fpa_grid(),
        Unknown::Radius => {
            let v = system.fixed_speed_m_s.unwrap_or(f64::NAN);
            let (lo, hi) = (system.body_radius_m, system.radius_domain_max_m());
            let mut g: Vec<f64> = energy_ratio_grid()
                .into_iter()
                .map(|q| q * mu / (v * v))
                .filter(|r| (lo..=hi).contains(r))
                .collect();
            g.extend((0..=800).map(|k| lo * (hi / lo).powf(k as f64 / 800.0)));
            g
        }
    };
    g.retain(|x| x.is_finite());
    g.sort_by(f64::total_cmp);
    g.dedup();
    g
}

/// The single free quantity of a one-unknown system, as a line.
struct FreeLine<'a> {
    system: &'a System,
    target: usize,
}

impl Line for FreeLine<'_> {
    fn state(&self, y: f64) -> Option<(f64, f64, f64)> {
        let s = self.system;
        let mut r = s.fixed_radius_m.unwrap_or(f64::NAN);
        let mut v = s.fixed_speed_m_s.unwrap_or(f64::NAN);
        let mut gamma = s.fixed_fpa_rad.unwrap_or(f64::NAN);
        match s.unknowns.first()? {
            Unknown::Speed => v = y,
            Unknown::FlightPathAngle => gamma = y,
            Unknown::Radius => r = y,
        }
        (r >= s.body_radius_m).then_some((r, v, gamma))
    }
    fn residual_at(&self, r: f64, v: f64, g: f64) -> Option<f64> {
        self.system.residual_of(self.target, r, v, g)
    }
    fn derived(&self) -> (bool, bool) {
        (false, false)
    }
    fn scale(&self, y: f64) -> f64 {
        match self.system.unknowns.first() {
            Some(Unknown::FlightPathAngle) => fpa_scale(y),
            _ => y.abs(),
        }
    }
}

/// The states at a fixed burnout radius whose true anomaly is fixed (by an
/// angle-to-apoapsis target, nu = 180 deg - angle), parametrised by the
/// eccentricity e in [0, 1): p = r (1 + e cos nu), horizontal speed
/// sqrt(mu p) / r, radial speed sqrt(mu / p) e sin nu.
struct AnomalySheet<'a> {
    system: &'a System,
    radius_m: f64,
    angle_to_apoapsis_rad: f64,
    other: usize,
}

impl AnomalySheet<'_> {
    /// (e, 1 - e, p) at the parameter t, the logit of the eccentricity:
    /// e = 1/(1 + exp(-t)), 1 - e = 1/(1 + exp(t)), each to full relative
    /// precision, and p = r (1 + e cos nu) with nu = pi - angle written as
    /// (1 - e) + 2 e sin^2(angle/2), which does not cancel just past
    /// apoapsis of a near-radial ellipse. `None` off the sheet.
    fn orbit(&self, t: f64) -> Option<(f64, f64, f64)> {
        let e = 1.0 / (1.0 + (-t).exp());
        let one_minus_e = 1.0 / (1.0 + t.exp());
        let half = (0.5 * self.angle_to_apoapsis_rad).sin();
        let p = self.radius_m * (one_minus_e + 2.0 * e * half * half);
        (p > 0.0 && e > 0.0 && one_minus_e > 0.0).then_some((e, one_minus_e, p))
    }
}

impl Line for AnomalySheet<'_> {
    /// The parameter is the logit of the eccentricity, t = ln(e / (1 - e)),
    /// so that both e (near circular) and 1 - e (near radial) are carried to
    /// full relative precision: e = 1/(1 + exp(-t)), 1 - e = 1/(1 + exp(t)).
    fn state(&self, t: f64) -> Option<(f64, f64, f64)> {
        let (e, _, p) = self.orbit(t)?;
        let r = self.radius_m;
        let mu = self.system.mu;
        let v_t = (mu * p).sqrt() / r;
        let v_r = (mu / p).sqrt() * e * self.angle_to_apoapsis_rad.sin();
        Some((r, v_t.hypot(v_r), v_r.atan2(v_t)))
    }
    fn residual_at(&self, r: f64, v: f64, g: f64) -> Option<f64> {
        self.system.residual_of(self.other, r, v, g)
    }
    /// Coast times straight from (p, e, angle), which this sheet knows
    /// exactly, rather than from the rounded state: near circular the true
    /// anomaly recomputed from (v, fpa) keeps only a few digits.
    fn eval(&self, t: f64) -> Option<f64> {
        let target = self.system.targets.get(self.other)?;
        let coast = matches!(
            target.quantity,
            TargetQuantity::TimeToApoapsis | TargetQuantity::TimeToPeriapsis
        );
        if !coast {
            let (r, v, g) = self.state(t)?;
            return self.residual_at(r, v, g);
        }
        let (e, one_minus_e, p) = self.orbit(t)?;
        let a = self.angle_to_apoapsis_rad;
        let times =
            crate::physics::kepler::coast_times_on_ellipse(self.system.mu, p, e, one_minus_e, a)?;
        let got = if target.quantity == TargetQuantity::TimeToApoapsis {
            times.to_apoapsis_s?
        } else {
            times.to_periapsis_s?
        };
        let res = got / target.value - 1.0;
        res.is_finite().then_some(res)
    }
    fn derived(&self) -> (bool, bool) {
        // The residual is evaluated from (p, e, angle), not the state.
        (false, false)
    }
    fn scale(&self, t: f64) -> f64 {
        t.abs().max(1.0)
    }
}

/// Logits of the eccentricity, ln(e / (1 - e)), for e from 1e-8 (below that
/// the true anomaly recomputed from the rounded state carries more than
/// 1e-8 of error and the residual is noise) to 1 - 1e-15: uniform in the
/// logit (steps of 0.02, so e and 1 - e change by at most 2% a step) plus
/// the geometric points 10^-k of e and of 1 - e.
fn ecc_logit_grid() -> Vec<f64> {
    let (lo, hi) = (
        (1e-8f64 / (1.0 - 1e-8)).ln(),
        ((1.0 - 1e-15f64) / 1e-15).ln(),
    );
    let steps = ((hi - lo) / 0.02).ceil() as usize;
    let mut g: Vec<f64> = (0..=steps)
        .map(|k| lo + (hi - lo) * k as f64 / steps as f64)
        .collect();
    for k in 0..=112 {
        let d = 10f64.powf(-1.0 - k as f64 / 8.0);
        let l = (d / (1.0 - d)).ln();
        g.push(l);
        g.push(-l);
    }
    g.retain(|t| (lo..=hi).contains(t));
    g.sort_by(f64::total_cmp);
    g.dedup();
    g
}

/// One sheet of the one-parameter family of burnout states that meet an
/// orbit-element target exactly: for each flight-path angle, the k-th speed
/// of [`crate::solve::invert::speed_for_target`]. The other target's residual along
/// it is a function of the angle alone.
struct Sheet<'a> {
    system: &'a System,
    radius_m: f64,
    element: &'a Target,
    other: usize,
    k: usize,
}

impl Sheet<'_> {
    /// The energy ratio of the sheet's state at `gamma` from the element
    /// itself, where that is more exact than from the rounded speed (near
    /// escape 2 - Q is the small difference the coast times hang on):
    /// - energy targets: 2 - Q = r/a, Q - 1 = (a - r)/a;
    /// - apsis radius R: with d- = (R - r) + 2 r sin^2(g/2) and d+ = R + r cos g,
    ///   2 - Q = 2 r ((R - r) + r sin^2 g) / (d- d+), Q - 1 = ((R - r)^2 - r^2 sin^2 g) / (d- d+);
    /// - eccentricity: Q - 1 = +-D with D = sqrt(e^2 - sin^2 g)/cos g, and
    ///   2 - Q = (1 - e^2) / (cos^2 g (1 + D)) on the + sheet.
    fn energy(&self, gamma: f64, v: f64) -> EnergyRatio {
        use TargetQuantity as Q;
        let (mu, r, x) = (self.system.mu, self.radius_m, self.element.value);
        let from_inv_a = |inv_a: f64| {
            let two_minus_q = r * inv_a;
            let q_minus_1 = if inv_a > 0.0 {
                (1.0 / inv_a - r) * inv_a
            } else {
                1.0 - two_minus_q
            };
            EnergyRatio {
                q: 2.0 - two_minus_q,
                q_minus_1,
                two_minus_q,
            }
        };
        let (s, c) = gamma.sin_cos();
        match self.element.quantity {
            Q::Sma => from_inv_a(1.0 / x),
            Q::Period => {
                let n = 2.0 * PI / x;
                from_inv_a((n * n / mu).cbrt())
            }
            Q::C3 => from_inv_a(-x / mu),
            Q::SpecificEnergy => from_inv_a(-2.0 * x / mu),
            Q::PeriapsisRadius | Q::ApoapsisRadius => {
                // Each factor in the form that does not cancel: near
                // horizontal from (R - r), near vertical from the small
                // cos g, 1 - sin g = 2 sin^2(pi/4 - g/2), 1 + sin g likewise.
                let steep = s * s > 0.5;
                let half = (0.5 * gamma).sin();
                let d_minus = if steep {
                    x - r * c
                } else {
                    (x - r) + 2.0 * r * half * half
                };
                let d_plus = x + r * c;
                let den = d_minus * d_plus;
                let x_minus_r_c2 = if steep {
                    x - r * c * c
                } else {
                    (x - r) + r * s * s
                };
                let q4 = std::f64::consts::FRAC_PI_4;
                let one_minus_s = 2.0 * (q4 - 0.5 * gamma).sin().powi(2);
                let one_plus_s = 2.0 * (q4 + 0.5 * gamma).sin().powi(2);
                let two_minus_q = 2.0 * r * x_minus_r_c2 / den;
                EnergyRatio {
                    q: 2.0 - two_minus_q,
                    q_minus_1: (x - r * one_plus_s) * (x - r * one_minus_s) / den,
                    two_minus_q,
                }
            }
            _ => {
                let er = EnergyRatio::new(mu, r, v);
                if self.element.quantity == Q::Ecc && x < 1.0 && er.q_minus_1 > 0.0 {
                    // The + sheet of an ellipse: 2 - Q without cancellation.
                    let d = er.q_minus_1;
                    EnergyRatio {
                        two_minus_q: (1.0 - x) * (1.0 + x) / (c * c * (1.0 + d)),
                        ..er
                    }
                } else {
                    er
                }
            }
        }
    }
}

impl Line for Sheet<'_> {
    fn state(&self, gamma: f64) -> Option<(f64, f64, f64)> {
        let speeds = crate::solve::invert::speed_for_target(
            self.system.mu,
            self.radius_m,
            gamma,
            self.element,
        )
        .ok()?;
        let v = speeds.get(self.k)?.speed_m_s;
        Some((self.radius_m, v, gamma))
    }
    fn eval(&self, gamma: f64) -> Option<f64> {
        let (r, v, g) = self.state(gamma)?;
        let energy = self.energy(g, v);
        if !(energy.q.is_finite() && energy.two_minus_q.is_finite()) {
            return self.residual_at(r, v, g);
        }
        self.system.residual_with(self.other, r, g, energy)
    }
    fn derived(&self) -> (bool, bool) {
        // The energy comes from the element itself except on eccentricity
        // sheets, where it follows the rounded speed.
        (self.element.quantity == TargetQuantity::Ecc, false)
    }
    fn scale(&self, gamma: f64) -> f64 {
        fpa_scale(gamma)
    }
    fn residual_at(&self, r: f64, v: f64, g: f64) -> Option<f64> {
        self.system.residual_of(self.other, r, v, g)
    }
}

/// Roots of a line as burnout states, with their iteration counts and
/// whether part of the line was within rounding noise of zero (roots there
/// cannot be located in double precision).
fn roots_as_states<L: Line>(line: &L, grid: &[f64]) -> (Vec<(f64, f64, f64)>, u64, bool) {
    let (roots, flat) = line_roots(line, grid);
    let iterations = roots.iter().map(|r| r.iterations).sum();
    (
        roots.iter().filter_map(|r| line.state(r.y)).collect(),
        iterations,
        flat,
    )
}

/// With the burnout radius fixed, speed and angle free, an orbit-element
/// target `element` and another target `other`: every root, bracketed over
/// the flight-path angle on each sheet of states that meet the element
/// exactly.
fn sheet_roots(system: &System, element: usize, other: usize) -> (Vec<(f64, f64, f64)>, u64, bool) {
    let Some(r) = system.fixed_radius_m else {
        return (Vec::new(), 0, false);
    };
    let grid = fpa_grid();
    let mut out = Vec::new();
    let mut iterations = 0;
    let mut flat = false;
    for k in 0..2 {
        let sheet = Sheet {
            system,
            radius_m: r,
            element: &system.targets[element],
            other,
            k,
        };
        let (states, it, f) = roots_as_states(&sheet, &grid);
        out.extend(states);
        iterations += it;
        flat |= f;
    }
    (out, iterations, flat)
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

/// How the target quantities depend on the burnout state, for telling a
/// finite set of solutions from a continuous family.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
enum Dependence {
    /// Orbital energy alone (sma, period, C3, specific energy).
    Energy,
    /// Angular momentum alone (semi-latus rectum).
    AngularMomentum,
    /// Size and shape together (periapsis, apoapsis, eccentricity).
    Shape,
    /// Where burnout lies on the orbit (coast times and angles).
    Placement,
}

fn dependence(q: TargetQuantity) -> Dependence {
    use TargetQuantity as Q;
    match q {
        Q::Sma | Q::Period | Q::C3 | Q::SpecificEnergy => Dependence::Energy,
        Q::SemiLatusRectum => Dependence::AngularMomentum,
        Q::PeriapsisRadius | Q::ApoapsisRadius | Q::Ecc => Dependence::Shape,
        Q::TimeToApoapsis | Q::TimeToPeriapsis | Q::AngleToApoapsis => Dependence::Placement,
    }
}

/// Refuses target sets whose solutions, where they exist, form a continuous
/// family: the targets impose fewer independent conditions than there are
/// free burnout quantities. Orbit elements impose at most two conditions
/// (energy and angular momentum); those that depend on the energy alone
/// impose one between them, as do those on the angular momentum alone; the
/// energy does not depend on the flight-path angle at all.
fn check_not_a_family(system: &System) -> Result<(), Error> {
    let n = system.dim();
    let deps: Vec<Dependence> = system
        .targets
        .iter()
        .map(|t| dependence(t.quantity))
        .collect();
    let has = |d: Dependence| deps.contains(&d);
    let shapes = {
        let mut q: Vec<TargetQuantity> = system
            .targets
            .iter()
            .filter(|t| dependence(t.quantity) == Dependence::Shape)
            .map(|t| t.quantity)
            .collect();
        q.dedup();
        q.len()
    };
    let classes = [Dependence::Energy, Dependence::AngularMomentum]
        .iter()
        .filter(|d| has(**d))
        .count();
    let element_rank = (shapes + classes).min(2);
    let mut placement: Vec<TargetQuantity> = system
        .targets
        .iter()
        .filter(|t| dependence(t.quantity) == Dependence::Placement)
        .map(|t| t.quantity)
        .collect();
    placement.sort_by_key(|q| *q as u8);
    placement.dedup();
    let mut rank = element_rank + placement.len();
    // Only the flight-path angle free, energy targets only: they cannot
    // depend on it.
    if system.unknowns == [Unknown::FlightPathAngle]
        && deps.iter().all(|d| *d == Dependence::Energy)
    {
        rank = 0;
    }
    if rank >= n {
        return Ok(());
    }
    let flags: Vec<&str> = system.targets.iter().map(|t| t.flag).collect();
    let free: Vec<&str> = system.unknowns.iter().map(|u| u.name()).collect();
    let why = if deps.iter().all(|d| *d == Dependence::Energy) {
        "fix only the orbital energy"
    } else if deps.iter().all(|d| *d == Dependence::AngularMomentum) {
        "fix only the angular momentum"
    } else {
        "impose fewer independent conditions than there are free quantities"
    };
    Err(Error::Usage(format!(
        "{} {why}: with {} free ({}) the solutions form a continuous family, not a set of burnout states; add a target that fixes {} or fix one of the free quantities",
        flags.join(", "),
        free.len(),
        free.join(", "),
        if has(Dependence::Energy) && !has(Dependence::Shape) {
            "the shape (e.g. --ecc or --periapsis-alt)"
        } else {
            "another condition (e.g. an apsis or a coast time)"
        }
    )))
}

/// A square subset of the targets that a complete method solves: its roots
/// are then checked against the remaining targets.
enum Square {
    /// One free quantity, one target (index): bracketed along the line.
    Line(usize),
    /// Radius fixed, two orbit elements with a closed-form conic.
    Pair(usize, usize),
    /// Radius fixed, an orbit element (first) and another target (second):
    /// bracketed along the element's sheets.
    Sheet(usize, usize),
    /// Radius fixed, an angle-to-apoapsis target (first, fixing the true
    /// anomaly) and another target (second): bracketed over the
    /// eccentricity.
    Anomaly(usize, usize),
}

fn square_subset(system: &System) -> Option<Square> {
    let t = &system.targets;
    let m = t.len();
    match system.unknowns.as_slice() {
        [u] => {
            // A target the free quantity moves: the energy does not depend
            // on the flight-path angle. Orbit elements first (smooth), then
            // coast quantities.
            let usable = |i: &usize| {
                *u != Unknown::FlightPathAngle || dependence(t[*i].quantity) != Dependence::Energy
            };
            (0..m)
                .filter(usable)
                .find(|i| t[*i].quantity.is_orbit_element())
                .or_else(|| (0..m).find(usable))
                .map(Square::Line)
        }
        [Unknown::Speed, Unknown::FlightPathAngle] if system.fixed_radius_m.is_some() => {
            let elements: Vec<usize> = (0..m)
                .filter(|i| t[*i].quantity.is_orbit_element())
                .collect();
            for (a, &i) in elements.iter().enumerate() {
                for &j in &elements[a + 1..] {
                    if conic_from_pair(system.mu, &t[i], &t[j]).is_ok() {
                        return Some(Square::Pair(i, j));
                    }
                }
            }
            if let Some(&e) = elements.first() {
                return (0..m)
                    .find(|j| *j != e && !t[*j].quantity.is_orbit_element())
                    .map(|j| Square::Sheet(e, j));
            }
            let a = (0..m).find(|i| t[*i].quantity == TargetQuantity::AngleToApoapsis)?;
            (0..m)
                .find(|j| *j != a && t[*j].quantity != TargetQuantity::AngleToApoapsis)
                .map(|j| Square::Anomaly(a, j))
        }
        _ => None,
    }
}

/// Solves a problem the closed forms do not cover.
///
/// # Errors
/// [`Error::Usage`] for under-determined sets and sets whose solutions form
/// a continuous family; [`Error::Infeasible`] when no state meets the
/// targets, or when over-specified targets conflict (with each residual in
/// its own unit); [`Error::NoConvergence`] when no start converges.
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

/// Roots of a square subset as states (r, v, fpa), the method's name, and
/// the iterations taken.
type SquareRoots = (Vec<(f64, f64, f64)>, &'static str, u64, bool);

/// Roots of a square subset.
fn solve_square(system: &System, square: &Square) -> Result<SquareRoots, Error> {
    match *square {
        Square::Line(i) => {
            let line = FreeLine { system, target: i };
            let (states, it, flat) = roots_as_states(&line, &grid_for(system));
            Ok((
                states,
                "brent-root (argmin), bracketed over the domain",
                it,
                flat,
            ))
        }
        Square::Pair(i, j) => {
            let r = system.fixed_radius_m.unwrap_or(f64::NAN);
            let conic = conic_from_pair(system.mu, &system.targets[i], &system.targets[j])?;
            let states = burnout_for_conic(system.mu, &conic, r)?;
            Ok((
                states
                    .iter()
                    .map(|s| (s.radius_m, s.speed_m_s, s.flight_path_angle_rad))
                    .collect(),
                "closed-form pair",
                0,
                false,
            ))
        }
        Square::Anomaly(a, o) => {
            let sheet = AnomalySheet {
                system,
                radius_m: system.fixed_radius_m.unwrap_or(f64::NAN),
                angle_to_apoapsis_rad: system.targets[a].value,
                other: o,
            };
            let (states, it, flat) = roots_as_states(&sheet, &ecc_logit_grid());
            Ok((
                states,
                "brent-root (argmin) bracketed over the eccentricity along the states at the targeted true anomaly",
                it,
                flat,
            ))
        }
        Square::Sheet(e, o) => {
            let (states, it, flat) = sheet_roots(system, e, o);
            Ok((
                states,
                "brent-root (argmin) bracketed over the flight-path angle along the states meeting the orbit-element target",
                it,
                flat,
            ))
        }
    }
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
    check_not_a_family(system)?;
    if start.is_none() {
        if let Some(square) = square_subset(system) {
            let (candidates, method, iterations, flat) = solve_square(system, &square)?;
            if candidates.is_empty() {
                return Err(no_solution(problem, system, flat));
            }
            let mut solved = checked_roots(problem, system, candidates, method, iterations)?;
            if flat {
                for s in &mut solved.solutions {
                    s.warnings.push(Warning::IllConditioned);
                }
            }
            return Ok(solved);
        }
    }
    least_squares(problem, system, start)
}

/// Keeps the roots of a square subset that meet every target (the others to
/// [`AGREEMENT_TOLERANCE`]); when none does, the targets conflict.
fn checked_roots(
    problem: &Problem,
    system: &System,
    candidates: Vec<(f64, f64, f64)>,
    method: &str,
    iterations: u64,
) -> Result<Solved, Error> {
    let over = system.targets.len() > system.dim();
    let scored: Vec<((f64, f64, f64), f64)> = candidates
        .into_iter()
        .map(|(r, v, g)| {
            let worst = system
                .residuals_at(r, v, g)
                .map(|res| max_abs(&res))
                .unwrap_or(f64::INFINITY);
            ((r, v, g), worst)
        })
        .collect();
    let mut states: Vec<BurnoutState> = Vec::new();
    for &((r, v, g), worst) in &scored {
        if over && (worst.is_nan() || worst > AGREEMENT_TOLERANCE) {
            continue;
        }
        crate::physics::state::check_speed(v)?;
        let st = forward_state(system.mu, r, v, g)?;
        states.push(st);
    }
    if states.is_empty() {
        let best = scored
            .iter()
            .min_by(|a, b| a.1.total_cmp(&b.1))
            .map(|x| x.0)
            .unwrap_or((f64::NAN, f64::NAN, f64::NAN));
        return Err(conflict(problem, system, best.0, best.1, best.2));
    }
    let method = if over {
        format!("{method}, checked against the remaining targets")
    } else {
        method.to_string()
    };
    Ok(report(
        problem,
        system,
        states,
        &method,
        iterations,
        "every bracketed root refined to its rounding limit".into(),
        None,
    ))
}

/// Trust-region least squares from closed-form and grid starts: for systems
/// no complete method covers (roots from starting points are not proven
/// complete, and each answer says so).
fn least_squares(
    problem: &Problem,
    system: &System,
    start: Option<(f64, f64, f64)>,
) -> Result<Solved, Error> {
    let n = system.dim();
    let m = system.targets.len();
    let mu = system.mu;
    let starts: Vec<Vec<f64>> = match start {
        Some((r, v, gamma)) => vec![system.coords_of(r, v, gamma)],
        None => seeds(system),
    };
    // Only a search from the seed grid is stated as not proven exhaustive
    // (a single forced start is a convergence test, not a search).
    let seed_count = start.is_none().then_some(starts.len());
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
    let iterations = best.iterations;
    // Acceptance is by the residuals: a run that met them at argmin's
    // iteration limit has converged, and says so.
    let termination = format!("residuals within {tol:e} ({})", best.termination);
    let mut states: Vec<BurnoutState> = Vec::new();
    for run in runs.iter().filter(|r| max_abs(&r.residuals) <= tol) {
        let (r, v, gamma) = system.state_of(&run.x);
        let dup = states.iter().any(|s| {
            (s.speed_m_s - v).abs() <= 1e-9 * v
                && (s.flight_path_angle_rad - gamma).abs() <= 1e-9
                && (s.radius_m - r).abs() <= 1e-9 * r
        });
        if !dup {
            if let (Ok(_), Ok(st)) = (
                crate::physics::state::check_speed(v),
                forward_state(mu, r, v, gamma),
            ) {
                states.push(st);
            }
        }
    }
    let method = if m > n {
        "trust-region least squares, gauss-newton hessian (argmin)"
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
        seed_count,
    ))
}
fn report(
    problem: &Problem,
    system: &System,
    states: Vec<BurnoutState>,
    method: &str,
    iterations: u64,
    termination: String,
    seed_count: Option<usize>,
) -> Solved {
    let residuals = states
        .first()
        .map(|st| crate::solve::problem::target_residuals(system.mu, &system.targets, st))
        .unwrap_or_default();
    let mut solved = finish(
        problem,
        states,
        SolverReport {
            method: method.into(),
            iterations,
            termination,
            residuals,
        },
    );
    if let Some(starts) = seed_count {
        for s in &mut solved.solutions {
            s.warnings.push(Warning::SearchNotExhaustive { starts });
        }
    }
    solved
}

fn describe_residuals(system: &System, st: &BurnoutState) -> String {
    crate::solve::problem::target_residuals(system.mu, &system.targets, st)
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

fn no_solution(problem: &Problem, system: &System, flat: bool) -> Error {
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
        "no {} reaches {} with {}: the residual has no root over the whole domain{}",
        system.unknowns[0].name(),
        flags.join(", "),
        fixed.join(", "),
        if flat {
            " (part of the domain is within double-precision rounding of the target, where a root cannot be located)"
        } else {
            ""
        }
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
        None,
    ))
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::physics::orbit::Conic;
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
            site: None,
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
        let tof = coast_times(earth().mu_m3_s2, r, v, g)
            .unwrap()
            .to_apoapsis_s
            .unwrap();
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
        let closed = crate::solve::invert::speed_for_target(
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
    use crate::physics::orbit::Conic;
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
                site: None,
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
