//! Command-line layer: clap definitions and dispatch. Belongs to the binary.

pub mod batch;
pub mod budget;
pub mod diag;
pub mod output;
pub mod progress;
pub mod scan;
pub mod solve;

use burnout::input::case::{overlay, parse_case};
use burnout::input::keys::{Key, Role, KEYS};
use burnout::input::problem::Inputs;
use burnout::Error;
use clap::{Args, Parser, Subcommand, ValueEnum};

/// Inverse burnout targeting for launch-vehicle and upper-stage analysis.
#[derive(Parser, Debug)]
#[command(name = "burnout", version, about, long_about = None)]
pub struct Cli {
    /// What to do.
    #[command(subcommand)]
    pub command: Command,
}

/// Subcommands.
#[derive(Subcommand, Debug)]
#[allow(clippy::large_enum_variant)] // parsed once per run; boxing buys nothing
pub enum Command {
    /// Solve one targeting problem: burnout speed and flight-path angle for a target orbit.
    Solve(solve::Args),
    /// Error budget: orbit errors from burnout errors, and burnout errors allowed by orbit tolerances.
    Budget(budget::Args),
    /// Scan: solve over ranges of inputs (START..END:STEP or START..END/N) into a table, CSV, JSON or figure.
    Scan(scan::Args),
    /// Batch: one targeting problem per row of a CSV file, streamed to a results CSV.
    Batch(batch::Args),
}

/// Output format.
#[derive(ValueEnum, Clone, Copy, Debug, PartialEq, Eq, Default)]
pub enum Format {
    /// Human-readable table.
    #[default]
    Table,
    /// JSON (SI, units in keys).
    Json,
    /// CSV (SI, units in column names).
    Csv,
}

/// Units for human output.
#[derive(ValueEnum, Clone, Copy, Debug, PartialEq, Eq, Default)]
pub enum UnitsArg {
    /// km, km/s.
    #[default]
    Si,
    /// nmi, ft/s.
    Us,
}

impl From<UnitsArg> for burnout::report::table::DisplayUnits {
    fn from(u: UnitsArg) -> Self {
        match u {
            UnitsArg::Si => burnout::report::table::DisplayUnits::Si,
            UnitsArg::Us => burnout::report::table::DisplayUnits::Us,
        }
    }
}

/// The inputs of a targeting problem, shared by `solve`, `scan` and
/// `budget`: `--case FILE` and one flag per solve key of
/// [`burnout::input::keys::KEYS`] (values are text: units are parsed by the
/// library so errors name the flag).
#[derive(Debug, Default, Clone)]
pub struct ProblemArgs {
    /// Read a case file (TOML); flags given beside it override its values.
    pub case: Option<String>,
    flags: Inputs,
}

/// The error-budget flags of `burnout budget`, from the same table.
#[derive(Debug, Default, Clone)]
pub struct BudgetFlags {
    /// The budget flags given, as named inputs.
    pub flags: Inputs,
}

fn is_solve_key(k: &Key) -> bool {
    k.role != Role::Budget
}

fn is_budget_key(k: &Key) -> bool {
    k.role == Role::Budget
}

/// Adds one text-valued flag per key of the table that `pick` selects.
fn add_key_args(mut cmd: clap::Command, pick: fn(&Key) -> bool) -> clap::Command {
    for k in KEYS.iter().filter(|k| pick(k)) {
        // The value's placeholder, as clap's derive would name the field
        // (`--burnout-alt <BURNOUT_ALT>`); built once per run.
        let value_name: &'static str =
            Box::leak(k.key.replace('-', "_").to_uppercase().into_boxed_str());
        cmd = cmd.arg(
            clap::Arg::new(k.key)
                .long(k.key)
                .value_name(value_name)
                .allow_hyphen_values(true)
                .help(k.help.strip_suffix(".").unwrap_or(k.help)),
        );
    }
    cmd
}

/// The values of the flags `pick` selects, as named inputs.
fn read_key_args(m: &clap::ArgMatches, pick: fn(&Key) -> bool, into: &mut Inputs) {
    for k in KEYS.iter().filter(|k| pick(k)) {
        if let Ok(Some(v)) = m.try_get_one::<String>(k.key) {
            into.insert(k.key.to_string(), v.clone());
        }
    }
}

impl clap::FromArgMatches for ProblemArgs {
    fn from_arg_matches(m: &clap::ArgMatches) -> Result<Self, clap::Error> {
        let mut args = ProblemArgs::default();
        args.update_from_arg_matches(m)?;
        Ok(args)
    }

    fn update_from_arg_matches(&mut self, m: &clap::ArgMatches) -> Result<(), clap::Error> {
        if let Ok(Some(c)) = m.try_get_one::<String>("case") {
            self.case = Some(c.clone());
        }
        read_key_args(m, is_solve_key, &mut self.flags);
        Ok(())
    }
}

impl Args for ProblemArgs {
    fn augment_args(cmd: clap::Command) -> clap::Command {
        let cmd = cmd.arg(
            clap::Arg::new("case")
                .long("case")
                .value_name("FILE")
                .help("Read a case file (TOML); flags given beside it override its values"),
        );
        add_key_args(cmd, is_solve_key)
    }

    fn augment_args_for_update(cmd: clap::Command) -> clap::Command {
        Self::augment_args(cmd)
    }
}

impl clap::FromArgMatches for BudgetFlags {
    fn from_arg_matches(m: &clap::ArgMatches) -> Result<Self, clap::Error> {
        let mut args = BudgetFlags::default();
        args.update_from_arg_matches(m)?;
        Ok(args)
    }

    fn update_from_arg_matches(&mut self, m: &clap::ArgMatches) -> Result<(), clap::Error> {
        read_key_args(m, is_budget_key, &mut self.flags);
        Ok(())
    }
}

impl Args for BudgetFlags {
    fn augment_args(cmd: clap::Command) -> clap::Command {
        add_key_args(cmd, is_budget_key)
    }

    fn augment_args_for_update(cmd: clap::Command) -> clap::Command {
        Self::augment_args(cmd)
    }
}

impl ProblemArgs {
    /// The flags given, as named inputs (keys without dashes).
    pub fn flag_inputs(&self) -> Inputs {
        self.flags.clone()
    }

    /// The case file's inputs (if any) with the flags laid over them, and the
    /// case's title if it has one.
    pub fn inputs_and_title(&self) -> Result<(Inputs, Option<String>), Error> {
        let flags = self.flag_inputs();
        reject_empty(&flags)?;
        match &self.case {
            None => Ok((flags, None)),
            Some(path) => {
                let text = read_case_file(path)?;
                let case = parse_case(&text, path)?;
                Ok((overlay(case.inputs, &flags), case.title))
            }
        }
    }
}

/// Largest case file read, bytes: a case is a few hundred bytes, so 1 MiB
/// is generous, and `--case /dev/zero` or a huge file cannot fill memory.
pub const MAX_CASE_BYTES: u64 = 1 << 20;

/// Reads a case file: a regular file of at most [`MAX_CASE_BYTES`], UTF-8.
fn read_case_file(path: &str) -> Result<String, Error> {
    use std::io::Read;
    let fail = |why: String| Error::Io(format!("cannot read case file '{path}' for --case: {why}"));
    let file = std::fs::File::open(path).map_err(|e| fail(e.to_string()))?;
    let meta = file.metadata().map_err(|e| fail(e.to_string()))?;
    if !meta.is_file() {
        return Err(Error::Usage(format!(
            "case file '{path}' for --case is not a regular file: expected a TOML file"
        )));
    }
    if meta.len() > MAX_CASE_BYTES {
        return Err(Error::Usage(format!(
            "case file '{path}' for --case is {} bytes: expected at most {MAX_CASE_BYTES} bytes (1 MiB)",
            meta.len()
        )));
    }
    // The size can change between the check and the read: read one byte
    // more than the cap at most.
    let mut bytes = Vec::new();
    file.take(MAX_CASE_BYTES + 1)
        .read_to_end(&mut bytes)
        .map_err(|e| fail(e.to_string()))?;
    if bytes.len() as u64 > MAX_CASE_BYTES {
        return Err(Error::Usage(format!(
            "case file '{path}' for --case grew past {MAX_CASE_BYTES} bytes (1 MiB) while being read"
        )));
    }
    String::from_utf8(bytes).map_err(|_| fail("not valid UTF-8 text".into()))
}

/// A flag given with an empty value is an error (an empty cell means "not
/// given" only in batch files).
pub fn reject_empty(flags: &Inputs) -> Result<(), Error> {
    for (key, text) in flags {
        if text.trim().is_empty() {
            return Err(Error::InvalidValue {
                flag: format!("--{key}"),
                text: text.clone(),
                kind: burnout::input::problem::kind_of(key)
                    .map(|k| k.name())
                    .unwrap_or("value"),
                reason: "empty value".into(),
            });
        }
    }
    Ok(())
}

/// Runs the parsed command; returns the process exit code.
pub fn run(cli: Cli) -> Result<i32, Error> {
    match cli.command {
        Command::Solve(args) => solve::run(args),
        Command::Budget(args) => budget::run(args),
        Command::Scan(args) => scan::run(args),
        Command::Batch(args) => batch::run(args),
    }
}

/// An error unless standard output can take the run's output: a run
/// started with standard output closed (`>&-`) would lose it silently.
pub fn require_stdout() -> Result<(), Error> {
    if crate::cli::diag::stdout_closed() {
        return Err(Error::Usage(
            "standard output is closed: nothing can be written (redirect it, or give --out where available)".into(),
        ));
    }
    Ok(())
}

/// `--out -` means standard output: the path to write, or `None` for stdout.
pub fn out_path(out: Option<&std::path::Path>) -> Option<&std::path::Path> {
    out.filter(|p| p.as_os_str() != "-")
}

/// Writes a finished output to stdout; a closed pipe ends quietly.
pub fn emit(bytes: &[u8]) -> Result<(), Error> {
    use std::io::Write;
    require_stdout()?;
    let mut out = std::io::stdout().lock();
    match out.write_all(bytes).and_then(|_| out.flush()) {
        Ok(()) => Ok(()),
        Err(e) if e.kind() == std::io::ErrorKind::BrokenPipe => Ok(()),
        Err(e) => Err(Error::Io(format!("cannot write to standard output: {e}"))),
    }
}

/// Where a command's rows go, as messages name it: `--out 'FILE'` (as the
/// user gave it) or standard output.
pub fn destination(out: Option<&std::path::Path>) -> String {
    match out {
        Some(p) => format!("--out '{}'", p.display()),
        None => "standard output".into(),
    }
}

/// What a failed write of a command's rows means: a closed pipe on
/// standard output ends the run quietly (exit 0, like other tools in a
/// pipeline); anything else is an I/O error naming the destination.
pub fn write_failure(e: std::io::Error, out: Option<&std::path::Path>) -> Result<i32, Error> {
    if out.is_none() && e.kind() == std::io::ErrorKind::BrokenPipe {
        Ok(0)
    } else {
        Err(Error::Io(format!("cannot write {}: {e}", destination(out))))
    }
}
