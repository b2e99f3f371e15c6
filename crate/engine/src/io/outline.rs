//! GeoJSON polygons (RFC 7946, read with the `geojson` crate into `geo` types) turned into
//! cell masks once, at load: a cell is inside when its centre is (even-odd scanline fill).
//!
//! Coordinates are in the grid's projected CRS, or in RFC 7946's default WGS 84 longitude and
//! latitude (as glacier inventories publish outlines), converted to the grid's UTM zone by
//! the forward Krüger series (`export::utm`). Many GIS exports still carry the 2008 `crs`
//! member, so it is checked too: degrees on a grid in another projected CRS, or a file naming
//! another EPSG code, is refused with a message rather than silently misplaced.

use std::str::FromStr;

use geo::{Area, BoundingRect, Coord, Geometry, GeometryCollection, MapCoordsInPlace, Polygon};
use geojson::GeoJson;
use thiserror::Error;

use crate::base::grid::GridGeometry;
use crate::io::utm::UtmZone;

/// Why a GeoJSON outline could not be turned into a mask.
#[derive(Debug, Error, Clone, PartialEq)]
pub enum OutlineError {
    #[error("{file}: not valid GeoJSON ({reason})")]
    NotGeoJson { file: String, reason: String },
    #[error("{file}: holds no Polygon or MultiPolygon")]
    NoPolygon { file: String },
    #[error("{file}: coordinates look like longitude/latitude degrees (the RFC 7946 default), and the grid's CRS{crs} has no built-in conversion from them (WGS 84 and ETRS89 UTM zones have one); reproject the outline to the grid's CRS first")]
    Degrees { file: String, crs: String },
    #[error("{file}: its crs member names EPSG:{found}, but the grid is in EPSG:{grid}; reproject the outline first")]
    OtherCrs { file: String, found: u32, grid: u32 },
    #[error("{file}: the polygons cover no cell centre of the grid (outline extent {west:.0}..{east:.0} E, {south:.0}..{north:.0} N; grid {grid_west:.0}..{grid_east:.0} E, {grid_south:.0}..{grid_north:.0} N)")]
    NoOverlap {
        file: String,
        west: f64,
        east: f64,
        south: f64,
        north: f64,
        grid_west: f64,
        grid_east: f64,
        grid_south: f64,
        grid_north: f64,
    },
}

/// Polygons read from a GeoJSON file, in the grid's CRS.
#[derive(Clone, Debug, PartialEq)]
pub struct Outline {
    pub polygons: Vec<Polygon<f64>>,
}

impl Outline {
    /// Area of all polygons, square metres (overlaps counted twice).
    pub fn area_m2(&self) -> f64 {
        self.polygons.iter().map(|p| p.unsigned_area()).sum()
    }
}

/// The length of the first position with fewer than two numbers, if any.
fn short_position(geojson: &GeoJson) -> Option<usize> {
    fn in_geometry(geometry: &geojson::Geometry) -> Option<usize> {
        use geojson::GeometryValue as V;
        let short = |p: &geojson::Position| (p.len() < 2).then_some(p.len());
        let in_ring = |ring: &Vec<geojson::Position>| ring.iter().find_map(short);
        match &geometry.value {
            V::Point { coordinates } => short(coordinates),
            V::MultiPoint { coordinates } | V::LineString { coordinates } => in_ring(coordinates),
            V::MultiLineString { coordinates } | V::Polygon { coordinates } => {
                coordinates.iter().find_map(in_ring)
            }
            V::MultiPolygon { coordinates } => coordinates
                .iter()
                .find_map(|polygon| polygon.iter().find_map(in_ring)),
            V::GeometryCollection { geometries } => geometries.iter().find_map(in_geometry),
        }
    }
    match geojson {
        GeoJson::Geometry(g) => in_geometry(g),
        GeoJson::Feature(f) => f.geometry.as_ref().and_then(in_geometry),
        GeoJson::FeatureCollection(c) => c
            .features
            .iter()
            .find_map(|f| f.geometry.as_ref().and_then(in_geometry)),
    }
}

/// Parses GeoJSON text (a Geometry, Feature or FeatureCollection) and keeps its polygons.
pub fn read_outline(text: &str, file: &str, grid: &GridGeometry) -> Result<Outline, OutlineError> {
    let not_json = |reason: String| OutlineError::NotGeoJson {
        file: file.into(),
        reason,
    };
    let geojson = GeoJson::from_str(text).map_err(|e| not_json(e.to_string()))?;
    if let Some(found) = crs_member_epsg(text) {
        if let Some(grid_epsg) = grid.epsg {
            if found != grid_epsg && found != 4326 {
                return Err(OutlineError::OtherCrs {
                    file: file.into(),
                    found,
                    grid: grid_epsg,
                });
            }
        }
    }
    // The conversion below indexes x and y without looking: a shorter position would panic.
    if let Some(found) = short_position(&geojson) {
        return Err(not_json(format!(
            "a position has {found} number(s); RFC 7946 positions need at least two"
        )));
    }
    let collection: GeometryCollection<f64> =
        GeometryCollection::try_from(&geojson).map_err(|e| not_json(e.to_string()))?;
    let mut polygons = Vec::new();
    collect_polygons(collection.0, &mut polygons);
    if polygons.is_empty() {
        return Err(OutlineError::NoPolygon { file: file.into() });
    }
    let mut outline = Outline { polygons };
    let bounds = outline_bounds(&outline);
    let in_degrees =
        bounds.0 >= -180.0 && bounds.1 <= 180.0 && bounds.2 >= -90.0 && bounds.3 <= 90.0;
    let grid_in_degrees_range = grid.west_m.abs() <= 180.0 && grid.north_m.abs() <= 90.0;
    if in_degrees && !grid_in_degrees_range {
        // RFC 7946 longitude and latitude, as glacier inventories publish them: converted to
        // the grid's UTM zone where the grid is in one.
        let Some(zone) = grid.epsg.and_then(UtmZone::from_epsg) else {
            let crs = grid.epsg.map_or(String::new(), |c| format!(" (EPSG:{c})"));
            return Err(OutlineError::Degrees {
                file: file.into(),
                crs,
            });
        };
        for polygon in &mut outline.polygons {
            polygon.map_coords_in_place(|c| {
                let (x, y) = zone.to_easting_northing(c.x, c.y);
                Coord { x, y }
            });
        }
    }
    Ok(outline)
}

fn collect_polygons(geometries: Vec<Geometry<f64>>, out: &mut Vec<Polygon<f64>>) {
    for geometry in geometries {
        match geometry {
            Geometry::Polygon(p) => out.push(p),
            Geometry::MultiPolygon(mp) => out.extend(mp.0),
            Geometry::GeometryCollection(gc) => collect_polygons(gc.0, out),
            _ => {}
        }
    }
}

/// EPSG code of the legacy `crs` member (`urn:ogc:def:crs:EPSG::32632` or `EPSG:32632`).
fn crs_member_epsg(text: &str) -> Option<u32> {
    let value: serde_json::Value = serde_json::from_str(text).ok()?;
    let name = value.get("crs")?.get("properties")?.get("name")?.as_str()?;
    let code = name.rsplit(':').next()?;
    if name.ends_with("CRS84") {
        return Some(4326);
    }
    code.parse().ok()
}

/// (west, east, south, north) of all polygons.
fn outline_bounds(outline: &Outline) -> (f64, f64, f64, f64) {
    let mut b = (
        f64::INFINITY,
        f64::NEG_INFINITY,
        f64::INFINITY,
        f64::NEG_INFINITY,
    );
    for rect in outline.polygons.iter().filter_map(|p| p.bounding_rect()) {
        b = (
            b.0.min(rect.min().x),
            b.1.max(rect.max().x),
            b.2.min(rect.min().y),
            b.3.max(rect.max().y),
        );
    }
    b
}

/// Marks the cells whose centre lies inside any polygon (holes excluded).
pub fn rasterise(
    outline: &Outline,
    grid: &GridGeometry,
    file: &str,
) -> Result<Vec<bool>, OutlineError> {
    let mut mask = vec![false; grid.n_cells()];
    // Crossings per scanline, each edge visiting only the rows it spans, so a polygon of a
    // million vertices costs its edges plus its crossings, not edges times rows.
    let mut crossings: Vec<Vec<f64>> = vec![Vec::new(); grid.n_rows];
    let row_of = |y: f64| (grid.north_m - y) / grid.cell_size_m - 0.5;
    for polygon in &outline.polygons {
        for row_crossings in &mut crossings {
            row_crossings.clear();
        }
        let rings = std::iter::once(polygon.exterior()).chain(polygon.interiors());
        for line in rings.flat_map(|ring| ring.lines()) {
            let ((x0, y0), (x1, y1)) = ((line.start.x, line.start.y), (line.end.x, line.end.y));
            // Candidate rows, one wider each way; the exact test below decides.
            let (a, b) = (row_of(y0.max(y1)), row_of(y0.min(y1)));
            if !(a.is_finite() && b.is_finite()) || b < -1.0 || a > grid.n_rows as f64 {
                continue;
            }
            let first = (a.floor() - 1.0).max(0.0) as usize;
            let last = ((b.ceil() + 1.0).max(0.0) as usize).min(grid.n_rows - 1);
            for (row, row_crossings) in crossings.iter_mut().enumerate().take(last + 1).skip(first)
            {
                let y = grid.north_m - (row as f64 + 0.5) * grid.cell_size_m;
                // Half-open rule: a vertex exactly on the scanline counts once.
                if (y0 <= y) != (y1 <= y) {
                    row_crossings.push(x0 + (y - y0) * (x1 - x0) / (y1 - y0));
                }
            }
        }
        for (row, row_crossings) in crossings.iter_mut().enumerate() {
            row_crossings.sort_by(f64::total_cmp);
            for span in row_crossings.chunks_exact(2) {
                // Columns whose centre x = west + (c + 0.5) size lies in [span0, span1).
                let first = ((span[0] - grid.west_m) / grid.cell_size_m - 0.5)
                    .ceil()
                    .max(0.0);
                let last = ((span[1] - grid.west_m) / grid.cell_size_m - 0.5)
                    .ceil()
                    .min(grid.n_cols as f64);
                let row_cells = &mut mask[row * grid.n_cols..(row + 1) * grid.n_cols];
                for inside in row_cells
                    .iter_mut()
                    .take(last.max(0.0) as usize)
                    .skip(first as usize)
                {
                    *inside = true;
                }
            }
        }
    }
    if !mask.iter().any(|&m| m) {
        let b = outline_bounds(outline);
        return Err(OutlineError::NoOverlap {
            file: file.into(),
            west: b.0,
            east: b.1,
            south: b.2,
            north: b.3,
            grid_west: grid.west_m,
            grid_east: grid.east_m(),
            grid_south: grid.south_m(),
            grid_north: grid.north_m,
        });
    }
    Ok(mask)
}

/// Reads a GeoJSON outline and returns its cell mask on `grid`.
pub fn outline_mask(
    text: &str,
    file: &str,
    grid: &GridGeometry,
) -> Result<Vec<bool>, OutlineError> {
    let outline = read_outline(text, file, grid)?;
    rasterise(&outline, grid, file)
}

#[cfg(test)]
mod tests {
    use super::*;

    fn grid() -> GridGeometry {
        GridGeometry {
            n_cols: 10,
            n_rows: 10,
            cell_size_m: 10.0,
            west_m: 1000.0,
            north_m: 2100.0,
            epsg: Some(32632),
        }
    }

    #[test]
    fn square_with_a_hole_marks_centres_inside() {
        // Exterior 1020..1080 E x 2020..2080 N (6 x 6 cells), hole 1040..1060 x 2040..2060.
        let text = r#"{"type":"Polygon","coordinates":[
            [[1020,2020],[1080,2020],[1080,2080],[1020,2080],[1020,2020]],
            [[1040,2040],[1060,2040],[1060,2060],[1040,2060],[1040,2040]]]}"#;
        let mask = outline_mask(text, "z.geojson", &grid()).unwrap();
        assert_eq!(mask.iter().filter(|&&m| m).count(), 36 - 4);
        // Row 2 (northing centre 2075) from column 2 (easting centre 1025) to column 7.
        assert!(mask[2 * 10 + 2] && mask[2 * 10 + 7] && !mask[2 * 10 + 1] && !mask[2 * 10 + 8]);
        assert!(!mask[5 * 10 + 4], "the hole is outside");
    }

    #[test]
    fn a_position_of_one_number_is_refused_not_a_panic() {
        // Found by the random-bytes property test (tests/parsers_survive_bad_bytes.rs).
        let text =
            r#"{"type":"Polygon","coordinates":[[[1020,2020],[1080],[1080,2080],[1020,2020]]]}"#;
        match outline_mask(text, "short.geojson", &grid()) {
            Err(OutlineError::NotGeoJson { file, reason }) => {
                assert_eq!(file, "short.geojson");
                assert!(reason.contains("1 number(s)"), "{reason}");
            }
            other => panic!("expected a refusal, got {other:?}"),
        }
    }

    #[test]
    fn degrees_become_utm_and_are_refused_on_other_crs() {
        let lonlat = r#"{"type":"Polygon","coordinates":[[[-27.0,46.0],[-26.9,46.0],[-26.9,46.1],[-27.0,46.0]]]}"#;
        let other_crs = GridGeometry {
            epsg: Some(3857),
            ..grid()
        };
        assert!(matches!(
            outline_mask(lonlat, "a.geojson", &other_crs),
            Err(OutlineError::Degrees { .. })
        ));
        // The same square in UTM 32N and in degrees marks the same cells.
        let zone = UtmZone::from_epsg(32632).unwrap();
        let on_grid = GridGeometry {
            west_m: 500_000.0,
            north_m: 5_000_100.0,
            ..grid()
        };
        let corners = [
            (500_020.0, 5_000_020.0),
            (500_080.0, 5_000_020.0),
            (500_080.0, 5_000_080.0),
            (500_020.0, 5_000_080.0),
            (500_020.0, 5_000_020.0),
        ];
        let ring = |f: &dyn Fn(f64, f64) -> (f64, f64)| {
            corners
                .iter()
                .map(|&(e, n)| {
                    let (x, y) = f(e, n);
                    format!("[{x:.9},{y:.9}]")
                })
                .collect::<Vec<_>>()
                .join(",")
        };
        let in_utm = format!(
            r#"{{"type":"Polygon","coordinates":[[{}]]}}"#,
            ring(&|e, n| (e, n))
        );
        let in_degrees = format!(
            r#"{{"type":"Polygon","coordinates":[[{}]]}}"#,
            ring(&|e, n| zone.to_lon_lat(e, n))
        );
        let a = outline_mask(&in_utm, "u.geojson", &on_grid).unwrap();
        let b = outline_mask(&in_degrees, "d.geojson", &on_grid).unwrap();
        assert_eq!(a.iter().filter(|&&m| m).count(), 36);
        assert_eq!(a, b);
        let other = r#"{"type":"FeatureCollection","crs":{"type":"name","properties":{"name":"urn:ogc:def:crs:EPSG::2056"}},
            "features":[{"type":"Feature","properties":{},"geometry":{"type":"Polygon","coordinates":[[[1020,2020],[1080,2020],[1080,2080],[1020,2020]]]}}]}"#;
        assert!(matches!(
            outline_mask(other, "b.geojson", &grid()),
            Err(OutlineError::OtherCrs { found: 2056, .. })
        ));
        let off = r#"{"type":"Polygon","coordinates":[[[5000,5000],[5100,5000],[5100,5100],[5000,5000]]]}"#;
        assert!(matches!(
            outline_mask(off, "c.geojson", &grid()),
            Err(OutlineError::NoOverlap { .. })
        ));
        assert!(matches!(
            outline_mask("{", "d.geojson", &grid()),
            Err(OutlineError::NotGeoJson { .. })
        ));
    }
}
