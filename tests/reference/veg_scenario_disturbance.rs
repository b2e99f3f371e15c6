//! A burn placed through the scenario JSON (a GeoJSON polygon in a named file, rasterised at
//! load) on the invented sample valley: the burnt forest recovers plant cover faster than
//! ground the glacier leaves, because soil and a seed bank remain. Secondary succession on
//! kept soil outpaces primary succession on fresh till (Chapin, Walker, Fastie & Sharman
//! 1994, Ecol. Monogr. 64(2):149-175; soils kept through stand disturbance, Bormann et al.
//! 1995, J. Ecol. 83:747-757); first pioneers on fresh till take about 7 years (Burga et al.
//! 2010, Flora 205:561-576).

use forefield_engine::run::coupled::scenario_disturbances;
use forefield_engine::run::coupled::CoupledSimulation;
use forefield_engine::run::scenario::Scenario;
use forefield_engine::sample::{self, vegetation_code};
use forefield_reference_tests::sample_run;

/// Cover of all types summed, averaged over `cells`.
fn mean_cover(run: &CoupledSimulation, cells: &[usize]) -> f32 {
    let n_types = run.vegetation().n_types();
    let total: f32 = cells
        .iter()
        .map(|&i| (0..n_types).map(|t| run.cover_of(t)[i]).sum::<f32>())
        .sum();
    total / cells.len() as f32
}

#[test]
fn burn_from_the_scenario_recovers_faster_than_fresh_ground() {
    let valley = sample::generate(160);
    let g = valley.bed_m.geometry;
    // The most northerly 12 x 12 block of mature forest: the forest nearest the ice.
    let forest = |row: usize, col: usize| {
        (row..row + 12).all(|r| {
            (col..col + 12).all(|c| {
                valley.vegetation.values[r * g.n_cols + c]
                    == f32::from(vegetation_code::MATURE_FOREST)
            })
        })
    };
    let (row0, col0) = (0..g.n_rows - 12)
        .flat_map(|r| (0..g.n_cols - 12).map(move |c| (r, c)))
        .find(|&(r, c)| forest(r, c))
        .expect("the sample has a block of mature forest");
    let (west, east) = (
        g.west_m + col0 as f64 * g.cell_size_m,
        g.west_m + (col0 + 12) as f64 * g.cell_size_m,
    );
    let (north, south) = (
        g.north_m - row0 as f64 * g.cell_size_m,
        g.north_m - (row0 + 12) as f64 * g.cell_size_m,
    );
    let polygon = format!(
        r#"{{"type": "FeatureCollection", "crs": {{"type": "name", "properties": {{"name": "urn:ogc:def:crs:EPSG::{}"}}}},
            "features": [{{"type": "Feature", "properties": {{}}, "geometry": {{"type": "Polygon",
            "coordinates": [[[{west}, {south}], [{east}, {south}], [{east}, {north}], [{west}, {north}], [{west}, {south}]]]}}}}]}}"#,
        g.epsg.expect("the sample has a CRS")
    );
    let burn_year = 2030;
    let scenario = Scenario::from_json(&format!(
        r#"{{"version": 1, "start_year": 2025, "n_years": 60, "seed": 7,
            "disturbances": [{{"year": {burn_year}, "kind": "burn", "polygon": "burn.geojson"}}]}}"#
    ))
    .expect("valid scenario");
    let resolve = |name: &str| -> Result<Vec<u8>, String> {
        match name {
            "burn.geojson" => Ok(polygon.clone().into_bytes()),
            other => Err(format!("no file {other}")),
        }
    };

    // The polygon's corners lie on cell edges, so centre sampling takes the 144 cells.
    let events = scenario_disturbances(&scenario, &g, resolve).expect("rasterised");
    assert_eq!(events.len(), 1);
    let burnt: Vec<usize> = events[0].cells.iter().map(|&c| c as usize).collect();
    assert_eq!(burnt.len(), 144);
    assert!(burnt
        .iter()
        .all(|&i| (row0..row0 + 12).contains(&(i / g.n_cols))
            && (col0..col0 + 12).contains(&(i % g.n_cols))));

    let mut run = sample_run(&valley, &scenario);
    run.add_scenario_disturbances(&scenario, resolve)
        .expect("the burn lies on the grid and inside the run");
    let before = mean_cover(&run, &burnt);
    assert!(before > 0.5, "forest cover before the burn {before}");

    // Fresh ground: the cells the ice leaves in the years up to the burn, so they have had
    // at least as long as the burnt block when both are compared in the same year.
    let mut fresh: Vec<usize> = Vec::new();
    let threshold = 0.3;
    let (mut burnt_recovered, mut fresh_recovered) = (None, None);
    while let Some(row) = run.step_year() {
        let year = row.ice.year;
        if year == burn_year {
            let after = mean_cover(&run, &burnt);
            assert!(after < 0.1, "the burn removed cover: {after}");
            fresh = run
                .ice()
                .year_exposed()
                .iter()
                .enumerate()
                .filter(|&(_, &y)| y > 2025 && y <= burn_year)
                .map(|(i, _)| i)
                .collect();
            assert!(fresh.len() >= 20, "the ice left {} cells", fresh.len());
        }
        if year > burn_year {
            if burnt_recovered.is_none() && mean_cover(&run, &burnt) >= threshold {
                burnt_recovered = Some(year - burn_year);
            }
            if fresh_recovered.is_none() && mean_cover(&run, &fresh) >= threshold {
                fresh_recovered = Some(year - burn_year);
            }
        }
    }
    // Measured with seed 7: the burnt block is back at 30 % cover 8 years after the burn, the
    // ground left in 2026-2030 (294 cells) reaches it 15 years after 2030.
    let burnt_recovered = burnt_recovered.expect("the burnt forest regains cover");
    assert!(
        fresh_recovered.is_none_or(|fresh| burnt_recovered < fresh),
        "burnt block at {threshold} cover after {burnt_recovered} years, fresh ground after {fresh_recovered:?}"
    );
    // An event outside the run is refused by name and year.
    let late = Scenario::from_json(
        r#"{"version": 1, "n_years": 10, "disturbances": [{"year": 2040, "kind": "burn", "polygon": "burn.geojson"}]}"#,
    )
    .unwrap_err();
    assert!(late.to_string().contains("disturbances[0].year"), "{late}");
}
