//! Forefield engine: glacier retreat and plant colonisation on regular projected grids.
//!
//! The engine knows nothing about the browser, files, the clock or unseeded randomness:
//! inputs arrive as bytes or plain values, outputs leave as values or bytes. The wasm layer
//! (`forefield-wasm`) and the command line (`forefield-cli`) are thin front ends over it.
//!
//! Transcendental functions (`exp`, `ln`, `pow`, trigonometry) come from the `libm` crate,
//! never from `f32`/`f64` methods: those call the platform's C library natively and a Rust
//! port in wasm, which may differ by an ulp, and the page and the command line must give the
//! same bytes for the same scenario and seed. `sqrt` is correctly rounded everywhere and stays.

pub mod align;
pub mod climate;
pub mod coupled;
pub mod dispersal;
pub mod disturbance;
pub mod ela_calibration;
pub mod establishment;
pub mod export;
pub mod exposure;
pub mod geotiff;
pub mod glacier_domain;
pub mod grid;
pub mod heightmap_png;
pub mod ice_flow;
pub mod ice_outline;
pub mod lakes;
pub mod layers;
pub mod load_error;
pub mod mass_balance;
pub mod outline;
pub mod pft;
pub mod recorded_run;
pub mod render;
pub mod run_inputs;
pub mod sample;
pub mod scenario;
pub mod simulation;
pub mod snow_redistribution;
pub mod soil;
pub mod steep_ground;
pub mod succession;
pub mod terrain;
pub mod timeline;
pub mod vegetation;
pub mod zones;

pub use grid::{Grid, GridGeometry, MAX_CELLS};
pub use load_error::{LoadError, LoadProblem};
