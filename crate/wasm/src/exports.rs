//! The Export panel's files of the loaded run, made by the engine as the command line makes them.

use super::*;

#[wasm_bindgen]
impl Workspace {
    #[wasm_bindgen(js_name = exportSnapshot)]
    pub fn export_snapshot(&mut self, layer: &str, year: i32) -> Result<Vec<u8>, JsError> {
        let terrain = self.terrain.as_ref().ok_or_else(no_terrain)?;
        let loaded = self.timeline.as_mut().ok_or_else(no_run)?;
        let kind = layer_kind(&loaded.timeline, layer).map_err(export_error)?;
        let snapshot = snapshot_png(
            &loaded.timeline,
            &mut loaded.renderer,
            &terrain.dem,
            &loaded.meta,
            kind,
            year,
        )
        .map_err(export_error)?;
        Ok(snapshot.png)
    }

    /// A layer at a year as a GeoTIFF georeferenced like the terrain.
    #[wasm_bindgen(js_name = exportLayerGeotiff)]
    pub fn export_layer_geotiff(&self, layer: &str, year: i32) -> Result<Vec<u8>, JsError> {
        let (terrain, loaded) = self.run_parts()?;
        let kind = layer_kind(&loaded.timeline, layer).map_err(export_error)?;
        layer_geotiff(&loaded.timeline, &terrain.dem, &loaded.meta, kind, year)
            .map_err(export_error)
    }

    /// The file-name stem the command line uses for a layer (e.g. `cover_grasses_and_sedges`).
    #[wasm_bindgen(js_name = layerFileStem)]
    pub fn layer_file_stem(&self, layer: &str) -> Result<String, JsError> {
        let (_, loaded) = self.run_parts()?;
        let kind = layer_kind(&loaded.timeline, layer).map_err(export_error)?;
        Ok(layer_file_stem(&loaded.timeline, kind))
    }

    /// Ice outlines at the end of each year as RFC 7946 GeoJSON.
    #[wasm_bindgen(js_name = exportIceOutlines)]
    pub fn export_ice_outlines(&self, years: Vec<i32>) -> Result<String, JsError> {
        let (terrain, loaded) = self.run_parts()?;
        ice_outlines_geojson(&loaded.timeline, &terrain.dem, &loaded.meta, &years)
            .map_err(export_error)
    }

    /// Polygons of each succession stage at the end of a year as RFC 7946 GeoJSON.
    #[wasm_bindgen(js_name = exportStagePolygons)]
    pub fn export_stage_polygons(&self, year: i32) -> Result<String, JsError> {
        let (terrain, loaded) = self.run_parts()?;
        stage_polygons_geojson(&loaded.timeline, &terrain.dem, &loaded.meta, year)
            .map_err(export_error)
    }

    /// One cell's history (every year) as RFC 4180 CSV.
    #[wasm_bindgen(js_name = exportCellHistory)]
    pub fn export_cell_history(&self, col: usize, row: usize) -> Result<String, JsError> {
        let (terrain, loaded) = self.run_parts()?;
        cell_history_csv(&loaded.timeline, &terrain.dem, &loaded.meta, &[(col, row)])
            .map_err(export_error)
    }

    /// Starts streaming the cells of a year as RFC 4180 CSV; returns the number of data rows.
    /// Take the table with [`Workspace::next_cells_csv_chunk`] until it returns `undefined`.
    #[wasm_bindgen(js_name = startCellsCsv)]
    pub fn start_cells_csv(&mut self, year: i32) -> Result<usize, JsError> {
        let terrain = self.terrain.as_ref().ok_or_else(no_terrain)?;
        let loaded = self.timeline.as_mut().ok_or_else(no_run)?;
        let stream = CellsCsv::new(&loaded.timeline, &terrain.dem, &loaded.meta, year)
            .map_err(export_error)?;
        let total = stream.rows_total();
        loaded.cells_csv = Some(stream);
        Ok(total)
    }

    /// The next chunk of at most `max_rows` rows of the cells table as UTF-8 bytes, or
    /// `undefined` when it is done (the stream is then dropped).
    #[wasm_bindgen(js_name = nextCellsCsvChunk)]
    pub fn next_cells_csv_chunk(&mut self, max_rows: usize) -> Result<Option<Vec<u8>>, JsError> {
        let terrain = self.terrain.as_ref().ok_or_else(no_terrain)?;
        let loaded = self.timeline.as_mut().ok_or_else(no_run)?;
        let stream = loaded
            .cells_csv
            .as_mut()
            .ok_or_else(|| JsError::new("no cells table is being written"))?;
        let chunk = stream
            .next_chunk(&loaded.timeline, &terrain.dem, max_rows.max(1))
            .map_err(export_error)?;
        if chunk.is_none() {
            loaded.cells_csv = None;
        }
        Ok(chunk)
    }
}
