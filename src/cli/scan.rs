//! `burnout scan`: a targeting table over ranges of any solve inputs.

use super::output::AtomicFile;
use super::progress::Progress;
use super::{Format, ProblemArgs, UnitsArg};
use burnout::report::scan::{ScanFormat, ScanWriter};
use burnout::scan::{Plan, ScanOptions};
use burnout::solve::problem::BranchChoice;
use burnout::Error;
use std::io::{BufWriter, Write};
use std::path::{Path, PathBuf};

/// Branches to keep.
#[derive(clap::ValueEnum, Clone, Copy, Debug, PartialEq, Eq)]
pub enum BranchArg {
    /// Flight-path angle >= 0.
    Ascending,
    /// Flight-path angle <= 0.
    Descending,
    /// Both.
    Both,
}

impl From<BranchArg> for BranchChoice {
    fn from(b: BranchArg) -> Self {
        match b {
            BranchArg::Ascending => BranchChoice::Ascending,
            BranchArg::Descending => BranchChoice::Descending,
            BranchArg::Both => BranchChoice::Both,
        }
    }
}

/// Arguments of `burnout scan`.
#[derive(clap::Args, Debug)]
pub struct Args {
    #[command(flatten)]
    problem: ProblemArgs,
    /// Output format [default: csv for an --out ending in .csv, json for .json, else table].
    #[arg(long, value_enum)]
    format: Option<Format>,
    /// Write the rows to FILE instead of standard output (via a temporary file, then renamed);
    /// '-' is standard output.
    #[arg(long, value_name = "FILE")]
    out: Option<PathBuf>,
    /// Replace an existing --out or --plot file.
    #[arg(long)]
    force: bool,
    /// Add the 15 sensitivity columns d_<row>_d_<col> (CSV and JSON).
    #[arg(long)]
    sensitivities: bool,
    /// Add the flight-plan columns (times to the apsides, apsis speeds,
    /// v-infinity, impact, time above --above-alt; CSV and JSON).
    #[arg(long)]
    flight: bool,
    /// Draw required speed and flight-path angle against the first swept input, as SVG.
    #[arg(long, value_name = "FILE.svg")]
    plot: Option<PathBuf>,
    /// Branches to keep.
    #[arg(long, value_enum, default_value_t = BranchArg::Both)]
    branch: BranchArg,
    /// Let suborbital rows (solutions that meet the surface) be the minimum or maximum
    /// required speed; by default the extremes are taken over the other rows.
    #[arg(long)]
    extremes_include_suborbital: bool,
    /// Units of the human table.
    #[arg(long, value_enum, default_value_t = UnitsArg::Si)]
    units: UnitsArg,
}

fn format_for(format: Option<Format>, out: Option<&Path>) -> ScanFormat {
    let chosen = format.unwrap_or_else(|| {
        match out
            .and_then(|p| p.extension())
            .map(|e| e.to_string_lossy().to_ascii_lowercase())
            .as_deref()
        {
            Some("csv") => Format::Csv,
            Some("json") => Format::Json,
            _ => Format::Table,
        }
    });
    match chosen {
        Format::Table => ScanFormat::Table,
        Format::Csv => ScanFormat::Csv,
        Format::Json => ScanFormat::Json,
    }
}

/// Runs the scan; returns the exit code.
pub fn run(args: Args) -> Result<i32, Error> {
    let (inputs, title) = args.problem.inputs_and_title()?;
    let plan = Plan::new(&inputs)?;
    if args.plot.is_some() && plan.axes().len() > 2 {
        let flags: Vec<&str> = plan.axes().iter().map(|a| a.flag.as_str()).collect();
        return Err(Error::Usage(format!(
            "--plot draws one or two swept inputs, but this scan sweeps {} ({}): fix all but two",
            flags.len(),
            flags.join(", ")
        )));
    }
    if args.plot.as_deref().is_some_and(|p| p.as_os_str() == "-") {
        return Err(Error::Usage(
            "--plot '-': the figure needs a file name (FILE.svg)".into(),
        ));
    }
    plan.check_structure()?;
    let out_path = super::out_path(args.out.as_deref());
    let format = format_for(args.format, out_path);
    if out_path.is_none() {
        super::require_stdout()?;
    }
    // Claim the output files before the work, so a long scan cannot end
    // on "file exists".
    let mut out_file = out_path
        .map(|p| AtomicFile::create(p, args.force, "--out"))
        .transpose()?;
    let mut plot_file = args
        .plot
        .as_deref()
        .map(|p| AtomicFile::create(p, args.force, "--plot"))
        .transpose()?;
    // One file under two names (`sub/../x`, a link) is caught on the
    // resolved paths, before anything is written.
    if let (Some(o), Some(p)) = (&out_file, &plot_file) {
        if o.path() == p.path() {
            return Err(Error::Usage(format!(
                "--out '{}' and --plot '{}' are the same file '{}': give two files",
                shown(args.out.as_deref()),
                shown(args.plot.as_deref()),
                o.path().display()
            )));
        }
    }
    if let Some(case) = &args.problem.case {
        let case_path = crate::cli::output::resolved_input(Path::new(case));
        for (flag, f, given) in [
            ("--out", &out_file, args.out.as_deref()),
            ("--plot", &plot_file, args.plot.as_deref()),
        ] {
            if let Some(f) = f {
                if case_path.as_deref() == Some(f.path()) {
                    return Err(Error::Usage(format!(
                        "{flag} '{}' is the case file '{case}': write the results to another file",
                        shown(given)
                    )));
                }
            }
        }
    }
    let opts = ScanOptions {
        branch: args.branch.into(),
        parallel: true,
        samples: plot_file.is_some(),
        extremes_include_suborbital: args.extremes_include_suborbital,
    };
    let writer = ScanWriter {
        format,
        units: args.units.into(),
        sensitivities: args.sensitivities,
        flight: args.flight,
        title,
        branch: opts.branch,
    };
    let mut progress = Progress::new(plan.len() as u64, "points");
    let result = match out_file.as_mut() {
        Some(f) => plan.run(
            &opts,
            &writer,
            // Rows arrive in chunks of about a megabyte: written straight
            // through, never copied into a buffer first.
            f.file(),
            &mut |d| progress.update(d),
        ),
        None => plan.run(&opts, &writer, std::io::stdout(), &mut |d| {
            progress.update(d)
        }),
    };
    progress.finish();
    let report = match result {
        Ok(r) => r,
        Err(e) => return super::write_failure(e, out_file.as_ref().and(args.out.as_deref())),
    };
    // The figure is written before either file is committed, and the two
    // are committed together: both or neither.
    let mut files: Vec<AtomicFile> = out_file.into_iter().collect();
    if let Some(mut f) = plot_file.take() {
        if let Some(data) = writer.plot_data(&plan, &report).as_ref() {
            let given = shown(args.plot.as_deref());
            let mut w = BufWriter::new(f.file());
            burnout::report::plot::write_svg(&mut w, data)
                .and_then(|_| w.flush())
                .map_err(|e| Error::Io(format!("cannot write --plot '{given}': {e}")))?;
            drop(w);
            files.push(f);
        }
    }
    crate::cli::output::commit_all(files)?;
    if report.solved == 0 {
        crate::cli::diag::line(&format!(
            "error: no point of the scan solved ({} infeasible, {} invalid): see the status column",
            report.infeasible, report.invalid
        ));
        // The rows (with their reasons) are the scan's result, so they are
        // written; the run as a whole did not solve: exit 3, like a batch
        // whose rows failed.
        return Ok(3);
    }
    let table_on_stdout = format == ScanFormat::Table && out_path.is_none();
    if !table_on_stdout {
        for (i, line) in writer
            .summary_lines(&plan, &report, writer.units)
            .iter()
            .enumerate()
        {
            if i == 0 {
                let secs = progress.elapsed().as_secs_f64();
                crate::cli::diag::line(&format!("{line} in {secs:.2} s"));
            } else {
                crate::cli::diag::line(line);
            }
        }
    }
    Ok(0)
}

/// A path flag as the user gave it, for messages.
fn shown(p: Option<&Path>) -> String {
    p.map(|p| p.display().to_string()).unwrap_or_default()
}
