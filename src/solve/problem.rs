//! A whole targeting problem and its solution: the types that `solve`,
//! `scan`, `batch` and every solver share, and the finishing step that turns
//! burnout states into solutions (partials, warnings, residuals, order).

use crate::error::{g, Error};
use crate::physics::body::Body;
use crate::physics::site::SiteInputs;
use crate::physics::state::Branch;
use crate::physics::state::BurnoutState;
use crate::solve::feasibility::{check_state, Warning};
use crate::solve::sensitivity::Sensitivity;
use crate::solve::target::{Target, TargetQuantity};

/// A targeting problem in SI units.
#[derive(Debug, Clone, PartialEq)]
pub struct Problem {
    /// The central body.
    pub body: Body,
    /// Burnout radius from the body's centre, m; `None` to solve for it
    /// (needs speed and flight-path angle fixed).
    pub burnout_radius_m: Option<f64>,
    /// Target quantities (radii measured from the centre).
    pub targets: Vec<Target>,
    /// Fixed flight-path angle at burnout, rad, if given.
    pub flight_path_angle_rad: Option<f64>,
    /// Fixed burnout speed, m/s, if given.
    pub speed_m_s: Option<f64>,
    /// Lowest periapsis altitude treated as safe, m; `None` uses the body's default.
    pub min_periapsis_alt_m: Option<f64>,
    /// The launch site the vehicle flies from, if any: the launch azimuth is
    /// then part of the answer (see [`crate::solve::launch`]).
    pub site: Option<SiteInputs>,
    /// Altitude above which the reports time the flight (`--above-alt`), m.
    pub above_alt_m: Option<f64>,
}

/// One solution: a burnout state with its sensitivities and warnings.
#[derive(Debug, Clone, PartialEq)]
pub struct Solution {
    /// The burnout state and the orbit it reaches.
    pub state: BurnoutState,
    /// Partials of the orbit with respect to the burnout state.
    pub sensitivity: Sensitivity,
    /// Warnings about this solution.
    pub warnings: Vec<Warning>,
    /// Launch-site geometry, when a site was given.
    pub site: Option<crate::physics::site::SiteState>,
    /// Achieved minus targeted value of each target at this solution, keyed
    /// as [`TargetQuantity::key`] (SI; the angle to apoapsis in degrees).
    pub residuals: Vec<(String, f64)>,
}

/// How a problem was answered.
#[derive(Debug, Clone, PartialEq)]
pub struct SolverReport {
    /// `closed-form`, or the numerical method used.
    pub method: String,
    /// Iterations taken (0 for closed form).
    pub iterations: u64,
    /// Why the solver stopped.
    pub termination: String,
    /// Achieved minus targeted value of each target, in SI (key, value), for
    /// the first solution.
    pub residuals: Vec<(String, f64)>,
}

/// The answer to a [`Problem`].
#[derive(Debug, Clone, PartialEq)]
pub struct Solved {
    /// The body.
    pub body: Body,
    /// Burnout radius of the first solution, m.
    pub burnout_radius_m: f64,
    /// Every solution found, ascending branch first.
    pub solutions: Vec<Solution>,
    /// How it was solved.
    pub solver: SolverReport,
    /// The problem answered (its inputs in SI, echoed by the reports).
    pub problem: Problem,
}

impl Solved {
    /// Checks that every number of every solution is finite (a quantity that
    /// does not exist for the orbit, such as the apoapsis of a hyperbola, is
    /// `None`, not infinite).
    ///
    /// # Errors
    /// [`Error::NonFiniteResult`] naming the first quantity that is not.
    pub fn check_finite(&self) -> Result<(), Error> {
        self.solutions
            .iter()
            .try_for_each(|s| check_state_finite(self.body.mu_m3_s2, &s.state, &s.sensitivity))
    }

    /// The burnout radius shared by every solution, m; `None` when the
    /// solutions lie at different radii (the radius was solved for and has
    /// several roots).
    pub fn shared_burnout_radius_m(&self) -> Option<f64> {
        let r = self.burnout_radius_m;
        self.solutions
            .iter()
            .all(|s| (s.state.radius_m - r).abs() <= 1e-12 * r)
            .then_some(r)
    }

    /// All warnings of all solutions, in order, without repeats.
    pub fn warnings(&self) -> Vec<String> {
        self.warning_texts(|w| w.to_string())
    }

    /// Every solution's warnings worded by `text`, each distinct text once,
    /// in solution order.
    pub fn warning_texts(&self, text: impl Fn(&Warning) -> String) -> Vec<String> {
        let mut out: Vec<String> = Vec::new();
        for s in &self.solutions {
            for w in &s.warnings {
                let t = text(w);
                if !out.contains(&t) {
                    out.push(t);
                }
            }
        }
        out
    }
}

/// Checks that a solved state, its orbit and its partials are finite
/// (quantities the orbit lacks are `None`, not infinite).
///
/// # Errors
/// [`Error::NonFiniteResult`] naming the first quantity that is not.
pub fn check_state_finite(
    mu_m3_s2: f64,
    st: &BurnoutState,
    sensitivity: &Sensitivity,
) -> Result<(), Error> {
    let c = &st.conic;
    let values: [(&'static str, Option<f64>); 12] = [
        ("burnout radius (m)", Some(st.radius_m)),
        ("burnout speed (m/s)", Some(st.speed_m_s)),
        ("flight-path angle (rad)", Some(st.flight_path_angle_rad)),
        ("true anomaly (rad)", Some(st.true_anomaly_rad)),
        ("periapsis radius (m)", Some(c.periapsis_radius_m())),
        ("apoapsis radius (m)", c.apoapsis_radius_m()),
        ("semi-major axis (m)", c.sma_m()),
        ("eccentricity", Some(c.ecc())),
        ("period (s)", c.period_s(mu_m3_s2)),
        ("c3 (m2/s2)", Some(c.c3_m2_s2(mu_m3_s2))),
        (
            "angular momentum (m2/s)",
            Some(c.angular_momentum_m2_s(mu_m3_s2)),
        ),
        (
            "specific energy (j/kg)",
            Some(c.specific_energy_j_kg(mu_m3_s2)),
        ),
    ];
    for (quantity, v) in values {
        if let Some(v) = v.filter(|v| !v.is_finite()) {
            return Err(Error::NonFiniteResult { quantity, value: v });
        }
    }
    for row in sensitivity.rows.iter().flatten() {
        if let Some(v) = row.iter().find(|v| !v.is_finite()) {
            return Err(Error::NonFiniteResult {
                quantity: "sensitivity partial",
                value: *v,
            });
        }
    }
    Ok(())
}

fn coast(mu_m3_s2: f64, state: &BurnoutState) -> Option<crate::physics::kepler::CoastTimes> {
    crate::physics::kepler::coast_times(
        mu_m3_s2,
        state.radius_m,
        state.speed_m_s,
        state.flight_path_angle_rad,
    )
}

/// Value of a target quantity achieved by a state, SI.
pub fn achieved(mu_m3_s2: f64, state: &BurnoutState, q: TargetQuantity) -> Option<f64> {
    let c = &state.conic;
    match q {
        TargetQuantity::PeriapsisRadius => Some(c.periapsis_radius_m()),
        TargetQuantity::ApoapsisRadius => c.apoapsis_radius_m(),
        TargetQuantity::Sma => c.sma_m(),
        TargetQuantity::Ecc => Some(c.ecc()),
        TargetQuantity::Period => c.period_s(mu_m3_s2),
        TargetQuantity::C3 => Some(c.c3_m2_s2(mu_m3_s2)),
        TargetQuantity::SemiLatusRectum => Some(c.semi_latus_rectum_m()),
        TargetQuantity::SpecificEnergy => Some(c.specific_energy_j_kg(mu_m3_s2)),
        TargetQuantity::TimeToApoapsis => coast(mu_m3_s2, state)?.to_apoapsis_s,
        TargetQuantity::TimeToPeriapsis => coast(mu_m3_s2, state)?.to_periapsis_s,
        TargetQuantity::AngleToApoapsis => {
            c.apoapsis_radius_m()?;
            crate::physics::kepler::angle_to_apoapsis_rad(
                crate::physics::orbit::EnergyRatio::new(mu_m3_s2, state.radius_m, state.speed_m_s),
                state.flight_path_angle_rad,
            )
        }
    }
}

/// Achieved minus targeted value of each target at a state, keyed as
/// [`TargetQuantity::key`]: SI, except the angle to apoapsis, in degrees and
/// wrapped to (-180, 180]. NaN where the state's orbit lacks the quantity.
pub(crate) fn target_residuals(
    mu_m3_s2: f64,
    targets: &[Target],
    st: &BurnoutState,
) -> Vec<(String, f64)> {
    targets
        .iter()
        .map(|t| {
            let got = achieved(mu_m3_s2, st, t.quantity).unwrap_or(f64::NAN);
            let mut d = got - t.value;
            if t.quantity == TargetQuantity::AngleToApoapsis {
                let pi = std::f64::consts::PI;
                d = ((d + pi).rem_euclid(2.0 * pi) - pi).to_degrees();
            }
            (t.quantity.key().to_string(), d)
        })
        .collect()
}

pub(crate) fn closed_form_report(problem: &Problem, first: Option<&BurnoutState>) -> SolverReport {
    let residuals = first
        .map(|st| target_residuals(problem.body.mu_m3_s2, &problem.targets, st))
        .unwrap_or_default();
    SolverReport {
        method: "closed-form".into(),
        iterations: 0,
        termination: "exact".into(),
        residuals,
    }
}

/// Attaches sensitivities and warnings, orders ascending first, and fills the
/// closed-form residuals.
pub(crate) fn finish(
    problem: &Problem,
    mut states: Vec<BurnoutState>,
    mut report: SolverReport,
) -> Solved {
    let body = &problem.body;
    let min_alt = problem
        .min_periapsis_alt_m
        .or(body.min_safe_periapsis_alt_m);
    states.sort_by(|a, b| {
        (a.branch as u8)
            .cmp(&(b.branch as u8))
            .then(a.speed_m_s.total_cmp(&b.speed_m_s))
            .then(a.radius_m.total_cmp(&b.radius_m))
    });
    if report.method == "closed-form" {
        report = closed_form_report(problem, states.first());
    }
    let solutions: Vec<Solution> = states
        .into_iter()
        .map(|state| Solution {
            sensitivity: crate::solve::sensitivity::partials_for_state(body.mu_m3_s2, &state),
            warnings: check_state(body, &state, min_alt),
            site: None,
            residuals: target_residuals(body.mu_m3_s2, &problem.targets, &state),
            state,
        })
        .collect();
    let burnout_radius_m = solutions
        .first()
        .map(|s| s.state.radius_m)
        .or(problem.burnout_radius_m)
        .unwrap_or(f64::NAN);
    Solved {
        body: body.clone(),
        burnout_radius_m,
        solutions,
        solver: report,
        problem: problem.clone(),
    }
}

/// Describes a radius as an altitude above `body` for messages.
pub fn describe_alt(body: &Body, radius_m: f64) -> String {
    format!("{} km altitude", g((radius_m - body.radius_m) / 1e3))
}

/// The parts of a solution that a row shows (a [`Solution`], or the
/// allocation-free answer of [`crate::solve::fast_pair`]).
#[derive(Debug, Clone, Copy)]
pub struct SolutionView<'a> {
    /// The burnout state and its orbit.
    pub state: &'a BurnoutState,
    /// Its partials.
    pub sensitivity: &'a Sensitivity,
    /// Its warnings.
    pub warnings: &'a [Warning],
    /// Its launch-site geometry, if a site was given.
    pub site: Option<&'a crate::physics::site::SiteState>,
}

impl<'a> From<&'a Solution> for SolutionView<'a> {
    fn from(s: &'a Solution) -> Self {
        SolutionView {
            state: &s.state,
            sensitivity: &s.sensitivity,
            warnings: &s.warnings,
            site: s.site.as_ref(),
        }
    }
}

/// Which branches a scan or batch row keeps.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Default)]
pub enum BranchChoice {
    /// Flight-path angle >= 0 only.
    Ascending,
    /// Flight-path angle <= 0 only.
    Descending,
    /// Every solution.
    #[default]
    Both,
}

impl BranchChoice {
    /// Reads `ascending`, `descending` or `both` (an empty text is `both`).
    ///
    /// # Errors
    /// [`Error::InvalidValue`] naming `origin` (a flag or column) and the text.
    pub fn from_name(origin: &str, text: &str) -> Result<BranchChoice, Error> {
        match text.trim().to_ascii_lowercase().as_str() {
            "" | "both" => Ok(BranchChoice::Both),
            "ascending" => Ok(BranchChoice::Ascending),
            "descending" => Ok(BranchChoice::Descending),
            _ => Err(Error::InvalidValue {
                flag: origin.to_string(),
                text: text.to_string(),
                kind: "branch",
                reason: "expected ascending, descending or both".into(),
            }),
        }
    }

    /// Name as written on the command line.
    pub fn name(self) -> &'static str {
        match self {
            BranchChoice::Ascending => "ascending",
            BranchChoice::Descending => "descending",
            BranchChoice::Both => "both",
        }
    }

    /// Whether a solution on `branch` is kept.
    pub fn keeps(self, branch: Branch) -> bool {
        match self {
            BranchChoice::Both => true,
            BranchChoice::Ascending => branch == Branch::Ascending,
            BranchChoice::Descending => branch == Branch::Descending,
        }
    }
}

/// The solutions of `solved` on the kept branches, in solve order.
pub fn kept(solved: &Solved, choice: BranchChoice) -> impl Iterator<Item = &Solution> {
    solved
        .solutions
        .iter()
        .filter(move |s| choice.keeps(s.state.branch))
}

/// Message for a solved problem none of whose solutions (on `found`
/// branches) is on the kept branch.
pub fn no_branch_message(found: impl Iterator<Item = Branch>, choice: BranchChoice) -> String {
    let found: Vec<&str> = found.map(|b| b.name()).collect();
    format!(
        "no solution on the {} branch (the solutions found are {})",
        choice.name(),
        if found.is_empty() {
            "none".to_string()
        } else {
            found.join(", ")
        }
    )
}

#[cfg(test)]
#[allow(clippy::float_cmp)] // exact zeros, exact parabolas and mirror images are asserted on purpose
mod tests {
    use super::*;
    use crate::solve::solve;
    use approx::assert_relative_eq;
    use TargetQuantity as Q;

    fn earth_problem(alt_m: f64, targets: Vec<Target>) -> Problem {
        let body = Body::from_name("earth").unwrap();
        Problem {
            burnout_radius_m: Some(body.radius_m + alt_m),
            body,
            targets,
            flight_path_angle_rad: None,
            speed_m_s: None,
            min_periapsis_alt_m: None,
            site: None,
            above_alt_m: None,
        }
    }

    #[test]
    fn apsides_pair_solves_both_branches_with_zero_residuals() {
        let re = crate::physics::body::EARTH_RADIUS_M;
        let p = earth_problem(
            400e3,
            vec![
                Target::new(Q::PeriapsisRadius, re + 200e3),
                Target::new(Q::ApoapsisRadius, re + 35_786e3),
            ],
        );
        let s = solve(&p).unwrap();
        assert_eq!(s.solutions.len(), 2);
        assert_eq!(s.solver.method, "closed-form");
        for (_, res) in &s.solver.residuals {
            assert!(res.abs() < 1e-6, "{res}");
        }
    }

    #[test]
    fn burnout_under_surface_is_an_error() {
        let p = earth_problem(-1e3, vec![]);
        assert!(matches!(solve(&p), Err(Error::BelowSurface { .. })));
    }

    #[test]
    fn single_target_alone_is_a_usage_error() {
        let p = earth_problem(200e3, vec![Target::new(Q::Sma, 7e6)]);
        let e = solve(&p).unwrap_err();
        assert!(matches!(e, Error::Usage(_)));
        // The core names quantities, never flags; the mention says which.
        let text = e.to_string();
        assert!(text.starts_with("semi-major axis alone leaves"), "{text}");
        assert!(!text.contains("--"), "{text}");
        assert_eq!(e.mentions(), vec!["sma_m", "fpa", "speed"]);
    }

    #[test]
    fn forward_problem_reports_orbit() {
        let mut p = earth_problem(200e3, vec![]);
        let v = (p.body.mu_m3_s2 / p.burnout_radius_m.unwrap()).sqrt();
        p.speed_m_s = Some(v);
        p.flight_path_angle_rad = Some(0.0);
        let s = solve(&p).unwrap();
        assert_relative_eq!(
            s.solutions[0].state.conic.periapsis_radius_m(),
            p.burnout_radius_m.unwrap(),
            max_relative = 1e-14
        );
    }

    #[test]
    fn suborbital_target_warns_but_solves() {
        let re = crate::physics::body::EARTH_RADIUS_M;
        let mut p = earth_problem(0.0, vec![Target::new(Q::ApoapsisRadius, re + 100e3)]);
        p.flight_path_angle_rad = Some(80f64.to_radians());
        let s = solve(&p).unwrap();
        assert!(
            s.warnings()[0].starts_with("suborbital"),
            "{:?}",
            s.warnings()
        );
    }

    #[test]
    fn curtis_mars_departure_injection_speed() {
        // Curtis, Orbital Mechanics for Engineering Students, 3rd ed., Example 8.3
        // (from memory): departure from a 300 km circular parking orbit on a
        // hyperbola with v_inf = 2.943 km/s needs a perigee speed of 11.32 km/s,
        // a delta-v of 3.590 km/s over the 7.726 km/s circular speed
        // (mu = 398600 km^3/s^2, Earth radius 6378 km).
        let body = Body::custom(398_600e9, 6_378e3).unwrap();
        let r = 6_678e3;
        let v_inf: f64 = 2_943.0;
        let p = Problem {
            body,
            burnout_radius_m: Some(r),
            targets: vec![
                Target::new(Q::PeriapsisRadius, r),
                Target::new(Q::C3, v_inf * v_inf),
            ],
            flight_path_angle_rad: None,
            speed_m_s: None,
            min_periapsis_alt_m: None,
            site: None,
            above_alt_m: None,
        };
        let s = solve(&p).unwrap();
        assert_eq!(s.solutions.len(), 1);
        let v = s.solutions[0].state.speed_m_s;
        assert_relative_eq!(v, 11_315.0, max_relative = 1e-4);
        assert_relative_eq!(v - (398_600e9f64 / r).sqrt(), 3_590.0, max_relative = 5e-4);
    }

    #[test]
    fn curtis_perigee_speed_example() {
        // Curtis, Orbital Mechanics for Engineering Students, 3rd ed., Example 2.8
        // (from memory; example number and last digits not re-checked): an earth
        // satellite with perigee altitude 1270 km and perigee speed 9 km/s has
        // e = 0.554, apogee altitude about 20 280 km and period about 6.2 h.
        let body = Body::custom(398_600e9, 6_378e3).unwrap();
        let p = Problem {
            body,
            burnout_radius_m: Some(7_648e3),
            targets: vec![],
            flight_path_angle_rad: Some(0.0),
            speed_m_s: Some(9_000.0),
            min_periapsis_alt_m: None,
            site: None,
            above_alt_m: None,
        };
        let s = solve(&p).unwrap();
        let c = s.solutions[0].state.conic;
        assert_relative_eq!(c.ecc(), 0.554, max_relative = 2e-3);
        assert_relative_eq!(
            c.apoapsis_radius_m().unwrap() - 6_378e3,
            20_280e3,
            max_relative = 2e-3
        );
        assert_relative_eq!(
            c.period_s(398_600e9).unwrap() / 3600.0,
            6.2,
            max_relative = 1e-2
        );
    }
}
