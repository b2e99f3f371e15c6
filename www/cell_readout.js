// The readout beside the map: the cell under the pointer, its terrain values from the engine
// and, after a run, its ice and exposure in the year on the map.

import { element, formatNumber } from './page_text.js';

const READOUT_FIELDS = ['easting', 'northing', 'elevation', 'slope', 'aspect', 'cell', 'ice', 'exposed'];

/**
 * Exposure as of `year` from a cell history: the latest year the cell went from ice to
 * ice-free at or before `year`, as the engine defines it.
 */
function exposureAsOf(history, year) {
  const index = Math.min(history.years.length - 1, year - history.years[0]);
  const ice = history.ice_thickness_m;
  if (ice[index] > 0) return { underIce: true, year: null };
  for (let i = index; i > 0; i -= 1) {
    if (ice[i] === 0 && ice[i - 1] > 0) return { underIce: false, year: history.years[i] };
  }
  return { underIce: false, year: null };
}

function exposureText(history, year) {
  const state = exposureAsOf(history, year);
  if (state.underIce) return `under ice in ${year}`;
  if (state.year != null) return `in ${state.year}`;
  return history.covered_at_start ? '–' : 'ice-free at the start';
}

function showReadout(cell, history = null, year = null) {
  const set = (name, text) => { element(`ro-${name}`).textContent = text; };
  if (cell && history) {
    const index = year - history.years[0];
    set('ice', `${formatNumber(history.ice_thickness_m[index], 1)} m in ${year}`);
    set('exposed', exposureText(history, year));
  } else {
    set('ice', '–');
    set('exposed', '–');
  }
  if (!cell) {
    READOUT_FIELDS.forEach((name) => set(name, '–'));
    element('readout-hint').textContent = 'Point at the map to read a cell.';
    return;
  }
  set('easting', `${formatNumber(cell.easting_m, 1)} m`);
  set('northing', `${formatNumber(cell.northing_m, 1)} m`);
  set('cell', `col ${cell.col}, row ${cell.row}`);
  if (cell.elevation_m == null) {
    set('elevation', 'no data');
    set('slope', '–');
    set('aspect', '–');
  } else {
    set('elevation', `${formatNumber(cell.elevation_m, 1)} m`);
    set('slope', cell.slope_deg == null ? '–' : `${formatNumber(cell.slope_deg, 1)}°`);
    // Flat cells have no aspect; the engine may say so with null.
    set('aspect', cell.aspect_deg == null ? 'flat' : `${formatNumber(cell.aspect_deg, 0)}°`);
  }
  element('readout-hint').textContent =
    'At the cell centre. Surface: the top of the ice, or the ground where there is no ice, as in the terrain file. Slope and aspect by Horn (1981).';
}

export class CellReadout {
  /** @param {() => number | null} year the year on the map, null before a run */
  constructor(workspace, year) {
    this.workspace = workspace;
    this.year = year;
    // The pointer's cell and its history, kept so a new year reads no history again.
    this.cell = null;
    this.history = null;
  }

  /** The cell under the pointer, or null off the map. */
  point(cell) {
    const { workspace } = this;
    this.cell = cell;
    this.history = cell && workspace.hasTimeline() ? workspace.cellHistory(cell.col, cell.row) : null;
    showReadout(cell && workspace.hasTerrain() ? workspace.readout(cell.col, cell.row) : null,
      this.history, this.year());
  }

  showYear(year) {
    if (this.cell) showReadout(this.workspace.readout(this.cell.col, this.cell.row), this.history, year);
  }

  /** Empty fields for a new terrain; the pointer's cell is read again when it moves. */
  clear() {
    showReadout(null);
  }
}
