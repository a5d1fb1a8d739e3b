//! Every file in `cases/` is run, so the examples cannot rot. The directory
//! is read at test time: a new case file is covered without editing this.

use crate::{cases_dir, num, run, solutions};
use approx::relative_eq;
use std::path::PathBuf;

fn case_files() -> Vec<PathBuf> {
    let mut files: Vec<PathBuf> = std::fs::read_dir(cases_dir())
        .expect("read cases/")
        .map(|e| e.expect("directory entry").path())
        .filter(|p| p.is_file())
        .collect();
    files.sort();
    assert!(!files.is_empty(), "no files in {}", cases_dir().display());
    files
}

/// Problems with one case's JSON output, empty when it is fine.
fn json_problems(path: &str) -> Vec<String> {
    let r = run(&["solve", "--case", path, "--format", "json"]);
    if r.code != Some(0) {
        return vec![format!("exit {:?}: {}", r.code, r.stderr.trim_end())];
    }
    let doc: serde_json::Value = match serde_json::from_str(&r.stdout) {
        Ok(d) => d,
        Err(e) => return vec![format!("stdout is not JSON: {e}")],
    };
    let mut out = Vec::new();
    if solutions(&doc).is_empty() {
        out.push("no solutions".to_string());
    }
    let (mu, r_bo) = (num(&doc, "/body/mu_m3_s2"), num(&doc, "/burnout_radius_m"));
    for sol in solutions(&doc) {
        // Each solution carries its own orbit (two speeds can mean two
        // orbits); 1/a is 0 for a parabola, whose sma is null.
        let inv_sma = sol["orbit"]["sma_m"].as_f64().map_or(0.0, |a| 1.0 / a);
        let v = sol["speed_m_s"].as_f64().unwrap_or(f64::NAN);
        if !(v.is_finite() && v > 0.0) {
            out.push(format!("speed {v} is not finite and positive"));
        } else if !relative_eq!(v * v, mu * (2.0 / r_bo - inv_sma), max_relative = 1e-12) {
            out.push(format!("speed {v} m/s breaks vis-viva"));
        }
    }
    out
}

#[test]
fn every_case_file_solves_with_a_finite_positive_speed() {
    let mut failures = Vec::new();
    for path in case_files() {
        let p = path.to_string_lossy();
        for problem in json_problems(&p) {
            failures.push(format!("{p}: {problem}"));
        }
    }
    assert!(failures.is_empty(), "{}", failures.join("\n"));
}

#[test]
fn every_case_file_table_carries_the_caution_line() {
    let mut failures = Vec::new();
    for path in case_files() {
        let p = path.to_string_lossy().into_owned();
        let r = run(&["solve", "--case", &p]);
        if r.code != Some(0) {
            failures.push(format!("{p}: exit {:?}: {}", r.code, r.stderr.trim_end()));
        } else if !r.stdout.lines().any(|l| l.starts_with("caution:")) {
            failures.push(format!("{p}: no line starting with 'caution:'"));
        }
    }
    assert!(failures.is_empty(), "{}", failures.join("\n"));
}
