//! Writers for solved problems: human tables, JSON and CSV. Each takes any
//! `impl std::io::Write`.

pub mod batch;
pub mod budget;
pub mod csv;
pub mod float;
pub mod json;
pub mod plot;
pub mod rows;
pub mod scan;
pub mod table;

/// The caution printed with every human-readable result.
pub const CAUTION: &str = "caution: analysis support only. Two-body, impulsive-burnout model (no drag, no oblateness, no finite burns). Verify independently before use; local range-safety rules, flight-safety codes and licensed practice govern any real flight.";

/// Five significant digits for people: fixed-point for magnitudes from
/// 1e-3 up to `fixed_below`, exponent form otherwise; "0" for zero (never
/// "-0"). The budget and the solve table share it (their bounds differ).
pub(crate) fn sig5(x: f64, fixed_below: f64) -> String {
    if x == 0.0 || !x.is_finite() {
        return if x.is_finite() {
            "0".into()
        } else {
            format!("{x}")
        };
    }
    let a = x.abs();
    if (1e-3..fixed_below).contains(&a) {
        let decimals = (4 - a.log10().floor() as i32).max(0) as usize;
        format!("{x:.decimals$}")
    } else {
        format!("{x:.4e}")
    }
}
