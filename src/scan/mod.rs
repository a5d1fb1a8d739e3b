//! Scans: one targeting problem solved over the Cartesian product of ranges
//! of its inputs, written as a table, CSV or JSON, with the minimum and
//! maximum required speed refined between grid points.
//!
//! Every point goes through [`crate::solve`], so a scan answers whatever
//! `solve` answers. The speed comes from building each point's [`Problem`]
//! once (not from text): the non-swept inputs are parsed once into a
//! template, and each point only overwrites the swept fields. Inputs without
//! such a shortcut (the body, a launch site, or keys added later) go through
//! [`solve_inputs`] per point, as `solve` does; unit tests hold the paths equal.
//!
//! Rows are produced in chunks, in parallel with rayon when the scan is
//! large, and written in grid order by one writer, so the output is
//! byte-for-byte the same as a single-threaded run.
//!
//! The minimum and maximum required speed are found on the grid, then
//! refined along the first swept input with Brent's method (argmin's
//! `BrentOpt`) between the grid neighbours of the best point. At an end of
//! the range the end point is kept when nothing inside beats it, and the
//! summary says the extreme is at the end of the range.

use crate::error::{g, Error, ErrorClass};
use crate::input::problem::{
    problem_from_inputs, solve_inputs, Inputs, KEYS, SITE_KEYS, TARGET_KEYS,
};
use crate::input::range::{is_range, out_unit, parse_range, si_unit_text, Grid, MAX_POINTS};
use crate::input::units::Kind;
use crate::physics::state::Branch;
use crate::report::csv::{sensitivity_columns, site_values, RESULT_COLUMNS, SITE_COLUMNS};
use crate::report::plot::{PlotData, PlotSeries};
use crate::report::rows::{
    kept, no_branch_message, push_float, warning_tag, BranchChoice, FloatMemo, Record, SolutionView,
};
use crate::report::table::DisplayUnits;
use crate::solve::fast_pair::LeanSolved;
use crate::solve::feasibility::{check_state, Warning};
use crate::solve::problem::{Problem, Solved};
use crate::solve::sensitivity::{COLS, ROWS};
use rayon::prelude::*;
use std::io::Write;

/// Points per chunk: the unit of parallel work and of progress.
const CHUNK: usize = 1024;
/// Chunks computed together before their rows are handed to the writer.
const CHUNKS_PER_BLOCK: usize = 16;
/// Scans smaller than this run on the calling thread.
const PARALLEL_MIN_POINTS: usize = 4096;
/// At most this many points per plotted line (the grid is thinned evenly).
const PLOT_POINTS: usize = 2000;
/// At most this many values of the second swept input get their own lines.
const PLOT_SERIES: usize = 12;

/// Order in which swept inputs become axes: the first is the x-axis of the
/// plot and the direction along which extremes are refined.
fn axis_rank(key: &str) -> usize {
    const FIRST: [&str; 5] = ["burnout-alt", "burnout-radius", "fpa", "zenith", "speed"];
    const LAST: [&str; 3] = ["min-periapsis-alt", "mu", "radius"];
    if let Some(i) = FIRST.iter().position(|k| *k == key) {
        return i;
    }
    if let Some(i) = TARGET_KEYS.iter().position(|t| t.0 == key) {
        return FIRST.len() + i;
    }
    if let Some(i) = LAST.iter().position(|k| *k == key) {
        return FIRST.len() + TARGET_KEYS.len() + i;
    }
    usize::MAX
}

/// Kind of a solve input's value (the numeric keys of `solve`; not the
/// error-budget keys, which `solve` does not read).
pub fn solve_input_kind(key: &str) -> Option<Kind> {
    KEYS.iter()
        .chain(SITE_KEYS)
        .find(|(k, _)| *k == key)
        .map(|(_, kind)| *kind)
        .or_else(|| TARGET_KEYS.iter().find(|t| t.0 == key).map(|t| t.3))
}

/// Human name of an input, for summaries and plot labels.
pub fn human_name(key: &str) -> String {
    match key {
        "burnout-alt" => "burnout altitude".into(),
        "burnout-radius" => "burnout radius".into(),
        "fpa" => "flight-path angle".into(),
        "zenith" => "zenith angle".into(),
        "speed" => "burnout speed".into(),
        "periapsis-alt" => "periapsis altitude".into(),
        "apoapsis-alt" => "apoapsis altitude".into(),
        "sma" => "semi-major axis".into(),
        "ecc" => "eccentricity".into(),
        "c3" => "C3".into(),
        "mu" => "gravitational parameter".into(),
        "radius" => "body radius".into(),
        "min-periapsis-alt" => "minimum periapsis altitude".into(),
        other => other.replace('-', " "),
    }
}

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
    if u.is_empty() {
        g(v)
    } else {
        format!("{} {u}", g(v))
    }
}

/// How a swept value is put into a [`Problem`] without re-reading text.
#[derive(Debug, Clone, Copy, PartialEq)]
enum Setter {
    BurnoutAlt,
    BurnoutRadius,
    Target {
        index: usize,
        is_alt: bool,
    },
    Fpa,
    Zenith,
    Speed,
    MinPeriapsisAlt,
    /// No shortcut: the point goes through [`solve_inputs`].
    Text,
}

/// One swept input.
#[derive(Debug, Clone)]
pub struct Axis {
    /// Input key (flag without dashes), e.g. `burnout-alt`.
    pub key: String,
    /// The flag, e.g. `--burnout-alt`.
    pub flag: String,
    /// Its column in CSV and JSON rows, e.g. `burnout_alt_m`.
    pub column: String,
    /// Its points.
    pub grid: Grid,
    setter: Setter,
}

/// Column name of a swept input: the key with underscores and the unit of
/// its machine-output value (`burnout_alt_m`, `fpa_deg`, `ecc`), prefixed
/// with `given_` when that would repeat a result column (`given_speed_m_s`,
/// `given_sma_m`).
pub fn column_name(key: &str, kind: Kind) -> String {
    let unit = out_unit(kind);
    let base = key.replace('-', "_");
    let name = if unit.is_empty() {
        base
    } else {
        format!("{base}_{unit}")
    };
    let taken = RESULT_COLUMNS.contains(&name.as_str())
        || SITE_COLUMNS.contains(&name.as_str())
        || sensitivity_columns().contains(&name);
    if taken {
        format!("given_{name}")
    } else {
        name
    }
}

/// A scan ready to run: its axes and the fixed inputs.
#[derive(Debug, Clone)]
pub struct Plan {
    axes: Vec<Axis>,
    base: Inputs,
    template: Option<Problem>,
    /// Whether points may take the allocation-free closed form.
    lean: bool,
    total: usize,
    strides: Vec<usize>,
    /// Whether a launch site is among the inputs (decided once).
    site: bool,
}

impl Plan {
    /// Reads the ranges among `inputs` (values containing `..`).
    ///
    /// # Errors
    /// [`Error::InvalidValue`] for a malformed range (naming the flag);
    /// [`Error::Usage`] when no input is a range, a non-numeric input is
    /// given as one, or the product has more than [`MAX_POINTS`] points.
    pub fn new(inputs: &Inputs) -> Result<Plan, Error> {
        let mut axes = Vec::new();
        let mut base = Inputs::new();
        for (key, text) in inputs {
            if !is_range(text) {
                base.insert(key.clone(), text.clone());
                continue;
            }
            let flag = format!("--{key}");
            let Some(kind) = solve_input_kind(key) else {
                return Err(Error::Usage(format!(
                    "{flag} does not take a range (got '{text}'): only numeric inputs can be swept"
                )));
            };
            let grid = parse_range(&flag, text, kind)?;
            axes.push(Axis {
                column: column_name(key, grid.kind()),
                key: key.clone(),
                flag,
                grid,
                setter: Setter::Text,
            });
        }
        if axes.is_empty() {
            return Err(Error::Usage(
                "nothing to scan: give at least one input as a range START..END:STEP or START..END/N (e.g. --burnout-alt 150km..600km:5km)".into(),
            ));
        }
        axes.sort_by_key(|a| axis_rank(&a.key));
        let mut total: u64 = 1;
        for a in &axes {
            total = total.saturating_mul(a.grid.len() as u64);
        }
        if total > MAX_POINTS {
            let sizes: Vec<String> = axes
                .iter()
                .map(|a| format!("{} {}", a.flag, a.grid.len()))
                .collect();
            // The product as a float: exact for any count that fits, and a
            // readable magnitude (not a saturated integer) beyond.
            let product: f64 = axes.iter().map(|a| a.grid.len() as f64).product();
            let shown = if product < 1e15 {
                format!("{product}")
            } else {
                format!("{product:.3e}")
            };
            return Err(Error::Usage(format!(
                "the scan has {shown} points ({}), more than the limit {MAX_POINTS}: use larger steps",
                sizes.join(" x ")
            )));
        }
        let total = total as usize;
        let mut strides = vec![1usize; axes.len()];
        for i in (0..axes.len().saturating_sub(1)).rev() {
            strides[i] = strides[i + 1] * axes[i + 1].grid.len();
        }
        let site = base.contains_key("latitude") || axes.iter().any(|a: &Axis| a.key == "latitude");
        let mut plan = Plan {
            axes,
            base,
            template: None,
            lean: false,
            total,
            strides,
            site,
        };
        plan.build_template();
        Ok(plan)
    }

    /// Parses the fixed inputs once (at the first grid point the input
    /// reader accepts, of up to 65 spread over the grid) and finds, for each
    /// axis, the field it sets.
    fn build_template(&mut self) {
        // Inputs beyond these (a launch site) change how a point is solved,
        // not only the Problem's fields: such scans take the input reader's
        // road, `solve_inputs`, at every point.
        let problem_only = |k: &String| {
            LEAN_KEYS.contains(&k.as_str())
                || ["fpa", "zenith", "speed"].contains(&k.as_str())
                || TARGET_KEYS.iter().any(|t| t.0 == k)
        };
        if !self
            .base
            .keys()
            .chain(self.axes.iter().map(|a| &a.key))
            .all(problem_only)
        {
            return;
        }
        let tries = self.total.min(65);
        let spread = (0..tries).map(|k| {
            if tries == 1 {
                0
            } else {
                k * (self.total - 1) / (tries - 1)
            }
        });
        for idx in spread {
            let si = self.si_at(idx);
            if let Ok(p) = problem_from_inputs(&self.inputs_at(&si)) {
                for axis in &mut self.axes {
                    axis.setter = setter_for(&axis.key, &p);
                }
                let all_keys = self.base.keys().chain(self.axes.iter().map(|a| &a.key));
                self.lean = all_keys.clone().all(|k| LEAN_KEYS.contains(&k.as_str()))
                    && p.targets.len() == 2
                    && p.targets.iter().all(|t| t.quantity.is_orbit_element())
                    && p.flight_path_angle_rad.is_none()
                    && p.speed_m_s.is_none()
                    && p.burnout_radius_m.is_some();
                self.template = Some(p);
                return;
            }
        }
    }

    /// The swept inputs, in axis order.
    pub fn axes(&self) -> &[Axis] {
        &self.axes
    }

    /// Number of grid points.
    pub fn len(&self) -> usize {
        self.total
    }

    /// Whether the scan has no points (never: each range has at least one).
    pub fn is_empty(&self) -> bool {
        self.total == 0
    }

    /// Grid indices, per axis, of point `idx` (the last axis varies fastest).
    pub fn indices(&self, idx: usize, out: &mut [usize]) {
        for (a, axis) in self.axes.iter().enumerate() {
            out[a] = (idx / self.strides[a]) % axis.grid.len();
        }
    }

    /// SI values, per axis, of point `idx`.
    pub fn si_at(&self, idx: usize) -> Vec<f64> {
        let mut ix = vec![0; self.axes.len()];
        self.indices(idx, &mut ix);
        ix.iter()
            .zip(&self.axes)
            .map(|(&i, a)| a.grid.si(i))
            .collect()
    }

    /// The named inputs of a point given by its SI values per axis.
    pub fn inputs_at(&self, si: &[f64]) -> Inputs {
        let mut inputs = self.base.clone();
        for (axis, v) in self.axes.iter().zip(si) {
            // Angles in degrees, so that a message about the point quotes
            // the value as the user wrote it.
            let text = match axis.grid.kind() {
                Kind::Angle | Kind::AngleOrLength => format!("{} deg", v.to_degrees()),
                kind => format!("{v} {}", si_unit_text(kind)).trim().to_string(),
            };
            inputs.insert(axis.key.clone(), text);
        }
        inputs
    }

    /// A scratch problem for [`Plan::solve_si`] (one per worker).
    pub fn scratch(&self) -> Option<Problem> {
        self.template.clone()
    }

    /// Puts the swept values into `p`. Returns `false` (and the point goes
    /// through the input reader, whose messages name the flag) for a value
    /// the reader would reject, or an input without a shortcut.
    fn apply(&self, p: &mut Problem, si: &[f64]) -> bool {
        let usable = |r: f64| r.is_finite() && r > 0.0;
        for (axis, &v) in self.axes.iter().zip(si) {
            match axis.setter {
                Setter::BurnoutAlt | Setter::BurnoutRadius => {
                    let r = if axis.setter == Setter::BurnoutAlt {
                        p.body.radius_m + v
                    } else {
                        v
                    };
                    if !usable(r) {
                        return false;
                    }
                    p.burnout_radius_m = Some(r);
                }
                Setter::Target { index, is_alt } => {
                    let t = &mut p.targets[index];
                    t.value = if is_alt { p.body.radius_m + v } else { v };
                    if t.validate().is_err() {
                        return false;
                    }
                }
                Setter::Fpa => {
                    if crate::physics::orbit::check_fpa(v).is_err() {
                        return false;
                    }
                    p.flight_path_angle_rad = Some(v);
                }
                Setter::Zenith => {
                    if !(0.0..=std::f64::consts::PI).contains(&v) {
                        return false;
                    }
                    // As the input reader does for a zenith in degrees.
                    p.flight_path_angle_rad = Some((90.0 - v.to_degrees()).to_radians());
                }
                Setter::Speed => {
                    if !usable(v) {
                        return false;
                    }
                    p.speed_m_s = Some(v);
                }
                Setter::MinPeriapsisAlt => p.min_periapsis_alt_m = Some(v),
                Setter::Text => return false,
            }
        }
        true
    }

    /// Solves the point with SI values `si` (one per axis; any values, not
    /// only grid points). `scratch` comes from [`Plan::scratch`].
    ///
    /// # Errors
    /// Those of [`solve_inputs`] (input reading and solving).
    pub fn solve_si(&self, si: &[f64], scratch: &mut Option<Problem>) -> Result<Solved, Error> {
        if let Some(p) = scratch.as_mut() {
            if self.apply(p, si) {
                return crate::solve(p);
            }
        }
        solve_inputs(&self.inputs_at(si))
    }

    /// Solves a point for its rows: the allocation-free closed form when the
    /// problem is a plain pair, else [`Plan::solve_si`].
    fn solve_point_fast(&self, si: &[f64], scratch: &mut Option<Problem>) -> Result<Point, Error> {
        if self.lean {
            if let Some(p) = scratch.as_mut() {
                if self.apply(p, si) {
                    if let (Some(r), [a, b]) = (p.burnout_radius_m, p.targets.as_slice()) {
                        let lean = crate::solve::fast_pair::solve_pair(&p.body, a, b, r)?;
                        for i in 0..lean.len {
                            crate::solve::problem::check_state_finite(
                                p.body.mu_m3_s2,
                                &lean.states[i],
                                &lean.sensitivities[i],
                            )?;
                        }
                        let min_alt = p.min_periapsis_alt_m.or(p.body.min_safe_periapsis_alt_m);
                        let warn = |i: usize| {
                            if i < lean.len {
                                check_state(&p.body, &lean.states[i], min_alt)
                            } else {
                                Vec::new()
                            }
                        };
                        return Ok(Point::Lean {
                            mu: p.body.mu_m3_s2,
                            warnings: [warn(0), warn(1)],
                            lean,
                        });
                    }
                }
            }
        }
        self.solve_si(si, scratch).map(Point::Full)
    }

    /// Solves grid point `idx`.
    ///
    /// # Errors
    /// As [`Plan::solve_si`].
    pub fn solve_point(&self, idx: usize) -> Result<Solved, Error> {
        self.solve_si(&self.si_at(idx), &mut self.scratch())
    }

    /// Rejects a scan whose every point would fail for the same usage
    /// reason (no target, a pair that cannot define an orbit): such an error
    /// does not depend on the swept values, so it is the scan's error, not a
    /// row's. Tested on the first and last points; a value-dependent usage
    /// error names the value and so differs between them.
    ///
    /// # Errors
    /// The shared usage error.
    pub fn check_structure(&self) -> Result<(), Error> {
        let first = self.solve_point(0);
        let Err(e0) = first else { return Ok(()) };
        if e0.class() != ErrorClass::Usage {
            return Ok(());
        }
        if self.total == 1 {
            return Err(e0);
        }
        match self.solve_point(self.total - 1) {
            Err(e1) if e1.class() == ErrorClass::Usage && e1.to_string() == e0.to_string() => {
                Err(e0)
            }
            _ => Ok(()),
        }
    }
}

/// A solved grid point: through [`crate::solve`], or, for a plain pair of
/// orbit-element targets, through the allocation-free [`crate::solve::fast_pair`]
/// (the same numbers, bit for bit; `lean`'s unit test and this module's
/// shortcut test hold them equal).
// Boxing the large variant would put a heap allocation back on every point.
#[allow(clippy::large_enum_variant)]
enum Point {
    Full(Solved),
    Lean {
        mu: f64,
        lean: LeanSolved,
        warnings: [Vec<Warning>; 2],
    },
}

impl Point {
    fn mu(&self) -> f64 {
        match self {
            Point::Full(s) => s.body.mu_m3_s2,
            Point::Lean { mu, .. } => *mu,
        }
    }

    fn views(&self) -> impl Iterator<Item = SolutionView<'_>> {
        let (full, lean) = match self {
            Point::Full(s) => (Some(s), None),
            Point::Lean { lean, warnings, .. } => (None, Some((lean, warnings))),
        };
        full.into_iter()
            .flat_map(|s| s.solutions.iter().map(SolutionView::from))
            .chain(lean.into_iter().flat_map(|(l, w)| {
                (0..l.len).map(move |i| SolutionView {
                    state: &l.states[i],
                    sensitivity: &l.sensitivities[i],
                    warnings: &w[i],
                    site: None,
                })
            }))
    }
}

/// The speed a scan minimises and maximises: the inertial burnout speed, or,
/// with a launch site, the speed relative to the rotating surface (what the
/// vehicle must supply from that site: the cost of the orbit from there).
fn required_speed(
    state: &crate::physics::state::BurnoutState,
    site: Option<&crate::physics::site::SiteState>,
) -> f64 {
    site.map(|x| x.relative_speed_m_s)
        .unwrap_or(state.speed_m_s)
}

/// Input keys with which a problem is a plain closed-form pair, if exactly
/// two orbit-element targets are given and no angle or speed.
const LEAN_KEYS: [&str; 15] = [
    "body",
    "mu",
    "radius",
    "burnout-alt",
    "burnout-radius",
    "min-periapsis-alt",
    "periapsis-alt",
    "periapsis-radius",
    "apoapsis-alt",
    "apoapsis-radius",
    "sma",
    "ecc",
    "period",
    "c3",
    "semi-latus-rectum",
];

fn setter_for(key: &str, p: &Problem) -> Setter {
    match key {
        "burnout-alt" => Setter::BurnoutAlt,
        "burnout-radius" => Setter::BurnoutRadius,
        "fpa" => Setter::Fpa,
        "zenith" => Setter::Zenith,
        "speed" => Setter::Speed,
        "min-periapsis-alt" => Setter::MinPeriapsisAlt,
        _ => {
            let Some(t) = TARGET_KEYS.iter().find(|t| t.0 == key) else {
                return Setter::Text;
            };
            match p.targets.iter().position(|x| x.flag == t.1) {
                Some(index) => Setter::Target { index, is_alt: t.4 },
                None => Setter::Text,
            }
        }
    }
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

/// How to run a scan.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct ScanOptions {
    /// Output format.
    pub format: ScanFormat,
    /// Branches kept.
    pub branch: BranchChoice,
    /// Add the 15 sensitivity columns (CSV, JSON).
    pub sensitivities: bool,
    /// Units of the human table.
    pub units: DisplayUnits,
    /// Use rayon for large scans (output is identical either way).
    pub parallel: bool,
    /// Collect the data for a figure.
    pub plot: bool,
}

impl Default for ScanOptions {
    fn default() -> Self {
        ScanOptions {
            format: ScanFormat::Csv,
            branch: BranchChoice::Both,
            sensitivities: false,
            units: DisplayUnits::Si,
            parallel: true,
            plot: false,
        }
    }
}

/// Minimum or maximum.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum ExtremeKind {
    /// Lowest required speed.
    Minimum,
    /// Highest required speed.
    Maximum,
}

impl ExtremeKind {
    fn name(self) -> &'static str {
        match self {
            ExtremeKind::Minimum => "minimum",
            ExtremeKind::Maximum => "maximum",
        }
    }
    fn sign(self) -> f64 {
        match self {
            ExtremeKind::Minimum => 1.0,
            ExtremeKind::Maximum => -1.0,
        }
    }
}

/// How an extreme was refined between grid points.
#[derive(Debug, Clone, PartialEq)]
pub struct Refinement {
    /// Brent iterations.
    pub iterations: u64,
    /// argmin's termination reason.
    pub termination: String,
    /// Whether Brent converged (otherwise the grid point is kept).
    pub converged: bool,
    /// The bracket searched, machine-output units of the first axis.
    pub bracket_out: (f64, f64),
}

/// The minimum or maximum required speed of a scan.
#[derive(Debug, Clone, PartialEq)]
pub struct Extreme {
    /// Which.
    pub kind: ExtremeKind,
    /// Required speed, m/s (refined).
    pub speed_m_s: f64,
    /// Branches that need this speed there.
    pub branches: Vec<&'static str>,
    /// Where, per axis in machine-output units (the first axis refined).
    pub at_out: Vec<f64>,
    /// Where, per axis in SI.
    pub at_si: Vec<f64>,
    /// Best grid point: speed, m/s.
    pub grid_speed_m_s: f64,
    /// Best grid point: index per axis.
    pub grid_index: Vec<usize>,
    /// Brent's refinement along the first axis, if it had two points or more.
    pub refinement: Option<Refinement>,
    /// Per axis: whether the extreme sits at an end of that axis's range.
    pub at_end: Vec<bool>,
    /// When the extreme is a grid point next to one that does not solve
    /// (along the first axis): that neighbour, SI. The extreme is then at
    /// the edge of the solved region.
    pub unsolved_neighbour_si: Option<f64>,
}

/// What a scan found.
#[derive(Debug, Clone, PartialEq, Default)]
pub struct ScanReport {
    /// Grid points.
    pub points: u64,
    /// Rows written.
    pub rows: u64,
    /// Points with at least one kept solution.
    pub solved: u64,
    /// Points that did not solve for an infeasible target.
    pub infeasible: u64,
    /// Points whose inputs could not be used.
    pub invalid: u64,
    /// Lowest required speed.
    pub minimum: Option<Extreme>,
    /// Highest required speed.
    pub maximum: Option<Extreme>,
    /// Data for the figure, when asked for.
    pub plot: Option<PlotData>,
}

#[derive(Debug, Clone, Copy)]
struct GridExtreme {
    speed: f64,
    idx: usize,
    branches: u8,
}

fn branch_bit(b: Branch) -> u8 {
    match b {
        Branch::Ascending => 1,
        Branch::Descending => 2,
    }
}

fn branch_names(bits: u8) -> Vec<&'static str> {
    let mut v = Vec::new();
    if bits & 1 != 0 {
        v.push("ascending");
    }
    if bits & 2 != 0 {
        v.push("descending");
    }
    v
}

fn same_speed(a: f64, b: f64) -> bool {
    (a - b).abs() <= 1e-12 * a.abs().max(b.abs())
}

/// Folds a candidate into a running extreme: better speed wins; the lower
/// index wins a tie, so the result does not depend on chunk order.
fn fold_extreme(cur: &mut Option<GridExtreme>, cand: GridExtreme, sign: f64) {
    match cur {
        None => *cur = Some(cand),
        Some(c) => {
            if same_speed(c.speed, cand.speed) && c.idx == cand.idx {
                c.branches |= cand.branches;
            } else if sign * cand.speed < sign * c.speed && !same_speed(c.speed, cand.speed)
                || (same_speed(c.speed, cand.speed) && cand.idx < c.idx)
            {
                *c = cand;
            }
        }
    }
}

#[derive(Debug, Clone, Default)]
struct Stats {
    rows: u64,
    solved: u64,
    infeasible: u64,
    invalid: u64,
    min: Option<GridExtreme>,
    max: Option<GridExtreme>,
}

impl Stats {
    fn merge(&mut self, o: &Stats) {
        self.rows += o.rows;
        self.solved += o.solved;
        self.infeasible += o.infeasible;
        self.invalid += o.invalid;
        if let Some(m) = o.min {
            fold_extreme(&mut self.min, m, 1.0);
        }
        if let Some(m) = o.max {
            fold_extreme(&mut self.max, m, -1.0);
        }
    }
}

/// One plotted value: grid index on the first axis, line, and the speed
/// (m/s) and angle (deg), or `None` where the point did not solve.
#[derive(Debug, Clone, Copy)]
struct Sample {
    i0: usize,
    slot: usize,
    branch: u8,
    ordinal: u8,
    value: Option<(f64, f64)>,
}

struct ChunkOut {
    bytes: Vec<u8>,
    stats: Stats,
    samples: Vec<Sample>,
}

/// Which points and lines go into the figure.
struct PlotPick {
    stride0: usize,
    n0: usize,
    slots: Vec<usize>,
}

impl PlotPick {
    fn new(plan: &Plan) -> PlotPick {
        let n0 = plan.axes[0].grid.len();
        let stride0 = n0.div_ceil(PLOT_POINTS).max(1);
        let slots = match plan.axes.get(1) {
            None => vec![0],
            Some(a) if a.grid.len() <= PLOT_SERIES => (0..a.grid.len()).collect(),
            Some(a) => {
                let n = a.grid.len();
                let mut v: Vec<usize> = (0..PLOT_SERIES)
                    .map(|k| ((k * (n - 1)) as f64 / (PLOT_SERIES - 1) as f64).round() as usize)
                    .collect();
                v.dedup();
                v
            }
        };
        PlotPick { stride0, n0, slots }
    }

    fn picks(&self, ix: &[usize]) -> Option<usize> {
        if ix.len() > 2 {
            return None;
        }
        let i0 = ix[0];
        if i0 % self.stride0 != 0 && i0 + 1 != self.n0 {
            return None;
        }
        let i1 = ix.get(1).copied().unwrap_or(0);
        self.slots.binary_search(&i1).ok()
    }
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

impl Plan {
    fn header_columns(&self, sensitivities: bool) -> Vec<String> {
        let mut cols: Vec<String> = self.axes.iter().map(|a| a.column.clone()).collect();
        cols.extend(RESULT_COLUMNS.iter().map(|s| s.to_string()));
        if sensitivities {
            cols.extend(sensitivity_columns());
        }
        if self.has_site() {
            cols.extend(SITE_COLUMNS.iter().map(|s| s.to_string()));
        }
        cols
    }

    /// Whether a launch site is among the inputs (then every row carries the
    /// site columns: launch azimuth, burnout point, relative velocity,
    /// inclination).
    pub fn has_site(&self) -> bool {
        self.site
    }

    fn write_header(&self, out: &mut impl Write, opts: &ScanOptions) -> std::io::Result<()> {
        match opts.format {
            ScanFormat::Csv => {
                let mut buf = Vec::new();
                let mut rec = Record::new(&mut buf);
                for c in self.header_columns(opts.sensitivities) {
                    rec.text(&c);
                }
                rec.end();
                out.write_all(&buf)
            }
            ScanFormat::Json => {
                let swept: Vec<serde_json::Value> = self
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
                    opts.branch.name(),
                    serde_json::to_string(&self.header_columns(opts.sensitivities))
                        .unwrap_or_default()
                )
            }
            ScanFormat::Table => {
                let ranges: Vec<String> = self
                    .axes
                    .iter()
                    .map(|a| {
                        let n = a.grid.len();
                        let k = a.grid.kind();
                        format!(
                            "{} {} to {} ({n} point{})",
                            a.flag,
                            show(k, a.grid.si(0), opts.units),
                            show(k, a.grid.si(n - 1), opts.units),
                            if n == 1 { "" } else { "s" }
                        )
                    })
                    .collect();
                let body = self
                    .base
                    .get("body")
                    .cloned()
                    .or_else(|| self.template.as_ref().map(|p| p.body.name.clone()))
                    .unwrap_or_else(|| "earth".into());
                writeln!(out, "scan over {body}: {}", ranges.join(", "))?;
                writeln!(out, "branches: {}", opts.branch.name())?;
                writeln!(out)?;
                let mut line = String::new();
                for a in &self.axes {
                    let (_, u, _) = display(a.grid.kind(), 0.0, opts.units);
                    line.push_str(&format!("{:>16} ", format!("{} {u}", a.key).trim_end()));
                }
                let (su, _) = opts.units.speed();
                line.push_str(&format!(
                    "{:<11} {:>13} {:>12}  note",
                    "branch",
                    format!("speed {su}"),
                    "fpa deg"
                ));
                writeln!(out, "{line}")
            }
        }
    }

    fn run_chunk(
        &self,
        opts: &ScanOptions,
        range: std::ops::Range<usize>,
        pick: Option<&PlotPick>,
    ) -> ChunkOut {
        let mut bytes = Vec::with_capacity(range.len() * 400);
        let mut stats = Stats::default();
        let mut samples = Vec::new();
        let mut scratch = self.scratch();
        let n = self.axes.len();
        let mut ix = vec![0usize; n];
        let mut si = vec![0f64; n];
        let mut out = vec![0f64; n];
        let mut prefix: Vec<u8> = Vec::with_capacity(64);
        let mut memo = FloatMemo::new();
        for idx in range {
            self.indices(idx, &mut ix);
            for a in 0..n {
                si[a] = self.axes[a].grid.si(ix[a]);
                out[a] = self.axes[a].grid.out(ix[a]);
            }
            let slot = pick.and_then(|p| p.picks(&ix));
            let result = self.solve_point_fast(&si, &mut scratch);
            prefix.clear();
            self.row_prefix(opts, &si, &out, &mut prefix);
            let mut solved_here = false;
            match &result {
                Ok(point) => {
                    let mu = point.mu();
                    let mut ordinals = [0u8; 2];
                    let mut best_min: Option<GridExtreme> = None;
                    let mut best_max: Option<GridExtreme> = None;
                    for view in point.views().filter(|v| opts.branch.keeps(v.state.branch)) {
                        solved_here = true;
                        stats.rows += 1;
                        let st = view.state;
                        let bit = branch_bit(st.branch);
                        let cand = GridExtreme {
                            speed: required_speed(st, view.site),
                            idx,
                            branches: bit,
                        };
                        fold_extreme(&mut best_min, cand, 1.0);
                        fold_extreme(&mut best_max, cand, -1.0);
                        bytes.extend_from_slice(&prefix);
                        self.solution_row(opts, mu, view, &mut bytes, &mut memo);
                        if let Some(slot) = slot {
                            let o = &mut ordinals[(bit - 1) as usize];
                            samples.push(Sample {
                                i0: ix[0],
                                slot,
                                branch: bit,
                                ordinal: *o,
                                value: Some((st.speed_m_s, st.flight_path_angle_rad.to_degrees())),
                            });
                            *o = o.saturating_add(1);
                        }
                    }
                    if solved_here {
                        stats.solved += 1;
                        if let Some(m) = best_min {
                            fold_extreme(&mut stats.min, m, 1.0);
                        }
                        if let Some(m) = best_max {
                            fold_extreme(&mut stats.max, m, -1.0);
                        }
                    } else {
                        stats.rows += 1;
                        stats.infeasible += 1;
                        bytes.extend_from_slice(&prefix);
                        let found = point.views().map(|v| v.state.branch);
                        let msg = no_branch_message(found, opts.branch);
                        self.failure_row(opts, "infeasible", &msg, &mut bytes);
                    }
                }
                Err(e) => {
                    stats.rows += 1;
                    match e.class() {
                        ErrorClass::Usage => stats.invalid += 1,
                        ErrorClass::Infeasible => stats.infeasible += 1,
                    }
                    bytes.extend_from_slice(&prefix);
                    self.failure_row(opts, e.status(), &e.to_string(), &mut bytes);
                }
            }
            if let (Some(slot), false) = (slot, solved_here) {
                samples.push(Sample {
                    i0: ix[0],
                    slot,
                    branch: 0,
                    ordinal: 0,
                    value: None,
                });
            }
        }
        ChunkOut {
            bytes,
            stats,
            samples,
        }
    }

    /// The swept-input part of a row.
    fn row_prefix(&self, opts: &ScanOptions, si: &[f64], out: &[f64], buf: &mut Vec<u8>) {
        match opts.format {
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
                for (axis, v) in self.axes.iter().zip(out) {
                    json_str(buf, &axis.column);
                    buf.push(b':');
                    json_num(buf, Some(*v));
                    buf.push(b',');
                }
            }
            ScanFormat::Table => {
                for (axis, v) in self.axes.iter().zip(si) {
                    let (x, _, decimals) = display(axis.grid.kind(), *v, opts.units);
                    let _ = write!(buf, "{:>16} ", format!("{x:.decimals$}"));
                }
            }
        }
    }

    fn solution_row(
        &self,
        opts: &ScanOptions,
        mu: f64,
        s: SolutionView,
        buf: &mut Vec<u8>,
        memo: &mut FloatMemo,
    ) {
        let st = s.state;
        match opts.format {
            ScanFormat::Csv => {
                // The prefix ended with a separator: the record continues it.
                let mut rec = Record::new(buf);
                rec.solution_memo(mu, s, opts.sensitivities, memo);
                if self.has_site() {
                    rec.site(s.site);
                }
                rec.end();
            }
            ScanFormat::Json => {
                let c = &st.conic;
                buf.extend_from_slice(b"\"status\":\"ok\",\"message\":");
                let msg: Vec<String> = s.warnings.iter().map(|w| w.to_string()).collect();
                json_str(buf, &msg.join("; "));
                buf.extend_from_slice(b",\"branch\":");
                json_str(buf, st.branch.name());
                let nums: [(&str, Option<f64>); 9] = [
                    ("speed_m_s", Some(st.speed_m_s)),
                    (
                        "flight_path_angle_deg",
                        Some(st.flight_path_angle_rad.to_degrees()),
                    ),
                    ("true_anomaly_deg", Some(st.true_anomaly_rad.to_degrees())),
                    ("periapsis_radius_m", Some(c.periapsis_radius_m())),
                    ("apoapsis_radius_m", c.apoapsis_radius_m()),
                    ("sma_m", c.sma_m()),
                    ("ecc", Some(c.ecc())),
                    ("period_s", c.period_s(mu)),
                    ("c3_m2_s2", Some(c.c3_m2_s2(mu))),
                ];
                for (k, v) in nums {
                    buf.push(b',');
                    json_str(buf, k);
                    buf.push(b':');
                    json_num(buf, v);
                }
                if opts.sensitivities {
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
                if self.has_site() {
                    for (k, v) in SITE_COLUMNS.iter().zip(site_values(s.site)) {
                        buf.push(b',');
                        json_str(buf, k);
                        buf.push(b':');
                        json_num(buf, v);
                    }
                }
                buf.push(b'}');
            }
            ScanFormat::Table => {
                let (su, sf) = opts.units.speed();
                let decimals = if opts.units == DisplayUnits::Us { 2 } else { 6 };
                let mut note: Vec<String> = s.warnings.iter().map(warning_tag).collect();
                if let Some(x) = s.site {
                    note.insert(
                        0,
                        format!(
                            "relative {:.decimals$} {su}, launch az {:.3} deg, incl {:.3} deg",
                            x.relative_speed_m_s / sf,
                            x.launch_azimuth_rad.to_degrees(),
                            x.inclination_rad.to_degrees()
                        ),
                    );
                }
                let line = format!(
                    "{:<11} {:>13} {:>12}  {}",
                    st.branch.name(),
                    format!("{:.decimals$}", st.speed_m_s / sf),
                    format!("{:.6}", st.flight_path_angle_rad.to_degrees()),
                    note.join(", ")
                );
                let _ = writeln!(buf, "{}", line.trim_end());
            }
        }
    }

    fn failure_row(&self, opts: &ScanOptions, status: &str, message: &str, buf: &mut Vec<u8>) {
        match opts.format {
            ScanFormat::Csv => {
                let mut rec = Record::new(buf);
                rec.failure(status, message, opts.sensitivities);
                if self.has_site() {
                    rec.site(None);
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
                if opts.sensitivities {
                    for c in sensitivity_columns() {
                        buf.push(b',');
                        json_str(buf, &c);
                        buf.extend_from_slice(b":null");
                    }
                }
                if self.has_site() {
                    for c in SITE_COLUMNS {
                        buf.push(b',');
                        json_str(buf, c);
                        buf.extend_from_slice(b":null");
                    }
                }
                buf.push(b'}');
            }
            ScanFormat::Table => {
                let _ = writeln!(
                    buf,
                    "{:<11} {:>13} {:>12}  {status}: {message}",
                    "-", "-", "-"
                );
            }
        }
    }

    /// Runs the scan, writing every row to `out` in grid order, then the
    /// summary (table and JSON). `progress` is called with the number of
    /// points done after each block.
    ///
    /// # Errors
    /// Only write errors of `out`: a point that does not solve is a row.
    pub fn run<W: Write + Send>(
        &self,
        opts: &ScanOptions,
        out: W,
        progress: &mut dyn FnMut(u64),
    ) -> std::io::Result<ScanReport> {
        let mut sink = Sink {
            out,
            strip_comma: opts.format == ScanFormat::Json,
        };
        self.write_header(&mut sink.out, opts)?;
        let pick = opts.plot.then(|| PlotPick::new(self));
        let mut stats = Stats::default();
        let mut samples: Vec<Sample> = Vec::new();
        let total = self.total;
        let block = CHUNK * CHUNKS_PER_BLOCK;
        if !opts.parallel || total < PARALLEL_MIN_POINTS {
            let mut start = 0;
            while start < total {
                let end = (start + CHUNK).min(total);
                let c = self.run_chunk(opts, start..end, pick.as_ref());
                stats.merge(&c.stats);
                samples.extend(c.samples);
                sink.write_chunk(&c.bytes)?;
                progress(end as u64);
                start = end;
            }
        } else {
            std::thread::scope(|scope| -> std::io::Result<()> {
                let (tx, rx) = std::sync::mpsc::sync_channel::<Vec<Vec<u8>>>(2);
                let sink_ref = &mut sink;
                let writer = scope.spawn(move || -> std::io::Result<()> {
                    for blocks in rx {
                        for b in blocks {
                            sink_ref.write_chunk(&b)?;
                        }
                    }
                    Ok(())
                });
                let mut start = 0;
                while start < total {
                    let end = (start + block).min(total);
                    let chunks: Vec<ChunkOut> = (start..end)
                        .step_by(CHUNK)
                        .collect::<Vec<_>>()
                        .into_par_iter()
                        .map(|s| self.run_chunk(opts, s..(s + CHUNK).min(end), pick.as_ref()))
                        .collect();
                    let mut bytes = Vec::with_capacity(chunks.len());
                    for c in chunks {
                        stats.merge(&c.stats);
                        samples.extend(c.samples);
                        bytes.push(c.bytes);
                    }
                    if tx.send(bytes).is_err() {
                        break; // the writer stopped on an error, returned below
                    }
                    progress(end as u64);
                    start = end;
                }
                drop(tx);
                writer
                    .join()
                    .unwrap_or_else(|_| Err(std::io::Error::other("the writer thread failed")))
            })?;
        }
        let minimum = stats
            .min
            .map(|m| self.refine(opts.branch, m, ExtremeKind::Minimum));
        let maximum = stats
            .max
            .map(|m| self.refine(opts.branch, m, ExtremeKind::Maximum));
        let mut report = ScanReport {
            points: total as u64,
            rows: stats.rows,
            solved: stats.solved,
            infeasible: stats.infeasible,
            invalid: stats.invalid,
            minimum,
            maximum,
            plot: None,
        };
        if let Some(pick) = &pick {
            report.plot = Some(self.plot_data(opts, pick, samples, &report));
        }
        self.write_trailer(&mut sink.out, opts, &report)?;
        sink.out.flush()?;
        Ok(report)
    }

    fn write_trailer(
        &self,
        out: &mut impl Write,
        opts: &ScanOptions,
        report: &ScanReport,
    ) -> std::io::Result<()> {
        match opts.format {
            ScanFormat::Csv => Ok(()),
            ScanFormat::Json => {
                let summary = self.summary_json(report);
                write!(out, "\n],\n\"summary\":{summary}}}\n")
            }
            ScanFormat::Table => {
                writeln!(out)?;
                for line in self.summary_lines(report, opts.units) {
                    writeln!(out, "{line}")?;
                }
                writeln!(out)?;
                writeln!(out, "{}", crate::report::CAUTION)
            }
        }
    }

    /// Solves at `x_si` on the first axis, the other axes at `si`: the best
    /// kept speed (signed: lower is better) and the branches that need it.
    fn speed_at(
        &self,
        branch: BranchChoice,
        si: &[f64],
        x_si: f64,
        kind: ExtremeKind,
    ) -> Option<(f64, u8)> {
        let mut point = si.to_vec();
        point[0] = x_si;
        let solved = self.solve_si(&point, &mut self.scratch()).ok()?;
        let mut best: Option<GridExtreme> = None;
        for s in kept(&solved, branch) {
            fold_extreme(
                &mut best,
                GridExtreme {
                    speed: required_speed(&s.state, s.site.as_ref()),
                    idx: 0,
                    branches: branch_bit(s.state.branch),
                },
                kind.sign(),
            );
        }
        best.map(|b| (b.speed, b.branches))
    }

    fn refine(&self, branch: BranchChoice, best: GridExtreme, kind: ExtremeKind) -> Extreme {
        let n = self.axes.len();
        let mut ix = vec![0; n];
        self.indices(best.idx, &mut ix);
        let grid_si: Vec<f64> = ix
            .iter()
            .zip(&self.axes)
            .map(|(&i, a)| a.grid.si(i))
            .collect();
        let at_end: Vec<bool> = ix
            .iter()
            .zip(&self.axes)
            .map(|(&i, a)| a.grid.len() > 1 && (i == 0 || i + 1 == a.grid.len()))
            .collect();
        let mut ext = Extreme {
            kind,
            speed_m_s: best.speed,
            branches: branch_names(best.branches),
            at_out: ix
                .iter()
                .zip(&self.axes)
                .map(|(&i, a)| a.grid.out(i))
                .collect(),
            at_si: grid_si.clone(),
            grid_speed_m_s: best.speed,
            grid_index: ix.clone(),
            refinement: None,
            at_end,
            unsolved_neighbour_si: None,
        };
        let grid0 = &self.axes[0].grid;
        let n0 = grid0.len();
        if n0 < 2 {
            return ext;
        }
        // The bracket: the grid neighbours that solve. A neighbour that does
        // not solve marks the edge of the solved region; the speed often
        // runs off to infinity there, so the search stays on this side.
        let i0 = ix[0];
        let solves = |i: usize| self.speed_at(branch, &grid_si, grid0.si(i), kind).is_some();
        let left = i0.checked_sub(1);
        let right = (i0 + 1 < n0).then_some(i0 + 1);
        let left_ok = left.filter(|&i| solves(i));
        let right_ok = right.filter(|&i| solves(i));
        ext.unsolved_neighbour_si = [(left, left_ok), (right, right_ok)]
            .iter()
            .find(|(nb, ok)| nb.is_some() && ok.is_none())
            .and_then(|(nb, _)| nb.map(|i| grid0.si(i)));
        let (lo, hi) = (left_ok.unwrap_or(i0), right_ok.unwrap_or(i0));
        if lo == hi {
            return ext;
        }
        let (xa, xb) = (grid0.si(lo), grid0.si(hi));
        let (a, b) = if xa <= xb { (xa, xb) } else { (xb, xa) };
        let sign = kind.sign();
        // A point with no kept solution costs far more than any speed here,
        // but stays finite so the parabolic steps stay finite too.
        let penalty = 1e3 * best.speed.abs().max(1.0);
        let objective = SpeedAlong {
            plan: self,
            branch,
            si: grid_si.clone(),
            kind,
            penalty,
        };
        let t_abs = 1e-10 * (b - a);
        let solver =
            argmin::solver::brent::BrentOpt::new(a, b).set_tolerance(f64::EPSILON.sqrt(), t_abs);
        let run = argmin::core::Executor::new(objective, solver)
            .configure(|s| s.max_iters(200))
            .run();
        let Ok(res) = run else {
            return ext;
        };
        use argmin::core::State;
        let state = res.state();
        let termination = state
            .get_termination_reason()
            .map(|r| r.text().to_string())
            .unwrap_or_else(|| "not terminated".into());
        let converged = matches!(
            state.get_termination_reason(),
            Some(argmin::core::TerminationReason::SolverConverged)
        );
        ext.refinement = Some(Refinement {
            iterations: state.get_iter(),
            termination,
            converged,
            bracket_out: (grid0.si_to_out(a), grid0.si_to_out(b)),
        });
        let (Some(&x), true) = (state.get_best_param(), converged) else {
            return ext;
        };
        // Converged onto the best grid point itself (an end of the range or
        // of the solved region): keep the grid point and what is said of it.
        // On a flat extreme the speed's own rounding noise (~1e-16) limits
        // where Brent can place it to about sqrt(noise) of the bracket, so
        // anything within 1e-5 of the bracket width counts as the grid point.
        let tol = 3.0 * (f64::EPSILON.sqrt() * x.abs() + t_abs) + 1e-5 * (b - a);
        if (x - grid_si[0]).abs() <= tol {
            return ext;
        }
        let Some((speed, bits)) = self.speed_at(branch, &grid_si, x, kind) else {
            return ext;
        };
        if sign * speed < sign * best.speed {
            ext.speed_m_s = speed;
            ext.branches = branch_names(bits);
            ext.at_si[0] = x;
            ext.at_out[0] = grid0.si_to_out(x);
            ext.at_end[0] = false;
            ext.unsolved_neighbour_si = None;
        }
        ext
    }

    /// Summary lines for people: counts, then the minimum and maximum.
    pub fn summary_lines(&self, report: &ScanReport, units: DisplayUnits) -> Vec<String> {
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
        match (&report.minimum, &report.maximum) {
            (Some(min), Some(max)) => {
                lines.push(self.describe_extreme(min, units));
                lines.push(self.describe_extreme(max, units));
            }
            _ => lines.push("no grid point solved: no minimum or maximum speed".into()),
        }
        lines
    }

    fn describe_extreme(&self, e: &Extreme, units: DisplayUnits) -> String {
        let (su, sf) = units.speed();
        let decimals = if units == DisplayUnits::Us { 2 } else { 6 };
        let at: Vec<String> = self
            .axes
            .iter()
            .zip(&e.at_si)
            .map(|(a, &v)| format!("{} {}", a.key, show_fine(&a.grid, v, units)))
            .collect();
        let mut s = format!(
            "{} required {}speed {:.decimals$} {su} ({}) at {}",
            e.kind.name(),
            if self.has_site() {
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
        let a0 = &self.axes[0];
        let ends: Vec<&str> = self
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

    fn summary_json(&self, report: &ScanReport) -> serde_json::Value {
        let extreme = |e: &Option<Extreme>| -> serde_json::Value {
            let Some(e) = e else {
                return serde_json::Value::Null;
            };
            let mut at = serde_json::Map::new();
            let mut grid_at = serde_json::Map::new();
            for (i, a) in self.axes.iter().enumerate() {
                at.insert(a.column.clone(), serde_json::json!(e.at_out[i]));
                grid_at.insert(
                    a.column.clone(),
                    serde_json::json!(a.grid.out(e.grid_index[i])),
                );
            }
            let ends: Vec<&str> = self
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
                    serde_json::json!({self.axes[0].column.clone(): self.axes[0].grid.si_to_out(v)})
                }),
                "grid": {"speed_m_s": e.grid_speed_m_s, "at": grid_at},
                "refinement": e.refinement.as_ref().map(|r| serde_json::json!({
                    "method": "brent",
                    "along": self.axes[0].column,
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
            "minimum": extreme(&report.minimum),
            "maximum": extreme(&report.maximum),
        })
    }

    fn plot_data(
        &self,
        opts: &ScanOptions,
        pick: &PlotPick,
        mut samples: Vec<Sample>,
        report: &ScanReport,
    ) -> PlotData {
        let a0 = &self.axes[0];
        let k0 = a0.grid.kind();
        let (_, xu, _) = display(k0, 0.0, opts.units);
        let (su, sf) = opts.units.speed();
        let x_of = |i0: usize| display(k0, a0.grid.si(i0), opts.units).0;
        samples.sort_by_key(|s| (s.slot, s.branch, s.ordinal, s.i0));
        // Lines: one per (second-axis value, branch, ordinal).
        let mut series: Vec<PlotSeries> = Vec::new();
        let mut failed_x: Vec<usize> = Vec::new();
        let mut all_x: Vec<usize> = Vec::new();
        let mut key: Option<(usize, u8, u8)> = None;
        let mut last_i0: Option<usize> = None;
        // Which sampled grid indices exist at all (for gaps and shading).
        for s in &samples {
            all_x.push(s.i0);
            if s.value.is_none() {
                failed_x.push(s.i0);
            }
        }
        all_x.sort_unstable();
        all_x.dedup();
        failed_x.sort_unstable();
        failed_x.dedup();
        let sampled: Vec<usize> = (0..pick.n0)
            .filter(|i| i % pick.stride0 == 0 || i + 1 == pick.n0)
            .collect();
        for s in samples.iter().filter(|s| s.value.is_some()) {
            let k = (s.slot, s.branch, s.ordinal);
            if key != Some(k) {
                let branch = branch_names(s.branch).join("");
                let mut label = branch.clone();
                if s.ordinal > 0 {
                    label = format!("{branch} #{}", s.ordinal + 1);
                }
                if let Some(a1) = self.axes.get(1) {
                    let i1 = pick.slots[s.slot];
                    label = format!(
                        "{} {}, {label}",
                        a1.key,
                        show(a1.grid.kind(), a1.grid.si(i1), opts.units)
                    );
                }
                series.push(PlotSeries {
                    label,
                    segments: vec![Vec::new()],
                });
                key = Some(k);
                last_i0 = None;
            }
            let line = series.last_mut().expect("a series was just pushed");
            // A skipped sampled point (no solution there) breaks the line.
            if let Some(prev) = last_i0 {
                let p = sampled.partition_point(|&i| i <= prev);
                if sampled.get(p).is_some_and(|&next| next < s.i0) {
                    line.segments.push(Vec::new());
                }
            }
            let (v, f) = s.value.unwrap_or((f64::NAN, f64::NAN));
            line.segments
                .last_mut()
                .expect("segments is never empty")
                .push((x_of(s.i0), v / sf, f));
            last_i0 = Some(s.i0);
        }
        // Shade around failed sampled points, half-way to their neighbours.
        let mut infeasible: Vec<(f64, f64)> = Vec::new();
        for &i in &failed_x {
            let p = sampled.partition_point(|&j| j < i);
            let x = x_of(i);
            let left = if p > 0 {
                0.5 * (x + x_of(sampled[p - 1]))
            } else {
                x
            };
            let right = match sampled.get(p + 1) {
                Some(&j) => 0.5 * (x + x_of(j)),
                None => x,
            };
            let (l, r) = if left <= right {
                (left, right)
            } else {
                (right, left)
            };
            match infeasible.last_mut() {
                Some(last) if (last.1 - l).abs() <= 1e-12 * (1.0 + l.abs()) || last.1 >= l => {
                    last.1 = last.1.max(r)
                }
                _ => infeasible.push((l, r)),
            }
        }
        let minimum = report.minimum.as_ref().map(|m| {
            let x = display(k0, m.at_si[0], opts.units).0;
            let label = format!(
                "minimum {:.4} {su} at {}",
                m.speed_m_s / sf,
                show_fine(&a0.grid, m.at_si[0], opts.units)
            );
            (x, m.speed_m_s / sf, label)
        });
        let note = self.axes.get(1).and_then(|a1| {
            (pick.slots.len() < a1.grid.len()).then(|| {
                format!(
                    "{} of {} values of {} shown",
                    pick.slots.len(),
                    a1.grid.len(),
                    a1.flag
                )
            })
        });
        let what = human_name(&a0.key);
        PlotData {
            title: format!("Required burnout speed and flight-path angle vs {what}"),
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
            note,
        }
    }
}

/// Argmin cost function: the required speed along the first axis (negated
/// for a maximum), a large finite penalty where nothing solves.
struct SpeedAlong<'a> {
    plan: &'a Plan,
    branch: BranchChoice,
    si: Vec<f64>,
    kind: ExtremeKind,
    penalty: f64,
}

impl argmin::core::CostFunction for SpeedAlong<'_> {
    type Param = f64;
    type Output = f64;

    fn cost(&self, x: &f64) -> Result<f64, argmin::core::Error> {
        Ok(
            match self.plan.speed_at(self.branch, &self.si, *x, self.kind) {
                Some((v, _)) => self.kind.sign() * v,
                None => self.penalty,
            },
        )
    }
}

/// The destination of the rows, in order. For JSON, the first row's
/// leading comma is dropped (rows are formatted in parallel and cannot
/// know whether they come first).
struct Sink<W> {
    out: W,
    strip_comma: bool,
}

impl<W: Write> Sink<W> {
    fn write_chunk(&mut self, bytes: &[u8]) -> std::io::Result<()> {
        let mut b = bytes;
        if self.strip_comma && !b.is_empty() {
            if b[0] == b',' {
                b = &b[1..];
            }
            self.strip_comma = false;
        }
        self.out.write_all(b)
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use approx::assert_relative_eq;

    fn inputs(pairs: &[(&str, &str)]) -> Inputs {
        pairs
            .iter()
            .map(|(k, v)| (k.to_string(), v.to_string()))
            .collect()
    }

    fn run(pairs: &[(&str, &str)], opts: ScanOptions) -> (String, ScanReport) {
        let plan = Plan::new(&inputs(pairs)).unwrap();
        let mut out = Vec::new();
        let report = plan.run(&opts, &mut out, &mut |_| {}).unwrap();
        (String::from_utf8(out).unwrap(), report)
    }

    fn csv_rows(text: &str) -> Vec<Vec<String>> {
        csv::ReaderBuilder::new()
            .has_headers(false)
            .from_reader(text.as_bytes())
            .records()
            .map(|r| r.unwrap().iter().map(str::to_string).collect())
            .collect()
    }

    #[test]
    fn shortcut_for_each_swept_input_matches_the_input_reader() {
        let cases: &[&[(&str, &str)]] = &[
            &[
                ("burnout-alt", "150km..600km:150km"),
                ("periapsis-alt", "200"),
                ("apoapsis-alt", "35786"),
            ],
            &[
                ("burnout-radius", "6500km..7000km:100km"),
                ("periapsis-alt", "200"),
                ("apoapsis-alt", "1000"),
            ],
            &[
                ("periapsis-alt", "150..350:50"),
                ("burnout-alt", "300"),
                ("apoapsis-alt", "1000"),
            ],
            &[
                ("apoapsis-radius", "6000..9000:1000"),
                ("burnout-alt", "300"),
                ("periapsis-alt", "200"),
            ],
            &[
                ("sma", "6900..7500:200"),
                ("burnout-alt", "300"),
                ("periapsis-alt", "200"),
            ],
            &[
                ("fpa", "-95..95:5"),
                ("burnout-alt", "300"),
                ("apoapsis-alt", "1000"),
            ],
            &[
                ("zenith", "-10..190:10"),
                ("burnout-alt", "300"),
                ("apoapsis-alt", "1000"),
            ],
            &[
                ("speed", "-1..9:0.5"),
                ("burnout-alt", "300"),
                ("periapsis-alt", "200"),
            ],
            &[
                ("min-periapsis-alt", "100..300:100"),
                ("burnout-alt", "200"),
                ("periapsis-alt", "185"),
                ("apoapsis-alt", "500"),
            ],
        ];
        for pairs in cases {
            let plan = Plan::new(&inputs(pairs)).unwrap();
            assert!(plan.template.is_some(), "{pairs:?}");
            assert_ne!(plan.axes[0].setter, Setter::Text, "{pairs:?}");
            let mut scratch = plan.scratch();
            let mut shortcut_used = 0;
            for idx in 0..plan.len() {
                let si = plan.si_at(idx);
                let mut probe = plan.scratch().unwrap();
                shortcut_used += usize::from(plan.apply(&mut probe, &si));
                let fast = plan.solve_si(&si, &mut scratch);
                let slow = solve_inputs(&plan.inputs_at(&si));
                assert_eq!(fast, slow, "{pairs:?} at {si:?}");
            }
            assert!(shortcut_used > 0, "{pairs:?}: the shortcut was never taken");
        }
    }

    #[test]
    fn plain_pair_points_take_the_lean_path_with_solves_answers() {
        let cases: &[&[(&str, &str)]] = &[
            // Below, at and above the periapsis; low-periapsis warnings.
            &[
                ("burnout-alt", "100km..1000km:12.5km"),
                ("periapsis-alt", "137.5"),
                ("apoapsis-alt", "900"),
            ],
            // Suborbital (periapsis under the surface): warnings on both branches.
            &[
                ("apoapsis-alt", "300..900:100"),
                ("burnout-alt", "250"),
                ("periapsis-radius", "6000"),
            ],
            // Hyperbolic, and a swept C3.
            &[
                ("c3", "-5..15:5"),
                ("burnout-alt", "300"),
                ("periapsis-alt", "250"),
            ],
        ];
        for pairs in cases {
            let plan = Plan::new(&inputs(pairs)).unwrap();
            assert!(plan.lean, "{pairs:?} should take the lean path");
            let mut scratch = plan.scratch();
            let mut warned = 0;
            for idx in 0..plan.len() {
                let si = plan.si_at(idx);
                let fast = plan.solve_point_fast(&si, &mut scratch);
                let full = solve_inputs(&plan.inputs_at(&si));
                match (fast, full) {
                    (Ok(point), Ok(solved)) => {
                        assert!(matches!(point, Point::Lean { .. }));
                        let views: Vec<SolutionView> = point.views().collect();
                        assert_eq!(views.len(), solved.solutions.len(), "{pairs:?} {si:?}");
                        for (v, s) in views.iter().zip(&solved.solutions) {
                            assert_eq!(*v.state, s.state);
                            assert_eq!(*v.sensitivity, s.sensitivity);
                            assert_eq!(v.warnings, s.warnings.as_slice());
                            warned += v.warnings.len();
                        }
                    }
                    (Err(a), Err(b)) => assert_eq!(a, b, "{pairs:?} {si:?}"),
                    (a, b) => panic!("{pairs:?} {si:?}: {:?} vs {b:?}", a.map(|p| p.mu())),
                }
            }
            if pairs[0].0 != "c3" {
                assert!(warned > 0, "{pairs:?}: no warning was compared");
            }
        }
        let angled = Plan::new(&inputs(&[
            ("burnout-alt", "100..200:50"),
            ("fpa", "3"),
            ("apoapsis-alt", "900"),
        ]))
        .unwrap();
        assert!(!angled.lean);
    }

    #[test]
    fn launch_site_scans_take_the_input_readers_road_at_every_point() {
        let plan = Plan::new(&inputs(&[
            ("burnout-alt", "150km..450km:150km"),
            ("periapsis-alt", "200"),
            ("apoapsis-alt", "35786"),
            ("latitude", "28.5"),
            ("azimuth", "90"),
        ]))
        .unwrap();
        assert!(plan.template.is_none() && !plan.lean);
        for idx in 0..plan.len() {
            let si = plan.si_at(idx);
            assert_eq!(
                plan.solve_si(&si, &mut plan.scratch()),
                solve_inputs(&plan.inputs_at(&si))
            );
        }
    }

    #[test]
    fn parallel_and_sequential_scans_write_the_same_bytes() {
        let pairs = [
            ("burnout-alt", "100km..700km/20000"),
            ("periapsis-alt", "185"),
            ("apoapsis-alt", "35786"),
        ];
        let seq = ScanOptions {
            parallel: false,
            ..ScanOptions::default()
        };
        let (a, ra) = run(&pairs, seq);
        let (b, rb) = run(&pairs, ScanOptions::default());
        assert!(a == b, "parallel CSV differs from sequential");
        assert_eq!(ra, rb);
        // 100 km .. 185 km does not reach the periapsis: those are single rows.
        assert!(ra.infeasible > 2000 && ra.solved > 17000, "{ra:?}");
        // No grid point falls exactly on the periapsis: two rows per solved point.
        assert_eq!(ra.rows, ra.infeasible + 2 * ra.solved);
        let ja = run(
            &pairs,
            ScanOptions {
                format: ScanFormat::Json,
                ..seq
            },
        )
        .0;
        let jb = run(
            &pairs,
            ScanOptions {
                format: ScanFormat::Json,
                ..ScanOptions::default()
            },
        )
        .0;
        assert!(ja == jb, "parallel JSON differs from sequential");
    }

    #[test]
    fn two_ranges_give_the_full_product_with_the_last_axis_fastest() {
        let (out, report) = run(
            &[
                ("apoapsis-alt", "500km..40000km:500km"),
                ("burnout-alt", "200km..600km:100km"),
                ("periapsis-alt", "180"),
            ],
            ScanOptions::default(),
        );
        assert_eq!(report.points, 5 * 80);
        let rows = csv_rows(&out);
        assert_eq!(rows[0][..3], ["burnout_alt_m", "apoapsis_alt_m", "status"]);
        let mut points: Vec<(String, String)> = rows[1..]
            .iter()
            .map(|r| (r[0].clone(), r[1].clone()))
            .collect();
        assert_eq!(points[0], ("200000".to_string(), "500000".to_string()));
        assert_eq!(points[2], ("200000".to_string(), "1000000".to_string()));
        points.dedup();
        assert_eq!(points.len(), 400);
    }

    #[test]
    fn swept_columns_carry_units_and_never_repeat_a_result_column() {
        assert_eq!(column_name("burnout-alt", Kind::Length), "burnout_alt_m");
        assert_eq!(column_name("fpa", Kind::Angle), "fpa_deg");
        assert_eq!(column_name("c3", Kind::C3), "given_c3_m2_s2");
        assert_eq!(column_name("speed", Kind::Speed), "given_speed_m_s");
        assert_eq!(column_name("ecc", Kind::Ratio), "given_ecc");
        assert_eq!(column_name("period", Kind::Time), "given_period_s");
        assert_eq!(
            column_name("apoapsis-radius", Kind::Length),
            "given_apoapsis_radius_m"
        );
    }

    /// Dense-grid minimum (or maximum) of the required speed over the grid
    /// of `pairs`: (speed, first-axis SI value).
    fn dense(pairs: &[(&str, &str)], kind: ExtremeKind) -> (f64, f64) {
        let plan = Plan::new(&inputs(pairs)).unwrap();
        let mut best = (f64::NAN, f64::NAN);
        for idx in 0..plan.len() {
            if let Ok(s) = plan.solve_point(idx) {
                for sol in &s.solutions {
                    let v = sol.state.speed_m_s;
                    if best.0.is_nan() || kind.sign() * v < kind.sign() * best.0 {
                        best = (v, plan.si_at(idx)[0]);
                    }
                }
            }
        }
        best
    }

    #[test]
    fn interior_minimum_between_grid_points_agrees_with_a_dense_grid() {
        // Burnout 300 km up, target periapsis 200 km, flight-path angle swept.
        // v^2 = 2 mu R (r - R) / (r (r^2 cos^2 g - R^2)) grows with |g|: a
        // horizontal burnout puts burnout at apoapsis, and any climb or dive
        // drops the periapsis unless the speed rises, so the least speed is
        // at g = 0, between the grid points -2 and 1 deg.
        let fixed = [("burnout-alt", "300"), ("periapsis-alt", "200")];
        let (_, report) = run(
            &[fixed[0], fixed[1], ("fpa", "-17deg..23deg:3deg")],
            ScanOptions::default(),
        );
        let min = report.minimum.unwrap();
        let (v_dense, x_dense) = dense(
            &[fixed[0], fixed[1], ("fpa", "-2deg..1deg:0.0001deg")],
            ExtremeKind::Minimum,
        );
        assert!(min.refinement.as_ref().unwrap().converged);
        assert_eq!(min.at_end, vec![false]);
        // The dense grid's step is 1.7e-6 rad; Brent's tolerance is finer.
        assert!(
            (min.at_si[0] - x_dense).abs() <= 0.0001f64.to_radians(),
            "{} vs {x_dense}",
            min.at_si[0]
        );
        assert!(min.speed_m_s <= v_dense * (1.0 + 1e-12));
        assert_relative_eq!(min.speed_m_s, v_dense, max_relative = 1e-10);
        assert!(
            min.speed_m_s < min.grid_speed_m_s * (1.0 - 1e-4),
            "refinement moved nothing"
        );
    }

    #[test]
    fn interior_maximum_between_grid_points_agrees_with_a_dense_grid() {
        // Target apoapsis 1000 km from 300 km: v^2 = 2 mu R (R - r) /
        // (r (R^2 - r^2 cos^2 g)) falls with |g| (a steeper climb turns
        // horizontal speed into height), so the greatest speed is at g = 0.
        let fixed = [("burnout-alt", "300"), ("apoapsis-alt", "1000")];
        let (_, report) = run(
            &[fixed[0], fixed[1], ("fpa", "-10deg..11deg:3deg")],
            ScanOptions::default(),
        );
        let max = report.maximum.unwrap();
        let (v_dense, x_dense) = dense(
            &[fixed[0], fixed[1], ("fpa", "-1deg..2deg:0.0001deg")],
            ExtremeKind::Maximum,
        );
        assert!((max.at_si[0] - x_dense).abs() <= 0.0001f64.to_radians());
        assert_relative_eq!(max.speed_m_s, v_dense, max_relative = 1e-10);
    }

    #[test]
    fn minimum_at_the_end_of_the_range_is_the_end_point_and_says_so() {
        // A fixed transfer orbit: vis-viva v^2 = mu (2/r - 1/a) falls with r,
        // so the least speed is at the top of the burnout range.
        let fixed = [("periapsis-alt", "200"), ("apoapsis-alt", "35786")];
        let (out, report) = run(
            &[fixed[0], fixed[1], ("burnout-alt", "250km..1000km:50km")],
            ScanOptions {
                format: ScanFormat::Table,
                ..ScanOptions::default()
            },
        );
        let min = report.minimum.unwrap();
        let (v_dense, x_dense) = dense(
            &[fixed[0], fixed[1], ("burnout-alt", "950km..1000km:0.01km")],
            ExtremeKind::Minimum,
        );
        assert_eq!(min.at_end, vec![true]);
        assert_relative_eq!(min.at_si[0], x_dense, max_relative = 1e-15);
        assert_relative_eq!(min.speed_m_s, v_dense, max_relative = 1e-15);
        assert!(
            out.contains("at the end of the --burnout-alt range; the speed is still falling there"),
            "{out}"
        );
    }

    #[test]
    fn edge_of_the_solved_region_is_reported_not_chased() {
        // Beyond |g| = acos(R / r) = 9.93 deg the periapsis cannot be reached
        // and the required speed runs to infinity at that edge.
        let (_, report) = run(
            &[
                ("burnout-alt", "300"),
                ("periapsis-alt", "200"),
                ("fpa", "-17deg..23deg:3deg"),
            ],
            ScanOptions::default(),
        );
        let max = report.maximum.unwrap();
        assert_relative_eq!(max.at_out[0], -8.0);
        assert_relative_eq!(
            max.unsolved_neighbour_si.unwrap(),
            (-11f64).to_radians(),
            max_relative = 1e-15
        );
        assert_eq!(report.infeasible, 8);
    }

    #[test]
    fn usage_error_shared_by_every_point_is_the_scans_error() {
        let plan = Plan::new(&inputs(&[("burnout-alt", "100..200:50")])).unwrap();
        let e = plan.check_structure().unwrap_err().to_string();
        assert!(e.starts_with("nothing to target"), "{e}");
        // A value-dependent usage error (period 0 is not positive) is a row.
        let plan = Plan::new(&inputs(&[
            ("burnout-alt", "300"),
            ("periapsis-alt", "200"),
            ("period", "0..12000:6000"),
        ]))
        .unwrap();
        plan.check_structure().unwrap();
        let (out, report) = run(
            &[
                ("burnout-alt", "300"),
                ("periapsis-alt", "200"),
                ("period", "0..12000:6000"),
            ],
            ScanOptions::default(),
        );
        assert_eq!(report.invalid, 1);
        assert!(csv_rows(&out)[1][1] == "invalid");
    }

    #[test]
    fn non_numeric_input_as_a_range_is_rejected_naming_the_flag() {
        let e = Plan::new(&inputs(&[("body", "earth..mars:1"), ("burnout-alt", "1")]))
            .unwrap_err()
            .to_string();
        assert!(e.starts_with("--body does not take a range"), "{e}");
        let e = Plan::new(&inputs(&[("burnout-alt", "300")]))
            .unwrap_err()
            .to_string();
        assert!(e.starts_with("nothing to scan"), "{e}");
    }

    #[test]
    fn json_output_is_one_document_with_a_row_object_per_row() {
        let (out, report) = run(
            &[
                ("burnout-alt", "100km..400km:100km"),
                ("periapsis-alt", "200"),
                ("apoapsis-alt", "1000"),
            ],
            ScanOptions {
                format: ScanFormat::Json,
                sensitivities: true,
                ..ScanOptions::default()
            },
        );
        let doc: serde_json::Value = serde_json::from_str(&out).unwrap();
        let rows = doc["rows"].as_array().unwrap();
        assert_eq!(rows.len() as u64, report.rows);
        assert_eq!(rows[0]["status"], "infeasible");
        assert!(rows[0]["speed_m_s"].is_null());
        assert_eq!(rows[1]["burnout_alt_m"], 200000);
        assert!(rows[2]["d_apoapsis_radius_m_d_speed_m_s"].as_f64().unwrap() > 0.0);
        assert_eq!(doc["summary"]["solved"], 3);
    }

    #[test]
    fn branch_choice_keeps_one_branch_and_marks_points_without_it() {
        let (out, report) = run(
            &[
                ("burnout-alt", "300"),
                ("apoapsis-alt", "1000"),
                ("fpa", "-2deg..2deg:2deg"),
            ],
            ScanOptions {
                branch: BranchChoice::Descending,
                ..ScanOptions::default()
            },
        );
        let rows = csv_rows(&out);
        assert_eq!(report.solved, 1);
        assert_eq!(rows[1][3], "descending");
        assert_eq!(rows[2][1], "infeasible");
        assert!(
            rows[2][2].starts_with("no solution on the descending branch"),
            "{:?}",
            rows[2]
        );
    }
}
