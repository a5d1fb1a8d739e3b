//! Parsing of values with unit suffixes into SI numbers.
//!
//! Every length, speed, angle, time, C3 and gravitational parameter the user
//! types may carry a unit suffix, with or without a space. A bare number takes
//! the kind's default unit (km, km/s, deg, s, km2/s2, km3/s2). Results are SI
//! (m, m/s, rad, s, m^2/s^2, m^3/s^2).

use crate::error::Error;

/// International nautical mile, m (exact by definition, BIPM SI Brochure 9th ed., Table 8).
pub const NMI_M: f64 = 1852.0;
/// International foot, m (exact, 1959 international yard and pound agreement).
pub const FT_M: f64 = 0.3048;

/// The physical kind of a value, which decides the units it may carry.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum Kind {
    /// m, km, nmi, ft; bare is km.
    Length,
    /// m/s, km/s, ft/s; bare is km/s.
    Speed,
    /// deg, rad; bare is deg.
    Angle,
    /// s, min, h, d; bare is s.
    Time,
    /// km2/s2, m2/s2; bare is km2/s2.
    C3,
    /// km3/s2, m3/s2; bare is km3/s2.
    Mu,
    /// A dimensionless number such as eccentricity; no unit allowed.
    Ratio,
    /// Either an angle (deg, rad) or a length (m, km, nmi, ft); bare is deg.
    AngleOrLength,
}

impl Kind {
    /// Every kind (for exhaustive tests and fuzzing).
    pub const ALL: [Kind; 8] = [
        Kind::Length,
        Kind::Speed,
        Kind::Angle,
        Kind::AngleOrLength,
        Kind::Time,
        Kind::C3,
        Kind::Mu,
        Kind::Ratio,
    ];

    /// Name used in messages.
    pub fn name(self) -> &'static str {
        match self {
            Kind::Length => "length",
            Kind::Speed => "speed",
            Kind::Angle => "angle",
            Kind::Time => "time",
            Kind::C3 => "c3",
            Kind::Mu => "gravitational parameter",
            Kind::Ratio => "number",
            Kind::AngleOrLength => "angle or length",
        }
    }

    fn units(self) -> &'static [(&'static str, f64)] {
        match self {
            Kind::Length => LENGTH,
            Kind::Speed => SPEED,
            Kind::Angle => ANGLE,
            Kind::Time => TIME,
            Kind::C3 => C3,
            Kind::Mu => MU,
            Kind::Ratio => &[],
            Kind::AngleOrLength => ANGLE,
        }
    }

    fn expected(self) -> String {
        match self {
            Kind::Ratio => "a plain number with no unit".to_string(),
            Kind::AngleOrLength => "deg, rad, m, km, nmi, ft".to_string(),
            _ => self
                .units()
                .iter()
                .map(|(u, _)| *u)
                .collect::<Vec<_>>()
                .join(", "),
        }
    }

    /// Largest accepted SI magnitude, and its unit: beyond it results would
    /// overflow or be meaningless (lengths of 1e18 m are some 6.7 million au;
    /// speeds and C3 are capped at the speed of light and its square).
    pub fn max_si(self) -> (f64, &'static str) {
        match self {
            Kind::Length | Kind::AngleOrLength => (1e18, "m"),
            Kind::Speed => (299_792_458.0, "m/s"),
            Kind::Angle => (1e6, "rad"),
            Kind::Time => (1e18, "s"),
            Kind::C3 => (8.987_551_787_368_176e16, "m2/s2"),
            Kind::Mu => (1e30, "m3/s2"),
            Kind::Ratio => (1e9, ""),
        }
    }

    /// SI factor of a bare number of this kind.
    fn bare_factor(self) -> f64 {
        match self {
            Kind::Length => 1e3,
            Kind::Speed => 1e3,
            Kind::Angle | Kind::AngleOrLength => std::f64::consts::PI / 180.0,
            Kind::Time => 1.0,
            Kind::C3 => 1e6,
            Kind::Mu => 1e9,
            Kind::Ratio => 1.0,
        }
    }
}

const LENGTH: &[(&str, f64)] = &[("m", 1.0), ("km", 1e3), ("nmi", NMI_M), ("ft", FT_M)];
const SPEED: &[(&str, f64)] = &[("m/s", 1.0), ("km/s", 1e3), ("ft/s", FT_M)];
const ANGLE: &[(&str, f64)] = &[("deg", std::f64::consts::PI / 180.0), ("rad", 1.0)];
const TIME: &[(&str, f64)] = &[("s", 1.0), ("min", 60.0), ("h", 3600.0), ("d", 86400.0)];
const C3: &[(&str, f64)] = &[("km2/s2", 1e6), ("m2/s2", 1.0)];
const MU: &[(&str, f64)] = &[("km3/s2", 1e9), ("m3/s2", 1.0)];
const ALL: &[(&[(&str, f64)], Kind)] = &[
    (LENGTH, Kind::Length),
    (SPEED, Kind::Speed),
    (ANGLE, Kind::Angle),
    (TIME, Kind::Time),
    (C3, Kind::C3),
    (MU, Kind::Mu),
];

/// A parsed value: its SI magnitude and, for [`Kind::AngleOrLength`], which
/// of the two it was.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Parsed {
    /// Value in SI (m, m/s, rad, s, m^2/s^2, m^3/s^2).
    pub si: f64,
    /// The kind actually given (differs from the requested kind only for
    /// [`Kind::AngleOrLength`]).
    pub kind: Kind,
}

/// Splits `text` into a numeric part and a unit part (the reader's own
/// split, shared with range parsing).
pub(crate) fn split(text: &str) -> (&str, &str) {
    let t = text.trim();
    // The unit starts at the first letter that cannot continue a number.
    let bytes = t.as_bytes();
    let mut i = 0;
    while i < bytes.len() {
        let c = bytes[i] as char;
        let numeric = c.is_ascii_digit()
            || c == '.'
            || c == '+'
            || c == '-'
            || ((c == 'e' || c == 'E')
                && i > 0
                && (bytes[i - 1] as char).is_ascii_digit()
                && bytes
                    .get(i + 1)
                    .map(|n| (*n as char).is_ascii_digit() || *n == b'-' || *n == b'+')
                    .unwrap_or(false));
        if !numeric {
            break;
        }
        i += 1;
    }
    (t[..i].trim(), t[i..].trim())
}

/// Parses `text` given for `flag` as a value of `kind`, returning SI.
///
/// # Errors
/// [`Error::InvalidValue`] naming the flag and the text when the number is
/// missing or not finite, the unit is unknown, or the unit is of another kind.
pub fn parse(flag: &str, text: &str, kind: Kind) -> Result<Parsed, Error> {
    let fail = |reason: String| Error::InvalidValue {
        flag: flag.to_string(),
        text: text.to_string(),
        kind: kind.name(),
        reason,
    };
    let trimmed = text.trim();
    if trimmed.is_empty() {
        return Err(fail("empty value".into()));
    }
    let lower = trimmed.to_ascii_lowercase();
    if [
        "nan",
        "inf",
        "+inf",
        "-inf",
        "infinity",
        "+infinity",
        "-infinity",
    ]
    .iter()
    .any(|w| lower.starts_with(w))
    {
        return Err(fail("not a finite number".into()));
    }
    let (num, unit) = split(trimmed);
    if num.is_empty() {
        return Err(fail(format!(
            "not a number (expected a number with optional unit {})",
            kind.expected()
        )));
    }
    let value: f64 = num
        .parse()
        .map_err(|_| fail(format!("'{num}' is not a number")))?;
    if !value.is_finite() {
        return Err(fail("not a finite number".into()));
    }
    let limit = |si: f64, k: Kind| -> Result<f64, Error> {
        let (max, u) = k.max_si();
        if si.abs() > max {
            Err(fail(
                format!(
                    "magnitude {si:e} {u} is beyond the largest accepted {} {max:e} {u}",
                    k.name()
                )
                .replace("  ", " ")
                .trim_end()
                .to_string(),
            ))
        } else {
            Ok(si)
        }
    };
    if unit.is_empty() {
        let k = if kind == Kind::AngleOrLength {
            Kind::Angle
        } else {
            kind
        };
        return Ok(Parsed {
            si: limit(value * kind.bare_factor(), k)?,
            kind: k,
        });
    }
    let accept: &[Kind] = if kind == Kind::AngleOrLength {
        &[Kind::Angle, Kind::Length]
    } else {
        std::slice::from_ref(&kind)
    };
    for k in accept {
        if let Some((_, f)) = k.units().iter().find(|(u, _)| *u == unit) {
            let si = limit(value * f, *k)?;
            return Ok(Parsed { si, kind: *k });
        }
    }
    if let Some((_, other)) = ALL
        .iter()
        .find(|(list, _)| list.iter().any(|(u, _)| *u == unit))
    {
        return Err(fail(format!(
            "'{unit}' is {} {} unit (expected {})",
            if other.name().starts_with(['a', 'e', 'i', 'o', 'u']) {
                "an"
            } else {
                "a"
            },
            other.name(),
            kind.expected()
        )));
    }
    Err(fail(format!(
        "unknown unit '{unit}' (expected {})",
        kind.expected()
    )))
}

/// The number of an angle given in degrees (bare or `deg`), as typed;
/// `None` for other units or unparseable text. Lets a caller form
/// differences such as 90 deg - zenith in degrees, exactly, before the
/// conversion to radians.
pub fn degrees_as_given(text: &str) -> Option<f64> {
    let (num, unit) = split(text.trim());
    if unit.is_empty() || unit == "deg" {
        num.parse::<f64>().ok().filter(|v| v.is_finite())
    } else {
        None
    }
}

/// Parses a value and returns only its SI magnitude.
///
/// # Errors
/// As [`parse`].
pub fn parse_si(flag: &str, text: &str, kind: Kind) -> Result<f64, Error> {
    parse(flag, text, kind).map(|p| p.si)
}

/// Degrees to radians.
pub fn deg_to_rad(deg: f64) -> f64 {
    deg.to_radians()
}

/// Radians to degrees.
pub fn rad_to_deg(rad: f64) -> f64 {
    rad.to_degrees()
}

#[cfg(test)]
mod tests {
    use super::*;
    use approx::assert_relative_eq;

    #[test]
    fn bare_numbers_take_default_units() {
        assert_relative_eq!(parse_si("--a", "200", Kind::Length).unwrap(), 200e3);
        assert_relative_eq!(parse_si("--v", "7.8", Kind::Speed).unwrap(), 7800.0);
        assert_relative_eq!(
            parse_si("--f", "90", Kind::Angle).unwrap(),
            std::f64::consts::FRAC_PI_2
        );
        assert_relative_eq!(parse_si("--c3", "12.5", Kind::C3).unwrap(), 12.5e6);
        assert_relative_eq!(
            parse_si("--mu", "398600.4418", Kind::Mu).unwrap(),
            3.986004418e14
        );
    }

    #[test]
    fn suffixes_with_and_without_space() {
        assert_relative_eq!(parse_si("--a", "100 nmi", Kind::Length).unwrap(), 185200.0);
        assert_relative_eq!(parse_si("--a", "1000ft", Kind::Length).unwrap(), 304.8);
        assert_relative_eq!(parse_si("--v", "25000 ft/s", Kind::Speed).unwrap(), 7620.0);
        assert_relative_eq!(parse_si("--t", "1.5h", Kind::Time).unwrap(), 5400.0);
        assert_relative_eq!(parse_si("--t", "2 d", Kind::Time).unwrap(), 172800.0);
        assert_relative_eq!(
            parse_si("--f", "-2.5deg", Kind::Angle).unwrap(),
            -2.5f64.to_radians()
        );
        assert_relative_eq!(parse_si("--a", "1e3km", Kind::Length).unwrap(), 1e6);
        assert_relative_eq!(parse_si("--c3", "-3 m2/s2", Kind::C3).unwrap(), -3.0);
    }

    #[test]
    fn wrong_kind_of_unit_is_named() {
        let e = parse_si("--sma", "7km/s", Kind::Length)
            .unwrap_err()
            .to_string();
        assert_eq!(
            e,
            "invalid length '7km/s' for --sma: 'km/s' is a speed unit (expected m, km, nmi, ft)"
        );
    }

    #[test]
    fn unknown_unit_and_text_and_nonfinite_are_rejected() {
        let e = parse_si("--burnout-alt", "12 parsecs", Kind::Length)
            .unwrap_err()
            .to_string();
        assert!(e.contains("unknown unit 'parsecs'"), "{e}");
        assert!(parse_si("--x", "abc", Kind::Length).is_err());
        assert!(parse_si("--x", "NaN", Kind::Length).is_err());
        assert!(parse_si("--x", "inf km", Kind::Length).is_err());
        assert!(parse_si("--x", "1e400", Kind::Length).is_err());
        assert!(parse_si("--x", "", Kind::Length).is_err());
        assert!(parse_si("--ecc", "0.1 km", Kind::Ratio).is_err());
        let e = parse_si("--apoapsis-alt", "1e300km", Kind::Length)
            .unwrap_err()
            .to_string();
        assert!(
            e.contains("--apoapsis-alt") && e.contains("largest accepted length"),
            "{e}"
        );
    }

    #[test]
    fn angle_or_length_reports_which() {
        let p = parse("--downrange", "300 km", Kind::AngleOrLength).unwrap();
        assert_eq!(p.kind, Kind::Length);
        let p = parse("--downrange", "3", Kind::AngleOrLength).unwrap();
        assert_eq!(p.kind, Kind::Angle);
    }
}
