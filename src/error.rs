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

    /// Short machine tag for the error's class, as used in batch `status`.
    pub fn status(&self) -> &'static str {
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
            Error::Usage(msg) => f.write_str(msg),
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
            Error::Infeasible(msg) | Error::Io(msg) => f.write_str(msg),
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
