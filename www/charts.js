// A tiny line chart on a canvas: one series against years, round-valued axis ticks, and a
// marker at the slider's year. No dependencies; redrawn whole, which is cheap at this size.

const INK = '#1d2a30';
const MUTED = '#52626a';
const GRID = '#e1e6e4';
const MARKER = '#b0521d';

function niceStep(span, target) {
  const rough = span / target;
  const power = 10 ** Math.floor(Math.log10(rough));
  return [1, 2, 5, 10].map((m) => m * power).find((s) => s >= rough) ?? power;
}

export class LineChart {
  /**
   * @param {HTMLCanvasElement} canvas
   * @param {{ title: string, unit: string, colour: string, decimals?: number }} options
   */
  constructor(canvas, options) {
    this.canvas = canvas;
    this.options = options;
    this.years = [];
    this.values = [];
    this.markerYear = null;
    new ResizeObserver(() => this.draw()).observe(canvas);
  }

  setData(years, values) {
    this.years = years;
    this.values = values;
    this.draw();
  }

  setMarker(year) {
    this.markerYear = year;
    this.draw();
  }

  /** Canvas x (CSS px) of the marker, for tests that check it follows the slider. */
  markerX() {
    return this.markerYear == null ? null : this.xOf(this.markerYear);
  }

  xOf(year) {
    const { left, width } = this.plot;
    const first = this.years[0];
    const span = Math.max(1, this.years[this.years.length - 1] - first);
    return left + ((year - first) / span) * width;
  }

  draw() {
    const rect = this.canvas.getBoundingClientRect();
    const ratio = window.devicePixelRatio || 1;
    this.canvas.width = Math.max(1, Math.round(rect.width * ratio));
    this.canvas.height = Math.max(1, Math.round(rect.height * ratio));
    const ctx = this.canvas.getContext('2d');
    ctx.setTransform(ratio, 0, 0, ratio, 0, 0);
    ctx.clearRect(0, 0, rect.width, rect.height);
    this.plot = { left: 46, top: 20, width: Math.max(10, rect.width - 58), height: Math.max(10, rect.height - 40) };
    const { left, top, width, height } = this.plot;
    const { title, unit, colour, decimals = 1 } = this.options;
    ctx.font = '12px system-ui, sans-serif';
    ctx.fillStyle = INK;
    ctx.textBaseline = 'top';
    ctx.fillText(`${title} (${unit})`, 4, 2);
    if (this.years.length < 2) {
      ctx.fillStyle = MUTED;
      ctx.fillText('Run a scenario to see this chart.', left, top + height / 2 - 6);
      return;
    }
    const max = Math.max(...this.values, 0);
    const step = niceStep(max || 1, 3);
    const top_value = Math.max(step, Math.ceil(max / step) * step);
    const yOf = (value) => top + height - (value / top_value) * height;

    // Value grid and labels.
    ctx.textBaseline = 'middle';
    ctx.textAlign = 'right';
    for (let v = 0; v <= top_value + 1e-9; v += step) {
      const y = Math.round(yOf(v)) + 0.5;
      ctx.strokeStyle = GRID;
      ctx.beginPath(); ctx.moveTo(left, y); ctx.lineTo(left + width, y); ctx.stroke();
      ctx.fillStyle = MUTED;
      ctx.fillText(v.toFixed(step < 1 ? decimals : 0), left - 5, y);
    }
    // Year labels: first, last and round years between.
    const first = this.years[0];
    const last = this.years[this.years.length - 1];
    const yearStep = niceStep(Math.max(1, last - first), 4);
    ctx.textAlign = 'center';
    ctx.textBaseline = 'top';
    for (let year = Math.ceil(first / yearStep) * yearStep; year <= last; year += yearStep) {
      ctx.fillStyle = MUTED;
      ctx.fillText(String(year), this.xOf(year), top + height + 4);
    }
    // The series.
    ctx.strokeStyle = colour;
    ctx.lineWidth = 2;
    ctx.beginPath();
    this.years.forEach((year, i) => {
      const x = this.xOf(year);
      const y = yOf(this.values[i]);
      if (i === 0) ctx.moveTo(x, y); else ctx.lineTo(x, y);
    });
    ctx.stroke();
    ctx.lineWidth = 1;
    // The slider's year, with its value.
    if (this.markerYear != null) {
      const x = Math.round(this.xOf(this.markerYear)) + 0.5;
      ctx.strokeStyle = MARKER;
      ctx.setLineDash([4, 3]);
      ctx.beginPath(); ctx.moveTo(x, top); ctx.lineTo(x, top + height); ctx.stroke();
      ctx.setLineDash([]);
      const i = this.years.indexOf(this.markerYear);
      if (i >= 0) {
        const y = yOf(this.values[i]);
        ctx.fillStyle = MARKER;
        ctx.beginPath(); ctx.arc(x, y, 3.5, 0, 2 * Math.PI); ctx.fill();
        ctx.textAlign = x > left + width / 2 ? 'right' : 'left';
        ctx.textBaseline = 'bottom';
        ctx.fillStyle = INK;
        const label = `${this.values[i].toFixed(decimals)} ${unit}`;
        ctx.fillText(label, x + (ctx.textAlign === 'left' ? 6 : -6), Math.max(top + 12, y - 4));
      }
    }
  }
}

/**
 * Several series against the same years: lines, or areas stacked from the bottom up, with a
 * key of names and colours under the plot and a marker at the slider's year.
 */
export class MultiChart {
  /**
   * @param {HTMLCanvasElement} canvas
   * @param {{ title: string, unit: string, stacked?: boolean, decimals?: number, max?: number }} options
   */
  constructor(canvas, options) {
    this.canvas = canvas;
    this.options = options;
    this.years = [];
    this.series = [];
    this.markerYear = null;
    new ResizeObserver(() => this.draw()).observe(canvas);
  }

  /** @param {{ label: string, colour: string, values: number[] }[]} series */
  setData(years, series) {
    this.years = years;
    this.series = series;
    this.draw();
  }

  setMarker(year) {
    this.markerYear = year;
    this.draw();
  }

  markerX() {
    return this.markerYear == null || !this.plot ? null : this.xOf(this.markerYear);
  }

  xOf(year) {
    const { left, width } = this.plot;
    const first = this.years[0];
    const span = Math.max(1, this.years[this.years.length - 1] - first);
    return left + ((year - first) / span) * width;
  }

  draw() {
    const rect = this.canvas.getBoundingClientRect();
    const ratio = window.devicePixelRatio || 1;
    this.canvas.width = Math.max(1, Math.round(rect.width * ratio));
    this.canvas.height = Math.max(1, Math.round(rect.height * ratio));
    const ctx = this.canvas.getContext('2d');
    ctx.setTransform(ratio, 0, 0, ratio, 0, 0);
    ctx.clearRect(0, 0, rect.width, rect.height);
    const { title, unit, stacked = false, decimals = 1 } = this.options;
    // The key under the plot: as many columns as the longest name allows, up to three.
    ctx.font = '12px system-ui, sans-serif';
    const longest = Math.max(0, ...this.series.map((s) => ctx.measureText(s.label).width));
    const keyColumns = Math.max(1, Math.min(3, Math.floor((rect.width - 8) / (longest + 22))));
    const keyRows = Math.ceil(this.series.length / keyColumns);
    this.plot = { left: 46, top: 20, width: Math.max(10, rect.width - 58), height: Math.max(10, rect.height - 40 - 16 * keyRows) };
    const { left, top, width, height } = this.plot;
    ctx.font = '12px system-ui, sans-serif';
    ctx.fillStyle = INK;
    ctx.textBaseline = 'top';
    ctx.fillText(`${title} (${unit})`, 4, 2);
    if (this.years.length < 2 || this.series.length === 0) {
      ctx.fillStyle = MUTED;
      ctx.fillText('Run a scenario to see this chart.', left, top + height / 2 - 6);
      return;
    }
    const n = this.years.length;
    // Cumulative tops when stacked.
    const tops = [];
    let running = new Array(n).fill(0);
    for (const s of this.series) {
      running = running.map((v, i) => (stacked ? v : 0) + s.values[i]);
      tops.push(running);
    }
    const max = this.options.max ?? Math.max(...tops.flat(), 0);
    const step = niceStep(max || 1, 3);
    const topValue = Math.max(step, Math.ceil(max / step - 1e-9) * step);
    const yOf = (value) => top + height - (value / topValue) * height;

    ctx.textBaseline = 'middle';
    ctx.textAlign = 'right';
    for (let v = 0; v <= topValue + 1e-9; v += step) {
      const y = Math.round(yOf(v)) + 0.5;
      ctx.strokeStyle = GRID;
      ctx.beginPath(); ctx.moveTo(left, y); ctx.lineTo(left + width, y); ctx.stroke();
      ctx.fillStyle = MUTED;
      ctx.fillText(v.toFixed(step < 1 ? decimals : 0), left - 5, y);
    }
    const first = this.years[0];
    const last = this.years[n - 1];
    const yearStep = niceStep(Math.max(1, last - first), 4);
    ctx.textAlign = 'center';
    ctx.textBaseline = 'top';
    for (let year = Math.ceil(first / yearStep) * yearStep; year <= last; year += yearStep) {
      ctx.fillStyle = MUTED;
      ctx.fillText(String(year), this.xOf(year), top + height + 4);
    }
    this.series.forEach((s, k) => {
      const upper = tops[k];
      ctx.beginPath();
      this.years.forEach((year, i) => {
        const x = this.xOf(year);
        if (i === 0) ctx.moveTo(x, yOf(upper[i])); else ctx.lineTo(x, yOf(upper[i]));
      });
      if (stacked) {
        const lower = k === 0 ? new Array(n).fill(0) : tops[k - 1];
        for (let i = n - 1; i >= 0; i -= 1) ctx.lineTo(this.xOf(this.years[i]), yOf(lower[i]));
        ctx.closePath();
        ctx.fillStyle = s.colour;
        ctx.fill();
      } else {
        ctx.strokeStyle = s.colour;
        ctx.lineWidth = 2;
        ctx.stroke();
        ctx.lineWidth = 1;
      }
    });
    // Key: swatch and name.
    ctx.textAlign = 'left';
    ctx.textBaseline = 'middle';
    const colWidth = (rect.width - 8) / keyColumns;
    this.series.forEach((s, k) => {
      const x = 4 + (k % keyColumns) * colWidth;
      const y = top + height + 26 + Math.floor(k / keyColumns) * 16;
      ctx.fillStyle = s.colour;
      ctx.fillRect(x, y - 5, 12, 10);
      ctx.strokeStyle = '#8c9896';
      ctx.strokeRect(x + 0.5, y - 4.5, 11, 9);
      ctx.fillStyle = INK;
      ctx.fillText(s.label, x + 16, y, colWidth - 18);
    });
    if (this.markerYear != null) {
      const x = Math.round(this.xOf(this.markerYear)) + 0.5;
      ctx.strokeStyle = MARKER;
      ctx.setLineDash([4, 3]);
      ctx.beginPath(); ctx.moveTo(x, top); ctx.lineTo(x, top + height); ctx.stroke();
      ctx.setLineDash([]);
    }
  }
}
