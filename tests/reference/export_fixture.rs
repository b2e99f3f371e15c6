//! A short coupled run on the invented sample valley (25 years, ice and plants from the
//! sample's stage grid, as the page's worker runs it), recorded once and shared by the
//! export checks.

use std::path::PathBuf;
use std::sync::OnceLock;

use forefield_engine::export::ExportMeta;
use forefield_engine::io::geotiff::read_geotiff;
use forefield_engine::run::recorded::{RecordedRow, RecordedRun};
use forefield_engine::run::scenario::Scenario;
use forefield_engine::run::simulation::bed_from_surface;
use forefield_engine::run::timeline::Timeline;
use forefield_engine::Grid;

pub struct ExportRun {
    pub scenario: Scenario,
    pub meta: ExportMeta,
    pub dem: Grid,
    pub timeline: Timeline,
    pub rows: Vec<RecordedRow>,
}

pub const N_YEARS: u32 = 25;

pub fn sample_path(name: &str) -> PathBuf {
    PathBuf::from(env!("CARGO_MANIFEST_DIR"))
        .join("../sample-grids")
        .join(name)
}

pub fn sample_bytes(name: &str) -> Vec<u8> {
    let path = sample_path(name);
    std::fs::read(&path).unwrap_or_else(|e| panic!("reading {}: {e}", path.display()))
}

pub fn sample_grid(name: &str) -> Grid {
    read_geotiff(&sample_bytes(name), name).expect("sample grid reads")
}

pub fn export_run() -> &'static ExportRun {
    static RUN: OnceLock<ExportRun> = OnceLock::new();
    RUN.get_or_init(|| {
        let text = String::from_utf8(sample_bytes("valley_warming.json")).unwrap();
        let mut scenario = Scenario::from_json(&text).expect("sample scenario");
        scenario.n_years = N_YEARS;
        scenario.output_years.clear();
        let dem = sample_grid("valley_dem.tif");
        let ice = sample_grid("valley_ice_thickness.tif");
        let stages = sample_grid("valley_vegetation.tif");
        let bed = bed_from_surface(&dem, &ice).unwrap();
        let mut run =
            RecordedRun::with_plants(&bed, &ice, None, &scenario, Some(&stages), |name| {
                Err(format!("{name}: no files in this check"))
            })
            .unwrap();
        while run.step_year().is_some() {}
        let timeline = run.finish().unwrap();
        ExportRun {
            meta: ExportMeta::for_run(&scenario, &timeline),
            scenario,
            dem,
            timeline,
            rows: run.rows().to_vec(),
        }
    })
}
