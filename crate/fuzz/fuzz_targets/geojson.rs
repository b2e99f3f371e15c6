//! GeoJSON outlines, domains and zones on a small UTM grid (and the degrees path).
#![no_main]

use std::sync::OnceLock;

use forefield_engine::base::grid::{Grid, GridGeometry};
use forefield_engine::io::outline::outline_mask;
use forefield_engine::export::zones::Zone;
use libfuzzer_sys::fuzz_target;

fn dem() -> &'static Grid {
    static DEM: OnceLock<Grid> = OnceLock::new();
    DEM.get_or_init(|| {
        let geometry = GridGeometry {
            n_cols: 64,
            n_rows: 64,
            cell_size_m: 25.0,
            west_m: 500_000.0,
            north_m: 5_001_600.0,
            epsg: Some(32632),
        };
        Grid::filled(geometry, 2000.0)
    })
}

fuzz_target!(|bytes: &[u8]| {
    let text = String::from_utf8_lossy(bytes);
    let _ = outline_mask(&text, "fuzzed.geojson", &dem().geometry);
    let _ = Zone::from_geojson(&text, "fuzzed.geojson", dem());
});
