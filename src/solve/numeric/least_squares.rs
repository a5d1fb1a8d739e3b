//! The least-squares fallback: argmin's trust-region method (Steihaug
//! subproblem) on 0.5 |f|^2 with the Gauss-Newton Hessian, from closed-form
//! and grid starts, for systems no complete line search covers.

use super::*;

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
pub(super) struct LeastSquares<'a, S: Residuals> {
    system: &'a S,
}

/// Cost assigned where a target does not exist for the trial orbit.
pub(super) const UNDEFINED_COST: f64 = 1e30;

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

/// Starting points: closed-form states where some pair of orbit-element
/// targets has one, then a grid over the domain.
pub(super) fn seeds(system: &System) -> Vec<Vec<f64>> {
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

/// Trust-region least squares from closed-form and grid starts: for systems
/// no complete method covers (roots from starting points are not proven
/// complete, and each answer says so).
pub(super) fn least_squares(
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
    report(
        problem,
        system,
        states,
        method,
        iterations,
        termination,
        seed_count,
    )
}
