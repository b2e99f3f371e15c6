// Getting terrain files from the planner: the "Open terrain..." picker and drag-and-drop onto
// the map. Both end in the same place: the bytes of one terrain file (plus the text of its
// JSON sidecar for a PNG height map), handed to the engine's parser.

const GEOTIFF = /\.tiff?$/i;
const PNG = /\.png$/i;
const JSON_FILE = /\.json$/i;

/** An error about what the planner chose, worded to be shown as is. */
export class SelectionError extends Error {}

function stem(name) {
  return name.replace(/\.[^.]*$/, '');
}

/**
 * Picks the terrain file (and sidecar) out of the files chosen together and reads them.
 * @param {File[]} files
 * @returns {Promise<{bytes: Uint8Array, fileName: string, sidecarText: string | undefined}>}
 */
export async function readTerrainSelection(files) {
  if (files.length === 0) throw new SelectionError('No file was chosen.');
  const sidecars = files.filter((file) => JSON_FILE.test(file.name));
  const terrain = files.filter((file) => !JSON_FILE.test(file.name));
  if (terrain.length === 0) {
    const names = sidecars.map((file) => file.name).join(', ');
    throw new SelectionError(
      `${names}: a JSON sidecar describes a PNG height map; choose the PNG and its sidecar together.`,
    );
  }
  if (terrain.length > 1) {
    const names = terrain.map((file) => file.name).join(', ');
    throw new SelectionError(`${names}: choose one terrain file at a time.`);
  }
  const [file] = terrain;
  let sidecarText;
  if (PNG.test(file.name)) {
    // Prefer the sidecar named like the PNG; a single sidecar chosen with it also counts.
    const sidecar = sidecars.find((candidate) => stem(candidate.name) === stem(file.name))
      ?? (sidecars.length === 1 ? sidecars[0] : undefined);
    if (!sidecar) {
      throw new SelectionError(
        `${file.name}: a PNG height map needs its JSON sidecar (for example ${stem(file.name)}.json) `
        + 'giving origin, cell size and CRS; choose both files together.',
      );
    }
    sidecarText = await sidecar.text();
  } else if (!GEOTIFF.test(file.name) && sidecars.length > 0) {
    throw new SelectionError(`${file.name}: only a PNG height map takes a JSON sidecar.`);
  }
  // Other names go to the engine as they are: it recognises GeoTIFFs by their bytes and
  // names the file in its message when they are not one.
  const bytes = new Uint8Array(await file.arrayBuffer());
  return { bytes, fileName: file.name, sidecarText };
}

/**
 * Wires the picker button, the hidden file input and the drop target.
 * @param {{button: HTMLButtonElement, input: HTMLInputElement, dropTarget: HTMLElement,
 *   onFiles: (files: File[]) => void}} parts
 */
export function attachLoaders({ button, input, dropTarget, onFiles }) {
  button.addEventListener('click', () => input.click());
  input.addEventListener('change', () => {
    const files = [...input.files];
    // Clearing lets the planner pick the same file again after fixing it.
    input.value = '';
    if (files.length > 0) onFiles(files);
  });

  // dragenter/dragleave fire for every child; count them so the highlight does not flicker.
  let depth = 0;
  const hasFiles = (event) => [...(event.dataTransfer?.types ?? [])].includes('Files');
  dropTarget.addEventListener('dragenter', (event) => {
    if (!hasFiles(event)) return;
    event.preventDefault();
    depth += 1;
    dropTarget.classList.add('drag-over');
  });
  dropTarget.addEventListener('dragover', (event) => {
    if (!hasFiles(event)) return;
    event.preventDefault();
    event.dataTransfer.dropEffect = 'copy';
  });
  dropTarget.addEventListener('dragleave', () => {
    depth = Math.max(0, depth - 1);
    if (depth === 0) dropTarget.classList.remove('drag-over');
  });
  dropTarget.addEventListener('drop', (event) => {
    event.preventDefault();
    depth = 0;
    dropTarget.classList.remove('drag-over');
    const files = [...(event.dataTransfer?.files ?? [])];
    if (files.length > 0) onFiles(files);
  });
  // A file dropped just beside the map would otherwise make the browser navigate to it
  // and lose the planner's work.
  window.addEventListener('dragover', (event) => event.preventDefault());
  window.addEventListener('drop', (event) => event.preventDefault());
}
