//! Command-line layer: clap definitions and dispatch. Belongs to the binary.

pub mod batch;
pub mod budget;
pub mod diag;
pub mod output;
pub mod progress;
pub mod scan;
pub mod solve;

use burnout::input::case::{overlay, parse_case};
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

/// The inputs of a targeting problem, shared by `solve` and `scan`.
/// Values are text: units are parsed by the library so errors name the flag.
#[derive(Args, Debug, Default, Clone)]
pub struct ProblemArgs {
    /// Read a case file (TOML); flags given beside it override its values.
    #[arg(long, value_name = "FILE")]
    pub case: Option<String>,
    /// Central body: earth, moon, mars, venus, mercury, jupiter, sun [default: earth].
    #[arg(long, allow_hyphen_values = true)]
    pub body: Option<String>,
    /// Custom body's gravitational parameter (bare: km3/s2); needs --radius.
    #[arg(long, allow_hyphen_values = true)]
    pub mu: Option<String>,
    /// Custom body's surface radius (bare: km); goes with --mu.
    #[arg(long, allow_hyphen_values = true)]
    pub radius: Option<String>,
    /// Burnout altitude above the body's equatorial radius (bare: km).
    #[arg(long, allow_hyphen_values = true)]
    pub burnout_alt: Option<String>,
    /// Burnout radius from the body's centre (bare: km).
    #[arg(long, allow_hyphen_values = true)]
    pub burnout_radius: Option<String>,
    /// Target periapsis altitude (bare: km).
    #[arg(long, allow_hyphen_values = true)]
    pub periapsis_alt: Option<String>,
    /// Target periapsis radius (bare: km).
    #[arg(long, allow_hyphen_values = true)]
    pub periapsis_radius: Option<String>,
    /// Target apoapsis altitude (bare: km).
    #[arg(long, allow_hyphen_values = true)]
    pub apoapsis_alt: Option<String>,
    /// Target apoapsis radius (bare: km).
    #[arg(long, allow_hyphen_values = true)]
    pub apoapsis_radius: Option<String>,
    /// Target semi-major axis (bare: km; negative for a hyperbola).
    #[arg(long, allow_hyphen_values = true)]
    pub sma: Option<String>,
    /// Target eccentricity.
    #[arg(long, allow_hyphen_values = true)]
    pub ecc: Option<String>,
    /// Target period (bare: s; s, min, h, d).
    #[arg(long, allow_hyphen_values = true)]
    pub period: Option<String>,
    /// Target C3 = v_inf^2 (bare: km2/s2; negative for a closed orbit).
    #[arg(long, allow_hyphen_values = true)]
    pub c3: Option<String>,
    /// Target semi-latus rectum (bare: km).
    #[arg(long, allow_hyphen_values = true)]
    pub semi_latus_rectum: Option<String>,
    /// Target time of flight from burnout to apoapsis (bare: s).
    #[arg(long, allow_hyphen_values = true)]
    pub time_to_apoapsis: Option<String>,
    /// Target time of flight from burnout to periapsis (bare: s).
    #[arg(long, allow_hyphen_values = true)]
    pub time_to_periapsis: Option<String>,
    /// Target angle travelled from burnout to apoapsis (bare: deg).
    #[arg(long, allow_hyphen_values = true)]
    pub angle_to_apoapsis: Option<String>,
    /// Burnout flight-path angle above the local horizontal (bare: deg).
    #[arg(long, allow_hyphen_values = true)]
    pub fpa: Option<String>,
    /// Burnout zenith angle from the local vertical (bare: deg); fpa = 90 deg - zenith.
    #[arg(long, allow_hyphen_values = true)]
    pub zenith: Option<String>,
    /// Burnout speed, inertial (bare: km/s).
    #[arg(long, allow_hyphen_values = true)]
    pub speed: Option<String>,
    /// Launch-site geodetic latitude (bare: deg).
    #[arg(long, allow_hyphen_values = true)]
    pub latitude: Option<String>,
    /// Launch-site longitude, east positive (bare: deg).
    #[arg(long, allow_hyphen_values = true)]
    pub longitude: Option<String>,
    /// Launch azimuth at the site, from north through east, as flown over the rotating surface (bare: deg).
    #[arg(long, allow_hyphen_values = true)]
    pub azimuth: Option<String>,
    /// Great-circle arc from the site to the burnout subpoint: an angle (bare: deg) or a surface length (km, nmi, ...).
    #[arg(long, allow_hyphen_values = true)]
    pub downrange: Option<String>,
    /// Target inclination (bare: deg); needs a site.
    #[arg(long, allow_hyphen_values = true)]
    pub inclination: Option<String>,
    /// Lowest periapsis altitude considered safe (bare: km) [default: earth 150 km, common practice].
    #[arg(long, allow_hyphen_values = true)]
    pub min_periapsis_alt: Option<String>,
}

impl ProblemArgs {
    /// The flags given, as named inputs (keys without dashes).
    pub fn flag_inputs(&self) -> Inputs {
        let pairs: [(&str, &Option<String>); 26] = [
            ("body", &self.body),
            ("mu", &self.mu),
            ("radius", &self.radius),
            ("burnout-alt", &self.burnout_alt),
            ("burnout-radius", &self.burnout_radius),
            ("periapsis-alt", &self.periapsis_alt),
            ("periapsis-radius", &self.periapsis_radius),
            ("apoapsis-alt", &self.apoapsis_alt),
            ("apoapsis-radius", &self.apoapsis_radius),
            ("sma", &self.sma),
            ("ecc", &self.ecc),
            ("period", &self.period),
            ("c3", &self.c3),
            ("semi-latus-rectum", &self.semi_latus_rectum),
            ("time-to-apoapsis", &self.time_to_apoapsis),
            ("time-to-periapsis", &self.time_to_periapsis),
            ("angle-to-apoapsis", &self.angle_to_apoapsis),
            ("fpa", &self.fpa),
            ("zenith", &self.zenith),
            ("speed", &self.speed),
            ("min-periapsis-alt", &self.min_periapsis_alt),
            ("latitude", &self.latitude),
            ("longitude", &self.longitude),
            ("azimuth", &self.azimuth),
            ("downrange", &self.downrange),
            ("inclination", &self.inclination),
        ];
        pairs
            .iter()
            .filter_map(|(k, v)| v.as_ref().map(|v| (k.to_string(), v.clone())))
            .collect()
    }

    /// The case file's inputs (if any) with the flags laid over them.
    pub fn inputs(&self) -> Result<Inputs, Error> {
        let flags = self.flag_inputs();
        reject_empty(&flags)?;
        match &self.case {
            None => Ok(flags),
            Some(path) => {
                let text = read_case_file(path)?;
                let case = parse_case(&text, path)?;
                Ok(overlay(case.inputs, &flags))
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
    let fail =
        |why: String| Error::Usage(format!("cannot read case file '{path}' for --case: {why}"));
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
        Err(e) => Err(Error::Usage(format!(
            "cannot write to standard output: {e}"
        ))),
    }
}
