// The run: the scenario and the run inputs handed to a worker (worker.js) that runs them year
// by year, its progress and cancelling, the start-up notes, and what a failed run leaves. The
// finished timeline is held here and handed to the page through `onResult`.

import { fileUrl, workerWasm } from './files.js';
import { clearError, element, formatNumber, showError, showList } from './page_text.js';

export class RunController {
  /**
   * @param {{workspace: object, form: object, inputs: object, onResult: () => void}} options
   */
  constructor({ workspace, form, inputs, onResult }) {
    Object.assign(this, { workspace, form, inputs, onResult });
    this.status = element('run-status');
    this.progress = element('run-progress');
    this.worker = null;
    this.running = false;
    // What the last run started from, and what the last finished run recorded.
    this.lastRun = null;
    this.timeline = null;
    this.summary = null;
    this.summaryCsv = null;
    element('run').addEventListener('click', () => this.start());
    element('cancel').addEventListener('click', () => this.cancel());
  }

  setRunning(value) {
    this.running = value;
    element('run').disabled = value;
    element('cancel').disabled = !value;
  }

  setState(state, text) {
    document.body.dataset.run = state;
    this.status.textContent = text;
  }

  /** Between runs, the status says what the next run starts from. */
  showInputs() {
    if (!this.running) this.status.textContent = this.inputs.text();
  }

  /** The run's start-up (ELA and how it was set, relaxation, glacier domain), under the run
   *  status and, for the ELA, under its field in the form. */
  showNotes(notes) {
    const list = element('run-notes');
    showList(list, notes ?? []);
    list.hidden = !notes?.length;
    const ela = notes?.find((note) => note.startsWith('ELA '));
    this.form.setNote('mass_balance.ela_m', ela ? `Last run: ${ela}.` : null);
  }

  /** Forgets the finished run: another terrain makes its years, notes and exports stale. */
  forget() {
    this.timeline = null;
    this.showNotes(null);
    this.summary = null;
    this.summaryCsv = null;
  }

  resultStays() {
    return this.timeline ? 'The previous result stays.' : '';
  }

  makeWorker() {
    const created = new Worker(fileUrl('./worker.js'));
    created.onmessage = (event) => this.onMessage(event.data);
    created.onerror = (event) => {
      this.retireWorker();
      this.setRunning(false);
      this.setState('failed', `The run stopped. ${this.resultStays()}`);
      showError(`The simulation worker failed: ${event.message ?? 'unknown error'}.`, 'Run failed');
    };
    return created;
  }

  /** After a failure the worker's engine may be out of memory or stopped mid-step: the next
   *  run gets a fresh one, and the page's own terrain, scenario and last run are untouched. */
  retireWorker() {
    this.worker?.terminate();
    this.worker = null;
  }

  onMessage(message) {
    const { progress } = this;
    if (message.type === 'started') {
      progress.max = message.endYear - message.startYear;
      progress.value = 0;
    } else if (message.type === 'progress') {
      const done = message.year - message.startYear;
      progress.value = done;
      this.setState('running', `Year ${message.year} of ${message.endYear} (${done} of ${message.endYear - message.startYear} done)`);
    } else if (message.type === 'done') {
      this.finish(message);
    } else if (message.type === 'cancelled') {
      this.setRunning(false);
      this.setState('cancelled', `Cancelled at ${message.year}. ${this.resultStays()}`);
    } else if (message.type === 'failed') {
      this.retireWorker();
      this.setRunning(false);
      this.setState('failed', `The run failed; see the message. ${this.resultStays()}`);
      const { lastRun } = this;
      const names = lastRun ? ` (${lastRun.surface.name}, ${lastRun.ice.name})` : '';
      showError(`${message.message}${names}`, 'Run failed');
    }
  }

  /** Holds the worker's timeline in the engine workspace; a result it refuses is a failed run. */
  finish(message) {
    this.setRunning(false);
    try {
      this.timeline = this.workspace.loadTimeline(new Uint8Array(message.timeline), this.lastRun.scenarioJson);
    } catch (error) {
      this.setState('failed', 'The run result could not be shown.');
      showError(error.message ?? String(error), 'Run failed');
      return;
    }
    const { timeline } = this;
    this.summary = message.summary;
    this.summaryCsv = message.summaryCsv;
    this.progress.value = this.progress.max;
    const mib = timeline.memory_bytes / 2 ** 20;
    this.setState('done', `Done: ${timeline.start_year} to ${timeline.last_year}. Every year is kept in memory (${formatNumber(mib, 1)} MiB), so any year shows at once.`);
    this.showNotes(timeline.run_notes);
    this.onResult();
  }

  async start() {
    if (this.running) return;
    const { inputs } = this;
    const scenarioJson = this.form.validJson();
    if (!scenarioJson) {
      this.setState('invalid', 'Not run: fix the flagged values first.');
      return;
    }
    if (!inputs.surface) {
      this.setState('invalid', 'Not run: runs need the terrain as a GeoTIFF.');
      return;
    }
    clearError();
    this.setRunning(true);
    this.setState('running', 'Starting…');
    try {
      await inputs.addSampleGrids();
      inputs.show();
    } catch (error) {
      this.setRunning(false);
      this.setState('failed', 'The sample ice grid could not be fetched.');
      showError(`The sample ice or vegetation grid could not be fetched: ${error.message}.`, 'Run failed');
      return;
    }
    if (!inputs.ice) {
      this.setRunning(false);
      this.setState('invalid', 'Not run: open an ice-thickness grid that matches the terrain.');
      return;
    }
    this.lastRun = { scenarioJson, surface: inputs.surface, ice: inputs.ice, vegetation: inputs.vegetation };
    this.worker ??= this.makeWorker();
    this.worker.postMessage({
      type: 'run', wasm: await workerWasm(), scenarioJson, surfaceBytes: inputs.surface.bytes, surfaceName: inputs.surface.name,
      iceBytes: inputs.ice.bytes, iceName: inputs.ice.name,
      vegetationBytes: inputs.vegetation?.bytes ?? null, vegetationName: inputs.vegetation?.name ?? null,
      domainBytes: inputs.domain?.bytes ?? null, domainName: inputs.domain?.name ?? null,
    });
  }

  cancel() {
    if (!this.running) return;
    this.setState('running', 'Cancelling…');
    this.worker.postMessage({ type: 'cancel' });
  }
}
