//! `forefield export RUN_DIR`: writes any export for any year
//! and layer from a finished run folder (its timeline, terrain and scenario) without running
//! the model again.

use anyhow::{Context, Result};
use forefield_engine::export::{ExportMeta, CAUTION};
use forefield_engine::io::geotiff::read_geotiff;
use forefield_engine::run::scenario::Scenario;
use forefield_engine::run::timeline::Timeline;

use crate::args::ExportArgs;
use crate::exports::write_exports;
use crate::run::{SCENARIO_FILE, TERRAIN_FILE, TIMELINE_FILE};

pub fn export(args: ExportArgs) -> Result<()> {
    let ExportArgs {
        run_dir,
        out,
        export: request,
    } = args;
    let read = |name: &str| -> Result<Vec<u8>> {
        let path = run_dir.join(name);
        std::fs::read(&path).with_context(|| format!("reading {}", path.display()))
    };
    let timeline = Timeline::from_bytes(&read(TIMELINE_FILE)?)
        .with_context(|| format!("{}", run_dir.join(TIMELINE_FILE).display()))?;
    let terrain = read_geotiff(&read(TERRAIN_FILE)?, TERRAIN_FILE)?;
    let text = String::from_utf8(read(SCENARIO_FILE)?)
        .with_context(|| format!("{} is not UTF-8 text", SCENARIO_FILE))?;
    let scenario = Scenario::from_json(&text).with_context(|| SCENARIO_FILE.to_string())?;
    let meta = ExportMeta::for_run(&scenario, &timeline);
    let out_dir = out.unwrap_or(run_dir);
    write_exports(&out_dir, &timeline, &terrain, &meta, &request)?;
    outln!("{CAUTION}");
    Ok(())
}
