//! `burnout budget`: burnout error budget for a solved targeting problem.

use super::{BudgetFlags, Format, ProblemArgs};
use burnout::input::case::overlay;
use burnout::input::problem::{budget_from_inputs, name_flags, solve_inputs, Inputs};
use burnout::report::budget::{write_json, write_table, BudgetReport};
use burnout::solve::budget::{allowed_errors, map_errors};
use burnout::Error;

/// Arguments of `burnout budget`.
#[derive(clap::Args, Debug)]
pub struct Args {
    #[command(flatten)]
    problem: ProblemArgs,
    #[command(flatten)]
    budget: BudgetFlags,
    /// Which solution(s) to analyse.
    #[arg(long, value_enum, default_value_t = BranchArg::Both)]
    branch: BranchArg,
    /// Output format (table or json).
    #[arg(long, value_enum, default_value_t = Format::Table)]
    format: Format,
}

/// Branch selection.
#[derive(clap::ValueEnum, Clone, Copy, Debug, PartialEq, Eq)]
pub enum BranchArg {
    /// Ascending solutions only.
    Ascending,
    /// Descending solutions only.
    Descending,
    /// Every solution.
    Both,
}

/// Runs the budget; returns the exit code.
pub fn run(args: Args) -> Result<i32, Error> {
    let flags: Inputs = args.budget.flags.clone();
    super::reject_empty(&flags)?;
    let (case_inputs, title) = args.problem.inputs_and_title()?;
    let inputs = overlay(case_inputs, &flags);
    let (errors, tolerances) = budget_from_inputs(&inputs)?;
    check_budget_magnitudes(&inputs)?;
    if errors.is_none() && tolerances.is_none() {
        return Err(Error::Usage(
            "nothing to budget: give burnout errors (--speed-sigma, --fpa-sigma, --alt-sigma) and/or orbit tolerances (--periapsis-tol, --apoapsis-tol, ...)".into(),
        ));
    }
    let solved = solve_inputs(&inputs)?;
    let mu = solved.body.mu_m3_s2;
    let mut reports = Vec::new();
    for s in &solved.solutions {
        let keep = match args.branch {
            BranchArg::Both => true,
            BranchArg::Ascending => s.state.branch == burnout::physics::state::Branch::Ascending,
            BranchArg::Descending => s.state.branch == burnout::physics::state::Branch::Descending,
        };
        if !keep {
            continue;
        }
        reports.push(BudgetReport {
            solution: s,
            tolerances: tolerances.as_ref(),
            warnings: implausible_sigmas(&inputs, s.state.speed_m_s),
            mapped: errors
                .as_ref()
                .map(|e| map_errors(mu, &s.state, e))
                .transpose()
                .map_err(|e| name_flags(e, &inputs))?,
            allowed: tolerances
                .as_ref()
                .map(|t| allowed_errors(mu, &s.state, t))
                .transpose()
                .map_err(|e| name_flags(e, &inputs))?,
        });
    }
    if reports.is_empty() {
        return Err(Error::Infeasible(format!(
            "no {} solution to budget",
            match args.branch {
                BranchArg::Ascending => "ascending",
                BranchArg::Descending => "descending",
                BranchArg::Both => "",
            }
        )));
    }
    let mut buf = Vec::new();
    let io = |e: std::io::Error| Error::Io(format!("cannot write output: {e}"));
    match args.format {
        Format::Json => write_json(&mut buf, &reports).map_err(io)?,
        Format::Table => {
            if let Some(title) = title.filter(|t| !t.trim().is_empty()) {
                buf.extend_from_slice(format!("case: {}\n\n", title.trim()).as_bytes());
            }
            write_table(&mut buf, &reports).map_err(io)?
        }
        Format::Csv => {
            return Err(Error::Usage(
                "--format csv is not available for budget: use table or json".into(),
            ))
        }
    }
    super::emit(&buf)?;
    Ok(0)
}

/// Smallest sigma or tolerance accepted, in SI (m, m/s, rad, s; a ratio for
/// --ecc-tol). The budget squares these and inverts the squares: below
/// 1e-150 the square underflows and the ellipsoid's axes come out NaN.
const MIN_BUDGET_SI: f64 = 1e-150;

/// A one-line error for a sigma or tolerance so small that the budget's
/// arithmetic would give non-finite numbers.
fn check_budget_magnitudes(inputs: &Inputs) -> Result<(), Error> {
    for key in [
        "speed-sigma",
        "fpa-sigma",
        "alt-sigma",
        "periapsis-tol",
        "apoapsis-tol",
        "sma-tol",
        "ecc-tol",
        "period-tol",
    ] {
        let (Some(text), Some(kind)) = (inputs.get(key), burnout::input::problem::kind_of(key))
        else {
            continue;
        };
        let flag = format!("--{key}");
        let Ok(value) = burnout::input::units::parse(&flag, text, kind) else {
            continue; // budget_from_inputs has reported it already
        };
        if value.si != 0.0 && value.si.abs() < MIN_BUDGET_SI {
            return Err(Error::Usage(format!(
                "{flag} '{}' is {:e} in SI units: expected 0 or at least {MIN_BUDGET_SI:e} (m, m/s, rad, s, or a ratio for --ecc-tol)",
                text.trim(),
                value.si
            )));
        }
    }
    Ok(())
}

/// Warnings for 1-sigma errors implausible against the nominal, naming the
/// unit the value was read in: a bare `--speed-sigma 2` is 2 km/s. Limits
/// (common practice for burnout dispersions, generous on purpose): speed
/// sigma above 2 % of the burnout speed, flight-path angle sigma above
/// 2 deg, altitude sigma above 50 km.
fn implausible_sigmas(inputs: &Inputs, speed_m_s: f64) -> Vec<String> {
    let mut out = Vec::new();
    let read = |key: &str| -> Option<(String, f64)> {
        let text = inputs.get(key)?;
        let kind = burnout::input::problem::kind_of(key)?;
        let v = burnout::input::units::parse(&format!("--{key}"), text, kind).ok()?;
        Some((text.trim().to_string(), v.si))
    };
    let bare = |text: &str| !text.chars().any(|c| c.is_ascii_alphabetic());
    if let Some((text, v)) = read("speed-sigma") {
        if v > 0.02 * speed_m_s {
            out.push(format!(
                "--speed-sigma '{text}' was read as {} m/s{}, {:.0}% of the burnout speed {} m/s: write the unit (e.g. '{text}m/s') if that is not meant",
                sig(v),
                if bare(&text) { " (a bare number is km/s)" } else { "" },
                100.0 * v / speed_m_s,
                sig(speed_m_s)
            ));
        }
    }
    if let Some((text, v)) = read("fpa-sigma") {
        if v > 2f64.to_radians() {
            out.push(format!(
                "--fpa-sigma '{text}' was read as {} deg{}: an unusually large 1-sigma angle error",
                sig(v.to_degrees()),
                if bare(&text) {
                    " (a bare number is deg)"
                } else {
                    ""
                }
            ));
        }
    }
    if let Some((text, v)) = read("alt-sigma") {
        if v > 50e3 {
            out.push(format!(
                "--alt-sigma '{text}' was read as {} km{}: an unusually large 1-sigma altitude error",
                sig(v / 1e3),
                if bare(&text) { " (a bare number is km)" } else { "" }
            ));
        }
    }
    out
}

/// Five significant digits.
fn sig(x: f64) -> String {
    let a = x.abs();
    if a == 0.0 || !(1e-3..1e7).contains(&a) {
        return format!("{x:e}");
    }
    let decimals = (4 - a.log10().floor() as i32).max(0) as usize;
    format!("{x:.decimals$}")
}
