// The scenario form: built from the engine's schema (labels, defaults, ranges, units), so no
// number is repeated here. Each field is checked as it is typed; the whole scenario is then
// checked by the engine itself before any run. The scenario is kept in localStorage and can
// be saved to and loaded from a JSON file. Plant-type traits (schema paths
// `vegetation.types[].trait`) are edited in a table: one row per type, one column per trait.

const STORAGE_KEY = 'forefield.scenario.v1';
const PER_TYPE = 'vegetation.types[].';

/** `vegetation.types[2].max_cover` as keys: vegetation, types, 2, max_cover. */
const pathKeys = (path) => path.split(/[.[\]]+/).filter(Boolean);
const getPath = (object, path) => pathKeys(path).reduce((v, key) => v?.[key], object);
function setPath(object, path, value) {
  const keys = pathKeys(path);
  let target = object;
  for (const key of keys.slice(0, -1)) {
    if (typeof target[key] !== 'object' || target[key] === null) target[key] = {};
    target = target[key];
  }
  target[keys[keys.length - 1]] = value;
}

/** `loaded` with every key it lacks taken from `defaults`, as the engine fills them in; lists
 *  are taken whole. */
function withDefaults(defaults, loaded) {
  if (typeof defaults !== 'object' || defaults === null || Array.isArray(defaults)) return loaded;
  if (typeof loaded !== 'object' || loaded === null || Array.isArray(loaded)) return loaded;
  const merged = { ...structuredClone(defaults), ...loaded };
  for (const key of Object.keys(defaults)) {
    if (key in loaded) merged[key] = withDefaults(defaults[key], loaded[key]);
  }
  return merged;
}

/** Shows a number as typed by a person: plain for ordinary sizes, exponent for tiny ones. */
function showNumber(value) {
  if (value == null) return '';
  if (Number.isInteger(value) && Math.abs(value) < 1e16) return String(value);
  if (value !== 0 && (Math.abs(value) < 1e-3 || Math.abs(value) >= 1e7)) return value.toExponential();
  return String(value);
}

const withUnit = (text, unit) => (unit ? `${text} ${unit}` : text);
/** A label with its unit, unless the label already says it ("Start year", not "Start year (year)"). */
const labelWithUnit = (field) => {
  const said = /^years?$/.test(field.unit) && /\byears?\b/i.test(field.label);
  return field.unit && !said ? `${field.label} (${field.unit})` : field.label;
};
const rangeText = (field) => `${showNumber(field.min)} to ${withUnit(showNumber(field.max), field.unit)}`;
const shortRange = (field) => (field.min == null ? '' : `${showNumber(field.min)}–${showNumber(field.max)}`);

/** A default as the form shows it. */
function showDefault(field, value, unit = true) {
  if (value == null) return 'empty';
  if (field.kind === 'text') return `“${value}”`;
  if (field.kind === 'boolean') return value ? 'yes' : 'no';
  if (field.kind === 'choice') {
    return field.options.find((o) => o.value === value)?.label ?? String(value);
  }
  return unit ? withUnit(showNumber(value), field.unit) : showNumber(value);
}

function element(tag, className, text) {
  const node = document.createElement(tag);
  if (className) node.className = className;
  if (text != null) node.textContent = text;
  return node;
}

/** The input for one field or table cell; choices are a select, yes/no a checkbox. */
function makeInput(field, id) {
  let input;
  if (field.kind === 'choice') {
    input = element('select');
    for (const option of field.options) {
      const node = element('option', null, option.label);
      node.value = JSON.stringify(option.value);
      input.append(node);
    }
  } else {
    input = element('input');
    input.type = field.kind === 'boolean' ? 'checkbox' : 'text';
    if (field.kind !== 'boolean') {
      input.autocomplete = 'off';
      input.spellcheck = false;
    }
    if (field.kind === 'number') input.inputMode = 'decimal';
    if (field.kind === 'integer') input.inputMode = 'numeric';
  }
  input.id = id;
  return input;
}

/** A type name: two wrapping lines so long names show whole; it stays one line of text. */
function nameBox(id) {
  const box = element('textarea');
  box.id = id;
  box.rows = 2;
  box.spellcheck = false;
  box.addEventListener('keydown', (event) => {
    if (event.key === 'Enter') event.preventDefault();
  });
  box.addEventListener('input', () => {
    if (/[\r\n]/.test(box.value)) box.value = box.value.replace(/[\r\n]+/g, ' ');
  });
  return box;
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
    this.fields = schema.fields.filter((f) => !f.path.startsWith(PER_TYPE));
    this.traits = schema.fields.filter((f) => f.path.startsWith(PER_TYPE))
      .map((f) => ({ ...f, trait: f.path.slice(PER_TYPE.length) }));
    this.groupTitles = schema.groups;
    this.defaults = JSON.parse(defaultsJson);
    this.check = check;
    this.onChange = onChange;
    /** Every field and table cell by its concrete path: { field, path, input, error }. */
    this.inputs = new Map();
    this.formMessage = element('p', 'form-message');
    this.formMessage.setAttribute('role', 'alert');
    this.formMessage.hidden = true;
    messageHost.append(this.formMessage);
    this.build();
    this.scenario = this.restore();
    this.fill();
  }

  build() {
    const groups = new Map(this.groupTitles.map(([id, title]) => {
      const details = element('details', 'form-group');
      details.dataset.group = id;
      details.open = id === 'run' || id === 'climate';
      details.append(element('summary', null, title));
      return [id, details];
    }));
    if (this.traits.length) groups.get('plants').append(this.buildTable());
    for (const field of this.fields) {
      const id = `field-${field.path.replace(/\./g, '-')}`;
      const wrapper = element('div', 'field');
      const label = element('label', null, labelWithUnit(field));
      label.htmlFor = id;
      const input = makeInput(field, id);
      input.name = field.path;
      const hint = element('p', 'field-hint');
      hint.id = `${id}-hint`;
      // The seed's range reads as words within its help.
      const range = field.min == null || field.range_words ? '' : ` Range ${showNumber(field.min)} to ${showNumber(field.max)}.`;
      hint.textContent = `${field.help}${range} Default ${showDefault(field, field.default, false)}.`;
      const error = element('p', 'field-error');
      error.id = `${id}-error`;
      error.hidden = true;
      const note = element('p', 'field-note');
      note.id = `${id}-note`;
      note.hidden = true;
      input.setAttribute('aria-describedby', `${hint.id} ${error.id} ${note.id}`);
      const entry = { field, path: field.path, input, error, note };
      input.addEventListener('input', () => this.readField(entry));
      wrapper.append(label, input, error, note, hint);
      groups.get(field.group).append(wrapper);
      this.inputs.set(field.path, entry);
    }
    this.container.append(...groups.values());
  }

  /** The plant-type table's frame: headings with units, the range row and the column guide.
   *  Rows are made by fillTable from the scenario's types. */
  buildTable() {
    const block = element('div', 'plant-types');
    const head = element('div', 'plant-types-head');
    const title = element('h3', null, 'Plant types');
    title.id = 'plant-types-title';
    const reset = element('button', 'button small', 'Reset plant types');
    reset.type = 'button';
    reset.id = 'plant-types-reset';
    reset.addEventListener('click', () => this.resetTypes());
    const add = element('button', 'button small', 'Add a type');
    add.type = 'button';
    add.id = 'plant-types-add';
    add.addEventListener('click', () => this.addType());
    const tools = element('div', 'plant-types-tools');
    tools.append(add, reset);
    head.append(title, tools);
    // Says why a row could not be added or removed (the engine sets how many types a
    // scenario may have).
    this.tableMessage = element('p', 'cell-error table-message');
    this.tableMessage.id = 'plant-types-message';
    this.tableMessage.setAttribute('role', 'status');
    this.tableMessage.hidden = true;
    const intro = element('p', 'field-hint',
      'One row per plant functional type. Scroll sideways for every trait; a heading’s meaning shows on hover and in the guide below. Changed values are marked.');
    intro.id = 'plant-types-intro';

    const scroller = element('div', 'table-scroll');
    // Focusable so keyboard users can scroll it; named so screen readers announce it.
    scroller.tabIndex = 0;
    scroller.setAttribute('role', 'region');
    scroller.setAttribute('aria-labelledby', 'plant-types-title');
    const table = element('table', 'plant-table');
    table.id = 'plant-table';
    table.setAttribute('aria-describedby', intro.id);
    const caption = element('caption', 'visually-hidden',
      'Plant types: one row per type, one column per trait, with each trait’s unit and valid range in its heading.');
    const thead = element('thead');
    const headRow = element('tr');
    const rangeRow = element('tr', 'range-row');
    const guide = element('dl', 'trait-guide');
    // Each column's explanation and range, read out with every cell of it (the guide's copy
    // may sit in a closed disclosure, which screen readers skip).
    const descriptions = element('div');
    descriptions.hidden = true;
    for (const field of this.traits) {
      const th = element('th');
      th.scope = 'col';
      th.id = `pt-col-${field.trait}`;
      th.dataset.trait = field.trait;
      th.title = field.help;
      th.append(element('span', 'col-label', field.label));
      if (field.unit) th.append(element('span', 'col-unit', field.unit));
      headRow.append(th);
      const range = element(field.trait === 'name' ? 'th' : 'td', 'col-range',
        field.trait === 'name' ? 'Valid range' : shortRange(field));
      if (field.trait === 'name') range.scope = 'row';
      rangeRow.append(range);
      const meaning = field.min == null ? field.help : `${field.help} Range ${rangeText(field)}.`;
      guide.append(element('dt', null, labelWithUnit(field)),
        element('dd', null, meaning));
      const description = element('span', null, meaning);
      description.id = `pt-help-${field.trait}`;
      descriptions.append(description);
    }
    const removeHead = element('th', 'col-remove', 'Remove');
    removeHead.scope = 'col';
    headRow.append(removeHead);
    rangeRow.append(element('td'));
    thead.append(headRow, rangeRow);
    this.tableBody = element('tbody');
    table.append(caption, thead, this.tableBody);
    scroller.append(table);

    const guideBox = element('details', 'trait-guide-box');
    guideBox.append(element('summary', null, 'What the columns mean'), guide);
    block.append(head, this.tableMessage, intro, scroller, guideBox, descriptions);
    return block;
  }

  /** One row per plant type of the current scenario; a cell's tooltip gives its type's
   *  default, and a value that differs from it is marked. */
  fillTable() {
    if (!this.tableBody) return;
    for (const path of [...this.inputs.keys()]) {
      if (path.startsWith('vegetation.types[')) this.inputs.delete(path);
    }
    const types = this.scenario.vegetation?.types ?? [];
    const defaultTypes = this.defaultTypesFor(types);
    this.tableBody.replaceChildren(...types.map((type, row) => {
      const tr = element('tr');
      tr.dataset.type = String(row);
      for (const field of this.traits) {
        const path = `vegetation.types[${row}].${field.trait}`;
        const cell = element(field.trait === 'name' ? 'th' : 'td');
        if (field.trait === 'name') cell.scope = 'row';
        cell.dataset.trait = field.trait;
        const id = `pt-${row}-${field.trait}`;
        const input = field.trait === 'name' ? nameBox(id) : makeInput(field, id);
        input.name = path;
        input.dataset.trait = field.trait;
        const error = element('p', 'cell-error');
        error.id = `${id}-error`;
        error.hidden = true;
        const defaultValue = defaultTypes[row]?.[field.trait];
        const defaultNote = element('span', null,
          defaultValue === undefined ? 'No default for this row.' : `Default ${showDefault(field, defaultValue)}.`);
        defaultNote.id = `${id}-default`;
        defaultNote.hidden = true;
        input.title = `${field.label}: ${defaultNote.textContent}${field.min == null ? '' : ` Range ${rangeText(field)}.`}`;
        input.setAttribute('aria-describedby', `pt-help-${field.trait} ${defaultNote.id} ${error.id}`);
        const entry = { field, path, input, error, row, defaultValue };
        this.setInput(entry, type[field.trait]);
        input.addEventListener(field.kind === 'choice' || field.kind === 'boolean' ? 'change' : 'input', () => {
          this.readField(entry);
          if (field.trait === 'name') this.labelRow(row);
        });
        cell.append(input, error, defaultNote);
        this.markChanged(entry, type[field.trait]);
        tr.append(cell);
        this.inputs.set(path, entry);
      }
      const removeCell = element('td', 'col-remove');
      const remove = element('button', 'button small', 'Remove');
      remove.type = 'button';
      remove.id = `pt-${row}-remove`;
      remove.addEventListener('click', () => this.removeType(row));
      removeCell.append(remove);
      tr.append(removeCell);
      return tr;
    }));
    types.forEach((_, row) => this.labelRow(row));
  }

  /** The default type each row is compared with: the one of the same name, else the one in
   *  the same place unless another row carries its name; none for a row with neither. */
  defaultTypesFor(types) {
    const defaultTypes = this.defaults.vegetation?.types ?? [];
    const names = new Set(types.map((t) => t.name));
    return types.map((type, row) => defaultTypes.find((d) => d.name === type.name)
      ?? (defaultTypes[row] && !names.has(defaultTypes[row].name) ? defaultTypes[row] : undefined));
  }

  /** Puts a changed list of types in the scenario if the engine accepts that many; else
   *  says why and changes nothing. */
  replaceTypes(types, focusRow) {
    const candidate = structuredClone(this.scenario);
    setPath(candidate, 'vegetation.types', types);
    const problem = this.check(JSON.stringify(candidate));
    if (problem?.field === 'vegetation.types') {
      this.tableMessage.textContent = problem.message;
      this.tableMessage.hidden = false;
      return;
    }
    this.tableMessage.hidden = true;
    setPath(this.scenario, 'vegetation.types', types);
    this.save();
    this.fillTable();
    this.onChange();
    this.inputs.get(`vegetation.types[${Math.min(focusRow, types.length - 1)}].name`)?.input.focus();
  }

  /** A new row, a copy of the last type under a new name, to edit from there. */
  addType() {
    const types = structuredClone(this.scenario.vegetation.types);
    const copy = structuredClone(types[types.length - 1]);
    copy.name = `new type ${types.length + 1}`;
    this.replaceTypes([...types, copy], types.length);
  }

  removeType(row) {
    const types = structuredClone(this.scenario.vegetation.types);
    types.splice(row, 1);
    this.replaceTypes(types, row);
  }

  /** Names each cell of a row after its type and column, for screen readers. */
  labelRow(row) {
    const name = this.inputs.get(`vegetation.types[${row}].name`)?.input.value.trim() || `type ${row + 1}`;
    document.getElementById(`pt-${row}-remove`)?.setAttribute('aria-label', `Remove ${name}`);
    for (const field of this.traits) {
      const { input } = this.inputs.get(`vegetation.types[${row}].${field.trait}`);
      const column = field.unit ? `${field.label} (${field.unit})` : field.label;
      input.setAttribute('aria-label', field.trait === 'name' ? `Name of plant type ${row + 1}` : `${name}: ${column}`);
    }
  }

  /** The stored scenario if the engine still accepts it, else the defaults. */
  /** Shows (or with null hides) a note under a field, e.g. what the last run used. */
  setNote(path, text) {
    const entry = this.inputs.get(path);
    if (!entry) return;
    entry.note.hidden = !text;
    entry.note.textContent = text ?? '';
  }

  restore() {
    try {
      const text = localStorage.getItem(STORAGE_KEY);
      if (text && this.check(text) === null) return withDefaults(this.defaults, JSON.parse(text));
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

  setInput({ field, input }, value) {
    if (field.kind === 'boolean') input.checked = Boolean(value);
    else if (field.kind === 'choice') input.value = JSON.stringify(value);
    else input.value = field.kind === 'text' ? (value ?? '') : showNumber(value);
  }

  fill() {
    for (const entry of this.inputs.values()) {
      if (entry.row !== undefined) continue;
      this.setInput(entry, getPath(this.scenario, entry.path));
      this.flag(entry, null);
    }
    this.fillTable();
    this.showFormMessage(null);
  }

  flag({ input, error }, message) {
    error.hidden = !message;
    error.textContent = message ?? '';
    input.setAttribute('aria-invalid', message ? 'true' : 'false');
  }

  showFormMessage(message) {
    this.formMessage.hidden = !message;
    this.formMessage.textContent = message ?? '';
  }

  /** Parses one field or cell; a valid value goes into the scenario and is saved at once. */
  readField(entry) {
    const { field, input } = entry;
    const text = input.value.trim();
    let value;
    let problem = null;
    if (field.kind === 'boolean') {
      value = input.checked;
    } else if (field.kind === 'choice') {
      value = JSON.parse(input.value);
    } else if (field.kind === 'text') {
      value = input.value;
      if (entry.row !== undefined && text === '') problem = 'Enter a name.';
    } else if (text === '') {
      if (field.optional) value = null;
      else problem = 'Enter a value.';
    } else {
      value = Number(text);
      if (!Number.isFinite(value)) problem = `“${text}” is not a number.`;
      else if (field.kind === 'integer' && !Number.isInteger(value)) problem = 'Enter a whole number.';
      else if (field.min != null && (value < field.min || value > field.max)) {
        problem = field.range_words ? `Must be ${field.range_words}.`
          : `Must be between ${showNumber(field.min)} and ${withUnit(showNumber(field.max), field.unit)}.`;
      }
    }
    this.flag(entry, problem);
    if (problem) {
      input.dataset.invalid = 'true';
    } else {
      delete input.dataset.invalid;
      setPath(this.scenario, entry.path, value);
      this.save();
    }
    if (entry.row !== undefined) this.markChanged(entry, problem ? undefined : value);
    this.onChange();
    return !problem;
  }

  /** Marks a table cell whose value differs from its type's default (or has none). */
  markChanged(entry, value) {
    const changed = value !== undefined && value !== entry.defaultValue;
    entry.input.parentElement.classList.toggle('changed', changed);
  }

  /** Makes a field visible (its group open, the table scrolled to it) and focuses it. */
  reveal(input) {
    input.closest('details').open = true;
    input.focus();
    input.scrollIntoView({ block: 'nearest', inline: 'nearest' });
  }

  /**
   * The scenario JSON if every field is valid and the engine accepts the whole, else null
   * with the problems flagged at their fields (focus moves to the first).
   */
  validJson() {
    let firstBad = null;
    for (const entry of this.inputs.values()) {
      if (!this.readField(entry) && !firstBad) firstBad = entry.input;
    }
    if (firstBad) {
      this.showFormMessage('Some values need attention; nothing was sent to the engine.');
      this.reveal(firstBad);
      return null;
    }
    const json = JSON.stringify(this.scenario);
    const problem = this.check(json);
    if (problem) {
      // A rule across two traits names both ("growth_rate_per_a minus mortality_per_a"):
      // the first is flagged.
      const entry = problem.field
        && (this.inputs.get(problem.field) ?? this.inputs.get(problem.field.split(' ')[0]));
      if (entry) {
        this.flag(entry, problem.message);
        this.reveal(entry.input);
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

  /** The default plant types back; every other field stays as it is. */
  resetTypes() {
    this.tableMessage.hidden = true;
    setPath(this.scenario, 'vegetation.types', structuredClone(this.defaults.vegetation.types));
    this.save();
    this.fillTable();
    this.showFormMessage(null);
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
    this.scenario = withDefaults(this.defaults, JSON.parse(text));
    this.save();
    this.fill();
    this.onChange();
    return null;
  }
}
