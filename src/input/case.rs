//! Case files: a TOML scenario read into named inputs. Pure: takes the text.
//!
//! ```toml
//! title = "Upper stage to a 600 km circular orbit"
//! [body]
//! name = "earth"            # or mu = "398600.4418 km3/s2" with radius = "6378.137 km"
//! [burnout]
//! alt = "600 km"            # or radius; optionally fpa / zenith / speed
//! [target]
//! periapsis-alt = "600 km"
//! apoapsis-alt = "600 km"
//! [options]
//! min-periapsis-alt = "150 km"
//! ```
//! Values are strings with units or bare numbers (default units).

use crate::error::Error;
use crate::input::problem::Inputs;

/// Keys allowed in each section, and the input key each maps to.
const SECTIONS: &[(&str, &[(&str, &str)])] = &[
    (
        "body",
        &[("name", "body"), ("mu", "mu"), ("radius", "radius")],
    ),
    (
        "burnout",
        &[
            ("alt", "burnout-alt"),
            ("radius", "burnout-radius"),
            ("fpa", "fpa"),
            ("zenith", "zenith"),
            ("speed", "speed"),
        ],
    ),
    (
        "target",
        &[
            ("periapsis-alt", "periapsis-alt"),
            ("periapsis-radius", "periapsis-radius"),
            ("apoapsis-alt", "apoapsis-alt"),
            ("apoapsis-radius", "apoapsis-radius"),
            ("sma", "sma"),
            ("ecc", "ecc"),
            ("period", "period"),
            ("c3", "c3"),
            ("semi-latus-rectum", "semi-latus-rectum"),
            ("time-to-apoapsis", "time-to-apoapsis"),
            ("time-to-periapsis", "time-to-periapsis"),
            ("angle-to-apoapsis", "angle-to-apoapsis"),
            ("inclination", "inclination"),
        ],
    ),
    (
        "site",
        &[
            ("latitude", "latitude"),
            ("longitude", "longitude"),
            ("azimuth", "azimuth"),
            ("downrange", "downrange"),
        ],
    ),
    ("options", &[("min-periapsis-alt", "min-periapsis-alt")]),
    (
        "budget",
        &[
            ("speed-sigma", "speed-sigma"),
            ("fpa-sigma", "fpa-sigma"),
            ("alt-sigma", "alt-sigma"),
            ("speed-fpa-corr", "speed-fpa-corr"),
            ("speed-alt-corr", "speed-alt-corr"),
            ("fpa-alt-corr", "fpa-alt-corr"),
            ("periapsis-tol", "periapsis-tol"),
            ("apoapsis-tol", "apoapsis-tol"),
            ("sma-tol", "sma-tol"),
            ("ecc-tol", "ecc-tol"),
            ("period-tol", "period-tol"),
        ],
    ),
];

/// Groups of input keys that give the same quantity: a flag given beside a
/// case replaces the case's value of every key in its group.
pub const OVERRIDE_GROUPS: &[&[&str]] = &[
    &["body", "mu", "radius"],
    &["burnout-alt", "burnout-radius"],
    &["periapsis-alt", "periapsis-radius"],
    &["apoapsis-alt", "apoapsis-radius"],
    &["fpa", "zenith"],
];

/// A parsed case file.
#[derive(Debug, Clone, PartialEq, Default)]
pub struct Case {
    /// Optional one-line title.
    pub title: Option<String>,
    /// The inputs it gives.
    pub inputs: Inputs,
}

/// Parses case-file text; `origin` names the file in messages.
///
/// # Errors
/// [`Error::Usage`] for TOML syntax errors, unknown sections or keys, and
/// values that are neither strings nor numbers.
pub fn parse_case(text: &str, origin: &str) -> Result<Case, Error> {
    let table: toml::Table = text.parse().map_err(|e: toml::de::Error| {
        Error::Usage(format!(
            "case file {origin} is not valid TOML: {}",
            e.message().lines().next().unwrap_or("syntax error")
        ))
    })?;
    let mut case = Case::default();
    for (key, value) in &table {
        if key == "title" || key == "description" {
            if key == "title" {
                case.title = value.as_str().map(str::to_string);
            }
            continue;
        }
        let Some((_, allowed)) = SECTIONS.iter().find(|(s, _)| s == key) else {
            return Err(Error::Usage(format!(
                "case file {origin}: unknown section [{key}] (expected body, burnout, target, site, options, budget)"
            )));
        };
        let Some(section) = value.as_table() else {
            return Err(Error::Usage(format!(
                "case file {origin}: '{key}' must be a section [{key}]"
            )));
        };
        for (k, v) in section {
            let Some((_, input)) = allowed.iter().find(|(a, _)| a == k) else {
                let names: Vec<&str> = allowed.iter().map(|(a, _)| *a).collect();
                return Err(Error::Usage(format!(
                    "case file {origin}: unknown key '{k}' in [{key}] (expected {})",
                    names.join(", ")
                )));
            };
            let text = match v {
                toml::Value::String(s) => s.clone(),
                toml::Value::Integer(i) => i.to_string(),
                toml::Value::Float(f) => f.to_string(),
                _ => {
                    return Err(Error::Usage(format!(
                        "case file {origin}: [{key}] {k} must be a number or a string with a unit"
                    )))
                }
            };
            case.inputs.insert(input.to_string(), text);
        }
    }
    Ok(case)
}

/// Overlays `flags` on a case's inputs: each flag replaces the case's values
/// of its whole override group.
pub fn overlay(mut base: Inputs, flags: &Inputs) -> Inputs {
    for key in flags.keys() {
        if let Some(group) = OVERRIDE_GROUPS.iter().find(|g| g.contains(&key.as_str())) {
            for k in *group {
                base.remove(*k);
            }
        }
    }
    for (k, v) in flags {
        base.insert(k.clone(), v.clone());
    }
    base
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn sections_map_to_input_keys() {
        let c = parse_case(
            "title = \"t\"\n[body]\nname = \"moon\"\n[burnout]\nalt = \"15 km\"\n[target]\nperiapsis-alt = 15\napoapsis-alt = 100.5\n",
            "x.toml",
        )
        .unwrap();
        assert_eq!(c.inputs["body"], "moon");
        assert_eq!(c.inputs["burnout-alt"], "15 km");
        assert_eq!(c.inputs["periapsis-alt"], "15");
        assert_eq!(c.inputs["apoapsis-alt"], "100.5");
        assert_eq!(c.title.as_deref(), Some("t"));
    }

    #[test]
    fn unknown_keys_and_bad_toml_are_errors() {
        assert!(parse_case("[target]\nfoo = 1\n", "x")
            .unwrap_err()
            .to_string()
            .contains("unknown key 'foo'"));
        assert!(parse_case("[nope]\n", "x").is_err());
        assert!(parse_case("[target\n", "x").is_err());
    }

    #[test]
    fn flags_replace_their_group() {
        let base: Inputs = [("burnout-alt", "100"), ("apoapsis-alt", "500")]
            .iter()
            .map(|(a, b)| (a.to_string(), b.to_string()))
            .collect();
        let flags: Inputs = [("burnout-radius".to_string(), "7000".to_string())]
            .into_iter()
            .collect();
        let out = overlay(base, &flags);
        assert!(!out.contains_key("burnout-alt"));
        assert_eq!(out["burnout-radius"], "7000");
        assert_eq!(out["apoapsis-alt"], "500");
    }
}
