//! What the analyst reads at the edges (issue 14): circular targets,
//! budgets against their tolerances.

use crate::{num, run, solutions, solve_json};
use approx::assert_relative_eq;

const EARTH_RADIUS_M: f64 = 6_378_137.0; // WGS 84 equatorial radius (the catalog's)

/// Regression (issue 14, item 1): at e = 0 a +0.1 deg and a -0.1 deg
/// flight-path angle error both lower periapsis by r sin(0.1 deg); the
/// table showed 0. Check value: at circular speed Q = r v^2 / mu = 1, so
/// e^2 = 1 - Q (2 - Q) cos^2(fpa) = sin^2(fpa) and a = r (vis-viva), hence
/// rp = r (1 - |sin fpa|), ra = r (1 + |sin fpa|).
#[test]
fn circular_target_apsides_move_with_the_size_of_an_fpa_error() {
    let args = [
        "--burnout-alt",
        "500",
        "--periapsis-alt",
        "500",
        "--apoapsis-alt",
        "500",
    ];
    let doc = solve_json(&args);
    let sol = &solutions(&doc)[0];
    let r = EARTH_RADIUS_M + 500e3;
    let d = r * 0.1f64.to_radians().sin();
    assert_eq!(sol["near_circular"], true);
    for sign in ["plus", "minus"] {
        let at = |row: &str| {
            num(
                sol,
                &format!("/response/{sign}/flight_path_angle_deg/{row}"),
            )
        };
        assert_relative_eq!(at("periapsis_radius_m"), -d, max_relative = 1e-9);
        assert_relative_eq!(at("apoapsis_radius_m"), d, max_relative = 1e-9);
        assert_relative_eq!(at("ecc"), 0.1f64.to_radians().sin(), max_relative = 1e-9);
    }
    let mut cmd = vec!["solve"];
    cmd.extend(args);
    let table = run(&cmd);
    assert_eq!(table.code, Some(0), "{}", table.stderr);
    let line = table
        .stdout
        .lines()
        .find(|l| l.trim_start().starts_with("periapsis km") && l.contains('-'))
        .expect("periapsis coefficient line");
    let cells: Vec<&str> = line.split_whitespace().collect();
    // periapsis km | +1 m/s | +0.1 deg | -0.1 deg | +1 km
    let km = format!("{:.3}", -d / 1e3);
    assert_eq!((cells[3], cells[4]), (km.as_str(), km.as_str()), "{line}");
    assert!(
        table.stdout.contains("near-circular orbit"),
        "{}",
        table.stdout
    );
}

/// An eccentric orbit is not near-circular, and its +-0.1 deg responses
/// have opposite signs on periapsis (checked against the forward map:
/// burnout off an apsis, the angle rotates the apse line).
#[test]
fn eccentric_target_is_not_flagged_near_circular() {
    let doc = solve_json(&["--case", &crate::case_path("gto-injection.toml")]);
    for sol in solutions(&doc) {
        assert_eq!(sol["near_circular"], false);
        let p = num(
            sol,
            "/response/plus/flight_path_angle_deg/periapsis_radius_m",
        );
        let m = num(
            sol,
            "/response/minus/flight_path_angle_deg/periapsis_radius_m",
        );
        assert!(p * m < 0.0, "{p} {m}");
    }
}

/// Regression (issue 14, item 7): the shipped GTO budget's 3-sigma apoapsis
/// (about 400 km, from J P J^T: 3 x 133 km) is four times the +-100 km
/// tolerance and the table must say so; the periapsis fits its +-5 km.
#[test]
fn budget_says_whether_the_three_sigma_dispersion_fits_each_tolerance() {
    let r = run(&["budget", "--case", &crate::case_path("gto-budget.toml")]);
    assert_eq!(r.code, Some(0), "{}", r.stderr);
    let line = |q: &str| {
        r.stdout
            .lines()
            .find(|l| l.trim_start().starts_with(q) && l.contains("reach"))
            .unwrap_or_else(|| panic!("no reach line for {q}:\n{}", r.stdout))
            .to_string()
    };
    assert!(
        line("apoapsis").contains("DOES NOT FIT (4.0"),
        "{}",
        line("apoapsis")
    );
    assert!(
        line("periapsis").contains("fits ("),
        "{}",
        line("periapsis")
    );
    let j = run(&[
        "budget",
        "--case",
        &crate::case_path("gto-budget.toml"),
        "--format",
        "json",
    ]);
    let doc: serde_json::Value = serde_json::from_str(&j.stdout).unwrap();
    let apo = &doc["budget"][0]["orbit_errors"]["apoapsis_radius_m"];
    assert_eq!(apo["fits"], false);
    assert_eq!(apo["tolerance"], 100_000.0);
    assert!(apo["three_sigma_reach"].as_f64().unwrap() > 4.0 * 100e3 * 0.99);
}

/// Regression (issue 14, items 1 and 7): on a circular target the angle
/// allowance is exact (asin(ecc tol) = 0.0572958 deg for 0.001: e = |sin
/// fpa| at circular speed), not "unlimited", and the periapsis statistics
/// through the exact map are those of -r|sin fpa| (a folded normal: mean
/// -r sigma sqrt(2/pi), sd r sigma sqrt(1 - 2/pi)), not the linear 0.
#[test]
fn circular_budget_is_exact_where_the_linear_map_sees_nothing() {
    let args = [
        "budget",
        "--burnout-alt",
        "500",
        "--periapsis-alt",
        "500",
        "--apoapsis-alt",
        "500",
        "--fpa-sigma",
        "0.05deg",
        "--ecc-tol",
        "0.001",
        "--format",
        "json",
    ];
    let r = run(&args);
    assert_eq!(r.code, Some(0), "{}", r.stderr);
    let doc: serde_json::Value = serde_json::from_str(&r.stdout).unwrap();
    let b = &doc["budget"][0];
    let fpa = &b["allowed_alone"]["flight_path_angle_deg"];
    let want = 0.001f64.asin().to_degrees();
    assert_relative_eq!(num(fpa, "/plus"), want, max_relative = 1e-8);
    assert_relative_eq!(num(fpa, "/minus"), want, max_relative = 1e-8);
    let rp = &b["orbit_errors"]["periapsis_radius_m"];
    let (radius, sigma) = (EARTH_RADIUS_M + 500e3, 0.05f64.to_radians());
    let pi = std::f64::consts::PI;
    assert_relative_eq!(
        num(rp, "/exact_mean_shift"),
        -radius * sigma * (2.0 / pi).sqrt(),
        max_relative = 1e-2
    );
    assert_relative_eq!(
        num(rp, "/exact_one_sigma"),
        radius * sigma * (1.0 - 2.0 / pi).sqrt(),
        max_relative = 1e-2
    );
    assert_eq!(rp["linear_misleads"], true);
}

/// Regression (issue 14, item 7): a bare `--speed-sigma 2` is 2 km/s; the
/// budget warns and names the unit it read.
#[test]
fn implausible_sigma_is_warned_with_the_unit_read() {
    let r = run(&[
        "budget",
        "--case",
        &crate::case_path("gto-budget.toml"),
        "--speed-sigma",
        "2",
    ]);
    assert_eq!(r.code, Some(0), "{}", r.stderr);
    assert!(
        r.stdout
            .contains("--speed-sigma '2' was read as 2000.0 m/s (a bare number is km/s)"),
        "{}",
        r.stdout
    );
    let quiet = run(&["budget", "--case", &crate::case_path("gto-budget.toml")]);
    assert!(!quiet.stdout.contains("was read as"), "{}", quiet.stdout);
}

/// Regressions (issue 14, items 2 and 6): a circular target flown from a
/// site keeps burnout at true anomaly 0 with the partials of the same orbit
/// without a site (apoapsis +, ecc + per m/s: more speed at a circle makes
/// burnout the periapsis), and the two plane answers say which is which,
/// each with its own surface speed (omega r cos(latitude) at its own
/// burnout point; Earth's omega 7.292115e-5 rad/s, IERS Conventions 2010).
#[test]
fn circular_target_from_a_site_keeps_its_partials_and_names_its_planes() {
    let target = [
        "--burnout-alt",
        "200",
        "--periapsis-alt",
        "200",
        "--apoapsis-alt",
        "200",
    ];
    let plain = solve_json(&target);
    let want = &solutions(&plain)[0]["sensitivity"]["matrix"];
    assert!(num(want, "/1/0") > 3000.0, "apoapsis per m/s {want}");
    assert!(num(want, "/3/0") > 2e-4, "ecc per m/s {want}");
    let mut args = target.to_vec();
    args.extend([
        "--latitude",
        "28.5",
        "--downrange",
        "1500km",
        "--inclination",
        "51.6",
    ]);
    let doc = solve_json(&args);
    let sols = solutions(&doc);
    assert_eq!(sols.len(), 2);
    let mut planes: Vec<&str> = sols.iter().map(|s| s["plane"].as_str().unwrap()).collect();
    planes.sort_unstable();
    assert_eq!(planes, ["northbound", "southbound"]);
    for s in sols {
        assert_eq!(num(s, "/true_anomaly_deg"), 0.0);
        assert_eq!(&s["sensitivity"]["matrix"], want);
        let az = num(s, "/launch_azimuth_deg").to_radians();
        assert_eq!(s["plane"] == "northbound", az.cos() > 0.0);
        let lat = num(s, "/burnout_latitude_deg").to_radians();
        let r = num(s, "/burnout_radius_m");
        assert_relative_eq!(
            num(s, "/rotation_speed_m_s"),
            7.292115e-5 * r * lat.cos(),
            max_relative = 1e-12
        );
    }
    assert!(
        (num(&sols[0], "/rotation_speed_m_s") - num(&sols[1], "/rotation_speed_m_s")).abs() > 10.0
    );
}

/// Issue 14, flight-plan numbers: a sounding shot's times, impact and time
/// above an altitude. Check values from Kepler's equation on the shot's own
/// ellipse (a and e from the JSON orbit): with cos E = (1 - r/a)/e and
/// M = E - e sin E, the time from the climb through r to the descent
/// through r is 2 (pi - M(r)) / n, n = sqrt(mu / a^3); impact speed from
/// vis-viva at the surface.
#[test]
fn sounding_shot_gets_its_flight_numbers() {
    let doc = solve_json(&[
        "--case",
        &crate::case_path("sounding-shot.toml"),
        "--above-alt",
        "100km",
    ]);
    let mu = num(&doc, "/body/mu_m3_s2");
    let re = num(&doc, "/body/radius_m");
    for s in solutions(&doc) {
        let (a, e) = (num(s, "/orbit/sma_m"), num(s, "/orbit/ecc"));
        let n = (mu / (a * a * a)).sqrt();
        let mean = |r: f64| {
            let ea = ((1.0 - r / a) / e).acos();
            ea - e * ea.sin()
        };
        let f = &s["flight"];
        assert_relative_eq!(
            num(f, "/time_above_s"),
            2.0 * (std::f64::consts::PI - mean(re + 100e3)) / n,
            max_relative = 1e-9
        );
        assert_relative_eq!(
            num(f, "/impact/speed_m_s").powi(2),
            mu * (2.0 / re - 1.0 / a),
            max_relative = 1e-12
        );
        assert!(num(f, "/impact/flight_path_angle_deg") < 0.0);
        assert!(f["to_periapsis_s"].is_null() && f["periapsis_speed_m_s"].is_null());
        assert_eq!(num(&doc, "/inputs/above_alt_m"), 100e3);
    }
}

/// Issue 14, item 3: an outbound hyperbola whose periapsis is under the
/// surface never comes back: no impact in the flight numbers, and its
/// v-infinity is sqrt(C3).
#[test]
fn outbound_escape_has_no_impact_and_a_v_infinity() {
    let doc = solve_json(&["--burnout-alt", "250", "--speed", "11.5", "--fpa", "60"]);
    let s = &solutions(&doc)[0];
    assert!(s["flight"]["impact"].is_null(), "{}", s["flight"]);
    let c3 = num(s, "/orbit/c3_m2_s2");
    assert_relative_eq!(
        num(s, "/flight/v_infinity_m_s"),
        c3.sqrt(),
        max_relative = 1e-12
    );
}

/// Issue 14: the case file's title heads the human output.
#[test]
fn case_title_heads_the_table() {
    let r = run(&["solve", "--case", &crate::case_path("gto-injection.toml")]);
    assert_eq!(r.code, Some(0), "{}", r.stderr);
    let text = std::fs::read_to_string(crate::case_path("gto-injection.toml")).unwrap();
    let title = text
        .lines()
        .find_map(|l| l.strip_prefix("title = \""))
        .and_then(|l| l.strip_suffix('"'))
        .expect("the case has a title");
    assert_eq!(
        r.stdout.lines().next(),
        Some(format!("case: {title}").as_str())
    );
}

/// Issue 14, human output and item 6 in machine output: a swept angle is
/// not repeated as a result column; site results have their own columns,
/// with the plane named; a range given in km reads sensibly in nmi
/// (200 km = 107.99136 nmi, 1 nmi = 1852 m exactly).
#[test]
fn scan_tables_show_each_quantity_once_in_its_own_column() {
    let r = run(&[
        "scan",
        "--burnout-alt",
        "250",
        "--apoapsis-alt",
        "800",
        "--fpa=-4deg..4deg:2deg",
    ]);
    assert_eq!(r.code, Some(0), "{}", r.stderr);
    let header = r.stdout.lines().find(|l| l.contains("speed km/s")).unwrap();
    assert_eq!(header.matches("fpa deg").count(), 1, "{header}");
    let us = run(&[
        "scan",
        "--burnout-alt",
        "200km..400km:100km",
        "--periapsis-alt",
        "100nmi",
        "--apoapsis-alt",
        "200nmi",
        "--units",
        "us",
    ]);
    assert!(
        us.stdout
            .starts_with("scan over earth: --burnout-alt 107.9914 nmi to 215.9827 nmi"),
        "{}",
        us.stdout
    );
    let site = [
        "scan",
        "--burnout-alt",
        "200",
        "--periapsis-alt",
        "200",
        "--apoapsis-alt",
        "400",
        "--latitude",
        "28.5",
        "--downrange",
        "0km..1000km:500km",
        "--inclination",
        "51.6",
    ];
    let t = run(&site);
    let header = t.stdout.lines().find(|l| l.contains("speed km/s")).unwrap();
    for col in ["plane", "relative km/s", "launch az", "incl deg"] {
        assert!(header.contains(col), "{header}");
    }
    assert_eq!(t.stdout.matches("northbound").count(), 3, "{}", t.stdout);
    let mut csv_args = site.to_vec();
    csv_args.extend(["--format", "csv"]);
    let c = run(&csv_args);
    let mut rd = csv::Reader::from_reader(c.stdout.as_bytes());
    let cols: Vec<String> = rd.headers().unwrap().iter().map(str::to_string).collect();
    let plane = cols
        .iter()
        .position(|h| h == "plane")
        .expect("plane column");
    let az = cols.iter().position(|h| h == "launch_azimuth_deg").unwrap();
    for rec in rd.records() {
        let rec = rec.unwrap();
        let a: f64 = rec[az].parse::<f64>().unwrap().to_radians();
        assert_eq!(
            &rec[plane],
            if a.cos() > 0.0 {
                "northbound"
            } else {
                "southbound"
            }
        );
    }
}

/// Issue 14, human output: warnings in the table are worded in the table's
/// units to about the metre (the JSON keeps ten significant digits in SI).
#[test]
fn table_warnings_use_the_table_units_and_sensible_precision() {
    let case = crate::case_path("sounding-shot.toml");
    let si = run(&["solve", "--case", &case]);
    let us = run(&["solve", "--case", &case, "--units", "us"]);
    let line = |text: &str| {
        text.lines()
            .find(|l| l.contains("suborbital ("))
            .unwrap()
            .to_string()
    };
    let (si_line, us_line) = (line(&si.stdout), line(&us.stdout));
    // 6378.137 km is the WGS 84 equatorial radius; 3443.918 nmi the same
    // length in nautical miles (1 nmi = 1852 m).
    assert!(si_line.contains("surface radius 6378.137 km"), "{si_line}");
    assert!(us_line.contains("surface radius 3443.918 nmi"), "{us_line}");
    assert!(
        !si_line.contains(" m;") && !us_line.contains(" km"),
        "{si_line} / {us_line}"
    );
    let doc = solve_json(&["--case", &case]);
    assert!(crate::warnings(&doc)[0].contains("surface radius 6378137 m"));
}

/// Issue 14, flight numbers in scan and batch: `--flight` adds the
/// columns, and they equal the solve JSON's flight object for the same
/// inputs (one road to the numbers).
#[test]
fn flight_columns_in_scan_and_batch_match_solve() {
    let r = run(&[
        "scan",
        "--burnout-alt",
        "45",
        "--fpa",
        "80..84:2",
        "--apoapsis-alt",
        "250",
        "--above-alt",
        "100",
        "--flight",
        "--format",
        "csv",
    ]);
    assert_eq!(r.code, Some(0), "{}", r.stderr);
    let mut rd = csv::Reader::from_reader(r.stdout.as_bytes());
    let h: Vec<String> = rd.headers().unwrap().iter().map(str::to_string).collect();
    let col = |n: &str| {
        h.iter()
            .position(|x| x == n)
            .unwrap_or_else(|| panic!("{n} in {h:?}"))
    };
    let mut checked = 0;
    for rec in rd.records() {
        let rec = rec.unwrap();
        let fpa = &rec[col("fpa_deg")].to_string();
        let doc = solve_json(&[
            "--burnout-alt",
            "45",
            "--fpa",
            fpa,
            "--apoapsis-alt",
            "250",
            "--above-alt",
            "100",
        ]);
        let f = &solutions(&doc)[0]["flight"];
        for (c, k) in [
            ("impact_time_s", "/impact/time_s"),
            ("time_above_s", "/time_above_s"),
            ("to_apoapsis_s", "/to_apoapsis_s"),
        ] {
            let got: f64 = rec[col(c)].parse().unwrap();
            assert_eq!(got, num(f, k), "{c} at fpa {fpa}");
        }
        assert_eq!(&rec[col("to_periapsis_s")], "");
        checked += 1;
    }
    assert_eq!(checked, 3);
    let dir = tempfile::tempdir().unwrap();
    let input = dir.path().join("in.csv");
    std::fs::write(
        &input,
        "burnout-alt,fpa,apoapsis-alt,above-alt\n45,82,250,100\n",
    )
    .unwrap();
    let b = run(&["batch", input.to_str().unwrap(), "--flight"]);
    assert_eq!(b.code, Some(0), "{}", b.stderr);
    let mut rd = csv::Reader::from_reader(b.stdout.as_bytes());
    let h: Vec<String> = rd.headers().unwrap().iter().map(str::to_string).collect();
    let i = h
        .iter()
        .position(|x| x == "impact_time_s")
        .expect("flight columns in batch");
    let rec = rd.records().next().unwrap().unwrap();
    let doc = solve_json(&[
        "--burnout-alt",
        "45",
        "--fpa",
        "82",
        "--apoapsis-alt",
        "250",
        "--above-alt",
        "100",
    ]);
    assert_eq!(
        rec[i].parse::<f64>().unwrap(),
        num(&solutions(&doc)[0]["flight"], "/impact/time_s")
    );
}

/// Issue 14: the case title heads the scan and budget tables too.
#[test]
fn case_title_heads_the_budget_table() {
    let r = run(&["budget", "--case", &crate::case_path("gto-budget.toml")]);
    assert_eq!(r.code, Some(0), "{}", r.stderr);
    assert!(
        r.stdout.starts_with("case: Corvid-H upper stage"),
        "{}",
        r.stdout
    );
}

/// A timing altitude below the surface is refused, naming the flag.
#[test]
fn negative_timing_altitude_is_a_usage_error() {
    let r = run(&[
        "solve",
        "--burnout-alt",
        "200",
        "--periapsis-alt",
        "200",
        "--apoapsis-alt",
        "400",
        "--above-alt=-5",
    ]);
    assert_eq!(r.code, Some(2));
    let line = r.stderr.trim_end();
    assert!(
        line.starts_with("error: invalid length '-5' for --above-alt")
            && line.contains("0 or more"),
        "{line}"
    );
    assert_eq!(line.lines().count(), 1);
}
