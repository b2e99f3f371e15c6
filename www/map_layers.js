// The map's layers: the layer select, the chosen layer drawn by the engine for the year on
// the map, its legend, the map's accessible label and the new-lake area under it.

import { renderLegend } from './legend.js';
import { element, formatNumber } from './page_text.js';

// Layers a run without plant types has nothing to draw for.
const plantLayer = (value) => ['stage', 'soil', 'steep_bare'].includes(value) || value.startsWith('cover:');

export class MapLayers {
  /**
   * @param {{workspace: object, memory: WebAssembly.Memory, map: object,
   *   terrain: () => object | null, timeline: () => object | null, year: () => number,
   *   onChange: () => void}} options
   */
  constructor({ workspace, memory, map, terrain, timeline, year, onChange }) {
    Object.assign(this, { workspace, memory, map, terrain, timeline, year });
    this.layer = 'terrain';
    this.select = element('layer');
    this.select.addEventListener('change', (event) => {
      this.layer = event.target.value;
      this.draw({ legend: true });
      onChange();
    });
  }

  /** The year on the map, null before a run. */
  currentYear() {
    return this.timeline() ? this.year() : null;
  }

  /** The engine's legend of the layer shown, null without terrain. */
  legend() {
    if (!this.workspace.hasTerrain()) return null;
    return this.layer === 'terrain' ? this.workspace.legend() : this.workspace.layerLegend(this.layer);
  }

  /** The layer's name as the select shows it. */
  label() {
    return this.select.selectedOptions[0]?.textContent ?? this.layer;
  }

  /** Draws the current layer and year; the view over wasm memory is made afresh each time
   *  because an engine call may have grown (and so moved) that memory. */
  draw({ keepView = true, legend = false } = {}) {
    const { workspace, layer } = this;
    if (!workspace.hasTerrain()) return;
    if (layer === 'terrain') workspace.renderTerrain();
    else workspace.renderLayer(layer, this.year());
    const pixels = new Uint8ClampedArray(this.memory.buffer, workspace.imagePtr(), workspace.imageLen());
    this.map.setImage(new ImageData(pixels, workspace.imageWidth(), workspace.imageHeight()),
      this.terrain().cell_size_m, { keepView });
    if (legend) renderLegend(element('legend'), this.legend(), (value) => formatNumber(value));
    const year = this.currentYear();
    const timeline = this.timeline();
    const typeName = layer.startsWith('cover:') ? timeline.type_names[Number(layer.slice(6))] : '';
    const label = { terrain: 'Surface elevation over shaded relief',
      ice_thickness: `Ice thickness in ${year} over shaded relief`,
      exposure_year: `Year each cell became ice-free, as of ${year}`,
      stage: `Succession stage in ${year}`,
      soil: `Soil development index in ${year}`,
      lakes: `New lakes (potential) by depth in ${year}; a planning indication, not a hazard assessment`,
      steep_bare: `Steep bare ground in ${year}; a planning indication, not a hazard assessment`,
      glacier_domain: `Glacier domain (where snow may build ice), ice in ${year}` }[layer]
      ?? `Cover of ${typeName} in ${year}`;
    element('map').setAttribute('aria-label', label);
    const lakeArea = layer === 'lakes' ? timeline.lake_area_km2[year - timeline.start_year] : null;
    element('lake-area').hidden = lakeArea == null;
    element('lake-area').textContent = `New lakes free of ice in ${year}: ${formatNumber(lakeArea ?? 0, 2)} km²`;
    document.body.dataset.drawn = `${layer}:${year ?? ''}`;
  }

  /** A run's layers: one cover layer per plant type, the plant layers off without plants,
   *  and ice thickness in place of the terrain or a layer this run lacks. */
  offerRunLayers(typeNames) {
    element('cover-layers').replaceChildren(...typeNames.map((name, index) => {
      const option = document.createElement('option');
      option.value = `cover:${index}`;
      option.textContent = `Cover: ${name}`;
      return option;
    }));
    for (const option of this.select.options) option.disabled = typeNames.length === 0 && plantLayer(option.value);
    if (this.layer === 'terrain' || !this.select.querySelector(`option[value="${this.layer}"]:not([disabled])`)) {
      this.layer = 'ice_thickness';
    }
    this.select.value = this.layer;
  }

  /** Only the terrain, as before any run. */
  reset() {
    for (const option of this.select.options) option.disabled = option.value !== 'terrain';
    element('cover-layers').replaceChildren();
    this.layer = 'terrain';
    this.select.value = 'terrain';
  }
}
