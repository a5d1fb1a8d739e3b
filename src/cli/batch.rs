//! `burnout batch`: one targeting problem per row of a CSV file, streamed.

use super::diag;
use super::output::AtomicFile;
use super::progress::Progress;
use burnout::batch::{Batch, BatchError, BatchOptions};
use burnout::report::batch::BatchCsv;
use burnout::Error;
use std::io::{BufReader, BufWriter, Read};
use std::path::PathBuf;

/// Arguments of `burnout batch`.
#[derive(clap::Args, Debug)]
pub struct Args {
    /// Input CSV: a header of solve flags without dashes (id, body, burnout-alt, ...,
    /// optional branch), one case per row; '-' reads standard input.
    #[arg(value_name = "INPUT.csv")]
    input: PathBuf,
    /// Write the results to FILE instead of standard output (via a temporary file, then renamed);
    /// '-' is standard output.
    #[arg(long, value_name = "FILE")]
    out: Option<PathBuf>,
    /// Replace an existing --out file.
    #[arg(long)]
    force: bool,
    /// Add the 15 sensitivity columns d_<row>_d_<col>.
    #[arg(long)]
    sensitivities: bool,
    /// Add the flight-plan columns (times to the apsides, apsis speeds,
    /// v-infinity, impact, time above --above-alt; CSV and JSON).
    #[arg(long)]
    flight: bool,
    /// Neutralise input cells (id, carried columns, header names) that a spreadsheet would run as
    /// a formula (starting with =, +, -, @): prefix them with '. Plain numbers are kept.
    #[arg(long)]
    safe_cells: bool,
}

/// Runs the batch; returns the exit code (3 when any row did not solve).
pub fn run(args: Args) -> Result<i32, Error> {
    let shown = args.input.display().to_string();
    let out_path = super::out_path(args.out.as_deref());
    if out_path.is_none() {
        super::require_stdout()?;
    }
    let (input, size): (Box<dyn Read>, u64) = if shown == "-" {
        (Box::new(std::io::stdin().lock()), 0)
    } else {
        let file = std::fs::File::open(&args.input)
            .map_err(|e| Error::Io(format!("cannot read batch input '{shown}': {e}")))?;
        if file.metadata().map(|m| m.is_dir()).unwrap_or(false) {
            return Err(Error::Usage(format!(
                "batch input '{shown}' is a directory: expected a CSV file"
            )));
        }
        let size = file.metadata().map(|m| m.len()).unwrap_or(0);
        (Box::new(file), size)
    };
    let batch = Batch::open(BufReader::with_capacity(1 << 16, input))
        .map_err(|e| Error::Usage(format!("{e} ('{shown}')")))?;
    // Claim the output before the work, so a long run cannot end on
    // "file exists".
    let mut out_file = out_path
        .map(|p| AtomicFile::create(p, args.force, "--out"))
        .transpose()?;
    if let (Some(f), false) = (&out_file, shown == "-") {
        if crate::cli::output::resolved_input(&args.input).as_deref() == Some(f.path()) {
            return Err(Error::Usage(format!(
                "--out '{}' is the batch input '{shown}': write the results to another file",
                args.out.as_deref().unwrap_or(f.path()).display()
            )));
        }
    }
    // Warnings wait for the end: a run that fails prints its error alone.
    let mut warnings = Vec::new();
    if batch.is_empty() {
        warnings.push(format!(
            "warning: '{shown}' is empty: no header and no rows"
        ));
    }
    let unknown = batch.unknown_columns();
    if !unknown.is_empty() {
        let quoted: Vec<String> = unknown.iter().map(|c| format!("'{c}'")).collect();
        let many = unknown.len() > 1;
        warnings.push(format!(
            "warning: column{} {} {} not {}solve input{}: carried through to the output unchanged",
            if many { "s" } else { "" },
            quoted.join(", "),
            if many { "are" } else { "is" },
            if many { "" } else { "a " },
            if many { "s" } else { "" },
        ));
    }
    let opts = BatchOptions {
        sensitivities: args.sensitivities,
        flight: args.flight,
        parallel: true,
    };
    let sink = BatchCsv {
        safe_cells: args.safe_cells,
    };
    let mut progress = Progress::new(size, "bytes");
    let mut report = |_rows: u64, bytes: u64| progress.update(bytes);
    let result = match out_file.as_mut() {
        Some(f) => batch.run(
            &sink,
            BufWriter::with_capacity(1 << 20, f.file()),
            &opts,
            &mut report,
        ),
        None => batch.run(
            &sink,
            BufWriter::with_capacity(1 << 20, std::io::stdout()),
            &opts,
            &mut report,
        ),
    };
    progress.finish();
    let out_given = out_file.as_ref().and(args.out.as_deref());
    let dest = super::destination(out_given);
    let summary = match result {
        Ok(s) => s,
        Err(BatchError::Write(e)) => return super::write_failure(e, out_given),
        Err(BatchError::Read { error, done }) => {
            // The stop must show: with --out nothing is left (the temporary
            // file goes with `out_file`); on standard output the rows before
            // the stop are there, and this line and exit 2 say it is cut short.
            let written = match &out_file {
                Some(_) => format!("nothing written to {dest}"),
                None => format!(
                    "standard output is incomplete: it holds the {} output rows of the {} input rows before it",
                    done.rows_written, done.rows_read
                ),
            };
            return Err(Error::Usage(format!(
                "batch input '{shown}' {error}: the run stopped; {written}"
            )));
        }
    };
    if let Some(f) = out_file {
        f.commit()?;
    }
    let secs = progress.elapsed().as_secs_f64();
    for w in &warnings {
        diag::line(w);
    }
    diag::line(&format!(
        "batch: {} rows read: {} solved, {} infeasible, {} invalid ({} output rows) in {:.2} s",
        summary.rows_read,
        summary.solved,
        summary.infeasible,
        summary.invalid,
        summary.rows_written,
        secs
    ));
    Ok(if summary.all_solved() { 0 } else { 3 })
}
