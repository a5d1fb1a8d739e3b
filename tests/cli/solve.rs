//! `burnout solve`: JSON shape and null-ness, branches, physics checks
//! against formulas computed here, unit handling, output formats, warnings
//! and case-file overrides.

use crate::{
    case_path, elements_from_state, is_null, num, run, solutions, solve_json, solve_table, warnings,
};
use approx::{assert_abs_diff_eq, assert_relative_eq};
use serde_json::Value;

const ORBIT_KEYS: [&str; 8] = [
    "periapsis_radius_m",
    "apoapsis_radius_m",
    "sma_m",
    "ecc",
    "period_s",
    "specific_energy_j_kg",
    "angular_momentum_m2_s",
    "c3_m2_s2",
];
const SENSITIVITY_ROWS: [&str; 5] = [
    "periapsis_radius_m",
    "apoapsis_radius_m",
    "sma_m",
    "ecc",
    "period_s",
];
const SENSITIVITY_COLS: [&str; 3] = ["speed_m_s", "flight_path_angle_deg", "burnout_radius_m"];

/// Transfer orbit 185 km x 35786 km with burnout at 200 km: between apsides.
const GTO_BETWEEN: [&str; 6] = [
    "--burnout-alt",
    "200km",
    "--periapsis-alt",
    "185km",
    "--apoapsis-alt",
    "35786km",
];

fn mu(doc: &Value) -> f64 {
    num(doc, "/body/mu_m3_s2")
}

fn surface(doc: &Value) -> f64 {
    num(doc, "/body/radius_m")
}

fn burnout_r(doc: &Value) -> f64 {
    num(doc, "/burnout_radius_m")
}

/// The only solution on `branch`; panics if there is not exactly one.
fn on_branch<'a>(doc: &'a Value, branch: &str) -> &'a Value {
    let found: Vec<&Value> = solutions(doc)
        .iter()
        .filter(|s| s["branch"] == branch)
        .collect();
    assert_eq!(found.len(), 1, "expected one {branch} solution: {doc}");
    found[0]
}

/// Sensitivity matrix rows of a solution: `None` where the row is null.
fn matrix(sol: &Value) -> Vec<Option<Vec<f64>>> {
    sol["sensitivity"]["matrix"]
        .as_array()
        .unwrap_or_else(|| panic!("matrix is not an array: {sol}"))
        .iter()
        .map(|row| {
            row.as_array().map(|cells| {
                cells
                    .iter()
                    .map(|c| c.as_f64().expect("matrix cell is a number"))
                    .collect()
            })
        })
        .collect()
}

/// Checks, for every solution, that the sensitivity row of each quantity is
/// null exactly when the orbit's value of that quantity is null, and that
/// the non-null rows hold three numbers.
fn assert_sensitivity_nulls_follow_orbit(doc: &Value) {
    for sol in solutions(doc) {
        let m = matrix(sol);
        assert_eq!(m.len(), 5, "{sol}");
        for (row, key) in m.iter().zip(SENSITIVITY_ROWS) {
            let orbit_null = is_null(doc, &format!("/orbit/{key}"));
            match row {
                None => assert!(orbit_null, "row {key} is null but orbit has it: {doc}"),
                Some(cells) => {
                    assert!(
                        !orbit_null,
                        "row {key} is not null but orbit {key} is: {doc}"
                    );
                    assert_eq!(cells.len(), 3, "row {key}: {sol}");
                }
            }
        }
    }
}

/// v^2 = mu (2/r - 1/a) for every solution, with a from the top-level orbit.
fn assert_vis_viva(doc: &Value) {
    let (mu, r, a) = (mu(doc), burnout_r(doc), num(doc, "/orbit/sma_m"));
    for sol in solutions(doc) {
        let v = num(sol, "/speed_m_s");
        assert_relative_eq!(v * v, mu * (2.0 / r - 1.0 / a), max_relative = 1e-12);
    }
}

#[test]
fn json_has_every_contract_key_with_numbers_for_an_ellipse() {
    let doc = solve_json(&GTO_BETWEEN);
    assert_eq!(doc["body"]["name"], "earth");
    // Earth constants: IERS Conventions (2010) GM and the WGS 84 equatorial radius.
    assert_relative_eq!(mu(&doc), 3.986004418e14, max_relative = 1e-15);
    assert_relative_eq!(surface(&doc), 6_378_137.0, max_relative = 1e-15);
    assert_relative_eq!(burnout_r(&doc), 6_378_137.0 + 200e3, max_relative = 1e-15);
    for key in ORBIT_KEYS {
        num(&doc, &format!("/orbit/{key}"));
    }
    assert!(doc["warnings"].is_array(), "{doc}");
    assert_eq!(solutions(&doc).len(), 2);
    for sol in solutions(&doc) {
        let branch = sol["branch"].as_str().expect("branch is a string");
        assert!(branch == "ascending" || branch == "descending", "{branch}");
        for key in ["speed_m_s", "flight_path_angle_deg", "true_anomaly_deg"] {
            num(sol, &format!("/{key}"));
        }
        let rows: Vec<&str> = sol["sensitivity"]["rows"]
            .as_array()
            .expect("rows")
            .iter()
            .map(|v| v.as_str().expect("row label"))
            .collect();
        assert_eq!(rows, SENSITIVITY_ROWS);
        let cols: Vec<&str> = sol["sensitivity"]["cols"]
            .as_array()
            .expect("cols")
            .iter()
            .map(|v| v.as_str().expect("col label"))
            .collect();
        assert_eq!(cols, SENSITIVITY_COLS);
        assert!(matrix(sol)
            .iter()
            .all(|r| r.as_ref().map(Vec::len) == Some(3)));
    }
}

#[test]
fn ellipse_orbit_values_agree_with_each_other() {
    let doc = solve_json(&GTO_BETWEEN);
    let (mu, re) = (mu(&doc), surface(&doc));
    let rp = num(&doc, "/orbit/periapsis_radius_m");
    let ra = num(&doc, "/orbit/apoapsis_radius_m");
    let a = num(&doc, "/orbit/sma_m");
    assert_relative_eq!(rp, re + 185e3, max_relative = 1e-12);
    assert_relative_eq!(ra, re + 35_786e3, max_relative = 1e-12);
    assert_relative_eq!(a, 0.5 * (rp + ra), max_relative = 1e-12);
    assert_relative_eq!(
        num(&doc, "/orbit/ecc"),
        (ra - rp) / (ra + rp),
        max_relative = 1e-12
    );
    let period = 2.0 * std::f64::consts::PI * (a * a * a / mu).sqrt();
    assert_relative_eq!(num(&doc, "/orbit/period_s"), period, max_relative = 1e-12);
    assert_relative_eq!(num(&doc, "/orbit/c3_m2_s2"), -mu / a, max_relative = 1e-12);
    assert_relative_eq!(
        num(&doc, "/orbit/specific_energy_j_kg"),
        -mu / (2.0 * a),
        max_relative = 1e-12
    );
    // h = r v cos(fpa) at burnout, and h^2 = mu p with p = 2 rp ra / (rp + ra).
    let sol = &solutions(&doc)[0];
    let h = burnout_r(&doc)
        * num(sol, "/speed_m_s")
        * num(sol, "/flight_path_angle_deg").to_radians().cos();
    assert_relative_eq!(
        num(&doc, "/orbit/angular_momentum_m2_s"),
        h,
        max_relative = 1e-12
    );
    assert_relative_eq!(h * h, mu * 2.0 * rp * ra / (rp + ra), max_relative = 1e-12);
}

#[test]
fn parabolic_target_has_null_sma_apoapsis_and_period_and_zero_c3() {
    let doc = solve_json(&[
        "--burnout-alt",
        "300km",
        "--periapsis-alt",
        "200km",
        "--ecc",
        "1",
    ]);
    assert!(is_null(&doc, "/orbit/sma_m"), "{doc}");
    assert!(is_null(&doc, "/orbit/apoapsis_radius_m"), "{doc}");
    assert!(is_null(&doc, "/orbit/period_s"), "{doc}");
    // Zero within 1e-14 of the escape-speed scale 2 mu / r (~1.2e8 m2/s2).
    assert_abs_diff_eq!(num(&doc, "/orbit/c3_m2_s2"), 0.0, epsilon = 1e-6);
    assert_relative_eq!(num(&doc, "/orbit/ecc"), 1.0, max_relative = 1e-12);
    for key in [
        "periapsis_radius_m",
        "specific_energy_j_kg",
        "angular_momentum_m2_s",
    ] {
        num(&doc, &format!("/orbit/{key}"));
    }
    let escape = (2.0 * mu(&doc) / burnout_r(&doc)).sqrt();
    assert_eq!(solutions(&doc).len(), 2);
    for sol in solutions(&doc) {
        assert_relative_eq!(num(sol, "/speed_m_s"), escape, max_relative = 1e-12);
    }
    assert_sensitivity_nulls_follow_orbit(&doc);
}

#[test]
fn parabolic_burnout_at_periapsis_has_null_sensitivity_rows() {
    let doc = solve_json(&[
        "--burnout-alt",
        "200km",
        "--periapsis-alt",
        "200km",
        "--ecc",
        "1",
    ]);
    assert!(is_null(&doc, "/orbit/sma_m"), "{doc}");
    assert!(is_null(&doc, "/orbit/apoapsis_radius_m"), "{doc}");
    assert!(is_null(&doc, "/orbit/period_s"), "{doc}");
    assert_eq!(solutions(&doc).len(), 1);
    assert_sensitivity_nulls_follow_orbit(&doc);
}

#[test]
fn hyperbolic_target_has_null_apoapsis_and_period_and_negative_sma() {
    let doc = solve_json(&[
        "--burnout-alt",
        "300km",
        "--periapsis-alt",
        "200km",
        "--c3",
        "12km2/s2",
    ]);
    assert!(is_null(&doc, "/orbit/apoapsis_radius_m"), "{doc}");
    assert!(is_null(&doc, "/orbit/period_s"), "{doc}");
    let a = num(&doc, "/orbit/sma_m");
    assert!(a < 0.0, "sma {a}");
    assert_relative_eq!(num(&doc, "/orbit/c3_m2_s2"), 12e6, max_relative = 1e-12);
    assert_relative_eq!(a, -mu(&doc) / 12e6, max_relative = 1e-12);
    assert!(num(&doc, "/orbit/ecc") > 1.0);
    assert_sensitivity_nulls_follow_orbit(&doc);
    // The sma row exists for a hyperbola.
    assert!(matrix(&solutions(&doc)[0])[2].is_some());
}

#[test]
fn closed_orbit_has_no_null_sensitivity_rows() {
    let doc = solve_json(&GTO_BETWEEN);
    assert_sensitivity_nulls_follow_orbit(&doc);
    for sol in solutions(&doc) {
        assert!(matrix(sol).iter().all(Option::is_some), "{sol}");
    }
}

#[test]
fn burnout_at_periapsis_gives_one_ascending_solution_with_zero_fpa() {
    let doc = solve_json(&[
        "--burnout-alt",
        "185km",
        "--periapsis-alt",
        "185km",
        "--apoapsis-alt",
        "35786km",
    ]);
    let sols = solutions(&doc);
    assert_eq!(sols.len(), 1, "{doc}");
    assert_eq!(sols[0]["branch"], "ascending");
    // The contract says exactly 0: an epsilon of 0 makes this an exact check.
    assert_abs_diff_eq!(num(&sols[0], "/flight_path_angle_deg"), 0.0, epsilon = 0.0);
    assert_abs_diff_eq!(num(&sols[0], "/true_anomaly_deg"), 0.0, epsilon = 1e-12);
    assert_vis_viva(&doc);
}

#[test]
fn burnout_at_apoapsis_gives_one_horizontal_solution_at_true_anomaly_180() {
    let doc = solve_json(&[
        "--burnout-alt",
        "400km",
        "--periapsis-alt",
        "200km",
        "--apoapsis-alt",
        "400km",
    ]);
    let sols = solutions(&doc);
    assert_eq!(sols.len(), 1, "{doc}");
    assert_abs_diff_eq!(num(&sols[0], "/flight_path_angle_deg"), 0.0, epsilon = 0.0);
    assert_relative_eq!(
        num(&sols[0], "/true_anomaly_deg"),
        180.0,
        max_relative = 1e-12
    );
    assert_vis_viva(&doc);
}

#[test]
fn burnout_within_1e_12_of_periapsis_counts_as_at_periapsis() {
    // 6578.1370000001 km differs from 6578.137 km by 1.5e-14 relative.
    let doc = solve_json(&[
        "--burnout-radius",
        "6578.1370000001km",
        "--periapsis-radius",
        "6578.137km",
        "--apoapsis-alt",
        "400km",
    ]);
    assert_eq!(solutions(&doc).len(), 1, "{doc}");
    assert_abs_diff_eq!(
        num(&solutions(&doc)[0], "/flight_path_angle_deg"),
        0.0,
        epsilon = 0.0
    );
}

#[test]
fn burnout_beyond_1e_12_of_periapsis_gives_both_branches() {
    // 6578.1370001 km differs from 6578.137 km by 1.5e-11 relative.
    let doc = solve_json(&[
        "--burnout-radius",
        "6578.1370001km",
        "--periapsis-radius",
        "6578.137km",
        "--apoapsis-alt",
        "400km",
    ]);
    assert_eq!(solutions(&doc).len(), 2, "{doc}");
    assert!(num(on_branch(&doc, "ascending"), "/flight_path_angle_deg") > 0.0);
    assert!(num(on_branch(&doc, "descending"), "/flight_path_angle_deg") < 0.0);
}

#[test]
fn burnout_between_apsides_gives_mirrored_ascending_and_descending_branches() {
    let doc = solve_json(&GTO_BETWEEN);
    assert_eq!(solutions(&doc).len(), 2);
    let up = on_branch(&doc, "ascending");
    let down = on_branch(&doc, "descending");
    let (fpa_up, nu_up) = (
        num(up, "/flight_path_angle_deg"),
        num(up, "/true_anomaly_deg"),
    );
    let (fpa_down, nu_down) = (
        num(down, "/flight_path_angle_deg"),
        num(down, "/true_anomaly_deg"),
    );
    assert!(fpa_up > 0.0, "{fpa_up}");
    assert!((0.0..=180.0).contains(&nu_up), "{nu_up}");
    assert!(fpa_down < 0.0, "{fpa_down}");
    assert!((180.0..360.0).contains(&nu_down), "{nu_down}");
    assert_relative_eq!(
        num(up, "/speed_m_s"),
        num(down, "/speed_m_s"),
        max_relative = 1e-14
    );
    assert_relative_eq!(fpa_up, -fpa_down, max_relative = 1e-14);
    assert_relative_eq!(nu_up + nu_down, 360.0, max_relative = 1e-12);
}

#[test]
fn branch_states_reach_the_targeted_apsides_by_independent_formulas() {
    let doc = solve_json(&GTO_BETWEEN);
    let re = surface(&doc);
    for sol in solutions(&doc) {
        let el = elements_from_state(
            mu(&doc),
            burnout_r(&doc),
            num(sol, "/speed_m_s"),
            num(sol, "/flight_path_angle_deg"),
        );
        // rp and ra come through e = hypot(Q cos^2 g - 1, Q sin g cos g),
        // which keeps about 1e-13 relative; 1e-10 leaves room.
        assert_relative_eq!(el.periapsis_radius_m, re + 185e3, max_relative = 1e-10);
        assert_relative_eq!(
            el.apoapsis_radius_m.expect("closed orbit"),
            re + 35_786e3,
            max_relative = 1e-10
        );
        assert_relative_eq!(
            el.true_anomaly_deg,
            num(sol, "/true_anomaly_deg"),
            max_relative = 1e-9
        );
    }
}

#[test]
fn speed_satisfies_vis_viva_for_every_kind_of_target() {
    let runs: [&[&str]; 6] = [
        &GTO_BETWEEN,
        &[
            "--burnout-alt",
            "185km",
            "--periapsis-alt",
            "185km",
            "--apoapsis-alt",
            "35786km",
        ],
        &[
            "--burnout-alt",
            "300km",
            "--periapsis-alt",
            "200km",
            "--c3",
            "12",
        ],
        &[
            "--body",
            "moon",
            "--burnout-alt",
            "18km",
            "--periapsis-alt",
            "16km",
            "--apoapsis-alt",
            "90km",
        ],
        &[
            "--burnout-alt",
            "200",
            "--apoapsis-alt",
            "1000",
            "--speed",
            "7.9",
        ],
        &[
            "--burnout-alt",
            "45km",
            "--fpa",
            "84",
            "--apoapsis-alt",
            "250km",
        ],
    ];
    for args in runs {
        assert_vis_viva(&solve_json(args));
    }
}

#[test]
fn nautical_miles_and_kilometres_give_identical_answers() {
    let rest = ["--periapsis-alt", "150km", "--apoapsis-alt", "1000km"];
    let docs: Vec<Value> = ["100nmi", "100 nmi", "185.2km", "185.2", "185200m"]
        .iter()
        .map(|alt| {
            let mut args = vec!["--burnout-alt", alt];
            args.extend_from_slice(&rest);
            solve_json(&args)
        })
        .collect();
    let base = &docs[0];
    // 100 nmi = 185.2 km exactly (international nautical mile, 1852 m).
    assert_relative_eq!(
        burnout_r(base),
        surface(base) + 185_200.0,
        max_relative = 1e-15
    );
    for doc in &docs[1..] {
        assert_relative_eq!(burnout_r(doc), burnout_r(base), max_relative = 1e-15);
        assert_eq!(solutions(doc).len(), solutions(base).len());
        for (a, b) in solutions(doc).iter().zip(solutions(base)) {
            assert_eq!(a["branch"], b["branch"]);
            for key in ["/speed_m_s", "/flight_path_angle_deg", "/true_anomaly_deg"] {
                assert_relative_eq!(num(a, key), num(b, key), max_relative = 1e-12);
            }
        }
    }
}

#[test]
fn feet_per_second_and_kilometres_per_second_give_identical_answers() {
    let docs: Vec<Value> = ["25000ft/s", "25000 ft/s", "7.62km/s", "7620m/s", "7.62"]
        .iter()
        .map(|v| solve_json(&["--burnout-alt", "200km", "--fpa", "1deg", "--speed", v]))
        .collect();
    // 25000 ft/s = 7620 m/s exactly (international foot, 0.3048 m).
    for doc in &docs {
        assert_relative_eq!(
            num(&solutions(doc)[0], "/speed_m_s"),
            7620.0,
            max_relative = 1e-14
        );
        for key in ["sma_m", "ecc", "periapsis_radius_m", "apoapsis_radius_m"] {
            let ptr = format!("/orbit/{key}");
            assert_relative_eq!(num(doc, &ptr), num(&docs[0], &ptr), max_relative = 1e-12);
        }
    }
}

#[test]
fn negative_fpa_is_accepted_with_equals_sign_and_with_space() {
    let joined = run(&[
        "solve",
        "--burnout-alt",
        "200",
        "--sma",
        "7000",
        "--fpa=-2.5deg",
        "--format",
        "json",
    ]);
    let spaced = run(&[
        "solve",
        "--burnout-alt",
        "200",
        "--sma",
        "7000",
        "--fpa",
        "-2.5deg",
        "--format",
        "json",
    ]);
    assert_eq!(joined.code, Some(0), "{}", joined.stderr);
    assert_eq!(spaced.code, Some(0), "{}", spaced.stderr);
    let a: Value = serde_json::from_str(&joined.stdout).expect("json");
    let b: Value = serde_json::from_str(&spaced.stdout).expect("json");
    for doc in [&a, &b] {
        let sols = solutions(doc);
        assert_eq!(sols.len(), 1, "{doc}");
        assert_eq!(sols[0]["branch"], "descending");
        assert_relative_eq!(
            num(&sols[0], "/flight_path_angle_deg"),
            -2.5,
            max_relative = 1e-14
        );
        // Vis-viva with the targeted a = 7000 km.
        let v = num(&sols[0], "/speed_m_s");
        assert_relative_eq!(
            v * v,
            mu(doc) * (2.0 / burnout_r(doc) - 1.0 / 7.0e6),
            max_relative = 1e-12
        );
    }
    assert_relative_eq!(
        num(&solutions(&a)[0], "/speed_m_s"),
        num(&solutions(&b)[0], "/speed_m_s"),
        max_relative = 1e-15
    );
}

#[test]
fn zenith_80_equals_fpa_10() {
    let common = ["--burnout-alt", "200", "--apoapsis-alt", "1000"];
    let by_zenith = solve_json(&[&common[..], &["--zenith", "80"]].concat());
    let by_fpa = solve_json(&[&common[..], &["--fpa", "10"]].concat());
    let (z, f) = (&solutions(&by_zenith)[0], &solutions(&by_fpa)[0]);
    assert_eq!(solutions(&by_zenith).len(), solutions(&by_fpa).len());
    assert_relative_eq!(num(z, "/flight_path_angle_deg"), 10.0, max_relative = 1e-12);
    assert_relative_eq!(
        num(z, "/speed_m_s"),
        num(f, "/speed_m_s"),
        max_relative = 1e-12
    );
    assert_relative_eq!(
        num(z, "/true_anomaly_deg"),
        num(f, "/true_anomaly_deg"),
        max_relative = 1e-12
    );
}

#[test]
fn one_target_with_fpa_gives_the_speed_that_reaches_that_apoapsis() {
    let doc = solve_json(&[
        "--burnout-alt",
        "200",
        "--apoapsis-alt",
        "1000",
        "--fpa",
        "3",
    ]);
    let target = surface(&doc) + 1000e3;
    assert_relative_eq!(
        num(&doc, "/orbit/apoapsis_radius_m"),
        target,
        max_relative = 1e-12
    );
    let sols = solutions(&doc);
    assert_eq!(sols.len(), 1, "{doc}");
    assert_relative_eq!(
        num(&sols[0], "/flight_path_angle_deg"),
        3.0,
        max_relative = 1e-14
    );
    let el = elements_from_state(mu(&doc), burnout_r(&doc), num(&sols[0], "/speed_m_s"), 3.0);
    // Independent forward map (see Elements); e loses a few digits.
    assert_relative_eq!(
        el.apoapsis_radius_m.expect("closed"),
        target,
        max_relative = 1e-10
    );
}

#[test]
fn one_target_with_speed_gives_two_flight_path_angles() {
    let doc = solve_json(&[
        "--burnout-alt",
        "200",
        "--apoapsis-alt",
        "1000",
        "--speed",
        "7.9",
    ]);
    let target = surface(&doc) + 1000e3;
    let up = on_branch(&doc, "ascending");
    let down = on_branch(&doc, "descending");
    let fpa_up = num(up, "/flight_path_angle_deg");
    assert!(fpa_up > 0.0);
    assert_relative_eq!(
        num(down, "/flight_path_angle_deg"),
        -fpa_up,
        max_relative = 1e-14
    );
    for sol in [up, down] {
        assert_relative_eq!(num(sol, "/speed_m_s"), 7900.0, max_relative = 1e-15);
        let el = elements_from_state(
            mu(&doc),
            burnout_r(&doc),
            7900.0,
            num(sol, "/flight_path_angle_deg"),
        );
        assert_relative_eq!(
            el.apoapsis_radius_m.expect("closed"),
            target,
            max_relative = 1e-10
        );
    }
}

#[test]
fn speed_and_fpa_alone_give_the_orbit_they_reach() {
    let doc = solve_json(&["--burnout-alt", "200", "--speed", "7.9", "--fpa", "1"]);
    let sols = solutions(&doc);
    assert_eq!(sols.len(), 1, "{doc}");
    assert_eq!(sols[0]["branch"], "ascending");
    assert_relative_eq!(num(&sols[0], "/speed_m_s"), 7900.0, max_relative = 1e-15);
    assert_relative_eq!(
        num(&sols[0], "/flight_path_angle_deg"),
        1.0,
        max_relative = 1e-15
    );
    let el = elements_from_state(mu(&doc), burnout_r(&doc), 7900.0, 1.0);
    assert_relative_eq!(num(&doc, "/orbit/sma_m"), el.sma_m, max_relative = 1e-12);
    assert_relative_eq!(num(&doc, "/orbit/ecc"), el.ecc, max_relative = 1e-10);
    assert_relative_eq!(
        num(&doc, "/orbit/periapsis_radius_m"),
        el.periapsis_radius_m,
        max_relative = 1e-12
    );
    assert_relative_eq!(
        num(&doc, "/orbit/apoapsis_radius_m"),
        el.apoapsis_radius_m.expect("closed"),
        max_relative = 1e-12
    );
    assert_relative_eq!(
        num(&sols[0], "/true_anomaly_deg"),
        el.true_anomaly_deg,
        max_relative = 1e-9
    );
}

#[test]
fn forward_problem_with_negative_fpa_is_descending() {
    let doc = solve_json(&["--burnout-alt", "200", "--speed", "7.9", "--fpa=-1"]);
    let sols = solutions(&doc);
    assert_eq!(sols.len(), 1, "{doc}");
    assert_eq!(sols[0]["branch"], "descending");
    let nu = num(&sols[0], "/true_anomaly_deg");
    assert!((180.0..360.0).contains(&nu), "{nu}");
}

#[test]
fn ecc_with_fpa_on_an_ellipse_gives_two_speeds() {
    let doc = solve_json(&["--burnout-alt", "200", "--ecc", "0.1", "--fpa", "2"]);
    let sols = solutions(&doc);
    assert_eq!(sols.len(), 2, "{doc}");
    let speeds: Vec<f64> = sols.iter().map(|s| num(s, "/speed_m_s")).collect();
    assert!(
        (speeds[0] - speeds[1]).abs() > 1e-3 * speeds[0],
        "speeds should differ: {speeds:?}"
    );
    for sol in sols {
        // Positive fpa: both on the ascending branch.
        assert_eq!(sol["branch"], "ascending");
        assert_relative_eq!(
            num(sol, "/flight_path_angle_deg"),
            2.0,
            max_relative = 1e-14
        );
        let el = elements_from_state(mu(&doc), burnout_r(&doc), num(sol, "/speed_m_s"), 2.0);
        assert_relative_eq!(el.ecc, 0.1, max_relative = 1e-10);
    }
}

#[test]
fn csv_output_has_header_and_one_row_per_solution_matching_json() {
    let args = [
        "--burnout-alt",
        "200",
        "--apoapsis-alt",
        "1000",
        "--speed",
        "7.9",
    ];
    let r = run(&[&["solve"][..], &args, &["--format", "csv"]].concat());
    assert_eq!(r.code, Some(0), "{}", r.stderr);
    let doc = solve_json(&args);
    let mut reader = csv::Reader::from_reader(r.stdout.as_bytes());
    let headers = reader.headers().expect("csv header").clone();
    let col = |name: &str| {
        headers
            .iter()
            .position(|h| h == name)
            .unwrap_or_else(|| panic!("no {name} column in {headers:?}"))
    };
    let (speed_col, fpa_col, branch_col) = (
        col("speed_m_s"),
        col("flight_path_angle_deg"),
        col("branch"),
    );
    let rows: Vec<csv::StringRecord> = reader
        .records()
        .map(|rec| rec.expect("csv record"))
        .collect();
    assert_eq!(rows.len(), solutions(&doc).len());
    for row in &rows {
        let sol = on_branch(&doc, &row[branch_col]);
        let speed: f64 = row[speed_col].parse().expect("speed is a number");
        let fpa: f64 = row[fpa_col].parse().expect("fpa is a number");
        assert_relative_eq!(speed, num(sol, "/speed_m_s"), max_relative = 1e-15);
        assert_relative_eq!(
            fpa,
            num(sol, "/flight_path_angle_deg"),
            max_relative = 1e-15
        );
    }
}

#[test]
fn us_units_table_shows_nautical_miles_and_feet_per_second() {
    let args = [
        "--burnout-alt",
        "100nmi",
        "--periapsis-alt",
        "100nmi",
        "--apoapsis-alt",
        "19323nmi",
    ];
    let table = solve_table(&[&args[..], &["--units", "us"]].concat());
    assert!(table.contains("nmi"), "{table}");
    assert!(table.contains("ft/s"), "{table}");
    // The speed in the ascending row is the JSON speed converted to ft/s.
    let row = table
        .lines()
        .find(|l| l.trim_start().starts_with("ascending"))
        .unwrap_or_else(|| panic!("no ascending row: {table}"));
    let shown: f64 = row
        .split_whitespace()
        .nth(1)
        .and_then(|t| t.parse().ok())
        .unwrap_or_else(|| panic!("no speed in row '{row}'"));
    let doc = solve_json(&args);
    let want_ft_s = num(&solutions(&doc)[0], "/speed_m_s") / 0.3048;
    // The table rounds to 0.01 ft/s.
    assert_abs_diff_eq!(shown, want_ft_s, epsilon = 0.006);
}

#[test]
fn table_output_carries_the_caution_line() {
    let table = solve_table(&GTO_BETWEEN);
    assert!(table.lines().any(|l| l.starts_with("caution:")), "{table}");
}

#[test]
fn suborbital_trajectory_warns_and_still_solves() {
    let doc = solve_json(&[
        "--burnout-alt",
        "45km",
        "--fpa",
        "84",
        "--apoapsis-alt",
        "250km",
    ]);
    let w = warnings(&doc);
    assert!(w.iter().any(|w| w.starts_with("suborbital")), "{w:?}");
    assert!(num(&doc, "/orbit/periapsis_radius_m") < surface(&doc));
    assert_relative_eq!(
        num(&doc, "/orbit/apoapsis_radius_m"),
        surface(&doc) + 250e3,
        max_relative = 1e-12
    );
    let speed = num(&solutions(&doc)[0], "/speed_m_s");
    assert!(speed.is_finite() && speed > 0.0, "{speed}");
}

#[test]
fn orbit_clear_of_the_surface_has_no_suborbital_warning() {
    let doc = solve_json(&GTO_BETWEEN);
    assert!(warnings(&doc).is_empty(), "{:?}", warnings(&doc));
}

#[test]
fn periapsis_below_default_earth_minimum_of_150_km_warns() {
    let low = solve_json(&[
        "--burnout-alt",
        "200",
        "--periapsis-alt",
        "149",
        "--apoapsis-alt",
        "400",
    ]);
    let w = warnings(&low);
    assert_eq!(w.len(), 1, "{w:?}");
    assert!(w[0].contains("periapsis"), "{w:?}");
    assert!(!w[0].starts_with("suborbital"), "{w:?}");
    let clear = solve_json(&[
        "--burnout-alt",
        "200",
        "--periapsis-alt",
        "151",
        "--apoapsis-alt",
        "400",
    ]);
    assert!(warnings(&clear).is_empty(), "{:?}", warnings(&clear));
}

#[test]
fn min_periapsis_alt_flag_moves_the_warning_threshold() {
    let base = [
        "--burnout-alt",
        "200",
        "--periapsis-alt",
        "120",
        "--apoapsis-alt",
        "400",
    ];
    let relaxed = solve_json(&[&base[..], &["--min-periapsis-alt", "100km"]].concat());
    assert!(warnings(&relaxed).is_empty(), "{:?}", warnings(&relaxed));
    let strict = solve_json(&[&base[..], &["--min-periapsis-alt", "130km"]].concat());
    assert_eq!(warnings(&strict).len(), 1, "{:?}", warnings(&strict));
    assert!(warnings(&strict)[0].contains("periapsis"));
}

#[test]
fn flags_beside_case_override_the_case_values() {
    let case = case_path("gto-injection.toml");
    let plain = solve_json(&["--case", &case]);
    let re = surface(&plain);
    assert_relative_eq!(
        num(&plain, "/orbit/apoapsis_radius_m"),
        re + 35_786e3,
        max_relative = 1e-12
    );

    let higher = solve_json(&["--case", &case, "--apoapsis-alt", "40000km"]);
    assert_relative_eq!(
        num(&higher, "/orbit/apoapsis_radius_m"),
        re + 40_000e3,
        max_relative = 1e-12
    );
    // Values the flags did not touch still come from the case.
    assert_relative_eq!(
        num(&higher, "/orbit/periapsis_radius_m"),
        re + 185e3,
        max_relative = 1e-12
    );
    assert_relative_eq!(burnout_r(&higher), re + 200e3, max_relative = 1e-15);

    // A flag replaces the case's value of the same quantity given another way.
    let by_radius = solve_json(&["--case", &case, "--apoapsis-radius", "40000km"]);
    assert_relative_eq!(
        num(&by_radius, "/orbit/apoapsis_radius_m"),
        40_000e3,
        max_relative = 1e-12
    );
    let moved = solve_json(&["--case", &case, "--burnout-radius", "6600km"]);
    assert_relative_eq!(burnout_r(&moved), 6_600e3, max_relative = 1e-15);
}

#[test]
fn min_periapsis_alt_flag_overrides_the_case_option() {
    let case = case_path("gto-injection.toml");
    assert!(warnings(&solve_json(&["--case", &case])).is_empty());
    let doc = solve_json(&["--case", &case, "--min-periapsis-alt", "190km"]);
    assert_eq!(warnings(&doc).len(), 1, "{:?}", warnings(&doc));
}

#[test]
fn sensitivities_match_central_differences_of_the_forward_problem() {
    let doc = solve_json(&GTO_BETWEEN);
    let sol = on_branch(&doc, "ascending");
    let (v, fpa, r) = (
        num(sol, "/speed_m_s"),
        num(sol, "/flight_path_angle_deg"),
        burnout_r(&doc),
    );
    let m = matrix(sol);
    let orbit_at = |v: f64, fpa: f64, r: f64| -> [f64; 5] {
        let d = solve_json(&[
            "--burnout-radius",
            &format!("{r}m"),
            "--speed",
            &format!("{v}m/s"),
            &format!("--fpa={fpa}deg"),
        ]);
        SENSITIVITY_ROWS.map(|k| num(&d, &format!("/orbit/{k}")))
    };
    // Steps: 1 m/s, 0.01 deg, 100 m. Central differences are second-order,
    // so the truncation error is far below the 1e-5 relative tolerance;
    // the absolute floors cover entries that are exactly zero (sma and
    // period do not depend on the angle) where only rounding remains.
    let steps = [1.0, 0.01, 100.0];
    let floors = [1e-3, 1e-3, 1e-3, 1e-12, 1e-6];
    for (col, h) in steps.iter().enumerate() {
        let shift = |sign: f64| {
            let mut x = [v, fpa, r];
            x[col] += sign * h;
            orbit_at(x[0], x[1], x[2])
        };
        let (plus, minus) = (shift(1.0), shift(-1.0));
        for row in 0..5 {
            let fd = (plus[row] - minus[row]) / (2.0 * h);
            let analytic = m[row].as_ref().expect("closed orbit row")[col];
            assert_relative_eq!(analytic, fd, max_relative = 1e-5, epsilon = floors[row]);
        }
    }
}

#[test]
fn vertical_shot_is_closed_with_every_sensitivity_row() {
    // Straight up at 7.8 km/s from 200 km: a near-rectilinear ellipse. Its
    // apoapsis follows from energy alone, 1/ra = 1/r - v^2/(2 mu).
    let doc = crate::solve_json(&["--burnout-alt", "200", "--speed", "7.8", "--fpa", "90"]);
    let mu = doc["body"]["mu_m3_s2"].as_f64().unwrap();
    let r = doc["burnout_radius_m"].as_f64().unwrap();
    let ra = doc["orbit"]["apoapsis_radius_m"].as_f64().unwrap();
    approx::assert_relative_eq!(
        ra,
        1.0 / (1.0 / r - 7800.0f64.powi(2) / (2.0 * mu)),
        max_relative = 1e-12
    );
    // Closed: e just below 1 (serde_json's default parser may round the
    // printed 0.9999999999999999 up, so check the text), sma present.
    assert_ne!(doc["orbit"]["ecc"].to_string(), "1.0");
    assert!(doc["orbit"]["sma_m"].is_number());
    let m = doc["solutions"][0]["sensitivity"]["matrix"]
        .as_array()
        .unwrap();
    assert!(m.iter().all(|row| row.is_array()), "{m:?}");
    // d ra / d v from energy: dra/dv = 2 v ra^2 / (2 mu) ... = v ra^2 / mu.
    let d = m[1][0].as_f64().unwrap();
    approx::assert_relative_eq!(d, 7800.0 * ra * ra / mu, max_relative = 1e-6);
}
