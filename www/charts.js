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

/** What both charts share: years on x, a marker at the slider's year, axes and sizing. */
class YearChart {
  constructor(canvas, options) {
    this.canvas = canvas;
    this.options = options;
    this.years = [];
    this.markerYear = null;
    this.plot = null;
    new ResizeObserver(() => this.draw()).observe(canvas);
  }

  setMarker(year) {
    this.markerYear = year;
    this.draw();
  }

  /** Canvas x (CSS px) of the marker, for tests that check it follows the slider. */
  markerX() {
    return this.markerYear == null || !this.plot ? null : this.xOf(this.markerYear);
  }

  xOf(year) {
    const { left, width } = this.plot;
    const first = this.years[0];
    const span = Math.max(1, this.years[this.years.length - 1] - first);
    return left + ((year - first) / span) * width;
  }

  /** Sizes the canvas to its box at the device's pixel ratio, clears it and writes the title;
   *  `keyHeight` is kept free under the plot. Returns the context and the box width. */
  begin(keyHeight = 0) {
    const rect = this.canvas.getBoundingClientRect();
    const ratio = window.devicePixelRatio || 1;
    this.canvas.width = Math.max(1, Math.round(rect.width * ratio));
    this.canvas.height = Math.max(1, Math.round(rect.height * ratio));
    const ctx = this.canvas.getContext('2d');
    ctx.setTransform(ratio, 0, 0, ratio, 0, 0);
    ctx.clearRect(0, 0, rect.width, rect.height);
    this.plot = {
      left: 46, top: 20, width: Math.max(10, rect.width - 58), height: Math.max(10, rect.height - 40 - keyHeight),
    };
    ctx.font = '12px system-ui, sans-serif';
    ctx.fillStyle = INK;
    ctx.textBaseline = 'top';
    ctx.textAlign = 'left';
    ctx.fillText(`${this.options.title} (${this.options.unit})`, 4, 2);
    return { ctx, boxWidth: rect.width };
  }

  /** The note shown before a run. */
  empty(ctx) {
    const { left, top, height } = this.plot;
    ctx.fillStyle = MUTED;
    ctx.fillText('Run a scenario to see this chart.', left, top + height / 2 - 6);
  }

  /** Value grid from 0 to `topValue` every `step`, and round years along the bottom; the
   *  year labels are kept inside the canvas. */
  axes(ctx, boxWidth, topValue, step, yOf) {
    const { left, top, width, height } = this.plot;
    const { decimals = 1 } = this.options;
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
    const last = this.years[this.years.length - 1];
    const yearStep = niceStep(Math.max(1, last - first), 4);
    ctx.textAlign = 'center';
    ctx.textBaseline = 'top';
    ctx.fillStyle = MUTED;
    for (let year = Math.ceil(first / yearStep) * yearStep; year <= last; year += yearStep) {
      const half = ctx.measureText(String(year)).width / 2;
      const x = Math.min(Math.max(this.xOf(year), half + 1), boxWidth - half - 1);
      ctx.fillText(String(year), x, top + height + 4);
    }
  }

  /** The dashed line at the slider's year; returns its x, or null. */
  markerLine(ctx) {
    if (this.markerYear == null) return null;
    const { top, height } = this.plot;
    const x = Math.round(this.xOf(this.markerYear)) + 0.5;
    ctx.strokeStyle = MARKER;
    ctx.setLineDash([4, 3]);
    ctx.beginPath(); ctx.moveTo(x, top); ctx.lineTo(x, top + height); ctx.stroke();
    ctx.setLineDash([]);
    return x;
  }
}

export class LineChart extends YearChart {
  /**
   * @param {HTMLCanvasElement} canvas
   * @param {{ title: string, unit: string, colour: string, decimals?: number }} options
   */
  constructor(canvas, options) {
    super(canvas, options);
    this.values = [];
  }

  setData(years, values) {
    this.years = years;
    this.values = values;
    this.draw();
  }

  draw() {
    const { ctx, boxWidth } = this.begin();
    if (this.years.length < 2) {
      this.empty(ctx);
      return;
    }
    const { left, top, width, height } = this.plot;
    const { unit, colour, decimals = 1 } = this.options;
    const max = Math.max(...this.values, 0);
    const step = niceStep(max || 1, 3);
    const topValue = Math.max(step, Math.ceil(max / step) * step);
    const yOf = (value) => top + height - (value / topValue) * height;
    this.axes(ctx, boxWidth, topValue, step, yOf);
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
    const x = this.markerLine(ctx);
    const i = x == null ? -1 : this.years.indexOf(this.markerYear);
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

/**
 * Several series against the same years: lines, or areas stacked from the bottom up, with a
 * key of names and colours under the plot and a marker at the slider's year.
 */
export class MultiChart extends YearChart {
  /**
   * @param {HTMLCanvasElement} canvas
   * @param {{ title: string, unit: string, stacked?: boolean, decimals?: number, max?: number }} options
   */
  constructor(canvas, options) {
    super(canvas, options);
    this.series = [];
  }

  /** @param {{ label: string, colour: string, values: number[] }[]} series */
  setData(years, series) {
    this.years = years;
    this.series = series;
    this.draw();
  }

  draw() {
    // The key under the plot: as many columns as the longest name allows, up to three.
    const ctx0 = this.canvas.getContext('2d');
    ctx0.font = '12px system-ui, sans-serif';
    const boxWidth0 = this.canvas.getBoundingClientRect().width;
    const longest = Math.max(0, ...this.series.map((s) => ctx0.measureText(s.label).width));
    const keyColumns = Math.max(1, Math.min(3, Math.floor((boxWidth0 - 8) / (longest + 22))));
    const keyRows = Math.ceil(this.series.length / keyColumns);
    const { ctx, boxWidth } = this.begin(16 * keyRows);
    if (this.years.length < 2 || this.series.length === 0) {
      this.empty(ctx);
      return;
    }
    const { top, height } = this.plot;
    const { stacked = false } = this.options;
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
    this.axes(ctx, boxWidth, topValue, step, yOf);
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
    const colWidth = (boxWidth - 8) / keyColumns;
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
    this.markerLine(ctx);
  }
}
