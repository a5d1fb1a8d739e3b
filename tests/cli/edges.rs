//! Regression tests for issue 14 ("what the analyst reads"): where a
//! trajectory meets the surface (escapes that never return, hyperbolas, a
//! sounding shot), coast targets whose roots fall through the planet, rows
//! that did not converge, and the extremes of a scan (suborbital rows, the
//! branch named at an apsis).
//!
//! Every check value is computed here from a textbook relation (vis-viva,
//! the conic equation r = p / (1 + e cos nu), Kepler's equation,
//! conservation of angular momentum), independently of the product.

use super::{case_path, elements_from_state, num, run, solutions, solve_json, warnings};
use approx::assert_relative_eq;
use serde_json::Value;
use std::f64::consts::PI;

const EARTH_MU: f64 = 3.986004418e14; // IERS Conventions (2010), Table 1.1
const EARTH_R: f64 = 6_378_137.0; // WGS 84 equatorial radius

/// The number printed right after `label` in `text` (the first occurrence).
fn number_after(text: &str, label: &str) -> f64 {
    let at = text
        .find(label)
        .unwrap_or_else(|| panic!("no '{label}' in '{text}'"));
    let rest = &text[at + label.len()..];
    let end = rest
        .find(|c: char| !(c.is_ascii_digit() || matches!(c, '.' | '-' | 'e' | '+')))
        .unwrap_or(rest.len());
    rest[..end]
        .parse()
        .unwrap_or_else(|e| panic!("'{}' after '{label}': {e}", &rest[..end]))
}

/// Where the conic of semi-latus rectum `p` and eccentricity `e` reaches
/// radius `rs` on its way down to periapsis, deg in (180, 360): from the
/// conic equation r = p / (1 + e cos nu) = rs, nu = 360 - acos((p/rs - 1)/e).
fn descending_crossing_deg(p: f64, e: f64, rs: f64) -> f64 {
    360.0 - ((p / rs - 1.0) / e).acos().to_degrees()
}

/// Issue 14, item 3: `--speed 11.5 --fpa 60` from 250 km is an outbound
/// hyperbola (C3 > 0, climbing): its radius only grows after burnout, so it
/// never meets the surface, whatever the periapsis of its conic.
#[test]
fn outbound_escape_with_periapsis_under_the_surface_claims_no_impact() {
    let doc = solve_json(&["--burnout-alt", "250", "--speed", "11.5", "--fpa", "60"]);
    let r = EARTH_R + 250e3;
    // Vis-viva: C3 = v^2 - 2 mu / r.
    let c3 = 11_500.0f64.powi(2) - 2.0 * EARTH_MU / r;
    assert!(c3 > 0.0);
    assert_relative_eq!(num(&doc, "/orbit/c3_m2_s2"), c3, max_relative = 1e-12);
    // Independent check that no impact exists: on the conic equation the
    // radius grows with nu from burnout to the asymptote acos(-1/e).
    let el = elements_from_state(EARTH_MU, r, 11_500.0, 60.0);
    assert!(el.periapsis_radius_m < EARTH_R, "{el:?}");
    let p = el.periapsis_radius_m * (1.0 + el.ecc);
    let nu_inf = (-1.0 / el.ecc).acos();
    let nu_b = el.true_anomaly_deg.to_radians();
    assert!(nu_b < nu_inf);
    let lowest = (0..1000)
        .map(|k| nu_b + (nu_inf - nu_b) * k as f64 / 1000.0)
        .map(|nu| p / (1.0 + el.ecc * nu.cos()))
        .fold(f64::INFINITY, f64::min);
    assert_relative_eq!(lowest, r, max_relative = 1e-9);
    let w = warnings(&doc);
    assert_eq!(w.len(), 1, "{w:?}");
    assert!(
        w[0].starts_with("periapsis below the surface, not reached (ascending)"),
        "{}",
        w[0]
    );
    assert!(w[0].contains("does not meet the surface"), "{}", w[0]);
    assert!(
        !w[0].contains("suborbital") && !w[0].contains("downrange"),
        "{}",
        w[0]
    );
}

/// Issue 14, item 3: `--sma=-20000 --ecc 1.3` from 250 km. The ascending
/// (outbound) burnout never comes back; the descending (inbound) one meets
/// the surface at the first nu after burnout with r(nu) = R, which lies
/// inside the hyperbola's range |nu| < acos(-1/e) = 140.3 deg.
#[test]
fn inbound_hyperbola_meets_the_surface_where_the_conic_equation_says() {
    let doc = solve_json(&["--burnout-alt", "250", "--sma=-20000", "--ecc", "1.3"]);
    let sols = solutions(&doc);
    assert_eq!(sols.len(), 2);
    let (a, e) = (-20_000e3f64, 1.3f64);
    let p = a * (1.0 - e * e); // semi-latus rectum of a hyperbola, a < 0
    let nu_inf = (-1.0 / e).acos().to_degrees();
    for s in sols {
        let w: Vec<&str> = s["warnings"]
            .as_array()
            .unwrap()
            .iter()
            .map(|x| x.as_str().unwrap())
            .collect();
        assert_eq!(w.len(), 1, "{w:?}");
        let nu_b = num(s, "/true_anomaly_deg");
        match s["branch"].as_str().unwrap() {
            "ascending" => {
                assert!(nu_b < nu_inf);
                assert!(
                    w[0].starts_with("periapsis below the surface, not reached (ascending)"),
                    "{}",
                    w[0]
                );
            }
            "descending" => {
                assert!(w[0].starts_with("suborbital (descending)"), "{}", w[0]);
                let nu_hit = number_after(w[0], "at true anomaly ");
                let down = number_after(w[0], " deg, ");
                let want = descending_crossing_deg(p, e, EARTH_R);
                // Printed to 10 significant digits.
                assert_relative_eq!(nu_hit, want, max_relative = 1e-9);
                assert!(nu_hit - 360.0 > -nu_inf, "{nu_hit} outside the hyperbola");
                assert_relative_eq!(down, want - nu_b, max_relative = 1e-8);
            }
            other => panic!("branch {other}"),
        }
    }
}

/// Issue 14, item 3, the closed case: the shipped sounding shot climbs,
/// passes apoapsis and meets the surface on its descending leg, at the
/// crossing the conic equation gives.
#[test]
fn sounding_shot_still_meets_the_surface_on_its_way_down() {
    let doc = solve_json(&["--case", &case_path("sounding-shot.toml")]);
    let s = &solutions(&doc)[0];
    let w = warnings(&doc);
    assert_eq!(w.len(), 1, "{w:?}");
    assert!(w[0].starts_with("suborbital (ascending)"), "{}", w[0]);
    let (p, e) = (num(s, "/orbit/semi_latus_rectum_m"), num(s, "/orbit/ecc"));
    let nu_hit = number_after(&w[0], "at true anomaly ");
    let down = number_after(&w[0], " deg, ");
    assert!(nu_hit > 180.0, "impact on the way down");
    // The conic equation at the printed anomaly gives back the surface
    // radius (the slope there is 6.7e7 m/rad, and 10 digits of the angle
    // leave about 0.1 m).
    let r_hit = p / (1.0 + e * nu_hit.to_radians().cos());
    assert_relative_eq!(r_hit, EARTH_R, max_relative = 1e-7);
    assert_relative_eq!(
        down,
        descending_crossing_deg(p, e, EARTH_R) - num(s, "/true_anomaly_deg"),
        max_relative = 1e-7
    );
}

/// Time of flight from a burnout state to the next apoapsis on an ellipse,
/// from Kepler's equation: E from tan(E/2) = sqrt((1-e)/(1+e)) tan(nu/2),
/// M = E - e sin E, t = (pi - M) / n with n = sqrt(mu / a^3), M in [0, 2 pi).
fn time_to_apoapsis_s(radius_m: f64, speed_m_s: f64, fpa_deg: f64) -> f64 {
    let el = elements_from_state(EARTH_MU, radius_m, speed_m_s, fpa_deg);
    let (a, e) = (el.sma_m, el.ecc);
    let nu = el.true_anomaly_deg.to_radians();
    let ecc_anom = 2.0 * (((1.0 - e) / (1.0 + e)).sqrt() * (0.5 * nu).tan()).atan();
    let m = (ecc_anom - e * ecc_anom.sin()).rem_euclid(2.0 * PI);
    let n = (EARTH_MU / (a * a * a)).sqrt();
    (PI - m).rem_euclid(2.0 * PI) / n
}

/// Issue 14, item 4: the shipped 45 min coast to a 1200 km apoapsis. The
/// descending root's periapsis is 4165 km under the surface, which it meets
/// 411 km downrange, long before apoapsis: only the ascending root is an
/// answer.
#[test]
fn coast_case_keeps_only_the_root_that_reaches_apoapsis_first() {
    let doc = solve_json(&["--case", &case_path("coast-to-apoapsis.toml")]);
    let sols = solutions(&doc);
    assert_eq!(sols.len(), 1, "{doc}");
    let s = &sols[0];
    assert_eq!(s["branch"], "ascending");
    let r = EARTH_R + 220e3;
    let (v, g) = (num(s, "/speed_m_s"), num(s, "/flight_path_angle_deg"));
    assert_relative_eq!(
        time_to_apoapsis_s(r, v, g),
        45.0 * 60.0,
        max_relative = 1e-9
    );
    let el = elements_from_state(EARTH_MU, r, v, g);
    assert!(el.periapsis_radius_m > EARTH_R, "{el:?}");
    assert_relative_eq!(
        el.apoapsis_radius_m.unwrap(),
        EARTH_R + 1200e3,
        max_relative = 1e-10
    );
    assert!(warnings(&doc).is_empty(), "{:?}", warnings(&doc));
}

/// Issue 14, item 4: a coast to periapsis climbing at 30 deg from 300 km has
/// one root (2.53 km/s), a lob whose periapsis is under the surface: it
/// meets the ground before periapsis, so the target is infeasible (exit 3)
/// and the line says where.
#[test]
fn coast_target_whose_every_root_meets_the_surface_first_is_infeasible() {
    let r = run(&[
        "solve",
        "--burnout-alt",
        "300",
        "--fpa",
        "30",
        "--time-to-periapsis",
        "20min",
    ]);
    assert_eq!(r.code, Some(3), "{}", r.stdout);
    assert!(r.stdout.is_empty());
    assert_eq!(r.stderr.lines().count(), 1, "{}", r.stderr);
    let line = r.stderr.trim();
    assert!(
        line.starts_with("error: every solution meets the surface before periapsis"),
        "{line}"
    );
    // The root it names, checked here: the surface crossing from the conic
    // equation, and periapsis 360 deg - nu downrange.
    let v = number_after(line, "(speed ");
    let rb = EARTH_R + 300e3;
    let el = elements_from_state(EARTH_MU, rb, v, 30.0);
    assert!(el.periapsis_radius_m < EARTH_R);
    let p = el.periapsis_radius_m * (1.0 + el.ecc);
    assert_relative_eq!(
        number_after(line, ") meets the surface "),
        descending_crossing_deg(p, el.ecc, EARTH_R) - el.true_anomaly_deg,
        max_relative = 1e-8
    );
    assert_relative_eq!(
        number_after(line, "periapsis is "),
        360.0 - el.true_anomaly_deg,
        max_relative = 1e-8
    );
    // And that speed does meet the target: Kepler's equation, to periapsis
    // t = (2 pi - M) / n.
    let nu = el.true_anomaly_deg.to_radians();
    let e = el.ecc;
    let ecc_anom = 2.0 * (((1.0 - e) / (1.0 + e)).sqrt() * (0.5 * nu).tan()).atan();
    let m = (ecc_anom - e * ecc_anom.sin()).rem_euclid(2.0 * PI);
    let n = (EARTH_MU / el.sma_m.powi(3)).sqrt();
    // The speed is printed to 10 digits.
    assert_relative_eq!((2.0 * PI - m) / n, 1200.0, max_relative = 1e-7);
}

fn scan_json(args: &[&str]) -> Value {
    let mut all = vec!["scan"];
    all.extend_from_slice(args);
    all.extend_from_slice(&["--format", "json"]);
    let r = run(&all);
    assert_eq!(r.code, Some(0), "{all:?}: {}", r.stderr);
    serde_json::from_str(&r.stdout).unwrap()
}

/// Issue 14, item 4, the scan: no row of the coast scan is a root that falls
/// through the planet, and the minimum is no longer the radial-fall limit
/// (3.95 km/s at fpa -89.87 deg).
#[test]
fn coast_scan_minimum_is_not_the_fall_through_the_planet() {
    let doc = scan_json(&[
        "--burnout-alt",
        "220",
        "--apoapsis-alt",
        "1200",
        "--time-to-apoapsis",
        "5min..50min:5min",
    ]);
    let rows = doc["rows"].as_array().unwrap();
    let r = EARTH_R + 220e3;
    let mut ok = 0;
    for row in rows.iter().filter(|x| x["status"] == "ok") {
        ok += 1;
        let (v, g) = (num(row, "/speed_m_s"), num(row, "/flight_path_angle_deg"));
        // Each row meets its coast time (Kepler's equation) ...
        assert_relative_eq!(
            time_to_apoapsis_s(r, v, g),
            num(row, "/time_to_apoapsis_s"),
            max_relative = 1e-9
        );
        // ... and none is a descending root through the planet: a descending
        // burnout passes periapsis before apoapsis.
        if g < 0.0 {
            assert!(num(row, "/periapsis_radius_m") >= EARTH_R, "{row}");
        }
    }
    assert_eq!(ok, 9);
    let min = &doc["summary"]["minimum"];
    // The least speed over the rows that reach an orbit: the 2400 s row
    // (the ascending rows before it are suborbital, item 5).
    let row_2400 = rows
        .iter()
        .find(|x| x["time_to_apoapsis_s"] == 2400 && x["status"] == "ok")
        .unwrap();
    assert_relative_eq!(
        num(min, "/speed_m_s"),
        num(row_2400, "/speed_m_s"),
        max_relative = 1e-15
    );
    assert!(num(min, "/speed_m_s") > 7_500.0);
    assert_eq!(num(min, "/suborbital_neighbour/time_to_apoapsis_s"), 2100.0);
}

/// Issue 14, item 4: only coast targets are affected. An element pair whose
/// descending solution has its periapsis under the surface is still a
/// (warned) solution, at the vis-viva speed.
#[test]
fn descending_element_pair_under_the_surface_is_still_a_warned_solution() {
    let doc = solve_json(&[
        "--burnout-alt",
        "250",
        "--periapsis-radius",
        "6000km",
        "--apoapsis-alt",
        "800",
    ]);
    let sols = solutions(&doc);
    assert_eq!(sols.len(), 2);
    // Vis-viva: v^2 = mu (2/r - 2/(rp + ra)).
    let (r, rp, ra) = (EARTH_R + 250e3, 6_000e3, EARTH_R + 800e3);
    let v = (EARTH_MU * (2.0 / r - 2.0 / (rp + ra))).sqrt();
    for s in sols {
        assert_relative_eq!(num(s, "/speed_m_s"), v, max_relative = 1e-12);
        let w = s["warnings"][0].as_str().unwrap();
        let b = s["branch"].as_str().unwrap();
        assert!(w.starts_with(&format!("suborbital ({b})")), "{w}");
    }
}

/// Issue 14, item 4: a row whose numerical solve did not converge proves
/// nothing about the target: its status is `invalid`, not `infeasible`
/// (a single solve still exits 3). Half a period cannot be 1 s, so the
/// least-squares search for these two coast times cannot converge.
#[test]
fn non_convergence_rows_are_invalid_not_infeasible() {
    let r = run(&[
        "solve",
        "--burnout-alt",
        "200",
        "--time-to-apoapsis",
        "10min",
        "--time-to-periapsis",
        "601s",
    ]);
    assert_eq!(r.code, Some(3));
    assert!(
        r.stderr.starts_with("error: no convergence"),
        "{}",
        r.stderr
    );
    let r = run(&[
        "scan",
        "--burnout-alt",
        "200",
        "--time-to-apoapsis",
        "10min",
        "--time-to-periapsis",
        "601s..602s:1s",
        "--format",
        "json",
    ]);
    assert_eq!(r.code, Some(3), "{}", r.stderr);
    let doc: Value = serde_json::from_str(&r.stdout).unwrap();
    assert_eq!(doc["summary"]["invalid"], 2);
    assert_eq!(doc["summary"]["infeasible"], 0);
    for row in doc["rows"].as_array().unwrap() {
        assert_eq!(row["status"], "invalid", "{row}");
    }
    let dir = tempfile::tempdir().unwrap();
    let input = dir.path().join("in.csv");
    std::fs::write(
        &input,
        "id,burnout-alt,time-to-apoapsis,time-to-periapsis\nx,200,10min,601s\n",
    )
    .unwrap();
    let r = run(&["batch", input.to_str().unwrap()]);
    assert_eq!(r.code, Some(3), "{}", r.stderr);
    let mut rd = csv::Reader::from_reader(r.stdout.as_bytes());
    let h = rd.headers().unwrap().clone();
    let rec = rd.records().next().unwrap().unwrap();
    let status = h.iter().position(|c| c == "status").unwrap();
    assert_eq!(&rec[status], "invalid");
}

/// Required speed for an apoapsis target `ra` from radius `r` at flight-path
/// angle `g`: energy and angular momentum conserved between burnout and
/// apoapsis (vis-viva, r v cos g = ra v_a) give
/// v^2 = 2 mu ra (ra - r) / (r (ra^2 - r^2 cos^2 g)).
fn apoapsis_speed(r: f64, ra: f64, g_deg: f64) -> f64 {
    let c = g_deg.to_radians().cos();
    (2.0 * EARTH_MU * ra * (ra - r) / (r * (ra * ra - r * r * c * c))).sqrt()
}

/// Issue 14, item 5: the extremes of a flight-path-angle scan are taken over
/// the rows that reach an orbit; `--extremes-include-suborbital` counts the
/// others too.
#[test]
fn scan_extremes_leave_out_suborbital_rows_unless_asked() {
    let args = [
        "--burnout-alt",
        "250",
        "--apoapsis-alt",
        "800",
        "--fpa=-10deg..10deg:1.5deg",
    ];
    let (r, ra) = (EARTH_R + 250e3, EARTH_R + 800e3);
    let doc = scan_json(&args);
    let rows = doc["rows"].as_array().unwrap();
    let suborbital = rows
        .iter()
        .filter(|x| x["message"].as_str().unwrap().starts_with("suborbital"))
        .count();
    assert_eq!(suborbital, 10);
    assert_eq!(doc["summary"]["suborbital_not_counted"], 10);
    let min = &doc["summary"]["minimum"];
    assert_eq!(num(min, "/at/fpa_deg"), -2.5);
    assert_eq!(min["branches"], serde_json::json!(["descending"]));
    assert_relative_eq!(
        num(min, "/speed_m_s"),
        apoapsis_speed(r, ra, -2.5),
        max_relative = 1e-12
    );
    // Its periapsis is above the surface; the next grid point's is not.
    let el = elements_from_state(EARTH_MU, r, num(min, "/speed_m_s"), -2.5);
    assert!(el.periapsis_radius_m > EARTH_R);
    let el4 = elements_from_state(EARTH_MU, r, apoapsis_speed(r, ra, -4.0), -4.0);
    assert!(el4.periapsis_radius_m < EARTH_R);
    assert_eq!(num(min, "/suborbital_neighbour/fpa_deg"), -4.0);

    let mut with = args.to_vec();
    with.push("--extremes-include-suborbital");
    let doc = scan_json(&with);
    assert_eq!(doc["summary"]["suborbital_not_counted"], 0);
    let min = &doc["summary"]["minimum"];
    assert_eq!(num(min, "/at/fpa_deg"), -10.0);
    assert_relative_eq!(
        num(min, "/speed_m_s"),
        apoapsis_speed(r, ra, -10.0),
        max_relative = 1e-12
    );
    // The table says what was left out.
    let t = run(&["scan", args[0], args[1], args[2], args[3], args[4]]);
    assert!(
        t.stdout
            .contains("10 suborbital rows not counted (--extremes-include-suborbital counts them)"),
        "{}",
        t.stdout
    );
}

/// Issue 14, item 5: an extreme at an apsis is named as every apsis is
/// (ascending), not by the side Brent's search landed on by rounding.
#[test]
fn extreme_at_an_apsis_is_labelled_ascending() {
    // Along the flight-path angle: the greatest speed for an apoapsis
    // target is at fpa 0, v^2 = 2 mu ra / (r (r + ra)) (vis-viva at
    // periapsis), between grid points -1 and 0.5 deg.
    let (r, ra) = (EARTH_R + 250e3, EARTH_R + 800e3);
    let doc = scan_json(&[
        "--burnout-alt",
        "250",
        "--apoapsis-alt",
        "800",
        "--fpa=-10deg..10deg:1.5deg",
    ]);
    let max = &doc["summary"]["maximum"];
    assert_eq!(max["branches"], serde_json::json!(["ascending"]));
    assert_eq!(num(max, "/at/fpa_deg"), 0.0);
    let v0 = (2.0 * EARTH_MU * ra / (r * (r + ra))).sqrt();
    assert_relative_eq!(num(max, "/speed_m_s"), v0, max_relative = 1e-12);

    // Along a coast time: the greatest speed is burnout at periapsis, where
    // the time to apoapsis is half a period, pi sqrt(a^3 / mu).
    let r = EARTH_R + 220e3;
    let ra = EARTH_R + 1200e3;
    let doc = scan_json(&[
        "--burnout-alt",
        "220",
        "--apoapsis-alt",
        "1200",
        "--time-to-apoapsis",
        "40min..50min:5min",
    ]);
    let max = &doc["summary"]["maximum"];
    assert_eq!(max["branches"], serde_json::json!(["ascending"]));
    let a: f64 = 0.5 * (r + ra);
    assert_relative_eq!(
        num(max, "/at/time_to_apoapsis_s"),
        PI * (a.powi(3) / EARTH_MU).sqrt(),
        max_relative = 1e-6
    );
    // Vis-viva at periapsis.
    let vp = (EARTH_MU * (2.0 / r - 1.0 / a)).sqrt();
    assert_relative_eq!(num(max, "/speed_m_s"), vp, max_relative = 1e-10);
}

/// Issue 14, item 5: a scan whose every row meets the surface has no
/// extremes over orbital rows, and says so rather than "no grid point
/// solved"; the flag counts them (vis-viva with angular momentum gives the
/// least speed at the lowest apoapsis).
#[test]
fn scan_of_only_suborbital_rows_has_no_extremes_and_says_why() {
    let args = [
        "scan",
        "--burnout-alt",
        "45",
        "--fpa",
        "84",
        "--apoapsis-alt",
        "200..300:50",
    ];
    let t = run(&args);
    assert_eq!(t.code, Some(0), "{}", t.stderr);
    assert!(
        t.stdout.contains(
            "every solved row is suborbital (meets the surface): no minimum or maximum speed"
        ),
        "{}",
        t.stdout
    );
    let doc = scan_json(&args[1..]);
    assert!(doc["summary"]["minimum"].is_null());
    assert_eq!(doc["summary"]["suborbital_not_counted"], 3);
    let mut with = args[1..].to_vec();
    with.push("--extremes-include-suborbital");
    let doc = scan_json(&with);
    let min = &doc["summary"]["minimum"];
    assert_relative_eq!(
        num(min, "/speed_m_s"),
        apoapsis_speed(EARTH_R + 45e3, EARTH_R + 200e3, 84.0),
        max_relative = 1e-12
    );
}
