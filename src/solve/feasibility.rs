//! Feasibility warnings for a solved burnout state: checks that do not stop
//! the answer but that an analyst must see.

use crate::error::{g, Error};
use crate::physics::body::Body;
use crate::physics::orbit::Conic;
use crate::physics::state::{Branch, BurnoutState};
use crate::solve::target::{Target, TargetQuantity};
use std::f64::consts::PI;

/// A warning about a solved state.
#[derive(Debug, Clone, PartialEq)]
#[non_exhaustive]
pub enum Warning {
    /// Periapsis is below the surface: the trajectory is suborbital and meets
    /// the surface after burnout.
    Suborbital {
        /// Branch of the state warned about.
        branch: &'static str,
        /// Periapsis radius, m.
        periapsis_radius_m: f64,
        /// Surface radius, m.
        surface_radius_m: f64,
        /// True anomaly where the trajectory meets the surface, rad.
        impact_true_anomaly_rad: f64,
        /// Angle travelled from burnout to the surface, rad.
        downrange_rad: f64,
    },
    /// Periapsis is below the surface, but burnout is outbound on an open
    /// orbit (parabola or hyperbola): the radius only grows from burnout on,
    /// the periapsis is behind the vehicle and the trajectory never meets
    /// the surface. Not an impact, and not suborbital.
    PeriapsisBelowSurfaceNotReached {
        /// Branch of the state warned about.
        branch: &'static str,
        /// Periapsis radius, m.
        periapsis_radius_m: f64,
        /// Surface radius, m.
        surface_radius_m: f64,
    },
    /// Periapsis is above the surface but below the lowest safe altitude.
    LowPeriapsis {
        /// Periapsis altitude, m.
        periapsis_alt_m: f64,
        /// The limit, m.
        min_alt_m: f64,
    },
    /// The roots were found by a least-squares search from starting points,
    /// which is not proven to find every root.
    SearchNotExhaustive {
        /// How many starting points were tried.
        starts: usize,
    },
    /// Somewhere along the search the residual was within its own rounding
    /// noise of zero: roots there cannot be located in double precision.
    IllConditioned,
}

impl std::fmt::Display for Warning {
    fn fmt(&self, f: &mut std::fmt::Formatter<'_>) -> std::fmt::Result {
        match self {
            Warning::Suborbital {
                branch,
                periapsis_radius_m,
                surface_radius_m,
                impact_true_anomaly_rad,
                downrange_rad,
            } => write!(
                f,
                "suborbital ({branch}): periapsis radius {} m is below the surface radius {} m; the trajectory meets the surface at true anomaly {} deg, {} deg ({} km along the surface) downrange of burnout",
                g(*periapsis_radius_m),
                g(*surface_radius_m),
                g(impact_true_anomaly_rad.to_degrees()),
                g(downrange_rad.to_degrees()),
                g(downrange_rad * surface_radius_m / 1e3)
            ),
            Warning::PeriapsisBelowSurfaceNotReached {
                branch,
                periapsis_radius_m,
                surface_radius_m,
            } => write!(
                f,
                "periapsis below the surface, not reached ({branch}): periapsis radius {} m is below the surface radius {} m, but burnout is outbound on an open orbit, which only climbs from burnout on: the trajectory does not meet the surface",
                g(*periapsis_radius_m),
                g(*surface_radius_m)
            ),
            Warning::LowPeriapsis {
                periapsis_alt_m,
                min_alt_m,
            } => write!(
                f,
                "periapsis altitude {} m is below the minimum safe periapsis altitude {} m",
                g(*periapsis_alt_m),
                g(*min_alt_m)
            ),
            Warning::IllConditioned => write!(
                f,
                "ill-conditioned: over part of the search the target is met to within double-precision rounding, so roots there cannot be located and may be missing"
            ),
            Warning::SearchNotExhaustive { starts } => write!(
                f,
                "roots found by least squares from {starts} starting points: the search is not proven exhaustive, another burnout state may also meet the targets"
            ),
        }
    }
}

impl Warning {
    /// The warning for people: lengths in `length` = (unit name, metres per
    /// unit), e.g. `("km", 1e3)` or `("nmi", 1852.0)`, to about the metre,
    /// angles to 1e-4 deg. (`Display`, used in machine output, keeps every
    /// number to ten significant digits in SI.)
    pub fn describe(&self, length: (&str, f64)) -> String {
        let (lu, lf) = length;
        let len = |m: f64| {
            let decimals = (3.0 - (lf / 1e3).log10()).round().clamp(0.0, 6.0) as usize;
            format!("{:.decimals$} {lu}", m / lf)
        };
        let deg = |rad: f64| format!("{:.4} deg", rad.to_degrees());
        match self {
            Warning::Suborbital {
                branch,
                periapsis_radius_m,
                surface_radius_m,
                impact_true_anomaly_rad,
                downrange_rad,
            } => format!(
                "suborbital ({branch}): periapsis radius {} is below the surface radius {}; the trajectory meets the surface at true anomaly {}, {} ({} along the surface) downrange of burnout",
                len(*periapsis_radius_m),
                len(*surface_radius_m),
                deg(*impact_true_anomaly_rad),
                deg(*downrange_rad),
                len(downrange_rad * surface_radius_m)
            ),
            Warning::PeriapsisBelowSurfaceNotReached {
                branch,
                periapsis_radius_m,
                surface_radius_m,
            } => format!(
                "periapsis below the surface, not reached ({branch}): periapsis radius {} is below the surface radius {}, but burnout is outbound on an open orbit, which only climbs from burnout on: the trajectory does not meet the surface",
                len(*periapsis_radius_m),
                len(*surface_radius_m)
            ),
            Warning::LowPeriapsis {
                periapsis_alt_m,
                min_alt_m,
            } => format!(
                "periapsis altitude {} is below the minimum safe periapsis altitude {}",
                len(*periapsis_alt_m),
                len(*min_alt_m)
            ),
            other => other.to_string(),
        }
    }
}

/// Where a trajectory first meets the surface after burnout.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct SurfaceCrossing {
    /// True anomaly at the crossing, rad in [0, 2 pi).
    pub true_anomaly_rad: f64,
    /// Angle travelled from burnout to the crossing, rad (0 or more).
    pub downrange_rad: f64,
}

/// Half-width nu_s of the arc of a conic below the surface radius `rs`
/// (r(nu) < rs for |nu| < nu_s), rad in [0, pi], for a periapsis below `rs`.
///
/// From the conic equation r = p / (1 + e cos nu) = rs, in the half-angle
/// form tan^2(nu_s/2) = (1 - cos nu_s) / (1 + cos nu_s), with
/// 1 - cos nu_s = (1 + e)(rs - rp) / (e rs) and
/// 1 + cos nu_s = (p - (1 - e) rs) / (e rs). On an ellipse (p, 1 - e and
/// 1 + e from the apsides) this is ra (rs - rp) / (rp (ra - rs)); on an open
/// conic, with e - 1 = -rp/a, (1 + e)(rs - rp) / ((1 + e) rp - rs rp / a).
/// Both are ratios of non-negative terms: no acos, which would lose half
/// its digits for a periapsis just under the surface (nu_s near 0) and for
/// an apoapsis just over it (nu_s near pi).
fn below_surface_half_arc_rad(conic: &Conic, rs: f64) -> f64 {
    let rp = conic.periapsis_radius_m();
    let (num, den) = match conic.apoapsis_radius_m() {
        Some(ra) => (ra * (rs - rp), rp * (ra - rs)),
        None => {
            let one_plus_e = 1.0 + conic.ecc();
            (
                one_plus_e * (rs - rp),
                one_plus_e * rp - rs * rp * conic.inv_sma_per_m(),
            )
        }
    };
    if den > 0.0 {
        2.0 * (num / den).sqrt().atan()
    } else {
        // The whole ellipse lies at or under the surface (apoapsis at it).
        PI
    }
}

/// Where the path from burnout first meets the surface of radius
/// `surface_radius_m`, or `None` when it never does.
///
/// After burnout the true anomaly grows. With nu_s the half-width of the
/// arc below the surface (`below_surface_half_arc_rad`), the path meets
/// the surface at the first nu after burnout with r(nu) = rs, which is
/// always nu = 2 pi - nu_s (on the way down to periapsis): an ellipse gets
/// there from either branch (climbing, over apoapsis, then down); an open
/// orbit (|nu| < acos(-1/e)) only when burnout is inbound (descending), since
/// an outbound open orbit climbs for ever and never reaches its periapsis.
pub fn surface_crossing(surface_radius_m: f64, state: &BurnoutState) -> Option<SurfaceCrossing> {
    let conic = &state.conic;
    let rs = surface_radius_m;
    let rp = conic.periapsis_radius_m();
    if rp >= rs || rp.is_nan() {
        return None;
    }
    if conic.apoapsis_radius_m().is_none() && state.branch == Branch::Ascending {
        return None;
    }
    let nu_impact = 2.0 * PI - below_surface_half_arc_rad(conic, rs);
    Some(SurfaceCrossing {
        true_anomaly_rad: nu_impact,
        downrange_rad: (nu_impact - state.true_anomaly_rad).max(0.0),
    })
}

/// Checks one solved state against the body's surface and a minimum safe
/// periapsis altitude (m above the surface; `None` for no check).
///
/// A periapsis under the surface is [`Warning::Suborbital`] when the path
/// from burnout meets the surface ([`surface_crossing`]), and
/// [`Warning::PeriapsisBelowSurfaceNotReached`] on an outbound open orbit,
/// which never comes back down.
pub fn check_state(
    body: &Body,
    state: &BurnoutState,
    min_periapsis_alt_m: Option<f64>,
) -> Vec<Warning> {
    let mut out = Vec::new();
    let rp = state.conic.periapsis_radius_m();
    let rs = body.radius_m;
    if rp < rs {
        out.push(match surface_crossing(rs, state) {
            Some(x) => Warning::Suborbital {
                branch: state.branch.name(),
                periapsis_radius_m: rp,
                surface_radius_m: rs,
                impact_true_anomaly_rad: x.true_anomaly_rad,
                downrange_rad: x.downrange_rad,
            },
            None => Warning::PeriapsisBelowSurfaceNotReached {
                branch: state.branch.name(),
                periapsis_radius_m: rp,
                surface_radius_m: rs,
            },
        });
    } else if let Some(min_alt) = min_periapsis_alt_m {
        if rp - rs < min_alt {
            out.push(Warning::LowPeriapsis {
                periapsis_alt_m: rp - rs,
                min_alt_m: min_alt,
            });
        }
    }
    out
}

/// The apsis a coast target aims at.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum CoastEvent {
    /// Time or angle to apoapsis.
    Apoapsis,
    /// Time to periapsis.
    Periapsis,
}

impl CoastEvent {
    /// The event a target quantity aims at; `None` for an orbit element.
    pub fn of(q: TargetQuantity) -> Option<CoastEvent> {
        match q {
            TargetQuantity::TimeToApoapsis | TargetQuantity::AngleToApoapsis => {
                Some(CoastEvent::Apoapsis)
            }
            TargetQuantity::TimeToPeriapsis => Some(CoastEvent::Periapsis),
            _ => None,
        }
    }

    /// Lower-case name for messages.
    pub fn name(self) -> &'static str {
        match self {
            CoastEvent::Apoapsis => "apoapsis",
            CoastEvent::Periapsis => "periapsis",
        }
    }

    /// Angle from a burnout at true anomaly `nu_rad` to the next such
    /// apsis, rad in [0, 2 pi) (0 at the apsis itself).
    pub fn angle_from_rad(self, nu_rad: f64) -> f64 {
        let at = match self {
            CoastEvent::Apoapsis => PI,
            CoastEvent::Periapsis => 0.0,
        };
        (at - nu_rad).rem_euclid(2.0 * PI)
    }
}

/// A state whose path meets the surface before an apsis a coast target aims
/// at: it is not a solution for that target.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct SurfaceFirst {
    /// The apsis targeted.
    pub event: CoastEvent,
    /// Where the path meets the surface.
    pub crossing: SurfaceCrossing,
    /// Angle from burnout to the apsis, rad.
    pub event_downrange_rad: f64,
}

/// The first coast target among `targets` whose apsis the path from `state`
/// only reaches after meeting the surface of radius `surface_radius_m`.
pub fn surface_before_event(
    surface_radius_m: f64,
    targets: &[Target],
    state: &BurnoutState,
) -> Option<SurfaceFirst> {
    let events = targets.iter().filter_map(|t| CoastEvent::of(t.quantity));
    let mut events = events.peekable();
    events.peek()?;
    let crossing = surface_crossing(surface_radius_m, state)?;
    events.find_map(|event| {
        let to_event = event.angle_from_rad(state.true_anomaly_rad);
        (crossing.downrange_rad < to_event).then_some(SurfaceFirst {
            event,
            crossing,
            event_downrange_rad: to_event,
        })
    })
}

/// The indices of `states` whose paths reach every apsis a coast target of
/// `targets` aims at before they meet the surface ([`surface_before_event`]).
///
/// # Errors
/// [`Error::Infeasible`] when `states` is not empty and every one meets the
/// surface first; the message says where each does.
pub fn reaching_coast_events(
    body: &Body,
    targets: &[Target],
    states: &[BurnoutState],
) -> Result<Vec<usize>, Error> {
    let mut kept = Vec::with_capacity(states.len());
    let mut dropped = Vec::new();
    for (i, st) in states.iter().enumerate() {
        match surface_before_event(body.radius_m, targets, st) {
            None => kept.push(i),
            Some(why) => dropped.push((st, why)),
        }
    }
    if !kept.is_empty() || dropped.is_empty() {
        return Ok(kept);
    }
    let first = dropped[0].1.event;
    let lead = if dropped.iter().all(|(_, w)| w.event == first) {
        first.name()
    } else {
        "the targeted apsis"
    };
    let each: Vec<String> = dropped
        .iter()
        .map(|(st, w)| {
            let d = w.crossing.downrange_rad;
            format!(
                "the {} solution (speed {} m/s, flight-path angle {} deg, periapsis radius {} m) meets the surface {} deg ({} km along the surface) downrange of burnout, {} is {} deg downrange",
                st.branch.name(),
                g(st.speed_m_s),
                g(st.flight_path_angle_rad.to_degrees()),
                g(st.conic.periapsis_radius_m()),
                g(d.to_degrees()),
                g(d * body.radius_m / 1e3),
                w.event.name(),
                g(w.event_downrange_rad.to_degrees())
            )
        })
        .collect();
    Err(Error::Infeasible(format!(
        "every solution meets the surface before {lead} (surface radius {} m): {}",
        g(body.radius_m),
        each.join("; ")
    )))
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::physics::state::forward_state;
    use approx::assert_relative_eq;

    #[test]
    fn sounding_shot_meets_surface_symmetrically() {
        // Burnout at the surface, ascending: by symmetry of the conic the
        // impact true anomaly is 360 deg minus the burnout true anomaly.
        let earth = Body::from_name("earth").unwrap();
        let st = forward_state(earth.mu_m3_s2, earth.radius_m, 2000.0, 0.8).unwrap();
        let w = check_state(&earth, &st, None);
        match &w[0] {
            Warning::Suborbital {
                impact_true_anomaly_rad,
                ..
            } => assert_relative_eq!(
                *impact_true_anomaly_rad,
                2.0 * PI - st.true_anomaly_rad,
                max_relative = 1e-9
            ),
            other => panic!("unexpected {other:?}"),
        }
    }

    #[test]
    fn outbound_open_orbit_under_the_surface_never_meets_it() {
        // 11.5 km/s at 60 deg from 250 km: C3 = v^2 - 2 mu / r > 0
        // (vis-viva), climbing, periapsis 1775 km from the centre.
        let earth = Body::from_name("earth").unwrap();
        let r = earth.radius_m + 250e3;
        let st = forward_state(earth.mu_m3_s2, r, 11_500.0, 60f64.to_radians()).unwrap();
        assert!(st.conic.apoapsis_radius_m().is_none());
        assert!(st.conic.periapsis_radius_m() < earth.radius_m);
        assert_eq!(surface_crossing(earth.radius_m, &st), None);
        let w = check_state(&earth, &st, Some(150e3));
        assert!(
            matches!(
                w.as_slice(),
                [Warning::PeriapsisBelowSurfaceNotReached {
                    branch: "ascending",
                    ..
                }]
            ),
            "{w:?}"
        );
        // Inbound on the same conic (mirror image): it does come down.
        let st = forward_state(earth.mu_m3_s2, r, 11_500.0, -60f64.to_radians()).unwrap();
        let x = surface_crossing(earth.radius_m, &st).unwrap();
        // The conic equation at the crossing gives the surface radius, and
        // the crossing lies inside the asymptotes |nu| < acos(-1/e).
        assert_relative_eq!(
            st.conic.radius_at_m(x.true_anomaly_rad),
            earth.radius_m,
            max_relative = 1e-12
        );
        let nu_signed = x.true_anomaly_rad - 2.0 * PI;
        assert!(nu_signed > -(-1.0 / st.conic.ecc()).acos());
        assert_relative_eq!(
            x.downrange_rad,
            x.true_anomaly_rad - st.true_anomaly_rad,
            max_relative = 1e-15
        );
    }

    #[test]
    fn grazing_periapsis_keeps_the_digits_of_the_short_arc() {
        // Periapsis 1 micrometre under the surface: the arc below it is
        // tiny. Independent form: 1 - cos nu_s = 2 sin^2(nu_s / 2)
        // = (1 + e)(R - rp) / (e R) (the conic equation at r = R), solved
        // with asin, well conditioned for a small argument.
        let rs = 6_378_137.0;
        let rp = rs - 1e-6;
        let c = Conic::from_apsides(rp, rs + 800e3).unwrap();
        let e = c.ecc();
        let want = 2.0 * ((0.5 * (1.0 + e) * (rs - rp) / (e * rs)).sqrt()).asin();
        let got = below_surface_half_arc_rad(&c, rs);
        assert_relative_eq!(got, want, max_relative = 1e-9);
        // The same conic, open: e just above 1 from 1/a < 0.
        let open = Conic::open_from_periapsis_inv_sma(rp, -1e-9).unwrap();
        let e = open.ecc();
        let want = 2.0 * ((0.5 * (1.0 + e) * (rs - rp) / (e * rs)).sqrt()).asin();
        assert_relative_eq!(
            below_surface_half_arc_rad(&open, rs),
            want,
            max_relative = 1e-9
        );
    }

    #[test]
    fn coast_roots_meeting_the_surface_before_their_apsis_are_dropped() {
        use crate::solve::target::Target;
        let earth = Body::from_name("earth").unwrap();
        let (mu, r) = (earth.mu_m3_s2, earth.radius_m + 220e3);
        // The shipped coast case's two roots (6277 m/s at -26.85 deg has its
        // periapsis 4165 km under the surface; 8031 m/s at 1.20 deg reaches
        // apoapsis well above it), and a suborbital climb at 39.5 deg, which
        // reaches apoapsis before it comes down.
        let down = forward_state(mu, r, 6_277.069, -26.849f64.to_radians()).unwrap();
        let up = forward_state(mu, r, 8_031.113, 1.1988f64.to_radians()).unwrap();
        let lob = forward_state(mu, r, 5_335.091, 39.5238f64.to_radians()).unwrap();
        assert!(surface_crossing(earth.radius_m, &lob).is_some());
        let states = [down, up, lob];
        let apo = [Target::new(TargetQuantity::TimeToApoapsis, 2700.0)];
        assert_eq!(
            reaching_coast_events(&earth, &apo, &states).unwrap(),
            [1, 2]
        );
        // The descending root meets the surface 3.69 deg downrange, long
        // before apoapsis, 3 pi - nu away (through periapsis and up again).
        let why = surface_before_event(earth.radius_m, &apo, &down).unwrap();
        assert_eq!(why.event, CoastEvent::Apoapsis);
        assert_relative_eq!(
            why.event_downrange_rad,
            3.0 * PI - down.true_anomaly_rad,
            max_relative = 1e-15
        );
        assert!(why.crossing.downrange_rad < 4f64.to_radians());
        // To periapsis, the climb meets the surface first too.
        let peri = [Target::new(TargetQuantity::TimeToPeriapsis, 2700.0)];
        assert_eq!(reaching_coast_events(&earth, &peri, &states).unwrap(), [1]);
        // Orbit elements alone: nothing is dropped.
        let elements = [Target::new(TargetQuantity::ApoapsisRadius, r + 980e3)];
        assert_eq!(
            reaching_coast_events(&earth, &elements, &states).unwrap(),
            [0, 1, 2]
        );
        // None left: infeasible, saying where.
        let e = reaching_coast_events(&earth, &apo, &[down]).unwrap_err();
        assert_eq!(e.class(), crate::error::ErrorClass::Infeasible);
        let text = e.to_string();
        assert!(
            text.starts_with("every solution meets the surface before apoapsis"),
            "{text}"
        );
        assert!(reaching_coast_events(&earth, &apo, &[]).unwrap().is_empty());
    }

    #[test]
    fn low_periapsis_is_flagged() {
        let earth = Body::from_name("earth").unwrap();
        let r = earth.radius_m + 120e3;
        let st = forward_state(earth.mu_m3_s2, r, (earth.mu_m3_s2 / r).sqrt(), 0.0).unwrap();
        let w = check_state(&earth, &st, Some(150e3));
        assert!(matches!(w[0], Warning::LowPeriapsis { .. }));
        assert!(check_state(&earth, &st, Some(100e3)).is_empty());
    }
}
