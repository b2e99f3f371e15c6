// The one-file page's start-up. Every module and data file travels in the JSON block above,
// modules and workers as text and data as base64. Each becomes a blob: URL, a module's relative imports
// pointed at the blobs of the modules it imports, and the page then starts as when served;
// files.js finds the data files in globalThis.forefieldFiles.
const message = (text) => {
  document.body.dataset.state = 'failed';
  document.getElementById('map-message').textContent = text;
};
try {
  const bundle = JSON.parse(document.getElementById('forefield-files').textContent);
  const urls = {};
  for (const [path, [type, base64]] of Object.entries(bundle.files)) {
    const text = atob(base64);
    const bytes = new Uint8Array(text.length);
    for (let i = 0; i < text.length; i += 1) bytes[i] = text.charCodeAt(i);
    urls[path] = URL.createObjectURL(new Blob([bytes], { type }));
  }
  const resolve = (from, specifier) => {
    const parts = from.split('/').slice(0, -1);
    for (const part of specifier.split('/')) {
      if (part === '..') parts.pop();
      else if (part !== '.') parts.push(part);
    }
    return parts.join('/');
  };
  const IMPORT = /(\bfrom\s*|\bimport\s*\(\s*|\bimport\s+)(['"])(\.{1,2}\/[^'"]+)\2/g;
  const moduleUrl = (path, chain) => {
    if (urls[path]) return urls[path];
    if (chain.includes(path)) throw new Error(`the modules import each other through ${path}`);
    const source = bundle.modules[path];
    if (source === undefined) throw new Error(`${chain.at(-1)} imports ${path}, which this file lacks`);
    const linked = source.replace(IMPORT, (match, lead, quote, specifier) =>
      `${lead}${quote}${moduleUrl(resolve(path, specifier), [...chain, path])}${quote}`);
    urls[path] = URL.createObjectURL(new Blob([linked], { type: 'text/javascript' }));
    return urls[path];
  };
  for (const path of Object.keys(bundle.modules)) moduleUrl(path, []);
  // Classic scripts: Chromium starts no module worker from a file:// page.
  for (const [path, source] of Object.entries(bundle.workers)) {
    urls[path] = URL.createObjectURL(new Blob([source], { type: 'text/javascript' }));
  }
  globalThis.forefieldFiles = urls;
  await import(urls['main.js']);
} catch (error) {
  message(`This page could not start: ${error.message ?? error}`);
}
