//! A decompression bomb: a 3 x 3 GeoTIFF whose one Deflate strip inflates to 1 GiB. The
//! reader takes the 36 bytes the header declares and stops, so memory stays near the file's
//! size. Its own test binary, so the peak memory it reads is this test's alone.

use std::io::Write;

use flate2::write::ZlibEncoder;
use flate2::Compression;
use forefield_engine::base::grid::{Grid, GridGeometry};
use forefield_engine::io::geotiff::{
    read_geotiff, write_geotiff_with, TiffCompression, WriteOptions,
};

const INFLATED_BYTES: usize = 1 << 30;

/// Peak resident memory of this process so far, bytes (Linux `VmHWM`).
fn peak_memory_bytes() -> Option<usize> {
    let status = std::fs::read_to_string("/proc/self/status").ok()?;
    let line = status.lines().find(|l| l.starts_with("VmHWM:"))?;
    let kib: usize = line.split_whitespace().nth(1)?.parse().ok()?;
    Some(kib * 1024)
}

/// Reads a little-endian u16 or u32 at `at`.
fn u16_at(b: &[u8], at: usize) -> u16 {
    u16::from_le_bytes([b[at], b[at + 1]])
}

fn u32_at(b: &[u8], at: usize) -> u32 {
    u32::from_le_bytes([b[at], b[at + 1], b[at + 2], b[at + 3]])
}

/// A valid uncompressed 3 x 3 GeoTIFF with its strip replaced by `strip`, marked Deflate.
fn geotiff_with_strip(strip: &[u8]) -> Vec<u8> {
    let geometry = GridGeometry {
        n_cols: 3,
        n_rows: 3,
        cell_size_m: 10.0,
        west_m: 500_000.0,
        north_m: 5_000_000.0,
        epsg: Some(32632),
    };
    let options = WriteOptions {
        compression: TiffCompression::None,
        ..WriteOptions::default()
    };
    let mut bytes =
        write_geotiff_with(&Grid::filled(geometry, 1.0), options).expect("a small GeoTIFF");
    assert_eq!(&bytes[..4], b"II*\0", "little-endian classic TIFF");
    let ifd = u32_at(&bytes, 4) as usize;
    let strip_at = bytes.len() as u32;
    for entry in 0..u16_at(&bytes, ifd) as usize {
        let at = ifd + 2 + 12 * entry;
        let (tag, count) = (u16_at(&bytes, at), u32_at(&bytes, at + 4));
        let value = at + 8;
        match tag {
            // Compression: 8, Adobe Deflate (a zlib stream).
            259 => bytes[value..value + 2].copy_from_slice(&8u16.to_le_bytes()),
            // One strip: its offset and byte count held in the entry itself.
            273 | 279 => {
                assert_eq!(count, 1, "one strip");
                let new = if tag == 273 {
                    strip_at
                } else {
                    strip.len() as u32
                };
                let kind = u16_at(&bytes, at + 2);
                if kind == 3 {
                    bytes[value..value + 2].copy_from_slice(&(new as u16).to_le_bytes());
                } else {
                    bytes[value..value + 4].copy_from_slice(&new.to_le_bytes());
                }
            }
            _ => {}
        }
    }
    bytes.extend_from_slice(strip);
    bytes
}

fn zlib(bytes: &[u8]) -> Vec<u8> {
    let mut encoder = ZlibEncoder::new(Vec::new(), Compression::fast());
    encoder.write_all(bytes).expect("in memory");
    encoder.finish().expect("in memory")
}

#[test]
fn the_patched_file_reads_its_own_strip() {
    // The control: an honest Deflate strip of nine 2.5s reads back as such, so the bomb below
    // is read the same way and not refused for some other fault of the patching.
    let strip: Vec<u8> = (0..9).flat_map(|_| 2.5f32.to_le_bytes()).collect();
    let grid = read_geotiff(&geotiff_with_strip(&zlib(&strip)), "control.tif").expect("reads");
    assert_eq!(grid.values, vec![2.5; 9]);
}

#[test]
fn a_strip_that_inflates_to_a_gigabyte_costs_no_gigabyte() {
    let mut encoder = ZlibEncoder::new(Vec::new(), Compression::fast());
    // Written a mebibyte at a time: the test itself never holds the gigabyte.
    let zeros = vec![0u8; 1 << 20];
    for _ in 0..INFLATED_BYTES / zeros.len() {
        encoder.write_all(&zeros).expect("in memory");
    }
    let bomb = encoder.finish().expect("in memory");
    assert!(bomb.len() < 8 << 20, "the bomb is {} bytes", bomb.len());
    let file = geotiff_with_strip(&bomb);

    let before = peak_memory_bytes();
    let outcome = read_geotiff(&file, "bomb.tif");
    let after = peak_memory_bytes();
    // Either reading the declared 9 zeros or a typed refusal is fine; a gigabyte is not.
    match &outcome {
        Ok(grid) => assert!(grid.values.iter().all(|&v| v == 0.0)),
        Err(error) => assert!(error.to_string().starts_with("bomb.tif: "), "{error}"),
    }
    if let (Some(before), Some(after)) = (before, after) {
        assert!(
            after.saturating_sub(before) < 64 << 20,
            "peak memory rose {} MiB reading a {} KiB file",
            (after - before) >> 20,
            file.len() >> 10
        );
    }
}
