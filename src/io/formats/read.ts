/**
 * Shared parts of the output-file readers in this folder: JSON loading, the `format` tag that names the kind of
 * run that wrote a file, and zod leaves for numbers that the writers store as null when they are not finite
 * (JSON has no NaN; see `toJson` in jobs/design.ts). Every problem becomes one `UserError` naming the file and
 * the key.
 */
import { existsSync, readFileSync } from 'node:fs';
import { z } from 'zod';
import { UserError } from '../../core/errors.ts';
import { decodeNpy, type NpyArray } from '../npy.ts';

/** a number the writer may have stored as null (it was NaN or ±∞): read back as NaN */
export const num = z
  .number()
  .nullable()
  .transform((v) => v ?? NaN);
/** a number that is null on purpose (e.g. "not computed"): null stays null */
export const numOrNull = z.number().nullable();
export const nums = z.array(num);
export const str = z.string();
export const strOrNull = z.string().nullable();

/** one row of a report's summary table (written by verify, read by the HTML report) */
export interface SummaryRow {
  key: string;
  value: string | number;
  /** unit of a numeric value; shown after it */
  unit?: string;
}

export const summaryRowSchema: z.ZodType<SummaryRow> = z.object({ key: str, value: z.union([z.string(), num]), unit: z.string().optional() });

/** "a.b[2].c" from a zod issue path */
function keyPath(path: readonly PropertyKey[]): string {
  let out = '';
  for (const p of path) out += typeof p === 'number' ? `[${p}]` : out === '' ? String(p) : `.${String(p)}`;
  return out === '' ? '(top level)' : out;
}

/** parse JSON text of `path`; a missing file or bad JSON is a UserError */
export function readJsonFile(path: string): unknown {
  if (!existsSync(path)) throw new UserError(`${path} does not exist: is this a finished isotrap output folder?`);
  try {
    return JSON.parse(readFileSync(path, 'utf8'));
  } catch (err) {
    throw new UserError(`${path} is not valid JSON (${(err as Error).message})`);
  }
}

/**
 * Validate parsed JSON against `schema` after checking its `format` tag is `format`. `job` names the command
 * that writes this kind of file, for the message when another kind of run wrote it.
 */
export function parseFormat<T>(data: unknown, schema: z.ZodType<T>, path: string, format: string, job: string): T {
  const tag = typeof data === 'object' && data !== null && !Array.isArray(data) ? (data as { format?: unknown }).format : undefined;
  if (tag !== format) {
    const found = typeof tag === 'string' ? `format ${JSON.stringify(tag)}` : 'no format key';
    throw new UserError(`${path}: key format: expected "${format}" (written by \`isotrap ${job}\`), found ${found}: this file comes from another kind of run`);
  }
  const r = schema.safeParse(data);
  if (!r.success) {
    const iss = r.error.issues[0];
    throw new UserError(`${path}: key ${keyPath(iss.path)}: ${iss.message}${r.error.issues.length > 1 ? ` (and ${r.error.issues.length - 1} more problems)` : ''}`);
  }
  return r.data;
}

/** read and validate one output file (see parseFormat) */
export function readFormat<T>(path: string, schema: z.ZodType<T>, format: string, job: string): T {
  return parseFormat(readJsonFile(path), schema, path, format, job);
}

/** read a .npy array of an output folder; a missing file is a UserError */
export function readNpyFile(path: string): NpyArray {
  if (!existsSync(path)) throw new UserError(`${path} does not exist: is this a finished isotrap output folder?`);
  return decodeNpy(readFileSync(path), path);
}
