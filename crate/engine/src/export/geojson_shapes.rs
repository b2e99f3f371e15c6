//! GeoJSON after RFC 7946: ice outlines of chosen years and the area of each succession
//! stage as MultiPolygon features, traced from the cell masks by marching squares (the
//! `contour` crate, into `geo` types) and converted to WGS 84 longitude and latitude.
//!
//! RFC 7946 wants WGS 84 coordinates. Grids in a UTM zone on WGS 84 or ETRS89 are converted
//! ([`crate::io::utm`]); for any other CRS the coordinates stay in the grid's own CRS and the
//! `forefield` foreign member says so (`coordinates` and `source_crs`), since converting
//! them would need a projection library that the page cannot carry. Positions are rounded to
//! 1e-7 degree (about 1 cm) or 0.01 m. Outer rings run anticlockwise, holes clockwise
//! (RFC 7946 section 3.1.6).
//!
//! Marching squares puts the outline half-way between a cell centre inside and one outside,
//! so each outline differs from the union of its cells by at most half a cell along its
//! perimeter.

use std::fmt::Write as _;

use contour::ContourBuilder;
use geo::{LineString, MultiPolygon};

use super::{check_grid, check_year, ExportError, ExportMeta, CAUTION};
use crate::base::grid::{Grid, GridGeometry};
use crate::io::utm::UtmZone;
use crate::run::timeline::{Timeline, COVERED};
use crate::view::layers::STAGE_PALETTE;

/// Where positions end up.
enum Target {
    Wgs84(UtmZone),
    Source,
}

impl Target {
    fn of(geometry: &GridGeometry) -> Target {
        match geometry.epsg.and_then(UtmZone::from_epsg) {
            Some(zone) => Target::Wgs84(zone),
            None => Target::Source,
        }
    }

    /// Writes the position of grid point (x along columns, y down rows, in cells).
    fn write_position(&self, out: &mut String, g: &GridGeometry, x: f64, y: f64) {
        let easting = g.west_m + x * g.cell_size_m;
        let northing = g.north_m - y * g.cell_size_m;
        let (a, b, scale) = match self {
            Target::Wgs84(zone) => {
                let (lon, lat) = zone.to_lon_lat(easting, northing);
                (lon, lat, 1e7)
            }
            Target::Source => (easting, northing, 100.0),
        };
        let round = |v: f64| (v * scale).round() / scale;
        let _ = write!(out, "[{},{}]", round(a), round(b));
    }
}

/// Twice the signed area of a ring in grid units (x right, y down). Rows run south, so the
/// area on the ground has the opposite sign: negative here is anticlockwise on the ground.
fn signed_area2(ring: &LineString<f64>) -> f64 {
    ring.0
        .windows(2)
        .map(|w| w[0].x * w[1].y - w[1].x * w[0].y)
        .sum()
}

/// The outlines of the cells where `inside` holds, in grid units.
fn trace(inside: &[bool], n_cols: usize, n_rows: usize) -> Result<MultiPolygon<f64>, ExportError> {
    let values: Vec<f64> = inside.iter().map(|&i| f64::from(u8::from(i))).collect();
    let contours = ContourBuilder::new(n_cols, n_rows, false)
        .contours(&values, &[0.5])
        .map_err(|e| ExportError::Encode {
            format: "GeoJSON",
            message: format!("tracing outlines: {e:?}"),
        })?;
    Ok(contours
        .into_iter()
        .next()
        .map(|c| c.into_inner().0)
        .unwrap_or_else(|| MultiPolygon(Vec::new())))
}

/// Writes one ring, closed, anticlockwise on the ground when `outer`, clockwise otherwise.
fn write_ring(
    out: &mut String,
    target: &Target,
    g: &GridGeometry,
    ring: &LineString<f64>,
    outer: bool,
) {
    let mut points: Vec<(f64, f64)> = ring.0.iter().map(|c| (c.x, c.y)).collect();
    if points.first() != points.last() {
        if let Some(&first) = points.first() {
            points.push(first);
        }
    }
    let anticlockwise_on_ground = signed_area2(ring) < 0.0;
    if anticlockwise_on_ground != outer {
        points.reverse();
    }
    out.push('[');
    for (k, &(x, y)) in points.iter().enumerate() {
        if k > 0 {
            out.push(',');
        }
        target.write_position(out, g, x, y);
    }
    out.push(']');
}

fn write_multipolygon(
    out: &mut String,
    target: &Target,
    g: &GridGeometry,
    shape: &MultiPolygon<f64>,
) {
    out.push_str("{\"type\":\"MultiPolygon\",\"coordinates\":[");
    for (k, polygon) in shape.0.iter().enumerate() {
        if k > 0 {
            out.push(',');
        }
        out.push('[');
        write_ring(out, target, g, polygon.exterior(), true);
        for hole in polygon.interiors() {
            out.push(',');
            write_ring(out, target, g, hole, false);
        }
        out.push(']');
    }
    out.push_str("]}");
}

fn json_string(text: &str) -> String {
    serde_json::to_string(text).unwrap_or_else(|_| "\"\"".into())
}

/// A feature with `properties` (already JSON members, without braces).
fn write_feature(
    out: &mut String,
    target: &Target,
    g: &GridGeometry,
    properties: &str,
    shape: &MultiPolygon<f64>,
) {
    let _ = write!(
        out,
        "{{\"type\":\"Feature\",\"properties\":{{{properties}}},\"geometry\":"
    );
    write_multipolygon(out, target, g, shape);
    out.push('}');
}

/// The coordinates the GeoJSON exports of a grid on `g` are written in, as the files'
/// `forefield` member states it.
pub fn coordinates_note(g: &GridGeometry) -> String {
    let source_crs = g
        .epsg
        .map_or("not stated".to_string(), |c| format!("EPSG:{c}"));
    match Target::of(g) {
        Target::Wgs84(zone) => format!(
            "WGS 84 longitude and latitude, degrees, converted from {} / UTM zone {}{}",
            zone.datum,
            zone.zone,
            if zone.north { "N" } else { "S" }
        ),
        Target::Source => format!(
            "easting and northing in the grid's CRS ({source_crs}), metres, not converted to WGS 84"
        ),
    }
}

/// The collection around `features` (each a feature object), with the provenance, the
/// caution and the CRS statement as the `forefield` foreign member.
fn collection(g: &GridGeometry, meta: &ExportMeta, what: &str, features: &[String]) -> String {
    let source_crs = g
        .epsg
        .map_or("not stated".to_string(), |c| format!("EPSG:{c}"));
    let coordinates = coordinates_note(g);
    let mut out = String::from("{\"type\":\"FeatureCollection\",\"forefield\":{");
    let _ = write!(
        out,
        "\"content\":{},\"scenario\":{},\"seed\":{},\"engine_version\":{},\"ice_start\":[{}],\"source_crs\":{},\"coordinates\":{},\"caution\":{}}},\"features\":[",
        json_string(what),
        json_string(&meta.scenario_name),
        meta.seed,
        json_string(meta.engine_version),
        meta.run_notes
            .iter()
            .map(|n| json_string(n))
            .collect::<Vec<_>>()
            .join(","),
        json_string(&source_crs),
        json_string(&coordinates),
        json_string(CAUTION)
    );
    out.push_str(&features.join(","));
    out.push_str("]}");
    out
}

/// Ice outlines at the end of each of `years`: one MultiPolygon feature a year, with
/// `year`, `ice_cells` and `ice_area_m2` (the cells' area) as properties.
pub fn ice_outlines_geojson(
    timeline: &Timeline,
    dem: &Grid,
    meta: &ExportMeta,
    years: &[i32],
) -> Result<String, ExportError> {
    check_grid(timeline, dem)?;
    if years.is_empty() {
        return Err(ExportError::NoYears);
    }
    let g = &dem.geometry;
    let target = Target::of(g);
    let mut exposure = Vec::new();
    let mut features = Vec::new();
    for &year in years {
        check_year(timeline, year)?;
        timeline.fill_exposure(year, &mut exposure);
        let inside: Vec<bool> = exposure
            .iter()
            .zip(&dem.nodata)
            .map(|(&e, &missing)| e == COVERED && !missing)
            .collect();
        let cells = inside.iter().filter(|&&i| i).count();
        let shape = trace(&inside, g.n_cols, g.n_rows)?;
        let mut feature = String::new();
        let properties = format!(
            "\"layer\":\"ice_outline\",\"year\":{year},\"ice_cells\":{cells},\"ice_area_m2\":{}",
            cells as f64 * g.cell_area_m2()
        );
        write_feature(&mut feature, &target, g, &properties, &shape);
        features.push(feature);
    }
    Ok(collection(g, meta, "ice outlines", &features))
}

/// The ground of each succession stage (codes 1 bare ground to 6 mature forest; ice is left
/// to the ice outlines) at the end of `year`: one MultiPolygon feature per stage present,
/// with `year`, `stage_code`, `stage`, `cells` and `area_m2`.
pub fn stage_polygons_geojson(
    timeline: &Timeline,
    dem: &Grid,
    meta: &ExportMeta,
    year: i32,
) -> Result<String, ExportError> {
    check_grid(timeline, dem)?;
    check_year(timeline, year)?;
    if !timeline.has_plants() {
        return Err(ExportError::NoPlants);
    }
    let g = &dem.geometry;
    let target = Target::of(g);
    let mut stage = Vec::new();
    timeline.fill_stage(year, &mut stage);
    let mut features = Vec::new();
    for (code, (label, _)) in STAGE_PALETTE.iter().enumerate().skip(1) {
        let inside: Vec<bool> = stage
            .iter()
            .zip(&dem.nodata)
            .map(|(&s, &missing)| usize::from(s) == code && !missing)
            .collect();
        let cells = inside.iter().filter(|&&i| i).count();
        if cells == 0 {
            continue;
        }
        let shape = trace(&inside, g.n_cols, g.n_rows)?;
        let properties = format!(
            "\"layer\":\"stage\",\"year\":{year},\"stage_code\":{code},\"stage\":{},\"cells\":{cells},\"area_m2\":{}",
            json_string(label),
            cells as f64 * g.cell_area_m2()
        );
        let mut feature = String::new();
        write_feature(&mut feature, &target, g, &properties, &shape);
        features.push(feature);
    }
    Ok(collection(g, meta, "succession stages", &features))
}
