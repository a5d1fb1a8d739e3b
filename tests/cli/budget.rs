//! `burnout budget`: the error budget, checked against the sensitivity matrix
//! that `solve` reports (J P J^T recomputed here) and against the forward
//! problem run through `solve` at the reported allowed errors.

use crate::{case_path, run, solve_json};
use approx::assert_relative_eq;
use serde_json::Value;

fn budget_json(args: &[&str]) -> Value {
    let mut all = vec!["budget"];
    all.extend_from_slice(args);
    all.extend_from_slice(&["--format", "json"]);
    let r = run(&all);
    assert_eq!(r.code, Some(0), "stderr: {}", r.stderr);
    serde_json::from_str(&r.stdout).expect("budget JSON")
}

#[test]
fn one_sigma_errors_equal_j_p_jt_from_the_solve_sensitivities() {
    let case = case_path("gto-budget.toml");
    let b = budget_json(&[
        "--case",
        &case,
        "--branch",
        "ascending",
        "--speed-fpa-corr",
        "0",
    ]);
    let s = solve_json(&["--case", &case]);
    let m = &s["solutions"][0]["sensitivity"]["matrix"];
    // Case sigmas: 2 m/s, 0.05 deg, 1 km, uncorrelated here.
    let sig = [2.0, 0.05, 1000.0];
    let rows = [
        "periapsis_radius_m",
        "apoapsis_radius_m",
        "sma_m",
        "ecc",
        "period_s",
    ];
    for (i, key) in rows.iter().enumerate() {
        let var: f64 = (0..3)
            .map(|k| (m[i][k].as_f64().unwrap() * sig[k]).powi(2))
            .sum();
        let got = b["budget"][0]["orbit_errors"][key]["one_sigma"]
            .as_f64()
            .unwrap();
        assert_relative_eq!(got, var.sqrt(), max_relative = 1e-9);
        let three = b["budget"][0]["orbit_errors"][key]["three_sigma"]
            .as_f64()
            .unwrap();
        assert_relative_eq!(three, 3.0 * got, max_relative = 1e-12);
    }
    assert_eq!(
        b["budget"][0]["orbit_errors"]["apoapsis_radius_m"]["dominant"],
        "speed_m_s"
    );
}

#[test]
fn allowed_speed_error_fed_to_solve_lands_on_the_apoapsis_tolerance() {
    let case = case_path("gto-budget.toml");
    let b = budget_json(&["--case", &case, "--branch", "ascending"]);
    let base = solve_json(&["--case", &case]);
    let v0 = base["solutions"][0]["speed_m_s"].as_f64().unwrap();
    let fpa = base["solutions"][0]["flight_path_angle_deg"]
        .as_f64()
        .unwrap();
    let ra0 = base["orbit"]["apoapsis_radius_m"].as_f64().unwrap();
    let plus = b["budget"][0]["allowed_alone"]["speed_m_s"]["plus"]
        .as_f64()
        .unwrap();
    assert_eq!(
        b["budget"][0]["allowed_alone"]["speed_m_s"]["limited_by"],
        "apoapsis_radius_m"
    );
    let speed = format!("{}m/s", v0 + plus);
    let fpa = format!("{fpa}deg");
    let moved = solve_json(&["--burnout-alt", "200km", "--speed", &speed, "--fpa", &fpa]);
    let ra = moved["orbit"]["apoapsis_radius_m"].as_f64().unwrap();
    // The case's apoapsis tolerance is 100 km.
    assert_relative_eq!(ra - ra0, 100e3, max_relative = 1e-6);
}

#[test]
fn budget_without_errors_or_tolerances_is_a_usage_error() {
    let r = run(&[
        "budget",
        "--burnout-alt",
        "200",
        "--periapsis-alt",
        "185",
        "--apoapsis-alt",
        "35786",
    ]);
    assert_eq!(r.code, Some(2));
    assert!(r.stderr.contains("nothing to budget"), "{}", r.stderr);
    assert_eq!(r.stderr.lines().count(), 1);
}

#[test]
fn correlation_outside_unit_range_names_the_flag() {
    let r = run(&[
        "budget",
        "--burnout-alt",
        "200",
        "--periapsis-alt",
        "185",
        "--apoapsis-alt",
        "35786",
        "--speed-sigma",
        "1m/s",
        "--speed-fpa-corr",
        "1.5",
    ]);
    assert_eq!(r.code, Some(2));
    assert!(
        r.stderr.contains("--speed-fpa-corr") && r.stderr.contains("1.5"),
        "{}",
        r.stderr
    );
}
