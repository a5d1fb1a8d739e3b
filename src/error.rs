//! The crate's one error type, with hand-written one-line messages.

use std::fmt;

/// How an error should be reported to a caller of the command-line tool.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum ErrorClass {
    /// The input could not be used as given (bad flag value, wrong unit, a
    /// target set that cannot define an orbit). Exit code 2.
    Usage,
    /// The input was understood but no trajectory satisfies it. Exit code 3.
    Infeasible,
    /// A file or stream could not be read or written (not the input's
    /// fault). Exit code 2, the contract's one code for a run that could not
    /// be carried out (3 stays "no trajectory").
    Io,
}

/// Everything that can go wrong in `burnout`.
///
/// Every message is one lowercase line naming the quantity, its value with
/// unit, and the limit it broke.
#[derive(Debug, Clone, PartialEq)]
#[non_exhaustive]
pub enum Error {
    /// A command-line or file value could not be parsed.
    InvalidValue {
        /// The flag or column that carried it, e.g. `--burnout-alt`.
        flag: String,
        /// The user's text.
        text: String,
        /// What kind of value was expected (`length`, `speed`, ...).
        kind: &'static str,
        /// Why it was rejected.
        reason: String,
    },
    /// A quantity was NaN or infinite.
    NotFinite {
        /// Name of the quantity.
        quantity: &'static str,
        /// The offending value.
        value: f64,
    },
    /// A quantity that must be positive was not.
    NotPositive {
        /// Name of the quantity.
        quantity: &'static str,
        /// The offending value, in `unit`.
        value: f64,
        /// Unit of `value`.
        unit: &'static str,
    },
    /// A quantity lies outside its allowed range.
    OutOfRange {
        /// Name of the quantity.
        quantity: &'static str,
        /// The offending value, in `unit`.
        value: f64,
        /// Unit of `value`.
        unit: &'static str,
        /// What was expected, e.g. `between -90 and 90 deg`.
        expected: String,
    },
    /// The inputs do not say what to solve (too few, too many, or a pair of
    /// target quantities that cannot define an orbit).
    Usage(String),
    /// The burnout radius is below the body's surface.
    BelowSurface {
        /// Burnout radius, m.
        burnout_radius_m: f64,
        /// Surface (equatorial) radius, m.
        surface_radius_m: f64,
    },
    /// The burnout radius is below the target periapsis radius.
    BelowPeriapsis {
        /// Burnout radius, m.
        burnout_radius_m: f64,
        /// Target periapsis radius, m.
        periapsis_radius_m: f64,
    },
    /// The burnout radius is above the target apoapsis radius.
    AboveApoapsis {
        /// Burnout radius, m.
        burnout_radius_m: f64,
        /// Target apoapsis radius, m.
        apoapsis_radius_m: f64,
    },
    /// The target quantities contradict each other or the burnout state.
    Infeasible(String),
    /// A file or stream could not be read or written; the message names it
    /// and the system's reason.
    Io(String),
    /// A computed result is not finite (the inputs' magnitudes are beyond
    /// what double precision carries, e.g. a gravitational parameter of
    /// 1e-300).
    NonFiniteResult {
        /// Name of the quantity, with its unit.
        quantity: &'static str,
        /// The value computed.
        value: f64,
    },
    /// A numerical solve did not converge.
    NoConvergence {
        /// Solver used.
        method: String,
        /// Iterations taken.
        iterations: u64,
        /// Largest remaining residual (relative).
        residual: f64,
        /// The solver's own termination reason.
        termination: String,
    },
}

impl Error {
    /// Whether this is a usage problem or an infeasible target.
    pub fn class(&self) -> ErrorClass {
        match self {
            Error::InvalidValue { .. }
            | Error::NotFinite { .. }
            | Error::NotPositive { .. }
            | Error::OutOfRange { .. }
            | Error::NonFiniteResult { .. }
            | Error::Usage(_) => ErrorClass::Usage,
            Error::BelowSurface { .. }
            | Error::BelowPeriapsis { .. }
            | Error::AboveApoapsis { .. }
            | Error::Infeasible(_)
            | Error::NoConvergence { .. } => ErrorClass::Infeasible,
            Error::Io(_) => ErrorClass::Io,
        }
    }

    /// Short machine tag for a row that failed with this error, as used in
    /// the `status` of scan and batch rows: `infeasible` when no trajectory
    /// meets the target, `invalid` when the row could not be answered (its
    /// input, an I/O failure, or a numerical solve that did not converge:
    /// that proves nothing about the target, so it is not `infeasible`, though
    /// a single solve still exits 3 for it, see [`Error::class`]).
    pub fn status(&self) -> &'static str {
        if let Error::NoConvergence { .. } = self {
            return "invalid";
        }
        match self.class() {
            ErrorClass::Usage | ErrorClass::Io => "invalid",
            ErrorClass::Infeasible => "infeasible",
        }
    }
}

/// Formats a float compactly for messages: up to 10 significant digits.
pub(crate) fn g(x: f64) -> String {
    if x == 0.0 || !x.is_finite() {
        return format!("{x}");
    }
    let a = x.abs();
    if (1e-4..1e15).contains(&a) {
        let digits = 10 - (a.log10().floor() as i32 + 1);
        let s = format!("{:.*}", digits.max(0) as usize, x);
        if s.contains('.') {
            s.trim_end_matches('0').trim_end_matches('.').to_string()
        } else {
            s
        }
    } else {
        format!("{x:.9e}")
    }
}

/// Two values formatted so that they look different when they differ: ten
/// significant digits, or every digit when ten would print them alike.
pub(crate) fn distinct(a: f64, b: f64) -> (String, String) {
    let (x, y) = (g(a), g(b));
    if x == y && a.to_bits() != b.to_bits() {
        (format!("{a:?}"), format!("{b:?}"))
    } else {
        (x, y)
    }
}

impl fmt::Display for Error {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        match self {
            Error::InvalidValue {
                flag,
                text,
                kind,
                reason,
            } => write!(f, "invalid {kind} '{text}' for {flag}: {reason}"),
            Error::NotFinite { quantity, value } => {
                write!(f, "{quantity} is {value}: expected a finite number")
            }
            Error::NotPositive {
                quantity,
                value,
                unit,
            } => write!(f, "{quantity} {} {unit} must be positive", g(*value)),
            Error::OutOfRange {
                quantity,
                value,
                unit,
                expected,
            } => {
                let v = g(*value);
                let shown = if unit.is_empty() { v } else { format!("{v} {unit}") };
                write!(f, "{quantity} {shown} is out of range: expected {expected}")
            }
            Error::Usage(msg) => f.write_str(&render(msg, &|_| None)),
            Error::BelowSurface {
                burnout_radius_m,
                surface_radius_m,
            } => write!(
                f,
                "burnout radius {} m is below the surface radius {} m (burnout altitude {} m)",
                g(*burnout_radius_m),
                g(*surface_radius_m),
                g(burnout_radius_m - surface_radius_m)
            ),
            Error::BelowPeriapsis {
                burnout_radius_m,
                periapsis_radius_m,
            } => {
                let (a, b) = distinct(*burnout_radius_m, *periapsis_radius_m);
                write!(
                    f,
                    "burnout radius {a} m is below periapsis radius {b} m: the target orbit never comes that low"
                )
            }
            Error::AboveApoapsis {
                burnout_radius_m,
                apoapsis_radius_m,
            } => {
                let (a, b) = distinct(*burnout_radius_m, *apoapsis_radius_m);
                write!(
                    f,
                    "burnout radius {a} m is above apoapsis radius {b} m: the target orbit never goes that high"
                )
            }
            Error::Infeasible(msg) | Error::Io(msg) => f.write_str(&render(msg, &|_| None)),
            Error::NonFiniteResult { quantity, value } => write!(
                f,
                "{quantity} comes out as {value}, not a finite number: the inputs' magnitudes (gravitational parameter, radii, speeds) are beyond what double precision carries for this answer"
            ),
            Error::NoConvergence {
                method,
                iterations,
                residual,
                termination,
            } => write!(
                f,
                "no convergence: {method} stopped after {iterations} iterations ({termination}) with largest relative residual {}",
                g(*residual)
            ),
        }
    }
}

/// Marks of a mention inside a message: start, separator, end.
const MENTION_START: char = '\u{1}';
const MENTION_SEP: char = '\u{1f}';
const MENTION_END: char = '\u{2}';

/// A mention of an input inside a message. The core names inputs by what
/// they are, never by a flag: `id` identifies the input (a target
/// quantity's key such as `periapsis_radius_m`, or an input key such as
/// `speed`) and `plain` is the words [`Error`]'s `Display` shows. The input
/// layer, which knows what the user typed, shows the flag instead
/// ([`Error::with_names`]).
pub fn mention(id: &str, plain: &str) -> String {
    format!("{MENTION_START}{id}{MENTION_SEP}{plain}{MENTION_END}")
}

/// `text` with every mention replaced by `name(id)`, or by its plain words
/// where `name` gives none.
pub fn render<'a>(
    text: &'a str,
    name: &dyn Fn(&str) -> Option<String>,
) -> std::borrow::Cow<'a, str> {
    if !text.contains(MENTION_START) {
        return std::borrow::Cow::Borrowed(text);
    }
    let mut out = String::with_capacity(text.len());
    let mut rest = text;
    while let Some(i) = rest.find(MENTION_START) {
        out.push_str(&rest[..i]);
        let after = &rest[i + 1..];
        let Some(end) = after.find(MENTION_END) else {
            out.push_str(after);
            return std::borrow::Cow::Owned(out);
        };
        let inner = &after[..end];
        let (id, plain) = inner.split_once(MENTION_SEP).unwrap_or((inner, inner));
        match name(id) {
            Some(n) => out.push_str(&n),
            None => out.push_str(plain),
        }
        rest = &after[end + 1..];
    }
    out.push_str(rest);
    std::borrow::Cow::Owned(out)
}

impl Error {
    /// The inputs the message mentions, by id (see [`mention`]), in order.
    pub fn mentions(&self) -> Vec<String> {
        let text = match self {
            Error::Usage(m) | Error::Infeasible(m) | Error::Io(m) => m.as_str(),
            Error::OutOfRange { expected, .. } => expected.as_str(),
            _ => "",
        };
        let mut out = Vec::new();
        let mut rest = text;
        while let Some(i) = rest.find(MENTION_START) {
            let after = &rest[i + 1..];
            let Some(end) = after.find(MENTION_END) else {
                break;
            };
            let inner = &after[..end];
            out.push(
                inner
                    .split_once(MENTION_SEP)
                    .map_or(inner, |p| p.0)
                    .to_string(),
            );
            rest = &after[end + 1..];
        }
        out
    }

    /// The error with every mention named by `name` (the input layer passes
    /// the flags the user typed); mentions `name` does not know keep their
    /// plain words. The result mentions nothing.
    pub fn with_names(self, name: &dyn Fn(&str) -> Option<String>) -> Error {
        let r = |m: String| render(&m, name).into_owned();
        match self {
            Error::Usage(m) => Error::Usage(r(m)),
            Error::Infeasible(m) => Error::Infeasible(r(m)),
            Error::Io(m) => Error::Io(r(m)),
            Error::OutOfRange {
                quantity,
                value,
                unit,
                expected,
            } => Error::OutOfRange {
                quantity,
                value,
                unit,
                expected: r(expected),
            },
            other => other,
        }
    }
}

impl std::error::Error for Error {}

/// Checks that `value` is finite.
pub(crate) fn finite(quantity: &'static str, value: f64) -> Result<f64, Error> {
    if value.is_finite() {
        Ok(value)
    } else {
        Err(Error::NotFinite { quantity, value })
    }
}

/// Checks that `value` is finite and strictly positive.
pub(crate) fn positive(
    quantity: &'static str,
    value: f64,
    unit: &'static str,
) -> Result<f64, Error> {
    finite(quantity, value)?;
    if value > 0.0 {
        Ok(value)
    } else {
        Err(Error::NotPositive {
            quantity,
            value,
            unit,
        })
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn mentions_show_plain_words_unless_named() {
        let e = Error::Usage(format!(
            "{} alone leaves it free",
            mention("ecc", "eccentricity")
        ));
        assert_eq!(e.to_string(), "eccentricity alone leaves it free");
        assert_eq!(e.mentions(), vec!["ecc".to_string()]);
        let named = e.with_names(&|id| (id == "ecc").then(|| "--ecc".to_string()));
        assert_eq!(named.to_string(), "--ecc alone leaves it free");
        assert!(named.mentions().is_empty());
    }

    #[test]
    fn io_failures_are_their_own_class_not_a_usage_error() {
        let e = Error::Io("cannot write --out 'x.csv': permission denied".into());
        assert_eq!(e.class(), ErrorClass::Io);
        assert_ne!(e.class(), ErrorClass::Usage);
        assert_eq!(
            e.to_string(),
            "cannot write --out 'x.csv': permission denied"
        );
    }

    #[test]
    fn messages_are_one_line_and_name_values() {
        let e = Error::BelowPeriapsis {
            burnout_radius_m: 6_371_000.0,
            periapsis_radius_m: 6_578_000.0,
        };
        let s = e.to_string();
        assert!(s.contains("6371000 m") && s.contains("6578000 m"), "{s}");
        assert!(!s.contains('\n'));
        assert_eq!(e.class(), ErrorClass::Infeasible);
    }

    #[test]
    fn non_convergence_is_an_invalid_row_but_keeps_exit_class_infeasible() {
        let e = Error::NoConvergence {
            method: "trust-region (argmin)".into(),
            iterations: 7,
            residual: 0.25,
            termination: "max iterations".into(),
        };
        assert_eq!(e.status(), "invalid");
        assert_eq!(e.class(), ErrorClass::Infeasible);
        assert_eq!(Error::Infeasible("x".into()).status(), "infeasible");
    }

    #[test]
    fn compact_format_keeps_ten_digits() {
        assert_eq!(g(6578137.0), "6578137");
        assert_eq!(g(0.5), "0.5");
        assert_eq!(g(-2.5), "-2.5");
        assert_eq!(g(1.0e20), "1.000000000e20");
    }

    #[test]
    fn positive_rejects_zero_and_nan() {
        assert!(positive("x", 0.0, "m").is_err());
        assert!(matches!(
            positive("x", f64::NAN, "m"),
            Err(Error::NotFinite { .. })
        ));
        assert_eq!(positive("x", 2.0, "m"), Ok(2.0));
    }
}
