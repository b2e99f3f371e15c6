//! The loaded terrain (DEM): loading, the shaded map, the cell readout and the legend.

use super::*;

#[wasm_bindgen]
impl Workspace {
    #[wasm_bindgen(constructor)]
    pub fn new() -> Workspace {
        Workspace {
            terrain: None,
            timeline: None,
            image_rgba: Vec::new(),
            zone: None,
        }
    }

    /// Loads a DEM from a GeoTIFF, or from a 16-bit PNG when `sidecar_json` is given.
    /// On error the terrain loaded before stays.
    #[wasm_bindgen(js_name = loadTerrain)]
    pub fn load_terrain(
        &mut self,
        bytes: &[u8],
        file_name: &str,
        sidecar_json: Option<String>,
    ) -> Result<JsValue, JsError> {
        let dem = match sidecar_json {
            Some(sidecar) => read_heightmap_png(bytes, &sidecar, file_name)
                .map(|grid| ReadGrid { grid, note: None }),
            None => read_geotiff_with(bytes, file_name, ReadOptions::default()),
        }
        .map_err(to_js_error)?;
        let ReadGrid { grid: dem, note } = dem;
        let (lo, hi) = terrain::check_elevations(&dem, file_name).map_err(to_js_error)?;
        let derivatives = terrain::derivatives(&dem, Sun::default());
        let mut notes: Vec<String> = note.into_iter().collect();
        if dem.geometry.epsg.is_none() {
            notes.push("The file states no EPSG code; coordinates are shown as given.".into());
        }
        let info = TerrainInfo {
            file_name: file_name.to_string(),
            n_cols: dem.geometry.n_cols,
            n_rows: dem.geometry.n_rows,
            cell_size_m: dem.geometry.cell_size_m,
            west_m: dem.geometry.west_m,
            north_m: dem.geometry.north_m,
            epsg: dem.geometry.epsg,
            min_elevation_m: lo,
            max_elevation_m: hi,
            nodata_cells: dem.geometry.n_cells() - dem.n_valid(),
            notes,
            geojson_coordinates: coordinates_note(&dem.geometry),
        };
        // A run belongs to the terrain it was made on, and so does a zone.
        self.timeline = None;
        self.zone = None;
        self.terrain = Some(LoadedTerrain {
            file_name: file_name.to_string(),
            dem,
            derivatives,
            range: (lo, hi),
        });
        to_js(&info)
    }

    #[wasm_bindgen(js_name = hasTerrain)]
    pub fn has_terrain(&self) -> bool {
        self.terrain.is_some()
    }

    /// Name of the loaded terrain file, if any.
    #[wasm_bindgen(js_name = terrainFileName)]
    pub fn terrain_file_name(&self) -> Option<String> {
        self.terrain.as_ref().map(|t| t.file_name.clone())
    }

    /// Fills the RGBA image with the elevation ramp over the hillshade.
    #[wasm_bindgen(js_name = renderTerrain)]
    pub fn render_terrain(&mut self) -> Result<(), JsError> {
        let terrain = self
            .terrain
            .as_ref()
            .ok_or_else(|| JsError::new("no terrain is loaded"))?;
        render_shaded(
            &terrain.dem,
            &terrain.derivatives.hillshade,
            ELEVATION_RAMP,
            terrain.range.0,
            terrain.range.1,
            &mut self.image_rgba,
        );
        Ok(())
    }

    /// Address of the RGBA image in wasm memory; rebuild views after any call that allocates.
    #[wasm_bindgen(js_name = imagePtr)]
    pub fn image_ptr(&self) -> *const u8 {
        self.image_rgba.as_ptr()
    }

    #[wasm_bindgen(js_name = imageLen)]
    pub fn image_len(&self) -> usize {
        self.image_rgba.len()
    }

    #[wasm_bindgen(js_name = imageWidth)]
    pub fn image_width(&self) -> usize {
        self.terrain.as_ref().map_or(0, |t| t.dem.geometry.n_cols)
    }

    #[wasm_bindgen(js_name = imageHeight)]
    pub fn image_height(&self) -> usize {
        self.terrain.as_ref().map_or(0, |t| t.dem.geometry.n_rows)
    }

    /// Values at one cell, or `null` off the grid.
    pub fn readout(&self, col: usize, row: usize) -> Result<JsValue, JsError> {
        let Some(terrain) = self.terrain.as_ref() else {
            return Ok(JsValue::NULL);
        };
        let g = &terrain.dem.geometry;
        if col >= g.n_cols || row >= g.n_rows {
            return Ok(JsValue::NULL);
        }
        let idx = row * g.n_cols + col;
        let finite = |v: f32| v.is_finite().then_some(v);
        let (easting_m, northing_m) = g.cell_centre(col, row);
        to_js(&Readout {
            col,
            row,
            easting_m,
            northing_m,
            elevation_m: terrain.dem.get(col, row),
            slope_deg: finite(terrain.derivatives.slope_deg[idx]),
            aspect_deg: finite(terrain.derivatives.aspect_deg[idx]),
        })
    }

    /// Legend of the elevation layer.
    pub fn legend(&self) -> Result<JsValue, JsError> {
        let terrain = self
            .terrain
            .as_ref()
            .ok_or_else(|| JsError::new("no terrain is loaded"))?;
        let (lo, hi) = terrain.range;
        to_js(&Legend::continuous(
            "Surface elevation",
            "m",
            f64::from(lo),
            f64::from(hi),
            ELEVATION_RAMP,
        ))
    }
}
