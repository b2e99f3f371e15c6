//! A planner's own glacier on real-shaped terrain: a DEM bundled with a general-purpose
//! plotting library (ridge-and-valley terrain, 347 x 365 cells of 90 m in UTM zone 17N,
//! lifted to 1400-3600 m; see `tests/fixtures/ridge_valley.md`) with the outline of its
//! highest basin and nothing else. Checks: the outline in longitude/latitude lands where the
//! UTM one does (forward transverse Mercator against `proj4rs`, a port of PROJ); under steady
//! warming the glacier never grows by more than 2 % of its start; ground outside the glacier
//! domain never gains ice from the balance, while the same run without the domain grows ice
//! on the summits (the failure this check guards); a calibrated ELA gives the stated mean
//! balance; the accumulation-area rule gives the ELA worked by hand.

use forefield_engine::base::grid::{Grid, GridGeometry};
use forefield_engine::ice::mass_balance::DomainRule;
use forefield_engine::io::geotiff::read_geotiff;
use forefield_engine::io::outline::outline_mask;
use forefield_engine::io::utm::UtmZone;
use forefield_engine::run::inputs::outline_thickness;
use forefield_engine::run::scenario::Scenario;
use forefield_engine::run::simulation::{bed_from_surface, IceSimulation};
use forefield_reference_tests::fixture;
use proj4rs::proj::Proj;

fn terrain() -> Grid {
    read_geotiff(&fixture("ridge_valley_dem.tif"), "ridge_valley_dem.tif").expect("fixture")
}

fn outline_text(name: &str) -> String {
    String::from_utf8(fixture(name)).expect("UTF-8")
}

/// Surface, bed and the outline's thickness estimate for a scenario.
fn glacier(scenario: &Scenario) -> (Grid, Grid, Grid) {
    let surface = terrain();
    let (thickness, _) = outline_thickness(
        &surface,
        &outline_text("ridge_valley_outline_utm.geojson"),
        "ridge_valley_outline_utm.geojson",
        scenario,
    )
    .expect("estimate");
    let bed = bed_from_surface(&surface, &thickness).expect("aligned");
    (surface, bed, thickness)
}

fn warming(n_years: u32, rate_c_per_decade: f64) -> Scenario {
    let mut scenario = Scenario {
        n_years,
        ..Scenario::default()
    };
    scenario.climate.warming_c_per_decade = rate_c_per_decade;
    scenario.climate.solar_cycle_amplitude_k = 0.0;
    scenario
}

/// Forward UTM (Krüger series, `export::utm`) against PROJ's `utm` projection as ported by
/// `proj4rs`, over zone 17N from the equator to 70 degrees: within 1 mm.
#[test]
fn forward_utm_matches_proj4rs_to_a_millimetre() {
    let lonlat = Proj::from_proj_string("+proj=longlat +datum=WGS84 +no_defs").unwrap();
    let utm = Proj::from_proj_string("+proj=utm +zone=17 +datum=WGS84 +units=m +no_defs").unwrap();
    let zone = UtmZone::from_epsg(32617).unwrap();
    let mut worst: f64 = 0.0;
    for lat in (0..=70).step_by(5) {
        for lon in [-84.0, -83.0, -81.5, -81.0, -79.3, -78.0] {
            let mut p = (f64::to_radians(lon), f64::to_radians(f64::from(lat)), 0.0);
            proj4rs::transform::transform(&lonlat, &utm, &mut p).unwrap();
            let (e, n) = zone.to_easting_northing(lon, f64::from(lat));
            worst = worst.max((e - p.0).abs()).max((n - p.1).abs());
        }
    }
    assert!(worst < 1e-3, "largest difference {worst} m");
}

/// An inventory outline in RFC 7946 longitude/latitude marks the same cells as the UTM one
/// (vertices every 90 m or less, so the straight edges agree to well under a cell).
#[test]
fn a_lonlat_outline_lands_on_the_utm_outline() {
    let dem = terrain();
    let utm = outline_mask(
        &outline_text("ridge_valley_outline_utm.geojson"),
        "utm.geojson",
        &dem.geometry,
    )
    .unwrap();
    let lonlat = outline_mask(
        &outline_text("ridge_valley_outline_lonlat.geojson"),
        "lonlat.geojson",
        &dem.geometry,
    )
    .unwrap();
    let inside = utm.iter().filter(|&&m| m).count();
    let differ = utm.iter().zip(&lonlat).filter(|(a, b)| a != b).count();
    assert!(inside > 3000, "{inside} cells");
    assert!(differ * 1000 <= inside, "{differ} of {inside} cells differ");
}

/// Under steady warming (0.25 C per decade) with the default glacier domain, calibration
/// (zero mean balance in the start year) and relaxation, the area never exceeds the start by
/// more than 2 % (the acceptance rule for real terrain), nor with the accumulation-area
/// rule; with the balance allowed everywhere and the ELA guessed at 3100 m, the
/// same run grows ice on the summits outside the outline.
#[test]
fn warming_does_not_grow_the_glacier_on_real_terrain() {
    let mut scenario = warming(60, 0.25);
    let (_, bed, thickness) = glacier(&scenario);
    let mut start = 0.0;
    for aar in [
        None,
        Some(forefield_engine::ice::mass_balance::BALANCED_AAR),
    ] {
        scenario.mass_balance.balanced_aar = aar;
        let mut run = IceSimulation::new(&bed, &thickness, &scenario).expect("valid");
        while run.step_year().is_some() {}
        let rows = run.summary();
        start = rows[0].ice_area_km2;
        let largest = rows.iter().map(|r| r.ice_area_km2).fold(0.0, f64::max);
        let per_decade: Vec<String> = rows
            .iter()
            .step_by(10)
            .map(|r| format!("{}: {:.2}", r.year, r.ice_area_km2))
            .collect();
        eprintln!(
            "real terrain: {}; area (km2) {}",
            run.calibration().describe(),
            per_decade.join(", ")
        );
        assert!(largest <= 1.02 * start, "{largest} km2 against {start} km2");
        assert!(rows.last().unwrap().ice_area_km2 < 0.8 * start);
    }
    scenario.mass_balance.balanced_aar = None;

    let mut guessed = warming(20, 0.25);
    guessed.mass_balance.ela_m = Some(3100.0);
    guessed.mass_balance.domain = DomainRule::WholeGrid;
    guessed.mass_balance.snow_redistribution = false;
    guessed.relaxation_years = 0;
    let mut run = IceSimulation::new(&bed, &thickness, &guessed).expect("valid");
    while run.step_year().is_some() {}
    let grown = run.summary().last().unwrap().ice_area_km2;
    assert!(grown > 1.2 * start, "without a domain: {grown} km2");
}

/// With the flow all but switched off (the stiffest ice the scenario allows, 1e3 times
/// stiffer than temperate ice) only the balance changes the ice: after 30 years of a 1.5 K
/// cooling no fine cell outside the glacier domain holds more than the few centimetres the
/// ice creeps onto its neighbours, while with the balance allowed on the whole grid the high
/// ground outside the outline gains metres.
#[test]
fn ground_outside_the_domain_never_gains_ice_from_the_balance() {
    let mut scenario = warming(30, 0.0);
    scenario.climate.anomaly_table = vec![forefield_engine::ice::climate::AnomalyPoint {
        year: 2000.0,
        anomaly_c: -1.5,
    }];
    scenario.flow.rate_factor_pa3_s = 1e-27;
    scenario.relaxation_years = 0;
    scenario.mass_balance.snow_redistribution = false;
    let (_, bed, thickness) = glacier(&scenario);
    let domain = IceSimulation::new(&bed, &thickness, &scenario)
        .expect("valid")
        .domain()
        .to_vec();
    let largest_gain_outside = |scenario: &Scenario| {
        let mut run = IceSimulation::new(&bed, &thickness, scenario).expect("valid");
        while run.step_year().is_some() {}
        let outline = outline_mask(
            &outline_text("ridge_valley_outline_utm.geojson"),
            "utm.geojson",
            &bed.geometry,
        )
        .unwrap();
        let mut largest = 0.0_f32;
        for (idx, &h) in run.ice_thickness_m().iter().enumerate() {
            if !domain[idx] && !outline[idx] {
                largest = largest.max(h - thickness.values[idx].max(0.0));
            }
        }
        largest
    };
    let with_domain = largest_gain_outside(&scenario);
    scenario.mass_balance.domain = DomainRule::WholeGrid;
    let without = largest_gain_outside(&scenario);
    eprintln!("gain outside the domain: {with_domain} m with it, {without} m without");
    assert!(with_domain < 0.1, "{with_domain} m outside the domain");
    assert!(without > 10.0, "{without} m without a domain");
}

/// The ELA calibrated to a stated mean balance (-0.50 m w.e. per year; any geodetic rate
/// would do) gives that balance: the first year's volume change over the glacier area,
/// in water equivalent, within 0.01 m w.e. (the acceptance tolerance). The balance is the
/// starting glacier's: the domain is the outline itself, so no ice-free ground adds snow,
/// the thickness is kept as given, and the flow is all but off so no ice leaves the
/// glacier to melt lower down in that year.
#[test]
fn a_calibrated_ela_gives_the_stated_mean_balance() {
    let mut scenario = warming(1, 0.0);
    scenario.mass_balance.calibration_target_mwe_per_a = Some(-0.5);
    scenario.relaxation_years = 0;
    scenario.flow.rate_factor_pa3_s = 1e-27;
    let (_, bed, thickness) = glacier(&scenario);
    let mut domain = thickness.clone();
    for v in &mut domain.values {
        *v = if *v > 0.0 { 1.0 } else { 0.0 };
    }
    let mut run = IceSimulation::with_domain(&bed, &thickness, Some(&domain), &scenario).unwrap();
    let glacier_m2 = f64::from(thickness.values.iter().filter(|&&h| h >= 1.0).count() as u32)
        * bed.geometry.cell_area_m2();
    let v0 = run.ice_volume_m3();
    run.step_year();
    let balance_mwe = (run.ice_volume_m3() - v0) / glacier_m2 * 910.0 / 1000.0;
    eprintln!(
        "{}: first year {balance_mwe:.4} m w.e.",
        run.calibration().describe()
    );
    assert!((balance_mwe + 0.5).abs() < 0.01, "{balance_mwe} m w.e.");
}

/// Accumulation-area ratio 0.58 (Dyurgerov, Meier & Bahr 2009; value from memory) on a
/// glacier of known hypsometry: 100 rows of 10 cells, one row per 10 m band of surface from
/// 2005 to 2995 m. By hand: 58 % of the area lies above 3000 - 0.58 x 1000 = 2420 m.
#[test]
fn the_balanced_ratio_gives_the_ela_worked_by_hand() {
    let geometry = GridGeometry {
        n_cols: 10,
        n_rows: 100,
        cell_size_m: 100.0,
        west_m: 500_000.0,
        north_m: 5_000_000.0,
        epsg: Some(32632),
    };
    let surface: Vec<f32> = (0..1000).map(|i| 2995.0 - 10.0 * (i / 10) as f32).collect();
    let ice = Grid::filled(geometry, 50.0);
    let bed = Grid::from_values(geometry, surface.iter().map(|z| z - 50.0).collect());
    let mut scenario = warming(1, 0.0);
    scenario.mass_balance.balanced_aar = Some(forefield_engine::ice::mass_balance::BALANCED_AAR);
    let run = IceSimulation::new(&bed, &ice, &scenario).expect("valid");
    let ela = run.calibration().start_ela_m;
    assert!((ela - 2420.0).abs() < 1e-3, "{ela}");
}
