/**
 * The shipped package: compiled JavaScript in dist/ (built by `npm ci` through `prepare`, and by `npm test`), the
 * command line runs it without the TypeScript loader, and `import { design, verify } from 'isotrap'` works
 * through the package's exports map (Node.js documentation, "Packages: self-referencing a package using its name").
 */
import { spawnSync } from 'node:child_process';
import { existsSync, readdirSync, readFileSync } from 'node:fs';
import { resolve } from 'node:path';
import { describe, expect, it } from 'vitest';
import { parseConfig } from '../src/io/config.ts';
import { runDesign } from '../src/jobs/design.ts';
import { SMALL_SOLITON } from './fixtures.ts';

const ROOT = resolve(__dirname, '..');
const pkg = JSON.parse(readFileSync(resolve(ROOT, 'package.json'), 'utf8'));

function node(args: string[], input?: string) {
  const r = spawnSync(process.execPath, args, { cwd: ROOT, encoding: 'utf8', input });
  return { code: r.status, stdout: r.stdout, stderr: r.stderr };
}

describe('the compiled package', () => {
  it('the command line runs dist/ without the TypeScript loader', () => {
    expect(existsSync(resolve(ROOT, 'dist/cli/supervisor.js'))).toBe(true);
    const v = node(['bin/isotrap.js', '--version']);
    expect(v.code, v.stderr).toBe(0);
    expect(v.stdout.trim()).toBe(pkg.version);
    // the loader is a development tool: only the worker bootstraps name it, on their branch for sources
    const tsxUsers = readdirSync(resolve(ROOT, 'dist'), { recursive: true, encoding: 'utf8' })
      .filter((f) => /\.m?js$/.test(f) && readFileSync(resolve(ROOT, 'dist', f), 'utf8').includes("'tsx"));
    expect(tsxUsers.sort()).toEqual(['check/worker.mjs', 'cli/command-worker.mjs', 'jobs/sweep-worker.mjs', 'quantum/drive-worker.mjs']);
    expect(readFileSync(resolve(ROOT, 'bin/isotrap.js'), 'utf8')).not.toMatch(/tsx/);
    expect(pkg.dependencies.tsx).toBeUndefined();
  });

  it("import { design, verify } from 'isotrap' gives the library's numbers, with type declarations", () => {
    const text = SMALL_SOLITON('api');
    const script = `
      import { design, verify, parseConfig } from 'isotrap';
      const config = parseConfig(process.argv[1], 'api.yaml', '.');
      const d = design(config);
      const v = await verify(config, { design: d, traceSamples: 0 });
      process.stdout.write(JSON.stringify({ last: Array.from(d.run.frames.at(-1)), fid: v.file.states.map((s) => s.fidelity_cd) }));
    `;
    const r = node(['--input-type=module', '-e', script, text]);
    expect(r.code, r.stderr).toBe(0);
    const out = JSON.parse(r.stdout);
    // the compiled library computes exactly what the sources compute (same arithmetic, same order)
    const expected = runDesign(parseConfig(text, 'api.yaml', '.'));
    expect(out.last).toEqual(Array.from(expected.run.frames[expected.run.frames.length - 1]));
    // a soliton's states are kept by the cubic correction (physics.md §5): fidelity 1 to the acceptance level
    for (const f of out.fid) expect(f).toBeGreaterThan(1 - 1e-6);
    const types = readFileSync(resolve(ROOT, 'dist/index.d.ts'), 'utf8');
    expect(types).toMatch(/export declare function design\(/);
    expect(types).toMatch(/export declare function verify\(/);
  });
});
