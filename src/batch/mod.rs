//! Batch runs: one targeting problem per CSV row, streamed.
//!
//! Input: a header of solve flags without dashes (`id`, `body`,
//! `burnout-alt`, `periapsis-alt`, ..., optional `branch`), one case per
//! row; an empty cell means "not given". Header names are matched without
//! regard to case, surrounding spaces, or `_` for `-`. Columns that are not
//! solve inputs are carried through to the output unchanged
//! ([`Batch::unknown_columns`] lists them so the caller can warn once).
//!
//! Output: the input columns as read, then [`crate::report::csv::RESULT_COLUMNS`]
//! (and the 15 partials if asked), one row per kept solution, or one row
//! with status `infeasible` or `invalid` and the reason. Every input row has
//! at least one output row, in input order; a failed row never stops the run.
//!
//! Memory stays flat: records are read into a pool of at most
//! [`BATCH_CHUNK`] reused records holding at most [`POOL_BYTES`] of cells,
//! solved (in parallel with rayon when asked) and written before the next
//! chunk is read. One record is at most [`reader::MAX_RECORD_BYTES`] as read
//! (a longer one is an `invalid` row), a header at most [`MAX_COLUMNS`] wide.
//! A quoted field left open at the end of the input stops the run with an
//! error naming its line (after the rows before it are written).
//!
//! (Why this file is long: about 125 of its lines are tests of the engine
//! with its CSV sink.)

pub mod reader;

use crate::columns::{given_name, sensitivity_columns, RESULT_COLUMNS, SITE_COLUMNS};
use crate::error::Error;
use crate::input::keys::solve_input_kind;
use crate::input::problem::{solve_inputs, Inputs};
use crate::solve::problem::{kept, no_branch_message, BranchChoice};
use rayon::prelude::*;
use reader::{RawRecord, ReadError, RecordReader, MAX_RECORD_BYTES};
use std::io::{BufRead, Write};

/// Records read, solved and written together (at most).
pub const BATCH_CHUNK: usize = 4096;
/// Cell bytes held by one chunk of records (at most, plus one record).
pub const POOL_BYTES: usize = 4 << 20;
/// Widest header accepted, columns.
pub const MAX_COLUMNS: usize = 1024;
/// A pool slot that grew past this many bytes is freed after its chunk.
const SLOT_KEEP_BYTES: usize = 64 << 10;
/// Records per parallel task within a chunk.
const TASK: usize = 128;

/// What a header column is.
#[derive(Debug, Clone, PartialEq)]
enum Column {
    /// A solve input, by key.
    Input(String),
    /// Which branches to keep.
    Branch,
    /// Carried through: `id`, or a column that is not a solve input.
    Carried,
}

/// Normalised header name: trimmed, lower case, `_` read as `-`.
fn normalise(name: &str) -> String {
    name.trim()
        .trim_start_matches('\u{feff}')
        .to_ascii_lowercase()
        .replace('_', "-")
}

/// How to run a batch.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub struct BatchOptions {
    /// Add the 15 sensitivity columns.
    pub sensitivities: bool,
    /// Solve each chunk in parallel (output order is the same either way).
    pub parallel: bool,
    /// Add the flight-plan columns ([`crate::columns::FLIGHT_COLUMNS`]).
    pub flight: bool,
}

impl Default for BatchOptions {
    fn default() -> Self {
        BatchOptions {
            sensitivities: false,
            parallel: true,
            flight: false,
        }
    }
}

/// Where a batch's rows go: the engine reads, solves and orders; the sink
/// turns each row into bytes. Rows of one group of records are formatted on
/// a worker thread (hence `Sync`) into that group's buffer.
pub trait BatchSink: Sync {
    /// The header line: `raw` holds the input column names as read and
    /// `columns` the output names (input, result, partials, site).
    fn header(&self, raw: &[Vec<u8>], columns: &[String], buf: &mut Vec<u8>);
    /// The input part of every output row of one record: its cells as read
    /// (bytes, invalid UTF-8 kept), padded or cut to `width` columns.
    fn prefix(
        &self,
        cells: &mut dyn Iterator<Item = Option<&[u8]>>,
        width: usize,
        buf: &mut Vec<u8>,
    );
    /// The rest of a row for one kept solution (`site`: whether the site
    /// columns are written).
    #[allow(clippy::too_many_arguments)]
    fn solution(
        &self,
        mu_m3_s2: f64,
        s: &crate::solve::problem::Solution,
        sensitivities: bool,
        site: bool,
        flight: Option<Option<&crate::solve::flight::FlightNumbers>>,
        buf: &mut Vec<u8>,
    );
    /// The rest of a row for a record without a kept solution.
    fn failure(
        &self,
        status: &str,
        message: &str,
        sensitivities: bool,
        site: bool,
        flight: bool,
        buf: &mut Vec<u8>,
    );
}

/// Counts of a finished batch (input rows, by outcome).
#[derive(Debug, Clone, Copy, PartialEq, Eq, Default)]
pub struct BatchSummary {
    /// Input rows read (the header not counted).
    pub rows_read: u64,
    /// Rows with at least one kept solution.
    pub solved: u64,
    /// Rows whose target was infeasible.
    pub infeasible: u64,
    /// Rows whose inputs could not be used (bad value, short row, ...).
    pub invalid: u64,
    /// Output rows written.
    pub rows_written: u64,
}

impl BatchSummary {
    /// Whether every input row solved.
    pub fn all_solved(&self) -> bool {
        self.solved == self.rows_read
    }

    fn add(&mut self, o: &BatchSummary) {
        self.rows_read += o.rows_read;
        self.solved += o.solved;
        self.infeasible += o.infeasible;
        self.invalid += o.invalid;
        self.rows_written += o.rows_written;
    }
}

/// Why a batch stopped (a bad row never stops it).
#[derive(Debug)]
pub enum BatchError {
    /// The input could not be read on, or ended inside a quoted field; the
    /// rows before the failure were written (`done` counts them).
    Read {
        /// What went wrong.
        error: ReadError,
        /// The rows read and written before the stop.
        done: BatchSummary,
    },
    /// The output could not be written.
    Write(std::io::Error),
}

impl std::fmt::Display for BatchError {
    fn fmt(&self, f: &mut std::fmt::Formatter<'_>) -> std::fmt::Result {
        match self {
            BatchError::Read { error, .. } => write!(f, "{error}"),
            BatchError::Write(e) => write!(f, "cannot write the output: {e}"),
        }
    }
}

impl std::error::Error for BatchError {}

/// A batch input with its header read.
pub struct Batch<R> {
    reader: RecordReader<R>,
    layout: Layout,
    unknown: Vec<String>,
    empty: bool,
}

/// The header: what each column is (shared by the parallel row solvers).
struct Layout {
    /// Header cells as text (BOM removed, invalid UTF-8 replaced), for
    /// matching and messages.
    names: Vec<String>,
    /// Header cells as read (BOM removed), for the output.
    raw_names: Vec<Vec<u8>>,
    columns: Vec<Column>,
    /// Whether a launch-site latitude column is present (then every output
    /// row carries the site columns); decided once from the header.
    site: bool,
}

impl<R: BufRead> Batch<R> {
    /// Reads the header.
    ///
    /// # Errors
    /// [`Error::Usage`] when the input cannot be read, the header is longer
    /// than [`MAX_RECORD_BYTES`] or wider than [`MAX_COLUMNS`], or a solve
    /// input appears twice in the header.
    pub fn open(input: R) -> Result<Batch<R>, Error> {
        let mut reader = RecordReader::new(input, MAX_COLUMNS + 1);
        let mut first = RawRecord::new();
        let has_header = reader
            .read(&mut first)
            .map_err(|e| Error::Usage(format!("batch header: {e}")))?;
        if first.is_oversized() {
            return Err(Error::Usage(format!(
                "batch header (line {}) is longer than {MAX_RECORD_BYTES} bytes: expected a header of column names",
                first.first_line()
            )));
        }
        if first.len() > MAX_COLUMNS {
            return Err(Error::Usage(format!(
                "batch header has {} columns: expected at most {MAX_COLUMNS}",
                first.len()
            )));
        }
        let raw_names: Vec<Vec<u8>> = (0..first.len())
            .map(|i| {
                let f = first.get(i).unwrap_or_default();
                f.strip_prefix(b"\xef\xbb\xbf".as_slice())
                    .unwrap_or(f)
                    .to_vec()
            })
            .collect();
        let names: Vec<String> = raw_names
            .iter()
            .map(|f| String::from_utf8_lossy(f).into_owned())
            .collect();
        let mut columns = Vec::with_capacity(names.len());
        let mut unknown = Vec::new();
        for (i, name) in names.iter().enumerate() {
            let key = normalise(name);
            let col = if key == "branch" {
                Column::Branch
            } else if key == "body" || solve_input_kind(&key).is_some() {
                Column::Input(key.clone())
            } else {
                if key != "id" {
                    unknown.push(if name.trim().is_empty() {
                        format!("(column {}, no name)", i + 1)
                    } else {
                        name.clone()
                    });
                }
                Column::Carried
            };
            if col != Column::Carried {
                if let Some(j) = columns.iter().position(|c| *c == col) {
                    return Err(Error::Usage(format!(
                        "batch header names '{key}' twice (columns {} and {}): give each input once",
                        j + 1,
                        i + 1
                    )));
                }
            }
            columns.push(col);
        }
        reader.set_max_fields(columns.len() + 1);
        Ok(Batch {
            reader,
            layout: Layout {
                raw_names,
                site: columns
                    .iter()
                    .any(|c| matches!(c, Column::Input(k) if k == "latitude")),
                names,
                columns,
            },
            unknown,
            empty: !has_header,
        })
    }

    /// Header cells that are not solve inputs (nor `id` or `branch`).
    pub fn unknown_columns(&self) -> &[String] {
        &self.unknown
    }

    /// Whether the input had no header at all (an empty file).
    pub fn is_empty(&self) -> bool {
        self.empty
    }

    /// The output header: input columns, result columns, partials if asked.
    pub fn output_columns(&self, sensitivities: bool) -> Vec<String> {
        self.output_columns_with(sensitivities, false)
    }

    /// As [`Batch::output_columns`], with the flight-plan columns if asked.
    pub fn output_columns_with(&self, sensitivities: bool, flight: bool) -> Vec<String> {
        let mut cols: Vec<String> = self
            .layout
            .names
            .iter()
            .map(|n| given_name(n, sensitivities, self.layout.has_site()))
            .collect();
        cols.extend(RESULT_COLUMNS.iter().map(|s| s.to_string()));
        if sensitivities {
            cols.extend(sensitivity_columns());
        }
        if self.layout.has_site() {
            cols.extend(SITE_COLUMNS.iter().map(|s| s.to_string()));
        }
        if flight {
            cols.extend(crate::columns::FLIGHT_COLUMNS.iter().map(|s| s.to_string()));
        }
        cols
    }

    /// Reads, solves and writes every row. `progress` gets the rows and
    /// bytes read so far after each chunk.
    ///
    /// # Errors
    /// [`BatchError::Read`] if the input cannot be read part-way,
    /// [`BatchError::Write`] if the output cannot be written. Bad rows are
    /// output rows, not errors.
    pub fn run<S: BatchSink, W: Write>(
        mut self,
        sink: &S,
        mut out: W,
        opts: &BatchOptions,
        progress: &mut dyn FnMut(u64, u64),
    ) -> Result<BatchSummary, BatchError> {
        let mut head = Vec::new();
        sink.header(
            &self.layout.raw_names,
            &self.output_columns_with(opts.sensitivities, opts.flight),
            &mut head,
        );
        out.write_all(&head).map_err(BatchError::Write)?;
        let mut total = BatchSummary::default();
        let mut pool: Vec<RawRecord> = Vec::new();
        let mut stop = None;
        loop {
            let mut n = 0;
            let mut held = 0;
            let mut at_end = false;
            while n < BATCH_CHUNK && held < POOL_BYTES {
                if pool.len() == n {
                    pool.push(RawRecord::new());
                }
                match self.reader.read(&mut pool[n]) {
                    Ok(true) => {
                        held += pool[n].held_bytes();
                        n += 1;
                    }
                    Ok(false) => {
                        at_end = true;
                        break;
                    }
                    Err(e) => {
                        stop = Some(e);
                        break;
                    }
                }
            }
            if n == 0 {
                break;
            }
            let records = &pool[..n];
            let this = &self.layout;
            let parts: Vec<(Vec<u8>, BatchSummary)> = if opts.parallel && n > TASK {
                records
                    .par_chunks(TASK)
                    .map(|group| this.solve_group(sink, group, opts))
                    .collect()
            } else {
                records
                    .chunks(TASK)
                    .map(|group| this.solve_group(sink, group, opts))
                    .collect()
            };
            for (bytes, counts) in parts {
                out.write_all(&bytes).map_err(BatchError::Write)?;
                total.add(&counts);
            }
            for r in &mut pool[..n] {
                r.shrink(SLOT_KEEP_BYTES);
            }
            let bytes_read = self.reader.bytes_read();
            progress(total.rows_read, bytes_read);
            if at_end || stop.is_some() {
                break;
            }
        }
        out.flush().map_err(BatchError::Write)?;
        match stop {
            Some(error) => Err(BatchError::Read { error, done: total }),
            None => Ok(total),
        }
    }
}

impl Layout {
    /// Whether the header has a launch-site latitude column (then every
    /// output row carries the site columns).
    fn has_site(&self) -> bool {
        self.site
    }

    fn solve_group<S: BatchSink>(
        &self,
        sink: &S,
        group: &[RawRecord],
        opts: &BatchOptions,
    ) -> (Vec<u8>, BatchSummary) {
        let mut buf = Vec::with_capacity(group.len() * 256);
        let mut counts = BatchSummary::default();
        for r in group {
            counts.rows_read += 1;
            let (class, rows) = self.solve_row(sink, r, opts, &mut buf);
            counts.rows_written += rows;
            match class {
                None => counts.solved += 1,
                Some("infeasible") => counts.infeasible += 1,
                Some(_) => counts.invalid += 1,
            }
        }
        (buf, counts)
    }

    /// Writes the output rows of one record; returns `None` when it solved,
    /// else the status of its failure row ([`Error::status`]), and the
    /// number of rows written.
    fn solve_row<S: BatchSink>(
        &self,
        sink: &S,
        r: &RawRecord,
        opts: &BatchOptions,
        buf: &mut Vec<u8>,
    ) -> (Option<&'static str>, u64) {
        let width = self.columns.len();
        // The input part of every output row: the cells as read (bytes,
        // invalid UTF-8 kept), padded or cut to the header's width.
        let mut prefix = Vec::with_capacity(128);
        sink.prefix(&mut (0..width).map(|i| r.get(i)), width, &mut prefix);
        let site = self.has_site();
        let fail = |buf: &mut Vec<u8>, e: &Error| {
            buf.extend_from_slice(&prefix);
            sink.failure(
                e.status(),
                &e.to_string(),
                opts.sensitivities,
                site,
                opts.flight,
                buf,
            );
            (Some(e.status()), 1)
        };
        match self.problem_of(r) {
            Err(e) => fail(buf, &e),
            Ok((inputs, branch)) => {
                let solved = solve_inputs(&inputs);
                match solved {
                    Err(e) => fail(buf, &e),
                    Ok(solved) => {
                        let mu = solved.body.mu_m3_s2;
                        let mut rows = 0;
                        for s in kept(&solved, branch) {
                            buf.extend_from_slice(&prefix);
                            let flight = opts.flight.then(|| {
                                crate::solve::flight::flight_numbers(
                                    &solved.body,
                                    &s.state,
                                    solved.problem.above_alt_m,
                                )
                            });
                            sink.solution(
                                mu,
                                s,
                                opts.sensitivities,
                                site,
                                opts.flight.then_some(flight.as_ref()),
                                buf,
                            );
                            rows += 1;
                        }
                        if rows == 0 {
                            let e = Error::Infeasible(no_branch_message(
                                solved.solutions.iter().map(|s| s.state.branch),
                                branch,
                            ));
                            return fail(buf, &e);
                        }
                        (None, rows)
                    }
                }
            }
        }
    }

    /// The named inputs and branch choice of one record.
    fn problem_of(&self, r: &RawRecord) -> Result<(Inputs, BranchChoice), Error> {
        let width = self.columns.len();
        let line = if r.first_line() == r.last_line() {
            format!("line {}", r.first_line())
        } else {
            format!(
                "lines {}-{} (one record: a quoted field holds line breaks)",
                r.first_line(),
                r.last_line()
            )
        };
        if r.is_oversized() {
            return Err(Error::Usage(format!(
                "{line}: the record is longer than {MAX_RECORD_BYTES} bytes: not read (expected at most {MAX_RECORD_BYTES})"
            )));
        }
        if r.len() < width {
            return Err(Error::Usage(format!(
                "{line} has {} field{} but the header has {width}: a short row (give every column a cell, empty for not given)",
                r.len(),
                if r.len() == 1 { "" } else { "s" }
            )));
        }
        if r.len() > width {
            return Err(Error::Usage(format!(
                "{line} has {} fields but the header has {width}: the extra cells are under no column",
                r.len()
            )));
        }
        let mut inputs = Inputs::new();
        let mut branch = BranchChoice::Both;
        for (i, col) in self.columns.iter().enumerate() {
            if *col == Column::Carried {
                continue; // kept as read, whatever its bytes
            }
            let cell = r.get(i).unwrap_or_default();
            let text = std::str::from_utf8(cell).map_err(|_| {
                Error::Usage(format!(
                    "{line}: column '{}' is not valid UTF-8 text",
                    self.names[i]
                ))
            })?;
            match col {
                Column::Input(key) if !text.trim().is_empty() => {
                    inputs.insert(key.clone(), text.trim().to_string());
                }
                Column::Branch => branch = BranchChoice::from_name("column branch", text)?,
                _ => {}
            }
        }
        Ok((inputs, branch))
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::report::batch::BatchCsv;

    fn run_text(input: &[u8], parallel: bool) -> (String, BatchSummary, Vec<String>) {
        let batch = Batch::open(input).unwrap();
        let unknown = batch.unknown_columns().to_vec();
        let mut out = Vec::new();
        let opts = BatchOptions {
            parallel,
            ..BatchOptions::default()
        };
        let s = batch
            .run(&BatchCsv::default(), &mut out, &opts, &mut |_, _| {})
            .unwrap();
        (String::from_utf8(out).unwrap(), s, unknown)
    }

    fn rows(text: &str) -> Vec<csv::StringRecord> {
        csv::ReaderBuilder::new()
            .has_headers(false)
            .flexible(true)
            .from_reader(text.as_bytes())
            .records()
            .map(|r| r.unwrap())
            .collect()
    }

    #[test]
    fn every_row_is_answered_in_order_with_its_status() {
        let input = b"id,burnout-alt,periapsis-alt,apoapsis-alt,branch\n\
a,200,185,35786,ascending\n\
b,100,185,35786,\n\
c,200km,185,35786,\n\
d,12 parsecs,185,35786,\n";
        let (out, s, _) = run_text(input, false);
        let r = rows(&out);
        assert_eq!(r[0].get(0), Some("id"));
        assert_eq!(&r[0][5], "status");
        let ids: Vec<&str> = r[1..].iter().map(|x| &x[0]).collect();
        assert_eq!(ids, ["a", "b", "c", "c", "d"]);
        let status: Vec<&str> = r[1..].iter().map(|x| &x[5]).collect();
        assert_eq!(status, ["ok", "infeasible", "ok", "ok", "invalid"]);
        assert_eq!(&r[1][7], "ascending");
        assert!(r[2][6].contains("below periapsis radius"), "{:?}", &r[2]);
        assert!(r[5][6].contains("--burnout-alt"), "{:?}", &r[5]);
        assert_eq!(
            s,
            BatchSummary {
                rows_read: 4,
                solved: 2,
                infeasible: 1,
                invalid: 1,
                rows_written: 5
            }
        );
    }

    #[test]
    fn parallel_output_is_identical_to_sequential() {
        let mut input = String::from("id,burnout-alt,periapsis-alt,apoapsis-alt\n");
        for i in 0..(BATCH_CHUNK + 700) {
            // Every seventh row is infeasible (burnout below periapsis).
            let alt = if i % 7 == 0 { 100 } else { 186 + i % 3000 };
            input.push_str(&format!("r{i},{alt},185,{}\n", 20_000 + i));
        }
        let (a, sa, _) = run_text(input.as_bytes(), false);
        let (b, sb, _) = run_text(input.as_bytes(), true);
        assert_eq!(sa, sb);
        assert!(a == b, "parallel output differs");
        assert_eq!(sa.rows_read as usize, BATCH_CHUNK + 700);
        assert_eq!(sa.infeasible as usize, (BATCH_CHUNK + 700).div_ceil(7));
    }

    #[test]
    fn header_names_are_matched_loosely_and_unknown_ones_are_listed() {
        let (out, s, unknown) = run_text(
            b"\xef\xbb\xbfID, Burnout_Alt ,periapsis-alt,apoapsis-alt,notes\r\nx,200,185,35786,\"a, b\"\r\n",
            false,
        );
        assert_eq!(unknown, vec!["notes".to_string()]);
        assert_eq!(s.solved, 1);
        let r = rows(&out);
        assert_eq!(&r[0][0], "ID");
        assert_eq!(&r[1][4], "a, b");
    }

    #[test]
    fn budget_keys_are_not_solve_inputs() {
        let batch = Batch::open(&b"burnout-alt,speed-sigma\n"[..]).unwrap();
        assert_eq!(batch.unknown_columns(), ["speed-sigma".to_string()]);
    }

    #[test]
    fn repeated_input_column_is_a_usage_error() {
        let e = Batch::open(&b"burnout-alt,burnout_alt\n1,2\n"[..])
            .err()
            .unwrap()
            .to_string();
        assert_eq!(
            e,
            "batch header names 'burnout-alt' twice (columns 1 and 2): give each input once"
        );
    }

    #[test]
    fn empty_input_gives_a_header_and_no_rows() {
        let batch = Batch::open(&b""[..]).unwrap();
        assert!(batch.is_empty());
        let mut out = Vec::new();
        let s = batch
            .run(
                &BatchCsv::default(),
                &mut out,
                &BatchOptions::default(),
                &mut |_, _| {},
            )
            .unwrap();
        assert_eq!(s.rows_read, 0);
        assert!(s.all_solved());
        assert!(String::from_utf8(out)
            .unwrap()
            .starts_with("status,message,branch,"));
    }
}
