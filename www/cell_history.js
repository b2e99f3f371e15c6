// The cell history panel: after a run, the cell the planner clicked, with its ice thickness
// and the cover of each plant type through the run, the first year of each stage, and its ice
// and stage in the year on the map.

import { LineChart, MultiChart } from './charts.js';
import { element, formatNumber } from './page_text.js';

// Line colours of the plant types, told apart by lightness as well as hue.
const TYPE_COLOURS = ['#c9a227', '#6f9a3a', '#a0522d', '#2e8b6e', '#173f35', '#7a5c99', '#4c7fb0', '#8c8c8c'];

export class CellHistory {
  /**
   * @param {{workspace: object, map: object, timeline: () => object | null,
   *   year: () => number, onSelect: () => void}} options
   */
  constructor({ workspace, map, timeline, year, onSelect }) {
    Object.assign(this, { workspace, map, timeline, year, onSelect });
    this.cell = null;
    this.history = null;
    // Names and colours of the stages, from the engine's stage legend after a run.
    this.stages = [];
    this.iceChart = new LineChart(element('history-chart'), { title: 'Ice thickness here', unit: 'm', colour: '#2f6db0', decimals: 1 });
    this.coverChart = new MultiChart(element('history-cover'), { title: 'Cover here', unit: '%', max: 100 });
  }

  setStages(classes) {
    this.stages = classes;
  }

  stageLabel(stage) {
    return this.stages[stage]?.label;
  }

  /** The first year the cell is in each stage after the start, e.g. "meadow 2041". */
  firstStageYears(history) {
    const seen = new Set([history.stage[0]]);
    const parts = [];
    history.stage.forEach((stage, i) => {
      if (seen.has(stage)) return;
      seen.add(stage);
      parts.push(`${this.stageLabel(stage) ?? stage} ${history.years[i]}`);
    });
    return parts.length ? parts.join(', ') : `no change from ${this.stageLabel(history.stage[0]) ?? '–'}`;
  }

  select(cell) {
    if (!this.workspace.hasTimeline()) return;
    this.cell = cell;
    this.history = this.workspace.cellHistory(cell.col, cell.row);
    this.map.setSelected(cell);
    this.onSelect();
    element('history').hidden = false;
    element('history-hint').textContent = 'The outlined cell; the dashed line is the year on the map.';
    element('hi-cell').textContent = `col ${cell.col}, row ${cell.row}`;
    const h = this.history;
    const iceAtEnd = h.ice_thickness_m[h.ice_thickness_m.length - 1] > 0;
    element('hi-exposed').textContent = iceAtEnd && h.exposure_year != null
      ? `${h.exposure_year}, under ice again by ${this.timeline().last_year}`
      : h.exposure_year != null ? String(h.exposure_year)
      : (h.covered_at_start ? `still under ice in ${this.timeline().last_year}` : 'ice-free at the start');
    this.iceChart.setData(h.years, h.ice_thickness_m);
    element('hi-stages').textContent = h.stage.length ? this.firstStageYears(h) : '–';
    this.coverChart.setData(h.years, h.cover.map((values, t) => ({
      label: this.timeline().type_names[t], colour: TYPE_COLOURS[t % TYPE_COLOURS.length],
      values: values.map((v) => 100 * v),
    })));
    this.showYear(this.year());
  }

  /** The same cell from a new run. */
  reselect() {
    if (this.cell) this.select(this.cell);
  }

  showYear(year) {
    this.iceChart.setMarker(year);
    this.coverChart.setMarker(year);
    const h = this.history;
    if (!h) return;
    element('hi-ice-label').textContent = `Ice in ${year}`;
    const index = year - h.years[0];
    element('hi-ice').textContent = `${formatNumber(h.ice_thickness_m[index], 1)} m`;
    element('hi-stage-label').textContent = `Stage in ${year}`;
    const stage = h.stage[index];
    element('hi-stage').textContent = stage == null ? '–' : this.stageLabel(stage) ?? String(stage);
  }

  /** No cell chosen: a new terrain leaves nothing to show a history of. */
  clear() {
    this.cell = null;
    this.history = null;
    this.map.setSelected(null);
    element('history').hidden = true;
    element('history-hint').textContent = 'After a run, click a cell on the map to see its history.';
  }
}
