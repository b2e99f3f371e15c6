//! The GeoTIFF reader, with and without coarsening on read.
#![no_main]

use forefield_engine::io::geotiff::{read_geotiff, read_geotiff_with, ReadOptions};
use libfuzzer_sys::fuzz_target;

fuzz_target!(|bytes: &[u8]| {
    let _ = read_geotiff(bytes, "fuzzed.tif");
    // A small cell budget makes every grid take the coarsening path too.
    let options = ReadOptions {
        max_cells: 64,
        ..ReadOptions::default()
    };
    let _ = read_geotiff_with(bytes, "fuzzed.tif", options);
});
