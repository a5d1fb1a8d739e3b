//! The minimum and maximum required speed of a scan: found on the grid,
//! then refined along the first swept input with Brent's method (argmin's
//! `BrentOpt`) between the grid neighbours of the best point.
//!
//! Only solutions that count take part ([`counts`]): by default a
//! suborbital solution (one that meets the surface) is a row of the table but
//! not a candidate for the least or greatest speed, since it does not reach
//! an orbit; [`super::ScanOptions::extremes_include_suborbital`] counts it.

use super::plan::Plan;
use super::point::required_speed;
use super::ScanOptions;
use crate::physics::state::Branch;
use crate::solve::feasibility::Warning;
use crate::solve::problem::kept;

/// Whether a solution with these warnings takes part in the extremes.
pub(crate) fn counts(opts: &ScanOptions, warnings: &[Warning]) -> bool {
    opts.extremes_include_suborbital
        || !warnings
            .iter()
            .any(|w| matches!(w, Warning::Suborbital { .. }))
}

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
    /// When the extreme is a grid point next to one whose kept solutions
    /// are all suborbital, so do not count (along the first axis): that
    /// neighbour, SI. The extreme is then at the edge of the orbital region.
    pub suborbital_neighbour_si: Option<f64>,
}

/// What a point along the first axis gives the extremes.
#[derive(Debug, Clone, Copy, PartialEq)]
enum Along {
    /// The best counted speed, m/s, and the branches that need it.
    Counted(f64, u8),
    /// Kept solutions, every one suborbital (not counted).
    SuborbitalOnly,
    /// No kept solution.
    Unsolved,
}

impl Along {
    fn counted(self) -> Option<(f64, u8)> {
        match self {
            Along::Counted(v, bits) => Some((v, bits)),
            _ => None,
        }
    }
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
    /// counted speed (signed: lower is better) and the branches that need it.
    fn speed_at(&self, opts: &ScanOptions, si: &[f64], x_si: f64, kind: ExtremeKind) -> Along {
        let mut point = si.to_vec();
        point[0] = x_si;
        let Ok(solved) = self.solve_si(&point, &mut self.scratch()) else {
            return Along::Unsolved;
        };
        let mut best: Option<GridExtreme> = None;
        let mut any = false;
        for s in kept(&solved, opts.branch) {
            any = true;
            if !counts(opts, &s.warnings) {
                continue;
            }
            // A point between grid points can land within rounding of an
            // apsis (Brent placing a stationary speed): its state is then
            // labelled as apsis states are, not by the sign of a radial speed
            // that is only rounding.
            fold_extreme(
                &mut best,
                GridExtreme {
                    speed: required_speed(&s.state, s.site.as_ref()),
                    idx: 0,
                    branches: branch_bit(s.state.branch_label()),
                },
                kind.sign(),
            );
        }
        match best {
            Some(b) => Along::Counted(b.speed, b.branches),
            None if any => Along::SuborbitalOnly,
            None => Along::Unsolved,
        }
    }

    /// The first axis's value at which burnout is at an apsis (flight-path
    /// angle exactly 0), when the first axis sets the flight-path angle.
    fn apsis_on_first_axis(&self) -> Option<f64> {
        match self.axes[0].key.as_str() {
            "fpa" => Some(0.0),
            // As the setter turns a zenith angle into a flight-path angle:
            // 90 deg gives exactly 0.
            "zenith" => Some(std::f64::consts::FRAC_PI_2),
            _ => None,
        }
    }

    pub(crate) fn refine(
        &self,
        opts: &ScanOptions,
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
            suborbital_neighbour_si: None,
        };
        let grid0 = &self.axes[0].grid;
        let n0 = grid0.len();
        if n0 < 2 {
            return ext;
        }
        // The bracket: the grid neighbours that solve with a counted
        // solution. A neighbour that does not marks the edge of the solved
        // (or orbital) region; the speed often runs off to infinity there,
        // so the search stays on this side.
        let i0 = ix[0];
        let at = |i: usize| self.speed_at(opts, &grid_si, grid0.si(i), kind);
        let left = i0.checked_sub(1).map(|i| (i, at(i)));
        let right = (i0 + 1 < n0).then(|| (i0 + 1, at(i0 + 1)));
        let ok = |nb: Option<(usize, Along)>| nb.filter(|(_, a)| a.counted().is_some());
        let (left_ok, right_ok) = (ok(left).map(|x| x.0), ok(right).map(|x| x.0));
        let edge = |what: Along| {
            [left, right]
                .iter()
                .flatten()
                .find(|(_, a)| *a == what)
                .map(|(i, _)| grid0.si(*i))
        };
        ext.unsolved_neighbour_si = edge(Along::Unsolved);
        ext.suborbital_neighbour_si = ext
            .unsolved_neighbour_si
            .is_none()
            .then(|| edge(Along::SuborbitalOnly))
            .flatten();
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
            opts: *opts,
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
        let Some((mut speed, mut bits)) = self.speed_at(opts, &grid_si, x, kind).counted() else {
            return ext;
        };
        // An extreme Brent places within its tolerance of an apsis (a
        // flight-path angle of 0, where the speed is stationary, e.g. an
        // apoapsis target's greatest speed) lands on one side of it by
        // rounding alone, and that side would name the branch: take the
        // apsis itself when it does at least as well. There the state has no
        // radial speed and is labelled ascending, like every apsis.
        let mut x = x;
        if let Some(apsis) = self.apsis_on_first_axis() {
            if (x - apsis).abs() <= tol && (a..=b).contains(&apsis) {
                if let Some((v0, bits0)) = self.speed_at(opts, &grid_si, apsis, kind).counted() {
                    if same_speed(v0, speed) || sign * v0 < sign * speed {
                        (x, speed, bits) = (apsis, v0, bits0);
                    }
                }
            }
        }
        if sign * speed < sign * best.speed {
            ext.speed_m_s = speed;
            ext.branches = branch_names(bits);
            ext.at_si[0] = x;
            ext.at_out[0] = grid0.si_to_out(x);
            ext.at_end[0] = false;
            ext.unsolved_neighbour_si = None;
            ext.suborbital_neighbour_si = None;
        }
        ext
    }
}

/// Argmin cost function: the required speed along the first axis (negated
/// for a maximum), a large finite penalty where nothing counted solves.
pub(crate) struct SpeedAlong<'a> {
    plan: &'a Plan,
    opts: ScanOptions,
    si: Vec<f64>,
    kind: ExtremeKind,
    penalty: f64,
}

impl argmin::core::CostFunction for SpeedAlong<'_> {
    type Param = f64;
    type Output = f64;

    fn cost(&self, x: &f64) -> Result<f64, argmin::core::Error> {
        Ok(
            match self.plan.speed_at(&self.opts, &self.si, *x, self.kind) {
                Along::Counted(v, _) => self.kind.sign() * v,
                Along::SuborbitalOnly | Along::Unsolved => self.penalty,
            },
        )
    }
}
