// A small single-band GeoTIFF reader written from the TIFF 6.0 specification and the
// floating-point predictor note (Adobe Photoshop TIFF Technical Note 3), so the browser
// tests can check the engine's readout against values they decoded themselves.
// Covers what the fixtures use: stripped or tiled, uncompressed or Deflate, predictors 1-3.

import { inflateSync } from 'node:zlib';

const TYPE_SIZE = { 1: 1, 2: 1, 3: 2, 4: 4, 5: 8, 6: 1, 7: 1, 8: 2, 9: 4, 10: 8, 11: 4, 12: 8, 16: 8 };

function readTags(view, little) {
  const tags = new Map();
  const ifd = view.getUint32(4, little);
  const count = view.getUint16(ifd, little);
  for (let i = 0; i < count; i += 1) {
    const at = ifd + 2 + i * 12;
    const tag = view.getUint16(at, little);
    const type = view.getUint16(at + 2, little);
    const n = view.getUint32(at + 4, little);
    const size = TYPE_SIZE[type] * n;
    const start = size <= 4 ? at + 8 : view.getUint32(at + 8, little);
    const values = [];
    for (let k = 0; k < n; k += 1) {
      const p = start + k * TYPE_SIZE[type];
      if (type === 1 || type === 2 || type === 7) values.push(view.getUint8(p));
      else if (type === 3) values.push(view.getUint16(p, little));
      else if (type === 4) values.push(view.getUint32(p, little));
      else if (type === 12) values.push(view.getFloat64(p, little));
      else if (type === 11) values.push(view.getFloat32(p, little));
      else if (type === 8) values.push(view.getInt16(p, little));
      else if (type === 9) values.push(view.getInt32(p, little));
      else if (type === 16) values.push(Number(view.getBigUint64(p, little)));
    }
    tags.set(tag, values);
  }
  return tags;
}

function sampleReader(format, bits, little) {
  const key = `${format}:${bits}`;
  const readers = {
    '1:8': (v, p) => v.getUint8(p),
    '1:16': (v, p) => v.getUint16(p, little),
    '1:32': (v, p) => v.getUint32(p, little),
    '2:8': (v, p) => v.getInt8(p),
    '2:16': (v, p) => v.getInt16(p, little),
    '2:32': (v, p) => v.getInt32(p, little),
    '3:32': (v, p) => v.getFloat32(p, little),
    '3:64': (v, p) => v.getFloat64(p, little),
  };
  if (!readers[key]) throw new Error(`unsupported sample format ${key}`);
  return readers[key];
}

/** Undoes the predictor in place on one decoded block of `width` samples per row. */
function undoPredictor(block, predictor, width, bytesPerSample, little) {
  const rowBytes = width * bytesPerSample;
  for (let start = 0; start + rowBytes <= block.length; start += rowBytes) {
    const row = block.subarray(start, start + rowBytes);
    if (predictor === 2) {
      const view = new DataView(row.buffer, row.byteOffset, row.length);
      const [get, set, mask] = bytesPerSample === 1 ? ['getUint8', 'setUint8', 0xff]
        : bytesPerSample === 2 ? ['getUint16', 'setUint16', 0xffff] : ['getUint32', 'setUint32', 0xffffffff];
      for (let i = 1; i < width; i += 1) {
        const sum = view[get]((i - 1) * bytesPerSample, little) + view[get](i * bytesPerSample, little);
        view[set](i * bytesPerSample, (sum & mask) >>> 0, little);
      }
    } else if (predictor === 3) {
      for (let i = 1; i < rowBytes; i += 1) row[i] = (row[i] + row[i - 1]) & 0xff;
      // Bytes were split into planes, most significant first; put each sample back together
      // in the file's byte order.
      const planes = Uint8Array.from(row);
      for (let i = 0; i < width; i += 1) {
        for (let b = 0; b < bytesPerSample; b += 1) {
          const target = little ? bytesPerSample - 1 - b : b;
          row[i * bytesPerSample + target] = planes[b * width + i];
        }
      }
    }
  }
}

/**
 * @param {Uint8Array} bytes
 * @returns {{width: number, height: number, values: Float64Array, pixelScale: number[],
 *   tiepoint: number[], epsg: number | null, nodata: number | null}}
 */
export function readGeoTiff(bytes) {
  const view = new DataView(bytes.buffer, bytes.byteOffset, bytes.byteLength);
  const little = view.getUint16(0) === 0x4949;
  const tags = readTags(view, little);
  const one = (tag, fallback) => (tags.has(tag) ? tags.get(tag)[0] : fallback);
  const width = one(256);
  const height = one(257);
  const bits = one(258, 1);
  const compression = one(259, 1);
  const predictor = one(317, 1);
  const format = one(339, 1);
  const bytesPerSample = bits / 8;
  const read = sampleReader(format, bits, little);
  const tiled = tags.has(322);
  const blockWidth = tiled ? one(322) : width;
  const blockHeight = tiled ? one(323) : one(278, height);
  const offsets = tags.get(tiled ? 324 : 273);
  const counts = tags.get(tiled ? 325 : 279);
  const blocksAcross = Math.ceil(width / blockWidth);

  const values = new Float64Array(width * height);
  offsets.forEach((offset, blockIndex) => {
    const raw = bytes.subarray(offset, offset + counts[blockIndex]);
    let block;
    if (compression === 1) block = Uint8Array.from(raw);
    else if (compression === 8 || compression === 32946) block = new Uint8Array(inflateSync(raw));
    else throw new Error(`unsupported compression ${compression}`);
    undoPredictor(block, predictor, blockWidth, bytesPerSample, little);
    const blockView = new DataView(block.buffer, block.byteOffset, block.length);
    const col0 = (blockIndex % blocksAcross) * blockWidth;
    const row0 = Math.floor(blockIndex / blocksAcross) * blockHeight;
    for (let r = 0; r < blockHeight && row0 + r < height; r += 1) {
      for (let c = 0; c < blockWidth && col0 + c < width; c += 1) {
        values[(row0 + r) * width + col0 + c] = read(blockView, (r * blockWidth + c) * bytesPerSample);
      }
    }
  });

  let epsg = null;
  const keys = tags.get(34735) ?? [];
  for (let k = 4; k + 3 < keys.length; k += 4) {
    if ((keys[k] === 3072 || keys[k] === 2048) && keys[k + 1] === 0) epsg = keys[k + 3];
  }
  const nodataText = tags.has(42113) ? String.fromCharCode(...tags.get(42113)).replace(/\0/g, '').trim() : '';
  return {
    width,
    height,
    values,
    pixelScale: tags.get(33550) ?? [],
    tiepoint: tags.get(33922) ?? [],
    epsg,
    nodata: nodataText === '' ? null : Number(nodataText),
  };
}
