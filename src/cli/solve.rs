//! `burnout solve`.

use super::{Format, ProblemArgs, UnitsArg};
use burnout::input::problem::solve_inputs;
use burnout::report;
use burnout::Error;

/// Arguments of `burnout solve`.
#[derive(clap::Args, Debug)]
pub struct Args {
    #[command(flatten)]
    problem: ProblemArgs,
    /// Output format.
    #[arg(long, value_enum, default_value_t = Format::Table)]
    format: Format,
    /// Units of the human table.
    #[arg(long, value_enum, default_value_t = UnitsArg::Si)]
    units: UnitsArg,
    /// With --format csv: add the 15 sensitivity columns.
    #[arg(long)]
    sensitivities: bool,
    /// Add the flight-plan columns (times to the apsides, apsis speeds,
    /// v-infinity, impact, time above --above-alt; CSV and JSON).
    #[arg(long)]
    flight: bool,
}

/// Solves and prints; returns the exit code.
pub fn run(args: Args) -> Result<i32, Error> {
    let (inputs, title) = args.problem.inputs_and_title()?;
    let solved = solve_inputs(&inputs)?;
    let mut buf = Vec::new();
    match args.format {
        Format::Table => {
            if let Some(title) = title.filter(|t| !t.trim().is_empty()) {
                buf.extend_from_slice(format!("case: {}\n\n", title.trim()).as_bytes());
            }
            report::table::write(&mut buf, &solved, args.units.into()).map_err(io)?
        }
        Format::Json => report::json::write(&mut buf, &solved).map_err(io)?,
        Format::Csv => report::csv::write(&mut buf, &solved, args.sensitivities, args.flight)
            .map_err(|e| Error::Io(format!("cannot write csv: {e}")))?,
    }
    super::emit(&buf)?;
    Ok(0)
}

fn io(e: std::io::Error) -> Error {
    Error::Io(format!("cannot write output: {e}"))
}
