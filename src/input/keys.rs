//! The one input vocabulary: every named input of `solve`, `scan`, `batch`
//! and `budget`, with its flag, the kind of its value, its case-file
//! section and key, its human name, its override group and its help text.
//!
//! Flags (`--KEY`), case files (`[SECTION] CASE_KEY = ...`), batch columns
//! (`KEY`), scan axes and human-readable labels are all read off [`KEYS`];
//! adding a target quantity is one row here plus its physics in
//! [`crate::solve::target`].

use crate::input::units::Kind;
use crate::solve::target::TargetQuantity;

/// What an input is for.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum Role {
    /// The central body (catalog name or custom mu and radius).
    Body,
    /// Where and how burnout happens (radius, angle, speed).
    Burnout,
    /// A target quantity; `altitude` when measured from the surface.
    Target {
        /// The quantity targeted.
        quantity: TargetQuantity,
        /// Whether the value is an altitude (the body radius is added).
        altitude: bool,
    },
    /// Launch-site geometry (and the inclination target that needs it).
    Site,
    /// A solve option (the periapsis-safety threshold).
    Option,
    /// An error-budget input (read by `budget` only).
    Budget,
}

/// One named input.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub struct Key {
    /// The key: the flag without dashes, the batch column name.
    pub key: &'static str,
    /// The flag, `--KEY`.
    pub flag: &'static str,
    /// Kind of its value (`None`: a name, not a number).
    pub kind: Option<Kind>,
    /// What it is for.
    pub role: Role,
    /// Case-file section and the key inside it.
    pub case: (&'static str, &'static str),
    /// Human name, for summaries and plot labels.
    pub human: &'static str,
    /// Keys giving the same quantity share a group: a flag beside a case
    /// replaces the case's value of every key in its group.
    pub group: Option<&'static str>,
    /// Order as a scan axis (lower first: the first axis is the figure's x
    /// axis and the direction of refinement); `None` after all others.
    pub axis_rank: Option<u8>,
    /// One-line help for the flag.
    pub help: &'static str,
}

macro_rules! key {
    ($key:literal, $kind:expr, $role:expr, $case:expr, $human:expr, $group:expr, $rank:expr, $help:expr) => {
        Key {
            key: $key,
            flag: concat!("--", $key),
            kind: $kind,
            role: $role,
            case: $case,
            human: $human,
            group: $group,
            axis_rank: $rank,
            help: $help,
        }
    };
}

const fn target(quantity: TargetQuantity, altitude: bool) -> Role {
    Role::Target { quantity, altitude }
}

use Kind as K;
use TargetQuantity as Q;

/// Every named input, in the order of the command-line help.
pub const KEYS: &[Key] = &[
    key!("body", None, Role::Body, ("body", "name"), "body", Some("body"), None,
        "Central body: earth, moon, mars, venus, mercury, jupiter, sun [default: earth]."),
    key!("mu", Some(K::Mu), Role::Body, ("body", "mu"), "gravitational parameter", Some("body"), Some(30),
        "Custom body's gravitational parameter (bare: km3/s2); needs --radius."),
    key!("radius", Some(K::Length), Role::Body, ("body", "radius"), "body radius", Some("body"), Some(31),
        "Custom body's surface radius (bare: km); goes with --mu."),
    key!("burnout-alt", Some(K::Length), Role::Burnout, ("burnout", "alt"), "burnout altitude", Some("burnout-point"), Some(0),
        "Burnout altitude above the body's equatorial radius (bare: km)."),
    key!("burnout-radius", Some(K::Length), Role::Burnout, ("burnout", "radius"), "burnout radius", Some("burnout-point"), Some(1),
        "Burnout radius from the body's centre (bare: km)."),
    key!("periapsis-alt", Some(K::Length), target(Q::PeriapsisRadius, true), ("target", "periapsis-alt"), "periapsis altitude", Some("periapsis"), Some(5),
        "Target periapsis altitude (bare: km)."),
    key!("periapsis-radius", Some(K::Length), target(Q::PeriapsisRadius, false), ("target", "periapsis-radius"), "periapsis radius", Some("periapsis"), Some(6),
        "Target periapsis radius (bare: km)."),
    key!("apoapsis-alt", Some(K::Length), target(Q::ApoapsisRadius, true), ("target", "apoapsis-alt"), "apoapsis altitude", Some("apoapsis"), Some(7),
        "Target apoapsis altitude (bare: km)."),
    key!("apoapsis-radius", Some(K::Length), target(Q::ApoapsisRadius, false), ("target", "apoapsis-radius"), "apoapsis radius", Some("apoapsis"), Some(8),
        "Target apoapsis radius (bare: km)."),
    key!("sma", Some(K::Length), target(Q::Sma, false), ("target", "sma"), "semi-major axis", None, Some(9),
        "Target semi-major axis (bare: km; negative for a hyperbola)."),
    key!("ecc", Some(K::Ratio), target(Q::Ecc, false), ("target", "ecc"), "eccentricity", None, Some(10),
        "Target eccentricity."),
    key!("period", Some(K::Time), target(Q::Period, false), ("target", "period"), "period", None, Some(11),
        "Target period (bare: s; s, min, h, d)."),
    key!("c3", Some(K::C3), target(Q::C3, false), ("target", "c3"), "C3", None, Some(12),
        "Target C3 = v_inf^2 (bare: km2/s2; negative for a closed orbit)."),
    key!("semi-latus-rectum", Some(K::Length), target(Q::SemiLatusRectum, false), ("target", "semi-latus-rectum"), "semi latus rectum", None, Some(13),
        "Target semi-latus rectum (bare: km)."),
    key!("time-to-apoapsis", Some(K::Time), target(Q::TimeToApoapsis, false), ("target", "time-to-apoapsis"), "time to apoapsis", None, Some(14),
        "Target time of flight from burnout to apoapsis (bare: s)."),
    key!("time-to-periapsis", Some(K::Time), target(Q::TimeToPeriapsis, false), ("target", "time-to-periapsis"), "time to periapsis", None, Some(15),
        "Target time of flight from burnout to periapsis (bare: s)."),
    key!("angle-to-apoapsis", Some(K::Angle), target(Q::AngleToApoapsis, false), ("target", "angle-to-apoapsis"), "angle to apoapsis", None, Some(16),
        "Target angle travelled from burnout to apoapsis (bare: deg)."),
    key!("fpa", Some(K::Angle), Role::Burnout, ("burnout", "fpa"), "flight-path angle", Some("direction"), Some(2),
        "Burnout flight-path angle above the local horizontal (bare: deg)."),
    key!("zenith", Some(K::Angle), Role::Burnout, ("burnout", "zenith"), "zenith angle", Some("direction"), Some(3),
        "Burnout zenith angle from the local vertical (bare: deg); fpa = 90 deg - zenith."),
    key!("speed", Some(K::Speed), Role::Burnout, ("burnout", "speed"), "burnout speed", None, Some(4),
        "Burnout speed, inertial (bare: km/s)."),
    key!("latitude", Some(K::Angle), Role::Site, ("site", "latitude"), "latitude", None, None,
        "Launch-site geodetic latitude (bare: deg)."),
    key!("longitude", Some(K::Angle), Role::Site, ("site", "longitude"), "longitude", None, None,
        "Launch-site longitude, east positive (bare: deg)."),
    key!("azimuth", Some(K::Angle), Role::Site, ("site", "azimuth"), "azimuth", None, None,
        "Launch azimuth at the site, from north through east, as flown over the rotating surface (bare: deg)."),
    key!("downrange", Some(K::AngleOrLength), Role::Site, ("site", "downrange"), "downrange", None, None,
        "Great-circle arc from the site to the burnout subpoint: an angle (bare: deg) or a surface length (km, nmi, ...)."),
    key!("inclination", Some(K::Angle), Role::Site, ("target", "inclination"), "inclination", None, None,
        "Target inclination (bare: deg); needs a site."),
    key!("min-periapsis-alt", Some(K::Length), Role::Option, ("options", "min-periapsis-alt"), "minimum periapsis altitude", None, Some(29),
        "Lowest periapsis altitude considered safe (bare: km) [default: earth 150 km, common practice]."),
    key!("above-alt", Some(K::Length), Role::Option, ("options", "above-alt"), "timing altitude", None, None,
        "Altitude above which the flight is timed (bare: km): time above it, for a sounding shot the experiment window."),
    key!("speed-sigma", Some(K::Speed), Role::Budget, ("budget", "speed-sigma"), "speed sigma", None, None,
        "1-sigma burnout speed error (bare: km/s)."),
    key!("fpa-sigma", Some(K::Angle), Role::Budget, ("budget", "fpa-sigma"), "fpa sigma", None, None,
        "1-sigma flight-path angle error (bare: deg)."),
    key!("alt-sigma", Some(K::Length), Role::Budget, ("budget", "alt-sigma"), "alt sigma", None, None,
        "1-sigma burnout altitude error (bare: km)."),
    key!("speed-fpa-corr", Some(K::Ratio), Role::Budget, ("budget", "speed-fpa-corr"), "speed fpa corr", None, None,
        "Correlation of speed and flight-path angle errors, -1..1."),
    key!("speed-alt-corr", Some(K::Ratio), Role::Budget, ("budget", "speed-alt-corr"), "speed alt corr", None, None,
        "Correlation of speed and altitude errors, -1..1."),
    key!("fpa-alt-corr", Some(K::Ratio), Role::Budget, ("budget", "fpa-alt-corr"), "fpa alt corr", None, None,
        "Correlation of flight-path angle and altitude errors, -1..1."),
    key!("periapsis-tol", Some(K::Length), Role::Budget, ("budget", "periapsis-tol"), "periapsis tol", None, None,
        "Allowed periapsis error, +/- (bare: km)."),
    key!("apoapsis-tol", Some(K::Length), Role::Budget, ("budget", "apoapsis-tol"), "apoapsis tol", None, None,
        "Allowed apoapsis error, +/- (bare: km)."),
    key!("sma-tol", Some(K::Length), Role::Budget, ("budget", "sma-tol"), "sma tol", None, None,
        "Allowed semi-major axis error, +/- (bare: km)."),
    key!("ecc-tol", Some(K::Ratio), Role::Budget, ("budget", "ecc-tol"), "ecc tol", None, None,
        "Allowed eccentricity error, +/-."),
    key!("period-tol", Some(K::Time), Role::Budget, ("budget", "period-tol"), "period tol", None, None,
        "Allowed period error, +/- (bare: s)."),
];

/// The entry of `key`, if it is a named input.
pub fn find(key: &str) -> Option<&'static Key> {
    KEYS.iter().find(|k| k.key == key)
}

/// The numeric inputs of a solve (not the body name, not the budget).
pub fn solve_keys() -> impl Iterator<Item = &'static Key> {
    KEYS.iter()
        .filter(|k| k.kind.is_some() && k.role != Role::Budget)
}

/// The target keys, with their quantity and whether they are altitudes.
pub fn target_keys() -> impl Iterator<Item = (&'static Key, TargetQuantity, bool)> {
    KEYS.iter().filter_map(|k| match k.role {
        Role::Target { quantity, altitude } => Some((k, quantity, altitude)),
        _ => None,
    })
}

/// The error-budget keys.
pub fn budget_keys() -> impl Iterator<Item = &'static Key> {
    KEYS.iter().filter(|k| k.role == Role::Budget)
}

/// Kind of the value of `key`, if it is a numeric input (budget included).
pub fn kind_of(key: &str) -> Option<Kind> {
    find(key).and_then(|k| k.kind)
}

/// Kind of a solve input's value (the numeric keys of `solve`; not the
/// error-budget keys, which `solve` does not read).
pub fn solve_input_kind(key: &str) -> Option<Kind> {
    find(key)
        .filter(|k| k.role != Role::Budget)
        .and_then(|k| k.kind)
}

/// Human name of an input, for summaries and plot labels.
pub fn human_name(key: &str) -> String {
    match find(key) {
        Some(k) => k.human.to_string(),
        None => key.replace('-', " "),
    }
}

/// The input key a case-file `[section] case_key` gives, if any.
pub fn from_case(section: &str, case_key: &str) -> Option<&'static Key> {
    KEYS.iter()
        .find(|k| k.case.0 == section && k.case.1 == case_key)
}

/// Whether `section` is a case-file section.
pub fn is_case_section(section: &str) -> bool {
    KEYS.iter().any(|k| k.case.0 == section)
}

/// The keys that give the same quantity as `key` (itself included).
pub fn override_group(key: &str) -> Vec<&'static str> {
    match find(key).and_then(|k| k.group) {
        Some(g) => KEYS
            .iter()
            .filter(|k| k.group == Some(g))
            .map(|k| k.key)
            .collect(),
        None => vec![],
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn keys_are_unique_and_case_keys_map_back() {
        for (i, k) in KEYS.iter().enumerate() {
            assert!(KEYS[..i].iter().all(|o| o.key != k.key), "{} twice", k.key);
            assert_eq!(from_case(k.case.0, k.case.1).map(|f| f.key), Some(k.key));
        }
    }

    #[test]
    fn every_target_quantity_has_a_key_and_altitudes_pair_with_radii() {
        for (k, q, alt) in target_keys() {
            assert!(k.kind.is_some(), "{} ({q:?}) has no kind", k.key);
            if alt {
                let twin = k.key.replace("-alt", "-radius");
                assert_eq!(override_group(k.key), vec![k.key, twin.as_str()]);
            }
        }
        assert_eq!(target_keys().count(), 12);
    }

    #[test]
    fn axis_ranks_put_the_burnout_point_first() {
        assert_eq!(find("burnout-alt").unwrap().axis_rank, Some(0));
        let mut ranks: Vec<u8> = KEYS.iter().filter_map(|k| k.axis_rank).collect();
        let n = ranks.len();
        ranks.sort();
        ranks.dedup();
        assert_eq!(ranks.len(), n, "axis ranks repeat");
    }
}
