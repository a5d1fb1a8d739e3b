//! Numbers in, numbers out: the two-body physics the solvers stand on.
//!
//! [`body`] (catalog constants), [`orbit`] (the conic and the forward map),
//! [`state`] (the burnout state and its branch), [`kepler`] (coast times)
//! and [`site`] (launch-site geometry on a rotating body). Nothing here
//! knows a target, a flag or an output format.

pub mod body;
pub mod kepler;
pub mod orbit;
pub mod site;
pub mod state;
