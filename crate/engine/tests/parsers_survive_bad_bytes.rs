//! Every reader of a planner's file answers random and mutated bytes with a value or a typed
//! error, never a panic: GeoTIFF, PNG height map with its sidecar, GeoJSON outlines and zones,
//! scenario JSON and the recorded run's bytes. Seeds are real files (the GDAL fixtures, the
//! sample valley's files, a small recorded run); each is mutated by bit flips, byte runs,
//! truncation and spliced copies, with a fixed-seed generator so a failure repeats.

use std::panic::{catch_unwind, AssertUnwindSafe};
use std::path::{Path, PathBuf};

use forefield_engine::base::grid::Grid;
use forefield_engine::export::zones::Zone;
use forefield_engine::io::geotiff::read_geotiff;
use forefield_engine::io::heightmap_png::read_heightmap_png;
use forefield_engine::io::outline::read_outline;
use forefield_engine::run::recorded::RecordedRun;
use forefield_engine::run::scenario::Scenario;
use forefield_engine::run::timeline::Timeline;
use forefield_engine::sample;

/// Inputs tried per seed file, on top of as many purely random ones.
const MUTATIONS: usize = 3000;

/// xorshift64* (Vigna 2016): enough for choosing mutations, and repeatable.
struct Rng(u64);

impl Rng {
    fn next(&mut self) -> u64 {
        self.0 ^= self.0 >> 12;
        self.0 ^= self.0 << 25;
        self.0 ^= self.0 >> 27;
        self.0.wrapping_mul(0x2545_f491_4f6c_dd1d)
    }

    fn below(&mut self, n: usize) -> usize {
        (self.next() % n.max(1) as u64) as usize
    }
}

fn mutate(seed: &[u8], rng: &mut Rng) -> Vec<u8> {
    let mut bytes = seed.to_vec();
    for _ in 0..1 + rng.below(4) {
        let len = bytes.len();
        match rng.below(6) {
            0 if len > 0 => {
                let at = rng.below(len);
                bytes[at] ^= 1 << rng.below(8);
            }
            1 if len > 0 => {
                // A run of 0x00 or 0xff: huge or zero sizes and offsets in a header.
                let at = rng.below(len);
                let fill = if rng.below(2) == 0 { 0x00 } else { 0xff };
                let end = (at + 1 + rng.below(8)).min(len);
                bytes[at..end].fill(fill);
            }
            2 => bytes.truncate(rng.below(len + 1)),
            3 if len > 0 => {
                // A slice of the file copied over another place.
                let (from, to) = (rng.below(len), rng.below(len));
                let n = rng.below(64).min(len - from).min(len - to);
                let chunk = bytes[from..from + n].to_vec();
                bytes[to..to + n].copy_from_slice(&chunk);
            }
            4 => {
                let at = rng.below(len + 1);
                let extra: Vec<u8> = (0..rng.below(32)).map(|_| rng.next() as u8).collect();
                bytes.splice(at..at, extra);
            }
            _ if len > 0 => {
                let at = rng.below(len);
                bytes[at] = rng.next() as u8;
            }
            _ => {}
        }
    }
    bytes
}

fn random_bytes(rng: &mut Rng) -> Vec<u8> {
    (0..rng.below(512)).map(|_| rng.next() as u8).collect()
}

/// Runs `parse` on the seeds, their mutations and random bytes; any panic fails the test
/// with the input's length and how it was made.
fn survives(what: &str, seeds: &[Vec<u8>], parse: impl Fn(&[u8])) {
    let mut rng = Rng(0x9e37_79b9_7f4a_7c15);
    let mut inputs: Vec<(String, Vec<u8>)> = Vec::new();
    for (i, seed) in seeds.iter().enumerate() {
        inputs.push((format!("seed {i} as is"), seed.clone()));
        for m in 0..MUTATIONS {
            inputs.push((format!("seed {i}, mutation {m}"), mutate(seed, &mut rng)));
        }
    }
    for r in 0..MUTATIONS {
        inputs.push((format!("random {r}"), random_bytes(&mut rng)));
    }
    for (how, bytes) in &inputs {
        let outcome = catch_unwind(AssertUnwindSafe(|| parse(bytes)));
        assert!(
            outcome.is_ok(),
            "{what}: panicked on {how} ({} bytes)",
            bytes.len()
        );
    }
}

fn repo_file(parts: &[&str]) -> PathBuf {
    let mut path = Path::new(env!("CARGO_MANIFEST_DIR")).join("../..");
    for part in parts {
        path = path.join(part);
    }
    path
}

fn read(parts: &[&str]) -> Vec<u8> {
    let path = repo_file(parts);
    std::fs::read(&path).unwrap_or_else(|e| panic!("reading {}: {e}", path.display()))
}

fn sample_dem() -> Grid {
    read_geotiff(&read(&["sample-grids", "valley_dem.tif"]), "valley_dem.tif").expect("sample")
}

#[test]
fn geotiff_reader_survives_bad_bytes() {
    let seeds: Vec<Vec<u8>> = [
        "gdal_u8_none.tif",
        "gdal_i16_lzw_pred2.tif",
        "gdal_f32_deflate_pred3.tif",
        "gdal_u16_tiled_deflate_pred2_bigendian.tif",
        "gdal_f64_none_bigendian.tif",
    ]
    .iter()
    .map(|name| read(&["tests", "fixtures", name]))
    .collect();
    survives("GeoTIFF", &seeds, |bytes| {
        let _ = read_geotiff(bytes, "fuzzed.tif");
    });
}

#[test]
fn heightmap_png_reader_survives_bad_bytes() {
    let (width, height) = (9u32, 7u32);
    let mut png_bytes = Vec::new();
    {
        let mut encoder = png::Encoder::new(&mut png_bytes, width, height);
        encoder.set_color(png::ColorType::Grayscale);
        encoder.set_depth(png::BitDepth::Sixteen);
        let mut writer = encoder.write_header().expect("header");
        let data: Vec<u8> = (0..width * height)
            .flat_map(|i| ((i * 997) as u16).to_be_bytes())
            .collect();
        writer.write_image_data(&data).expect("pixels");
    }
    let sidecar = r#"{"west_m": 500000, "north_m": 5000000, "cell_size_m": 25, "epsg": 32632,
        "vertical_scale_m": 0.1}"#;
    let png_ok = png_bytes.clone();
    survives("PNG height map", &[png_bytes], |bytes| {
        let _ = read_heightmap_png(bytes, sidecar, "fuzzed.png");
    });
    survives("PNG sidecar", &[sidecar.as_bytes().to_vec()], |bytes| {
        let _ = read_heightmap_png(&png_ok, &String::from_utf8_lossy(bytes), "fuzzed.png");
    });
}

#[test]
fn geojson_readers_survive_bad_bytes() {
    let dem = sample_dem();
    let seeds = vec![read(&["sample-grids", "valley_glacier_outline.geojson"])];
    survives("glacier outline GeoJSON", &seeds, |bytes| {
        let _ = read_outline(
            &String::from_utf8_lossy(bytes),
            "fuzzed.geojson",
            &dem.geometry,
        );
    });
    survives("zone GeoJSON", &seeds, |bytes| {
        let _ = Zone::from_geojson(&String::from_utf8_lossy(bytes), "fuzzed.geojson", &dem);
    });
}

#[test]
fn scenario_reader_survives_bad_bytes() {
    let seeds = vec![
        read(&["sample-grids", "valley_warming.json"]),
        Scenario::default().to_json().into_bytes(),
    ];
    survives("scenario JSON", &seeds, |bytes| {
        if let Ok(scenario) = Scenario::from_json(&String::from_utf8_lossy(bytes)) {
            let _ = scenario.validate();
        }
    });
}

#[test]
fn run_reader_survives_bad_bytes() {
    let valley = sample::generate(24);
    let scenario = Scenario {
        n_years: 4,
        ..Scenario::default()
    };
    let mut run = RecordedRun::with_plants(
        &valley.bed_m,
        &valley.ice_thickness_m,
        None,
        &scenario,
        Some(&valley.vegetation),
        |name| Err(format!("no file {name}")),
    )
    .expect("valid run");
    while run.step_year().is_some() {}
    let bytes = run.finish().expect("timeline").to_bytes();
    assert!(
        Timeline::from_bytes(&bytes).is_ok(),
        "the seed itself reads"
    );
    survives("recorded run", &[bytes], |bytes| {
        let _ = Timeline::from_bytes(bytes);
    });
}
