//! Runs: the scenario, the ice and coupled year loops, one input path for every combination of grids, and the recorded timeline.

pub mod coupled;
pub mod inputs;
pub mod recorded;
pub mod recorder;
pub mod scenario;
pub mod simulation;
pub mod timeline;
pub mod timeline_bytes;
