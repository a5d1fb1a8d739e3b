//! A scan's plan: the swept inputs as axes, the fixed inputs as a problem
//! template, and the per-point road from grid values to a [`Problem`]
//! (written into the template without re-reading text where a setter exists).

use super::point::Point;
use crate::columns::given_name;
use crate::error::Error;
use crate::error::ErrorClass;
use crate::input::keys::solve_input_kind;
use crate::input::problem::{problem_from_inputs, solve_inputs, Inputs};
use crate::input::range::{is_range, out_unit, parse_range, si_unit_text, Grid, MAX_POINTS};
use crate::input::units::Kind;
use crate::solve::feasibility::check_state;
use crate::solve::problem::{Problem, Solved};

/// Order in which swept inputs become axes: the first is the x-axis of the
/// plot and the direction along which extremes are refined.
fn axis_rank(key: &str) -> usize {
    crate::input::keys::find(key)
        .and_then(|k| k.axis_rank)
        .map_or(usize::MAX, usize::from)
}

/// How a swept value is put into a [`Problem`] without re-reading text.
#[derive(Debug, Clone, Copy, PartialEq)]
pub(crate) enum Setter {
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
    pub(crate) setter: Setter,
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
    // Every result column counts: a scan's columns do not depend on its
    // output options.
    given_name(&name, true, true)
}

/// A scan ready to run: its axes and the fixed inputs.
#[derive(Debug, Clone)]
pub struct Plan {
    pub(crate) axes: Vec<Axis>,
    pub(crate) base: Inputs,
    pub(crate) template: Option<Problem>,
    /// Whether points may take the allocation-free closed form.
    pub(crate) lean: bool,
    pub(crate) total: usize,
    strides: Vec<usize>,
    /// Whether a launch site is among the inputs (decided once).
    pub(crate) site: bool,
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
                || crate::input::keys::target_keys().any(|(t, _, _)| t.key == k)
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
    pub(crate) fn apply(&self, p: &mut Problem, si: &[f64]) -> bool {
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
                return crate::solve(p).map_err(|e| self.name_flags(e, si));
            }
        }
        solve_inputs(&self.inputs_at(si))
    }

    /// The error with its mentions named by the flags of this point's
    /// inputs (as [`crate::input::problem::name_flags`]).
    fn name_flags(&self, e: Error, si: &[f64]) -> Error {
        crate::input::problem::name_flags(e, &self.inputs_at(si))
    }

    /// Solves a point for its rows: the allocation-free closed form when the
    /// problem is a plain pair, else [`Plan::solve_si`].
    pub(crate) fn solve_point_fast(
        &self,
        si: &[f64],
        scratch: &mut Option<Problem>,
    ) -> Result<Point, Error> {
        if self.lean {
            if let Some(p) = scratch.as_mut() {
                if self.apply(p, si) {
                    if let (Some(r), [a, b]) = (p.burnout_radius_m, p.targets.as_slice()) {
                        let lean = crate::solve::fast_pair::solve_pair(&p.body, a, b, r)
                            .map_err(|e| self.name_flags(e, si))?;
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
                            surface_radius_m: p.body.radius_m,
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
            let Some((_, q, is_alt)) = crate::input::keys::target_keys().find(|t| t.0.key == key)
            else {
                return Setter::Text;
            };
            match p.targets.iter().position(|x| x.quantity == q) {
                Some(index) => Setter::Target { index, is_alt },
                None => Setter::Text,
            }
        }
    }
}
