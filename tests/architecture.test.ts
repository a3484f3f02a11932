import { describe, expect, it } from 'vitest';
import { readdirSync, readFileSync, statSync } from 'node:fs';
import { dirname, join, relative, resolve, sep } from 'node:path';

// Layering of DEVELOPERS.md: a module imports only from its own folder or from folders earlier in this list;
// classical, check and lattice share a layer and do not import each other; '' is the package entry src/index.ts.
const LAYERS: readonly (readonly string[])[] = [
  ['core'],
  ['units'],
  ['spectral'],
  ['linalg'],
  ['integrate'],
  ['protocol'],
  ['flow'],
  ['quantum'],
  ['classical', 'check', 'lattice'],
  ['io'],
  ['report'],
  ['jobs'],
  ['cli', ''],
];

// Known violations, as printed by this test ("file -> import" or "file: as unknown as"). Keep it empty: a new entry
// needs a reason in a comment beside it.
const ALLOWED: readonly string[] = [];

const SRC = resolve(__dirname, '../src');

function sourceFiles(dir: string): string[] {
  return readdirSync(dir).flatMap((name) => {
    const p = join(dir, name);
    if (statSync(p).isDirectory()) return sourceFiles(p);
    return p.endsWith('.ts') && !p.endsWith('.d.ts') ? [p] : [];
  });
}

/** top folder under src/ of a file ('' for a file directly in src/) */
function folderOf(file: string): string {
  const parts = relative(SRC, file).split(sep);
  return parts.length > 1 ? parts[0] : '';
}

function layerOf(folder: string): number {
  return LAYERS.findIndex((l) => l.includes(folder));
}

/** relative module specifiers of static imports, re-exports and dynamic imports */
function relativeImports(text: string): string[] {
  const out: string[] = [];
  const re = /(?:\bfrom\s+|\bimport\s*\(\s*|\bimport\s+)(['"])(\.{1,2}\/[^'"]+)\1/g;
  for (let m = re.exec(text); m; m = re.exec(text)) out.push(m[2]);
  return out;
}

/** violations of one source file at absolute path `file` with content `text` */
function fileViolations(file: string, text: string): string[] {
  const found: string[] = [];
  const name = relative(SRC, file).split(sep).join('/');
  const from = folderOf(file);
  const fromLayer = layerOf(from);
  if (fromLayer < 0) found.push(`${name}: folder ${JSON.stringify(from)} has no layer`);
  if (text.includes('as unknown as')) found.push(`${name}: as unknown as`);
  for (const spec of relativeImports(text)) {
    const to = folderOf(resolve(dirname(file), spec));
    if (to === from) continue;
    const toLayer = layerOf(to);
    if (toLayer < 0 || toLayer > fromLayer || toLayer === fromLayer) found.push(`${name} -> ${spec}`);
  }
  return found;
}

function violations(): string[] {
  return sourceFiles(SRC)
    .flatMap((file) => fileViolations(file, readFileSync(file, 'utf8')))
    .sort();
}

describe('architecture', () => {
  const all = violations();
  // printed so that the whole list is visible, allowed entries included
  for (const v of all) console.log(`layering: ${ALLOWED.includes(v) ? '(allowed) ' : ''}${v}`);

  it('every module imports only from its own folder or lower layers, and src/ has no `as unknown as`', () => {
    expect(all.filter((v) => !ALLOWED.includes(v))).toEqual([]);
  });

  it('the allow-list holds only violations that still exist', () => {
    expect(ALLOWED.filter((v) => !all.includes(v))).toEqual([]);
  });

  it('flags upward imports, sibling imports and double casts, and passes downward imports (checks of the checker)', () => {
    const text = [
      "import { a } from '../jobs/x.ts';",
      "export { b } from './y.ts';",
      "const c = await import('../lattice/z.ts');",
      "import type { D } from '../core/errors.ts';",
      'const e = f as unknown as number;',
    ].join('\n');
    expect(fileViolations(join(SRC, 'check', 'probe.ts'), text)).toEqual(['check/probe.ts: as unknown as', 'check/probe.ts -> ../jobs/x.ts', 'check/probe.ts -> ../lattice/z.ts']);
    expect(fileViolations(join(SRC, 'report', 'probe.ts'), "import { g } from '../io/formats/read.ts';")).toEqual([]);
  });
});
