//! Shared helpers for the reference checks: fixture paths and bytes.

use std::path::PathBuf;

use forefield_engine::base::grid::GridGeometry;
use forefield_engine::run::coupled::CoupledSimulation;
use forefield_engine::run::scenario::Scenario;
use forefield_engine::sample::SampleValley;

/// Path of a file in `tests/fixtures/`.
pub fn fixture_path(name: &str) -> PathBuf {
    PathBuf::from(env!("CARGO_MANIFEST_DIR"))
        .join("fixtures")
        .join(name)
}

/// Bytes of a file in `tests/fixtures/`.
pub fn fixture(name: &str) -> Vec<u8> {
    let path = fixture_path(name);
    std::fs::read(&path).unwrap_or_else(|e| panic!("reading fixture {}: {e}", path.display()))
}

/// A grid of square cells with its north-west corner at the origin and no CRS.
pub fn local_geometry(n_cols: usize, n_rows: usize, cell_size_m: f64) -> GridGeometry {
    GridGeometry {
        n_cols,
        n_rows,
        cell_size_m,
        west_m: 0.0,
        north_m: 0.0,
        epsg: None,
    }
}

/// A grid of square cells in WGS 84 / UTM zone 32N, north-west corner at (500 km, 5000 km).
pub fn utm_geometry(n_cols: usize, n_rows: usize, cell_size_m: f64) -> GridGeometry {
    GridGeometry {
        n_cols,
        n_rows,
        cell_size_m,
        west_m: 500_000.0,
        north_m: 5_000_000.0,
        epsg: Some(32632),
    }
}

/// A coupled run of ice and plants over an invented sample valley, from its own vegetation.
pub fn sample_run(valley: &SampleValley, scenario: &Scenario) -> CoupledSimulation {
    CoupledSimulation::new(
        &valley.bed_m,
        &valley.ice_thickness_m,
        scenario,
        Some(&valley.vegetation),
    )
    .expect("valid run")
}
