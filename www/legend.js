// The legend: the engine's colour ramp as a vertical bar, high values at the top like a
// mountain, with round-valued ticks in the legend's own unit, and swatches for the named
// classes (ground a ramp does not describe, or categories).

const TICK_TARGET = 5;

/** Round tick values (1, 2 or 5 times a power of ten apart) inside [min, max]. */
function niceTicks(min, max) {
  const span = max - min;
  if (!(span > 0)) return [];
  const rough = span / TICK_TARGET;
  const power = 10 ** Math.floor(Math.log10(rough));
  const step = [1, 2, 5, 10].map((m) => m * power).find((s) => s >= rough);
  const ticks = [];
  for (let value = Math.ceil(min / step) * step; value <= max + 1e-9; value += step) {
    ticks.push(Math.round(value / step) * step);
  }
  return ticks;
}

function rgbCss([r, g, b]) {
  return `rgb(${r} ${g} ${b})`;
}

/**
 * Draws `legend` ({ title, unit, min, max, stops: [{ value, rgb }] }) into `container`.
 * @param {HTMLElement} container
 * @param {object | null} legend
 * @param {(value: number) => string} formatNumber
 */
export function renderLegend(container, legend, formatNumber) {
  container.replaceChildren();
  if (!legend) return;
  if (!legend.stops?.length) {
    if (legend.classes?.length) renderCategories(container, legend);
    return;
  }
  const { title, unit, min, max, stops } = legend;
  // Years read as years: no thousands separator, no unit after each tick.
  const isYear = unit === 'year';
  if (isYear) formatNumber = (value) => String(Math.round(value));
  const span = max - min || 1;
  const fraction = (value) => Math.min(1, Math.max(0, (value - min) / span));

  const heading = document.createElement('p');
  heading.className = 'legend-title';
  heading.textContent = isYear ? title : `${title} (${unit})`;

  // The gradient runs from top (max) to bottom (min), with each stop at its own value.
  const gradientStops = [...stops]
    .sort((a, b) => b.value - a.value)
    .map((stop) => `${rgbCss(stop.rgb)} ${((1 - fraction(stop.value)) * 100).toFixed(2)}%`);
  const ramp = document.createElement('div');
  ramp.className = 'legend-ramp';
  ramp.style.background = `linear-gradient(to bottom, ${gradientStops.join(', ')})`;

  const ticks = document.createElement('div');
  ticks.className = 'legend-ticks';
  const label = (value) => (isYear ? formatNumber(value) : `${formatNumber(value)} ${unit}`);
  // Always label both ends; skip round ticks that would crowd them.
  const values = [max, ...niceTicks(min, max).filter((v) => fraction(v) > 0.1 && fraction(v) < 0.9), min];
  for (const value of values) {
    const tick = document.createElement('span');
    tick.style.top = `${(1 - fraction(value)) * 100}%`;
    tick.textContent = label(value);
    ticks.append(tick);
  }

  const body = document.createElement('div');
  body.className = 'legend-body';
  body.setAttribute('role', 'img');
  body.setAttribute(
    'aria-label',
    `${title} colour ramp from ${label(min)} to ${label(max)}`,
  );
  body.append(ramp, ticks);

  const note = document.createElement('p');
  note.className = 'legend-note';
  note.textContent = legend.note ?? 'Over shaded relief lit from the north-west.';

  container.append(heading, body, classList(legend.classes ?? []), note);
}

/** Swatches with their names, one a line. */
function classList(classes) {
  const list = document.createElement('ul');
  list.className = 'legend-classes';
  for (const { label: name, rgb } of classes) {
    const item = document.createElement('li');
    const swatch = document.createElement('span');
    swatch.className = 'legend-swatch';
    swatch.style.background = rgbCss(rgb);
    item.append(swatch, name);
    list.append(item);
  }
  return list;
}

/** A legend of named categories only (such as succession stages). */
function renderCategories(container, legend) {
  const heading = document.createElement('p');
  heading.className = 'legend-title';
  heading.textContent = legend.unit ? `${legend.title} (${legend.unit})` : legend.title;
  const list = classList(legend.classes);
  list.setAttribute('aria-label', `${legend.title}: ${legend.classes.map((c) => c.label).join(', ')}`);
  const note = document.createElement('p');
  note.className = 'legend-note';
  note.textContent = legend.note ?? '';
  container.append(heading, list, note);
}
