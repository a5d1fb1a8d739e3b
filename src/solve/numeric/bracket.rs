//! Complete root isolation along one-parameter lines of burnout states:
//! dense grids where the residual bends, every sign change refined with
//! argmin's Brent root, every sampled extremum with Brent's minimiser, and
//! acceptance scaled by the residual's own rounding (see the parent module).
//!
//! (Why this file is long: the line search, its three kinds of line and their
//! grids share the acceptance rule; splitting them would scatter one method.)

use super::*;

/// A one-parameter curve of burnout states with one scalar residual along
/// it: the single free quantity of a one-unknown system, or the flight-path
/// angle along a sheet of states that meet an orbit-element target exactly.
pub(super) trait Line {
    /// Burnout state (r, v, fpa) at parameter `y`, `None` off the curve.
    fn state(&self, y: f64) -> Option<(f64, f64, f64)>;
    /// Residual at `y`, `None` where the target does not exist.
    fn eval(&self, y: f64) -> Option<f64> {
        let (r, v, g) = self.state(y)?;
        self.residual_at(r, v, g)
    }
    /// The residual at a burnout state (r, v, fpa).
    fn residual_at(&self, r: f64, v: f64, g: f64) -> Option<f64>;
    /// Whether the speed and the angle are derived from the parameter (and
    /// carry its rounding into the residual) rather than given or equal to it.
    fn derived(&self) -> (bool, bool) {
        (true, true)
    }
    /// The scale on which the residual can change near `y` (the distance to
    /// the nearest singular end of the parameter), for finite-difference
    /// steps.
    fn scale(&self, y: f64) -> f64 {
        y.abs()
    }
}

/// Distance of a flight-path angle to 0 or to +-90 deg, whichever is nearer.
pub(super) fn fpa_scale(g: f64) -> f64 {
    g.abs().min(FRAC_PI_2 - g.abs()).max(1e-300)
}

/// Brent's root (argmin) on a [`Line`].
pub(super) struct LineCost<'a, L: Line>(&'a L);

impl<L: Line> CostFunction for LineCost<'_, L> {
    type Param = f64;
    type Output = f64;
    fn cost(&self, y: &f64) -> Result<f64, argmin::core::Error> {
        self.0
            .eval(*y)
            .ok_or_else(|| argmin::core::Error::msg("target undefined at trial state"))
    }
}

/// `sign * f`, for Brent's minimiser looking for the extremum of f nearest
/// zero between two samples (where two close roots or a double root hide).
pub(super) struct ExtremumCost<'a, L: Line>(&'a L, f64);

impl<L: Line> CostFunction for ExtremumCost<'_, L> {
    type Param = f64;
    type Output = f64;
    fn cost(&self, y: &f64) -> Result<f64, argmin::core::Error> {
        Ok(self.0.eval(*y).map(|f| self.1 * f).unwrap_or(f64::MAX))
    }
}

/// A root found along a line.
#[derive(Debug, Clone, Copy)]
pub(super) struct LineRoot {
    pub(super) y: f64,
    pub(super) residual: f64,
    pub(super) iterations: u64,
    /// Found as a touching extremum (no sign change): a double root.
    pub(super) double: bool,
}

/// Residual that a true root can show when evaluated in double precision,
/// for a residual with slope `slope` (per unit of y) at `y`: the rounding
/// of y itself (Brent stops within a few units of it) times the slope,
/// plus the evaluation's own rounding floor [`RESIDUAL_FLOOR`].
pub(super) fn acceptance(y: f64, slope: f64) -> f64 {
    RESIDUAL_FLOOR + 16.0 * f64::EPSILON * y.abs() * slope.abs()
}

/// Central-difference slope of a line's residual at `y` (only for the
/// acceptance bound; one-sided where one side is undefined).
pub(super) fn slope<L: Line>(line: &L, y: f64, f0: f64) -> f64 {
    // At least a few units in the last place of y, so the step is real.
    let h = (1e-7 * line.scale(y))
        .max(64.0 * f64::EPSILON * y.abs())
        .max(1e-300);
    derivative(line.eval(y + h), line.eval(y - h), Some(f0), h)
}

/// A finite-difference derivative from the values at x + h and x - h:
/// central where both exist, one-sided against the value at x where one
/// side is undefined, 0 where nothing is known.
pub(super) fn derivative(plus: Option<f64>, minus: Option<f64>, at: Option<f64>, h: f64) -> f64 {
    match (plus, minus, at) {
        (Some(a), Some(b), _) => (a - b) / (2.0 * h),
        (Some(a), None, Some(f0)) => (a - f0) / h,
        (None, Some(b), Some(f0)) => (f0 - b) / h,
        _ => 0.0,
    }
}

/// The residual a true root can show from the rounding of the burnout
/// state where the line computes it (a speed and angle derived from the
/// parameter, each to a few units of 1e-16 relative): each partial of the
/// residual times that rounding. The fixed inputs are exact doubles and
/// the parameter's own rounding is [`acceptance`]'s.
pub(super) fn state_noise<L: Line>(line: &L, y: f64) -> f64 {
    let Some((r, v, g)) = line.state(y) else {
        return 0.0;
    };
    let (speed, angle) = line.derived();
    let h = 1e-7;
    let f0 = line.residual_at(r, v, g);
    // Partials per relative step of the speed and of the angle.
    let dv = if speed {
        derivative(
            line.residual_at(r, v * (1.0 + h), g),
            line.residual_at(r, v * (1.0 - h), g),
            f0,
            h,
        )
        .abs()
    } else {
        0.0
    };
    let dg = if angle {
        let step = h * g.abs().max(1e-12);
        derivative(
            line.residual_at(r, v, g + step),
            line.residual_at(r, v, g - step),
            f0,
            step,
        )
        .abs()
            * (step / h)
    } else {
        0.0
    };
    8.0 * f64::EPSILON * (dv + dg)
}

/// Accepts `y` as a root when its residual is within what rounding allows
/// there: the rounding of y times the slope, the rounding of the state
/// ([`state_noise`]) and the evaluation floor. A sign change across a jump
/// (e.g. a coast time wrapping at an apsis) is not a root: its residual
/// stays of order one.
pub(super) fn accept<L: Line>(line: &L, y: f64, iterations: u64, double: bool) -> Option<LineRoot> {
    let f = line.eval(y)?;
    let allowed = acceptance(y, slope(line, y, f)) + state_noise(line, y);
    (f.abs() <= allowed).then_some(LineRoot {
        y,
        residual: f,
        iterations,
        double,
    })
}

pub(super) fn brent_root<L: Line>(line: &L, a: f64, b: f64) -> Option<LineRoot> {
    let (lo, hi) = if a < b { (a, b) } else { (b, a) };
    let solver = BrentRoot::new(lo, hi, 1e-300);
    let res = Executor::new(LineCost(line), solver)
        .configure(|s| s.param(0.5 * (lo + hi)).max_iters(300))
        .run()
        .ok()?;
    let st = res.state();
    let y = *st.get_best_param()?;
    accept(line, y, st.get_iter(), false)
}

/// From `inside` (where the residual is defined, with value `f_inside`)
/// toward `outside` (where it is not): finds the edge of definedness by
/// bisection, then probes back from it at geometrically growing distances
/// (the value at the very edge is often rounding noise, e.g. a period near
/// escape) for a point whose residual has the other sign.
pub(super) fn edge_bracket<L: Line>(
    line: &L,
    inside: f64,
    outside: f64,
    f_inside: f64,
) -> Option<(f64, f64)> {
    let (mut a, mut b) = (inside, outside);
    for _ in 0..80 {
        let m = 0.5 * (a + b);
        if line.eval(m).is_some() {
            a = m;
        } else {
            b = m;
        }
    }
    let edge = a;
    let span = edge - inside;
    (1..=14).rev().find_map(|k| {
        let x = edge - span * 10f64.powi(-k);
        line.eval(x)
            .filter(|v| v.is_finite() && v.signum() != f_inside.signum())
            .map(|v| (x, v))
    })
}

/// Every root of a line's residual over a sorted grid of parameters.
///
/// 1. Each pair of neighbouring samples whose residuals differ in sign is a
///    bracket for Brent's root; where the residual stops existing between
///    two samples the bracket is taken against the edge of existence.
/// 2. Each sampled extremum of the residual (the differences change sign)
///    that does not cross zero is refined with Brent's minimiser: if the
///    refined extremum crosses zero, two roots hide between the samples and
///    each side is bracketed; if it touches zero it is a double root.
///
/// So a root is missed only where the residual has two extrema (or a jump
/// and an extremum) between two neighbouring samples; the grids are made
/// dense where the residual can bend that fast (see [`grid_for`]).
/// Candidates are accepted by [`accept`], and merged only when they agree
/// to 1e-12 relative (a double root with a simple root within 1e-7).
pub(super) fn line_roots<L: Line>(line: &L, grid: &[f64]) -> (Vec<LineRoot>, bool) {
    let vals: Vec<Option<f64>> = grid.iter().map(|y| line.eval(*y)).collect();
    let mut found: Vec<LineRoot> = Vec::new();
    let mut flat = false;
    for k in 0..grid.len().saturating_sub(1) {
        let (lo, hi, a, b) = match (vals[k], vals[k + 1]) {
            (Some(a), Some(b)) => (grid[k], grid[k + 1], a, b),
            (Some(a), None) => match edge_bracket(line, grid[k], grid[k + 1], a) {
                Some((x, b)) => (grid[k], x, a, b),
                None => continue,
            },
            (None, Some(b)) => match edge_bracket(line, grid[k + 1], grid[k], b) {
                Some((x, a)) => (x, grid[k + 1], a, b),
                None => continue,
            },
            (None, None) => continue,
        };
        if a == 0.0 {
            found.extend(accept(line, lo, 0, false));
        } else if b != 0.0 && a.signum() != b.signum() {
            // A sign change between two samples that both lie within the
            // rounding noise of the residual is noise, not a located root.
            if a.abs() <= noise_at(line, lo) && b.abs() <= noise_at(line, hi) {
                flat = true;
                continue;
            }
            found.extend(brent_root(line, lo, hi));
        }
    }
    if let (Some(&y), Some(Some(f))) = (grid.last(), vals.last()) {
        if *f == 0.0 {
            found.extend(accept(line, y, 0, false));
        }
    }
    for k in 1..grid.len().saturating_sub(1) {
        let (Some(a), Some(b), Some(c)) = (vals[k - 1], vals[k], vals[k + 1]) else {
            continue;
        };
        let extremum = (b - a) * (c - b) < 0.0;
        let one_side = a.signum() == b.signum() && b.signum() == c.signum() && b != 0.0;
        // Only an extremum that bends toward zero can hide roots.
        if !(extremum && one_side && b.abs() < a.abs().max(c.abs())) {
            continue;
        }
        // An extremum inside the noise band is noise.
        if a.abs() <= noise_at(line, grid[k - 1]) || c.abs() <= noise_at(line, grid[k + 1]) {
            flat |= b.abs() <= noise_at(line, grid[k]);
            continue;
        }
        let sign = b.signum();
        let solver = BrentOpt::new(grid[k - 1], grid[k + 1]).set_tolerance(1e-15, 1e-300);
        let Ok(res) = Executor::new(ExtremumCost(line, sign), solver)
            .configure(|s| s.param(grid[k]).max_iters(300))
            .run()
        else {
            continue;
        };
        let st = res.state();
        let Some(&y) = st.get_best_param() else {
            continue;
        };
        let Some(f) = line.eval(y) else { continue };
        if (f < 0.0) != (sign < 0.0) {
            found.extend(brent_root(line, grid[k - 1], y));
            found.extend(brent_root(line, y, grid[k + 1]));
        } else if let Some(root) = accept(line, y, st.get_iter(), true) {
            found.push(root);
        }
    }
    found.sort_by(|a, b| a.y.total_cmp(&b.y));
    let mut out: Vec<LineRoot> = Vec::new();
    for r in found {
        if let Some(last) = out.last_mut() {
            let scale = last.y.abs().max(r.y.abs());
            let near = (r.y - last.y).abs() <= 1e-12 * scale
                || ((r.double || last.double) && (r.y - last.y).abs() <= 1e-7 * scale);
            if near {
                if r.residual.abs() < last.residual.abs() || last.double && !r.double {
                    *last = LineRoot {
                        iterations: last.iterations + r.iterations,
                        ..r
                    };
                }
                continue;
            }
        }
        out.push(r);
    }
    (out, flat)
}

/// The residual's rounding noise at `y`: the rounding of y times the slope,
/// the state's rounding, and an evaluation floor of 64 units of 1e-16 (the
/// residuals are sums of well-conditioned terms). A sign change between two
/// samples both inside this band is noise; [`accept`]'s looser
/// [`RESIDUAL_FLOOR`] only judges a refined root.
pub(super) fn noise_at<L: Line>(line: &L, y: f64) -> f64 {
    match line.eval(y) {
        Some(f) => {
            64.0 * f64::EPSILON
                + 16.0 * f64::EPSILON * y.abs() * slope(line, y, f).abs()
                + state_noise(line, y)
        }
        None => 0.0,
    }
}

/// Energy ratios Q = r v^2 / mu at which coast-time residuals bend fastest:
/// uniform in log(Q / (2 - Q)) over closed orbits (so a coast time, which
/// grows like (2 - Q)^(-3/2) toward escape, changes by a bounded factor per
/// step), clustered geometrically on both sides of Q = 1 (near-circular
/// orbits, where the apsides swing through a small flight-path angle), and
/// uniform in log(Q - 2) beyond escape.
pub(super) fn energy_ratio_grid() -> Vec<f64> {
    let mut q: Vec<f64> = Vec::new();
    // log(Q/(2-Q)) from -20 to 36: 2 - Q down to about 1e-15.
    let steps = 1120;
    q.extend((0..=steps).map(|k| {
        let w = -20.0 + 56.0 * k as f64 / steps as f64;
        2.0 / (1.0 + (-w).exp())
    }));
    for k in 0..=112 {
        let d = 10f64.powf(-1.0 - k as f64 / 8.0);
        q.push(1.0 - d);
        q.push(1.0 + d);
    }
    q.extend((0..=340).map(|k| 2.0 + 10f64.powf(-15.0 + k as f64 * 0.05)));
    q.retain(|x| x.is_finite() && *x > 0.0);
    q.sort_by(f64::total_cmp);
    q.dedup();
    q
}

/// Flight-path angles, rad: uniform over (-90, 90) deg, geometric toward 0
/// (down to 1e-14 rad: near-circular crowding) and toward +-90 deg (down to
/// 1e-9 of 90 deg: near-radial).
pub(super) fn fpa_grid() -> Vec<f64> {
    let lim = FRAC_PI_2 * (1.0 - 1e-9);
    let mut g: Vec<f64> = (0..=2048)
        .map(|k| -lim + 2.0 * lim * k as f64 / 2048.0)
        .collect();
    g.push(0.0);
    for k in 0..=104 {
        let d = 10f64.powf(-1.0 - k as f64 / 8.0);
        g.push(d);
        g.push(-d);
    }
    for k in 0..=64 {
        let d = 10f64.powf(-1.0 - k as f64 / 8.0);
        if d < FRAC_PI_2 - lim {
            break;
        }
        g.push(FRAC_PI_2 - d);
        g.push(-(FRAC_PI_2 - d));
    }
    g.retain(|x| x.abs() <= lim);
    g.sort_by(f64::total_cmp);
    g.dedup();
    g
}

/// The sample grid for the single free quantity of a one-unknown system,
/// in its natural unit (m/s, rad or m).
pub(super) fn grid_for(system: &System) -> Vec<f64> {
    let mu = system.mu;
    let mut g: Vec<f64> = match system.unknowns[0] {
        Unknown::Speed => {
            let r = system.fixed_radius_m.unwrap_or(system.r_ref);
            let v_esc = (2.0 * mu / r).sqrt();
            let (lo, hi) = (1e-4 * v_esc, 20.0 * v_esc);
            energy_ratio_grid()
                .into_iter()
                .map(|q| (q * mu / r).sqrt())
                .filter(|v| (lo..=hi).contains(v))
                .collect()
        }
        Unknown::FlightPathAngle => fpa_grid(),
        Unknown::Radius => {
            let v = system.fixed_speed_m_s.unwrap_or(f64::NAN);
            let (lo, hi) = (system.body_radius_m, system.radius_domain_max_m());
            let mut g: Vec<f64> = energy_ratio_grid()
                .into_iter()
                .map(|q| q * mu / (v * v))
                .filter(|r| (lo..=hi).contains(r))
                .collect();
            g.extend((0..=800).map(|k| lo * (hi / lo).powf(k as f64 / 800.0)));
            g
        }
    };
    g.retain(|x| x.is_finite());
    g.sort_by(f64::total_cmp);
    g.dedup();
    g
}

/// The single free quantity of a one-unknown system, as a line.
pub(super) struct FreeLine<'a> {
    pub(super) system: &'a System,
    pub(super) target: usize,
}

impl Line for FreeLine<'_> {
    fn state(&self, y: f64) -> Option<(f64, f64, f64)> {
        let s = self.system;
        let mut r = s.fixed_radius_m.unwrap_or(f64::NAN);
        let mut v = s.fixed_speed_m_s.unwrap_or(f64::NAN);
        let mut gamma = s.fixed_fpa_rad.unwrap_or(f64::NAN);
        match s.unknowns.first()? {
            Unknown::Speed => v = y,
            Unknown::FlightPathAngle => gamma = y,
            Unknown::Radius => r = y,
        }
        (r >= s.body_radius_m).then_some((r, v, gamma))
    }
    fn residual_at(&self, r: f64, v: f64, g: f64) -> Option<f64> {
        self.system.residual_of(self.target, r, v, g)
    }
    fn derived(&self) -> (bool, bool) {
        (false, false)
    }
    fn scale(&self, y: f64) -> f64 {
        match self.system.unknowns.first() {
            Some(Unknown::FlightPathAngle) => fpa_scale(y),
            _ => y.abs(),
        }
    }
}

/// The states at a fixed burnout radius whose true anomaly is fixed (by an
/// angle-to-apoapsis target, nu = 180 deg - angle), parametrised by the
/// eccentricity e in [0, 1): p = r (1 + e cos nu), horizontal speed
/// sqrt(mu p) / r, radial speed sqrt(mu / p) e sin nu.
pub(super) struct AnomalySheet<'a> {
    pub(super) system: &'a System,
    pub(super) radius_m: f64,
    pub(super) angle_to_apoapsis_rad: f64,
    pub(super) other: usize,
}

impl AnomalySheet<'_> {
    /// (e, 1 - e, p) at the parameter t, the logit of the eccentricity:
    /// e = 1/(1 + exp(-t)), 1 - e = 1/(1 + exp(t)), each to full relative
    /// precision, and p = r (1 + e cos nu) with nu = pi - angle written as
    /// (1 - e) + 2 e sin^2(angle/2), which does not cancel just past
    /// apoapsis of a near-radial ellipse. `None` off the sheet.
    fn orbit(&self, t: f64) -> Option<(f64, f64, f64)> {
        let e = 1.0 / (1.0 + (-t).exp());
        let one_minus_e = 1.0 / (1.0 + t.exp());
        let half = (0.5 * self.angle_to_apoapsis_rad).sin();
        let p = self.radius_m * (one_minus_e + 2.0 * e * half * half);
        (p > 0.0 && e > 0.0 && one_minus_e > 0.0).then_some((e, one_minus_e, p))
    }
}

impl Line for AnomalySheet<'_> {
    /// The parameter is the logit of the eccentricity, t = ln(e / (1 - e)),
    /// so that both e (near circular) and 1 - e (near radial) are carried to
    /// full relative precision: e = 1/(1 + exp(-t)), 1 - e = 1/(1 + exp(t)).
    fn state(&self, t: f64) -> Option<(f64, f64, f64)> {
        let (e, _, p) = self.orbit(t)?;
        let r = self.radius_m;
        let mu = self.system.mu;
        let v_t = (mu * p).sqrt() / r;
        let v_r = (mu / p).sqrt() * e * self.angle_to_apoapsis_rad.sin();
        Some((r, v_t.hypot(v_r), v_r.atan2(v_t)))
    }
    fn residual_at(&self, r: f64, v: f64, g: f64) -> Option<f64> {
        self.system.residual_of(self.other, r, v, g)
    }
    /// Coast times straight from (p, e, angle), which this sheet knows
    /// exactly, rather than from the rounded state: near circular the true
    /// anomaly recomputed from (v, fpa) keeps only a few digits.
    fn eval(&self, t: f64) -> Option<f64> {
        let target = self.system.targets.get(self.other)?;
        let coast = matches!(
            target.quantity,
            TargetQuantity::TimeToApoapsis | TargetQuantity::TimeToPeriapsis
        );
        if !coast {
            let (r, v, g) = self.state(t)?;
            return self.residual_at(r, v, g);
        }
        let (e, one_minus_e, p) = self.orbit(t)?;
        let a = self.angle_to_apoapsis_rad;
        let times =
            crate::physics::kepler::coast_times_on_ellipse(self.system.mu, p, e, one_minus_e, a)?;
        let got = if target.quantity == TargetQuantity::TimeToApoapsis {
            times.to_apoapsis_s?
        } else {
            times.to_periapsis_s?
        };
        let res = got / target.value - 1.0;
        res.is_finite().then_some(res)
    }
    fn derived(&self) -> (bool, bool) {
        // The residual is evaluated from (p, e, angle), not the state.
        (false, false)
    }
    fn scale(&self, t: f64) -> f64 {
        t.abs().max(1.0)
    }
}

/// Logits of the eccentricity, ln(e / (1 - e)), for e from 1e-8 (below that
/// the true anomaly recomputed from the rounded state carries more than
/// 1e-8 of error and the residual is noise) to 1 - 1e-15: uniform in the
/// logit (steps of 0.02, so e and 1 - e change by at most 2% a step) plus
/// the geometric points 10^-k of e and of 1 - e.
pub(super) fn ecc_logit_grid() -> Vec<f64> {
    let (lo, hi) = (
        (1e-8f64 / (1.0 - 1e-8)).ln(),
        ((1.0 - 1e-15f64) / 1e-15).ln(),
    );
    let steps = ((hi - lo) / 0.02).ceil() as usize;
    let mut g: Vec<f64> = (0..=steps)
        .map(|k| lo + (hi - lo) * k as f64 / steps as f64)
        .collect();
    for k in 0..=112 {
        let d = 10f64.powf(-1.0 - k as f64 / 8.0);
        let l = (d / (1.0 - d)).ln();
        g.push(l);
        g.push(-l);
    }
    g.retain(|t| (lo..=hi).contains(t));
    g.sort_by(f64::total_cmp);
    g.dedup();
    g
}

/// One sheet of the one-parameter family of burnout states that meet an
/// orbit-element target exactly: for each flight-path angle, the k-th speed
/// of [`crate::solve::invert::speed_for_target`]. The other target's residual along
/// it is a function of the angle alone.
pub(super) struct Sheet<'a> {
    pub(super) system: &'a System,
    pub(super) radius_m: f64,
    pub(super) element: &'a Target,
    pub(super) other: usize,
    pub(super) k: usize,
}

impl Sheet<'_> {
    /// The energy ratio of the sheet's state at `gamma` from the element
    /// itself, where that is more exact than from the rounded speed (near
    /// escape 2 - Q is the small difference the coast times hang on):
    /// - energy targets: 2 - Q = r/a, Q - 1 = (a - r)/a;
    /// - apsis radius R: with d- = (R - r) + 2 r sin^2(g/2) and d+ = R + r cos g,
    ///   2 - Q = 2 r ((R - r) + r sin^2 g) / (d- d+), Q - 1 = ((R - r)^2 - r^2 sin^2 g) / (d- d+);
    /// - eccentricity: Q - 1 = +-D with D = sqrt(e^2 - sin^2 g)/cos g, and
    ///   2 - Q = (1 - e^2) / (cos^2 g (1 + D)) on the + sheet.
    fn energy(&self, gamma: f64, v: f64) -> EnergyRatio {
        use TargetQuantity as Q;
        let (mu, r, x) = (self.system.mu, self.radius_m, self.element.value);
        let from_inv_a = |inv_a: f64| {
            let two_minus_q = r * inv_a;
            let q_minus_1 = if inv_a > 0.0 {
                (1.0 / inv_a - r) * inv_a
            } else {
                1.0 - two_minus_q
            };
            EnergyRatio {
                q: 2.0 - two_minus_q,
                q_minus_1,
                two_minus_q,
            }
        };
        let (s, c) = gamma.sin_cos();
        match self.element.quantity {
            Q::Sma => from_inv_a(1.0 / x),
            Q::Period => {
                let n = 2.0 * PI / x;
                from_inv_a((n * n / mu).cbrt())
            }
            Q::C3 => from_inv_a(-x / mu),
            Q::SpecificEnergy => from_inv_a(-2.0 * x / mu),
            Q::PeriapsisRadius | Q::ApoapsisRadius => {
                // Each factor in the form that does not cancel: near
                // horizontal from (R - r), near vertical from the small
                // cos g, 1 - sin g = 2 sin^2(pi/4 - g/2), 1 + sin g likewise.
                let steep = s * s > 0.5;
                let half = (0.5 * gamma).sin();
                let d_minus = if steep {
                    x - r * c
                } else {
                    (x - r) + 2.0 * r * half * half
                };
                let d_plus = x + r * c;
                let den = d_minus * d_plus;
                let x_minus_r_c2 = if steep {
                    x - r * c * c
                } else {
                    (x - r) + r * s * s
                };
                let q4 = std::f64::consts::FRAC_PI_4;
                let one_minus_s = 2.0 * (q4 - 0.5 * gamma).sin().powi(2);
                let one_plus_s = 2.0 * (q4 + 0.5 * gamma).sin().powi(2);
                let two_minus_q = 2.0 * r * x_minus_r_c2 / den;
                EnergyRatio {
                    q: 2.0 - two_minus_q,
                    q_minus_1: (x - r * one_plus_s) * (x - r * one_minus_s) / den,
                    two_minus_q,
                }
            }
            _ => {
                let er = EnergyRatio::new(mu, r, v);
                if self.element.quantity == Q::Ecc && x < 1.0 && er.q_minus_1 > 0.0 {
                    // The + sheet of an ellipse: 2 - Q without cancellation.
                    let d = er.q_minus_1;
                    EnergyRatio {
                        two_minus_q: (1.0 - x) * (1.0 + x) / (c * c * (1.0 + d)),
                        ..er
                    }
                } else {
                    er
                }
            }
        }
    }
}

impl Line for Sheet<'_> {
    fn state(&self, gamma: f64) -> Option<(f64, f64, f64)> {
        let speeds = crate::solve::invert::speed_for_target(
            self.system.mu,
            self.radius_m,
            gamma,
            self.element,
        )
        .ok()?;
        let v = speeds.get(self.k)?.speed_m_s;
        Some((self.radius_m, v, gamma))
    }
    fn eval(&self, gamma: f64) -> Option<f64> {
        let (r, v, g) = self.state(gamma)?;
        let energy = self.energy(g, v);
        if !(energy.q.is_finite() && energy.two_minus_q.is_finite()) {
            return self.residual_at(r, v, g);
        }
        self.system.residual_with(self.other, r, g, energy)
    }
    fn derived(&self) -> (bool, bool) {
        // The energy comes from the element itself except on eccentricity
        // sheets, where it follows the rounded speed.
        (self.element.quantity == TargetQuantity::Ecc, false)
    }
    fn scale(&self, gamma: f64) -> f64 {
        fpa_scale(gamma)
    }
    fn residual_at(&self, r: f64, v: f64, g: f64) -> Option<f64> {
        self.system.residual_of(self.other, r, v, g)
    }
}

/// Roots of a line as burnout states, with their iteration counts and
/// whether part of the line was within rounding noise of zero (roots there
/// cannot be located in double precision).
pub(super) fn roots_as_states<L: Line>(
    line: &L,
    grid: &[f64],
) -> (Vec<(f64, f64, f64)>, u64, bool) {
    let (roots, flat) = line_roots(line, grid);
    let iterations = roots.iter().map(|r| r.iterations).sum();
    (
        roots.iter().filter_map(|r| line.state(r.y)).collect(),
        iterations,
        flat,
    )
}

/// With the burnout radius fixed, speed and angle free, an orbit-element
/// target `element` and another target `other`: every root, bracketed over
/// the flight-path angle on each sheet of states that meet the element
/// exactly.
pub(super) fn sheet_roots(
    system: &System,
    element: usize,
    other: usize,
) -> (Vec<(f64, f64, f64)>, u64, bool) {
    let Some(r) = system.fixed_radius_m else {
        return (Vec::new(), 0, false);
    };
    let grid = fpa_grid();
    let mut out = Vec::new();
    let mut iterations = 0;
    let mut flat = false;
    for k in 0..2 {
        let sheet = Sheet {
            system,
            radius_m: r,
            element: &system.targets[element],
            other,
            k,
        };
        let (states, it, f) = roots_as_states(&sheet, &grid);
        out.extend(states);
        iterations += it;
        flat |= f;
    }
    (out, iterations, flat)
}
