//! The scan's bytes: CSV, JSON and the human table written through the
//! engine's [`ScanSink`], the summary of the extremes, and the figure's data.
//!
//! (Why this file is long: three formats share one row walk, and the
//! figure's data is built from the same axes and extremes.)

use crate::columns::{flight_values, FLIGHT_COLUMNS};
use crate::error::g;
use crate::input::range::Grid;
use crate::input::units::Kind;
use crate::report::csv::{sensitivity_columns, site_values, RESULT_COLUMNS, SITE_COLUMNS};
use crate::report::plot::{PlotData, PlotSeries};
use crate::report::rows::{push_float, warning_tag, FloatMemo, Record};
use crate::report::table::DisplayUnits;
use crate::scan::{branch_names, same_speed};
use crate::scan::{Extreme, ExtremeKind, Plan, PointBody, Samples, ScanReport, ScanSink};
use crate::solve::problem::{BranchChoice, SolutionView};
use crate::solve::sensitivity::{COLS, ROWS};
use std::io::Write;

/// How a scan is written: format, units of the table, sensitivity columns,
/// and the branch choice the header names.
#[derive(Debug, Clone, PartialEq)]
pub struct ScanWriter {
    /// Output format.
    pub format: ScanFormat,
    /// Units of the human table.
    pub units: DisplayUnits,
    /// Add the 15 sensitivity columns (CSV, JSON).
    pub sensitivities: bool,
    /// The branches the scan keeps (named in the JSON and table headers).
    pub branch: BranchChoice,
    /// Add the flight-plan columns ([`crate::columns::FLIGHT_COLUMNS`];
    /// CSV, JSON).
    pub flight: bool,
    /// The case file's title, heading the table.
    pub title: Option<String>,
}

impl ScanSink for ScanWriter {
    type Scratch = FloatMemo;

    fn scratch(&self) -> FloatMemo {
        FloatMemo::new()
    }

    fn header(&self, plan: &Plan, out: &mut Vec<u8>) {
        // Writing into a Vec cannot fail.
        let _ = self.write_header(plan, out);
    }

    fn prefix(&self, plan: &Plan, si: &[f64], out: &[f64], buf: &mut Vec<u8>) {
        self.row_prefix(plan, si, out, buf);
    }

    fn solution(
        &self,
        plan: &Plan,
        at: &PointBody,
        s: SolutionView,
        scratch: &mut FloatMemo,
        buf: &mut Vec<u8>,
    ) {
        self.solution_row(plan, at, s, buf, scratch);
    }

    fn failure(&self, plan: &Plan, status: &str, message: &str, buf: &mut Vec<u8>) {
        self.failure_row(plan, status, message, buf);
    }

    fn row_separator(&self) -> &'static [u8] {
        match self.format {
            ScanFormat::Json => b",",
            _ => b"",
        }
    }

    fn trailer(&self, plan: &Plan, report: &ScanReport, out: &mut Vec<u8>) {
        let _ = self.write_trailer(plan, out, report);
    }
}

pub use crate::input::keys::human_name;

/// A value in the units people read: (value, unit, decimals for tables).
pub fn display(kind: Kind, si: f64, units: DisplayUnits) -> (f64, &'static str, usize) {
    match kind {
        Kind::Length => {
            let (u, f) = units.length();
            (si / f, u, 3)
        }
        Kind::Speed => {
            let (u, f) = units.speed();
            (si / f, u, if units == DisplayUnits::Us { 2 } else { 6 })
        }
        Kind::Angle | Kind::AngleOrLength => (si.to_degrees(), "deg", 4),
        Kind::Time => (si, "s", 3),
        Kind::C3 => (si / 1e6, "km2/s2", 4),
        Kind::Mu => (si / 1e9, "km3/s2", 3),
        Kind::Ratio => (si, "", 6),
    }
}

/// A grid value shown to about a millionth of the grid step: enough to
/// place a refined extreme, without the noise digits of the search.
fn show_fine(grid: &Grid, si: f64, units: DisplayUnits) -> String {
    let kind = grid.kind();
    let (v, u, _) = display(kind, si, units);
    let step = display(kind, grid.step_si().abs(), units).0;
    if !(step.is_finite() && step > 0.0) {
        return show(kind, si, units);
    }
    let decimals = (-(step * 1e-6).log10()).ceil().clamp(0.0, 12.0) as usize;
    let mut text = format!("{v:.decimals$}");
    if text.contains('.') {
        text = text.trim_end_matches('0').trim_end_matches('.').to_string();
    }
    if text == "-0" {
        text = "0".into();
    }
    if u.is_empty() {
        text
    } else {
        format!("{text} {u}")
    }
}

/// "600 km", "0.35", "-2.5 deg": a value with its display unit, compactly.
fn show(kind: Kind, si: f64, units: DisplayUnits) -> String {
    let (v, u, _) = display(kind, si, units);
    // Seven significant digits, trailing zeros dropped: a range given in
    // one unit and shown in another (200 km as nmi) reads 107.9914 nmi,
    // not 107.9913607 nmi.
    let text = if v != 0.0 && v.is_finite() && (1e-4..1e9).contains(&v.abs()) {
        let decimals = (6 - v.abs().log10().floor() as i32).max(0) as usize;
        let s = format!("{v:.decimals$}");
        if s.contains('.') {
            s.trim_end_matches('0').trim_end_matches('.').to_string()
        } else {
            s
        }
    } else {
        g(v)
    };
    if u.is_empty() {
        text
    } else {
        format!("{text} {u}")
    }
}

/// The fixed (not swept) targets of a scan, for a figure's title: " for
/// 185 x 35786 km (periapsis x apoapsis altitude)" or " for ecc 0.1,
/// period 90 min"; empty without fixed targets.
fn fixed_targets(plan: &Plan, units: DisplayUnits) -> String {
    let given = |key: &str| -> Option<f64> {
        let text = plan.base.get(key)?;
        let kind = crate::input::keys::kind_of(key)?;
        crate::input::units::parse(&format!("--{key}"), text, kind)
            .ok()
            .map(|v| v.si)
    };
    let (lu, lf) = units.length();
    let mut parts = Vec::new();
    let mut done: Vec<&str> = Vec::new();
    if let (Some(p), Some(a)) = (given("periapsis-alt"), given("apoapsis-alt")) {
        parts.push(format!(
            "{} x {} {lu} (periapsis x apoapsis altitude)",
            show_number(p / lf),
            show_number(a / lf)
        ));
        done.extend(["periapsis-alt", "apoapsis-alt"]);
    }
    for (k, _, _) in crate::input::keys::target_keys() {
        if done.contains(&k.key) {
            continue;
        }
        if let (Some(si), Some(kind)) = (given(k.key), k.kind) {
            parts.push(format!("{} {}", k.human, show(kind, si, units)));
        }
    }
    if let Some(i) = given("inclination") {
        parts.push(format!("inclination {} deg", show_number(i.to_degrees())));
    }
    if parts.is_empty() {
        String::new()
    } else {
        format!(" for {}", parts.join(", "))
    }
}

/// A number to seven significant digits, trailing zeros dropped.
fn show_number(v: f64) -> String {
    show(Kind::Ratio, v, DisplayUnits::Si)
}

/// Whether the flight-path angle is a swept input (its result column would
/// repeat the axis; a zenith axis keeps it, as the angle differs).
fn fpa_swept(plan: &Plan) -> bool {
    plan.axes.iter().any(|a| a.key == "fpa")
}

/// Output format of a scan.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Default)]
pub enum ScanFormat {
    /// Fixed-width table for people, with the summary at the end.
    #[default]
    Table,
    /// CSV (SI, units in column names).
    Csv,
    /// JSON: `swept`, `columns`, `rows` (one object per row) and `summary`.
    Json,
}

/// Writes machine text of an optional JSON number.
fn json_num(buf: &mut Vec<u8>, x: Option<f64>) {
    match x {
        Some(v) if v.is_finite() => push_float(buf, v),
        _ => buf.extend_from_slice(b"null"),
    }
}

fn json_str(buf: &mut Vec<u8>, s: &str) {
    // Writing a str into a Vec cannot fail.
    let _ = serde_json::to_writer(&mut *buf, s);
}

impl ScanWriter {
    fn header_columns(&self, plan: &Plan, sensitivities: bool) -> Vec<String> {
        let mut cols: Vec<String> = plan.axes.iter().map(|a| a.column.clone()).collect();
        cols.extend(RESULT_COLUMNS.iter().map(|s| s.to_string()));
        if sensitivities {
            cols.extend(sensitivity_columns());
        }
        if plan.has_site() {
            cols.extend(SITE_COLUMNS.iter().map(|s| s.to_string()));
        }
        if self.flight {
            cols.extend(FLIGHT_COLUMNS.iter().map(|s| s.to_string()));
        }
        cols
    }

    fn write_header(&self, plan: &Plan, out: &mut Vec<u8>) -> std::io::Result<()> {
        match self.format {
            ScanFormat::Csv => {
                let mut buf = Vec::new();
                let mut rec = Record::new(&mut buf);
                for c in self.header_columns(plan, self.sensitivities) {
                    rec.text(&c);
                }
                rec.end();
                out.write_all(&buf)
            }
            ScanFormat::Json => {
                let swept: Vec<serde_json::Value> = plan
                    .axes
                    .iter()
                    .map(|a| {
                        serde_json::json!({
                            "flag": a.flag,
                            "column": a.column,
                            "points": a.grid.len(),
                            "first": a.grid.out(0),
                            "last": a.grid.out(a.grid.len() - 1),
                        })
                    })
                    .collect();
                write!(
                    out,
                    "{{\"swept\":{},\n\"branch\":\"{}\",\n\"columns\":{},\n\"rows\":[",
                    serde_json::Value::Array(swept),
                    self.branch.name(),
                    serde_json::to_string(&self.header_columns(plan, self.sensitivities))
                        .unwrap_or_default()
                )
            }
            ScanFormat::Table => {
                let ranges: Vec<String> = plan
                    .axes
                    .iter()
                    .map(|a| {
                        let n = a.grid.len();
                        let k = a.grid.kind();
                        format!(
                            "{} {} to {} ({n} point{})",
                            a.flag,
                            show(k, a.grid.si(0), self.units),
                            show(k, a.grid.si(n - 1), self.units),
                            if n == 1 { "" } else { "s" }
                        )
                    })
                    .collect();
                let body = plan
                    .base
                    .get("body")
                    .cloned()
                    .or_else(|| plan.template.as_ref().map(|p| p.body.name.clone()))
                    .unwrap_or_else(|| "earth".into());
                if let Some(title) = self.title.as_deref().filter(|t| !t.trim().is_empty()) {
                    writeln!(out, "case: {}", title.trim())?;
                    writeln!(out)?;
                }
                writeln!(out, "scan over {body}: {}", ranges.join(", "))?;
                writeln!(out, "branches: {}", self.branch.name())?;
                writeln!(out)?;
                let mut line = String::new();
                for a in &plan.axes {
                    let (_, u, _) = display(a.grid.kind(), 0.0, self.units);
                    line.push_str(&format!("{:>16} ", format!("{} {u}", a.key).trim_end()));
                }
                let (su, _) = self.units.speed();
                line.push_str(&format!("{:<11} {:>13}", "branch", format!("speed {su}")));
                if !fpa_swept(plan) {
                    line.push_str(&format!(" {:>12}", "fpa deg"));
                }
                if plan.has_site() {
                    line.push_str(&format!(
                        " {:>11} {:>14} {:>10} {:>9}",
                        "plane",
                        format!("relative {su}"),
                        "launch az",
                        "incl deg"
                    ));
                }
                line.push_str("  note");
                writeln!(out, "{line}")
            }
        }
    }

    /// The swept-input part of a row.
    fn row_prefix(&self, plan: &Plan, si: &[f64], out: &[f64], buf: &mut Vec<u8>) {
        match self.format {
            ScanFormat::Csv => {
                for (a, v) in out.iter().enumerate() {
                    if a > 0 {
                        buf.push(b',');
                    }
                    push_float(buf, *v);
                }
                buf.push(b',');
            }
            ScanFormat::Json => {
                buf.extend_from_slice(b",\n{");
                for (axis, v) in plan.axes.iter().zip(out) {
                    json_str(buf, &axis.column);
                    buf.push(b':');
                    json_num(buf, Some(*v));
                    buf.push(b',');
                }
            }
            ScanFormat::Table => {
                for (axis, v) in plan.axes.iter().zip(si) {
                    let (x, _, decimals) = display(axis.grid.kind(), *v, self.units);
                    let _ = write!(buf, "{:>16} ", format!("{x:.decimals$}"));
                }
            }
        }
    }

    fn solution_row(
        &self,
        plan: &Plan,
        at: &PointBody,
        s: SolutionView,
        buf: &mut Vec<u8>,
        memo: &mut FloatMemo,
    ) {
        let mu = at.mu_m3_s2;
        let st = s.state;
        let flight = self.flight.then(|| {
            crate::solve::flight::flight_numbers_about(mu, at.surface_radius_m, st, at.above_alt_m)
        });
        match self.format {
            ScanFormat::Csv => {
                // The prefix ended with a separator: the record continues it.
                let mut rec = Record::new(buf);
                rec.solution_memo(mu, s, self.sensitivities, memo);
                if plan.has_site() {
                    rec.site(s.site);
                }
                if self.flight {
                    rec.flight(flight.as_ref());
                }
                rec.end();
            }
            ScanFormat::Json => {
                buf.extend_from_slice(b"\"status\":\"ok\",\"message\":");
                let msg: Vec<String> = s.warnings.iter().map(|w| w.to_string()).collect();
                json_str(buf, &msg.join("; "));
                buf.extend_from_slice(b",\"branch\":");
                json_str(buf, st.branch.name());
                let nums = RESULT_COLUMNS[3..]
                    .iter()
                    .zip(crate::columns::result_values(mu, st));
                for (k, v) in nums {
                    buf.push(b',');
                    json_str(buf, k);
                    buf.push(b':');
                    json_num(buf, v);
                }
                if self.sensitivities {
                    for (r, row) in s.sensitivity.rows.iter().enumerate() {
                        for (k, col) in COLS.iter().enumerate() {
                            buf.extend_from_slice(b",\"d_");
                            buf.extend_from_slice(ROWS[r].as_bytes());
                            buf.extend_from_slice(b"_d_");
                            buf.extend_from_slice(col.as_bytes());
                            buf.extend_from_slice(b"\":");
                            json_num(buf, row.map(|x| x[k]));
                        }
                    }
                }
                if plan.has_site() {
                    for (k, v) in SITE_COLUMNS.iter().zip(site_values(s.site)) {
                        buf.push(b',');
                        json_str(buf, k);
                        buf.push(b':');
                        json_num(buf, v);
                    }
                    buf.extend_from_slice(b",\"plane\":");
                    match s.site {
                        Some(x) => {
                            json_str(buf, crate::physics::site::plane_label(x.launch_azimuth_rad))
                        }
                        None => buf.extend_from_slice(b"null"),
                    }
                }
                if self.flight {
                    for (k, v) in FLIGHT_COLUMNS.iter().zip(flight_values(flight.as_ref())) {
                        buf.push(b',');
                        json_str(buf, k);
                        buf.push(b':');
                        json_num(buf, v);
                    }
                }
                buf.push(b'}');
            }
            ScanFormat::Table => {
                let (_, sf) = self.units.speed();
                let decimals = if self.units == DisplayUnits::Us { 2 } else { 6 };
                let note: Vec<String> = s.warnings.iter().map(warning_tag).collect();
                let mut line = format!(
                    "{:<11} {:>13}",
                    st.branch.name(),
                    format!("{:.decimals$}", st.speed_m_s / sf)
                );
                if !fpa_swept(plan) {
                    line.push_str(&format!(
                        " {:>12}",
                        format!("{:.6}", st.flight_path_angle_rad.to_degrees())
                    ));
                }
                if plan.has_site() {
                    match s.site {
                        Some(x) => line.push_str(&format!(
                            " {:>11} {:>14} {:>10} {:>9}",
                            crate::physics::site::plane_label(x.launch_azimuth_rad),
                            format!("{:.decimals$}", x.relative_speed_m_s / sf),
                            format!("{:.3}", x.launch_azimuth_rad.to_degrees()),
                            format!("{:.3}", x.inclination_rad.to_degrees())
                        )),
                        None => line
                            .push_str(&format!(" {:>11} {:>14} {:>10} {:>9}", "-", "-", "-", "-")),
                    }
                }
                line.push_str(&format!("  {}", note.join(", ")));
                let _ = writeln!(buf, "{}", line.trim_end());
            }
        }
    }

    fn failure_row(&self, plan: &Plan, status: &str, message: &str, buf: &mut Vec<u8>) {
        match self.format {
            ScanFormat::Csv => {
                let mut rec = Record::new(buf);
                rec.failure(status, message, self.sensitivities);
                if plan.has_site() {
                    rec.site(None);
                }
                if self.flight {
                    rec.flight(None);
                }
                rec.end();
            }
            ScanFormat::Json => {
                buf.extend_from_slice(b"\"status\":");
                json_str(buf, status);
                buf.extend_from_slice(b",\"message\":");
                json_str(buf, message);
                buf.extend_from_slice(b",\"branch\":null");
                let n = RESULT_COLUMNS.len() - 3;
                for k in &RESULT_COLUMNS[3..3 + n] {
                    buf.push(b',');
                    json_str(buf, k);
                    buf.extend_from_slice(b":null");
                }
                if self.sensitivities {
                    for c in sensitivity_columns() {
                        buf.push(b',');
                        json_str(buf, &c);
                        buf.extend_from_slice(b":null");
                    }
                }
                if plan.has_site() {
                    for c in SITE_COLUMNS {
                        buf.push(b',');
                        json_str(buf, c);
                        buf.extend_from_slice(b":null");
                    }
                }
                if self.flight {
                    for c in FLIGHT_COLUMNS {
                        buf.push(b',');
                        json_str(buf, c);
                        buf.extend_from_slice(b":null");
                    }
                }
                buf.push(b'}');
            }
            ScanFormat::Table => {
                let mut line = format!("{:<11} {:>13}", "-", "-");
                if !fpa_swept(plan) {
                    line.push_str(&format!(" {:>12}", "-"));
                }
                if plan.has_site() {
                    line.push_str(&format!(" {:>11} {:>14} {:>10} {:>9}", "-", "-", "-", "-"));
                }
                let _ = writeln!(buf, "{line}  {status}: {message}");
            }
        }
    }

    fn write_trailer(
        &self,
        plan: &Plan,
        out: &mut Vec<u8>,
        report: &ScanReport,
    ) -> std::io::Result<()> {
        match self.format {
            ScanFormat::Csv => Ok(()),
            ScanFormat::Json => {
                let summary = self.summary_json(plan, report);
                write!(out, "\n],\n\"summary\":{summary}}}\n")
            }
            ScanFormat::Table => {
                writeln!(out)?;
                for line in self.summary_lines(plan, report, self.units) {
                    writeln!(out, "{line}")?;
                }
                writeln!(out)?;
                writeln!(out, "{}", crate::report::CAUTION)
            }
        }
    }

    /// Summary lines for people: counts, then the minimum and maximum.
    pub fn summary_lines(
        &self,
        plan: &Plan,
        report: &ScanReport,
        units: DisplayUnits,
    ) -> Vec<String> {
        let mut lines = vec![format!(
            "scan: {} point{}, {} row{}: {} solved, {} infeasible, {} invalid",
            report.points,
            if report.points == 1 { "" } else { "s" },
            report.rows,
            if report.rows == 1 { "" } else { "s" },
            report.solved,
            report.infeasible,
            report.invalid
        )];
        let left_out = report.suborbital_not_counted;
        match (&report.minimum, &report.maximum) {
            (Some(min), Some(max)) => {
                lines.push(self.describe_extreme(plan, min, units));
                lines.push(self.describe_extreme(plan, max, units));
            }
            _ if left_out > 0 => lines.push(
                "every solved row is suborbital (meets the surface): no minimum or maximum speed over the rows that do not (--extremes-include-suborbital counts them)".into(),
            ),
            _ => lines.push("no grid point solved: no minimum or maximum speed".into()),
        }
        if left_out > 0 && report.minimum.is_some() {
            lines.push(format!(
                "extremes over the rows that do not meet the surface: {left_out} suborbital row{} not counted (--extremes-include-suborbital counts them)",
                if left_out == 1 { "" } else { "s" }
            ));
        }
        lines
    }

    fn describe_extreme(&self, plan: &Plan, e: &Extreme, units: DisplayUnits) -> String {
        let (su, sf) = units.speed();
        let decimals = if units == DisplayUnits::Us { 2 } else { 6 };
        let at: Vec<String> = plan
            .axes
            .iter()
            .zip(&e.at_si)
            .map(|(a, &v)| format!("{} {}", a.key, show_fine(&a.grid, v, units)))
            .collect();
        let mut s = format!(
            "{} required {}speed {:.decimals$} {su} ({}) at {}",
            e.kind.name(),
            if plan.has_site() {
                "surface-relative "
            } else {
                ""
            },
            e.speed_m_s / sf,
            e.branches.join(", "),
            at.join(", ")
        );
        let trend = match e.kind {
            ExtremeKind::Minimum => "falling",
            ExtremeKind::Maximum => "rising",
        };
        let a0 = &plan.axes[0];
        let ends: Vec<&str> = plan
            .axes
            .iter()
            .zip(&e.at_end)
            .filter(|(_, &end)| end)
            .map(|(a, _)| a.flag.as_str())
            .collect();
        let mut said = Vec::new();
        if !ends.is_empty() {
            said.push(format!(
                "at the end of the {} range{}",
                ends.join(" and "),
                if ends.len() > 1 { "s" } else { "" }
            ));
        }
        if let Some(nb) = e.unsolved_neighbour_si {
            said.push(format!(
                "at the edge of the solved region (the next grid point, {} {}, does not solve)",
                a0.key,
                show(a0.grid.kind(), nb, units)
            ));
        }
        if let Some(nb) = e.suborbital_neighbour_si {
            said.push(format!(
                "at the edge of the orbital region (the next grid point, {} {}, is suborbital)",
                a0.key,
                show(a0.grid.kind(), nb, units)
            ));
        }
        if !said.is_empty() {
            s.push_str(&format!(
                ": {}; the speed is still {trend} there, so the true {} may lie beyond it",
                said.join(" and "),
                e.kind.name()
            ));
        } else if let Some(r) = &e.refinement {
            let k = a0.grid.kind();
            let from_out = |x: f64| {
                // Bracket values are machine-output units; show them as people read them.
                let si = if k == Kind::Angle { x.to_radians() } else { x };
                show(k, si, units)
            };
            if !r.converged {
                s.push_str(&format!(
                    " (a grid point: Brent's method did not converge: {})",
                    r.termination
                ));
            } else if same_speed(e.speed_m_s, e.grid_speed_m_s) {
                s.push_str(" (a grid point: nothing between its neighbours does better)");
            } else {
                s.push_str(&format!(
                    " (refined along {} by Brent's method between {} and {}; best grid point {:.decimals$} {su})",
                    a0.key,
                    from_out(r.bracket_out.0),
                    from_out(r.bracket_out.1),
                    e.grid_speed_m_s / sf
                ));
            }
        }
        s
    }

    fn summary_json(&self, plan: &Plan, report: &ScanReport) -> serde_json::Value {
        let extreme = |e: &Option<Extreme>| -> serde_json::Value {
            let Some(e) = e else {
                return serde_json::Value::Null;
            };
            let mut at = serde_json::Map::new();
            let mut grid_at = serde_json::Map::new();
            for (i, a) in plan.axes.iter().enumerate() {
                at.insert(a.column.clone(), serde_json::json!(e.at_out[i]));
                grid_at.insert(
                    a.column.clone(),
                    serde_json::json!(a.grid.out(e.grid_index[i])),
                );
            }
            let ends: Vec<&str> = plan
                .axes
                .iter()
                .zip(&e.at_end)
                .filter(|(_, &end)| end)
                .map(|(a, _)| a.column.as_str())
                .collect();
            serde_json::json!({
                "speed_m_s": e.speed_m_s,
                "branches": e.branches,
                "at": at,
                "at_range_end": ends,
                "unsolved_neighbour": e.unsolved_neighbour_si.map(|v| {
                    serde_json::json!({plan.axes[0].column.clone(): plan.axes[0].grid.si_to_out(v)})
                }),
                "suborbital_neighbour": e.suborbital_neighbour_si.map(|v| {
                    serde_json::json!({plan.axes[0].column.clone(): plan.axes[0].grid.si_to_out(v)})
                }),
                "grid": {"speed_m_s": e.grid_speed_m_s, "at": grid_at},
                "refinement": e.refinement.as_ref().map(|r| serde_json::json!({
                    "method": "brent",
                    "along": plan.axes[0].column,
                    "iterations": r.iterations,
                    "termination": r.termination,
                    "converged": r.converged,
                })),
            })
        };
        serde_json::json!({
            "points": report.points,
            "rows": report.rows,
            "solved": report.solved,
            "infeasible": report.infeasible,
            "invalid": report.invalid,
            "suborbital_not_counted": report.suborbital_not_counted,
            "minimum": extreme(&report.minimum),
            "maximum": extreme(&report.maximum),
        })
    }

    /// The figure of a scan run with [`crate::scan::ScanOptions::samples`]:
    /// one line per (second-axis value, branch, solution), each line's gaps,
    /// the stretches where no line solves, and the refined minimum when it
    /// is interior.
    pub fn plot_data(&self, plan: &Plan, report: &ScanReport) -> Option<PlotData> {
        use crate::report::plot::{DESCENDING_DASH, FURTHER_DASH, SERIES_COLORS};
        let Samples { pick, samples } = report.samples.as_ref()?;
        let mut samples = samples.clone();
        let a0 = &plan.axes[0];
        let k0 = a0.grid.kind();
        let (_, xu, _) = display(k0, 0.0, self.units);
        let (su, sf) = self.units.speed();
        let x_of = |i0: usize| display(k0, a0.grid.si(i0), self.units).0;
        samples.sort_by_key(|s| (s.slot, s.branch, s.ordinal, s.i0));
        let sampled: Vec<usize> = (0..pick.n0)
            .filter(|i| i % pick.stride0 == 0 || i + 1 == pick.n0)
            .collect();
        // The x-interval a sampled point stands for: half-way to its
        // sampled neighbours.
        let cell = |i: usize| -> (f64, f64) {
            let p = sampled.partition_point(|&j| j < i);
            let x = x_of(i);
            let left = if p > 0 {
                0.5 * (x + x_of(sampled[p - 1]))
            } else {
                x
            };
            let right = sampled.get(p + 1).map_or(x, |&j| 0.5 * (x + x_of(j)));
            (left.min(right), left.max(right))
        };
        let merge = |cells: Vec<(f64, f64)>| -> Vec<(f64, f64)> {
            let mut out: Vec<(f64, f64)> = Vec::new();
            for (l, r) in cells {
                match out.last_mut() {
                    Some(last) if last.1 >= l - 1e-12 * (1.0 + l.abs()) => last.1 = last.1.max(r),
                    _ => out.push((l, r)),
                }
            }
            out
        };
        let keys: Vec<(usize, u8, u8)> = {
            let mut k: Vec<(usize, u8, u8)> = samples
                .iter()
                .filter(|s| s.value.is_some())
                .map(|s| (s.slot, s.branch, s.ordinal))
                .collect();
            k.dedup();
            k
        };
        let two_axes = plan.axes.len() > 1;
        let mut series: Vec<PlotSeries> = Vec::new();
        for &(slot, branch, ordinal) in &keys {
            let mine: Vec<&crate::scan::Sample> = samples
                .iter()
                .filter(|s| (s.slot, s.branch, s.ordinal) == (slot, branch, ordinal))
                .collect();
            let name = branch_names(branch).join("");
            let mut label = if ordinal == 0 {
                name.clone()
            } else {
                // Solutions on one branch are ordered by speed.
                format!("{name}, solution {} (higher speed)", ordinal + 1)
            };
            if let Some(a1) = plan.axes.get(1) {
                let i1 = pick.slots[slot];
                label = format!(
                    "{} {}, {label}",
                    a1.key,
                    show(a1.grid.kind(), a1.grid.si(i1), self.units)
                );
            }
            let color = if two_axes {
                SERIES_COLORS[slot % SERIES_COLORS.len()]
            } else {
                SERIES_COLORS[(2 * ordinal as usize + (branch as usize).saturating_sub(1))
                    % SERIES_COLORS.len()]
            };
            let dash = match (branch, ordinal) {
                (_, o) if o > 0 => Some(FURTHER_DASH),
                (2, _) => Some(DESCENDING_DASH),
                _ => None,
            };
            let mut segments: Vec<Vec<(f64, f64, f64, bool)>> = vec![Vec::new()];
            let mut last_i0: Option<usize> = None;
            for s in &mine {
                if let Some(prev) = last_i0 {
                    let p = sampled.partition_point(|&i| i <= prev);
                    if sampled.get(p).is_some_and(|&next| next < s.i0) {
                        segments.push(Vec::new());
                    }
                }
                let (v, f) = s.value.unwrap_or((f64::NAN, f64::NAN));
                segments.last_mut().expect("segments is never empty").push((
                    x_of(s.i0),
                    v / sf,
                    f,
                    s.suborbital,
                ));
                last_i0 = Some(s.i0);
            }
            // This line's gaps: sampled points of its slot where it has none.
            let have: Vec<usize> = mine.iter().map(|s| s.i0).collect();
            let gaps = merge(
                sampled
                    .iter()
                    .filter(|i| have.binary_search(i).is_err())
                    .map(|&i| cell(i))
                    .collect(),
            );
            series.push(PlotSeries {
                label,
                color,
                dash,
                segments,
                gaps,
            });
        }
        // Where no line solves: sampled points whose every slot failed.
        let mut failed: Vec<usize> = sampled
            .iter()
            .copied()
            .filter(|&i| {
                pick.slots.iter().enumerate().all(|(slot, _)| {
                    !samples
                        .iter()
                        .any(|s| s.i0 == i && s.slot == slot && s.value.is_some())
                })
            })
            .collect();
        failed.dedup();
        let infeasible = merge(failed.into_iter().map(cell).collect());
        let mut notes = Vec::new();
        if let Some(a1) = plan.axes.get(1) {
            if pick.slots.len() < a1.grid.len() {
                notes.push(format!(
                    "{} of {} values of {} shown",
                    pick.slots.len(),
                    a1.grid.len(),
                    a1.flag
                ));
            }
        }
        let minimum = report.minimum.as_ref().and_then(|m| {
            let where_ = show_fine(&a0.grid, m.at_si[0], self.units);
            let interior = !m.at_end.first().copied().unwrap_or(false)
                && m.unsolved_neighbour_si.is_none()
                && m.suborbital_neighbour_si.is_none();
            if interior {
                Some((
                    display(k0, m.at_si[0], self.units).0,
                    m.speed_m_s / sf,
                    format!("minimum {:.4} {su} at {where_}", m.speed_m_s / sf),
                ))
            } else {
                notes.push(format!(
                    "lowest speed {:.4} {su} at {where_}: at the edge of the range or of the solved region, not a refined interior minimum (not marked)",
                    m.speed_m_s / sf
                ));
                None
            }
        });
        let what = human_name(&a0.key);
        Some(PlotData {
            title: format!(
                "Required burnout speed and flight-path angle vs {what}{}",
                fixed_targets(plan, self.units)
            ),
            x_label: if xu.is_empty() {
                what
            } else {
                format!("{what} ({xu})")
            },
            speed_label: format!("required speed ({su})"),
            fpa_label: "flight-path angle (deg)".into(),
            series,
            infeasible,
            minimum,
            notes,
        })
    }
}
