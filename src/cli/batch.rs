//! `burnout batch`: one targeting problem per row of a CSV file, streamed.

use super::progress::Progress;
use burnout::batch::{Batch, BatchError, BatchOptions};
use burnout::output::AtomicFile;
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
    /// Write the results to FILE instead of standard output (via a temporary file, then renamed).
    #[arg(long, value_name = "FILE")]
    out: Option<PathBuf>,
    /// Replace an existing --out file.
    #[arg(long)]
    force: bool,
    /// Add the 15 sensitivity columns d_<row>_d_<col>.
    #[arg(long)]
    sensitivities: bool,
}

/// Runs the batch; returns the exit code (3 when any row did not solve).
pub fn run(args: Args) -> Result<i32, Error> {
    let shown = args.input.display().to_string();
    let (input, size): (Box<dyn Read>, u64) = if shown == "-" {
        (Box::new(std::io::stdin().lock()), 0)
    } else {
        let file = std::fs::File::open(&args.input)
            .map_err(|e| Error::Usage(format!("cannot read batch input '{shown}': {e}")))?;
        if file.metadata().map(|m| m.is_dir()).unwrap_or(false) {
            return Err(Error::Usage(format!(
                "batch input '{shown}' is a directory: expected a CSV file"
            )));
        }
        let size = file.metadata().map(|m| m.len()).unwrap_or(0);
        (Box::new(file), size)
    };
    let input = LineCap {
        inner: input,
        since_newline: 0,
    };
    let batch = Batch::open(BufReader::with_capacity(1 << 16, input))
        .map_err(|e| Error::Usage(format!("{e} ('{shown}')")))?;
    if let (Some(out), false) = (&args.out, shown == "-") {
        let same = match (
            std::fs::canonicalize(out),
            std::fs::canonicalize(&args.input),
        ) {
            (Ok(a), Ok(b)) => a == b,
            _ => false,
        };
        if same {
            return Err(Error::Usage(format!(
                "--out '{}' is the batch input: write the results to another file",
                out.display()
            )));
        }
    }
    // Claim the output before any warning, so that an error is the only line.
    let mut out_file = args
        .out
        .as_deref()
        .map(|p| AtomicFile::create(p, args.force, "--out"))
        .transpose()?;
    if batch.is_empty() {
        eprintln!("warning: '{shown}' is empty: no header and no rows");
    }
    let unknown = batch.unknown_columns();
    if !unknown.is_empty() {
        let quoted: Vec<String> = unknown.iter().map(|c| format!("'{c}'")).collect();
        let many = unknown.len() > 1;
        eprintln!(
            "warning: column{} {} {} not {}solve input{}: carried through to the output unchanged",
            if many { "s" } else { "" },
            quoted.join(", "),
            if many { "are" } else { "is" },
            if many { "" } else { "a " },
            if many { "s" } else { "" },
        );
    }
    let opts = BatchOptions {
        sensitivities: args.sensitivities,
        parallel: true,
    };
    let mut progress = Progress::new(size, "bytes");
    let mut report = |_rows: u64, bytes: u64| progress.update(bytes);
    let result = match out_file.as_mut() {
        Some(f) => batch.run(
            BufWriter::with_capacity(1 << 20, f.file()),
            &opts,
            &mut report,
        ),
        None => batch.run(
            BufWriter::with_capacity(1 << 20, std::io::stdout()),
            &opts,
            &mut report,
        ),
    };
    progress.finish();
    let summary = match result {
        Ok(s) => s,
        Err(BatchError::Write(e))
            if out_file.is_none() && e.kind() == std::io::ErrorKind::BrokenPipe =>
        {
            return Ok(0)
        }
        Err(BatchError::Write(e)) => {
            let dest = match &args.out {
                Some(p) => format!("--out '{}'", p.display()),
                None => "standard output".into(),
            };
            return Err(Error::Usage(format!("cannot write {dest}: {e}")));
        }
        Err(BatchError::Read(e)) => return Err(Error::Usage(format!("{e} ('{shown}')"))),
    };
    if let Some(f) = out_file {
        f.commit()?;
    }
    let secs = progress.elapsed().as_secs_f64();
    eprintln!(
        "batch: {} rows read: {} solved, {} infeasible, {} invalid ({} output rows) in {:.2} s",
        summary.rows_read,
        summary.solved,
        summary.infeasible,
        summary.invalid,
        summary.rows_written,
        secs
    );
    Ok(if summary.all_solved() { 0 } else { 3 })
}

/// Longest input line accepted, bytes: a record held in memory is at most
/// this big, so a file without line breaks cannot exhaust memory.
const MAX_LINE_BYTES: usize = 16 << 20;

/// A reader that fails once a line grows past [`MAX_LINE_BYTES`].
struct LineCap<R> {
    inner: R,
    since_newline: usize,
}

impl<R: Read> Read for LineCap<R> {
    fn read(&mut self, buf: &mut [u8]) -> std::io::Result<usize> {
        let n = self.inner.read(buf)?;
        for &b in &buf[..n] {
            if b == b'\n' {
                self.since_newline = 0;
            } else {
                self.since_newline += 1;
                if self.since_newline > MAX_LINE_BYTES {
                    return Err(std::io::Error::new(
                        std::io::ErrorKind::InvalidData,
                        format!("an input line is longer than {} MiB", MAX_LINE_BYTES >> 20),
                    ));
                }
            }
        }
        Ok(n)
    }
}
