//! Quarry's numerical core: formulas, models, integration, equilibria and their classification.
//!
//! Nothing here knows about windows or argument parsing; the desktop app and the `quarry`
//! command line are thin fronts over this crate.

pub mod analysis;
pub mod compiled;
pub mod contour;
pub mod cycle;
pub mod equilibria;
pub mod export;
pub mod expr;
pub mod field;
pub mod harvest;
pub mod integrate;
pub mod library;
pub mod linear;
pub mod linearised;
pub mod marching;
pub mod model;
pub mod nullcline;
pub mod orbit;
pub mod scenario;
pub mod scene;
pub mod separatrix;
pub mod streamlines;
pub mod sustained;
pub mod sweep;
#[cfg(test)]
mod test_support;
pub mod verdict;
