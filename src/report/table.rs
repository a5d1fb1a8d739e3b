//! Human-readable tables.

use crate::error::g;
use crate::input::units::{FT_M, NMI_M};
use crate::solve::problem::Solved;
use std::io::Write;

/// Units for human output.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Default)]
pub enum DisplayUnits {
    /// km, km/s, deg.
    #[default]
    Si,
    /// nmi, ft/s, deg.
    Us,
}

impl DisplayUnits {
    /// Length unit name and metres per unit.
    pub fn length(self) -> (&'static str, f64) {
        match self {
            DisplayUnits::Si => ("km", 1e3),
            DisplayUnits::Us => ("nmi", NMI_M),
        }
    }
    /// Speed unit name and m/s per unit.
    pub fn speed(self) -> (&'static str, f64) {
        match self {
            DisplayUnits::Si => ("km/s", 1e3),
            DisplayUnits::Us => ("ft/s", FT_M),
        }
    }
    /// Small speed step used for error coefficients, its label and m/s.
    fn speed_step(self) -> (&'static str, f64) {
        match self {
            DisplayUnits::Si => ("+1 m/s", 1.0),
            DisplayUnits::Us => ("+1 ft/s", FT_M),
        }
    }
    fn alt_step(self) -> (&'static str, f64) {
        match self {
            DisplayUnits::Si => ("+1 km alt", 1e3),
            DisplayUnits::Us => ("+1 nmi alt", NMI_M),
        }
    }
}

fn fixed(x: f64, decimals: usize) -> String {
    format!("{x:.decimals$}")
}

fn duration(t_s: f64) -> String {
    if t_s >= 86_400.0 * 2.0 {
        format!("{} d ({} s)", fixed(t_s / 86_400.0, 4), fixed(t_s, 1))
    } else if t_s >= 7_200.0 {
        format!("{} h ({} s)", fixed(t_s / 3600.0, 4), fixed(t_s, 1))
    } else {
        format!("{} min ({} s)", fixed(t_s / 60.0, 3), fixed(t_s, 2))
    }
}

/// Writes the human-readable report.
///
/// # Errors
/// I/O errors of `out`.
pub fn write(out: &mut impl Write, solved: &Solved, units: DisplayUnits) -> std::io::Result<()> {
    let c = Ctx::new(solved, units);
    write_burnout(out, &c)?;
    write_states(out, &c)?;
    write_site(out, &c)?;
    write_orbits(out, &c)?;
    write_flight(out, &c)?;
    write_coefficients(out, &c)?;
    // The same warnings as the machine output, worded for people: lengths
    // in the table's unit to about the metre.
    let warnings = solved.warning_texts(|w| w.describe(units.length()));
    if !warnings.is_empty() {
        writeln!(out)?;
        writeln!(out, "warnings:")?;
        for w in warnings {
            writeln!(out, "  - {w}")?;
        }
    }
    writeln!(out)?;
    writeln!(out, "{}", super::CAUTION)?;
    Ok(())
}

/// What every part of the table shares: the answer and its display units.
struct Ctx<'a> {
    solved: &'a Solved,
    units: DisplayUnits,
    lu: &'static str,
    lf: f64,
    su: &'static str,
    sf: f64,
    body: &'a crate::physics::body::Body,
    mu: f64,
    shared: Option<f64>,
}

impl<'a> Ctx<'a> {
    fn new(solved: &'a Solved, units: DisplayUnits) -> Ctx<'a> {
        let (lu, lf) = units.length();
        let (su, sf) = units.speed();
        Ctx {
            solved,
            units,
            lu,
            lf,
            su,
            sf,
            body: &solved.body,
            mu: solved.body.mu_m3_s2,
            shared: solved.shared_burnout_radius_m(),
        }
    }

    /// Decimals of a speed in the display unit.
    fn speed_decimals(&self) -> usize {
        if self.units == DisplayUnits::Us {
            2
        } else {
            6
        }
    }
}

/// The burnout point and how the answer was found.
fn write_burnout(out: &mut impl Write, c: &Ctx) -> std::io::Result<()> {
    let (lu, lf, su, sf, body, solved) = (c.lu, c.lf, c.su, c.sf, c.body, c.solved);
    if let Some(r) = c.shared {
        writeln!(
            out,
            "burnout over {}: altitude {} {lu} (radius {} {lu})",
            body.name,
            fixed((r - body.radius_m) / lf, 3),
            fixed(r / lf, 3)
        )?;
        writeln!(
            out,
            "  circular speed {} {su}, escape speed {} {su} at burnout radius",
            fixed(body.circular_speed_m_s(r) / sf, 4),
            fixed(body.escape_speed_m_s(r) / sf, 4)
        )?;
    } else {
        writeln!(
            out,
            "burnout over {}: the burnout altitude was solved for; each solution has its own (column 'alt {lu}')",
            body.name
        )?;
    }
    writeln!(
        out,
        "  answered by: {} ({})",
        solved.solver.method, solved.solver.termination
    )?;
    if solved.solver.method != "closed-form" {
        writeln!(out, "  iterations: {}", solved.solver.iterations)?;
    }
    for (k, v) in &solved.solver.residuals {
        if solved.solver.method != "closed-form" {
            writeln!(out, "  residual {k}: {}", g(*v))?;
        }
    }
    Ok(())
}

/// One line per solution: branch, (altitude), speed, angles.
fn write_states(out: &mut impl Write, c: &Ctx) -> std::io::Result<()> {
    let (lu, lf, su, sf, body, solved, shared) =
        (c.lu, c.lf, c.su, c.sf, c.body, c.solved, c.shared);
    writeln!(out)?;
    let alt_column = |r: f64| {
        if shared.is_none() {
            format!(" {:>13}", fixed((r - body.radius_m) / lf, 3))
        } else {
            String::new()
        }
    };
    writeln!(
        out,
        "{:<11}{} {:>13} {:>12} {:>12} {:>16}",
        "branch",
        if shared.is_none() {
            format!(" {:>13}", format!("alt {lu}"))
        } else {
            String::new()
        },
        format!("speed {su}"),
        "fpa deg",
        "zenith deg",
        "true anom. deg"
    )?;
    for s in &solved.solutions {
        let st = &s.state;
        writeln!(
            out,
            "{:<11}{} {:>13} {:>12} {:>12} {:>16}",
            st.branch.name(),
            alt_column(st.radius_m),
            fixed(st.speed_m_s / sf, c.speed_decimals()),
            fixed(st.flight_path_angle_rad.to_degrees(), 6),
            fixed(90.0 - st.flight_path_angle_rad.to_degrees(), 6),
            fixed(st.true_anomaly_rad.to_degrees(), 4)
        )?;
    }
    Ok(())
}

/// The launch-site geometry of each solution, when a site was given.
fn write_site(out: &mut impl Write, c: &Ctx) -> std::io::Result<()> {
    let (su, sf, solved) = (c.su, c.sf, c.solved);
    if solved.solutions.iter().any(|s| s.site.is_some()) {
        writeln!(out)?;
        writeln!(
            out,
            "{:<22} {:>10} {:>11} {:>11} {:>11} {:>9} {:>13} {:>8} {:>9} {:>12}",
            "from site",
            "launch az",
            "burnout lat",
            "burnout lon",
            "inertial az",
            "incl deg",
            format!("rel speed {su}"),
            "rel fpa",
            "rel az",
            format!("surface {su}")
        )?;
        for s in &solved.solutions {
            if let Some(x) = &s.site {
                writeln!(
                    out,
                    "{:<22} {:>10} {:>11} {:>11} {:>11} {:>9} {:>13} {:>8} {:>9} {:>12}",
                    format!(
                        "{} {}",
                        crate::physics::site::plane_label(x.launch_azimuth_rad),
                        s.state.branch.name()
                    ),
                    fixed(x.launch_azimuth_rad.to_degrees(), 4),
                    fixed(x.burnout_latitude_rad.to_degrees(), 4),
                    fixed(x.burnout_longitude_rad.to_degrees(), 4),
                    fixed(x.inertial_azimuth_rad.to_degrees(), 4),
                    fixed(x.inclination_rad.to_degrees(), 4),
                    fixed(x.relative_speed_m_s / sf, c.speed_decimals()),
                    fixed(x.relative_flight_path_angle_rad.to_degrees(), 4),
                    fixed(x.relative_azimuth_rad.to_degrees(), 4),
                    fixed(x.rotation_speed_m_s / sf, 4)
                )?;
            }
        }
        writeln!(
            out,
            "  angles in deg; burnout latitude is geocentric; 'surface' is the eastward speed of the rotating surface at each burnout point"
        )?;
    }
    Ok(())
}

/// The orbit (one per distinct orbit among the solutions).
fn write_orbits(out: &mut impl Write, c: &Ctx) -> std::io::Result<()> {
    let (lu, lf, body, solved, mu, c_units) = (c.lu, c.lf, c.body, c.solved, c.mu, c.units);
    let distinct_orbits = solved
        .solutions
        .windows(2)
        .any(|w| w[0].state.conic != w[1].state.conic);
    let orbits: Vec<_> = if distinct_orbits {
        solved.solutions.iter().collect()
    } else {
        solved.solutions.iter().take(1).collect()
    };
    for (i, s) in orbits.iter().enumerate() {
        let c = &s.state.conic;
        writeln!(out)?;
        if distinct_orbits {
            writeln!(
                out,
                "orbit of solution {} ({}):",
                i + 1,
                s.state.branch.name()
            )?;
        } else {
            writeln!(out, "orbit:")?;
        }
        let alt = |x: f64| {
            format!(
                "{} {lu} alt ({} {lu} radius)",
                fixed((x - body.radius_m) / lf, 3),
                fixed(x / lf, 3)
            )
        };
        writeln!(out, "  periapsis        {}", alt(c.periapsis_radius_m()))?;
        match c.apoapsis_radius_m() {
            Some(ra) => writeln!(out, "  apoapsis         {}", alt(ra))?,
            None => writeln!(out, "  apoapsis         none (open orbit)")?,
        }
        match c.sma_m() {
            Some(a) => writeln!(out, "  semi-major axis  {} {lu}", fixed(a / lf, 3))?,
            None => writeln!(out, "  semi-major axis  infinite (parabola)")?,
        }
        writeln!(out, "  eccentricity     {}", fixed(c.ecc(), 9))?;
        match c.period_s(mu) {
            Some(t) => writeln!(out, "  period           {}", duration(t))?,
            None => writeln!(out, "  period           none (open orbit)")?,
        }
        // Energies per unit mass and angular momentum in the table's units:
        // km2/s2 and km2/s, or ft2/s2 and ft2/s with --units us.
        let (e_unit, e_scale, h_unit, h_scale) = match c_units {
            DisplayUnits::Si => ("km2/s2", 1e6, "km2/s", 1e6),
            DisplayUnits::Us => ("ft2/s2", FT_M * FT_M, "ft2/s", FT_M * FT_M),
        };
        let energy = |x: f64| match c_units {
            DisplayUnits::Si => fixed(x / e_scale, 6),
            DisplayUnits::Us => super::sig5(x / e_scale, 1e6),
        };
        writeln!(
            out,
            "  specific energy  {} {e_unit}",
            energy(c.specific_energy_j_kg(mu))
        )?;
        writeln!(
            out,
            "  C3               {} {e_unit}",
            energy(c.c3_m2_s2(mu))
        )?;
        writeln!(
            out,
            "  angular momentum {} {h_unit}",
            match c_units {
                DisplayUnits::Si => fixed(c.angular_momentum_m2_s(mu) / h_scale, 3),
                DisplayUnits::Us => super::sig5(c.angular_momentum_m2_s(mu) / h_scale, 1e6),
            }
        )?;
    }
    Ok(())
}

/// The numbers a flight plan needs, per solution.
fn write_flight(out: &mut impl Write, c: &Ctx) -> std::io::Result<()> {
    let (lu, lf, su, sf, solved) = (c.lu, c.lf, c.su, c.sf, c.solved);
    let above = solved.problem.above_alt_m;
    for s in &solved.solutions {
        let f = crate::solve::flight::flight_numbers(c.body, &s.state, above);
        writeln!(out)?;
        writeln!(out, "flight plan ({}):", s.state.branch.name())?;
        let speed = |v: f64| format!("{} {su}", fixed(v / sf, 4));
        match (f.to_apoapsis_s, f.apoapsis_speed_m_s) {
            (Some(t), Some(v)) => writeln!(
                out,
                "  to apoapsis      {} (speed there {})",
                duration(t),
                speed(v)
            )?,
            _ if s.state.conic.apoapsis_radius_m().is_none() => {}
            _ => writeln!(
                out,
                "  to apoapsis      not reached (the path meets the surface first)"
            )?,
        }
        match (f.to_periapsis_s, f.periapsis_speed_m_s) {
            (Some(t), Some(v)) => writeln!(
                out,
                "  to periapsis     {} (speed there {})",
                duration(t),
                speed(v)
            )?,
            (None, Some(v)) => writeln!(
                out,
                "  to periapsis     past it (outbound); periapsis speed {}",
                speed(v)
            )?,
            _ => writeln!(
                out,
                "  to periapsis     not reached (periapsis is under the surface)"
            )?,
        }
        if let (Some(vinf), Some(ang)) = (f.v_infinity_m_s, f.asymptote_angle_rad) {
            writeln!(
                out,
                "  v-infinity       {} ; outgoing asymptote {} deg of travel from burnout",
                speed(vinf),
                fixed(ang.to_degrees(), 4)
            )?;
        }
        if let Some(i) = f.impact {
            let mut range = format!(
                "{} deg downrange ({} {lu} over the surface",
                fixed(i.downrange_rad.to_degrees(), 4),
                fixed(i.ground_range_m / lf, 3)
            );
            if let (Some(site), Some(_)) = (solved.problem.site, s.site) {
                range.push_str(&format!(
                    ", {} {lu} from the site",
                    fixed(
                        (site.downrange_rad + i.downrange_rad) * c.body.radius_m / lf,
                        3
                    )
                ));
            }
            range.push(')');
            writeln!(
                out,
                "  impact           {} after burnout at {}, flight-path angle {} deg, {range}",
                duration(i.time_s),
                speed(i.speed_m_s),
                fixed(i.flight_path_angle_rad.to_degrees(), 4)
            )?;
        }
        if let (Some(alt), Some(t)) = (above, f.time_above_s) {
            writeln!(
                out,
                "  above {} {lu}{}  {}",
                fixed(alt / lf, 3),
                if f.impact.is_some() {
                    ""
                } else {
                    " (per revolution)"
                },
                duration(t)
            )?;
        }
    }
    Ok(())
}

/// The change of each orbit quantity per typical burnout error.
fn write_coefficients(out: &mut impl Write, c: &Ctx) -> std::io::Result<()> {
    use crate::solve::sensitivity::{
        exact_responses, is_near_circular, orbit_rows, REFERENCE_STEPS,
    };
    let (lu, lf, su, sf, solved, units) = (c.lu, c.lf, c.su, c.sf, c.solved, c.units);
    let (vs_label, vs) = units.speed_step();
    let (alt_label, alt_step) = units.alt_step();
    let steps = [vs, REFERENCE_STEPS[1], alt_step];
    for s in &solved.solutions {
        let st = &s.state;
        let resp = exact_responses(c.mu, st, steps);
        let nominal = orbit_rows(c.mu, st.radius_m, st.speed_m_s, st.flight_path_angle_rad)
            .unwrap_or([None; 5]);
        writeln!(out)?;
        writeln!(
            out,
            "error coefficients ({}, {} {su}): exact change of the orbit for each burnout error alone",
            st.branch.name(),
            fixed(st.speed_m_s / sf, 4)
        )?;
        writeln!(
            out,
            "  {:<16} {:>14} {:>14} {:>14} {:>14}",
            "", vs_label, "+0.1 deg fpa", "-0.1 deg fpa", alt_label
        )?;
        let names = [
            format!("periapsis {lu}"),
            format!("apoapsis {lu}"),
            format!("sma {lu}"),
            "ecc".to_string(),
            "period s".to_string(),
        ];
        for i in 0..5 {
            if s.sensitivity.rows[i].is_none() {
                writeln!(
                    out,
                    "  {:<16} {:>14} {:>14} {:>14} {:>14}",
                    names[i], "-", "-", "-", "-"
                )?;
                continue;
            }
            let scale = if i < 3 { 1.0 / lf } else { 1.0 };
            // A change within the rounding of the quantity itself is 0.
            let floor = 8.0 * f64::EPSILON * nominal[i].map_or(0.0, f64::abs);
            let cell = |d: Option<f64>| match d {
                Some(d) if d.abs() <= floor => "0".to_string(),
                Some(d) => super::sig5(d * scale, 1e6),
                None => "-".to_string(),
            };
            writeln!(
                out,
                "  {:<16} {:>14} {:>14} {:>14} {:>14}",
                names[i],
                cell(resp.plus[0][i]),
                cell(resp.plus[1][i]),
                cell(resp.minus[1][i]),
                cell(resp.plus[2][i])
            )?;
        }
        if is_near_circular(st, &resp) {
            writeln!(
                out,
                "  near-circular orbit (ecc {}): periapsis and apoapsis move with the size of a flight-path angle error, not its sign; their partials in fpa are not a linear coefficient here, and a linear budget understates them",
                super::sig5(st.conic.ecc(), 1e6)
            )?;
        }
    }
    Ok(())
}
