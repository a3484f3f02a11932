import { createHash } from 'node:crypto';
import { mkdtempSync, readFileSync, writeFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { describe, expect, it, vi } from 'vitest';
import { main } from '../src/cli/main.ts';
import { parseConfig } from '../src/io/config.ts';
import { configIdentity, MANIFEST_FILE } from '../src/io/run-folder.ts';
import { runDesign, writeDesignOutputs } from '../src/jobs/design.ts';
import { renderFolder } from '../src/jobs/report.ts';
import { runVerify, writeVerifyOutputs } from '../src/jobs/verify.ts';
import { SMALL_SOLITON } from './fixtures.ts';

const CONFIG = SMALL_SOLITON('folder');

async function folder(): Promise<{ dir: string; config: ReturnType<typeof parseConfig> }> {
  const dir = mkdtempSync(join(tmpdir(), 'isotrap-report-folder-'));
  const config = parseConfig(CONFIG, 'folder.yaml', dir);
  const design = runDesign(config);
  const id = configIdentity(config);
  writeDesignOutputs(design, dir, false, id);
  writeVerifyOutputs(await runVerify(config, design, { traceSamples: 2 }), dir, false, id);
  return { dir, config };
}

describe('report renders only whole, consistent runs', () => {
  it('refuses a folder whose verify comes from another configuration, and a file changed after its run', async () => {
    const { dir, config } = await folder();
    expect(renderFolder(dir, { force: false, toolVersion: 'test' }).length).toBeGreaterThan(3);
    // `isotrap report DIR --figures slides` re-renders every figure as a 254 mm slide panel (style.ts)
    const out = vi.spyOn(process.stdout, 'write').mockImplementation(() => true);
    try {
      expect(await main(['node', 'isotrap', 'report', dir, '--force', '--figures', 'slides'])).toBe(0);
    } finally {
      out.mockRestore();
    }
    for (const f of ['spacetime.svg', 'excess.svg', 'fidelity.svg']) expect(readFileSync(join(dir, f), 'utf8')).toMatch(/^<svg[^>]* data-figure-size="slides"[^>]* width="254mm"/);
    // the same verify written again under another configuration's identity
    const other = parseConfig(CONFIG.replace('duration: 0.4', 'duration: 0.5'), 'other.yaml', dir);
    writeVerifyOutputs(await runVerify(other, runDesign(config), { traceSamples: 2 }), dir, true, configIdentity(other));
    expect(() => renderFolder(dir, { force: true, toolVersion: 'test' })).toThrow(/holds results of different configurations/);
    writeFileSync(join(dir, 'potential.npy'), 'tampered');
    expect(() => renderFolder(dir, { force: true, toolVersion: 'test' })).toThrow(/potential\.npy differs from the run that isotrap-run\.json records/);
  });
  it('records its files under the rendered run, and refuses a run committed while it rendered', async () => {
    const { dir, config } = await folder();
    const files = renderFolder(dir, { force: false, toolVersion: 'test' });
    const manifest = JSON.parse(readFileSync(join(dir, MANIFEST_FILE), 'utf8'));
    const html = manifest.files['report.html'];
    expect(html.job).toBe('report');
    expect(html.run).toBe(manifest.files['sequence.json'].run);
    expect(html.config_hash).toBe(manifest.files['verify.json'].config_hash);
    expect(files.length).toBe(Object.values(manifest.files).filter((e) => (e as { job: string }).job === 'report').length);
    // another run commits its verify after the report read the folder and before it takes the lock
    const other = parseConfig(CONFIG.replace('duration: 0.4', 'duration: 0.5'), 'other.yaml', dir);
    const otherVerify = await runVerify(other, runDesign(config), { traceSamples: 2 });
    const concurrent = {
      toolVersion: 'test',
      get force() {
        writeVerifyOutputs(otherVerify, dir, true, configIdentity(other));
        return true;
      },
    };
    expect(() => renderFolder(dir, concurrent)).toThrow(/verify\.json.*changed while the report was rendered/);
  });
  it('reads traces only from inside the folder', async () => {
    const { dir } = await folder();
    // rewrite traces.file to point outside, and record the new bytes so that only the path check can refuse it
    const vp = join(dir, 'verify.json');
    const text = readFileSync(vp, 'utf8').replace('"file": "traces.npy"', '"file": "../../etc/passwd"');
    writeFileSync(vp, text);
    const mp = join(dir, MANIFEST_FILE);
    const manifest = JSON.parse(readFileSync(mp, 'utf8'));
    manifest.files['verify.json'].sha256 = createHash('sha256').update(text).digest('hex');
    writeFileSync(mp, JSON.stringify(manifest));
    expect(() => renderFolder(dir, { force: true, toolVersion: 'test' })).toThrow(/traces\.file = "\.\.\/\.\.\/etc\/passwd" is not allowed: must name a file inside the folder/);
  });
});
