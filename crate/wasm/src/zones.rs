//! Zones: a GeoJSON polygon file rasterised once onto the terrain, read through a run.

use super::*;

/// What the page learns about a loaded zone.
#[derive(Serialize)]
struct ZoneInfo {
    name: String,
    n_cells: usize,
    area_km2: f64,
    csv_file_name: String,
    /// Polygon rings in grid cells from the north-west corner (x = column, y = row), to
    /// draw the outline.
    rings: Vec<Vec<[f32; 2]>>,
}

/// Zones: a GeoJSON polygon file rasterised once onto the terrain, read through a run.
#[wasm_bindgen]
impl Workspace {
    /// Loads a zone (GeoJSON polygons in the terrain's CRS) onto the loaded terrain; it stays
    /// for later runs until another terrain is loaded. On error the zone loaded before stays.
    #[wasm_bindgen(js_name = loadZone)]
    pub fn load_zone(&mut self, geojson_text: &str, file_name: &str) -> Result<JsValue, JsError> {
        let terrain = self.loaded_terrain()?;
        let zone = Zone::from_geojson(geojson_text, file_name, &terrain.dem)
            .map_err(|e| JsError::new(&e.to_string()))?;
        let g = &terrain.dem.geometry;
        let rings = read_outline(geojson_text, file_name, g)
            .map(|outline| {
                outline
                    .polygons
                    .iter()
                    .flat_map(|p| std::iter::once(p.exterior()).chain(p.interiors()))
                    .map(|ring| {
                        ring.coords()
                            .map(|c| {
                                [
                                    ((c.x - g.west_m) / g.cell_size_m) as f32,
                                    ((g.north_m - c.y) / g.cell_size_m) as f32,
                                ]
                            })
                            .collect()
                    })
                    .collect()
            })
            .unwrap_or_default();
        let info = ZoneInfo {
            name: zone.name().to_string(),
            n_cells: zone.n_cells(),
            area_km2: zone.area_km2(),
            csv_file_name: zone.csv_file_name(),
            rings,
        };
        self.zone = Some(zone);
        to_js(&info)
    }

    #[wasm_bindgen(js_name = hasZone)]
    pub fn has_zone(&self) -> bool {
        self.zone.is_some()
    }

    /// The zone through the loaded run: per-year arrays and the key years.
    #[wasm_bindgen(js_name = zoneTimeline)]
    pub fn zone_timeline(&self) -> Result<JsValue, JsError> {
        let (_, loaded) = self.run_parts()?;
        let zone = self.zone.as_ref().ok_or_else(no_zone)?;
        to_js(&zone_timeline(&loaded.timeline, zone).map_err(export_error)?)
    }

    /// The zone's timeline as RFC 4180 CSV, the same bytes as `forefield export --zone`.
    #[wasm_bindgen(js_name = exportZoneCsv)]
    pub fn export_zone_csv(&self) -> Result<String, JsError> {
        let (terrain, loaded) = self.run_parts()?;
        let zone = self.zone.as_ref().ok_or_else(no_zone)?;
        zone_timeline_csv(&loaded.timeline, &terrain.dem, zone, &loaded.meta).map_err(export_error)
    }
}

fn no_zone() -> JsError {
    JsError::new("no zone is loaded; open a zone GeoJSON first")
}
