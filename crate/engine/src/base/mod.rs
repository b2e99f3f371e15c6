//! Grids, their geometry and load errors, and terrain derivatives: what every layer above builds on.

pub mod grid;
pub mod load_error;
pub mod terrain;
