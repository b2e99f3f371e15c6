// Where the page's own files are. Served, they sit beside this module. In the one-file page
// (dist/forefield.html) they travel inside the page, and its start-up hands each over as a
// blob: URL in `globalThis.forefieldFiles` before any other module runs.

/** The URL to fetch one of the page's files from, given its path relative to the page. */
export function fileUrl(path) {
  const bundled = globalThis.forefieldFiles?.[path.replace(/^\.\//, '')];
  return bundled ?? new URL(path, import.meta.url).href;
}

export const ENGINE_WASM = './pkg/forefield_wasm_bg.wasm';

let wasmBytes = null;
/** What the run worker initialises its engine from: the wasm's URL when served, its bytes
 *  when the page carries it (a worker on file:// cannot read the page's blob: URLs). */
export async function workerWasm() {
  if (!globalThis.forefieldFiles) return fileUrl(ENGINE_WASM);
  wasmBytes ??= await fetchBytes(ENGINE_WASM);
  return wasmBytes;
}

/** A published copy (dist/, served) keeps itself for offline use after the first visit; the
 *  build marks it with its version, and the page folder used while developing is not marked. */
export function keepForOffline() {
  const version = document.querySelector('meta[name="forefield-offline"]')?.content;
  if (!version || !('serviceWorker' in navigator) || !location.protocol.startsWith('http')) return;
  navigator.serviceWorker.register(`./sw.js?v=${encodeURIComponent(version)}`).catch((error) => {
    console.warn(`This page will not be kept for offline use: ${error.message ?? error}`);
  });
}

/** The bytes of one of the page's files; a refusal from the server is an error. */
export async function fetchBytes(path) {
  const response = await fetch(fileUrl(path));
  if (!response.ok) throw new Error(`the server answered ${response.status}`);
  return new Uint8Array(await response.arrayBuffer());
}
