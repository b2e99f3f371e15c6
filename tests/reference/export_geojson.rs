//! GeoJSON exports parsed by the `geojson` crate and checked against RFC 7946 (Butler et al.
//! 2016): a FeatureCollection of MultiPolygon features, closed linear rings of at least four
//! positions (section 3.1.6), outer rings anticlockwise and holes clockwise (3.1.6),
//! longitude and latitude in WGS 84 degrees (section 4). Positions are converted back to UTM
//! with an independent projection library (`proj4rs`, a port of PROJ) and the ice outline
//! area compared with the ice-covered cells: within half a cell's area per cell on the
//! perimeter (the outline runs half-way between cell centres inside and outside).

use forefield_engine::export::geojson_shapes::{ice_outlines_geojson, stage_polygons_geojson};
use forefield_engine::export::CAUTION;
use forefield_engine::io::utm::UtmZone;
use forefield_engine::run::timeline::COVERED;
use geojson::GeoJson;
use proj4rs::proj::Proj;

use crate::export_fixture::export_run;

fn projections() -> (Proj, Proj) {
    (
        Proj::from_proj_string("+proj=longlat +datum=WGS84 +no_defs").unwrap(),
        Proj::from_proj_string("+proj=utm +zone=26 +datum=WGS84 +units=m +no_defs").unwrap(),
    )
}

fn to_utm(lonlat: &Proj, utm: &Proj, lon: f64, lat: f64) -> (f64, f64) {
    let mut p = (lon.to_radians(), lat.to_radians(), 0.0);
    proj4rs::transform::transform(lonlat, utm, &mut p).unwrap();
    (p.0, p.1)
}

/// Twice the signed area of a ring (anticlockwise positive).
fn shoelace2(ring: &[(f64, f64)]) -> f64 {
    ring.windows(2)
        .map(|w| w[0].0 * w[1].1 - w[1].0 * w[0].1)
        .sum()
}

/// Parses a collection; returns each feature's properties and polygons (rings of lon/lat).
#[allow(clippy::type_complexity)]
fn features(text: &str) -> Vec<(geojson::JsonObject, Vec<Vec<Vec<(f64, f64)>>>)> {
    let json: serde_json::Value = serde_json::from_str(text).unwrap();
    let member = &json["forefield"];
    assert_eq!(member["caution"], CAUTION);
    assert_eq!(member["source_crs"], "EPSG:32626");
    let parsed: GeoJson = text.parse().unwrap();
    let GeoJson::FeatureCollection(collection) = parsed else {
        panic!("not a FeatureCollection")
    };
    // The parser keeps foreign members (RFC 7946 section 6.1).
    assert!(collection
        .foreign_members
        .as_ref()
        .is_some_and(|m| m.contains_key("forefield")));
    // The geometry itself, read from the JSON text as RFC 7946 lays it out.
    json["features"]
        .as_array()
        .unwrap()
        .iter()
        .map(|f| {
            assert_eq!(f["type"], "Feature");
            assert_eq!(f["geometry"]["type"], "MultiPolygon");
            let polygons = f["geometry"]["coordinates"]
                .as_array()
                .unwrap()
                .iter()
                .map(|poly| {
                    poly.as_array()
                        .unwrap()
                        .iter()
                        .map(|ring| {
                            ring.as_array()
                                .unwrap()
                                .iter()
                                .map(|p| (p[0].as_f64().unwrap(), p[1].as_f64().unwrap()))
                                .collect()
                        })
                        .collect()
                })
                .collect();
            (f["properties"].as_object().unwrap().clone(), polygons)
        })
        .collect()
}

fn check_rings(polygons: &[Vec<Vec<(f64, f64)>>]) {
    for polygon in polygons {
        for (k, ring) in polygon.iter().enumerate() {
            assert!(ring.len() >= 4, "ring of {} positions", ring.len());
            assert_eq!(ring.first(), ring.last(), "ring not closed");
            for &(lon, lat) in ring {
                assert!((-180.0..=180.0).contains(&lon) && (-90.0..=90.0).contains(&lat));
            }
            let a = shoelace2(ring);
            if k == 0 {
                assert!(a > 0.0, "outer ring not anticlockwise");
            } else {
                assert!(a < 0.0, "hole not clockwise");
            }
        }
    }
}

/// Area in m^2 of polygons after converting each position back to UTM.
fn utm_area_m2(polygons: &[Vec<Vec<(f64, f64)>>]) -> f64 {
    let (lonlat, utm) = projections();
    polygons
        .iter()
        .flatten()
        .map(|ring| {
            let xy: Vec<(f64, f64)> = ring
                .iter()
                .map(|&(lon, lat)| to_utm(&lonlat, &utm, lon, lat))
                .collect();
            shoelace2(&xy) / 2.0
        })
        .sum()
}

#[test]
fn utm_conversion_matches_proj4rs_across_the_zone() {
    let (lonlat, utm) = projections();
    let zone = UtmZone::from_epsg(32626).unwrap();
    for &(e, n) in &[
        (500_000.0, 0.0),
        (480_012.5, 4_989_987.5),
        (166_000.0, 1_000_000.0),
        (834_000.0, 7_000_000.0),
        (300_000.0, 8_500_000.0),
    ] {
        let (lon, lat) = zone.to_lon_lat(e, n);
        let (x, y) = to_utm(&lonlat, &utm, lon, lat);
        // 1 mm (the series' truncation is far below; common practice, no source).
        assert!(
            (x - e).abs() < 1e-3 && (y - n).abs() < 1e-3,
            "({e}, {n}) -> ({x}, {y})"
        );
    }
}

#[test]
fn ice_outlines_are_rfc7946_and_match_the_ice_covered_area() {
    let run = export_run();
    let (timeline, dem) = (&run.timeline, &run.dem);
    let g = &dem.geometry;
    let years = [timeline.start_year(), timeline.last_year()];
    let text = ice_outlines_geojson(timeline, dem, &run.meta, &years).unwrap();
    let feats = features(&text);
    assert_eq!(feats.len(), years.len());
    let mut exposure = Vec::new();
    for ((props, polygons), &year) in feats.iter().zip(&years) {
        assert_eq!(props["year"], year);
        check_rings(polygons);
        timeline.fill_exposure(year, &mut exposure);
        let ice = |c: isize, r: isize| {
            c >= 0
                && r >= 0
                && (c as usize) < g.n_cols
                && (r as usize) < g.n_rows
                && exposure[r as usize * g.n_cols + c as usize] == COVERED
        };
        let (mut cells, mut perimeter) = (0usize, 0usize);
        for r in 0..g.n_rows as isize {
            for c in 0..g.n_cols as isize {
                if ice(c, r) {
                    cells += 1;
                    if !(ice(c - 1, r) && ice(c + 1, r) && ice(c, r - 1) && ice(c, r + 1)) {
                        perimeter += 1;
                    }
                }
            }
        }
        assert_eq!(props["ice_cells"], cells);
        let cell_area = g.cell_area_m2();
        let area = utm_area_m2(polygons);
        let cells_area = cells as f64 * cell_area;
        assert!(
            (area - cells_area).abs() <= 0.5 * perimeter as f64 * cell_area,
            "year {year}: outline {area} m2, cells {cells_area} m2, perimeter {perimeter} cells"
        );
        assert!(cells > 1000, "the sample glacier has ice in {year}");
        // Vertices sit on the half-cell lattice of the grid: the conversion puts them back in
        // place to a centimetre.
        let (lonlat, utm) = projections();
        let &(lon, lat) = &polygons[0][0][0];
        let (x, y) = to_utm(&lonlat, &utm, lon, lat);
        let half = g.cell_size_m / 2.0;
        let fx = ((x - g.west_m) / half).round() * half + g.west_m;
        let fy = ((y - g.north_m) / half).round() * half + g.north_m;
        assert!((x - fx).abs() < 0.02 && (y - fy).abs() < 0.02, "({x}, {y})");
    }
}

#[test]
fn stage_polygons_cover_each_stage_area() {
    let run = export_run();
    let (timeline, dem) = (&run.timeline, &run.dem);
    let year = timeline.last_year();
    let text = stage_polygons_geojson(timeline, dem, &run.meta, year).unwrap();
    let feats = features(&text);
    let mut stage = Vec::new();
    timeline.fill_stage(year, &mut stage);
    assert!(feats.len() >= 4, "the sample has several stages");
    let cell_area = dem.geometry.cell_area_m2();
    for (props, polygons) in &feats {
        check_rings(polygons);
        let code = props["stage_code"].as_u64().unwrap() as u8;
        let cells = stage
            .iter()
            .zip(&dem.nodata)
            .filter(|(&s, &missing)| s == code && !missing)
            .count();
        assert_eq!(props["cells"], cells);
        let area = utm_area_m2(polygons);
        // Scattered stages have a perimeter of nearly all their cells: within one cell each.
        assert!(
            (area - cells as f64 * cell_area).abs() <= cells as f64 * cell_area,
            "stage {code}: {area} m2 for {cells} cells"
        );
    }
}
