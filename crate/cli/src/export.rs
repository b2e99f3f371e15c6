//! `forefield export RUN_DIR [--out DIR] [export options]`: writes any export for any year
//! and layer from a finished run folder (its timeline, terrain and scenario) without running
//! the model again.

use std::path::PathBuf;

use anyhow::{bail, Context, Result};
use forefield_engine::export::{ExportMeta, CAUTION};
use forefield_engine::geotiff::read_geotiff;
use forefield_engine::scenario::Scenario;
use forefield_engine::timeline::Timeline;

use crate::exports::{export_options, write_exports, ExportRequest};
use crate::run::{SCENARIO_FILE, TERRAIN_FILE, TIMELINE_FILE};

pub fn usage() -> String {
    format!(
        "forefield export RUN_DIR [--out DIR] [options]

    RUN_DIR             a folder written by `forefield run`
    --out DIR           output folder (default RUN_DIR)
{}",
        export_options()
    )
}

pub fn export(args: &[String]) -> Result<()> {
    let mut run_dir: Option<PathBuf> = None;
    let mut out_dir: Option<PathBuf> = None;
    let mut request = ExportRequest::default();
    let mut words = args.iter();
    while let Some(word) = words.next() {
        if request.take_option(word, &mut words)? {
            continue;
        }
        match word.as_str() {
            "--out" => match words.next() {
                Some(dir) => out_dir = Some(PathBuf::from(dir)),
                None => bail!("--out needs a folder"),
            },
            flag if flag.starts_with("--") => {
                bail!("export: unknown option {flag:?}\n\n{}", usage())
            }
            path if run_dir.is_none() => run_dir = Some(PathBuf::from(path)),
            extra => bail!("export: unexpected argument {extra:?}"),
        }
    }
    let Some(run_dir) = run_dir else {
        bail!("export needs a run folder:\n\n{}", usage())
    };
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
    let out_dir = out_dir.unwrap_or(run_dir);
    write_exports(&out_dir, &timeline, &terrain, &meta, &request)?;
    outln!("{CAUTION}");
    Ok(())
}
