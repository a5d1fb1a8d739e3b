//! # burnout
//!
//! Inverse burnout targeting: for a target orbit and a burnout (engine
//! cutoff) radius, the burnout speed and flight-path angle that reach it,
//! both branches, with analytic sensitivities and feasibility checks.
//!
//! ```
//! use burnout::body::Body;
//! use burnout::orbit::Conic;
//! use burnout::invert::burnout_for_conic;
//!
//! let earth = Body::from_name("earth").unwrap();
//! let rp = earth.radius_m + 185e3;
//! let ra = earth.radius_m + 35_786e3;
//! let transfer = Conic::from_apsides(rp, ra).unwrap();
//! let states = burnout_for_conic(earth.mu_m3_s2, &transfer, rp).unwrap();
//! assert_eq!(states.len(), 1); // burnout at periapsis: one horizontal state
//! assert!((states[0].speed_m_s - 10_252.1).abs() < 0.1);
//! ```
//!
//! The core works in SI units and radians; degrees and user units appear only
//! at the edges ([`units`], [`report`]).
#![warn(missing_docs)]
#![deny(clippy::float_cmp)]

pub mod batch;
pub mod body;
pub mod budget;
pub mod case;
pub mod error;
pub mod feasibility;
pub mod grid;
pub mod inputs;
pub mod invert;
pub mod kepler;
pub mod lean;
pub mod numeric;
pub mod orbit;
pub mod output;
pub mod problem;
pub mod report;
pub mod scan;
pub mod sensitivity;
pub mod site;
#[cfg(test)]
pub(crate) mod strategies;
pub mod target;
pub mod units;

pub use error::{Error, ErrorClass};
pub use problem::{solve, Problem, Solved};
