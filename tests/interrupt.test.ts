import { spawn } from 'node:child_process';
import { existsSync, mkdirSync, mkdtempSync, readdirSync, readFileSync, rmSync, writeFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join, resolve } from 'node:path';
import { pathToFileURL } from 'node:url';
import { Worker } from 'node:worker_threads';
import { afterAll, describe, expect, it } from 'vitest';
import { buildProgram } from '../src/cli/main.ts';
import { closeGate, COMMAND_JOBS, GATE_COMMITTING, GATE_IDLE, GATE_STOPPING, interruptMessage, type FolderKept } from '../src/cli/supervisor.ts';
import { subscribeOutput, type OutputEvent } from '../src/io/output-events.ts';
import { LOCK_FILE, MANIFEST_FILE, newRunIdentity, readManifest, releaseFolder, RunFolder, verifiedEntries } from '../src/io/run-folder.ts';
import { SMALL_SOLITON } from './fixtures.ts';

const BIN = resolve('bin/isotrap.js');
const work = mkdtempSync(join(tmpdir(), 'isotrap-interrupt-'));
afterAll(() => rmSync(work, { recursive: true, force: true }));

/** the small soliton with a long protocol and more states: a verify of several seconds (interrupted early) */
const LONG_VERIFY = (name: string) => SMALL_SOLITON(name).replace('points: 256', 'points: 1024').replace('protocol: { duration: 0.4, ramp: sin2 }', 'protocol: { duration: 40, ramp: sin2 }').replace('verify: { states: 2 }', 'verify: { states: 16 }');

/** a signal is answered within this time (the goal is about a second; common practice: margin for a loaded machine) */
const PROMPT_MS = 2000;

interface Interrupted {
  code: number | null;
  stderr: string;
  /** from the signal to the exit */
  ms: number;
}

/** run the CLI in `cwd`, send `signal` once `ready(stderr)` holds (polled every 10 ms) and wait for the exit */
function interruptCli(args: string[], cwd: string, ready: (stderr: string) => boolean, signal: NodeJS.Signals): Promise<Interrupted> {
  return new Promise((done, fail) => {
    const child = spawn(process.execPath, [BIN, ...args], { cwd, stdio: ['ignore', 'ignore', 'pipe'] });
    let stderr = '';
    let sent = 0;
    child.stderr.on('data', (d: Buffer) => (stderr += d.toString()));
    const poll = setInterval(() => {
      if (sent === 0 && ready(stderr)) {
        sent = performance.now();
        child.kill(signal);
      }
    }, 10);
    child.on('error', fail);
    child.on('exit', (code) => {
      clearInterval(poll);
      if (sent === 0) fail(new Error(`the command ended (exit ${code}) before it could be interrupted:\n${stderr}`));
      else done({ code, stderr, ms: performance.now() - sent });
    });
  });
}

/** names in `dir` that only a writer under way may hold: staging folders, the lock, temporaries */
function leftovers(dir: string): string[] {
  return existsSync(dir) ? readdirSync(dir).filter((n) => n.startsWith('.isotrap-staging-') || n === LOCK_FILE || n.endsWith('.tmp')) : [];
}

describe.concurrent('an interrupted command stops at once, keeps its folder whole and says what was kept', () => {
  it('SIGINT while verify computes: exit 130, nothing of the run written, an earlier file untouched', async () => {
    const cwd = join(work, 'during');
    mkdirSync(join(cwd, 'out'), { recursive: true });
    writeFileSync(join(cwd, 'c.yaml'), LONG_VERIFY('during'));
    writeFileSync(join(cwd, 'out', 'notes.txt'), 'my notes\n');
    // the progress line appears 1.5 s into verify (cli/progress.ts), while it computes
    const r = await interruptCli(['run', 'c.yaml', '--out', 'out'], cwd, (e) => /verify: \d+%/.test(e), 'SIGINT');
    expect(r.code, r.stderr).toBe(130); // 128 + SIGINT (2): common practice of POSIX shells
    expect(r.stderr).toContain('isotrap: interrupted by SIGINT during run: nothing of this run was written to out\n');
    expect(r.ms).toBeLessThan(PROMPT_MS);
    expect(readdirSync(join(cwd, 'out'))).toEqual(['notes.txt']);
    expect(readFileSync(join(cwd, 'out', 'notes.txt'), 'utf8')).toBe('my notes\n');
  });

  it('SIGINT after design and verify are committed: they stay whole and are named, the report is not', async () => {
    const cwd = join(work, 'after');
    const out = join(cwd, 'out');
    mkdirSync(out, { recursive: true });
    writeFileSync(join(cwd, 'c.yaml'), SMALL_SOLITON('after'));
    writeFileSync(join(out, 'notes.txt'), 'my notes\n');
    const committed = () => existsSync(join(out, MANIFEST_FILE)) && 'verify.json' in readManifest(out).files;
    const r = await interruptCli(['run', 'c.yaml', '--out', 'out', '--quiet'], cwd, committed, 'SIGINT');
    expect(r.code, r.stderr).toBe(130);
    expect(r.ms).toBeLessThan(PROMPT_MS);
    expect(r.stderr).toMatch(/^isotrap: interrupted by SIGINT during report: out holds the complete design and verify of this run \(.*sequence\.json.*verify\.json.*; see isotrap-run\.json\)( and part of its report \([^)]*\))?; (report was not written|the report is incomplete)\n/m);
    expect(leftovers(out)).toEqual([]);
    const names = Object.keys(readManifest(out).files);
    expect(names.sort()).toEqual(['potential.csv', 'potential.npy', 'sequence.json', 'traces.npy', 'verify.json']);
    expect(verifiedEntries(out, names)).toHaveLength(names.length); // every byte as the manifest's SHA-256 says
    expect(existsSync(join(out, 'report.html'))).toBe(false);
    expect(readFileSync(join(out, 'notes.txt'), 'utf8')).toBe('my notes\n');
  });

  it('SIGTERM exits 143 and leaves no folder it did not need', async () => {
    const cwd = join(work, 'term');
    mkdirSync(cwd, { recursive: true });
    writeFileSync(join(cwd, 'c.yaml'), LONG_VERIFY('term'));
    const r = await interruptCli(['verify', 'c.yaml', '--out', 'out'], cwd, (e) => /verify: \d+%/.test(e), 'SIGTERM');
    expect(r.code, r.stderr).toBe(143); // 128 + SIGTERM (15)
    expect(r.stderr).toContain('isotrap: interrupted by SIGTERM during verify: nothing of this run was written to out\n');
    expect(existsSync(join(cwd, 'out'))).toBe(false);
  });
});

describe('the interrupt message', () => {
  const kept = (shown: string, jobs: [string, string[]][], loose: string[] = []): FolderKept => ({ shown, jobs: new Map(jobs), loose });
  it('names the folder when nothing was written, and the command while no job is committed', () => {
    expect(interruptMessage('SIGINT', 'check', [])).toBe('isotrap: interrupted by SIGINT during check: nothing was written');
    expect(interruptMessage('SIGINT', 'run', [kept('out/a', [])])).toBe('isotrap: interrupted by SIGINT during run: nothing of this run was written to out/a');
  });
  it('lists the committed jobs with their files and the jobs not written', () => {
    expect(interruptMessage('SIGINT', 'verify', [kept('OUT', [['design', ['sequence.json', 'potential.npy']]])])).toBe(
      'isotrap: interrupted by SIGINT during verify: OUT holds the complete design of this run (sequence.json, potential.npy; see isotrap-run.json); verify was not written',
    );
    expect(interruptMessage('SIGTERM', 'run', [kept('OUT', [['design', ['sequence.json']]])])).toMatch(/during verify: .*; verify and report were not written$/);
  });
  it('names files written in place as part of the job under way', () => {
    expect(interruptMessage('SIGINT', 'run', [kept('OUT', [['design', ['sequence.json']], ['verify', ['verify.json']]], ['spectrum.svg'])])).toBe(
      'isotrap: interrupted by SIGINT during report: OUT holds the complete design and verify of this run (sequence.json, verify.json; see isotrap-run.json) and part of its report (spectrum.svg); the report is incomplete',
    );
    expect(interruptMessage('SIGINT', 'check', [kept('OUT', [], ['repaired.npy'])])).toBe('isotrap: interrupted by SIGINT during check: OUT holds part of the check (repaired.npy); the check is incomplete');
  });
  it('knows every command of the CLI (a command missing here would run without the supervisor)', () => {
    const commands = buildProgram({ exit() {} }).commands.map((c) => c.name());
    expect(commands.sort()).toEqual(Object.keys(COMMAND_JOBS).sort());
  });
});

describe('what a stopped writer leaves is released', () => {
  it('releaseFolder removes only the staging folders, temporaries and lock of the given process', () => {
    const dir = join(work, 'release');
    mkdirSync(join(dir, '.isotrap-staging-4242-0a1b'), { recursive: true });
    mkdirSync(join(dir, `.isotrap-staging-${process.pid}-0a1b`), { recursive: true });
    writeFileSync(join(dir, `.x.json.4242.0123456789ab.tmp`), '');
    writeFileSync(join(dir, LOCK_FILE), '4242');
    writeFileSync(join(dir, 'x.json'), '{}');
    expect(releaseFolder(dir, 4242).sort()).toEqual(['.isotrap-lock', '.isotrap-staging-4242-0a1b', '.x.json.4242.0123456789ab.tmp']);
    expect(readdirSync(dir).sort()).toEqual([`.isotrap-staging-${process.pid}-0a1b`, 'x.json']);
    writeFileSync(join(dir, LOCK_FILE), '4243');
    releaseFolder(dir, 4242);
    expect(existsSync(join(dir, LOCK_FILE))).toBe(true); // another writer's lock stays
  });

  it('a commit is announced before its first rename and after its manifest', () => {
    const dir = join(work, 'events');
    const seen: string[] = [];
    const stop = subscribeOutput((e: OutputEvent) => {
      if (e.kind === 'commit-start' || e.kind === 'commit-end') seen.push(`${e.kind} ${e.files.join(',')} visible=${existsSync(join(dir, 'x.json'))} manifest=${existsSync(join(dir, MANIFEST_FILE))}`);
    });
    try {
      const out = new RunFolder(dir, { force: false, produces: ['x.json'], job: 'design', identity: newRunIdentity('events') });
      out.write('x.json', '{}\n');
      out.commit();
    } finally {
      stop();
    }
    expect(seen).toEqual(['commit-start x.json visible=false manifest=false', 'commit-end x.json visible=true manifest=true']);
  });
});

describe('the commit gate', () => {
  /** a worker thread that says 'ready', enters the gate (cli/command-thread.ts) and says 'entered' */
  const enterIn = (shared: SharedArrayBuffer) =>
    new Worker(
      `(async () => {
        const { register } = await import('tsx/esm/api');
        register();
        const { enterCommit } = await import(${JSON.stringify(pathToFileURL(resolve('src/cli/command-thread.ts')).href)});
        require('node:worker_threads').parentPort.postMessage('ready');
        enterCommit(new Int32Array(require('node:worker_threads').workerData));
        require('node:worker_threads').parentPort.postMessage('entered');
      })();`,
      { eval: true, workerData: shared },
    );
  /** true when the worker enters the gate within `ms` of being ready */
  const entered = (w: Worker, ms: number) =>
    new Promise<boolean>((done) => {
      let t: NodeJS.Timeout | undefined;
      w.on('message', (m: string) => {
        if (m === 'ready') t = setTimeout(() => done(false), ms);
        else {
          clearTimeout(t);
          done(true);
        }
      });
    });

  it('an interrupt waits for a commit under way, then no commit starts', async () => {
    const shared = new SharedArrayBuffer(4);
    const gate = new Int32Array(shared);
    Atomics.store(gate, 0, GATE_COMMITTING);
    let closed = false;
    const closing = closeGate(gate).then(() => (closed = true));
    await new Promise((r) => setTimeout(r, 50));
    expect(closed).toBe(false); // the commit is still under way
    Atomics.store(gate, 0, GATE_IDLE); // the commit ends
    await closing;
    expect(Atomics.load(gate, 0)).toBe(GATE_STOPPING);
    const w = enterIn(shared);
    expect(await entered(w, 300)).toBe(false); // the next commit waits for termination
    await w.terminate();
  });

  it('a commit enters an open gate at once', async () => {
    const shared = new SharedArrayBuffer(4);
    const w = enterIn(shared);
    expect(await entered(w, 300)).toBe(true);
    expect(Atomics.load(new Int32Array(shared), 0)).toBe(GATE_COMMITTING);
    await w.terminate();
  });
});
