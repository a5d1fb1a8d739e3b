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
