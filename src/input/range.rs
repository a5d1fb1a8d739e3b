//! Ranges of input values (`START..END:STEP`, `START..END/N`) and the grids
//! they describe. Pure: text in, numbers out.
//!
//! Rules (machine contract): grid points are START + k STEP, computed by
//! multiplication rather than accumulation, so the millionth point carries no
//! more rounding than the first; END is a point when it lies on the grid
//! within 1e-9 of a step (the last point is then END exactly); `/N` gives N
//! points with both ends included. A unit written on one part of a range
//! applies to the parts written without one (`150..600km:5` is kilometres
//! throughout); END's unit is preferred, then START's, then STEP's; with no
//! unit anywhere the flag's default unit applies. Ends may be in different
//! units of the same kind (`100nmi..500km:10km`).
//!
//! (Why this file is long: about 190 of its lines are tests of the range
//! syntax and its messages.)

use crate::error::{g, Error};
use crate::input::units::{parse, Kind};

/// Largest number of points one range, or a whole scan, may have. A guard
/// against a slip such as `:1m` over 40 000 km, not a limit of the engine.
pub const MAX_POINTS: u64 = 1_000_000_000;

/// Relative tolerance (in steps) within which END counts as on the grid.
pub const END_TOLERANCE: f64 = 1e-9;

/// Whether input text is a range rather than a single value.
pub fn is_range(text: &str) -> bool {
    text.contains("..")
}

/// A one-dimensional grid of values of one input.
#[derive(Debug, Clone, PartialEq)]
pub struct Grid {
    /// First value, in the range's own unit.
    start_u: f64,
    /// Step, in the range's own unit (negative for a descending range).
    step_u: f64,
    /// Number of points.
    len: usize,
    /// The last point when it is END exactly.
    end_u: Option<f64>,
    /// SI value of one unit of the range.
    si_per_unit: f64,
    /// Machine-output value of one unit (degrees for angles, SI otherwise).
    out_per_unit: f64,
    /// The kind of the values (for inputs that accept two kinds, the one given).
    kind: Kind,
    /// The unit text the range was written in (empty: the default unit).
    unit: String,
}

impl Grid {
    /// Number of points.
    pub fn len(&self) -> usize {
        self.len
    }

    /// Whether the grid has no points (never true for a parsed range).
    pub fn is_empty(&self) -> bool {
        self.len == 0
    }

    /// The kind of the values.
    pub fn kind(&self) -> Kind {
        self.kind
    }

    /// Point `k` in the range's own unit.
    fn value_u(&self, k: usize) -> f64 {
        match self.end_u {
            Some(end) if k + 1 == self.len => end,
            _ => self.start_u + k as f64 * self.step_u,
        }
    }

    /// Point `k` in SI (m, m/s, rad, s, m^2/s^2, m^3/s^2).
    pub fn si(&self, k: usize) -> f64 {
        self.value_u(k) * self.si_per_unit
    }

    /// Point `k` in machine-output units: SI, but degrees for angles.
    pub fn out(&self, k: usize) -> f64 {
        self.value_u(k) * self.out_per_unit
    }

    /// Converts an SI value of this grid's quantity to machine-output units.
    pub fn si_to_out(&self, si: f64) -> f64 {
        si / self.si_per_unit * self.out_per_unit
    }

    /// The step in SI (0 for a single point).
    pub fn step_si(&self) -> f64 {
        self.step_u * self.si_per_unit
    }
}

/// Machine-output unit suffix of a kind, as used in column names.
pub fn out_unit(kind: Kind) -> &'static str {
    match kind {
        Kind::Length => "m",
        Kind::Speed => "m_s",
        Kind::Angle | Kind::AngleOrLength => "deg",
        Kind::Time => "s",
        Kind::C3 => "m2_s2",
        Kind::Mu => "m3_s2",
        Kind::Ratio => "",
    }
}

/// SI unit text that [`crate::input::units::parse`] reads back exactly (used to
/// hand a grid value to the input parser).
pub fn si_unit_text(kind: Kind) -> &'static str {
    match kind {
        Kind::Length => "m",
        Kind::Speed => "m/s",
        Kind::Angle | Kind::AngleOrLength => "rad",
        Kind::Time => "s",
        Kind::C3 => "m2/s2",
        Kind::Mu => "m3/s2",
        Kind::Ratio => "",
    }
}

/// Splits one part of a range into its number text and unit text, exactly
/// as the value reader does.
fn split_part(text: &str) -> (&str, &str) {
    crate::input::units::split(text)
}

const OTHER_KINDS: [Kind; 6] = [
    Kind::Length,
    Kind::Speed,
    Kind::Angle,
    Kind::Time,
    Kind::C3,
    Kind::Mu,
];

fn article(kind: Kind) -> &'static str {
    match kind {
        Kind::Angle | Kind::AngleOrLength => "an",
        _ => "a",
    }
}

/// One parsed part of a range.
struct Part<'a> {
    role: &'static str,
    text: &'a str,
    number: f64,
    unit: &'a str,
    kind: Kind,
    si_per_unit: f64,
}

/// Parses a range given for `flag` as values of `kind`.
///
/// # Errors
/// [`Error::InvalidValue`] naming the flag and the range text: missing
/// `:STEP` or `/N`, a part that is not a number of the right kind, ends of
/// different kinds, a zero or non-finite step, ends in the opposite order to
/// the step, N below 2 or not a whole number, more than [`MAX_POINTS`] points.
pub fn parse_range(flag: &str, text: &str, kind: Kind) -> Result<Grid, Error> {
    let fail = |reason: String| Error::InvalidValue {
        flag: flag.to_string(),
        text: text.trim().to_string(),
        kind: "range",
        reason,
    };
    let syntax = split_syntax(text).map_err(fail)?;
    let raw: Vec<(&'static str, &str)> = [
        Some(("start", syntax.start)),
        Some(("end", syntax.end)),
        syntax.step.map(|s| ("step", s)),
    ]
    .into_iter()
    .flatten()
    .collect();
    let split: Vec<(&str, &str)> = raw.iter().map(|(_, t)| split_part(t)).collect();
    check_numbers(&raw, &split).map_err(fail)?;
    // The range's unit: END's, else START's, else STEP's.
    let range_unit = [1usize, 0, 2]
        .iter()
        .filter_map(|&i| split.get(i))
        .map(|(_, u)| *u)
        .find(|u| !u.is_empty())
        .unwrap_or("");
    blame_written_units(flag, kind, &raw, &split).map_err(fail)?;
    let parts = parse_parts(flag, kind, &raw, &split, range_unit).map_err(fail)?;
    check_one_kind(&parts).map_err(fail)?;
    let value_kind = parts[0].kind;
    // Everything in the unit of the range; exact for parts written in it.
    let base = parts
        .iter()
        .find(|p| p.unit == range_unit)
        .map(|p| p.si_per_unit)
        .unwrap_or(parts[1].si_per_unit);
    let in_unit = |p: &Part| {
        if p.unit == range_unit {
            p.number
        } else {
            p.number * (p.si_per_unit / base)
        }
    };
    let start_u = in_unit(&parts[0]);
    let end_u = in_unit(&parts[1]);
    let (step_u, len, snap) = match syntax.count {
        Some(n_text) => count_points(n_text, start_u, end_u).map_err(fail)?,
        None => {
            let step = in_unit(&parts[2]);
            step_points(&parts[2], step, start_u, end_u, range_unit).map_err(fail)?
        }
    };
    let si_per_unit = base;
    let out_per_unit = if value_kind == Kind::Angle {
        si_per_unit / (std::f64::consts::PI / 180.0)
    } else {
        si_per_unit
    };
    Ok(Grid {
        start_u,
        step_u,
        len,
        end_u: snap,
        si_per_unit,
        out_per_unit,
        kind: value_kind,
        unit: range_unit.to_string(),
    })
}

/// The texts of a range's parts: START, END, and STEP or N.
struct Syntax<'a> {
    start: &'a str,
    end: &'a str,
    step: Option<&'a str>,
    count: Option<&'a str>,
}

/// Splits `START..END:STEP` or `START..END/N`; the reason when it is neither.
fn split_syntax(text: &str) -> Result<Syntax<'_>, String> {
    let Some(dots) = text.find("..") else {
        return Err("expected START..END:STEP or START..END/N".into());
    };
    if text[dots..].starts_with("...") {
        return Err("three dots: write START..END with two".into());
    }
    let start = &text[..dots];
    let rest = &text[dots + 2..];
    // `:STEP`, else `/N` where N starts with a digit (a unit's '/' never does).
    let (end, step, count) = if let Some(colon) = rest.find(':') {
        (&rest[..colon], Some(&rest[colon + 1..]), None)
    } else if let Some(slash) = rest.rfind('/').filter(|&i| {
        rest[i + 1..]
            .trim_start()
            .starts_with(|c: char| c.is_ascii_digit() || c == '-' || c == '+' || c == '.')
    }) {
        (&rest[..slash], None, Some(rest[slash + 1..].trim()))
    } else {
        return Err(
            "missing step: write START..END:STEP (e.g. 150km..600km:5km) or START..END/N (N points)"
                .into(),
        );
    };
    if start.trim().is_empty() {
        return Err("missing START before '..'".into());
    }
    if end.trim().is_empty() {
        return Err("missing END after '..'".into());
    }
    if step.is_some_and(|s| s.trim().is_empty()) {
        return Err("missing STEP after ':'".into());
    }
    Ok(Syntax {
        start,
        end,
        step,
        count,
    })
}

/// A part without a number (`nan`, `inf`, a lone unit) is blamed on itself,
/// before its text could be taken for the range's unit.
fn check_numbers(raw: &[(&str, &str)], split: &[(&str, &str)]) -> Result<(), String> {
    for ((role, t), (number_text, _)) in raw.iter().zip(split) {
        if number_text.trim().is_empty() {
            let lower = t.trim().to_ascii_lowercase();
            let word = lower.trim_start_matches(['+', '-']);
            let why = if word.starts_with("nan") || word.starts_with("inf") {
                "not a finite number"
            } else {
                "not a number"
            };
            return Err(format!("{role} '{}' is {why}", t.trim()));
        }
    }
    Ok(())
}

/// The reason when `full` (a part with its unit) is a value of another kind
/// than `kind`: only a unit can say so (a bare number is no kind's own).
fn other_kind(flag: &str, kind: Kind, role: &str, text: &str, full: &str) -> Option<String> {
    let other = OTHER_KINDS
        .iter()
        .find(|k| **k != kind && parse(flag, full, **k).is_ok())?;
    Some(format!(
        "{role} '{}' is {} {} but {flag} takes {} {}",
        text.trim(),
        article(*other),
        other.name(),
        article(kind),
        kind.name()
    ))
}

/// Parts that carry their own unit are checked first, so a wrong unit is
/// blamed on the part that wrote it, not on a bare part that inherited it.
fn blame_written_units(
    flag: &str,
    kind: Kind,
    raw: &[(&str, &str)],
    split: &[(&str, &str)],
) -> Result<(), String> {
    for i in 0..raw.len() {
        let (role, t) = raw[i];
        let (number_text, unit) = split[i];
        if unit.is_empty() {
            continue;
        }
        let full = format!("{number_text} {unit}");
        if parse(flag, &full, kind).is_err() {
            if let Some(why) = other_kind(flag, kind, role, t, &full) {
                return Err(why);
            }
        }
    }
    Ok(())
}

/// Each part read as a value of `kind`, bare parts in the range's unit.
fn parse_parts<'a>(
    flag: &str,
    kind: Kind,
    raw: &[(&'static str, &'a str)],
    split: &[(&'a str, &'a str)],
    range_unit: &'a str,
) -> Result<Vec<Part<'a>>, String> {
    let mut parts: Vec<Part> = Vec::with_capacity(3);
    for ((role, t), (number_text, unit)) in raw.iter().zip(split) {
        let unit = if unit.is_empty() { range_unit } else { unit };
        let full = if unit.is_empty() {
            t.trim().to_string()
        } else {
            format!("{number_text} {unit}")
        };
        let parsed = match parse(flag, &full, kind) {
            Ok(p) => p,
            Err(e) => {
                if let Some(why) = (!unit.is_empty())
                    .then(|| other_kind(flag, kind, role, t, &full))
                    .flatten()
                {
                    return Err(why);
                }
                let reason = match e {
                    Error::InvalidValue { reason, .. } => reason,
                    other => other.to_string(),
                };
                return Err(format!("{role} '{}': {reason}", t.trim()));
            }
        };
        let number: f64 = number_text.parse().unwrap_or(f64::NAN);
        // The unit's own factor, so that a point is `number * factor` exactly
        // as the value parser would compute it.
        let one = if unit.is_empty() {
            "1".to_string()
        } else {
            format!("1 {unit}")
        };
        let si_per_unit = parse(flag, &one, kind).map(|p| p.si).unwrap_or(f64::NAN);
        parts.push(Part {
            role,
            text: t.trim(),
            number,
            unit,
            kind: parsed.kind,
            si_per_unit,
        });
    }
    Ok(parts)
}

/// Ends (and step) of one kind: matters for inputs that take two kinds.
fn check_one_kind(parts: &[Part]) -> Result<(), String> {
    match parts.iter().find(|p| p.kind != parts[0].kind) {
        None => Ok(()),
        Some(odd) => Err(format!(
            "ends of different kinds: {} '{}' is {} {} but {} '{}' is {} {}",
            parts[0].role,
            parts[0].text,
            article(parts[0].kind),
            parts[0].kind.name(),
            odd.role,
            odd.text,
            article(odd.kind),
            odd.kind.name()
        )),
    }
}

/// `/N`: N points with both ends (step, points, the snapped end).
fn count_points(
    n_text: &str,
    start_u: f64,
    end_u: f64,
) -> Result<(f64, usize, Option<f64>), String> {
    let n: u64 = n_text.parse::<u64>().map_err(|_| {
        format!("N in '/N' must be a whole number of points, 2 or more (got '{n_text}')")
    })?;
    if n < 2 {
        return Err(format!(
            "N in '/N' must be 2 or more: both ends are points (got {n})"
        ));
    }
    if n > MAX_POINTS {
        return Err(format!("{n} points is more than the limit {MAX_POINTS}"));
    }
    Ok(((end_u - start_u) / (n - 1) as f64, n as usize, Some(end_u)))
}

/// `:STEP`: points START + k STEP up to END (step, points, END when it lies
/// on the grid within [`END_TOLERANCE`] of a step).
fn step_points(
    step: &Part,
    step_u: f64,
    start_u: f64,
    end_u: f64,
    range_unit: &str,
) -> Result<(f64, usize, Option<f64>), String> {
    let span = end_u - start_u;
    let describe = |x_u: f64| {
        if range_unit.is_empty() {
            g(x_u)
        } else {
            format!("{} {range_unit}", g(x_u))
        }
    };
    if !step_u.is_finite() || step_u == 0.0 {
        return Err(format!(
            "step '{}' is zero: expected a non-zero step",
            step.text
        ));
    }
    if span != 0.0 && (span > 0.0) != (step_u > 0.0) {
        return Err(format!(
            "the range runs {} from {} to {} but the step {} is {}: expected a {} step",
            if span > 0.0 { "upward" } else { "downward" },
            describe(start_u),
            describe(end_u),
            describe(step_u),
            if step_u > 0.0 { "positive" } else { "negative" },
            if span > 0.0 { "positive" } else { "negative" },
        ));
    }
    let steps = span / step_u;
    if !steps.is_finite() || steps + 1.0 > MAX_POINTS as f64 {
        return Err(format!(
            "{} points is more than the limit {MAX_POINTS}: use a larger step",
            g((steps + 1.0).floor())
        ));
    }
    let last = (steps + END_TOLERANCE).floor() as usize;
    let on_grid = (start_u + last as f64 * step_u - end_u).abs() <= END_TOLERANCE * step_u.abs();
    Ok((step_u, last + 1, on_grid.then_some(end_u)))
}

#[cfg(test)]
mod tests {
    use super::*;
    use approx::assert_relative_eq;

    #[test]
    fn a_part_without_a_number_is_blamed_on_itself() {
        // Issue 9: these blamed the start.
        assert!(err("150..600:nan", Kind::Length).ends_with("step 'nan' is not a finite number"));
        assert!(err("150..inf:5", Kind::Length).ends_with("end 'inf' is not a finite number"));
        assert!(err("km..600:5", Kind::Length).ends_with("start 'km' is not a number"));
    }

    #[test]
    fn a_bare_number_out_of_range_is_not_called_another_kind() {
        // Issue 9: `1e17..1e17:1` for a length was "a time".
        let e = err("1e17..1e17:1", Kind::Length);
        assert!(!e.contains("is a time"), "{e}");
        assert!(e.contains("start '1e17'"), "{e}");
    }

    fn grid(text: &str, kind: Kind) -> Grid {
        parse_range("--x", text, kind).unwrap()
    }

    fn err(text: &str, kind: Kind) -> String {
        parse_range("--burnout-alt", text, kind)
            .unwrap_err()
            .to_string()
    }

    #[test]
    fn step_range_includes_end_on_the_grid() {
        let gr = grid("150km..600km:5km", Kind::Length);
        assert_eq!(gr.len(), 91);
        assert_relative_eq!(gr.si(0), 150e3);
        assert_relative_eq!(gr.si(90), 600e3);
        assert_relative_eq!(gr.si(1), 155e3);
    }

    #[test]
    fn points_are_multiplied_not_accumulated() {
        // 0.1 added a thousand times drifts by ~1e-13; 0.1 * 1000 does not.
        let gr = grid("0..200:0.1", Kind::Length);
        assert_eq!(gr.len(), 2001);
        assert_eq!(gr.si(1000).to_bits(), (1000.0f64 * 0.1 * 1e3).to_bits());
        assert_eq!(gr.out(2000).to_bits(), 200e3f64.to_bits());
    }

    #[test]
    fn end_off_the_grid_is_not_a_point() {
        let gr = grid("0km..10km:3km", Kind::Length);
        assert_eq!(gr.len(), 4);
        assert_relative_eq!(gr.si(3), 9e3);
    }

    #[test]
    fn end_within_tolerance_of_a_step_is_snapped_exactly() {
        let gr = grid("0.1..0.3:0.1", Kind::Ratio);
        assert_eq!(gr.len(), 3);
        assert_eq!(gr.out(2).to_bits(), 0.3f64.to_bits());
    }

    #[test]
    fn count_range_has_both_ends() {
        let gr = grid("500km..40000km/5", Kind::Length);
        assert_eq!(gr.len(), 5);
        assert_relative_eq!(gr.si(0), 500e3);
        assert_relative_eq!(gr.si(4), 40_000e3);
        assert_relative_eq!(gr.si(1), 10_375e3);
    }

    #[test]
    fn negative_step_runs_a_reversed_range() {
        let gr = grid("600km..150km:-50km", Kind::Length);
        assert_eq!(gr.len(), 10);
        assert_relative_eq!(gr.si(0), 600e3);
        assert_relative_eq!(gr.si(9), 150e3);
    }

    #[test]
    fn unit_on_one_part_applies_to_bare_parts() {
        let gr = grid("150..600km:5", Kind::Length);
        assert_eq!(gr.len(), 91);
        assert_relative_eq!(gr.si(0), 150e3);
        let gr = grid("100..200:10nmi", Kind::Length);
        assert_relative_eq!(gr.si(1), 110.0 * 1852.0);
    }

    #[test]
    fn bare_range_takes_default_unit_and_mixed_units_convert() {
        let gr = grid("150..600:50", Kind::Length);
        assert_relative_eq!(gr.si(1), 200e3);
        let gr = grid("100nmi..1000km:100km", Kind::Length);
        assert_relative_eq!(gr.si(0), 185_200.0, max_relative = 1e-15);
        assert_relative_eq!(gr.si(1), 285_200.0, max_relative = 1e-15);
        assert_eq!(gr.len(), 9);
    }

    #[test]
    fn angles_come_out_in_degrees_exactly() {
        let gr = grid("-5deg..5deg:0.5deg", Kind::Angle);
        assert_eq!(gr.len(), 21);
        assert_eq!(gr.out(3).to_bits(), (-3.5f64).to_bits());
        assert_relative_eq!(gr.si(3), (-3.5f64).to_radians(), max_relative = 1e-15);
        let gr = grid("0rad..1rad/3", Kind::Angle);
        assert_relative_eq!(gr.out(1), 0.5f64.to_degrees(), max_relative = 1e-15);
    }

    #[test]
    fn units_with_a_slash_and_count_form_are_told_apart() {
        let gr = grid("7km/s..8km/s/11", Kind::Speed);
        assert_eq!(gr.len(), 11);
        assert_relative_eq!(gr.si(10), 8e3);
        let gr = grid("-10km2/s2..10km2/s2:5km2/s2", Kind::C3);
        assert_eq!(gr.len(), 5);
        assert_relative_eq!(gr.si(0), -10e6);
    }

    #[test]
    fn zero_step_is_rejected_naming_the_flag() {
        let e = err("150km..600km:0km", Kind::Length);
        assert_eq!(
            e,
            "invalid range '150km..600km:0km' for --burnout-alt: step '0km' is zero: expected a non-zero step"
        );
    }

    #[test]
    fn reversed_ends_need_a_negative_step() {
        let e = err("600km..150km:5km", Kind::Length);
        assert!(e.starts_with("invalid range '600km..150km:5km' for --burnout-alt: the range runs downward from 600 km to 150 km but the step 5 km is positive"), "{e}");
    }

    #[test]
    fn ends_of_different_kinds_are_named() {
        let e = err("150km..7km/s:1km", Kind::Length);
        assert_eq!(
            e,
            "invalid range '150km..7km/s:1km' for --burnout-alt: end '7km/s' is a speed but --burnout-alt takes a length"
        );
        let e = parse_range("--downrange", "1deg..300km:1deg", Kind::AngleOrLength)
            .unwrap_err()
            .to_string();
        assert!(e.contains("ends of different kinds"), "{e}");
    }

    #[test]
    fn count_below_two_or_fractional_is_rejected() {
        assert!(err("150km..600km/1", Kind::Length).contains("must be 2 or more"));
        assert!(err("150km..600km/2.5", Kind::Length).contains("whole number"));
    }

    #[test]
    fn missing_parts_and_bad_numbers_are_rejected() {
        assert!(err("150km..600km", Kind::Length).contains("missing step"));
        assert!(err("..600km:5km", Kind::Length).contains("missing START"));
        assert!(err("150km..:5km", Kind::Length).contains("missing END"));
        assert!(err("150km..600km:", Kind::Length).contains("missing STEP"));
        assert!(err("abc..600km:5km", Kind::Length).contains("start 'abc'"));
        assert!(err("150parsec..600km:5km", Kind::Length).contains("unknown unit"));
    }

    #[test]
    fn too_many_points_is_rejected() {
        let e = err("0km..40000km:1e-6m", Kind::Length);
        assert!(e.contains("more than the limit"), "{e}");
    }

    #[test]
    fn split_keeps_exponents_in_the_number() {
        assert_eq!(split_part("1e3km"), ("1e3", "km"));
        assert_eq!(split_part(" -2.5 deg"), ("-2.5", "deg"));
        assert_eq!(split_part("12"), ("12", ""));
    }

    #[test]
    fn a_wrong_unit_is_blamed_on_the_part_that_wrote_it() {
        let e = err("200..600:5km/s", Kind::Length);
        assert!(e.contains("step '5km/s' is a speed"), "{e}");
    }

    #[test]
    fn three_dots_are_rejected_rather_than_read_as_a_decimal_point() {
        let e = err("150km...600km:50km", Kind::Length);
        assert!(e.contains("three dots"), "{e}");
    }
}
