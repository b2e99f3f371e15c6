//! Files past the engine's limits are refused from their headers, before the memory they
//! claim is asked for, with a message naming the file and the limit; and a very detailed
//! outline is handled in time proportional to its size.

use forefield_engine::base::grid::GridGeometry;
use forefield_engine::io::geotiff::{read_geotiff, MAX_SOURCE_CELLS};
use forefield_engine::io::outline::outline_mask;
use forefield_engine::run::scenario::{Scenario, MAX_YEARS};

/// A little-endian TIFF whose header claims `width` x `height` float cells over 16 bytes of
/// data (TIFF 6.0: a header, one IFD of 12-byte entries, then the strip).
fn tiff_claiming(width: u32, height: u32) -> Vec<u8> {
    const SHORT: u16 = 3;
    const LONG: u16 = 4;
    let entries: [(u16, u16, u32); 10] = [
        (256, LONG, width),  // ImageWidth
        (257, LONG, height), // ImageLength
        (258, SHORT, 32),    // BitsPerSample
        (259, SHORT, 1),     // Compression: none
        (262, SHORT, 1),     // PhotometricInterpretation: black is zero
        (273, LONG, 0),      // StripOffsets, filled in below
        (277, SHORT, 1),     // SamplesPerPixel
        (278, LONG, height), // RowsPerStrip
        (279, LONG, 16),     // StripByteCounts
        (339, SHORT, 3),     // SampleFormat: IEEE float
    ];
    let ifd_len = 2 + entries.len() * 12 + 4;
    let data_offset = (8 + ifd_len) as u32;
    let mut bytes = b"II".to_vec();
    bytes.extend(42u16.to_le_bytes());
    bytes.extend(8u32.to_le_bytes());
    bytes.extend((entries.len() as u16).to_le_bytes());
    for (tag, kind, value) in entries {
        let value = if tag == 273 { data_offset } else { value };
        bytes.extend(tag.to_le_bytes());
        bytes.extend(kind.to_le_bytes());
        bytes.extend(1u32.to_le_bytes());
        bytes.extend(value.to_le_bytes());
    }
    bytes.extend(0u32.to_le_bytes());
    bytes.extend([0u8; 16]);
    bytes
}

#[test]
fn a_geotiff_claiming_ten_billion_cells_is_refused_from_its_header() {
    // 40 GB of float cells claimed; the refusal comes before any of it is asked for (were it
    // asked for, this test would abort rather than fail).
    let bytes = tiff_claiming(100_000, 100_000);
    let error = read_geotiff(&bytes, "huge_dem.tif").expect_err("refused");
    let message = error.to_string();
    assert!(message.starts_with("huge_dem.tif: "), "{message}");
    assert!(
        message.contains("10000000000 cells") && message.contains(&MAX_SOURCE_CELLS.to_string()),
        "{message}"
    );
}

#[test]
fn a_scenario_longer_than_the_limit_is_refused_naming_it() {
    let scenario = Scenario {
        n_years: MAX_YEARS + 1,
        ..Scenario::default()
    };
    let message = scenario.validate().expect_err("refused").to_string();
    assert!(
        message.contains("n_years") && message.contains(&MAX_YEARS.to_string()),
        "{message}"
    );
}

#[test]
fn an_outline_of_a_million_vertices_rasterises_to_its_area() {
    // A circle of radius 4 km drawn with a million vertices on a 2048 x 2048 grid of 5 m: the
    // marked cells' area is the disc's to within the cells along its rim.
    let grid = GridGeometry {
        n_cols: 2048,
        n_rows: 2048,
        cell_size_m: 5.0,
        west_m: 500_000.0,
        north_m: 5_010_240.0,
        epsg: Some(32632),
    };
    let (cx, cy, r) = (505_120.0, 5_005_120.0, 4000.0);
    let n = 1_000_000;
    let mut text = String::with_capacity(n * 32);
    text.push_str(r#"{"type":"Polygon","coordinates":[["#);
    for i in 0..=n {
        let angle = std::f64::consts::TAU * (i % n) as f64 / n as f64;
        if i > 0 {
            text.push(',');
        }
        text.push_str(&format!(
            "[{:.3},{:.3}]",
            cx + r * angle.cos(),
            cy + r * angle.sin()
        ));
    }
    text.push_str("]]}");
    let mask = outline_mask(&text, "detailed.geojson", &grid).expect("valid outline");
    let area = mask.iter().filter(|&&m| m).count() as f64 * 25.0;
    let disc = std::f64::consts::PI * r * r;
    assert!(
        (area / disc - 1.0).abs() < 0.002,
        "{area} m² against {disc} m²"
    );
}
