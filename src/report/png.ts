/**
 * Minimal PNG encoder (8-bit RGBA, no interlace) for embedding heatmap cells in SVG as one <image>.
 *
 * Follows the PNG specification (W3C Recommendation, Portable Network Graphics, 2nd ed. 2003 / ISO/IEC 15948):
 * signature, IHDR, one IDAT holding the zlib stream (RFC 1950, via node:zlib) of filtered scanlines, IEND.
 * Every scanline uses filter type 0 (None). Chunk CRCs are CRC-32 over type + data (spec §5.5, Annex D).
 */
import { deflateSync } from 'node:zlib';

/** zlib level: 9 gives the smallest files; images here are ≤ a few hundred kB raw so time is negligible. */
const DEFLATE_LEVEL = 9;

/** PNG file signature, spec §5.2. */
export const PNG_SIGNATURE = Uint8Array.from([137, 80, 78, 71, 13, 10, 26, 10]);

let crcTable: Uint32Array | null = null;

/** CRC table for the reflected polynomial 0xEDB88320 (PNG spec Annex D, "Sample CRC implementation"). */
function makeCrcTable(): Uint32Array {
  const t = new Uint32Array(256);
  for (let n = 0; n < 256; n++) {
    let c = n;
    for (let k = 0; k < 8; k++) c = c & 1 ? 0xedb88320 ^ (c >>> 1) : c >>> 1;
    t[n] = c >>> 0;
  }
  return t;
}

/** CRC-32 of bytes (PNG spec Annex D; the same CRC as ISO 3309 / ITU-T V.42). Returns an unsigned 32-bit value. */
export function crc32(bytes: Uint8Array, start = 0, end = bytes.length): number {
  if (!crcTable) crcTable = makeCrcTable();
  let c = 0xffffffff;
  for (let i = start; i < end; i++) c = crcTable[(c ^ bytes[i]) & 0xff] ^ (c >>> 8);
  return (c ^ 0xffffffff) >>> 0;
}

function chunk(type: string, data: Uint8Array): Uint8Array {
  const out = new Uint8Array(12 + data.length);
  const view = new DataView(out.buffer);
  view.setUint32(0, data.length);
  for (let i = 0; i < 4; i++) out[4 + i] = type.charCodeAt(i);
  out.set(data, 8);
  view.setUint32(8 + data.length, crc32(out, 4, 8 + data.length));
  return out;
}

/**
 * Encode an RGBA image (row-major from the top row, 4 bytes per pixel) as a PNG file.
 * @param width  pixels per row (≥ 1)
 * @param height rows (≥ 1)
 * @param rgba   width·height·4 bytes
 */
export function encodePngRgba(width: number, height: number, rgba: Uint8Array): Uint8Array {
  if (!Number.isInteger(width) || !Number.isInteger(height) || width < 1 || height < 1) {
    throw new RangeError(`encodePngRgba: bad size ${width}×${height}`);
  }
  if (rgba.length !== width * height * 4) {
    throw new RangeError(`encodePngRgba: expected ${width * height * 4} bytes, got ${rgba.length}`);
  }
  const ihdr = new Uint8Array(13);
  const hv = new DataView(ihdr.buffer);
  hv.setUint32(0, width);
  hv.setUint32(4, height);
  ihdr[8] = 8; // bit depth
  ihdr[9] = 6; // colour type 6: truecolour with alpha
  ihdr[10] = 0; // compression method 0 (deflate)
  ihdr[11] = 0; // filter method 0
  ihdr[12] = 0; // no interlace
  const stride = width * 4;
  const raw = new Uint8Array(height * (stride + 1));
  for (let r = 0; r < height; r++) {
    raw[r * (stride + 1)] = 0; // filter type None
    raw.set(rgba.subarray(r * stride, (r + 1) * stride), r * (stride + 1) + 1);
  }
  const idat = deflateSync(raw, { level: DEFLATE_LEVEL });
  const parts = [PNG_SIGNATURE, chunk('IHDR', ihdr), chunk('IDAT', idat), chunk('IEND', new Uint8Array(0))];
  const total = parts.reduce((s, p) => s + p.length, 0);
  const png = new Uint8Array(total);
  let o = 0;
  for (const p of parts) {
    png.set(p, o);
    o += p.length;
  }
  return png;
}

export function pngDataUri(png: Uint8Array): string {
  return `data:image/png;base64,${Buffer.from(png.buffer, png.byteOffset, png.byteLength).toString('base64')}`;
}
