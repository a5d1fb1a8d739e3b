//! Turning named text inputs (command-line flags, case-file keys, batch CSV
//! columns) into a [`Problem`]. Pure: no I/O.
//!
//! Keys are the solve flags without their dashes: `body`, `mu`, `radius`,
//! `burnout-alt`, `burnout-radius`, `periapsis-alt`, ..., `fpa`, `zenith`,
//! `speed`, `min-periapsis-alt`.

use crate::error::Error;
use crate::input::units::{parse_si, Kind};
use crate::physics::body::Body;
use crate::solve::problem::Problem;
use crate::solve::target::Target;
use std::collections::BTreeMap;

/// Named text inputs, keyed by flag name without dashes.
pub type Inputs = BTreeMap<String, String>;

/// The launch site given in the inputs, if any (`latitude` present).
///
/// # Errors
/// Unparseable values; site keys without `--latitude`; out-of-range angles.
pub fn site_from_inputs(
    inputs: &Inputs,
    body: &Body,
) -> Result<Option<crate::physics::site::SiteInputs>, Error> {
    let lat = num(inputs, "latitude", Kind::Angle)?;
    let others = ["longitude", "azimuth", "downrange", "inclination"];
    let Some(lat) = lat else {
        if let Some(k) = others.iter().find(|k| get(inputs, k).is_some()) {
            return Err(Error::Usage(format!(
                "--{k} needs a launch site: give --latitude (geodetic) and --longitude"
            )));
        }
        return Ok(None);
    };
    let downrange_rad = match get(inputs, "downrange") {
        None => 0.0,
        Some(text) => {
            let p = crate::input::units::parse("--downrange", text, Kind::AngleOrLength)?;
            if p.kind == Kind::Length {
                p.si / body.radius_m
            } else {
                p.si
            }
        }
    };
    let site = crate::physics::site::SiteInputs {
        latitude_geodetic_rad: lat,
        longitude_rad: num(inputs, "longitude", Kind::Angle)?.unwrap_or(0.0),
        azimuth_rad: num(inputs, "azimuth", Kind::Angle)?,
        downrange_rad,
        inclination_rad: num(inputs, "inclination", Kind::Angle)?,
    };
    crate::physics::site::validate(&site).map_err(|e| {
        let key = match &e {
            Error::OutOfRange {
                quantity: "latitude",
                ..
            } => "latitude",
            Error::OutOfRange {
                quantity: "inclination",
                ..
            } => "inclination",
            _ => "downrange",
        };
        let kind = if key == "downrange" {
            Kind::AngleOrLength
        } else {
            Kind::Angle
        };
        about_flag(inputs, key, kind, e)
    })?;
    Ok(Some(site))
}

/// Builds and solves the problem the inputs describe, with its launch site
/// when one is given: the one entry point for `solve`, `scan` and `batch`.
///
/// # Errors
/// Any input or solve error.
pub fn solve_inputs(inputs: &Inputs) -> Result<crate::solve::problem::Solved, Error> {
    let solved =
        crate::solve::solve(&problem_from_inputs(inputs)?).map_err(|e| name_flags(e, inputs))?;
    solved.check_finite()?;
    Ok(solved)
}

/// The error with every input it mentions named by the flag the user
/// typed (see [`crate::error::mention`]): a target quantity by the flag
/// given for it, or the first flag for it in the table when none was (a
/// suggestion); any other input by its flag.
pub fn name_flags(e: Error, inputs: &Inputs) -> Error {
    e.with_names(&|id| flag_for(inputs, id))
}

fn flag_for(inputs: &Inputs, id: &str) -> Option<String> {
    if id == "c3-of-speed" {
        return Some("the c3 of --speed".into());
    }
    let mut first = None;
    for (k, q, _) in crate::input::keys::target_keys() {
        if q.key() == id {
            if get(inputs, k.key).is_some() {
                return Some(k.flag.to_string());
            }
            first.get_or_insert(k.flag);
        }
    }
    first
        .or_else(|| crate::input::keys::find(id).map(|k| k.flag))
        .map(str::to_string)
}

/// Burnout errors and orbit tolerances given in the inputs, if any.
///
/// # Errors
/// Unparseable values ([`Error::InvalidValue`] naming the flag); negative
/// sigmas or non-positive tolerances.
pub fn budget_from_inputs(
    inputs: &Inputs,
) -> Result<
    (
        Option<crate::solve::budget::BurnoutErrors>,
        Option<crate::solve::budget::Tolerances>,
    ),
    Error,
> {
    let mut v = std::collections::HashMap::new();
    for k in crate::input::keys::budget_keys() {
        let (key, kind) = (&k.key, k.kind.unwrap_or(Kind::Ratio));
        if let Some(x) = num(inputs, key, kind)? {
            let bad = match *key {
                k if k.ends_with("-corr") => !(-1.0..=1.0).contains(&x),
                k if k.ends_with("-tol") => x <= 0.0,
                _ => x < 0.0,
            };
            if bad {
                return Err(Error::InvalidValue {
                    flag: format!("--{key}"),
                    text: get(inputs, key).unwrap_or("").to_string(),
                    kind: kind.name(),
                    reason: if key.ends_with("-corr") {
                        "a correlation must be between -1 and 1".into()
                    } else if key.ends_with("-tol") {
                        "a tolerance must be positive".into()
                    } else {
                        "a 1-sigma error must be 0 or more".into()
                    },
                });
            }
            v.insert(*key, x);
        }
    }
    let any_sigma = ["speed-sigma", "fpa-sigma", "alt-sigma"]
        .iter()
        .any(|k| v.contains_key(k));
    let errors = any_sigma.then(|| crate::solve::budget::BurnoutErrors {
        speed_sigma_m_s: v.get("speed-sigma").copied().unwrap_or(0.0),
        fpa_sigma_rad: v.get("fpa-sigma").copied().unwrap_or(0.0),
        radius_sigma_m: v.get("alt-sigma").copied().unwrap_or(0.0),
        correlations: [
            v.get("speed-fpa-corr").copied().unwrap_or(0.0),
            v.get("speed-alt-corr").copied().unwrap_or(0.0),
            v.get("fpa-alt-corr").copied().unwrap_or(0.0),
        ],
    });
    for (corr, a, b) in [
        ("speed-fpa-corr", "speed-sigma", "fpa-sigma"),
        ("speed-alt-corr", "speed-sigma", "alt-sigma"),
        ("fpa-alt-corr", "fpa-sigma", "alt-sigma"),
    ] {
        if v.contains_key(corr) && !(v.contains_key(a) && v.contains_key(b)) {
            return Err(Error::Usage(format!(
                "--{corr} correlates two burnout errors: give --{a} and --{b} with it"
            )));
        }
    }
    if let Some(e) = &errors {
        if let Err(Error::Infeasible(msg)) = e.covariance() {
            return Err(Error::Usage(format!(
                "--speed-fpa-corr, --speed-alt-corr and --fpa-alt-corr together are invalid: {msg}"
            )));
        }
    }
    let tol_keys = [
        "periapsis-tol",
        "apoapsis-tol",
        "sma-tol",
        "ecc-tol",
        "period-tol",
    ];
    let tolerances =
        tol_keys
            .iter()
            .any(|k| v.contains_key(k))
            .then(|| crate::solve::budget::Tolerances {
                rows: tol_keys.map(|k| v.get(k).copied()),
            });
    Ok((errors, tolerances))
}

pub use crate::input::keys::kind_of;

fn get<'a>(inputs: &'a Inputs, key: &str) -> Option<&'a str> {
    inputs
        .get(key)
        .map(|s| s.as_str())
        .filter(|s| !s.trim().is_empty())
}

/// Re-states a range error as an error about the flag and the user's text.
fn about_flag(inputs: &Inputs, key: &str, kind: Kind, e: Error) -> Error {
    match e {
        Error::InvalidValue { .. } => e,
        other => Error::InvalidValue {
            flag: format!("--{key}"),
            text: get(inputs, key).unwrap_or("").to_string(),
            kind: kind.name(),
            reason: other.to_string(),
        },
    }
}

fn num(inputs: &Inputs, key: &str, kind: Kind) -> Result<Option<f64>, Error> {
    get(inputs, key)
        .map(|text| parse_si(&format!("--{key}"), text, kind))
        .transpose()
}

/// The body named by the inputs (`body`, or `mu` with `radius`).
///
/// # Errors
/// Unknown body; `mu` without `radius` or beside `body`; bad values.
pub fn body_from_inputs(inputs: &Inputs) -> Result<Body, Error> {
    let mu = num(inputs, "mu", Kind::Mu)?;
    let radius = num(inputs, "radius", Kind::Length)?;
    match (get(inputs, "body"), mu, radius) {
        (Some(_), Some(_), _) => Err(Error::Usage(
            "--body and --mu both name the central body: give one (--mu goes with --radius)".into(),
        )),
        (_, Some(mu), Some(radius)) => Body::custom(mu, radius).map_err(|e| match e {
            // The core names the quantity; the message names the flag too.
            Error::NotPositive {
                quantity,
                value,
                unit,
            } => Error::NotPositive {
                quantity: match quantity {
                    "gravitational parameter" => "gravitational parameter --mu",
                    _ => "body radius --radius",
                },
                value,
                unit,
            },
            Error::NotFinite { quantity, value } => Error::NotFinite {
                quantity: match quantity {
                    "gravitational parameter" => "gravitational parameter --mu",
                    _ => "body radius --radius",
                },
                value,
            },
            other => other,
        }),
        (_, Some(_), None) => Err(Error::Usage(
            "--mu needs --radius (the body's surface radius)".into(),
        )),
        (Some(_), None, Some(_)) => Err(Error::Usage(
            "--radius sets a custom body's surface and goes with --mu, not --body".into(),
        )),
        (None, None, Some(_)) => Err(Error::Usage(
            "--radius needs --mu (the body's gravitational parameter)".into(),
        )),
        (Some(name), None, None) => Body::from_name(name).map_err(|e| name_flags(e, inputs)),
        (None, None, None) => Body::from_name("earth"),
    }
}

/// Builds a [`Problem`] from named text inputs.
///
/// # Errors
/// [`Error::InvalidValue`] for unparseable values (naming the flag and the
/// text); [`Error::Usage`] for missing or conflicting inputs.
pub fn problem_from_inputs(inputs: &Inputs) -> Result<Problem, Error> {
    let body = body_from_inputs(inputs)?;
    let positive_radius = |key: &str, r: f64| -> Result<f64, Error> {
        crate::error::positive("burnout radius", r, "m")
            .map_err(|e| about_flag(inputs, key, Kind::Length, e))
    };
    let burnout_radius_m = match (
        num(inputs, "burnout-alt", Kind::Length)?,
        num(inputs, "burnout-radius", Kind::Length)?,
    ) {
        (Some(alt), None) => Some(positive_radius("burnout-alt", body.radius_m + alt)?),
        (None, Some(r)) => Some(positive_radius("burnout-radius", r)?),
        (Some(_), Some(_)) => {
            return Err(Error::Usage(
                "--burnout-alt and --burnout-radius both give the burnout point: give one".into(),
            ))
        }
        (None, None) => None,
    };
    let mut targets = Vec::new();
    for (k, quantity, is_alt) in crate::input::keys::target_keys() {
        let kind = k.kind.unwrap_or(Kind::Ratio);
        if let Some(v) = num(inputs, k.key, kind)? {
            let value = if is_alt { body.radius_m + v } else { v };
            let target = Target::new(quantity, value);
            target
                .validate()
                .map_err(|e| about_flag(inputs, k.key, kind, e))?;
            targets.push(target);
        }
    }
    let flight_path_angle_rad = match (
        num(inputs, "fpa", Kind::Angle)?,
        num(inputs, "zenith", Kind::Angle)?,
    ) {
        (Some(_), Some(_)) => return Err(Error::Usage(
            "--fpa and --zenith both give the burnout direction: give one (fpa = 90 deg - zenith)"
                .into(),
        )),
        (Some(f), None) => Some(
            crate::physics::orbit::check_fpa(f)
                .map_err(|e| about_flag(inputs, "fpa", Kind::Angle, e))?,
        ),
        (None, Some(z)) => {
            if !(0.0..=std::f64::consts::PI).contains(&z) {
                return Err(about_flag(
                    inputs,
                    "zenith",
                    Kind::Angle,
                    Error::OutOfRange {
                        quantity: "zenith angle",
                        value: z.to_degrees(),
                        unit: "deg",
                        expected: "between 0 and 180 deg from the local vertical".into(),
                    },
                ));
            }
            // 90 - z in degrees is exact for a zenith typed in degrees;
            // pi/2 - z in radians would lose the digits of a small angle.
            Some(
                match get(inputs, "zenith").and_then(crate::input::units::degrees_as_given) {
                    Some(z_deg) => (90.0 - z_deg).to_radians(),
                    None => std::f64::consts::FRAC_PI_2 - z,
                },
            )
        }
        (None, None) => None,
    };
    let speed_m_s = num(inputs, "speed", Kind::Speed)?
        .map(|v| {
            crate::error::positive("burnout speed", v, "m/s")
                .map_err(|e| about_flag(inputs, "speed", Kind::Speed, e))
        })
        .transpose()?;
    let min_periapsis_alt_m = num(inputs, "min-periapsis-alt", Kind::Length)?;
    let site = site_from_inputs(inputs, &body)?;
    let above_alt_m = num(inputs, "above-alt", Kind::Length)?;
    if let Some(a) = above_alt_m.filter(|a| *a < 0.0) {
        return Err(about_flag(
            inputs,
            "above-alt",
            Kind::Length,
            Error::OutOfRange {
                quantity: "timing altitude",
                value: a / 1e3,
                unit: "km",
                expected: "0 or more (an altitude above the surface)".into(),
            },
        ));
    }
    Ok(Problem {
        body,
        burnout_radius_m,
        targets,
        flight_path_angle_rad,
        speed_m_s,
        min_periapsis_alt_m,
        site,
        above_alt_m,
    })
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

    #[test]
    fn altitudes_become_radii_and_units_apply() {
        let p = problem_from_inputs(&inputs(&[
            ("burnout-alt", "100 nmi"),
            ("periapsis-alt", "185km"),
            ("apoapsis-alt", "35786"),
        ]))
        .unwrap();
        assert_relative_eq!(p.burnout_radius_m.unwrap(), 6_378_137.0 + 185_200.0);
        assert_relative_eq!(p.targets[1].value, 6_378_137.0 + 35_786_000.0);
    }

    #[test]
    fn zenith_converts_to_flight_path_angle() {
        let p = problem_from_inputs(&inputs(&[
            ("burnout-alt", "200"),
            ("zenith", "80deg"),
            ("sma", "7000"),
        ]))
        .unwrap();
        assert_relative_eq!(
            p.flight_path_angle_rad.unwrap(),
            10f64.to_radians(),
            max_relative = 1e-14
        );
    }

    #[test]
    fn conflicts_and_missing_inputs_are_usage_errors() {
        // A missing burnout point is left for solve() to judge (it may be free).
        assert!(problem_from_inputs(&inputs(&[("sma", "7000")]))
            .unwrap()
            .burnout_radius_m
            .is_none());
        assert!(matches!(
            problem_from_inputs(&inputs(&[("burnout-alt", "1"), ("burnout-radius", "7000")])),
            Err(Error::Usage(_))
        ));
        assert!(matches!(
            problem_from_inputs(&inputs(&[
                ("burnout-alt", "1"),
                ("body", "earth"),
                ("mu", "1")
            ])),
            Err(Error::Usage(_))
        ));
        let e = problem_from_inputs(&inputs(&[("burnout-alt", "7km/s")])).unwrap_err();
        assert!(e.to_string().contains("--burnout-alt"), "{e}");
    }

    #[test]
    fn custom_body_from_mu_and_radius() {
        let p = problem_from_inputs(&inputs(&[
            ("mu", "398600.4418"),
            ("radius", "6378.137"),
            ("burnout-alt", "0"),
        ]))
        .unwrap();
        assert_relative_eq!(p.body.mu_m3_s2, 3.986004418e14, max_relative = 1e-15);
    }

    #[test]
    fn zenith_in_degrees_keeps_a_tiny_flight_path_angle() {
        // 90 - 89.99999999981715 = 1.8285e-10 deg exactly in decimal terms;
        // pi/2 - z in radians would carry ~1e-16 rad of rounding (4e-5 relative).
        let p = problem_from_inputs(&inputs(&[
            ("burnout-alt", "200"),
            ("zenith", "89.99999999981715"),
            ("sma", "7000"),
        ]))
        .unwrap();
        assert_relative_eq!(
            p.flight_path_angle_rad.unwrap().to_degrees(),
            90.0 - 89.99999999981715,
            max_relative = 1e-12
        );
    }
}
