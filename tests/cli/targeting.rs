//! Numerical targeting in every regime: regression tests, one per class of
//! defect found by the independent coast-time reference
//! (scripts/coast_reference.py) and listed in the numerical-targeting issue.
#![allow(clippy::excessive_precision)] // reference digits as the reference printed them

use super::{is_null, num, run, solutions, solve_json, sorted, sorted_pairs};
use approx::assert_relative_eq;

const EARTH_MU: f64 = 3.986004418e14; // IERS Conventions (2010), Table 1.1
const EARTH_R: f64 = 6_378_137.0; // WGS 84 equatorial radius

/// Class 1: a free burnout altitude with several roots gives each solution
/// its own radius. Independent check: with speed v, angle g and target e,
/// Q = r v^2/mu = 1 +- sqrt(e^2 - sin^2 g)/cos g (from e^2 = 1 - Q(2-Q)cos^2 g).
#[test]
fn free_altitude_roots_each_carry_their_own_burnout_radius() {
    let doc = solve_json(&["--speed", "7", "--fpa", "10", "--ecc", "0.2"]);
    let sols = solutions(&doc);
    assert_eq!(sols.len(), 2);
    let (v, g, e) = (7000.0f64, 10f64.to_radians(), 0.2f64);
    let d = (e * e - g.sin().powi(2)).sqrt() / g.cos();
    let mut want = [
        (1.0 - d) * EARTH_MU / (v * v),
        (1.0 + d) * EARTH_MU / (v * v),
    ];
    want.sort_by(f64::total_cmp);
    let got = sorted(&doc, "/burnout_radius_m");
    for (g, w) in got.iter().zip(want) {
        assert_relative_eq!(*g, w, max_relative = 1e-12);
    }
    assert!(
        is_null(&doc, "/burnout_radius_m"),
        "radii differ: top level is null"
    );
    for s in sols {
        assert_relative_eq!(
            num(s, "/burnout_alt_m"),
            num(s, "/burnout_radius_m") - EARTH_R,
            max_relative = 1e-12
        );
        assert!(num(s, "/residuals/ecc").abs() < 1e-12);
    }
    // CSV: a burnout_radius_m column per row.
    let r = run(&[
        "solve", "--speed", "7", "--fpa", "10", "--ecc", "0.2", "--format", "csv",
    ]);
    assert_eq!(r.code, Some(0), "{}", r.stderr);
    let mut rd = csv::Reader::from_reader(r.stdout.as_bytes());
    let col = rd
        .headers()
        .unwrap()
        .iter()
        .position(|h| h == "burnout_radius_m")
        .expect("burnout_radius_m column");
    let mut radii: Vec<f64> = rd
        .records()
        .map(|rec| rec.unwrap()[col].parse().unwrap())
        .collect();
    radii.sort_by(f64::total_cmp);
    assert_relative_eq!(radii[0], got[0], max_relative = 1e-15);
    assert_relative_eq!(radii[1], got[1], max_relative = 1e-15);
    // The table shows an altitude per row.
    let t = run(&["solve", "--speed", "7", "--fpa", "10", "--ecc", "0.2"]);
    assert!(t.stdout.contains("alt km"), "{}", t.stdout);
}

/// Class 2: three consistent energy-only targets define no orbit shape.
#[test]
fn energy_only_target_sets_are_refused_as_a_continuous_family() {
    let r = run(&[
        "solve",
        "--burnout-alt",
        "300",
        "--sma",
        "7000",
        "--period",
        "5828.5s",
        "--c3=-56.94",
    ]);
    assert_eq!(r.code, Some(2), "{}", r.stdout);
    assert_eq!(r.stderr.lines().count(), 1);
    assert!(r.stderr.contains("continuous family"), "{}", r.stderr);
    assert!(r.stdout.is_empty());
}

/// Class 3: near-parabolic coast to periapsis, a root at fpa -89.993 deg
/// next to the fold of the eccentricity sheet. Reference roots from the
/// independent 50-digit mpmath reference (scripts/coast_reference.py,
/// seed 1, case 41).
///
/// A pure two-body check: the body is Jupiter's mu shrunk to a 1 mm
/// radius (burnout at Jupiter's radius 71492 km plus 52667.170145177058
/// km), since two of the roots pass periapses under Jupiter's surface and
/// about Jupiter itself meet it before periapsis (they are no solutions
/// there; the edges tests cover that rule).
#[test]
fn near_parabolic_near_radial_coast_roots_are_all_found() {
    let doc = solve_json(&[
        "--mu",
        "1.267127648e17m3/s2",
        "--radius",
        "0.001m",
        "--burnout-radius",
        "124159170.14517707m",
        "--ecc",
        "0.99999999268179559",
        "--time-to-periapsis",
        "0.64587670918057900h",
    ]);
    let got: Vec<(f64, f64)> = sorted_pairs(&doc, "/flight_path_angle_deg", "/speed_m_s")
        .into_iter()
        .map(|(g, v)| (v, g))
        .collect();
    let want = [
        (29027.915115561257, -89.992960464568573),
        (45178.912946903939, -62.220993299988853),
        (45178.913215243742, -30.869719495645356),
    ];
    assert_eq!(got.len(), 3, "{got:?}");
    for (g, w) in got.iter().zip(want) {
        // The first root sits 2e-6 rad from the fold of the sheet: its
        // speed is conditioned to about 1e-12 there.
        assert_relative_eq!(g.0, w.0, max_relative = 1e-11);
        assert_relative_eq!(g.1, w.1, max_relative = 1e-9);
    }
}

/// Classes 4 and 6: near-circular, tiny flight-path angle, a free burnout
/// radius with two roots 2% apart. Reference: scripts/coast_reference.py
/// (seed 1, case 248): r = 9143789.9485021245 m and 9349120.8100025534 m.
#[test]
fn near_circular_tiny_angle_close_radius_roots_are_both_found() {
    let doc = solve_json(&[
        "--fpa=-0.0076802983696562118deg",
        "--speed",
        "6527.4567841688505m/s",
        "--time-to-periapsis",
        "4199.3126060777800s",
    ]);
    let r = sorted(&doc, "/burnout_radius_m");
    assert_eq!(r.len(), 2, "{r:?}");
    assert_relative_eq!(r[0], 9143789.9485021245, max_relative = 1e-9);
    assert_relative_eq!(r[1], 9349120.8100025534, max_relative = 1e-9);
}

/// Class 4: a near-circular target (e = 4e-7) with a coast time: one root
/// at a flight-path angle of -1.15e-5 deg. Reference: scripts/coast_reference.py
/// (seed 1, case 157).
#[test]
fn near_circular_eccentricity_with_coast_time_has_its_root() {
    let doc = solve_json(&[
        "--body",
        "moon",
        "--burnout-alt",
        "1730.7158346781494km",
        "--ecc",
        "3.9914664331977172e-7",
        "--time-to-apoapsis",
        "4.6638987473186381h",
    ]);
    let s = &solutions(&doc)[0];
    assert_relative_eq!(
        num(s, "/speed_m_s"),
        1188.9818347029916,
        max_relative = 1e-9
    );
    assert_relative_eq!(
        num(s, "/flight_path_angle_deg"),
        -1.1502323386032601e-5,
        max_relative = 1e-6 // the angle is conditioned by e itself here
    );
}

/// Class 5: period, time to apoapsis and time to periapsis that one state
/// meets (t_peri = t_apo + period/2 on an ellipse) agree; a conflicting
/// set exits 3 naming each residual.
#[test]
fn consistent_over_specified_coast_targets_are_accepted() {
    // The state 300 km, 7.9 km/s, 3 deg: its period and coast times, from
    // its own forward solve.
    let fwd = solve_json(&["--burnout-alt", "300", "--speed", "7.9", "--fpa", "3"]);
    let period = num(&fwd, "/orbit/period_s");
    let t_apo = {
        let r = run(&[
            "solve",
            "--burnout-alt",
            "300",
            "--speed",
            "7.9",
            "--fpa",
            "3",
            "--time-to-apoapsis",
            "1s",
        ]);
        assert_eq!(r.code, Some(3));
        // "... residuals --time-to-apoapsis D s": achieved = 1 s + D.
        let d: f64 = r
            .stderr
            .rsplit("--time-to-apoapsis ")
            .next()
            .and_then(|t| t.split_whitespace().next())
            .and_then(|t| t.parse().ok())
            .expect("residual in message");
        1.0 + d
    };
    let t_peri = t_apo + 0.5 * period;
    let p = format!("{period}s");
    let ta = format!("{t_apo}s");
    let tp = format!("{t_peri}s");
    let doc = solve_json(&[
        "--burnout-alt",
        "300",
        "--period",
        &p,
        "--time-to-apoapsis",
        &ta,
        "--time-to-periapsis",
        &tp,
    ]);
    let hit = solutions(&doc).iter().any(|s| {
        (num(s, "/speed_m_s") - 7900.0).abs() < 1e-6
            && (num(s, "/flight_path_angle_deg") - 3.0).abs() < 1e-6
    });
    assert!(hit, "{doc}");
    let bad = format!("{}s", t_peri - 80.0);
    let r = run(&[
        "solve",
        "--burnout-alt",
        "300",
        "--period",
        &p,
        "--time-to-apoapsis",
        &ta,
        "--time-to-periapsis",
        &bad,
    ]);
    assert_eq!(r.code, Some(3));
    assert!(r.stderr.contains("conflict") && r.stderr.contains("--time-to-periapsis"));
}

/// Class 7: a scan over --azimuth writes the swept value as
/// given_azimuth_deg beside the inertial azimuth result.
#[test]
fn swept_azimuth_does_not_collide_with_the_result_column() {
    let r = run(&[
        "scan",
        "--latitude",
        "28.5",
        "--azimuth",
        "80..100:10",
        "--burnout-alt",
        "200",
        "--periapsis-alt",
        "200",
        "--apoapsis-alt",
        "400",
        "--format",
        "csv",
    ]);
    assert_eq!(r.code, Some(0), "{}", r.stderr);
    let mut rd = csv::Reader::from_reader(r.stdout.as_bytes());
    let h: Vec<String> = rd.headers().unwrap().iter().map(String::from).collect();
    assert_eq!(h.iter().filter(|c| *c == "azimuth_deg").count(), 1, "{h:?}");
    let given = h
        .iter()
        .position(|c| c == "given_azimuth_deg")
        .expect("given_azimuth_deg");
    let got: Vec<f64> = rd
        .records()
        .map(|x| x.unwrap()[given].parse().unwrap())
        .collect();
    assert!(got.contains(&80.0) && got.contains(&100.0), "{got:?}");
}

/// Class 8: the joint region is cut where the exact forward map breaks a
/// tolerance; it is never reported unlimited along the free axis.
#[test]
fn budget_joint_region_is_bounded_by_the_exact_map() {
    let r = run(&[
        "budget",
        "--case",
        &super::case_path("gto-budget.toml"),
        "--format",
        "json",
    ]);
    assert_eq!(r.code, Some(0), "{}", r.stderr);
    let doc: serde_json::Value = serde_json::from_str(&r.stdout).unwrap();
    let text = doc.to_string();
    assert!(text.contains("exact_limit"), "{text}");
    let t = run(&["budget", "--case", &super::case_path("gto-budget.toml")]);
    assert!(!t.stdout.contains("safe together"), "{}", t.stdout);
    assert!(
        !t.stdout
            .lines()
            .any(|l| l.contains("on the ellipsoid") && l.contains("unlimited")),
        "{}",
        t.stdout
    );
}

/// Class 9: no burnout altitude, a flight-path angle and two orbit elements:
/// the radii on the orbit where the path has that angle. Independent check:
/// at each radius, vis-viva speed and cos(fpa) = h / (r v), h = sqrt(mu p).
#[test]
fn angle_and_two_elements_solve_for_the_burnout_altitude() {
    let doc = solve_json(&[
        "--fpa",
        "2",
        "--periapsis-alt",
        "200",
        "--apoapsis-alt",
        "35786",
    ]);
    let sols = solutions(&doc);
    assert_eq!(sols.len(), 2);
    let (rp, ra) = (EARTH_R + 200e3, EARTH_R + 35_786e3);
    let (a, p) = (0.5 * (rp + ra), 2.0 * rp * ra / (rp + ra));
    for s in sols {
        let r = num(s, "/burnout_radius_m");
        let v = num(s, "/speed_m_s");
        assert_relative_eq!(
            v,
            (EARTH_MU * (2.0 / r - 1.0 / a)).sqrt(),
            max_relative = 1e-12
        );
        let fpa = ((EARTH_MU * p).sqrt() / (r * v)).acos().to_degrees();
        assert_relative_eq!(fpa, 2.0, max_relative = 1e-9);
        assert_relative_eq!(num(s, "/flight_path_angle_deg"), 2.0, max_relative = 1e-15);
    }
}

/// Near-parabolic sheets: the energy along an apsis or energy target's
/// states comes from the target itself, not from the rounded speed, so a
/// coast of 3e5 years to a 1.2e10 km apoapsis keeps its two roots.
/// Reference: scripts/coast_reference.py (seed 1, case 127):
/// fpa 58.470628120777706 and -58.494732099435155 deg.
/// A pure two-body check about Mercury's mu with a 1 mm radius: the
/// descending root passes a periapsis under Mercury's surface before its
/// apoapsis, so about Mercury itself it is no solution.
#[test]
fn near_parabolic_apoapsis_sheet_keeps_its_roots() {
    let doc = solve_json(&[
        "--mu",
        "2.203209e13m3/s2",
        "--radius",
        "0.001m",
        "--burnout-radius",
        "1667.4190779428617nmi",
        "--apoapsis-radius",
        "12225801151.328521km",
        "--time-to-apoapsis",
        "117079086.43065718d",
    ]);
    let fpa = sorted(&doc, "/flight_path_angle_deg");
    assert_eq!(fpa.len(), 2, "{fpa:?}");
    assert_relative_eq!(fpa[0], -58.494732099435155, max_relative = 1e-8);
    assert_relative_eq!(fpa[1], 58.470628120777706, max_relative = 1e-8);
}

/// Near-parabolic semi-major-axis sheet (Mars, a = 4.4e9 m): both roots.
/// Reference: scripts/coast_reference.py (seed 1, case 162):
/// fpa 43.942453286537752 and 46.04798612554631 deg.
/// A pure two-body check about Mars's mu with a 1 mm radius: both roots'
/// periapses lie under the surface of Mars itself, which they would meet
/// first.
#[test]
fn near_parabolic_sma_sheet_keeps_its_roots() {
    let doc = solve_json(&[
        "--mu",
        "4.2828375214e13m3/s2",
        "--radius",
        "0.001m",
        "--burnout-radius",
        "3439274.0182142705m",
        "--sma",
        "2368470.8858166398nmi",
        "--time-to-periapsis",
        "77477.233729515779h",
    ]);
    let fpa = sorted(&doc, "/flight_path_angle_deg");
    assert_eq!(fpa.len(), 2, "{fpa:?}");
    // Conditioned to about 1e-9 here (the reference's own allowance is 5e-6 deg).
    assert_relative_eq!(fpa[0], 43.942453286537752, max_relative = 5e-9);
    assert_relative_eq!(fpa[1], 46.04798612554631, max_relative = 5e-9);
}

/// The angle to apoapsis beside a coast time is bracketed along the states
/// at that true anomaly (parametrised by eccentricity), not left to a
/// least-squares search that stopped at its iteration limit.
/// Reference: scripts/coast_reference.py (seed 1, case 222).
#[test]
fn angle_to_apoapsis_with_coast_time_is_bracketed_over_eccentricity() {
    let doc = solve_json(&[
        "--body",
        "venus",
        "--burnout-radius",
        "7333357.3138952286m",
        "--angle-to-apoapsis",
        "180.00009124655775deg",
        "--time-to-periapsis",
        "0.0015555695799548490s",
    ]);
    let sols = solutions(&doc);
    assert_eq!(sols.len(), 1, "{doc}");
    assert_relative_eq!(
        num(&sols[0], "/speed_m_s"),
        7507.7060797833554,
        max_relative = 1e-9
    );
    assert!(doc["solver"]["method"]
        .as_str()
        .unwrap()
        .contains("eccentricity"));
}

/// Class 7, batch side: a carried input column named like a result column
/// is written as given_<name>; every batch row has its own burnout radius.
#[test]
fn batch_input_columns_named_like_results_are_written_as_given() {
    let dir = tempfile::tempdir().unwrap();
    let input = dir.path().join("in.csv");
    std::fs::write(
        &input,
        "id,burnout-alt,periapsis-alt,apoapsis-alt,burnout_radius_m,sma_m\nA,200,200,400,x,y\n",
    )
    .unwrap();
    let r = run(&["batch", input.to_str().unwrap()]);
    assert_eq!(r.code, Some(0), "{}", r.stderr);
    let mut rd = csv::Reader::from_reader(r.stdout.as_bytes());
    let h: Vec<String> = rd.headers().unwrap().iter().map(String::from).collect();
    for name in ["burnout_radius_m", "sma_m"] {
        assert_eq!(h.iter().filter(|c| *c == name).count(), 1, "{h:?}");
        assert!(h.contains(&format!("given_{name}")), "{h:?}");
    }
    let rec = rd.records().next().unwrap().unwrap();
    let col = |n: &str| h.iter().position(|c| c == n).unwrap();
    assert_eq!(&rec[col("given_burnout_radius_m")], "x");
    let r_bo: f64 = rec[col("burnout_radius_m")].parse().unwrap();
    assert_relative_eq!(r_bo, EARTH_R + 200e3, max_relative = 1e-15);
}

/// A near-radial apsis sheet (periapsis 0.11 m from the centre: a path
/// through the planet, kept as a pure two-body check): the energy along it
/// is taken in non-cancelling factors, so both roots at +-89.99 deg are
/// found. Reference: scripts/coast_reference.py (seed 1, case 125).
/// The body is Venus's mu with a 1 mm radius (burnout and periapsis at
/// Venus's radius 6051.8 km plus the case's altitudes 1429.2244428834269 km
/// and -6051.7998890730057 km): the descending root would meet Venus
/// itself before its apoapsis.
#[test]
fn near_radial_apsis_sheet_finds_both_steep_roots() {
    let doc = solve_json(&[
        "--mu",
        "3.24858592e14m3/s2",
        "--radius",
        "0.001m",
        "--burnout-radius",
        "7481024.442883427m",
        "--periapsis-radius",
        "0.11092699412256479m",
        "--time-to-apoapsis",
        "0.061388866559093397d",
    ]);
    let v = sorted_pairs(&doc, "/flight_path_angle_deg", "/speed_m_s");
    assert_eq!(v.len(), 2, "{v:?}");
    assert_relative_eq!(v[0].1, 7115.087025858734, max_relative = 1e-9);
    assert_relative_eq!(v[0].0, -89.990861768798814, max_relative = 1e-9);
    assert_relative_eq!(v[1].1, 7472.7219459146867, max_relative = 1e-9);
    assert_relative_eq!(v[1].0, 89.991299112862402, max_relative = 1e-9);
}

/// A burnout 1.8e-6 deg short of apoapsis: the angle to apoapsis is
/// computed as atan2(e sin nu, -e cos nu), never as 180 deg - nu, so the
/// small angle keeps its relative digits. Reference:
/// scripts/coast_reference.py (seed 1, case 166).
#[test]
fn tiny_angle_to_apoapsis_keeps_its_digits() {
    let doc = solve_json(&[
        "--body",
        "mars",
        "--burnout-radius",
        "63566960.678061320ft",
        "--angle-to-apoapsis",
        "1.7989053312840427e-6deg",
        "--time-to-apoapsis",
        "0.00054076039078669373s",
    ]);
    let s = &solutions(&doc)[0];
    assert_relative_eq!(
        num(s, "/speed_m_s"),
        1124.9344400012093,
        max_relative = 1e-12
    );
    assert_relative_eq!(
        num(s, "/flight_path_angle_deg"),
        1.3433326376700364e-6,
        max_relative = 1e-9
    );
}

/// Near circular, 1.47 deg past apoapsis, with a coast time: the times on
/// the true-anomaly sheet come from (p, e, angle) directly, not from the
/// rounded state, so the tiny angle keeps its digits. Reference:
/// scripts/coast_reference.py (seed 2, case 10): v 750.20750961628964 m/s,
/// fpa -6.4298764644163994e-6 deg.
#[test]
fn near_circular_just_past_apoapsis_keeps_the_tiny_angle() {
    let doc = solve_json(&[
        "--body",
        "moon",
        "--burnout-alt",
        "22880019.241289683ft",
        "--angle-to-apoapsis",
        "358.52695452874936deg",
        "--time-to-apoapsis",
        "0.84096843953713302d",
    ]);
    let s = solutions(&doc)
        .iter()
        .find(|s| num(s, "/flight_path_angle_deg").abs() < 1e-3)
        .expect("the near-circular root");
    assert_relative_eq!(
        num(s, "/speed_m_s"),
        750.20750961628964,
        max_relative = 1e-12
    );
    assert_relative_eq!(
        num(s, "/flight_path_angle_deg"),
        -6.4298764644163994e-6,
        max_relative = 1e-9
    );
}
