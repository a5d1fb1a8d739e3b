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
use crate::input::keys;
use crate::input::problem::Inputs;

/// The case-file sections, in the table's order.
fn case_sections() -> Vec<&'static str> {
    let mut out: Vec<&str> = Vec::new();
    for k in keys::KEYS {
        if !out.contains(&k.case.0) {
            out.push(k.case.0);
        }
    }
    out
}

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
        if !keys::is_case_section(key) {
            return Err(Error::Usage(format!(
                "case file {origin}: unknown section [{key}] (expected {})",
                case_sections().join(", ")
            )));
        }
        let Some(section) = value.as_table() else {
            return Err(Error::Usage(format!(
                "case file {origin}: '{key}' must be a section [{key}]"
            )));
        };
        for (k, v) in section {
            let Some(input) = keys::from_case(key, k).map(|x| x.key) else {
                let names: Vec<&str> = keys::KEYS
                    .iter()
                    .filter(|x| x.case.0 == key)
                    .map(|x| x.case.1)
                    .collect();
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
        for k in keys::override_group(key) {
            base.remove(k);
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
