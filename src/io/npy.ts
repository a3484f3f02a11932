/**
 * NumPy .npy files (format described in NumPy Enhancement Proposal 1 and the numpy.lib.format module docs):
 *   magic "\x93NUMPY", major and minor version bytes, header length (uint16 little-endian in 1.0,
 *   uint32 little-endian in 2.0), an ASCII Python-literal dict {'descr', 'fortran_order', 'shape'} padded with
 *   spaces and ended by '\n' so that magic + version + length + header is a multiple of 64 bytes, then the data.
 */
import { UserError } from '../core/errors.ts';

const MAGIC = [0x93, 0x4e, 0x55, 0x4d, 0x50, 0x59]; // "\x93NUMPY"
/** total preamble + header is padded to this (numpy.lib.format: ARRAY_ALIGN = 64) */
const HEADER_ALIGN = 64;
/** largest header a 1.0 file can hold (uint16 length field) */
const MAX_V1_HEADER = 0xffff;

const SUPPORTED_DTYPES = ["'<f8'", "'<f4'", "'<i4'", "'<i8'"];

interface DtypeInfo {
  readonly size: number;
  read(view: DataView, offset: number): number;
}

const DTYPES: Record<string, DtypeInfo> = {
  '<f8': { size: 8, read: (v, o) => v.getFloat64(o, true) },
  '<f4': { size: 4, read: (v, o) => v.getFloat32(o, true) },
  '<i4': { size: 4, read: (v, o) => v.getInt32(o, true) },
  '<i8': { size: 8, read: (v, o) => Number(v.getBigInt64(o, true)) },
};

function shapeLiteral(shape: readonly number[]): string {
  if (shape.length === 1) return `(${shape[0]},)`;
  return `(${shape.join(', ')})`;
}

/** Encode a C-ordered float64 array as NPY 1.0 ('<f8', fortran_order False). */
export function encodeNpy(data: Float64Array, shape: readonly number[]): Uint8Array {
  for (const d of shape) if (!Number.isInteger(d) || d < 0) throw new RangeError(`bad NPY shape entry ${d}`);
  const count = shape.reduce((a, b) => a * b, 1);
  if (count !== data.length) throw new RangeError(`shape ${shapeLiteral(shape)} needs ${count} values, got ${data.length}`);
  const dict = `{'descr': '<f8', 'fortran_order': False, 'shape': ${shapeLiteral(shape)}, }`;
  const preamble = MAGIC.length + 2 + 2;
  const unpadded = preamble + dict.length + 1;
  const total = Math.ceil(unpadded / HEADER_ALIGN) * HEADER_ALIGN;
  const headerLen = total - preamble;
  if (headerLen > MAX_V1_HEADER) throw new RangeError('NPY header too long for format 1.0');
  const header = dict + ' '.repeat(total - unpadded) + '\n';
  const out = new Uint8Array(total + 8 * count);
  out.set(MAGIC, 0);
  out[6] = 1;
  out[7] = 0;
  out[8] = headerLen & 0xff;
  out[9] = headerLen >> 8;
  for (let i = 0; i < header.length; i++) out[preamble + i] = header.charCodeAt(i);
  const view = new DataView(out.buffer, out.byteOffset, out.byteLength);
  for (let i = 0; i < count; i++) view.setFloat64(total + 8 * i, data[i], true);
  return out;
}

export interface NpyArray {
  /** values converted to float64, C order */
  readonly data: Float64Array;
  readonly shape: number[];
  /** dtype as stored in the file, e.g. '<f4' */
  readonly dtype: string;
}

function describeDescr(descr: string): string {
  if (descr.startsWith('>')) return `big-endian dtype '${descr}' is not supported: save it little-endian, e.g. arr.astype('<f8')`;
  return `dtype '${descr}' is not supported: allowed dtypes are ${SUPPORTED_DTYPES.join(', ')}`;
}

/** the header dict's three keys, each named once: dtype (one of DTYPES), C order, shape */
function parseHeader(header: string, fail: (msg: string) => never): { descr: string; dtype: DtypeInfo; shape: number[] } {
  for (const key of ['descr', 'fortran_order', 'shape']) {
    const count = header.split(`'${key}'`).length - 1;
    if (count > 1) fail(`NPY header names '${key}' ${count} times; a valid header names it once: ${JSON.stringify(header.trim())}`);
  }
  const descrMatch = /'descr'\s*:\s*'([^']*)'/.exec(header);
  if (!descrMatch) {
    if (/'descr'\s*:\s*\[/.test(header)) fail(`structured dtypes are not supported: allowed dtypes are ${SUPPORTED_DTYPES.join(', ')}`);
    fail(`NPY header has no 'descr' entry: ${JSON.stringify(header.trim())}`);
  }
  const descr = descrMatch![1];
  const dtype = DTYPES[descr];
  if (!dtype) return fail(describeDescr(descr));

  const fortranMatch = /'fortran_order'\s*:\s*(True|False)/.exec(header);
  if (!fortranMatch) fail(`NPY header has no 'fortran_order' entry: ${JSON.stringify(header.trim())}`);
  if (fortranMatch![1] === 'True') fail('fortran_order True is not supported: save a C-ordered array, e.g. np.save(path, np.ascontiguousarray(arr))');

  const shapeMatch = /'shape'\s*:\s*\(([^)]*)\)/.exec(header);
  if (!shapeMatch) fail(`NPY header has no 'shape' entry: ${JSON.stringify(header.trim())}`);
  const shape: number[] = [];
  for (const part of shapeMatch![1].split(',')) {
    const t = part.trim().replace(/L$/, '');
    if (t === '') continue;
    if (!/^\d+$/.test(t)) fail(`NPY shape entry ${JSON.stringify(t)} is not a non-negative integer`);
    shape.push(Number(t));
  }
  return { descr, dtype, shape };
}

/**
 * Decode an NPY file (versions 1.0 and 2.0; dtypes '<f8', '<f4', '<i4', '<i8'; C order only) into float64.
 * Anything else, a truncated file and any NaN/Inf value give a UserError naming `fileName`.
 */
export function decodeNpy(bytes: Uint8Array, fileName: string): NpyArray {
  const fail = (msg: string): never => {
    throw new UserError(`${fileName}: ${msg}`);
  };
  if (bytes.length < 10 || MAGIC.some((b, i) => bytes[i] !== b)) {
    fail('not an NPY file (it does not start with the magic string "\\x93NUMPY")');
  }
  const major = bytes[6];
  const minor = bytes[7];
  const view = new DataView(bytes.buffer, bytes.byteOffset, bytes.byteLength);
  let headerStart: number;
  let headerLen: number;
  if (major === 1 && minor === 0) {
    headerStart = 10;
    headerLen = view.getUint16(8, true);
  } else if (major === 2 && minor === 0) {
    if (bytes.length < 12) fail('file is truncated inside the NPY preamble');
    headerStart = 12;
    headerLen = view.getUint32(8, true);
  } else {
    return fail(`NPY format version ${major}.${minor} is not supported: allowed versions are 1.0 and 2.0`);
  }
  const dataStart = headerStart + headerLen;
  if (dataStart > bytes.length) fail(`file is truncated: header says ${headerLen} header bytes, file has ${bytes.length} bytes in all`);
  let header = '';
  for (let i = headerStart; i < dataStart; i++) header += String.fromCharCode(bytes[i]);

  const { descr, dtype, shape } = parseHeader(header, fail);
  const count = shape.reduce((a, b) => a * b, 1);
  const needed = count * dtype.size;
  const have = bytes.length - dataStart;
  if (have < needed) {
    fail(`file is truncated: shape ${shapeLiteral(shape)} of '${descr}' needs ${needed} data bytes, found ${have}`);
  }
  if (have > needed) fail(`file has ${have - needed} unexpected bytes after the ${needed} data bytes of shape ${shapeLiteral(shape)}`);

  const data = new Float64Array(count);
  for (let i = 0; i < count; i++) {
    const v = dtype.read(view, dataStart + i * dtype.size);
    data[i] = v;
  }
  if (descr === '<i8') {
    for (let i = 0; i < count; i++) {
      if (!Number.isSafeInteger(data[i])) fail(`int64 value at flat index ${i} is too large to convert exactly to float64 (|v| > 2^53)`);
    }
  }
  for (let i = 0; i < count; i++) {
    const v = data[i];
    if (!Number.isFinite(v)) {
      const what = Number.isNaN(v) ? 'NaN' : v > 0 ? '+Inf' : '-Inf';
      const where =
        shape.length === 2
          ? `flat index ${i} (row ${Math.floor(i / shape[1])}, column ${i % shape[1]}, counted from 0)`
          : `flat index ${i}`;
      fail(`value at ${where} is ${what}: only finite numbers are allowed`);
    }
  }
  return { data, shape, dtype: descr };
}
