// The scenario form: built from the engine's schema (labels, defaults, ranges, units), so no
// number is repeated here. Each field is checked as it is typed; the whole scenario is then
// checked by the engine itself before any run. The scenario is kept in localStorage and can
// be saved to and loaded from a JSON file.

const STORAGE_KEY = 'forefield.scenario.v1';

const getPath = (object, path) => path.split('.').reduce((v, key) => v?.[key], object);
function setPath(object, path, value) {
  const keys = path.split('.');
  let target = object;
  for (const key of keys.slice(0, -1)) {
    if (typeof target[key] !== 'object' || target[key] === null) target[key] = {};
    target = target[key];
  }
  target[keys[keys.length - 1]] = value;
}

/** Shows a number as typed by a person: plain for ordinary sizes, exponent for tiny ones. */
function showNumber(value) {
  if (value == null) return '';
  if (Number.isInteger(value) && Math.abs(value) < 1e16) return String(value);
  if (value !== 0 && (Math.abs(value) < 1e-3 || Math.abs(value) >= 1e7)) return value.toExponential();
  return String(value);
}

export class ScenarioForm {
  /**
   * @param {HTMLElement} container where the fieldsets go
   * @param {{ schema: object, defaultsJson: string, check: (json: string) => object | null,
   *   onChange: () => void, messageHost?: HTMLElement }} engine messageHost holds the
   *   form-wide message (outside the scrolling fields, so it is always seen)
   */
  constructor(container, { schema, defaultsJson, check, onChange, messageHost = container }) {
    this.container = container;
    this.schema = schema;
    this.defaults = JSON.parse(defaultsJson);
    this.check = check;
    this.onChange = onChange;
    this.inputs = new Map();
    this.formMessage = document.createElement('p');
    this.formMessage.className = 'form-message';
    this.formMessage.setAttribute('role', 'alert');
    this.formMessage.hidden = true;
    messageHost.append(this.formMessage);
    this.build();
    this.scenario = this.restore();
    this.fill();
  }

  build() {
    const groups = new Map(this.schema.groups.map(([id, title]) => {
      const details = document.createElement('details');
      details.className = 'form-group';
      details.open = id === 'run' || id === 'climate';
      const summary = document.createElement('summary');
      summary.textContent = title;
      details.append(summary);
      return [id, details];
    }));
    for (const field of this.schema.fields) {
      const id = `field-${field.path.replace(/\./g, '-')}`;
      const wrapper = document.createElement('div');
      wrapper.className = 'field';
      const label = document.createElement('label');
      label.htmlFor = id;
      label.textContent = field.unit ? `${field.label} (${field.unit})` : field.label;
      const input = document.createElement('input');
      input.id = id;
      input.name = field.path;
      input.type = 'text';
      input.autocomplete = 'off';
      input.spellcheck = false;
      if (field.kind !== 'text') input.inputMode = field.kind === 'integer' ? 'numeric' : 'decimal';
      const hint = document.createElement('p');
      hint.className = 'field-hint';
      hint.id = `${id}-hint`;
      const range = field.min == null ? '' : ` Range ${showNumber(field.min)} to ${showNumber(field.max)}.`;
      const dflt = field.default == null ? 'empty' : showNumber(field.default);
      hint.textContent = `${field.help}${range} Default ${field.kind === 'text' ? `“${dflt}”` : dflt}.`;
      const error = document.createElement('p');
      error.className = 'field-error';
      error.id = `${id}-error`;
      error.hidden = true;
      input.setAttribute('aria-describedby', `${hint.id} ${error.id}`);
      input.addEventListener('input', () => this.readField(field));
      wrapper.append(label, input, error, hint);
      groups.get(field.group).append(wrapper);
      this.inputs.set(field.path, { field, input, error });
    }
    this.container.append(...groups.values());
  }

  /** The stored scenario if the engine still accepts it, else the defaults. */
  restore() {
    try {
      const text = localStorage.getItem(STORAGE_KEY);
      if (text && this.check(text) === null) return JSON.parse(text);
    } catch {
      // Storage may be off (private mode) or hold something unreadable: start afresh.
    }
    return structuredClone(this.defaults);
  }

  save() {
    try {
      localStorage.setItem(STORAGE_KEY, JSON.stringify(this.scenario));
    } catch {
      // Without storage the form still works; it just is not kept across reloads.
    }
  }

  fill() {
    for (const { field, input, error } of this.inputs.values()) {
      const value = getPath(this.scenario, field.path);
      input.value = field.kind === 'text' ? (value ?? '') : showNumber(value);
      this.flag(input, error, null);
    }
    this.showFormMessage(null);
  }

  flag(input, error, message) {
    error.hidden = !message;
    error.textContent = message ?? '';
    input.setAttribute('aria-invalid', message ? 'true' : 'false');
  }

  showFormMessage(message) {
    this.formMessage.hidden = !message;
    this.formMessage.textContent = message ?? '';
  }

  /** Parses one field; a valid value goes into the scenario and is saved at once. */
  readField(field) {
    const { input, error } = this.inputs.get(field.path);
    const text = input.value.trim();
    let value;
    let problem = null;
    if (field.kind === 'text') {
      value = input.value;
    } else if (text === '') {
      if (field.optional) value = null;
      else problem = 'Enter a value.';
    } else {
      value = Number(text);
      if (!Number.isFinite(value)) problem = `“${text}” is not a number.`;
      else if (field.kind === 'integer' && !Number.isInteger(value)) problem = 'Enter a whole number.';
      else if (field.min != null && (value < field.min || value > field.max)) {
        problem = `Must be between ${showNumber(field.min)} and ${showNumber(field.max)}${field.unit ? ` ${field.unit}` : ''}.`;
      }
    }
    this.flag(input, error, problem);
    if (problem) {
      input.dataset.invalid = 'true';
    } else {
      delete input.dataset.invalid;
      setPath(this.scenario, field.path, value);
      this.save();
    }
    this.onChange();
    return !problem;
  }

  /**
   * The scenario JSON if every field is valid and the engine accepts the whole, else null
   * with the problems flagged at their fields (focus moves to the first).
   */
  validJson() {
    let firstBad = null;
    for (const { field, input } of this.inputs.values()) {
      if (!this.readField(field) && !firstBad) firstBad = input;
    }
    if (firstBad) {
      // A folded group would hide the flagged field.
      firstBad.closest('details').open = true;
      this.showFormMessage('Some values need attention; nothing was sent to the engine.');
      firstBad.focus();
      return null;
    }
    const json = JSON.stringify(this.scenario);
    const problem = this.check(json);
    if (problem) {
      const entry = problem.field && this.inputs.get(problem.field);
      if (entry) {
        entry.input.closest('details').open = true;
        this.flag(entry.input, entry.error, problem.message);
        entry.input.focus();
      }
      this.showFormMessage(`The engine refused the scenario: ${problem.message}`);
      return null;
    }
    this.showFormMessage(null);
    return json;
  }

  nYears() {
    return this.scenario.n_years;
  }

  reset() {
    this.scenario = structuredClone(this.defaults);
    this.save();
    this.fill();
    this.onChange();
  }

  /** Offers the scenario as a JSON file download. */
  download() {
    const text = `${JSON.stringify(this.scenario, null, 2)}\n`;
    const url = URL.createObjectURL(new Blob([text], { type: 'application/json' }));
    const link = document.createElement('a');
    const base = String(this.scenario.name || 'scenario').replace(/[^\w-]+/g, '_').slice(0, 60);
    link.href = url;
    link.download = `${base || 'scenario'}.json`;
    document.body.append(link);
    link.click();
    link.remove();
    setTimeout(() => URL.revokeObjectURL(url), 0);
  }

  /** Loads a scenario file; on any problem the current scenario stays and the message says why. */
  async load(file) {
    let text;
    try {
      text = await file.text();
    } catch (error) {
      return `${file.name}: could not be read (${error.message}).`;
    }
    const problem = this.check(text);
    if (problem) return `${file.name}: ${problem.message}`;
    this.scenario = JSON.parse(text);
    this.save();
    this.fill();
    this.onChange();
    return null;
  }
}
