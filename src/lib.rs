//! # burnout
//!
//! Inverse burnout targeting: for a target orbit and a burnout (engine
//! cutoff) radius, the burnout speed and flight-path angle that reach it,
//! both branches, with analytic sensitivities and feasibility checks.
//!
//! ```
//! use burnout::physics::body::Body;
//! use burnout::physics::orbit::Conic;
//! use burnout::solve::invert::burnout_for_conic;
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
//! at the edges ([`input`], [`report`]).
#![warn(missing_docs)]
#![deny(clippy::float_cmp)]

pub mod batch;
pub mod columns;
pub mod error;
pub mod input;
pub mod physics;
pub mod report;
pub mod scan;
pub mod solve;
#[cfg(test)]
pub(crate) mod strategies;

pub use error::{Error, ErrorClass};
pub use physics::body::Body;
pub use physics::site::SiteInputs;
pub use physics::state::{Branch, BurnoutState};
pub use solve::problem::{Problem, Solution, Solved};
pub use solve::solve;
pub use solve::target::{Target, TargetQuantity};
