//! Text in, [`crate::Problem`] out: the only layer that knows flag names,
//! case-file keys, batch column names and units as typed.
//!
//! [`keys`] is the one vocabulary table; [`units`] reads values with units,
//! [`range`] reads scan ranges, [`problem`] turns named text inputs into a
//! problem, and [`case`] reads TOML case files into the same named inputs.

pub mod case;
pub mod keys;
pub mod problem;
pub mod range;
pub mod units;
