//! One grid point solved: through [`crate::solve()`] or, for a plain pair of
//! orbit-element targets, the allocation-free [`crate::solve::fast_pair`].

use crate::solve::fast_pair::LeanSolved;
use crate::solve::feasibility::Warning;
use crate::solve::problem::{SolutionView, Solved};

/// A solved grid point: through [`crate::solve()`], or, for a plain pair of
/// orbit-element targets, through the allocation-free [`crate::solve::fast_pair`]
/// (the same numbers, bit for bit; `lean`'s unit test and this module's
/// shortcut test hold them equal).
// Boxing the large variant would put a heap allocation back on every point.
#[allow(clippy::large_enum_variant)]
pub(crate) enum Point {
    Full(Solved),
    Lean {
        mu: f64,
        surface_radius_m: f64,
        lean: LeanSolved,
        warnings: [Vec<Warning>; 2],
    },
}

impl Point {
    pub(crate) fn mu(&self) -> f64 {
        match self {
            Point::Full(s) => s.body.mu_m3_s2,
            Point::Lean { mu, .. } => *mu,
        }
    }

    /// The problem's `--above-alt`, m (a lean point has none: the key is
    /// not one of the plain pair's).
    pub(crate) fn above_alt_m(&self) -> Option<f64> {
        match self {
            Point::Full(s) => s.problem.above_alt_m,
            Point::Lean { .. } => None,
        }
    }

    /// The body's surface radius, m.
    pub(crate) fn surface_radius_m(&self) -> f64 {
        match self {
            Point::Full(s) => s.body.radius_m,
            Point::Lean {
                surface_radius_m, ..
            } => *surface_radius_m,
        }
    }

    pub(crate) fn views(&self) -> impl Iterator<Item = SolutionView<'_>> {
        let (full, lean) = match self {
            Point::Full(s) => (Some(s), None),
            Point::Lean { lean, warnings, .. } => (None, Some((lean, warnings))),
        };
        full.into_iter()
            .flat_map(|s| s.solutions.iter().map(SolutionView::from))
            .chain(lean.into_iter().flat_map(|(l, w)| {
                (0..l.len).map(move |i| SolutionView {
                    state: &l.states[i],
                    sensitivity: &l.sensitivities[i],
                    warnings: &w[i],
                    site: None,
                })
            }))
    }
}

/// The speed a scan minimises and maximises: the inertial burnout speed, or,
/// with a launch site, the speed relative to the rotating surface (what the
/// vehicle must supply from that site: the cost of the orbit from there).
pub(crate) fn required_speed(
    state: &crate::physics::state::BurnoutState,
    site: Option<&crate::physics::site::SiteState>,
) -> f64 {
    site.map(|x| x.relative_speed_m_s)
        .unwrap_or(state.speed_m_s)
}
