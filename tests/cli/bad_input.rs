//! Bad inputs: each must exit with the contract's code (2 usage or
//! unparseable value, 3 infeasible or inconsistent target), print exactly one
//! line on stderr naming the flag or quantity, print nothing on stdout, and
//! never panic.

use crate::{case_path, run, Run};

/// Runs `burnout solve ARGS...` and checks the error contract: the exit
/// code is one of `codes`, stdout is empty, stderr is one line with no panic
/// or backtrace, and it contains every string in `needles`.
fn assert_rejected(args: &[&str], codes: &[i32], needles: &[&str]) -> Run {
    let mut all = vec!["solve"];
    all.extend_from_slice(args);
    let r = run(&all);
    assert!(
        r.code.is_some_and(|c| codes.contains(&c)),
        "args {all:?}: exit {:?}, expected one of {codes:?}; stderr: {}",
        r.code,
        r.stderr
    );
    assert!(
        r.stdout.is_empty(),
        "args {all:?}: stdout not empty: {}",
        r.stdout
    );
    assert_eq!(
        r.stderr.lines().count(),
        1,
        "args {all:?}: stderr is not one line: {:?}",
        r.stderr
    );
    assert!(!r.stderr.trim().is_empty(), "args {all:?}: stderr is blank");
    for bad in ["panicked", "stack backtrace", "RUST_BACKTRACE"] {
        assert!(!r.stderr.contains(bad), "args {all:?}: {}", r.stderr);
    }
    for needle in needles {
        assert!(
            r.stderr.contains(needle),
            "args {all:?}: stderr does not mention '{needle}': {}",
            r.stderr
        );
    }
    r
}

const BURNOUT_200: [&str; 2] = ["--burnout-alt", "200km"];

fn with_burnout<'a>(rest: &[&'a str]) -> Vec<&'a str> {
    [&BURNOUT_200[..], rest].concat()
}

#[test]
fn unknown_body_is_a_usage_error_naming_it() {
    assert_rejected(
        &with_burnout(&[
            "--body",
            "pluto",
            "--periapsis-alt",
            "200",
            "--apoapsis-alt",
            "400",
        ]),
        &[2],
        &["pluto", "--body"],
    );
}

#[test]
fn three_conflicting_targets_are_rejected() {
    // (rp + ra) / 2 = 6678 km, nowhere near the 9000 km sma: no orbit fits.
    // Today there is no closed form (2); a least-squares solver would report
    // the conflict (3). Either way the run must fail cleanly.
    assert_rejected(
        &with_burnout(&[
            "--periapsis-alt",
            "200",
            "--apoapsis-alt",
            "400",
            "--sma",
            "9000",
        ]),
        &[2, 3],
        &["sma"],
    );
}

#[test]
fn one_target_alone_is_a_usage_error() {
    assert_rejected(
        &with_burnout(&["--apoapsis-alt", "400"]),
        &[2],
        &["--apoapsis-alt"],
    );
}

#[test]
fn no_target_at_all_is_a_usage_error() {
    assert_rejected(&BURNOUT_200, &[2], &["target"]);
}

#[test]
fn periapsis_above_apoapsis_is_infeasible() {
    assert_rejected(
        &[
            "--burnout-alt",
            "300",
            "--periapsis-alt",
            "500",
            "--apoapsis-alt",
            "400",
        ],
        &[3],
        &["periapsis radius", "apoapsis radius"],
    );
}

#[test]
fn burnout_below_periapsis_is_infeasible() {
    assert_rejected(
        &[
            "--burnout-alt",
            "300",
            "--periapsis-alt",
            "350",
            "--apoapsis-alt",
            "400",
        ],
        &[3],
        &["below periapsis radius", "6678137 m", "6728137 m"],
    );
}

#[test]
fn burnout_above_apoapsis_is_infeasible() {
    assert_rejected(
        &[
            "--burnout-alt",
            "500",
            "--periapsis-alt",
            "350",
            "--apoapsis-alt",
            "400",
        ],
        &[3],
        &["above apoapsis radius", "6878137 m", "6778137 m"],
    );
}

#[test]
fn burnout_altitude_under_the_surface_is_infeasible() {
    assert_rejected(
        &[
            "--burnout-alt=-10km",
            "--periapsis-alt",
            "200",
            "--apoapsis-alt",
            "400",
        ],
        &[3],
        &["surface"],
    );
}

#[test]
fn burnout_radius_under_the_surface_is_infeasible() {
    assert_rejected(
        &[
            "--burnout-radius",
            "6000km",
            "--periapsis-alt",
            "200",
            "--apoapsis-alt",
            "400",
        ],
        &[3],
        &["surface", "6000000 m"],
    );
}

#[test]
fn nan_is_a_usage_error_naming_the_flag() {
    assert_rejected(
        &[
            "--burnout-alt",
            "NaN",
            "--periapsis-alt",
            "200",
            "--apoapsis-alt",
            "400",
        ],
        &[2],
        &["--burnout-alt", "NaN"],
    );
}

#[test]
fn infinity_is_a_usage_error_naming_the_flag() {
    assert_rejected(
        &with_burnout(&["--periapsis-alt", "inf", "--apoapsis-alt", "400"]),
        &[2],
        &["--periapsis-alt", "inf"],
    );
}

#[test]
fn negative_infinity_is_a_usage_error_naming_the_flag() {
    assert_rejected(
        &with_burnout(&["--periapsis-alt", "200", "--apoapsis-alt", "-inf"]),
        &[2],
        &["--apoapsis-alt", "-inf"],
    );
}

#[test]
fn negative_periapsis_radius_is_a_usage_error() {
    assert_rejected(
        &with_burnout(&["--periapsis-radius=-7000", "--apoapsis-alt", "400"]),
        &[2],
        &["periapsis radius"],
    );
}

#[test]
fn range_errors_name_the_flag_and_the_users_text() {
    assert_rejected(
        &with_burnout(&["--periapsis-radius=-7000", "--apoapsis-alt", "400"]),
        &[2],
        &["--periapsis-radius", "-7000"],
    );
    assert_rejected(
        &with_burnout(&["--apoapsis-alt", "400", "--fpa", "95"]),
        &[2],
        &["--fpa", "95"],
    );
}

#[test]
fn overflowing_magnitude_is_a_usage_error() {
    assert_rejected(
        &with_burnout(&["--periapsis-alt", "200", "--apoapsis-alt", "1e400"]),
        &[2],
        &["--apoapsis-alt", "1e400"],
    );
}

#[test]
fn magnitude_overflowing_in_unit_conversion_is_a_usage_error() {
    assert_rejected(
        &with_burnout(&["--periapsis-alt", "200", "--apoapsis-alt", "1e305nmi"]),
        &[2],
        &["--apoapsis-alt"],
    );
}

#[test]
fn absurd_but_finite_apoapsis_is_rejected_or_solved_with_finite_numbers() {
    let args = with_burnout(&["--periapsis-alt", "200", "--apoapsis-alt", "1e300km"]);
    let mut all = vec!["solve"];
    all.extend_from_slice(&args);
    all.extend_from_slice(&["--format", "json"]);
    let r = run(&all);
    if r.code == Some(0) {
        // An answer is only acceptable if every number the contract
        // promises for an ellipse is a number.
        let doc: serde_json::Value = serde_json::from_str(&r.stdout).expect("json");
        for ptr in [
            "/solutions/0/speed_m_s",
            "/orbit/period_s",
            "/orbit/angular_momentum_m2_s",
            "/orbit/sma_m",
        ] {
            assert!(
                doc.pointer(ptr).and_then(|v| v.as_f64()).is_some(),
                "{ptr} is not a number: {doc}"
            );
        }
    } else {
        assert_rejected(&args, &[2, 3], &["apoapsis"]);
    }
}

#[test]
fn text_instead_of_a_number_is_a_usage_error() {
    assert_rejected(
        &with_burnout(&["--periapsis-alt", "two", "--apoapsis-alt", "400"]),
        &[2],
        &["--periapsis-alt", "'two'"],
    );
}

#[test]
fn speed_unit_on_a_length_is_a_usage_error_saying_so() {
    assert_rejected(
        &with_burnout(&["--periapsis-alt", "200", "--sma", "7km/s"]),
        &[2],
        &["--sma", "7km/s", "speed unit"],
    );
}

#[test]
fn unit_on_eccentricity_is_a_usage_error() {
    assert_rejected(
        &with_burnout(&["--ecc", "0.1km", "--fpa", "1"]),
        &[2],
        &["--ecc", "0.1km"],
    );
}

#[test]
fn unknown_unit_is_a_usage_error_naming_it() {
    assert_rejected(
        &[
            "--burnout-alt",
            "12parsecs",
            "--periapsis-alt",
            "200",
            "--apoapsis-alt",
            "400",
        ],
        &[2],
        &["--burnout-alt", "parsecs"],
    );
}

#[test]
fn unknown_flag_is_a_one_line_usage_error() {
    assert_rejected(
        &with_burnout(&[
            "--periapsis-alt",
            "200",
            "--apoapsis-alt",
            "400",
            "--frobnicate",
            "3",
        ]),
        &[2],
        &["--frobnicate"],
    );
}

#[test]
fn fpa_above_90_deg_is_out_of_range() {
    assert_rejected(
        &with_burnout(&["--apoapsis-alt", "400", "--fpa", "95"]),
        &[2],
        &["flight-path angle", "95"],
    );
}

#[test]
fn fpa_below_minus_90_deg_is_out_of_range() {
    assert_rejected(
        &with_burnout(&["--apoapsis-alt", "400", "--fpa=-95"]),
        &[2],
        &["flight-path angle", "-95"],
    );
}

#[test]
fn zenith_above_180_deg_is_out_of_range() {
    assert_rejected(
        &with_burnout(&["--apoapsis-alt", "400", "--zenith", "200"]),
        &[2],
        &["zenith"],
    );
}

#[test]
fn fpa_and_zenith_together_are_a_usage_error() {
    assert_rejected(
        &with_burnout(&["--apoapsis-alt", "400", "--fpa", "5", "--zenith", "85"]),
        &[2],
        &["--fpa", "--zenith"],
    );
}

#[test]
fn zero_speed_is_a_usage_error() {
    assert_rejected(
        &with_burnout(&["--speed", "0", "--fpa", "1"]),
        &[2],
        &["speed"],
    );
}

#[test]
fn mu_without_radius_is_a_usage_error() {
    assert_rejected(
        &with_burnout(&[
            "--mu",
            "398600.4418",
            "--periapsis-alt",
            "200",
            "--apoapsis-alt",
            "400",
        ]),
        &[2],
        &["--mu", "--radius"],
    );
}

#[test]
fn burnout_alt_and_burnout_radius_together_are_a_usage_error() {
    assert_rejected(
        &[
            "--burnout-alt",
            "200",
            "--burnout-radius",
            "6600",
            "--periapsis-alt",
            "200",
            "--apoapsis-alt",
            "400",
        ],
        &[2],
        &["--burnout-alt", "--burnout-radius"],
    );
}

#[test]
fn apoapsis_with_speed_above_escape_is_infeasible() {
    assert_rejected(
        &with_burnout(&["--apoapsis-alt", "400", "--speed", "12km/s"]),
        &[3],
        &["escape", "12000 m/s"],
    );
}

#[test]
fn apoapsis_with_speed_exactly_at_escape_is_infeasible() {
    // Read the escape speed the tool itself uses, and give it back exactly
    // (Rust's float Display round-trips).
    let doc = crate::solve_json(&with_burnout(&["--speed", "7.8", "--fpa", "0"]));
    let escape = crate::num(&doc, "/escape_speed_m_s");
    assert!(escape > 11_000.0 && escape < 11_020.0, "{escape}");
    let speed = format!("{escape}m/s");
    assert_rejected(
        &with_burnout(&["--apoapsis-alt", "400", "--speed", &speed]),
        &[3],
        &["escape"],
    );
}

#[test]
fn unreachable_apoapsis_with_speed_quotes_the_speed_given() {
    assert_rejected(
        &with_burnout(&["--apoapsis-alt", "400", "--speed", "11km/s"]),
        &[3],
        &["11000 m/s"],
    );
}

#[test]
fn missing_case_file_is_a_usage_error() {
    let missing = case_path("no-such-case.toml");
    assert_rejected(
        &["--case", &missing],
        &[2],
        &["--case", "no-such-case.toml"],
    );
}

#[test]
fn malformed_case_file_is_a_usage_error() {
    let dir = tempfile::tempdir().expect("tempdir");
    let path = dir.path().join("broken.toml");
    std::fs::write(&path, "[target\nperiapsis-alt = 200\n").expect("write case");
    let p = path.to_string_lossy();
    assert_rejected(&["--case", &p], &[2], &["broken.toml"]);
}

#[test]
fn case_file_with_unknown_key_is_a_usage_error_naming_it() {
    let dir = tempfile::tempdir().expect("tempdir");
    let path = dir.path().join("typo.toml");
    std::fs::write(
        &path,
        "[burnout]\nalt = \"200 km\"\n[target]\nperiapsis-alt = 200\napogee = 400\n",
    )
    .expect("write case");
    let p = path.to_string_lossy();
    assert_rejected(&["--case", &p], &[2], &["apogee"]);
}

#[test]
fn case_file_with_text_value_is_a_usage_error_naming_the_key() {
    let dir = tempfile::tempdir().expect("tempdir");
    let path = dir.path().join("words.toml");
    std::fs::write(
        &path,
        "[burnout]\nalt = \"200 km\"\n[target]\nperiapsis-alt = \"two hundred\"\napoapsis-alt = 400\n",
    )
    .expect("write case");
    let p = path.to_string_lossy();
    assert_rejected(&["--case", &p], &[2], &["periapsis-alt", "two hundred"]);
}

#[test]
fn empty_flag_value_is_an_error_not_a_missing_flag() {
    assert_rejected(
        &with_burnout(&["--periapsis-alt", "185", "--apoapsis-alt", ""]),
        &[2],
        &["--apoapsis-alt", "empty value"],
    );
    assert_rejected(
        &with_burnout(&[
            "--periapsis-alt",
            "185",
            "--apoapsis-alt",
            "300",
            "--body",
            " ",
        ]),
        &[2],
        &["--body", "empty value"],
    );
}

#[test]
fn tiny_negative_sma_needing_a_superluminal_speed_is_infeasible() {
    // sma -1e-20 m is a hyperbola whose C3 needs ~6e15 m/s at burnout.
    assert_rejected(
        &with_burnout(&["--periapsis-alt", "185", "--sma", "-1e-20m"]),
        &[3],
        &["speed of light"],
    );
}

#[test]
fn clap_errors_stay_one_line_and_keep_their_detail() {
    let r = run(&["solve", "--format", "JSON", "--burnout-alt", "1"]);
    assert_eq!(r.code, Some(2));
    assert_eq!(r.stderr.lines().count(), 1, "{}", r.stderr);
    assert!(r.stderr.contains("possible values"), "{}", r.stderr);
    let r = run(&["batch"]);
    assert_eq!(r.code, Some(2));
    assert_eq!(r.stderr.lines().count(), 1, "{}", r.stderr);
    assert!(r.stderr.contains("<INPUT.csv>"), "{}", r.stderr);
    let r = run(&[]);
    assert_eq!(r.code, Some(2));
    assert_eq!(r.stderr.lines().count(), 1, "{}", r.stderr);
}

#[test]
fn invalid_correlation_set_names_the_correlation_flags() {
    let r = run(&[
        "budget",
        "--burnout-alt",
        "200",
        "--periapsis-alt",
        "185",
        "--apoapsis-alt",
        "35786",
        "--speed-sigma",
        "2m/s",
        "--fpa-sigma",
        "0.1",
        "--alt-sigma",
        "1",
        "--speed-fpa-corr",
        "0.9",
        "--speed-alt-corr",
        "0.9",
        "--fpa-alt-corr",
        "-0.9",
    ]);
    assert_eq!(r.code, Some(2));
    assert_eq!(r.stderr.lines().count(), 1);
    assert!(r.stderr.contains("--fpa-alt-corr"), "{}", r.stderr);
    let r = run(&[
        "budget",
        "--burnout-alt",
        "200",
        "--periapsis-alt",
        "185",
        "--apoapsis-alt",
        "35786",
        "--speed-sigma",
        "2m/s",
        "--speed-fpa-corr",
        "0.3",
    ]);
    assert_eq!(r.code, Some(2));
    assert!(r.stderr.contains("--fpa-sigma"), "{}", r.stderr);
}

/// Hardening: a result that is not finite (a gravitational parameter of
/// 1e-300 km3/s2 makes the period overflow) is a one-line error naming the
/// quantity, never an `inf` or a silent null; in a scan it is an invalid row.
#[test]
fn non_finite_result_is_an_error_naming_the_quantity() {
    let args = [
        "--mu",
        "1e-300",
        "--radius",
        "6000",
        "--burnout-alt",
        "300",
        "--periapsis-alt",
        "200",
        "--apoapsis-alt",
        "2000",
    ];
    let mut solve = vec!["solve"];
    solve.extend_from_slice(&args);
    let r = super::run(&solve);
    assert_eq!(r.code, Some(2), "{}", r.stdout);
    assert!(r.stdout.is_empty());
    assert_eq!(r.stderr.lines().count(), 1);
    assert!(
        r.stderr.contains("period (s)") && r.stderr.contains("not a finite"),
        "{}",
        r.stderr
    );
    let mut scan = vec!["scan", "--format", "csv"];
    scan.extend_from_slice(&args);
    let alt = scan.iter().position(|a| *a == "--burnout-alt").unwrap() + 1;
    scan[alt] = "300..400:50";
    let r = super::run(&scan);
    assert_ne!(r.code, Some(0));
    assert_eq!(r.stdout.matches(",invalid,").count(), 3, "{}", r.stdout);
}

/// Hardening: a scan whose point count overflows 64 bits reports its
/// magnitude, not a saturated integer.
#[test]
fn huge_scan_reports_its_point_count_not_a_saturated_integer() {
    let r = super::run(&[
        "scan",
        "--burnout-alt",
        "0..9e8:1",
        "--periapsis-alt",
        "0..9e8:1",
        "--apoapsis-alt",
        "0..9e8:1",
    ]);
    assert_eq!(r.code, Some(2));
    assert!(r.stderr.contains("7.290e26 points"), "{}", r.stderr);
    assert!(!r.stderr.contains("18446744073709551615"), "{}", r.stderr);
}
