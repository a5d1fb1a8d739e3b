//! `burnout scan`: rows against `solve` at the same inputs, ranges and
//! their errors, the refined extremes against dense grids, files (no
//! clobbering, no partial files) and the figure.

use crate::{run, solve_json, Run};
use approx::assert_relative_eq;
use burnout::report::plot::{hex, SERIES_COLORS};
use serde_json::Value;
use std::path::Path;
use std::process::{Command, Stdio};

/// Runs `burnout ARGS...` in `dir` (for tests that look at files).
pub fn run_in(dir: &Path, args: &[&str]) -> Run {
    let out = Command::new(env!("CARGO_BIN_EXE_burnout"))
        .args(args)
        .current_dir(dir)
        .env("RUST_BACKTRACE", "1")
        .output()
        .expect("run the burnout executable");
    Run {
        code: out.status.code(),
        stdout: String::from_utf8(out.stdout).expect("stdout is UTF-8"),
        stderr: String::from_utf8(out.stderr).expect("stderr is UTF-8"),
    }
}

fn scan(args: &[&str]) -> Run {
    let mut all = vec!["scan"];
    all.extend_from_slice(args);
    run(&all)
}

fn scan_json(args: &[&str]) -> Value {
    let mut all = args.to_vec();
    all.extend_from_slice(&["--format", "json"]);
    let r = scan(&all);
    assert_eq!(r.code, Some(0), "args {all:?}: stderr {}", r.stderr);
    serde_json::from_str(&r.stdout).unwrap_or_else(|e| panic!("not JSON ({e}): {}", r.stdout))
}

/// Header and rows of CSV text.
fn read_csv(text: &str) -> (Vec<String>, Vec<Vec<String>>) {
    let mut rdr = csv::Reader::from_reader(text.as_bytes());
    let header = rdr
        .headers()
        .expect("csv header")
        .iter()
        .map(str::to_string)
        .collect();
    let rows = rdr
        .records()
        .map(|r| r.expect("csv row").iter().map(str::to_string).collect())
        .collect();
    (header, rows)
}

fn f(text: &str) -> f64 {
    text.parse()
        .unwrap_or_else(|_| panic!("'{text}' is not a number"))
}

fn one_line_error(r: &Run, code: i32) -> String {
    assert_eq!(r.code, Some(code), "stderr: {}", r.stderr);
    assert!(r.stdout.is_empty(), "stdout should be empty: {}", r.stdout);
    assert_eq!(r.stderr.lines().count(), 1, "stderr: {}", r.stderr);
    assert!(!r.stderr.contains("panicked"), "{}", r.stderr);
    r.stderr.trim_end().to_string()
}

#[test]
fn csv_rows_match_solve_json_at_the_same_inputs() {
    let r = scan(&[
        "--burnout-alt",
        "150km..650km:125km",
        "--periapsis-alt",
        "200km",
        "--apoapsis-alt",
        "35786km",
        "--format",
        "csv",
        "--sensitivities",
    ]);
    assert_eq!(r.code, Some(0), "{}", r.stderr);
    let (header, rows) = read_csv(&r.stdout);
    let mut want: Vec<String> = [
        "burnout_alt_m",
        "status",
        "message",
        "branch",
        "speed_m_s",
        "flight_path_angle_deg",
        "true_anomaly_deg",
        "periapsis_radius_m",
        "apoapsis_radius_m",
        "sma_m",
        "ecc",
        "period_s",
        "c3_m2_s2",
        "burnout_radius_m",
    ]
    .iter()
    .map(|s| s.to_string())
    .collect();
    for row in [
        "periapsis_radius_m",
        "apoapsis_radius_m",
        "sma_m",
        "ecc",
        "period_s",
    ] {
        for col in ["speed_m_s", "flight_path_angle_deg", "burnout_radius_m"] {
            want.push(format!("d_{row}_d_{col}"));
        }
    }
    assert_eq!(header, want);
    // 150 km is below the periapsis: one infeasible row; then two branches
    // at each of 275, 400, 525 and 650 km.
    assert_eq!(rows.len(), 1 + 2 * 4);
    assert_eq!(rows[0][0], "150000");
    assert_eq!(rows[0][1], "infeasible");
    assert!(
        rows[0][2].contains("below periapsis radius"),
        "{:?}",
        rows[0]
    );
    let col = |name: &str| header.iter().position(|h| h == name).unwrap();
    for row in &rows[1..] {
        let alt_m = f(&row[0]);
        let doc = solve_json(&[
            "--burnout-alt",
            &format!("{alt_m}m"),
            "--periapsis-alt",
            "200km",
            "--apoapsis-alt",
            "35786km",
        ]);
        let sol = doc["solutions"]
            .as_array()
            .unwrap()
            .iter()
            .find(|s| s["branch"] == row[col("branch")].as_str())
            .expect("same branch in solve");
        assert_eq!(row[col("status")], "ok");
        for (name, ptr) in [
            ("speed_m_s", "/speed_m_s"),
            ("flight_path_angle_deg", "/flight_path_angle_deg"),
            ("true_anomaly_deg", "/true_anomaly_deg"),
            ("periapsis_radius_m", "/orbit/periapsis_radius_m"),
            ("apoapsis_radius_m", "/orbit/apoapsis_radius_m"),
            ("sma_m", "/orbit/sma_m"),
            ("ecc", "/orbit/ecc"),
            ("period_s", "/orbit/period_s"),
            ("c3_m2_s2", "/orbit/c3_m2_s2"),
        ] {
            let want = sol.pointer(ptr).and_then(Value::as_f64).unwrap();
            assert_relative_eq!(f(&row[col(name)]), want, max_relative = 1e-12);
        }
        let m = &sol["sensitivity"]["matrix"];
        let names = [
            "periapsis_radius_m",
            "apoapsis_radius_m",
            "sma_m",
            "ecc",
            "period_s",
        ];
        let cols = ["speed_m_s", "flight_path_angle_deg", "burnout_radius_m"];
        for (i, rname) in names.iter().enumerate() {
            for (k, cname) in cols.iter().enumerate() {
                let got = f(&row[col(&format!("d_{rname}_d_{cname}"))]);
                assert_relative_eq!(got, m[i][k].as_f64().unwrap(), max_relative = 1e-12);
            }
        }
    }
}

#[test]
fn two_ranges_solve_the_whole_cartesian_product() {
    let r = scan(&[
        "--burnout-alt",
        "150km..600km:150km",
        "--apoapsis-alt",
        "500km..40000km:500km",
        "--periapsis-alt",
        "200km",
        "--format",
        "csv",
    ]);
    assert_eq!(r.code, Some(0), "{}", r.stderr);
    let (header, rows) = read_csv(&r.stdout);
    assert_eq!(header[..2], ["burnout_alt_m", "apoapsis_alt_m"]);
    let mut points: Vec<(String, String)> =
        rows.iter().map(|r| (r[0].clone(), r[1].clone())).collect();
    points.sort();
    points.dedup();
    assert_eq!(points.len(), 4 * 80);
    assert!(points.contains(&("600000".to_string(), "40000000".to_string())));
    // Every point is accounted for: solved points have two rows, others one.
    let failed = rows.iter().filter(|r| r[2] != "ok").count();
    assert_eq!(rows.len(), failed + 2 * (320 - failed));
    assert!(r.stderr.contains("scan: 320 points"), "{}", r.stderr);
}

#[test]
fn count_ranges_and_reversed_ranges_put_end_points_on_the_grid() {
    let doc = scan_json(&[
        "--burnout-alt",
        "600km..200km:-100km",
        "--periapsis-alt",
        "180",
        "--apoapsis-alt",
        "1000..2000/3",
    ]);
    let rows = doc["rows"].as_array().unwrap();
    let firsts: Vec<f64> = rows
        .iter()
        .map(|r| r["burnout_alt_m"].as_f64().unwrap())
        .collect();
    assert_eq!(firsts.first(), Some(&600_000.0));
    assert_eq!(firsts.last(), Some(&200_000.0));
    let apo: Vec<f64> = rows
        .iter()
        .map(|r| r["apoapsis_alt_m"].as_f64().unwrap())
        .collect();
    assert!(apo.contains(&1_500_000.0) && apo.contains(&2_000_000.0));
    assert_eq!(doc["summary"]["points"], 15);
}

#[test]
fn range_syntax_errors_are_one_line_naming_the_flag() {
    let base = ["--periapsis-alt", "200km", "--apoapsis-alt", "35786km"];
    for (range, expect) in [
        ("150km..600km:0km", "step '0km' is zero"),
        (
            "600km..150km:5km",
            "runs downward from 600 km to 150 km but the step 5 km is positive",
        ),
        (
            "150km..7km/s:5km",
            "end '7km/s' is a speed but --burnout-alt takes a length",
        ),
        ("150km..600km/1", "must be 2 or more"),
        ("150km..600km", "missing step"),
    ] {
        let mut args = vec!["--burnout-alt", range];
        args.extend_from_slice(&base);
        let line = one_line_error(&scan(&args), 2);
        assert!(
            line.starts_with(&format!(
                "error: invalid range '{range}' for --burnout-alt: "
            )),
            "{line}"
        );
        assert!(line.contains(expect), "{line}");
    }
}

#[test]
fn scan_without_a_range_or_target_is_a_usage_error() {
    let line = one_line_error(
        &scan(&["--burnout-alt", "200", "--sma", "7000", "--ecc", "0.01"]),
        2,
    );
    assert!(line.contains("nothing to scan"), "{line}");
    let line = one_line_error(&scan(&["--burnout-alt", "100..300:100"]), 2);
    assert!(line.contains("nothing to target"), "{line}");
}

#[test]
fn refined_interior_minimum_agrees_with_a_dense_grid() {
    // Burnout 300 km up, periapsis 200 km targeted, flight-path angle swept:
    // the speed grows with |fpa| (see the unit test in src/scan.rs), so the
    // minimum is at 0 deg, between the coarse grid's -2 and 1 deg.
    let fixed = ["--burnout-alt", "300km", "--periapsis-alt", "200km"];
    let mut coarse = fixed.to_vec();
    coarse.extend_from_slice(&["--fpa", "-17deg..23deg:3deg"]);
    let mut dense = fixed.to_vec();
    dense.extend_from_slice(&["--fpa", "-2deg..1deg:0.001deg"]);
    let c = scan_json(&coarse);
    let d = scan_json(&dense);
    let min = &c["summary"]["minimum"];
    let dense_min = &d["summary"]["minimum"]["grid"];
    assert_eq!(min["refinement"]["converged"], true);
    assert_eq!(min["at_range_end"].as_array().unwrap().len(), 0);
    let x = min["at"]["fpa_deg"].as_f64().unwrap();
    let xd = dense_min["at"]["fpa_deg"].as_f64().unwrap();
    assert!(
        (x - xd).abs() <= 0.001,
        "refined {x} deg, dense grid {xd} deg"
    );
    assert_relative_eq!(
        min["speed_m_s"].as_f64().unwrap(),
        dense_min["speed_m_s"].as_f64().unwrap(),
        max_relative = 1e-9
    );
    // The coarse grid's own best is clearly worse: the refinement did work.
    assert!(min["grid"]["speed_m_s"].as_f64().unwrap() > min["speed_m_s"].as_f64().unwrap() + 1.0);
}

#[test]
fn minimum_at_the_end_of_the_range_is_the_end_and_is_said_plainly() {
    // A fixed transfer orbit: vis-viva speed falls with burnout radius.
    let fixed = ["--periapsis-alt", "200km", "--apoapsis-alt", "35786km"];
    let mut coarse = fixed.to_vec();
    coarse.extend_from_slice(&["--burnout-alt", "250km..1000km:50km"]);
    let mut dense = fixed.to_vec();
    dense.extend_from_slice(&["--burnout-alt", "990km..1000km:0.001km"]);
    let c = scan_json(&coarse);
    let d = scan_json(&dense);
    let min = &c["summary"]["minimum"];
    assert_eq!(min["at_range_end"], serde_json::json!(["burnout_alt_m"]));
    assert_relative_eq!(min["at"]["burnout_alt_m"].as_f64().unwrap(), 1_000_000.0);
    assert_relative_eq!(
        min["speed_m_s"].as_f64().unwrap(),
        d["summary"]["minimum"]["grid"]["speed_m_s"]
            .as_f64()
            .unwrap(),
        max_relative = 1e-14
    );
    let mut table = coarse.clone();
    table.insert(0, "scan");
    let r = run(&table);
    assert_eq!(r.code, Some(0));
    assert!(
        r.stdout.contains("minimum required speed")
            && r.stdout.contains("at the end of the --burnout-alt range"),
        "{}",
        r.stdout
    );
}

#[test]
fn table_marks_infeasible_rows_with_their_reason_and_ends_with_the_caution() {
    let r = scan(&[
        "--burnout-alt",
        "100km..300km:100km",
        "--periapsis-alt",
        "200km",
        "--apoapsis-alt",
        "35786km",
    ]);
    assert_eq!(r.code, Some(0), "{}", r.stderr);
    let infeasible = r
        .stdout
        .lines()
        .find(|l| l.trim_start().starts_with("100.000"))
        .expect("row for 100 km");
    assert!(
        infeasible.contains("infeasible: burnout radius"),
        "{infeasible}"
    );
    assert!(r.stdout.contains("maximum required speed"), "{}", r.stdout);
    assert!(r.stdout.trim_end().ends_with("govern any real flight."));
    assert!(r.stderr.is_empty(), "{}", r.stderr);
}

#[test]
fn every_point_infeasible_writes_the_rows_and_exits_3() {
    let r = scan(&[
        "--burnout-alt",
        "100km..150km:25km",
        "--periapsis-alt",
        "200km",
        "--apoapsis-alt",
        "35786km",
        "--format",
        "csv",
    ]);
    assert_eq!(r.code, Some(3), "{}", r.stderr);
    assert_eq!(read_csv(&r.stdout).1.len(), 3);
    assert_eq!(r.stderr.lines().count(), 1, "{}", r.stderr);
    assert!(r
        .stderr
        .starts_with("error: no point of the scan solved (3 infeasible"));
}

#[test]
fn out_file_is_not_clobbered_without_force() {
    let dir = tempfile::tempdir().unwrap();
    std::fs::write(dir.path().join("table.csv"), "keep me\n").unwrap();
    let args = [
        "scan",
        "--burnout-alt",
        "200km..400km:100km",
        "--periapsis-alt",
        "200km",
        "--apoapsis-alt",
        "35786km",
        "--out",
        "table.csv",
    ];
    let r = run_in(dir.path(), &args);
    let line = one_line_error(&r, 2);
    assert_eq!(
        line,
        "error: --out 'table.csv' already exists: give --force to replace it"
    );
    assert_eq!(
        std::fs::read_to_string(dir.path().join("table.csv")).unwrap(),
        "keep me\n"
    );
    let mut forced = args.to_vec();
    forced.push("--force");
    let r = run_in(dir.path(), &forced);
    assert_eq!(r.code, Some(0), "{}", r.stderr);
    let text = std::fs::read_to_string(dir.path().join("table.csv")).unwrap();
    assert!(text.starts_with("burnout_alt_m,status,"), "{text}");
    assert!(r.stderr.contains("minimum required speed"), "{}", r.stderr);
    // No temporary file is left beside it.
    let names: Vec<String> = std::fs::read_dir(dir.path())
        .unwrap()
        .map(|e| e.unwrap().file_name().to_string_lossy().into_owned())
        .collect();
    assert_eq!(names, ["table.csv"]);
}

#[test]
fn out_extension_chooses_json() {
    let dir = tempfile::tempdir().unwrap();
    let r = run_in(
        dir.path(),
        &[
            "scan",
            "--burnout-alt",
            "250..350:50",
            "--sma",
            "24371",
            "--ecc",
            "0.73",
            "--out",
            "t.json",
        ],
    );
    assert_eq!(r.code, Some(0), "{}", r.stderr);
    let doc: Value =
        serde_json::from_str(&std::fs::read_to_string(dir.path().join("t.json")).unwrap()).unwrap();
    assert_eq!(doc["summary"]["points"], 3);
    assert!(r.stdout.is_empty());
}

#[test]
fn killed_run_leaves_no_file_under_the_final_name() {
    let dir = tempfile::tempdir().unwrap();
    // 100 million points: minutes of work, so the run is surely mid-way
    // when it is killed.
    let mut child = Command::new(env!("CARGO_BIN_EXE_burnout"))
        .args([
            "scan",
            "--burnout-alt",
            "200km..1200km/100000000",
            "--periapsis-alt",
            "185km",
            "--apoapsis-alt",
            "35786km",
            "--out",
            "big.csv",
        ])
        .current_dir(dir.path())
        .stdout(Stdio::null())
        .stderr(Stdio::null())
        .spawn()
        .unwrap();
    // Wait until the temporary file holds some rows.
    let started = std::time::Instant::now();
    loop {
        let grown = std::fs::read_dir(dir.path())
            .unwrap()
            .filter_map(|e| e.ok())
            .any(|e| e.metadata().map(|m| m.len() > 100_000).unwrap_or(false));
        if grown || started.elapsed().as_secs() > 60 {
            break;
        }
        std::thread::sleep(std::time::Duration::from_millis(20));
    }
    child.kill().unwrap();
    child.wait().unwrap();
    assert!(!dir.path().join("big.csv").exists());
    let names: Vec<String> = std::fs::read_dir(dir.path())
        .unwrap()
        .map(|e| e.unwrap().file_name().to_string_lossy().into_owned())
        .collect();
    assert!(
        names.len() == 1 && names[0].starts_with(".big.csv.") && names[0].ends_with(".tmp"),
        "expected only the partial temporary file: {names:?}"
    );
}

fn svg_of(dir: &Path, args: &[&str]) -> String {
    let r = run_in(dir, args);
    assert_eq!(r.code, Some(0), "{}", r.stderr);
    std::fs::read_to_string(dir.join("scan.svg")).expect("the figure was written")
}

fn stroke_count(doc: &roxmltree::Document, color: (u8, u8, u8)) -> usize {
    let want = hex(color);
    doc.descendants()
        .filter(|n| n.has_tag_name("polyline") && n.attribute("stroke") == Some(want.as_str()))
        .count()
}

fn texts<'a>(doc: &'a roxmltree::Document) -> Vec<&'a str> {
    doc.descendants()
        .filter(|n| n.has_tag_name("text"))
        .filter_map(|n| n.text())
        .map(str::trim)
        .collect()
}

/// Issue 14, figures: one line per branch in each panel (and one legend
/// entry), descending dashed so coinciding branches stay apart, grey where
/// no line solves (burnout below the 200 km periapsis), the title naming
/// the fixed targets, and a minimum at the end of the range noted, not
/// marked.
#[test]
fn figure_has_a_line_per_branch_shading_and_a_noted_end_minimum() {
    let dir = tempfile::tempdir().unwrap();
    let svg = svg_of(
        dir.path(),
        &[
            "scan",
            "--burnout-alt",
            "100km..600km:10km",
            "--periapsis-alt",
            "200km",
            "--apoapsis-alt",
            "35786km",
            "--format",
            "csv",
            "--plot",
            "scan.svg",
        ],
    );
    let doc = roxmltree::Document::parse(&svg).expect("valid SVG (XML)");
    assert_eq!(doc.root_element().tag_name().name(), "svg");
    // One line per branch in each panel, plus its legend entry.
    assert_eq!(stroke_count(&doc, SERIES_COLORS[0]), 3);
    assert_eq!(stroke_count(&doc, SERIES_COLORS[1]), 3);
    assert_eq!(stroke_count(&doc, SERIES_COLORS[2]), 0);
    let dashed = doc
        .descendants()
        .filter(|n| {
            n.has_tag_name("polyline")
                && n.attribute("stroke") == Some(hex(SERIES_COLORS[1]).as_str())
        })
        .all(|n| n.attribute("stroke-dasharray").is_some());
    assert!(dashed, "descending lines are dashed");
    let t = texts(&doc);
    for want in [
        "burnout altitude (km)",
        "required speed (km/s)",
        "flight-path angle (deg)",
        "ascending",
        "descending",
        "no line has a solution",
        "Required burnout speed and flight-path angle vs burnout altitude for 200 x 35786 km (periapsis x apoapsis altitude)",
    ] {
        assert!(t.contains(&want), "missing {want}: {t:?}");
    }
    assert!(
        t.iter().any(|s| s.starts_with("lowest speed ")
            && s.contains("at 600 km")
            && s.contains("not marked")),
        "{t:?}"
    );
    let shaded = doc
        .descendants()
        .filter(|n| n.has_tag_name("rect") && n.attribute("class") == Some("no-solution"))
        .count();
    assert_eq!(shaded, 2, "shading in both panels expected");
    let marker = doc
        .descendants()
        .filter(|n| n.has_tag_name("circle") && n.attribute("class") == Some("minimum"))
        .count();
    assert_eq!(marker, 0, "an end-of-range minimum is not marked");
}

#[test]
fn figure_of_a_two_range_scan_has_a_line_per_second_axis_value() {
    let dir = tempfile::tempdir().unwrap();
    let svg = svg_of(
        dir.path(),
        &[
            "scan",
            "--burnout-alt",
            "200km..600km:50km",
            "--apoapsis-alt",
            "20000km..40000km:10000km",
            "--periapsis-alt",
            "200km",
            "--branch",
            "ascending",
            "--format",
            "csv",
            "--plot",
            "scan.svg",
        ],
    );
    let doc = roxmltree::Document::parse(&svg).unwrap();
    for (i, label) in [
        "apoapsis-alt 20000 km, ascending",
        "apoapsis-alt 30000 km, ascending",
        "apoapsis-alt 40000 km, ascending",
    ]
    .iter()
    .enumerate()
    {
        assert!(texts(&doc).contains(label), "missing legend {label}");
        assert_eq!(stroke_count(&doc, SERIES_COLORS[i]), 3, "{label}");
    }
}

#[test]
fn figure_file_is_not_clobbered_either() {
    let dir = tempfile::tempdir().unwrap();
    std::fs::write(dir.path().join("scan.svg"), "old").unwrap();
    let r = run_in(
        dir.path(),
        &[
            "scan",
            "--burnout-alt",
            "250..350:50",
            "--sma",
            "24371",
            "--ecc",
            "0.73",
            "--plot",
            "scan.svg",
        ],
    );
    let line = one_line_error(&r, 2);
    assert!(line.contains("--plot 'scan.svg' already exists"), "{line}");
    assert_eq!(
        std::fs::read_to_string(dir.path().join("scan.svg")).unwrap(),
        "old"
    );
}

#[test]
fn every_json_row_has_exactly_the_declared_columns() {
    // Regression: solved rows lacked `burnout_radius_m` while failed rows
    // and the `columns` list had it.
    let doc = scan_json(&[
        "--burnout-alt",
        "150km..600km:150km",
        "--periapsis-alt",
        "300",
        "--apoapsis-alt",
        "800",
    ]);
    let columns: Vec<&str> = doc["columns"]
        .as_array()
        .unwrap()
        .iter()
        .map(|c| c.as_str().unwrap())
        .collect();
    let rows = doc["rows"].as_array().unwrap();
    assert!(rows.iter().any(|r| r["status"] == "ok"));
    assert!(rows.iter().any(|r| r["status"] != "ok"));
    for row in rows {
        let mut keys: Vec<&str> = row
            .as_object()
            .unwrap()
            .keys()
            .map(|k| k.as_str())
            .collect();
        let mut want = columns.clone();
        keys.sort_unstable();
        want.sort_unstable();
        assert_eq!(keys, want, "{row}");
        if row["status"] == "ok" {
            let r = row["burnout_radius_m"].as_f64().unwrap();
            let alt = row["burnout_alt_m"].as_f64().unwrap();
            // WGS 84 equatorial radius, the catalog's Earth radius.
            assert!((r - (6_378_137.0 + alt)).abs() <= 1e-6 * r, "{row}");
        }
    }
}
