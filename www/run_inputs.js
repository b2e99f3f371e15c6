// What the next run starts from: the loaded terrain, its GeoTIFF bytes as the surface, the
// starting ice, the vegetation and any glacier domain the planner gave, as the Inputs panel
// shows them. The bundled sample valley brings its own ice and vegetation grids.

import { fetchBytes } from './files.js';
import { element, showList } from './page_text.js';

export const SAMPLE_URL = './sample-grids/valley_dem.tif';
export const SAMPLE_NAME = 'valley_dem.tif';
const SAMPLE_ICE_URL = './sample-grids/valley_ice_thickness.tif';
const SAMPLE_VEGETATION_URL = './sample-grids/valley_vegetation.tif';

export class RunInputs {
  constructor() {
    // The engine's description of the loaded terrain.
    this.terrain = null;
    // The GeoTIFF bytes a run needs: the terrain as surface, and an ice-thickness grid.
    this.surface = null;
    this.ice = null;
    // Succession stage codes at the start (the sample has its own; other terrain starts from
    // each cell's potential vegetation).
    this.vegetation = null;
    // A glacier domain the planner gave (else the engine's drainage rule).
    this.domain = null;
  }

  /** A new terrain: the ice, vegetation and domain chosen for the last one no longer fit.
   *  `surface` is null for a PNG height map, which can be viewed but not run. */
  setTerrain(info, surface) {
    this.terrain = info;
    this.surface = surface;
    this.ice = null;
    this.vegetation = null;
    this.domain = null;
  }

  /** One checked input file, `{ bytes, name, notes }`, for 'ice', 'vegetation' or 'domain'. */
  use(kind, input) {
    if (kind === 'ice') this.ice = input;
    else if (kind === 'vegetation') this.vegetation = input;
    else this.domain = input;
  }

  /** Fetches the sample's own ice and vegetation grids unless others were chosen. */
  async addSampleGrids() {
    if (!this.ice && this.surface.name === SAMPLE_NAME) {
      this.ice = { bytes: await fetchBytes(SAMPLE_ICE_URL), name: 'valley_ice_thickness.tif' };
    }
    if (!this.vegetation && this.surface.name === SAMPLE_NAME) {
      this.vegetation = { bytes: await fetchBytes(SAMPLE_VEGETATION_URL), name: 'valley_vegetation.tif' };
    }
  }

  /** The run status between runs: what the next run starts from, or why it cannot run. */
  text() {
    const { terrain, surface, ice } = this;
    if (!terrain) return 'Open a terrain to run.';
    if (!surface) {
      return `${terrain.file_name} is a PNG height map: it can be viewed, but runs need the terrain as a GeoTIFF.`;
    }
    if (surface.name === SAMPLE_NAME) {
      return 'Runs use the sample valley with its own ice and vegetation grids.';
    }
    if (!ice) return `Runs use ${surface.name}; open its ice (Ice…: a thickness grid or a glacier outline) first.`;
    return `Runs use ${surface.name} with ${ice.name}.`;
  }

  /** Says which ice and vegetation the next run starts from, with the engine's notes. */
  show() {
    const { surface, ice, vegetation, domain } = this;
    const sample = surface?.name === SAMPLE_NAME;
    element('fi-ice').textContent = ice ? ice.name
      : sample ? 'sample ice grid' : 'none yet: open an ice grid or glacier outline';
    element('fi-vegetation').textContent = vegetation ? vegetation.name
      : sample ? 'sample vegetation grid' : 'potential vegetation on ice-free ground';
    element('fi-domain').textContent = domain ? domain.name
      : 'the starting ice, the ground touching it and the ground draining into them';
    showList(element('fi-input-notes'), [...(ice?.notes ?? []), ...(vegetation?.notes ?? []), ...(domain?.notes ?? [])]);
  }
}
