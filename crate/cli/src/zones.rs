//! `--zone FILE.geojson` for `forefield run` and `forefield export`: each zone's timeline as
//! `zone_<stem>_timeline.csv`, the same bytes the page downloads for the same run.

use std::path::Path;
use std::time::Instant;

use anyhow::{Context, Result};
use forefield_engine::base::grid::Grid;
use forefield_engine::export::zones::{zone_timeline_csv, Zone};
use forefield_engine::export::ExportMeta;
use forefield_engine::run::timeline::Timeline;

/// Reads each zone file, rasterises it onto the terrain and writes its timeline into
/// `out_dir`.
pub fn write_zone_timelines(
    out_dir: &Path,
    timeline: &Timeline,
    dem: &Grid,
    meta: &ExportMeta,
    zone_files: &[String],
) -> Result<()> {
    for file in zone_files {
        let text = std::fs::read_to_string(file).with_context(|| format!("reading {file}"))?;
        let zone = Zone::from_geojson(&text, file, dem)?;
        let started = Instant::now();
        let csv = zone_timeline_csv(timeline, dem, &zone, meta)?;
        let seconds = started.elapsed().as_secs_f64();
        let path = out_dir.join(zone.csv_file_name());
        std::fs::write(&path, csv).with_context(|| format!("writing {}", path.display()))?;
        outln!(
            "wrote {} ({} cells, {seconds:.2} s)",
            path.display(),
            zone.n_cells()
        );
    }
    Ok(())
}

#[cfg(test)]
mod tests {
    use super::*;
    use forefield_engine::base::grid::GridGeometry;
    use forefield_engine::run::recorder::TimelineRecorder;
    use forefield_engine::run::timeline::DEFAULT_FRAME_BUDGET_BYTES;

    #[test]
    fn writes_the_engine_table_under_the_zone_name_and_names_a_bad_file() {
        let geometry = GridGeometry {
            n_cols: 2,
            n_rows: 1,
            cell_size_m: 10.0,
            west_m: 500_000.0,
            north_m: 4_000_010.0,
            epsg: Some(32626),
        };
        let dem = Grid::filled(geometry, 1000.0);
        let mut recorder =
            TimelineRecorder::new(2, 2000, 2, &[5.0, 0.0], DEFAULT_FRAME_BUDGET_BYTES);
        recorder.record_year(2001, &[5.0, 0.0]);
        recorder.record_year(2002, &[0.0, 0.0]);
        let timeline = recorder.finish(&[0.0, 0.0]);
        let meta = ExportMeta {
            scenario_name: "test".into(),
            seed: 1,
            engine_version: "0",
            run_notes: Vec::new(),
        };
        let dir = std::env::temp_dir().join(format!("forefield-zone-{}", std::process::id()));
        std::fs::create_dir_all(&dir).unwrap();
        let zone_path = dir.join("west cell.geojson");
        let text = r#"{"type":"Polygon","coordinates":[[[500000,4000000],[500010,4000000],[500010,4000010],[500000,4000010],[500000,4000000]]]}"#;
        std::fs::write(&zone_path, text).unwrap();
        let zone_files = [zone_path.display().to_string()];
        write_zone_timelines(&dir, &timeline, &dem, &meta, &zone_files).unwrap();
        let written = std::fs::read_to_string(dir.join("zone_west_cell_timeline.csv")).unwrap();
        let zone = Zone::from_geojson(text, "west cell.geojson", &dem).unwrap();
        assert_eq!(
            written,
            zone_timeline_csv(&timeline, &dem, &zone, &meta).unwrap()
        );
        let degrees = dir.join("degrees.geojson");
        std::fs::write(
            &degrees,
            r#"{"type":"Polygon","coordinates":[[[-30,40],[-29,40],[-29,41],[-30,40]]]}"#,
        )
        .unwrap();
        let error = write_zone_timelines(
            &dir,
            &timeline,
            &dem,
            &meta,
            &[degrees.display().to_string()],
        )
        .unwrap_err();
        assert!(
            format!("{error:#}").contains("degrees.geojson"),
            "{error:#}"
        );
        std::fs::remove_dir_all(&dir).unwrap();
    }
}
