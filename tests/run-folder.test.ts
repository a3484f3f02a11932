import { spawn, spawnSync } from 'node:child_process';
import { createHash } from 'node:crypto';
import { existsSync, mkdirSync, mkdtempSync, readdirSync, readFileSync, rmSync, writeFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { afterAll, describe, expect, it } from 'vitest';
import { userErrorOf } from './user-error.ts';
import { LOCK_FILE, MANIFEST_FILE, newRunIdentity, readManifest, requireOneConfig, RunFolder, verifiedEntries } from '../src/io/run-folder.ts';

const work = mkdtempSync(join(tmpdir(), 'isotrap-runfolder-'));
afterAll(() => rmSync(work, { recursive: true, force: true }));


describe('output folder written whole or not at all', () => {
  it('stages, then commits every file with its SHA-256 in the manifest; the lock and staging folder are gone', () => {
    const dir = join(work, 'a');
    const id = newRunIdentity('name: a\n');
    const out = new RunFolder(dir, { force: false, produces: ['x.json', 'y.npy'], job: 'design', identity: id });
    out.write('x.json', '{"v":1}\n');
    out.write('y.npy', new Uint8Array([1, 2, 3]));
    expect(readdirSync(dir).filter((n) => !n.startsWith('.'))).toEqual([]); // nothing visible before the commit
    out.commit();
    expect(readdirSync(dir).sort()).toEqual([MANIFEST_FILE, 'x.json', 'y.npy']);
    const m = readManifest(dir);
    // SHA-256 of the bytes written (FIPS 180-4, computed here by node:crypto independently of the writer)
    expect(m.files['x.json'].sha256).toBe(createHash('sha256').update('{"v":1}\n').digest('hex'));
    expect(m.files['y.npy'].bytes).toBe(3);
    expect(m.files['x.json'].config_hash).toBe(id.configHash);
    expect(verifiedEntries(dir, ['x.json', 'y.npy'])).toHaveLength(2);
  });
  it('an aborted run leaves the folder as it was', () => {
    const dir = join(work, 'b');
    const out = new RunFolder(dir, { force: false, produces: ['x.json'], job: 'design', identity: newRunIdentity('b') });
    out.write('x.json', 'half');
    out.abort();
    expect(readdirSync(dir)).toEqual([]);
  });
  it('refuses existing outputs without --force before anything is computed, and keeps other files', () => {
    const dir = join(work, 'c');
    const first = new RunFolder(dir, { force: false, produces: ['x.json'], job: 'design', identity: newRunIdentity('c') });
    first.write('x.json', '1');
    first.commit();
    writeFileSync(join(dir, 'notes.txt'), 'mine');
    expect(userErrorOf(() => new RunFolder(dir, { force: false, produces: ['x.json'], job: 'design', identity: newRunIdentity('c') }))).toMatch(/--force/);
    const again = new RunFolder(dir, { force: true, produces: ['x.json'], job: 'design', identity: newRunIdentity('c') });
    again.write('x.json', '2');
    again.commit();
    expect(readFileSync(join(dir, 'notes.txt'), 'utf8')).toBe('mine');
  });
  it('locks the folder against a second writer while the first lives; a dead writer’s lock and staging are taken over', async () => {
    const dir = join(work, 'd');
    const id = newRunIdentity('d');
    const a = new RunFolder(dir, { force: true, produces: [], job: 'design', identity: id });
    expect(userErrorOf(() => new RunFolder(dir, { force: true, produces: [], job: 'verify', identity: id }))).toMatch(/being written by another isotrap process \(pid \d+\)/);
    a.abort();
    // a lock held by another live process
    const child = spawn(process.execPath, ['-e', 'setTimeout(() => {}, 20000)']);
    try {
      writeFileSync(join(dir, LOCK_FILE), String(child.pid));
      expect(userErrorOf(() => new RunFolder(dir, { force: true, produces: [], job: 'design', identity: id }))).toMatch(new RegExp(`pid ${child.pid}`));
    } finally {
      child.kill();
    }
    // a lock and a staging folder left by a process that has exited
    const dead = spawnSync(process.execPath, ['-e', '0']).pid;
    writeFileSync(join(dir, LOCK_FILE), String(dead));
    const stale = join(dir, `.isotrap-staging-${dead}-00ff`);
    mkdirSync(stale);
    const b = new RunFolder(dir, { force: true, produces: [], job: 'design', identity: id });
    expect(existsSync(stale)).toBe(false);
    b.abort();
    expect(existsSync(join(dir, LOCK_FILE))).toBe(false);
  });
  it('refuses a file changed after its run, and files of different configurations together', () => {
    const dir = join(work, 'e');
    const d = new RunFolder(dir, { force: true, produces: ['sequence.json'], job: 'design', identity: newRunIdentity('config one') });
    d.write('sequence.json', 'design of one');
    d.commit();
    const v = new RunFolder(dir, { force: true, produces: ['verify.json'], job: 'verify', identity: newRunIdentity('config two') });
    v.write('verify.json', 'verify of two');
    v.commit();
    expect(userErrorOf(() => requireOneConfig(dir, ['sequence.json', 'verify.json']))).toMatch(/holds results of different configurations/);
    writeFileSync(join(dir, 'sequence.json'), 'edited');
    expect(userErrorOf(() => verifiedEntries(dir, ['sequence.json']))).toMatch(/differs from the run that isotrap-run\.json records/);
    writeFileSync(join(dir, 'stray.json'), '{}');
    expect(userErrorOf(() => verifiedEntries(dir, ['stray.json']))).toMatch(/is not recorded in isotrap-run\.json/);
  });
});
