//! The minimum and maximum required speed of a scan: found on the grid,
//! then refined along the first swept input with Brent's method (argmin's
//! `BrentOpt`) between the grid neighbours of the best point.

use super::plan::Plan;
use super::point::required_speed;
use crate::physics::state::Branch;
use crate::solve::problem::{kept, BranchChoice};

/// Minimum or maximum.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum ExtremeKind {
    /// Lowest required speed.
    Minimum,
    /// Highest required speed.
    Maximum,
}

impl ExtremeKind {
    pub(crate) fn name(self) -> &'static str {
        match self {
            ExtremeKind::Minimum => "minimum",
            ExtremeKind::Maximum => "maximum",
        }
    }
    pub(crate) fn sign(self) -> f64 {
        match self {
            ExtremeKind::Minimum => 1.0,
            ExtremeKind::Maximum => -1.0,
        }
    }
}

/// How an extreme was refined between grid points.
#[derive(Debug, Clone, PartialEq)]
pub struct Refinement {
    /// Brent iterations.
    pub iterations: u64,
    /// argmin's termination reason.
    pub termination: String,
    /// Whether Brent converged (otherwise the grid point is kept).
    pub converged: bool,
    /// The bracket searched, machine-output units of the first axis.
    pub bracket_out: (f64, f64),
}

/// The minimum or maximum required speed of a scan.
#[derive(Debug, Clone, PartialEq)]
pub struct Extreme {
    /// Which.
    pub kind: ExtremeKind,
    /// Required speed, m/s (refined).
    pub speed_m_s: f64,
    /// Branches that need this speed there.
    pub branches: Vec<&'static str>,
    /// Where, per axis in machine-output units (the first axis refined).
    pub at_out: Vec<f64>,
    /// Where, per axis in SI.
    pub at_si: Vec<f64>,
    /// Best grid point: speed, m/s.
    pub grid_speed_m_s: f64,
    /// Best grid point: index per axis.
    pub grid_index: Vec<usize>,
    /// Brent's refinement along the first axis, if it had two points or more.
    pub refinement: Option<Refinement>,
    /// Per axis: whether the extreme sits at an end of that axis's range.
    pub at_end: Vec<bool>,
    /// When the extreme is a grid point next to one that does not solve
    /// (along the first axis): that neighbour, SI. The extreme is then at
    /// the edge of the solved region.
    pub unsolved_neighbour_si: Option<f64>,
}

#[derive(Debug, Clone, Copy)]
pub(crate) struct GridExtreme {
    pub(crate) speed: f64,
    pub(crate) idx: usize,
    pub(crate) branches: u8,
}

pub(crate) fn branch_bit(b: Branch) -> u8 {
    match b {
        Branch::Ascending => 1,
        Branch::Descending => 2,
    }
}

pub(crate) fn branch_names(bits: u8) -> Vec<&'static str> {
    let mut v = Vec::new();
    if bits & 1 != 0 {
        v.push("ascending");
    }
    if bits & 2 != 0 {
        v.push("descending");
    }
    v
}

pub(crate) fn same_speed(a: f64, b: f64) -> bool {
    (a - b).abs() <= 1e-12 * a.abs().max(b.abs())
}

/// Folds a candidate into a running extreme: better speed wins; the lower
/// index wins a tie, so the result does not depend on chunk order.
pub(crate) fn fold_extreme(cur: &mut Option<GridExtreme>, cand: GridExtreme, sign: f64) {
    match cur {
        None => *cur = Some(cand),
        Some(c) => {
            if same_speed(c.speed, cand.speed) && c.idx == cand.idx {
                c.branches |= cand.branches;
            } else if sign * cand.speed < sign * c.speed && !same_speed(c.speed, cand.speed)
                || (same_speed(c.speed, cand.speed) && cand.idx < c.idx)
            {
                *c = cand;
            }
        }
    }
}

impl Plan {
    /// Solves at `x_si` on the first axis, the other axes at `si`: the best
    /// kept speed (signed: lower is better) and the branches that need it.
    fn speed_at(
        &self,
        branch: BranchChoice,
        si: &[f64],
        x_si: f64,
        kind: ExtremeKind,
    ) -> Option<(f64, u8)> {
        let mut point = si.to_vec();
        point[0] = x_si;
        let solved = self.solve_si(&point, &mut self.scratch()).ok()?;
        let mut best: Option<GridExtreme> = None;
        for s in kept(&solved, branch) {
            fold_extreme(
                &mut best,
                GridExtreme {
                    speed: required_speed(&s.state, s.site.as_ref()),
                    idx: 0,
                    branches: branch_bit(s.state.branch),
                },
                kind.sign(),
            );
        }
        best.map(|b| (b.speed, b.branches))
    }

    pub(crate) fn refine(
        &self,
        branch: BranchChoice,
        best: GridExtreme,
        kind: ExtremeKind,
    ) -> Extreme {
        let n = self.axes.len();
        let mut ix = vec![0; n];
        self.indices(best.idx, &mut ix);
        let grid_si: Vec<f64> = ix
            .iter()
            .zip(&self.axes)
            .map(|(&i, a)| a.grid.si(i))
            .collect();
        let at_end: Vec<bool> = ix
            .iter()
            .zip(&self.axes)
            .map(|(&i, a)| a.grid.len() > 1 && (i == 0 || i + 1 == a.grid.len()))
            .collect();
        let mut ext = Extreme {
            kind,
            speed_m_s: best.speed,
            branches: branch_names(best.branches),
            at_out: ix
                .iter()
                .zip(&self.axes)
                .map(|(&i, a)| a.grid.out(i))
                .collect(),
            at_si: grid_si.clone(),
            grid_speed_m_s: best.speed,
            grid_index: ix.clone(),
            refinement: None,
            at_end,
            unsolved_neighbour_si: None,
        };
        let grid0 = &self.axes[0].grid;
        let n0 = grid0.len();
        if n0 < 2 {
            return ext;
        }
        // The bracket: the grid neighbours that solve. A neighbour that does
        // not solve marks the edge of the solved region; the speed often
        // runs off to infinity there, so the search stays on this side.
        let i0 = ix[0];
        let solves = |i: usize| self.speed_at(branch, &grid_si, grid0.si(i), kind).is_some();
        let left = i0.checked_sub(1);
        let right = (i0 + 1 < n0).then_some(i0 + 1);
        let left_ok = left.filter(|&i| solves(i));
        let right_ok = right.filter(|&i| solves(i));
        ext.unsolved_neighbour_si = [(left, left_ok), (right, right_ok)]
            .iter()
            .find(|(nb, ok)| nb.is_some() && ok.is_none())
            .and_then(|(nb, _)| nb.map(|i| grid0.si(i)));
        let (lo, hi) = (left_ok.unwrap_or(i0), right_ok.unwrap_or(i0));
        if lo == hi {
            return ext;
        }
        let (xa, xb) = (grid0.si(lo), grid0.si(hi));
        let (a, b) = if xa <= xb { (xa, xb) } else { (xb, xa) };
        let sign = kind.sign();
        // A point with no kept solution costs far more than any speed here,
        // but stays finite so the parabolic steps stay finite too.
        let penalty = 1e3 * best.speed.abs().max(1.0);
        let objective = SpeedAlong {
            plan: self,
            branch,
            si: grid_si.clone(),
            kind,
            penalty,
        };
        let t_abs = 1e-10 * (b - a);
        let solver =
            argmin::solver::brent::BrentOpt::new(a, b).set_tolerance(f64::EPSILON.sqrt(), t_abs);
        let run = argmin::core::Executor::new(objective, solver)
            .configure(|s| s.max_iters(200))
            .run();
        let Ok(res) = run else {
            return ext;
        };
        use argmin::core::State;
        let state = res.state();
        let termination = state
            .get_termination_reason()
            .map(|r| r.text().to_string())
            .unwrap_or_else(|| "not terminated".into());
        let converged = matches!(
            state.get_termination_reason(),
            Some(argmin::core::TerminationReason::SolverConverged)
        );
        ext.refinement = Some(Refinement {
            iterations: state.get_iter(),
            termination,
            converged,
            bracket_out: (grid0.si_to_out(a), grid0.si_to_out(b)),
        });
        let (Some(&x), true) = (state.get_best_param(), converged) else {
            return ext;
        };
        // Converged onto the best grid point itself (an end of the range or
        // of the solved region): keep the grid point and what is said of it.
        // On a flat extreme the speed's own rounding noise (~1e-16) limits
        // where Brent can place it to about sqrt(noise) of the bracket, so
        // anything within 1e-5 of the bracket width counts as the grid point.
        let tol = 3.0 * (f64::EPSILON.sqrt() * x.abs() + t_abs) + 1e-5 * (b - a);
        if (x - grid_si[0]).abs() <= tol {
            return ext;
        }
        let Some((speed, bits)) = self.speed_at(branch, &grid_si, x, kind) else {
            return ext;
        };
        if sign * speed < sign * best.speed {
            ext.speed_m_s = speed;
            ext.branches = branch_names(bits);
            ext.at_si[0] = x;
            ext.at_out[0] = grid0.si_to_out(x);
            ext.at_end[0] = false;
            ext.unsolved_neighbour_si = None;
        }
        ext
    }
}

/// Argmin cost function: the required speed along the first axis (negated
/// for a maximum), a large finite penalty where nothing solves.
pub(crate) struct SpeedAlong<'a> {
    plan: &'a Plan,
    branch: BranchChoice,
    si: Vec<f64>,
    kind: ExtremeKind,
    penalty: f64,
}

impl argmin::core::CostFunction for SpeedAlong<'_> {
    type Param = f64;
    type Output = f64;

    fn cost(&self, x: &f64) -> Result<f64, argmin::core::Error> {
        Ok(
            match self.plan.speed_at(self.branch, &self.si, *x, self.kind) {
                Some((v, _)) => self.kind.sign() * v,
                None => self.penalty,
            },
        )
    }
}
