// The zone panel: a planner's zone (GeoJSON polygons in the terrain's CRS) opened from a file,
// dropped on the map (file_inputs.js asks what a dropped GeoJSON is) or drawn on it corner by corner, its key years and a table of every
// tenth year (plus the year on the map) from the engine's zone timeline, the outline on the
// map, and downloads of the zone (GeoJSON) and its timeline (CSV).

import { download } from './exports.js';

const ROW_STEP_YEARS = 10;
const HA_PER_KM2 = 100;
const isGeoJsonName = (name) => /\.(geo)?json$/i.test(name);
const DRAWN_NAME = 'drawn_zone.geojson';

export class ZonePanel {
  /**
   * @param {{workspace: object, map: object, elements: Record<string, HTMLElement>,
   *   year: () => number | null, showError: (message: string) => void,
   *   clearError: () => void,
   *   terrain: () => ({west_m: number, north_m: number, cell_size_m: number} | null)}} options
   */
  constructor({ workspace, map, elements, year, showError, clearError, terrain }) {
    this.workspace = workspace;
    this.terrain = terrain;
    this.text = null;
    // Corners of a zone being drawn, in grid cells from the north-west corner; null when not.
    this.corners = null;
    // A zone timeline waiting to be computed, and the refresh it belongs to.
    this.pending = false;
    this.token = 0;
    this.map = map;
    this.el = elements;
    this.year = year;
    this.showError = showError;
    this.clearError = clearError;
    this.zone = null;
    this.timeline = null;
    this.el.open.addEventListener('click', () => this.el.input.click());
    this.el.input.addEventListener('change', () => {
      const [file] = this.el.input.files;
      this.el.input.value = '';
      if (file) this.open(file);
    });
    this.el.csv.addEventListener('click', () => this.downloadCsv());
    this.el.save.addEventListener('click', () => this.text && download([this.text], this.zone.name, 'application/geo+json'));
    this.el.draw.addEventListener('click', () => this.startDrawing());
    this.el.finish.addEventListener('click', () => this.finishDrawing());
    this.el.cancel.addEventListener('click', () => this.stopDrawing());
    document.addEventListener('keydown', (event) => {
      if (event.key === 'Escape' && this.corners) this.stopDrawing();
    });
    map.setOverlay((ctx, view) => this.drawOutline(ctx, view));
    this.render();
  }

  async open(file) {
    let text;
    try {
      text = await file.text();
    } catch (error) {
      this.showError(`${file.name}: could not be read (${error.message}).`);
      return;
    }
    this.load(text, file.name);
  }

  load(text, name) {
    if (!this.workspace.hasTerrain()) {
      this.showError(`${name}: open the terrain first; a zone is laid on its cells.`);
      return false;
    }
    try {
      // On error the engine keeps the zone it had.
      this.zone = this.workspace.loadZone(text, name);
    } catch (error) {
      this.showError(error.message ?? String(error));
      return false;
    }
    this.text = text;
    this.clearError();
    this.refresh();
    document.body.dataset.zones = String(Number(document.body.dataset.zones ?? 0) + 1);
    return true;
  }

  /** True while corners are being placed: map clicks (and Enter under the cross) add one. */
  get drawing() {
    return this.corners !== null;
  }

  startDrawing() {
    if (!this.workspace.hasTerrain()) return;
    this.corners = [];
    this.render();
    this.map.draw();
  }

  /** A corner at the centre of the clicked cell. */
  addCorner(cell) {
    this.corners.push([cell.col + 0.5, cell.row + 0.5]);
    this.render();
    this.map.draw();
  }

  stopDrawing() {
    this.corners = null;
    this.render();
    this.map.draw();
  }

  /** The drawn corners as a GeoJSON polygon in the terrain's CRS, loaded like a file. */
  finishDrawing() {
    const g = this.terrain();
    if (!this.corners || this.corners.length < 3 || !g) return;
    const ring = this.corners.map(([x, y]) => [g.west_m + x * g.cell_size_m, g.north_m - y * g.cell_size_m]);
    ring.push(ring[0]);
    const text = JSON.stringify({ type: 'FeatureCollection', features: [{ type: 'Feature',
      properties: { drawn: 'on the map, corners at cell centres' },
      geometry: { type: 'Polygon', coordinates: [ring] } }] });
    if (this.load(text, DRAWN_NAME)) this.stopDrawing();
  }

  /** Recomputes the timeline: after a run, a new zone or a new terrain. */
  refresh() {
    if (!this.workspace.hasZone()) this.zone = null;
    this.timeline = null;
    this.pending = Boolean(this.zone && this.workspace.hasTimeline());
    this.render();
    this.map.draw();
    if (!this.pending) return;
    // A zone on a million-cell grid takes about a second: let the page show the run's end
    // (or the new zone) first. A later refresh supersedes this one.
    const token = ++this.token;
    setTimeout(() => {
      if (token !== this.token) return;
      this.pending = false;
      try {
        this.timeline = this.workspace.zoneTimeline();
      } catch (error) {
        this.showError(error.message ?? String(error));
      }
      this.render();
    }, 0);
  }

  /** The year on the map changed: only the highlighted row moves. */
  setYear() {
    if (this.timeline) this.renderTable();
  }

  render() {
    const zone = this.zone;
    const drawing = this.drawing;
    this.el.csv.disabled = !this.timeline;
    this.el.save.disabled = !zone || !this.text;
    this.el.draw.hidden = drawing;
    this.el.finish.hidden = !drawing;
    this.el.cancel.hidden = !drawing;
    this.el.finish.disabled = !drawing || this.corners.length < 3;
    this.el.map.classList.toggle('zone-drawing', drawing);
    this.el.summary.textContent = zone
      ? `${zone.name}: ${zone.n_cells.toLocaleString('en-GB')} cells, ${(zone.area_km2 * HA_PER_KM2).toFixed(1)} ha`
      : '';
    const n = drawing ? this.corners.length : 0;
    this.el.hint.textContent = drawing
      ? `Click the map (or press Enter under the cross) at each corner: ${n} so far${n < 3 ? ', three at least' : ''}. Esc cancels.`
      : !zone ? 'Draw one on the map, or open a GeoJSON polygon in the terrain’s CRS (or drop it on the map and choose Zone). After a run its timeline shows here.'
      : this.pending ? 'Reading the zone through the run…'
      : this.timeline ? 'First year at least half the zone is ice-free, or at that stage or a later one; the table gives each stage’s share of the zone.'
        : 'Run the scenario to see the zone’s timeline.';
    this.el.keys.hidden = !this.timeline;
    this.el.tableBox.hidden = !this.timeline;
    if (!this.timeline) return;
    const t = this.timeline;
    this.el.keys.replaceChildren(...t.key_years.flatMap((key) => {
      const dt = document.createElement('dt');
      dt.textContent = key.stage_code === 1 ? 'Half ice-free' : `Half ${key.label} or later`;
      const dd = document.createElement('dd');
      dd.textContent = key.year == null ? `not by ${t.years[t.years.length - 1]}` : String(key.year);
      return [dt, dd];
    }));
    this.renderTable();
  }

  renderTable() {
    const t = this.timeline;
    const first = t.years[0];
    const last = t.years[t.years.length - 1];
    const shown = this.year();
    const years = new Set();
    for (let y = first; y <= last; y += ROW_STEP_YEARS) years.add(y);
    years.add(last);
    if (shown != null && shown >= first && shown <= last) years.add(shown);
    const plants = t.stage_area_km2.length > 0;
    // Areas back to whole cells, so the shown figures are plain cell counts.
    const cellHa = t.cell_size_m ** 2 / 1e4;
    const count = (areaKm2) => Math.round((areaKm2 * HA_PER_KM2) / cellHa);
    const share = (n) => ((100 * n) / t.n_cells).toFixed(0);
    const columns = [['Year', ''], ['Ice area', 'ha']];
    if (plants) {
      // Soft hyphens: whole names that still fit the side panel's width.
      columns.push(['Bare ground', '%'], ['Pio\u00adneer', '%'], ['Mea\u00addow', '%'], ['Shrub\u00adland', '%'], ['Forest', '%']);
    } else {
      columns.push(['Ice volume', 'km³'], ['Newly exposed', 'ha']);
    }
    const titles = {
      Forest: 'Young and mature forest',
      'Newly exposed': 'Ground that became ice-free that year',
    };
    const head = document.createElement('tr');
    for (const [name, unit] of columns) {
      const th = document.createElement('th');
      th.scope = 'col';
      th.textContent = name;
      if (titles[name]) th.title = titles[name];
      if (unit) {
        const span = document.createElement('span');
        span.className = 'zone-unit';
        span.textContent = unit;
        th.append(span);
      }
      head.append(th);
    }
    this.el.head.replaceChildren(head);
    const rows = [...years].sort((a, b) => a - b).map((year) => {
      const k = year - first;
      const cells = [(count(t.ice_area_km2[k]) * cellHa).toFixed(1)];
      if (plants) {
        const s = t.stage_area_km2.map((areas) => count(areas[k]));
        cells.push(share(s[1]), share(s[2]), share(s[3]), share(s[4]), share(s[5] + s[6]));
      } else {
        cells.push(t.ice_volume_km3[k].toFixed(4), (count(t.newly_exposed_area_km2[k]) * cellHa).toFixed(1));
      }
      const tr = document.createElement('tr');
      tr.dataset.year = String(year);
      if (year === shown) {
        tr.className = 'zone-current';
        tr.setAttribute('aria-current', 'true');
      }
      const th = document.createElement('th');
      th.scope = 'row';
      th.textContent = String(year);
      tr.append(th, ...cells.map((text) => {
        const td = document.createElement('td');
        td.textContent = text;
        return td;
      }));
      return tr;
    });
    this.el.body.replaceChildren(...rows);
  }

  downloadCsv() {
    if (!this.timeline) return;
    try {
      const csv = this.workspace.exportZoneCsv();
      download([csv], this.zone.csv_file_name, 'text/csv');
    } catch (error) {
      this.showError(error.message ?? String(error));
    }
  }

  /** The zone's polygons over the map: a light fill and a dark-and-light outline. */
  drawOutline(ctx, view) {
    if (this.corners) this.drawCorners(ctx, view);
    if (!this.zone || !this.workspace.hasZone()) return;
    ctx.beginPath();
    for (const ring of this.zone.rings) {
      ring.forEach(([x, y], i) => {
        const sx = view.offsetX + x * view.scale;
        const sy = view.offsetY + y * view.scale;
        if (i === 0) ctx.moveTo(sx, sy);
        else ctx.lineTo(sx, sy);
      });
      ctx.closePath();
    }
    ctx.fillStyle = 'rgba(176, 82, 29, 0.12)';
    ctx.fill('evenodd');
    for (const [colour, width] of [['rgba(255,255,255,0.9)', 3.5], ['#b0521d', 1.5]]) {
      ctx.strokeStyle = colour;
      ctx.lineWidth = width;
      ctx.stroke();
    }
  }

  /** The corners placed so far, joined in order, with a dot at each. */
  drawCorners(ctx, view) {
    const points = this.corners.map(([x, y]) => [view.offsetX + x * view.scale, view.offsetY + y * view.scale]);
    ctx.beginPath();
    points.forEach(([x, y], i) => (i === 0 ? ctx.moveTo(x, y) : ctx.lineTo(x, y)));
    for (const [colour, width] of [['rgba(255,255,255,0.9)', 3.5], ['#1d2a30', 1.5]]) {
      ctx.strokeStyle = colour;
      ctx.lineWidth = width;
      ctx.setLineDash(colour === '#1d2a30' ? [5, 4] : []);
      ctx.stroke();
    }
    ctx.setLineDash([]);
    for (const [x, y] of points) {
      ctx.beginPath();
      ctx.arc(x, y, 4, 0, 2 * Math.PI);
      ctx.fillStyle = '#b0521d';
      ctx.fill();
      ctx.strokeStyle = '#fff';
      ctx.lineWidth = 1.5;
      ctx.stroke();
    }
  }
}
