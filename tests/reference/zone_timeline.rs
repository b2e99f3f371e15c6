//! Zone timelines checked against numbers computed another way: a zone covering the whole
//! grid must repeat the run's own yearly summary (which the simulation counts on its live
//! grids, not from the timeline), a rectangle's area is its cell count times the cell area,
//! and its yearly figures equal sums over its cells read one by one through the timeline's
//! per-cell accessors (the cell history path). The CSV is read back by the `csv` crate
//! (RFC 4180, Shafranovich 2005, section 2).

use forefield_engine::export::zones::{zone_timeline, zone_timeline_csv, Zone};
use forefield_engine::export::CAUTION;
use forefield_engine::run::timeline::PlantQuantity;
use forefield_engine::view::layers::STAGE_PALETTE;

use crate::export_fixture::{export_run, N_YEARS};

/// A GeoJSON rectangle from cell edges: columns `c0..c1`, rows `r0..r1` of the DEM.
fn rectangle(c0: usize, c1: usize, r0: usize, r1: usize) -> String {
    let g = &export_run().dem.geometry;
    let x = |c: usize| g.west_m + c as f64 * g.cell_size_m;
    let y = |r: usize| g.north_m - r as f64 * g.cell_size_m;
    format!(
        r#"{{"type":"FeatureCollection","features":[{{"type":"Feature","properties":{{}},
        "geometry":{{"type":"Polygon","coordinates":[[[{w},{s}],[{e},{s}],[{e},{n}],[{w},{n}],[{w},{s}]]]}}}}]}}"#,
        w = x(c0),
        e = x(c1),
        n = y(r0),
        s = y(r1)
    )
}

#[test]
fn a_zone_over_the_whole_grid_repeats_the_yearly_summary() {
    let run = export_run();
    let g = &run.dem.geometry;
    let zone = Zone::from_geojson(
        &rectangle(0, g.n_cols, 0, g.n_rows),
        "all.geojson",
        &run.dem,
    )
    .unwrap();
    assert_eq!(zone.n_cells(), run.dem.n_valid());
    let zt = zone_timeline(&run.timeline, &zone).unwrap();
    // Every year a cover keyframe, so covers differ from the live ones by quantisation only.
    assert_eq!(run.timeline.plant_intervals().map(|i| i.1), Some(1));
    assert_eq!(zt.years.len(), N_YEARS as usize + 1);
    let cell_km2 = g.cell_area_m2() / 1e6;
    let cells = |area_km2: f64| (area_km2 / cell_km2).round() as i64;
    let mut exposed = 0;
    for (k, row) in run.rows.iter().enumerate() {
        let ice = &row.ice;
        assert_eq!(zt.years[k], ice.year);
        // Exposure is exact in the timeline: areas are the same cell counts.
        assert!(
            (zt.ice_area_km2[k] - ice.ice_area_km2).abs() < 1e-12,
            "{}",
            ice.year
        );
        assert!((zt.newly_exposed_area_km2[k] - ice.newly_exposed_area_km2).abs() < 1e-12);
        // The summary's volume is the ice grid's; the timeline keeps the plant grid's
        // thickness in 0.05 m steps, drops ice thinner than 1 m and shows covered cells at
        // least 1 m thick, so the two differ by a fraction of a percent.
        let rel = (zt.ice_volume_km3[k] - ice.ice_volume_km3).abs() / ice.ice_volume_km3;
        assert!(
            rel < 5e-3,
            "{}: volume {} vs {}",
            ice.year,
            zt.ice_volume_km3[k],
            ice.ice_volume_km3
        );
        exposed += cells(zt.newly_exposed_area_km2[k]);
        let veg = row.vegetation.as_ref().unwrap();
        for s in 0..STAGE_PALETTE.len() {
            let (zone_km2, run_km2) = (zt.stage_area_km2[s][k], veg.stage_area_km2[s]);
            // The same cell count (the start row sums cell areas one by one, so compare
            // counts, not the last bits).
            assert_eq!(cells(zone_km2), cells(run_km2), "{} stage {s}", ice.year);
        }
        for t in 0..run.timeline.type_names().len() {
            let mean = zt.mean_cover_pct[t][k].unwrap() / 100.0;
            // Stored in 1/255 steps: each cell within half a step.
            assert!(
                (mean - veg.mean_cover[t]).abs() <= 0.5 / 255.0 + 1e-9,
                "{} type {t}: {mean} vs {}",
                ice.year,
                veg.mean_cover[t]
            );
        }
    }
    assert!(exposed > 0, "the run should expose ground");
}

#[test]
fn a_rectangle_has_its_cell_count_times_the_cell_area_and_its_cells_sums() {
    let run = export_run();
    let (timeline, dem) = (&run.timeline, &run.dem);
    let g = &dem.geometry;
    // Across the glacier tongue: ice melting out beside older ground.
    let (c0, c1, r0, r1) = (170, 230, 120, 180);
    let zone = Zone::from_geojson(&rectangle(c0, c1, r0, r1), "tongue.geojson", dem).unwrap();
    // Cells whose centre is inside: 60 x 60; area = cells x cell area (common practice,
    // no source).
    assert_eq!(zone.n_cells(), 60 * 60);
    let zt = zone_timeline(timeline, &zone).unwrap();
    assert!((zt.area_km2 - 3600.0 * g.cell_size_m * g.cell_size_m / 1e6).abs() < 1e-12);
    let cells: Vec<usize> = (r0..r1)
        .flat_map(|r| (c0..c1).map(move |c| r * g.n_cols + c))
        .collect();
    let cell_km2 = g.cell_area_m2() / 1e6;
    let histories: Vec<Vec<u8>> = cells.iter().map(|&i| timeline.stage_history(i)).collect();
    let mut ice_changed = false;
    for (k, &year) in zt.years.iter().enumerate() {
        let n_ice = cells
            .iter()
            .filter(|&&i| timeline.cover_at(i, year).0)
            .count();
        assert!((zt.ice_area_km2[k] - n_ice as f64 * cell_km2).abs() < 1e-12);
        ice_changed |= k > 0 && zt.ice_area_km2[k] != zt.ice_area_km2[k - 1];
        let volume_m3: f64 = cells
            .iter()
            .map(|&i| f64::from(timeline.ice_thickness_at(i, year)) * g.cell_area_m2())
            .sum();
        assert!((zt.ice_volume_km3[k] * 1e9 - volume_m3).abs() <= 1e-5 * volume_m3.max(1.0));
        let free: Vec<usize> = (0..cells.len()).filter(|&j| histories[j][k] != 0).collect();
        for s in 0..STAGE_PALETTE.len() {
            let n = histories.iter().filter(|h| usize::from(h[k]) == s).count();
            assert!((zt.stage_area_km2[s][k] - n as f64 * cell_km2).abs() < 1e-12);
        }
        let mean_of = |quantity| -> f64 {
            free.iter()
                .map(|&j| f64::from(timeline.plant_value_at(cells[j], year, quantity).unwrap()))
                .sum::<f64>()
                / free.len() as f64
        };
        if free.is_empty() {
            assert_eq!(zt.mean_soil_index[k], None);
            continue;
        }
        assert!((zt.mean_soil_index[k].unwrap() - mean_of(PlantQuantity::Soil)).abs() < 1e-6);
        for t in 0..timeline.type_names().len() {
            let pct = 100.0 * mean_of(PlantQuantity::Cover(t));
            assert!((zt.mean_cover_pct[t][k].unwrap() - pct).abs() < 1e-4);
        }
    }
    assert!(ice_changed, "the rectangle should see the ice retreat");
}

#[test]
fn zone_csv_reads_back_with_units_caution_and_the_timeline_values() {
    let run = export_run();
    let zone =
        Zone::from_geojson(&rectangle(170, 230, 120, 180), "tongue.geojson", &run.dem).unwrap();
    let zt = zone_timeline(&run.timeline, &zone).unwrap();
    let text = zone_timeline_csv(&run.timeline, &run.dem, &zone, &run.meta).unwrap();
    assert!(text.contains(CAUTION) && text.contains(&run.scenario.name));
    for line in text.split_inclusive('\n') {
        assert!(line.ends_with("\r\n"), "RFC 4180 2.1: {line:?}");
    }
    let mut rdr = csv::ReaderBuilder::new()
        .comment(Some(b'#'))
        .flexible(false)
        .from_reader(text.as_bytes());
    let header = rdr.headers().unwrap().clone();
    let n_types = run.timeline.type_names().len();
    assert_eq!(header.len(), 5 + STAGE_PALETTE.len() + n_types + 1);
    for name in [
        "ice_area_km2",
        "ice_volume_km3",
        "newly_exposed_area_km2",
        "mean_soil_index",
    ] {
        assert!(header.iter().any(|h| h == name), "{header:?}");
    }
    let records: Vec<csv::StringRecord> = rdr.records().map(|r| r.unwrap()).collect();
    assert_eq!(records.len(), zt.years.len());
    let num = |r: &csv::StringRecord, i: usize| -> f64 { r[i].parse().unwrap() };
    for (k, r) in records.iter().enumerate() {
        assert_eq!(num(r, 0) as i32, zt.years[k]);
        assert!((num(r, 2) - zt.ice_area_km2[k]).abs() <= 5e-7);
        assert!((num(r, 3) - zt.ice_volume_km3[k]).abs() <= 5e-9);
        assert!((num(r, 5 + 6) - zt.stage_area_km2[6][k]).abs() <= 5e-7);
    }
}
