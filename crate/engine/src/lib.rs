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

// Layers, each importing only from those above it in this list (`tests/layers.rs` fails on
// an import that climbs or a loop between modules).
pub mod base;
pub mod export;
pub mod ice;
pub mod io;
pub mod params;
pub mod plants;
pub mod run;
pub mod sample;
pub mod view;

pub use ice::{
    climate, ela_calibration, exposure, flow as ice_flow, glacier_domain, mass_balance,
    outline_thickness as ice_outline, snow_redistribution,
};
pub use io::{align, geotiff, heightmap_png, outline};
pub use plants::{
    dispersal, disturbance, establishment, kernels, pft, soil, succession, vegetation,
};
pub use run::{
    coupled, inputs as run_inputs, recorded as recorded_run, scenario, simulation, timeline,
};
pub use view::{lakes, layers, render, steep_ground};

pub use base::grid::{Grid, GridGeometry, MAX_CELLS};
pub use base::load_error::{LoadError, LoadProblem};
