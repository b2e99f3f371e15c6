// The simulation worker: runs a scenario (ice and plants) year by year in its own copy of
// the engine, so the page's thread only renders. Messages in: {type: 'run', ...} and {type: 'cancel'}.
// Messages out: 'started', 'progress' (one per year), 'done' (the timeline as a transferred
// ArrayBuffer, the yearly summary rows and the same summary as CSV), 'cancelled' and 'failed' (with the engine's message).

import init, { RunRecorder } from './pkg/forefield_wasm.js';

const ready = init();
let cancelRequested = false;

// A zero-delay yield through a MessageChannel, so a 'cancel' message can arrive between years
// (setTimeout would be clamped to 4 ms per year after a few nested calls).
function yieldToMessages() {
  return new Promise((resolve) => {
    const channel = new MessageChannel();
    channel.port1.onmessage = () => resolve();
    channel.port2.postMessage(null);
  });
}

async function run({
  scenarioJson, surfaceBytes, surfaceName, iceBytes, iceName, vegetationBytes, vegetationName,
  domainBytes, domainName,
}) {
  cancelRequested = false;
  let recorder = null;
  try {
    await ready;
    // Without a vegetation grid the engine starts each ice-free cell at its potential
    // vegetation.
    recorder = RunRecorder.withPlants(scenarioJson, surfaceBytes, surfaceName, iceBytes, iceName,
      vegetationBytes ?? undefined, vegetationName ?? undefined,
      domainBytes ?? undefined, domainName ?? undefined);
    const startYear = recorder.startYear();
    const endYear = recorder.endYear();
    postMessage({ type: 'started', startYear, endYear });
    for (;;) {
      await yieldToMessages();
      if (cancelRequested) {
        postMessage({ type: 'cancelled', year: recorder.year() });
        return;
      }
      const row = recorder.stepYear();
      if (row === null) break;
      postMessage({ type: 'progress', year: row.year, startYear, endYear, row });
    }
    const summary = recorder.summary();
    // finish() copies the timeline out of wasm memory once; the copy's buffer is then moved
    // to the page, not copied again.
    const bytes = recorder.finish();
    const summaryCsv = recorder.summaryCsv();
    postMessage({ type: 'done', timeline: bytes.buffer, summary, summaryCsv }, [bytes.buffer]);
  } catch (error) {
    postMessage({ type: 'failed', message: error?.message ?? String(error) });
  } finally {
    recorder?.free();
  }
}

self.onmessage = (event) => {
  const message = event.data;
  if (message.type === 'cancel') cancelRequested = true;
  else if (message.type === 'run') run(message);
};
