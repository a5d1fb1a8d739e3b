//! Launch site, rotation and inclination, checked by independent vector
//! geometry: the test builds the site, the great circle, the burnout position
//! and velocity as 3-D vectors in a body-fixed frame at the burnout instant,
//! and recovers inclination, apsides and the surface-relative velocity with
//! cross products, without the product's spherical-trigonometry formulas.

use crate::{run, solve_json};
use approx::assert_relative_eq;
use serde_json::Value;

type V3 = [f64; 3];

fn cross(a: V3, b: V3) -> V3 {
    [
        a[1] * b[2] - a[2] * b[1],
        a[2] * b[0] - a[0] * b[2],
        a[0] * b[1] - a[1] * b[0],
    ]
}
fn dot(a: V3, b: V3) -> f64 {
    a[0] * b[0] + a[1] * b[1] + a[2] * b[2]
}
fn norm(a: V3) -> f64 {
    dot(a, a).sqrt()
}
fn scale(a: V3, k: f64) -> V3 {
    [a[0] * k, a[1] * k, a[2] * k]
}
fn add(a: V3, b: V3) -> V3 {
    [a[0] + b[0], a[1] + b[1], a[2] + b[2]]
}

/// Unit up, north and east vectors at geocentric latitude/longitude (rad).
fn local_frame(lat: f64, lon: f64) -> (V3, V3, V3) {
    let up = [lat.cos() * lon.cos(), lat.cos() * lon.sin(), lat.sin()];
    let north = [-lat.sin() * lon.cos(), -lat.sin() * lon.sin(), lat.cos()];
    let east = [-lon.sin(), lon.cos(), 0.0];
    (up, north, east)
}

fn f(v: &Value, key: &str) -> f64 {
    v[key]
        .as_f64()
        .unwrap_or_else(|| panic!("{key} missing in {v}"))
}

/// WGS 84 geodetic -> geocentric latitude of a surface point (NIMA TR8350.2:
/// 1/f = 298.257223563), written out here independently.
fn geocentric(lat_geodetic_deg: f64) -> f64 {
    let f = 1.0 / 298.257223563;
    ((1.0 - f) * (1.0 - f) * lat_geodetic_deg.to_radians().tan()).atan()
}

#[test]
fn vector_geometry_recovers_inclination_apsides_and_relative_velocity() {
    let (site_lat, site_lon, downrange_deg, incl): (f64, f64, f64, f64) = (34.2, -118.5, 6.0, 63.4);
    let doc = solve_json(&[
        "--burnout-alt",
        "250km",
        "--periapsis-alt",
        "250km",
        "--apoapsis-alt",
        "1200km",
        "--latitude",
        "34.2",
        "--longitude",
        "-118.5",
        "--downrange",
        "6deg",
        "--inclination",
        "63.4",
    ]);
    let mu = doc["body"]["mu_m3_s2"].as_f64().unwrap();
    let omega = 7.292115e-5; // WGS 84 rotation rate
    let sols = doc["solutions"].as_array().unwrap();
    assert_eq!(sols.len(), 2, "northbound and southbound launches");
    for s in sols {
        let r = f(&doc, "burnout_radius_m");
        // Great circle by rotating the site vector toward the launch heading.
        let (up1, n1, e1) = local_frame(geocentric(site_lat), site_lon.to_radians());
        let a1 = f(s, "launch_azimuth_deg").to_radians();
        let t1 = add(scale(n1, a1.cos()), scale(e1, a1.sin()));
        let d = downrange_deg.to_radians();
        let p2 = add(scale(up1, d.cos()), scale(t1, d.sin()));
        let t2 = add(scale(up1, -d.sin()), scale(t1, d.cos()));
        let lat2 = p2[2].asin();
        let lon2 = p2[1].atan2(p2[0]);
        assert_relative_eq!(
            lat2.to_degrees(),
            f(s, "burnout_latitude_deg"),
            max_relative = 1e-10
        );
        assert_relative_eq!(
            lon2.to_degrees(),
            f(s, "burnout_longitude_deg"),
            max_relative = 1e-10
        );
        let (up, north, east) = local_frame(lat2, lon2);
        // Relative heading = direction of the great circle at burnout.
        let heading = dot(t2, east)
            .atan2(dot(t2, north))
            .to_degrees()
            .rem_euclid(360.0);
        assert_relative_eq!(
            heading,
            f(&s["relative"], "azimuth_deg"),
            max_relative = 1e-9
        );
        // Inertial velocity from speed, flight-path angle and inertial azimuth.
        let (v, g, b) = (
            f(s, "speed_m_s"),
            f(s, "flight_path_angle_deg").to_radians(),
            f(s, "azimuth_deg").to_radians(),
        );
        let vel = add(
            scale(up, v * g.sin()),
            add(
                scale(north, v * g.cos() * b.cos()),
                scale(east, v * g.cos() * b.sin()),
            ),
        );
        let pos = scale(up, r);
        // Inclination from the angular momentum vector.
        let h = cross(pos, vel);
        let i = (h[2] / norm(h)).acos().to_degrees();
        assert_relative_eq!(i, incl, max_relative = 1e-9);
        // Apsides from the eccentricity vector.
        let ev = scale(
            add(scale(cross(vel, h), 1.0 / mu), scale(pos, -1.0 / r)),
            1.0,
        );
        let e = norm(ev);
        let p = dot(h, h) / mu;
        let re = doc["body"]["radius_m"].as_f64().unwrap();
        assert_relative_eq!(p / (1.0 + e) - re, 250e3, max_relative = 1e-8);
        assert_relative_eq!(p / (1.0 - e) - re, 1200e3, max_relative = 1e-8);
        // Surface-relative velocity: v - omega x r.
        let rel = add(vel, scale(cross([0.0, 0.0, omega], pos), -1.0));
        assert_relative_eq!(
            norm(rel),
            f(&s["relative"], "speed_m_s"),
            max_relative = 1e-12
        );
        let rel_g = (dot(rel, up) / norm(rel)).asin().to_degrees();
        assert!((rel_g - f(&s["relative"], "flight_path_angle_deg")).abs() < 1e-9);
        assert_relative_eq!(f(&s["orbit"], "inclination_deg"), incl, max_relative = 1e-9);
    }
}

#[test]
fn equatorial_due_east_gains_the_rotation_speed_and_due_west_pays_it() {
    let east = solve_json(&[
        "--burnout-alt",
        "200",
        "--periapsis-alt",
        "200",
        "--apoapsis-alt",
        "200",
        "--latitude",
        "0",
        "--azimuth",
        "90",
    ]);
    let west = solve_json(&[
        "--burnout-alt",
        "200",
        "--periapsis-alt",
        "200",
        "--apoapsis-alt",
        "200",
        "--latitude",
        "0",
        "--azimuth",
        "270",
    ]);
    let r = f(&east, "burnout_radius_m");
    let w = 7.292115e-5 * r; // WGS 84 omega times burnout radius
    let s_e = &east["solutions"][0];
    let s_w = &west["solutions"][0];
    assert_relative_eq!(
        f(s_e, "speed_m_s") - f(&s_e["relative"], "speed_m_s"),
        w,
        max_relative = 1e-10
    );
    assert_relative_eq!(
        f(&s_w["relative"], "speed_m_s") - f(s_w, "speed_m_s"),
        w,
        max_relative = 1e-10
    );
    assert_relative_eq!(f(&east["orbit"], "inclination_deg"), 0.0, epsilon = 1e-12);
    assert_relative_eq!(
        f(&west["orbit"], "inclination_deg"),
        180.0,
        max_relative = 1e-12
    );
}

#[test]
fn polar_launch_gains_nothing_along_track() {
    let doc = solve_json(&[
        "--burnout-alt",
        "200",
        "--periapsis-alt",
        "200",
        "--apoapsis-alt",
        "200",
        "--latitude",
        "10",
        "--inclination",
        "90",
    ]);
    for s in doc["solutions"].as_array().unwrap() {
        let beta = f(s, "azimuth_deg").to_radians();
        let rel = &s["relative"];
        let (vr, ar) = (f(rel, "speed_m_s"), f(rel, "azimuth_deg").to_radians());
        // Along-track (inertial direction) component of the relative velocity
        // equals the inertial speed: rotation only adds a cross-track part.
        assert_relative_eq!(
            vr * (ar - beta).cos(),
            f(s, "speed_m_s"),
            max_relative = 1e-10
        );
    }
}

#[test]
fn inclination_below_latitude_is_infeasible_naming_both() {
    let r = run(&[
        "solve",
        "--burnout-alt",
        "200",
        "--periapsis-alt",
        "200",
        "--apoapsis-alt",
        "400",
        "--latitude",
        "45",
        "--inclination",
        "30",
    ]);
    assert_eq!(r.code, Some(3));
    assert_eq!(r.stderr.lines().count(), 1);
    assert!(
        r.stderr.contains("inclination 30 deg") && r.stderr.contains("latitude 44.8"),
        "{}",
        r.stderr
    );
}

#[test]
fn site_keys_without_a_latitude_are_a_usage_error() {
    let r = run(&[
        "solve",
        "--burnout-alt",
        "200",
        "--periapsis-alt",
        "200",
        "--apoapsis-alt",
        "400",
        "--inclination",
        "51",
    ]);
    assert_eq!(r.code, Some(2));
    assert!(
        r.stderr.contains("--inclination") && r.stderr.contains("--latitude"),
        "{}",
        r.stderr
    );
}

#[test]
fn scan_over_site_latitude_tabulates_relative_speed_as_solve_does() {
    let r = run(&[
        "scan",
        "--burnout-alt",
        "250",
        "--periapsis-alt",
        "250",
        "--apoapsis-alt",
        "900",
        "--latitude",
        "0..60:20",
        "--inclination",
        "65",
        "--format",
        "csv",
    ]);
    assert_eq!(r.code, Some(0), "{}", r.stderr);
    let mut rdr = csv::Reader::from_reader(r.stdout.as_bytes());
    let header: Vec<String> = rdr.headers().unwrap().iter().map(str::to_string).collect();
    let col = |name: &str| {
        header
            .iter()
            .position(|h| h == name)
            .unwrap_or_else(|| panic!("{name} in {header:?}"))
    };
    let (lat_c, rel_c, az_c, inc_c) = (
        col("latitude_deg"),
        col("relative_speed_m_s"),
        col("launch_azimuth_deg"),
        col("inclination_deg"),
    );
    let rows: Vec<csv::StringRecord> = rdr.records().map(|x| x.unwrap()).collect();
    // 4 latitudes x (northbound, southbound); burnout at periapsis: one branch.
    assert_eq!(rows.len(), 8);
    for row in &rows {
        let lat = &row[lat_c];
        let doc = solve_json(&[
            "--burnout-alt",
            "250",
            "--periapsis-alt",
            "250",
            "--apoapsis-alt",
            "900",
            "--latitude",
            lat,
            "--inclination",
            "65",
        ]);
        let az: f64 = row[az_c].parse().unwrap();
        let rel: f64 = row[rel_c].parse().unwrap();
        let same = doc["solutions"].as_array().unwrap().iter().any(|s| {
            (f(s, "launch_azimuth_deg") - az).abs() < 1e-9
                && (f(&s["relative"], "speed_m_s") - rel).abs() < 1e-6
        });
        assert!(
            same,
            "latitude {lat}: row {row:?} not among solve's solutions"
        );
        assert_relative_eq!(
            row[inc_c].parse::<f64>().unwrap(),
            65.0,
            max_relative = 1e-9
        );
    }
    assert!(r.stderr.contains("surface-relative speed"), "{}", r.stderr);
}

#[test]
fn batch_rows_with_a_site_carry_the_site_columns() {
    let dir = tempfile::tempdir().unwrap();
    std::fs::write(
        dir.path().join("in.csv"),
        "id,burnout-alt,periapsis-alt,apoapsis-alt,latitude,azimuth\neq,200,200,200,0,90\nplain,200,200,200,,\n",
    )
    .unwrap();
    let out = std::process::Command::new(env!("CARGO_BIN_EXE_burnout"))
        .args(["batch", "in.csv"])
        .current_dir(dir.path())
        .output()
        .unwrap();
    assert_eq!(out.status.code(), Some(0));
    let mut rdr = csv::Reader::from_reader(&out.stdout[..]);
    let header: Vec<String> = rdr.headers().unwrap().iter().map(str::to_string).collect();
    let rel = header
        .iter()
        .position(|h| h == "relative_speed_m_s")
        .unwrap();
    let speed = header.iter().position(|h| h == "speed_m_s").unwrap();
    let rows: Vec<csv::StringRecord> = rdr.records().map(|x| x.unwrap()).collect();
    let v: f64 = rows[0][speed].parse().unwrap();
    let v_rel: f64 = rows[0][rel].parse().unwrap();
    // Due east on the equator: the surface carries omega r (WGS 84 omega).
    assert_relative_eq!(
        v - v_rel,
        7.292115e-5 * (6_378_137.0 + 200e3),
        max_relative = 1e-10
    );
    assert_eq!(
        &rows[1][rel], "",
        "a row without a site has blank site columns"
    );
}

#[test]
fn inclination_just_above_latitude_with_downrange_finds_both_launch_azimuths() {
    // Regression: with downrange and an inclination close to the latitude,
    // the northbound and southbound roots (about 88.59 and 92.56 deg here,
    // each checked by flying it with --azimuth) drift apart from the site's
    // pair; only one used to be found.
    let doc = solve_json(&[
        "--burnout-alt",
        "117404.61471677723m",
        "--latitude",
        "14.392397521922575",
        "--longitude=-46.804749292744845",
        "--downrange",
        "23.229390845304813deg",
        "--periapsis-alt",
        "-214576.92642248422m",
        "--apoapsis-alt",
        "7365632.223150484m",
        "--inclination",
        "14.300022587657832deg",
    ]);
    let mut az: Vec<f64> = doc["solutions"]
        .as_array()
        .unwrap()
        .iter()
        .map(|s| f(s, "launch_azimuth_deg"))
        .collect();
    az.sort_by(f64::total_cmp);
    az.dedup_by(|a, b| (*a - *b).abs() < 1e-6);
    assert_eq!(az.len(), 2, "{az:?}");
    for a in az {
        let check = solve_json(&[
            "--burnout-alt",
            "117404.61471677723m",
            "--latitude",
            "14.392397521922575",
            "--longitude=-46.804749292744845",
            "--downrange",
            "23.229390845304813deg",
            "--periapsis-alt",
            "-214576.92642248422m",
            "--apoapsis-alt",
            "7365632.223150484m",
            "--azimuth",
            &format!("{a}"),
        ]);
        assert_relative_eq!(
            f(&check["orbit"], "inclination_deg"),
            14.300022587657832,
            max_relative = 1e-9
        );
    }
}

#[test]
fn close_mirror_roots_are_kept_and_unconverged_starts_are_not_returned() {
    // Inclination a hair above the latitude: the two roots sit either side
    // of due east, 6.8e-6 rad apart (both reproduce the target, from the
    // independent 60-digit check: 89.99980591 and 90.00019409 deg). And a
    // case where a start at exactly 90 deg used to be returned unpolished.
    for (args, want) in [
        (
            vec![
                "--body",
                "mars",
                "--burnout-alt",
                "21112.177633386364m",
                "--latitude=-13.749260492939754deg",
                "--longitude=-134.2854121299319deg",
                "--periapsis-alt",
                "-17641.672506916337m",
                "--apoapsis-alt",
                "56995.08200974716m",
                "--inclination",
                "13.749260494283266deg",
            ],
            [89.99980591108108, 90.00019408891892],
        ),
        (
            vec![
                "--latitude",
                "58.64542309837458",
                "--longitude",
                "107.93880475121148deg",
                "--burnout-alt",
                "155568.68795028824m",
                "--periapsis-alt",
                "-17871.83989816252m",
                "--apoapsis-alt",
                "5707690.92183028m",
                "--inclination",
                "58.4741545540409deg",
            ],
            [89.9992084051411, 90.0007915948589],
        ),
    ] {
        let doc = solve_json(&args);
        let mut az: Vec<f64> = doc["solutions"]
            .as_array()
            .unwrap()
            .iter()
            .map(|s| f(s, "launch_azimuth_deg"))
            .collect();
        az.sort_by(f64::total_cmp);
        az.dedup_by(|a, b| (*a - *b).abs() < 1e-9);
        assert_eq!(az.len(), 2, "{az:?}");
        for (got, w) in az.iter().zip(want) {
            assert!((got - w).abs() < 1e-6, "{got} vs {w}");
        }
    }
}
