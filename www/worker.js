// The simulation worker: runs a scenario (ice and plants) year by year in its own copy of
// the engine, so the page's thread only renders. Messages in: {type: 'run', ...} and {type: 'cancel'}.
// Messages out: 'started', 'progress' (one per year), 'done' (the timeline as a transferred
// ArrayBuffer, the yearly summary rows and the same summary as CSV), 'cancelled' and 'failed' (with the engine's message).
//
// A classic script, not a module: Chromium starts no module worker from a file:// page, and
// the one-file page (dist/forefield.html) runs this worker from a blob: URL with the engine's
// classic glue placed before it, so the glue is loaded here only when it is not there yet.

/* global wasm_bindgen */
if (typeof wasm_bindgen === 'undefined') importScripts('./pkg/forefield_wasm_classic.js');
const { RunRecorder } = wasm_bindgen;

// The page says where the engine's wasm is: a URL beside the page, or its bytes when the page
// carries them inside (a blob: URL of the page is not readable from a worker on file://).
let ready = null;
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
  wasm, scenarioJson, surfaceBytes, surfaceName, iceBytes, iceName, vegetationBytes, vegetationName,
  domainBytes, domainName,
}) {
  cancelRequested = false;
  let recorder = null;
  try {
    // A failed start is not kept: the next run tries again.
    ready ??= wasm_bindgen({ module_or_path: wasm }).catch((error) => {
      ready = null;
      throw error;
    });
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
