import { existsSync, mkdirSync, mkdtempSync, readdirSync, readFileSync, rmSync, writeFileSync } from 'node:fs';
import { spawnSync } from 'node:child_process';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { afterAll, describe, expect, it } from 'vitest';
import { readNumericCsv, writeCsv } from '../src/io/csv.ts';
import { prepareOutputDir, readBoundedFile, writeFileAtomic } from '../src/io/files.ts';
import { decodeNpy, encodeNpy } from '../src/io/npy.ts';
import { readSamplesFile } from '../src/io/samples.ts';
import { userErrorOf } from './user-error.ts';

const work = mkdtempSync(join(tmpdir(), 'isotrap-io-'));
afterAll(() => rmSync(work, { recursive: true, force: true }));


const fromB64 = (s: string): Uint8Array => new Uint8Array(Buffer.from(s, 'base64'));
const latin1 = (b: Uint8Array, from: number, to: number): string => Buffer.from(b.subarray(from, to)).toString('latin1');

// Files written by numpy 2.4.6 `np.save` (npm-independent reference implementation of the NPY format):
// np.arange(6, dtype='<f8').reshape(2, 3) / 7
const NUMPY_F8_2x3 =
  'k05VTVBZAQB2AHsnZGVzY3InOiAnPGY4JywgJ2ZvcnRyYW5fb3JkZXInOiBGYWxzZSwgJ3NoYXBlJzogKDIsIDMpLCB9ICAgICAgICAgICAgICAgICAgICAgICAgICAgICAgICAgICAgICAgICAgICAgICAgICAgICAgICAgIAoAAAAAAAAAAJIkSZIkScI/kiRJkiRJ0j/btm3btm3bP5IkSZIkSeI/t23btm3b5j8=';
// np.array([1.5, -2.25, 3], dtype='<f4')
const NUMPY_F4 =
  'k05VTVBZAQB2AHsnZGVzY3InOiAnPGY0JywgJ2ZvcnRyYW5fb3JkZXInOiBGYWxzZSwgJ3NoYXBlJzogKDMsKSwgfSAgICAgICAgICAgICAgICAgICAgICAgICAgICAgICAgICAgICAgICAgICAgICAgICAgICAgICAgICAgIAoAAMA/AAAQwAAAQEA=';
// np.array([[1, -2], [3, 2**40]], dtype='<i8')
const NUMPY_I8 =
  'k05VTVBZAQB2AHsnZGVzY3InOiAnPGk4JywgJ2ZvcnRyYW5fb3JkZXInOiBGYWxzZSwgJ3NoYXBlJzogKDIsIDIpLCB9ICAgICAgICAgICAgICAgICAgICAgICAgICAgICAgICAgICAgICAgICAgICAgICAgICAgICAgICAgIAoBAAAAAAAAAP7/////////AwAAAAAAAAAAAAAAAAEAAA==';
// np.lib.format.write_array(f, np.array([1.0, 2.0]), version=(2, 0))
const NUMPY_V2 =
  'k05VTVBZAgB0AAAAeydkZXNjcic6ICc8ZjgnLCAnZm9ydHJhbl9vcmRlcic6IEZhbHNlLCAnc2hhcGUnOiAoMiwpLCB9ICAgICAgICAgICAgICAgICAgICAgICAgICAgICAgICAgICAgICAgICAgICAgICAgICAgICAgICAgIAoAAAAAAADwPwAAAAAAAABA';

/** build an NPY file by hand: version, header dict text, raw data bytes (numpy.lib.format layout) */
function handNpy(major: number, dict: string, data: Uint8Array): Uint8Array {
  const pre = major === 1 ? 10 : 12;
  const unpadded = pre + dict.length + 1;
  const total = Math.ceil(unpadded / 64) * 64;
  const header = dict + ' '.repeat(total - unpadded) + '\n';
  const out = new Uint8Array(total + data.length);
  out.set([0x93, 0x4e, 0x55, 0x4d, 0x50, 0x59, major, 0]);
  const v = new DataView(out.buffer);
  if (major === 1) v.setUint16(8, total - pre, true);
  else v.setUint32(8, total - pre, true);
  for (let i = 0; i < header.length; i++) out[pre + i] = header.charCodeAt(i);
  out.set(data, total);
  return out;
}

function f8bytes(values: number[]): Uint8Array {
  const b = new Uint8Array(8 * values.length);
  const v = new DataView(b.buffer);
  values.forEach((x, i) => v.setFloat64(8 * i, x, true));
  return b;
}

describe('NPY encode', () => {
  it('header of a (2, 3) float64 array has the exact numpy.lib.format layout', () => {
    const bytes = encodeNpy(new Float64Array(6), [2, 3]);
    // numpy.lib.format docs: magic "\x93NUMPY", major 1, minor 0, uint16 LE header length,
    // dict {'descr': '<f8', 'fortran_order': False, 'shape': (2, 3), } padded with spaces and '\n' to a multiple of 64
    expect(Array.from(bytes.subarray(0, 6))).toEqual([0x93, 0x4e, 0x55, 0x4d, 0x50, 0x59]);
    expect([bytes[6], bytes[7]]).toEqual([1, 0]);
    const dict = "{'descr': '<f8', 'fortran_order': False, 'shape': (2, 3), }";
    // 10 + 60 + 1 = 71 bytes, next multiple of 64 is 128 → header length 118 = 0x76
    expect([bytes[8], bytes[9]]).toEqual([118, 0]);
    expect(latin1(bytes, 10, 128)).toBe(dict + ' '.repeat(128 - 10 - dict.length - 1) + '\n');
    expect(bytes.length).toBe(128 + 6 * 8);
  });
  it('is byte-identical to numpy np.save output', () => {
    // numpy 2.4.6 np.save of np.arange(6).reshape(2, 3)/7 (reference bytes above)
    const mine = encodeNpy(Float64Array.from([0, 1, 2, 3, 4, 5], (v) => v / 7), [2, 3]);
    expect(Buffer.from(mine).equals(Buffer.from(fromB64(NUMPY_F8_2x3)))).toBe(true);
  });
  it('1-D shape is written as (n,) and data are IEEE 754 little-endian', () => {
    const bytes = encodeNpy(Float64Array.from([1, -2]), [2]);
    // Python tuple repr of a 1-tuple is "(2,)" (numpy.lib.format writes repr(shape))
    expect(latin1(bytes, 10, 128)).toContain("'shape': (2,), }");
    // IEEE 754 binary64: 1.0 = 0x3FF0000000000000, -2.0 = 0xC000000000000000, little-endian byte order
    expect(Array.from(bytes.subarray(128))).toEqual([0, 0, 0, 0, 0, 0, 0xf0, 0x3f, 0, 0, 0, 0, 0, 0, 0, 0xc0]);
  });
  it('round trips values exactly', () => {
    // encoding is a bit copy, so decode(encode(x)) must equal x bit for bit (IEEE 754)
    const x = Float64Array.from({ length: 35 }, (_, i) => Math.sin(i * 1.3) * 10 ** (i % 7 - 3));
    const back = decodeNpy(encodeNpy(x, [5, 7]), 'rt.npy');
    expect(back.shape).toEqual([5, 7]);
    expect(back.dtype).toBe('<f8');
    expect(Array.from(back.data)).toEqual(Array.from(x));
    const empty = decodeNpy(encodeNpy(new Float64Array(0), [0]), 'e.npy');
    expect(empty.shape).toEqual([0]);
  });
});

describe('NPY decode', () => {
  it('reads numpy files of dtypes <f8, <f4, <i8 and version 2.0', () => {
    // values as saved by numpy 2.4.6 (see constants above)
    const a = decodeNpy(fromB64(NUMPY_F8_2x3), 'a.npy');
    expect(a.shape).toEqual([2, 3]);
    expect(Array.from(a.data)).toEqual([0, 1 / 7, 2 / 7, 3 / 7, 4 / 7, 5 / 7]);
    const f4 = decodeNpy(fromB64(NUMPY_F4), 'f4.npy');
    expect([f4.dtype, ...f4.shape, ...f4.data]).toEqual(['<f4', 3, 1.5, -2.25, 3]);
    const i8 = decodeNpy(fromB64(NUMPY_I8), 'i8.npy');
    expect(Array.from(i8.data)).toEqual([1, -2, 3, 2 ** 40]);
    const v2 = decodeNpy(fromB64(NUMPY_V2), 'v2.npy');
    expect(Array.from(v2.data)).toEqual([1, 2]);
  });
  it('reads <i4 (hand-built per numpy.lib.format)', () => {
    const d = new Uint8Array(8);
    new DataView(d.buffer).setInt32(0, -7, true);
    new DataView(d.buffer).setInt32(4, 123456, true);
    const r = decodeNpy(handNpy(1, "{'descr': '<i4', 'fortran_order': False, 'shape': (2,), }", d), 'i4.npy');
    expect(Array.from(r.data)).toEqual([-7, 123456]);
  });
  it('rejects malformed files, each with its own message', () => {
    // each case is a documented NPY feature this reader refuses (numpy.lib.format docs), or broken data
    expect(userErrorOf(() => decodeNpy(new TextEncoder().encode('x,y\n1,2\n'), 'bad.npy'))).toMatch(/bad\.npy: not an NPY file .*magic/);
    const be = handNpy(1, "{'descr': '>f8', 'fortran_order': False, 'shape': (1,), }", new Uint8Array(8));
    expect(userErrorOf(() => decodeNpy(be, 'be.npy'))).toMatch(/be\.npy: big-endian dtype '>f8' is not supported/);
    const fo = handNpy(1, "{'descr': '<f8', 'fortran_order': True, 'shape': (1, 2), }", new Uint8Array(16));
    expect(userErrorOf(() => decodeNpy(fo, 'fo.npy'))).toMatch(/fo\.npy: fortran_order True is not supported/);
    const u2 = handNpy(1, "{'descr': '<u2', 'fortran_order': False, 'shape': (1,), }", new Uint8Array(2));
    expect(userErrorOf(() => decodeNpy(u2, 'u2.npy'))).toMatch(/dtype '<u2' is not supported: allowed dtypes are '<f8', '<f4', '<i4', '<i8'/);
    const v3 = handNpy(2, "{'descr': '<f8', 'fortran_order': False, 'shape': (1,), }", new Uint8Array(8));
    v3[6] = 3;
    expect(userErrorOf(() => decodeNpy(v3, 'v3.npy'))).toMatch(/version 3\.0 is not supported: allowed versions are 1\.0 and 2\.0/);
    const full = encodeNpy(Float64Array.from([1, 2, 3]), [3]);
    expect(userErrorOf(() => decodeNpy(full.subarray(0, full.length - 5), 'cut.npy'))).toMatch(
      /cut\.npy: file is truncated: shape \(3,\) of '<f8' needs 24 data bytes, found 19/,
    );
    expect(userErrorOf(() => decodeNpy(full.subarray(0, 60), 'cut2.npy'))).toMatch(/cut2\.npy: file is truncated/);
    // a header dict that names a key twice: numpy's literal_eval keeps the last value, a first-match parser the
    // first; the file is ambiguous and is refused (numpy.lib.format: the header is one dict of three keys)
    const dup = handNpy(1, "{'descr': '<f4', 'fortran_order': False, 'shape': (1,), 'descr': '<f8', }", new Uint8Array(8));
    expect(userErrorOf(() => decodeNpy(dup, 'dup.npy'))).toMatch(/dup\.npy: NPY header names 'descr' 2 times/);
  });
  it('rejects NaN/Inf naming the flat index and, for 2-D, row and column', () => {
    // element [1, 2] of a C-ordered (2, 3) array has flat index 1·3 + 2 = 5 (NumPy C order, row-major)
    const x = new Float64Array(6);
    x[5] = NaN;
    expect(userErrorOf(() => decodeNpy(encodeNpy(x, [2, 3]), 'nan.npy'))).toMatch(
      /nan\.npy: value at flat index 5 \(row 1, column 2, counted from 0\) is NaN/,
    );
    const y = new Float64Array(4);
    y[2] = -Infinity;
    expect(userErrorOf(() => decodeNpy(encodeNpy(y, [4]), 'inf.npy'))).toMatch(/inf\.npy: value at flat index 2 is -Inf/);
  });
});

describe('CSV', () => {
  it('reads header, comments and blank lines', () => {
    const text = '# potential\n\nx, V\n-1, 2.5\n0,-1e-3\n\n# tail\n1 ,+.5\n';
    const r = readNumericCsv(text, 'a.csv');
    // values are those typed above
    expect(r.header).toEqual(['x', 'V']);
    expect(Array.from(r.columns[0])).toEqual([-1, 0, 1]);
    expect(Array.from(r.columns[1])).toEqual([2.5, -1e-3, 0.5]);
    expect(r.lines).toEqual([4, 5, 8]); // 1-based line numbers of the data rows in `text`
    expect(readNumericCsv('1,2\n3,4', 'b.csv').header).toBeNull();
    // a UTF-8 byte-order mark (U+FEFF, Unicode §23.8) before the header is not part of the first cell
    expect(readNumericCsv('\uFEFFx,V\r\n1,2\r\n', 'bom.csv').header).toEqual(['x', 'V']);
  });
  it('gives clear errors with file, row and column', () => {
    // rows are 1-based file lines, columns 1-based (the reader's documented convention)
    expect(userErrorOf(() => readNumericCsv('1,2\n3\n', 'r.csv'))).toBe('r.csv: row 2 has 1 columns, expected 2 as in row 1');
    expect(userErrorOf(() => readNumericCsv('x,V\n1,2\n3,abc\n', 'n.csv'))).toBe('n.csv: row 3, column 2 = "abc" is not a number');
    expect(userErrorOf(() => readNumericCsv('1,NaN\n', 'nan.csv'))).toBe('nan.csv: row 1, column 2 = "NaN" is not allowed: only finite numbers');
    expect(userErrorOf(() => readNumericCsv('1,2\n-inf,3\n', 'i.csv'))).toBe('i.csv: row 2, column 1 = "-inf" is not allowed: only finite numbers');
    expect(userErrorOf(() => readNumericCsv('1,1e999\n', 'o.csv'))).toMatch(/o\.csv: row 1, column 2 = "1e999" overflows to infinity/);
    expect(userErrorOf(() => readNumericCsv('1,\n', 'e.csv'))).toBe('e.csv: row 1, column 2 is empty: a number is required');
    expect(userErrorOf(() => readNumericCsv('\n# only comments\n\n', 'empty.csv'))).toMatch(/empty\.csv: the file has no data rows/);
    expect(userErrorOf(() => readNumericCsv('x,V\n', 'h.csv'))).toMatch(/h\.csv: the file has a header row \(line 1\) but no data rows/);
    expect(userErrorOf(() => readNumericCsv('1,2\n3;4\n', 's.csv'))).toMatch(/s\.csv: row 2 has 1 columns, expected 2 .*separator must be a comma/);
    // all problems of the file are listed, not only the first
    expect(userErrorOf(() => readNumericCsv('1,2\n3,x\ny,4\n', 'm.csv')).split('\n')).toHaveLength(2);
  });
  it('refuses a first row that is neither a header nor data', () => {
    // a header holds names only (the reader's documented convention); binary bytes are not a header
    expect(userErrorOf(() => readNumericCsv('x,2.5\n1,2\n', 'mix.csv'))).toBe('mix.csv: row 1 mixes numbers (column 2) and text: a header row holds only names, a data row only numbers');
    expect(userErrorOf(() => readNumericCsv('\u0000\u0001PK,\u0003\n1,2\n', 'bin.csv'))).toMatch(/bin\.csv: row 1, column 1 is neither a number nor header text/);
    expect(userErrorOf(() => readNumericCsv('x,\ufffd\ufffd\n1,2\n', 'enc.csv'))).toMatch(/enc\.csv: row 1, column 2 is neither a number nor header text/);
  });
  it('writeCsv round trips doubles exactly', () => {
    // ECMAScript Number::toString gives the shortest decimal that reads back to the same double (ECMA-262 §6.1.6.1.20)
    const a = Float64Array.from([0.1 + 0.2, 1 / 3, 5e-324, -1.7976931348623157e308, 0, -0, 123456789.123456789]);
    const b = Float64Array.from(a, (v) => v * 0.7);
    const text = writeCsv(['x', 'V'], [a, b]);
    expect(text.split('\n')[0]).toBe('x,V');
    expect(text.endsWith('\n')).toBe(true);
    const r = readNumericCsv(text, 'rt.csv');
    expect(r.header).toEqual(['x', 'V']);
    expect(Array.from(r.columns[0])).toEqual(Array.from(a)); // toEqual tells -0 from 0 (Object.is)
    expect(Array.from(r.columns[1])).toEqual(Array.from(b));
    expect(writeCsv(null, [[1.5], [2]])).toBe('1.5,2\n');
  });
});

describe('files', () => {
  it('writeFileAtomic writes, overwrites and leaves no temporary file', () => {
    const dir = join(work, 'atomic');
    mkdirSync(dir);
    const p = join(dir, 'out.txt');
    writeFileAtomic(p, 'first');
    writeFileAtomic(p, new Uint8Array([104, 105])); // "hi" in ASCII
    expect(readFileSync(p, 'utf8')).toBe('hi');
    expect(readdirSync(dir)).toEqual(['out.txt']);
    expect(() => writeFileAtomic(join(dir, 'missing', 'x.txt'), 'x')).toThrow();
    expect(readdirSync(dir)).toEqual(['out.txt']);
  });
  it('prepareOutputDir refuses to overwrite without force and never deletes', () => {
    const dir = join(work, 'outputs', 'run1');
    prepareOutputDir(dir, { force: false, produces: ['a.csv', 'b.npy'] });
    expect(existsSync(dir)).toBe(true);
    writeFileSync(join(dir, 'b.npy'), 'old');
    writeFileSync(join(dir, 'notes.txt'), 'keep me');
    const msg = userErrorOf(() => prepareOutputDir(dir, { force: false, produces: ['a.csv', 'b.npy'] }));
    expect(msg).toContain(join(dir, 'b.npy'));
    expect(msg).toContain('--force');
    expect(msg).not.toContain('a.csv');
    prepareOutputDir(dir, { force: true, produces: ['a.csv', 'b.npy'] });
    expect(readFileSync(join(dir, 'b.npy'), 'utf8')).toBe('old');
    expect(readFileSync(join(dir, 'notes.txt'), 'utf8')).toBe('keep me');
    writeFileSync(join(work, 'plainfile'), '');
    expect(userErrorOf(() => prepareOutputDir(join(work, 'plainfile'), { force: true, produces: [] }))).toMatch(/is not a folder/);
  });
  it('I/O failures and an empty folder name are input errors naming the path; temporaries of dead writers go', () => {
    writeFileSync(join(work, 'afile'), '');
    // a path through a regular file fails with ENOTDIR (POSIX), whoever runs the test
    expect(userErrorOf(() => writeFileAtomic(join(work, 'afile', 'x.json'), '{}'))).toMatch(/^cannot write .*afile\/x\.json \(ENOTDIR/);
    expect(userErrorOf(() => prepareOutputDir(join(work, 'afile', 'sub'), { force: false, produces: [] }))).toMatch(/^cannot create output folder .*afile\/sub \(ENOTDIR/);
    expect(userErrorOf(() => prepareOutputDir('', { force: false, produces: [] }))).toMatch(/output folder "" is not allowed/);
    const dir = join(work, 'stale');
    mkdirSync(dir);
    const dead = spawnSync(process.execPath, ['-e', '0']).pid; // a process that has exited
    const live = process.pid;
    writeFileSync(join(dir, `.potential.npy.${dead}.0123456789ab.tmp`), 'half');
    writeFileSync(join(dir, `.verify.json.${live}.0123456789ab.tmp`), 'being written');
    prepareOutputDir(dir, { force: true, produces: [] });
    expect(readdirSync(dir)).toEqual([`.verify.json.${live}.0123456789ab.tmp`]);
  });
});

describe('samples files', () => {
  const write = (name: string, data: string | Uint8Array): string => {
    const p = join(work, name);
    writeFileSync(p, data);
    return p;
  };
  it('reads csv (x, V) and npy 1-D and (M, 2)', () => {
    // grid x_j = -1 + 0.5 j, V = -x² typed by hand
    const c = readSamplesFile(write('s.csv', 'x,V\n-1,-1\n-0.5,-0.25\n0,0\n0.5,-0.25\n'));
    expect(Array.from(c.x!)).toEqual([-1, -0.5, 0, 0.5]);
    expect(Array.from(c.values)).toEqual([-1, -0.25, 0, -0.25]);
    const one = readSamplesFile(write('s1.npy', encodeNpy(Float64Array.from([3, 2, 1]), [3])));
    expect(one.x).toBeNull();
    expect(Array.from(one.values)).toEqual([3, 2, 1]);
    const two = readSamplesFile(write('s2.npy', encodeNpy(Float64Array.from([0, 5, 0.25, 6, 0.5, 7]), [3, 2])));
    expect(Array.from(two.x!)).toEqual([0, 0.25, 0.5]);
    expect(Array.from(two.values)).toEqual([5, 6, 7]);
  });
  it('rejects non-uniform or decreasing x, naming the first bad row', () => {
    // step 0.1 then 0.1000001: relative difference 1e-6 ≫ 1e-9 tolerance
    const p = write('nu.csv', 'x,V\n0,1\n0.1,1\n0.2,1\n0.3000001,1\n');
    expect(userErrorOf(() => readSamplesFile(p))).toMatch(/nu\.csv: x is not uniformly spaced at row 5: step 0\.1000000999\d* differs from the first step 0\.1 /);
    const q = write('nu2.csv', '0,1\n1,1\n2,1\n3,1\n5,1\n6,1\n');
    expect(userErrorOf(() => readSamplesFile(q))).toMatch(/x is not uniformly spaced at row 5: step 2 differs from the first step 1/);
    // the same spacing written with 17 significant digits passes (60/1024 grid, as writeCsv would print it)
    const ok = Array.from({ length: 64 }, (_, j) => `${-30 + (j * 60) / 1024},0`).join('\n');
    expect(readSamplesFile(write('ok.csv', ok)).x!.length).toBe(64);
    const d = write('dec.csv', '0,1\n1,1\n1,1\n');
    expect(userErrorOf(() => readSamplesFile(d))).toMatch(/dec\.csv: x is not strictly increasing at row 3 \(x = 1 after 1\)/);
    const n = write('nu.npy', encodeNpy(Float64Array.from([0, 1, 1, 1, 3, 1]), [3, 2]));
    expect(userErrorOf(() => readSamplesFile(n))).toMatch(/nu\.npy: x is not uniformly spaced at row 2 \(counted from 0\)/);
  });
  it('rejects missing files, wrong shapes and extensions', () => {
    const missing = join(work, 'nope.csv');
    expect(userErrorOf(() => readSamplesFile(missing))).toBe(`samples file ${missing} does not exist`);
    // a device that never ends (/dev/zero, POSIX) and a folder are refused before anything is read
    expect(userErrorOf(() => readSamplesFile('/dev/zero'))).toBe('samples file /dev/zero is not a regular file');
    expect(userErrorOf(() => readSamplesFile(work))).toBe(`samples file ${work} is not a regular file`);
    expect(userErrorOf(() => readSamplesFile(write('three.csv', '1,2,3\n4,5,6\n')))).toMatch(/has 3 columns, expected 2 \(x, V\)/);
    expect(userErrorOf(() => readSamplesFile(write('s3.npy', encodeNpy(new Float64Array(6), [2, 3]))))).toMatch(
      /array shape \(2, 3\) is not allowed: must be 1-D \(M,\) or \(M, 2\)/,
    );
    expect(userErrorOf(() => readSamplesFile(write('s.txt', '1,2\n')))).toMatch(/extension "\.txt": allowed are \.csv and \.npy/);
  });
});

describe('bounded input', () => {
  it('refuses a file over the size limit before reading it', () => {
    const p = join(work, 'big.csv');
    writeFileSync(p, 'x'.repeat(2048));
    expect(userErrorOf(() => readBoundedFile(p, 1024, 'sequence file'))).toBe(`sequence file ${p} has 2.00 KiB; at most 1.00 KiB are read`);
    expect(readBoundedFile(p, 4096, 'sequence file').length).toBe(2048);
  });
});
