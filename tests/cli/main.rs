//! Integration tests of the `burnout` executable: each test runs the real
//! binary in its own temporary directory and checks the exit code, the
//! streams and, for machine output, the numbers read back with serde_json
//! or csv and compared with `approx`.
//!
//! The contract being checked is the shared machine contract (flags, JSON
//! keys, exit codes).

mod analyst;
mod bad_input;
mod batch;
mod budget;
mod cases;
mod edges;
mod figures;
mod hardening;
mod scan;
mod site;
mod solve;
mod targeting;

use serde_json::Value;
use std::path::PathBuf;
use std::process::Command;

/// What one run of the executable produced.
#[derive(Debug)]
pub struct Run {
    /// Exit code (`None` if killed by a signal).
    pub code: Option<i32>,
    /// Standard output.
    pub stdout: String,
    /// Standard error.
    pub stderr: String,
}

/// Absolute path of the repository's `cases/` directory.
pub fn cases_dir() -> PathBuf {
    PathBuf::from(env!("CARGO_MANIFEST_DIR")).join("cases")
}

/// Absolute path of one file in `cases/`, as a string for the command line.
pub fn case_path(name: &str) -> String {
    cases_dir().join(name).to_string_lossy().into_owned()
}

/// Runs `burnout ARGS...` in a fresh temporary directory. `RUST_BACKTRACE`
/// is set so that a panic, should one happen, would show its backtrace and
/// be caught by the stderr checks.
pub fn run(args: &[&str]) -> Run {
    let dir = tempfile::tempdir().expect("create temporary directory");
    let out = Command::new(env!("CARGO_BIN_EXE_burnout"))
        .args(args)
        .current_dir(dir.path())
        .env("RUST_BACKTRACE", "1")
        .output()
        .expect("run the burnout executable");
    Run {
        code: out.status.code(),
        stdout: String::from_utf8(out.stdout).expect("stdout is UTF-8"),
        stderr: String::from_utf8(out.stderr).expect("stderr is UTF-8"),
    }
}

/// Runs `burnout solve ARGS... --format json`, expects exit 0 and returns
/// the parsed document.
pub fn solve_json(args: &[&str]) -> Value {
    let mut all = vec!["solve"];
    all.extend_from_slice(args);
    all.extend_from_slice(&["--format", "json"]);
    let r = run(&all);
    assert_eq!(r.code, Some(0), "args {all:?}: stderr {}", r.stderr);
    serde_json::from_str(&r.stdout)
        .unwrap_or_else(|e| panic!("args {all:?}: stdout is not JSON ({e}): {}", r.stdout))
}

/// Runs `burnout solve ARGS...` (table output) and expects exit 0.
pub fn solve_table(args: &[&str]) -> String {
    let mut all = vec!["solve"];
    all.extend_from_slice(args);
    let r = run(&all);
    assert_eq!(r.code, Some(0), "args {all:?}: stderr {}", r.stderr);
    r.stdout
}

/// The number at JSON pointer `ptr`; panics with the pointer if it is
/// missing or not a number (null included).
pub fn num(v: &Value, ptr: &str) -> f64 {
    v.pointer(ptr)
        .unwrap_or_else(|| panic!("missing {ptr} in {v}"))
        .as_f64()
        .unwrap_or_else(|| panic!("{ptr} is not a number: {}", v.pointer(ptr).unwrap()))
}

/// Whether the value at JSON pointer `ptr` exists and is null.
pub fn is_null(v: &Value, ptr: &str) -> bool {
    v.pointer(ptr)
        .unwrap_or_else(|| panic!("missing {ptr} in {v}"))
        .is_null()
}

/// The `solutions` array.
pub fn solutions(doc: &Value) -> &Vec<Value> {
    doc["solutions"]
        .as_array()
        .unwrap_or_else(|| panic!("solutions is not an array: {doc}"))
}

/// The `warnings` array as strings.
pub fn warnings(doc: &Value) -> Vec<String> {
    doc["warnings"]
        .as_array()
        .unwrap_or_else(|| panic!("warnings is not an array: {doc}"))
        .iter()
        .map(|w| w.as_str().expect("warning is a string").to_string())
        .collect()
}

/// Orbit elements computed here, independently of the product, from a
/// burnout state. With Q = r v^2 / mu and flight-path angle g:
/// e cos(nu) = Q cos^2 g - 1, e sin(nu) = Q sin g cos g, p = r Q cos^2 g,
/// 1/a = (2 - Q) / r, rp = p / (1 + e), ra = p / (1 - e) for e < 1
/// (Bate, Mueller and White, Fundamentals of Astrodynamics, ch. 1 and 2).
#[derive(Debug, Clone, Copy)]
pub struct Elements {
    /// Semi-major axis, m (negative for a hyperbola).
    pub sma_m: f64,
    /// Eccentricity.
    pub ecc: f64,
    /// Periapsis radius, m.
    pub periapsis_radius_m: f64,
    /// Apoapsis radius, m (None for an open orbit).
    pub apoapsis_radius_m: Option<f64>,
    /// True anomaly at burnout, deg in [0, 360).
    pub true_anomaly_deg: f64,
}

/// See [`Elements`].
pub fn elements_from_state(mu_m3_s2: f64, radius_m: f64, speed_m_s: f64, fpa_deg: f64) -> Elements {
    let q = radius_m * speed_m_s * speed_m_s / mu_m3_s2;
    let (s, c) = fpa_deg.to_radians().sin_cos();
    let x = q * c * c - 1.0;
    let y = q * s * c;
    let ecc = x.hypot(y);
    let p = radius_m * q * c * c;
    Elements {
        sma_m: radius_m / (2.0 - q),
        ecc,
        periapsis_radius_m: p / (1.0 + ecc),
        apoapsis_radius_m: (ecc < 1.0).then(|| p / (1.0 - ecc)),
        true_anomaly_deg: y.atan2(x).to_degrees().rem_euclid(360.0),
    }
}

/// The values at `ptr` of every solution, ascending.
pub fn sorted(doc: &Value, ptr: &str) -> Vec<f64> {
    let mut v: Vec<f64> = solutions(doc).iter().map(|s| num(s, ptr)).collect();
    v.sort_by(f64::total_cmp);
    v
}

/// (value at `a`, value at `b`) of every solution, ascending in the first.
pub fn sorted_pairs(doc: &Value, a: &str, b: &str) -> Vec<(f64, f64)> {
    let mut v: Vec<(f64, f64)> = solutions(doc)
        .iter()
        .map(|s| (num(s, a), num(s, b)))
        .collect();
    v.sort_by(|x, y| x.0.total_cmp(&y.0));
    v
}
