/**
 * Numeric CSV input/output. Separator: comma only (semicolons, tabs or spaces between values are not
 * separators). One optional header row, detected when the first data row is not all numeric. Blank lines and
 * lines whose first non-blank character is '#' are skipped. Rows and columns in messages are 1-based; the row
 * is the line number in the file, so it matches what an editor shows. A leading byte-order mark is ignored.
 */
import { UserError } from '../core/errors.ts';

/** report at most this many problems in one error (a broken file would otherwise give thousands of lines) */
const MAX_REPORTED_ISSUES = 10;

/** a decimal number as written by common tools: optional sign, digits with optional point, optional exponent */
const NUMBER_RE = /^[+-]?(\d+\.?\d*|\.\d+)([eE][+-]?\d+)?$/;
const NONFINITE_RE = /^[+-]?(nan|inf|infinity)$/i;

export interface NumericCsv {
  /** header cells (trimmed), or null when the first row is numeric */
  readonly header: string[] | null;
  /** one Float64Array per column */
  readonly columns: Float64Array[];
  /** 1-based file line number of each data row (same length as each column) */
  readonly lines: number[];
}

/** numeric for header detection: a number, an empty cell or a NaN/Inf token (the last two are rejected later) */
function looksNumeric(cell: string): boolean {
  return cell === '' || NUMBER_RE.test(cell) || NONFINITE_RE.test(cell);
}

/** printable header text: letters, digits, punctuation and spaces, no control characters (common practice) */
const HEADER_CELL_RE = /^[^\u0000-\u001f\u007f-\u009f\ufffd]*$/;

/**
 * The first row as a header: every cell must be printable text and not a number (a row that mixes numbers and
 * text is neither a header nor data, and a row of binary bytes is not a header).
 */
function headerCells(cells: readonly string[], line: number, fileName: string): string[] {
  const unquoted = cells.map((c) => c.replace(/^"(.*)"$/, '$1'));
  const bad = unquoted.findIndex((c) => !HEADER_CELL_RE.test(c));
  if (bad >= 0) throw new UserError(`${fileName}: row ${line}, column ${bad + 1} is neither a number nor header text (it holds control or undecodable characters): is this a text CSV file?`);
  const numeric = cells.map((c, i) => (c !== '' && looksNumeric(c) ? i + 1 : 0)).filter((i) => i > 0);
  if (numeric.length > 0) {
    throw new UserError(`${fileName}: row ${line} mixes numbers (column ${numeric.join(', ')}) and text: a header row holds only names, a data row only numbers`);
  }
  return unquoted;
}

/** shortest round-trip text of a double; keeps the sign of -0 (String(-0) is "0") */
function formatNumber(x: number): string {
  return Object.is(x, -0) ? '-0' : String(x);
}

/** Parse a numeric CSV text; any problem gives one UserError listing up to MAX_REPORTED_ISSUES of them. */
export function readNumericCsv(text: string, fileName: string): NumericCsv {
  const rawLines = text.replace(/^\uFEFF/, '').split(/\r\n|\n|\r/);
  const rows: { line: number; cells: string[] }[] = [];
  for (let i = 0; i < rawLines.length; i++) {
    const t = rawLines[i].trim();
    if (t === '' || t.startsWith('#')) continue;
    rows.push({ line: i + 1, cells: rawLines[i].split(',').map((c) => c.trim()) });
  }
  if (rows.length === 0) throw new UserError(`${fileName}: the file has no data rows (it is empty or only blank/comment lines)`);

  let header: string[] | null = null;
  let first = 0;
  if (!rows[0].cells.every(looksNumeric)) {
    header = headerCells(rows[0].cells, rows[0].line, fileName);
    first = 1;
  }
  if (first >= rows.length) throw new UserError(`${fileName}: the file has a header row (line ${rows[0].line}) but no data rows`);

  const width = rows[0].cells.length;
  const issues: string[] = [];
  const nData = rows.length - first;
  const columns = Array.from({ length: width }, () => new Float64Array(nData));
  const lines: number[] = new Array(nData);
  for (let r = first; r < rows.length; r++) {
    const { line, cells } = rows[r];
    lines[r - first] = line;
    if (cells.length !== width) {
      const hint = cells.length === 1 && /[;\t]/.test(cells[0]) ? ' (the separator must be a comma)' : '';
      issues.push(`row ${line} has ${cells.length} columns, expected ${width} as in row ${rows[0].line}${hint}`);
      continue;
    }
    for (let c = 0; c < width; c++) {
      const cell = cells[c];
      let problem: string | null = null;
      let value = NaN;
      if (cell === '') problem = 'is empty: a number is required';
      else if (NONFINITE_RE.test(cell)) problem = `= ${JSON.stringify(cell)} is not allowed: only finite numbers`;
      else if (!NUMBER_RE.test(cell)) {
        const hint = /[;\t]/.test(cell) ? ' (the separator must be a comma)' : '';
        problem = `= ${JSON.stringify(cell)} is not a number${hint}`;
      } else {
        value = Number(cell);
        if (!Number.isFinite(value)) problem = `= ${JSON.stringify(cell)} overflows to infinity: only finite numbers`;
      }
      if (problem) issues.push(`row ${line}, column ${c + 1} ${problem}`);
      else columns[c][r - first] = value;
    }
  }
  if (issues.length > 0) {
    const shown = issues.slice(0, MAX_REPORTED_ISSUES).map((m) => `${fileName}: ${m}`);
    if (issues.length > MAX_REPORTED_ISSUES) shown.push(`${fileName}: … and ${issues.length - MAX_REPORTED_ISSUES} more problems`);
    throw new UserError(shown.join('\n'));
  }
  return { header, columns, lines };
}

/**
 * Format columns as CSV (comma separated, '\n' line ends, trailing newline). Numbers use `String(x)`, the
 * shortest text that reads back to the identical double (ECMAScript Number::toString), so nothing is lost;
 * -0 is written as "-0". Non-finite values are written as NaN/Infinity (which readNumericCsv rejects).
 */
export function writeCsv(header: readonly string[] | null, columns: readonly ArrayLike<number>[]): string {
  const n = columns.length > 0 ? columns[0].length : 0;
  for (const col of columns) if (col.length !== n) throw new RangeError('writeCsv: all columns must have the same length');
  if (header) {
    if (header.length !== columns.length) throw new RangeError('writeCsv: header and columns differ in count');
    for (const h of header) if (/[,\n\r"]/.test(h)) throw new RangeError(`writeCsv: header cell ${JSON.stringify(h)} contains a comma, quote or newline`);
  }
  const parts: string[] = [];
  if (header) parts.push(header.join(','));
  const row: string[] = new Array(columns.length);
  for (let i = 0; i < n; i++) {
    for (let c = 0; c < columns.length; c++) row[c] = formatNumber(columns[c][i]);
    parts.push(row.join(','));
  }
  return parts.join('\n') + '\n';
}
