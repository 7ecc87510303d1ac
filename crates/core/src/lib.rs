//! Quarry's numerical core: formulas, models, integration, equilibria and their classification.
//!
//! Nothing here knows about windows or argument parsing; the desktop app and the `quarry`
//! command line are thin fronts over this crate.

pub mod expr;
pub mod integrate;
