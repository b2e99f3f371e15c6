//! CSV exports read back by an independent RFC 4180 reader (the `csv` crate, BurntSushi) and
//! compared with the engine state: every record ends in CRLF and has the header's field count
//! (RFC 4180, Shafranovich 2005, section 2 rules 1-4), the header names units, the comment
//! lines carry the scenario, seed, version and caution, and the values match the timeline
//! to the stated precision.

use forefield_engine::export::csv_tables::{cell_history_csv, summary_csv, CellsCsv};
use forefield_engine::export::CAUTION;
use forefield_engine::run::timeline::PlantQuantity;
use forefield_engine::view::layers::STAGE_PALETTE;

use crate::export_fixture::{export_run, N_YEARS};

fn reader(bytes: &[u8]) -> csv::Reader<&[u8]> {
    csv::ReaderBuilder::new()
        .comment(Some(b'#'))
        .flexible(false)
        .from_reader(bytes)
}

/// RFC 4180 section 2 rule 1: each record ends in CRLF; no bare LF.
fn check_crlf(text: &str) {
    assert!(text.ends_with("\r\n"));
    for (k, line) in text.split('\n').enumerate() {
        if !line.is_empty() {
            assert!(
                line.ends_with('\r'),
                "line {k} does not end in CRLF: {line:?}"
            );
        }
    }
}

fn check_comments(text: &str, meta_name: &str, seed: u64) {
    let comments: Vec<&str> = text.lines().take_while(|l| l.starts_with('#')).collect();
    let joined = comments.join("\n");
    assert!(joined.contains(meta_name), "{joined}");
    assert!(joined.contains(&format!("seed: {seed}")));
    assert!(joined.contains(&format!("engine version: {}", env!("CARGO_PKG_VERSION"))));
    assert!(joined.contains(CAUTION));
}

fn num(record: &csv::StringRecord, idx: usize) -> f64 {
    record[idx]
        .parse()
        .unwrap_or_else(|e| panic!("field {idx} {:?}: {e}", &record[idx]))
}

#[test]
fn summary_reads_back_with_units_and_the_run_values() {
    let run = export_run();
    let text = summary_csv(&run.rows, run.timeline.type_names(), &run.meta);
    check_crlf(&text);
    check_comments(&text, &run.scenario.name, run.scenario.seed);
    let mut rdr = reader(text.as_bytes());
    let header = rdr.headers().unwrap().clone();
    // Units in every quantity's name (common practice, no source).
    for name in [
        "temperature_anomaly_c",
        "ela_m",
        "ice_area_km2",
        "ice_volume_km3",
    ] {
        assert!(header.iter().any(|h| h == name), "{header:?}");
    }
    let n_types = run.timeline.type_names().len();
    assert_eq!(header.len(), 8 + STAGE_PALETTE.len() + n_types + 1);
    let records: Vec<csv::StringRecord> = rdr.records().map(|r| r.unwrap()).collect();
    assert_eq!(records.len(), N_YEARS as usize + 1);
    for (record, row) in records.iter().zip(&run.rows) {
        assert_eq!(num(record, 0) as i32, row.ice.year);
        assert!((num(record, 3) - row.ice.ice_area_km2).abs() <= 5e-7);
        assert!((num(record, 4) - row.ice.ice_volume_km3).abs() <= 5e-9);
        let veg = row.vegetation.as_ref().unwrap();
        for s in 0..STAGE_PALETTE.len() {
            assert!((num(record, 8 + s) - veg.stage_area_km2[s]).abs() <= 5e-7);
        }
        for t in 0..n_types {
            let pct = num(record, 8 + STAGE_PALETTE.len() + t);
            assert!((pct - 100.0 * veg.mean_cover[t]).abs() <= 5e-4);
        }
    }
}

#[test]
fn cells_stream_in_chunks_and_match_the_timeline() {
    let run = export_run();
    let (timeline, dem) = (&run.timeline, &run.dem);
    let year = timeline.start_year() + 12;
    let whole = CellsCsv::new(timeline, dem, &run.meta, year)
        .unwrap()
        .collect(timeline, dem)
        .unwrap();
    // Small chunks give the same bytes, and each chunk holds at most the rows asked for.
    let mut stream = CellsCsv::new(timeline, dem, &run.meta, year).unwrap();
    let mut chunked = Vec::new();
    let mut n_chunks = 0;
    while let Some(chunk) = stream.next_chunk(timeline, dem, 7_000).unwrap() {
        let data_rows = chunk
            .split(|&b| b == b'\n')
            .filter(|l| !l.is_empty() && l[0] != b'#')
            .count();
        assert!(data_rows <= 7_000 + 1, "chunk of {data_rows} rows");
        chunked.extend_from_slice(&chunk);
        n_chunks += 1;
    }
    assert_eq!(chunked, whole);
    assert!(n_chunks >= dem.n_valid() / 7_000);
    assert_eq!(stream.rows_written(), dem.n_valid());

    let text = String::from_utf8(whole).unwrap();
    check_crlf(&text);
    check_comments(&text, &run.scenario.name, run.scenario.seed);
    let mut rdr = reader(text.as_bytes());
    let header = rdr.headers().unwrap().clone();
    let col_of = |name: &str| header.iter().position(|h| h == name).unwrap();
    let (c_x, c_y, c_h, c_exp, c_stage, c_soil) = (
        col_of("easting_m"),
        col_of("northing_m"),
        col_of("ice_thickness_m"),
        col_of("exposure_year"),
        col_of("stage_code"),
        col_of("soil_index"),
    );
    let c_cover0 = col_of("stage") + 1;
    let mut stage = Vec::new();
    timeline.fill_stage(year, &mut stage);
    let g = &dem.geometry;
    let mut n = 0;
    for record in rdr.records() {
        let record = record.unwrap();
        let (col, row) = (num(&record, 0) as usize, num(&record, 1) as usize);
        let idx = row * g.n_cols + col;
        let (x, y) = g.cell_centre(col, row);
        assert!((num(&record, c_x) - x).abs() <= 0.005 && (num(&record, c_y) - y).abs() <= 0.005);
        let h = f64::from(timeline.ice_thickness_at(idx, year));
        assert!((num(&record, c_h) - h).abs() <= 0.005 + 1e-6, "cell {idx}");
        match timeline.cover_at(idx, year) {
            (false, Some(exposed)) => assert_eq!(num(&record, c_exp) as i32, exposed),
            // -1 for ground ice-free at the start, as in the exposure-year GeoTIFF.
            (false, None) => assert_eq!(&record[c_exp], "-1"),
            (true, _) => assert_eq!(&record[c_exp], ""),
        }
        assert_eq!(num(&record, c_stage) as u8, stage[idx]);
        for t in 0..timeline.type_names().len() {
            let cover = f64::from(
                timeline
                    .plant_value_at(idx, year, PlantQuantity::Cover(t))
                    .unwrap(),
            );
            assert!((num(&record, c_cover0 + t) - 100.0 * cover).abs() <= 0.05 + 1e-6);
        }
        let soil = f64::from(
            timeline
                .plant_value_at(idx, year, PlantQuantity::Soil)
                .unwrap(),
        );
        assert!((num(&record, c_soil) - soil).abs() <= 5e-4 + 1e-7);
        n += 1;
    }
    assert_eq!(n, dem.n_valid());
}

#[test]
fn cell_history_holds_every_year_of_each_cell() {
    let run = export_run();
    let (timeline, dem) = (&run.timeline, &run.dem);
    // A cell in the glacier tongue that melts out, and one in the forest below.
    let cells = [(200, 150), (200, 380)];
    let text = cell_history_csv(timeline, dem, &run.meta, &cells).unwrap();
    check_crlf(&text);
    let mut rdr = reader(text.as_bytes());
    let header = rdr.headers().unwrap().clone();
    let c_year = header.iter().position(|h| h == "year").unwrap();
    let c_stage = header.iter().position(|h| h == "stage_code").unwrap();
    let c_h = header.iter().position(|h| h == "ice_thickness_m").unwrap();
    let records: Vec<csv::StringRecord> = rdr.records().map(|r| r.unwrap()).collect();
    let n_years = (timeline.last_year() - timeline.start_year() + 1) as usize;
    assert_eq!(records.len(), cells.len() * n_years);
    for (k, &(col, row)) in cells.iter().enumerate() {
        let idx = row * dem.n_cols() + col;
        let stages = timeline.stage_history(idx);
        for (j, record) in records[k * n_years..(k + 1) * n_years].iter().enumerate() {
            let year = timeline.start_year() + j as i32;
            assert_eq!(num(record, c_year) as i32, year);
            assert_eq!(num(record, c_stage) as u8, stages[j]);
            let h = f64::from(timeline.ice_thickness_at(idx, year));
            assert!((num(record, c_h) - h).abs() <= 0.005 + 1e-6);
        }
    }
    assert!(cell_history_csv(timeline, dem, &run.meta, &[(400, 0)]).is_err());
}
