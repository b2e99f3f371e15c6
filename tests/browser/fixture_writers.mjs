// Tiny terrain files written byte by byte from the TIFF 6.0, GeoTIFF 1.0 and PNG
// specifications, so the values the tests expect come from the tests, not from the engine.

import { deflateSync } from 'node:zlib';

const TYPE_ASCII = 2;
const TYPE_SHORT = 3;
const TYPE_LONG = 4;
const TYPE_DOUBLE = 12;
const TYPE_SIZE = { [TYPE_ASCII]: 1, [TYPE_SHORT]: 2, [TYPE_LONG]: 4, [TYPE_DOUBLE]: 8 };

/**
 * A little-endian, uncompressed, single-strip float32 GeoTIFF.
 * @param {{width: number, height: number, elevation: (col: number, row: number) => number,
 *   westM: number, northM: number, cellSizeM: number, epsg: number, nodata?: number,
 *   geographic?: boolean}} spec with `geographic`, `epsg` is a latitude-longitude system and
 *   the origin and cell size are in degrees
 * @returns {Buffer}
 */
export function writeFloat32GeoTiff({
  width, height, elevation, westM, northM, cellSizeM, epsg, nodata, geographic = false,
}) {
  const pixels = Buffer.alloc(width * height * 4);
  for (let row = 0; row < height; row += 1) {
    for (let col = 0; col < width; col += 1) {
      pixels.writeFloatLE(elevation(col, row), (row * width + col) * 4);
    }
  }
  // GeoKey directory: version 1.1.0, then (key, location 0 = inline, count 1, value).
  const geoKeys = geographic
    ? [
      [1024, 2], // GTModelTypeGeoKey: geographic
      [1025, 1], // GTRasterTypeGeoKey: pixel is area
      [2048, epsg], // GeographicTypeGeoKey
    ]
    : [
      [1024, 1], // GTModelTypeGeoKey: projected
      [1025, 1], // GTRasterTypeGeoKey: pixel is area
      [3072, epsg], // ProjectedCSTypeGeoKey
      [3076, 9001], // ProjLinearUnitsGeoKey: metre
    ];
  const geoKeyShorts = [1, 1, 0, geoKeys.length, ...geoKeys.flatMap(([key, value]) => [key, 0, 1, value])];

  const entries = [
    { tag: 256, type: TYPE_LONG, values: [width] },
    { tag: 257, type: TYPE_LONG, values: [height] },
    { tag: 258, type: TYPE_SHORT, values: [32] },
    { tag: 259, type: TYPE_SHORT, values: [1] }, // no compression
    { tag: 262, type: TYPE_SHORT, values: [1] }, // black is zero
    { tag: 273, type: TYPE_LONG, values: [0] }, // strip offset, patched below
    { tag: 277, type: TYPE_SHORT, values: [1] },
    { tag: 278, type: TYPE_LONG, values: [height] },
    { tag: 279, type: TYPE_LONG, values: [pixels.length] },
    { tag: 284, type: TYPE_SHORT, values: [1] },
    { tag: 339, type: TYPE_SHORT, values: [3] }, // IEEE floating point
    { tag: 33550, type: TYPE_DOUBLE, values: [cellSizeM, cellSizeM, 0] },
    { tag: 33922, type: TYPE_DOUBLE, values: [0, 0, 0, westM, northM, 0] },
    { tag: 34735, type: TYPE_SHORT, values: geoKeyShorts },
  ];
  if (nodata !== undefined) {
    entries.push({ tag: 42113, type: TYPE_ASCII, values: [...Buffer.from(`${nodata}\0`, 'latin1')] });
  }

  const ifdOffset = 8;
  const ifdSize = 2 + entries.length * 12 + 4;
  let extraOffset = ifdOffset + ifdSize;
  const extras = [];
  const ifd = Buffer.alloc(ifdSize);
  ifd.writeUInt16LE(entries.length, 0);
  const encode = ({ type, values }) => {
    const bytes = Buffer.alloc(values.length * TYPE_SIZE[type]);
    values.forEach((value, i) => {
      if (type === TYPE_ASCII) bytes.writeUInt8(value, i);
      if (type === TYPE_SHORT) bytes.writeUInt16LE(value, i * 2);
      if (type === TYPE_LONG) bytes.writeUInt32LE(value, i * 4);
      if (type === TYPE_DOUBLE) bytes.writeDoubleLE(value, i * 8);
    });
    return bytes;
  };
  const stripEntryPositions = [];
  entries.forEach((entry, i) => {
    const at = 2 + i * 12;
    ifd.writeUInt16LE(entry.tag, at);
    ifd.writeUInt16LE(entry.type, at + 2);
    ifd.writeUInt32LE(entry.values.length, at + 4);
    const bytes = encode(entry);
    if (entry.tag === 273) stripEntryPositions.push(at + 8);
    if (bytes.length <= 4) {
      bytes.copy(ifd, at + 8);
    } else {
      // Values longer than four bytes live after the IFD, on word boundaries.
      ifd.writeUInt32LE(extraOffset, at + 8);
      const padded = Buffer.concat([bytes, Buffer.alloc(bytes.length % 2)]);
      extras.push(padded);
      extraOffset += padded.length;
    }
  });
  ifd.writeUInt32LE(0, ifdSize - 4); // no next IFD
  for (const position of stripEntryPositions) ifd.writeUInt32LE(extraOffset, position);

  const header = Buffer.from([0x49, 0x49, 42, 0, ifdOffset, 0, 0, 0]);
  return Buffer.concat([header, ifd, ...extras, pixels]);
}

const CRC_TABLE = Array.from({ length: 256 }, (_, n) => {
  let c = n;
  for (let k = 0; k < 8; k += 1) c = c & 1 ? 0xedb88320 ^ (c >>> 1) : c >>> 1;
  return c >>> 0;
});

function crc32(bytes) {
  let c = 0xffffffff;
  for (const byte of bytes) c = CRC_TABLE[(c ^ byte) & 0xff] ^ (c >>> 8);
  return (c ^ 0xffffffff) >>> 0;
}

function pngChunk(type, data) {
  const length = Buffer.alloc(4);
  length.writeUInt32BE(data.length);
  const body = Buffer.concat([Buffer.from(type, 'latin1'), data]);
  const crc = Buffer.alloc(4);
  crc.writeUInt32BE(crc32(body));
  return Buffer.concat([length, body, crc]);
}

/**
 * A 16-bit greyscale PNG.
 * @param {{width: number, height: number, level: (col: number, row: number) => number}} spec
 * @returns {Buffer}
 */
export function writeGrey16Png({ width, height, level }) {
  const header = Buffer.alloc(13);
  header.writeUInt32BE(width, 0);
  header.writeUInt32BE(height, 4);
  header.writeUInt8(16, 8); // bit depth
  header.writeUInt8(0, 9); // greyscale
  const rowBytes = 1 + width * 2;
  const raw = Buffer.alloc(rowBytes * height);
  for (let row = 0; row < height; row += 1) {
    raw.writeUInt8(0, row * rowBytes); // filter: none
    for (let col = 0; col < width; col += 1) {
      raw.writeUInt16BE(level(col, row), row * rowBytes + 1 + col * 2);
    }
  }
  return Buffer.concat([
    Buffer.from([0x89, 0x50, 0x4e, 0x47, 0x0d, 0x0a, 0x1a, 0x0a]),
    pngChunk('IHDR', header),
    pngChunk('IDAT', deflateSync(raw)),
    pngChunk('IEND', Buffer.alloc(0)),
  ]);
}
