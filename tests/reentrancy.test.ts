import { describe, expect, it } from 'vitest';
import { Worker } from 'node:worker_threads';
import { runAll, runFlow, runPropagation, stepper } from './reference/reentrancy-jobs.ts';

/**
 * Re-entrancy: two propagations and two flow integrations interleaved in one process, and run in two worker
 * threads, give results bitwise identical to each run alone (determinism of a pure computation: common practice).
 * A scheme or integrator that kept scratch or caches in module state would mix the runs.
 */
function bitwiseEqual(a: readonly Float64Array[], b: readonly Float64Array[]): boolean {
  if (a.length !== b.length) return false;
  for (let i = 0; i < a.length; i++) {
    const x = new Uint8Array(a[i].buffer, a[i].byteOffset, a[i].byteLength);
    const y = new Uint8Array(b[i].buffer, b[i].byteOffset, b[i].byteLength);
    if (x.length !== y.length || x.some((v, j) => v !== y[j])) return false;
  }
  return true;
}

/** a worker thread (tests/reference/reentrancy-worker.mjs registers tsx, then runs `runAll`) */
function inWorker(variant: number): Promise<{ propagation: Float64Array[]; flow: Float64Array[] }> {
  const worker = new Worker(new URL('./reference/reentrancy-worker.mjs', import.meta.url), { workerData: { variant } });
  return new Promise((resolve, reject) => {
    worker.once('message', (m: { propagation: Float64Array[]; flow: Float64Array[] }) => {
      resolve(m);
      void worker.terminate();
    });
    worker.once('error', reject);
  });
}

describe('re-entrancy of the propagator and the flow integrator', () => {
  const alone = [0, 1].map((v) => runAll(v));

  it('two propagators stepped alternately give the results of each stepped alone', () => {
    const solo = [0, 1].map((v) => {
      const s = stepper(v);
      while (s.next());
      return s.states();
    });
    const a = stepper(0);
    const b = stepper(1);
    let more = true;
    while (more) more = a.next() && b.next();
    while (b.next());
    expect(bitwiseEqual(a.states(), solo[0])).toBe(true);
    expect(bitwiseEqual(b.states(), solo[1])).toBe(true);
    expect(bitwiseEqual(solo[0], solo[1])).toBe(false); // the variants differ, so a mix-up would show
  });

  it('a propagation run inside the sample callback of another, and a flow inside the progress callback of another', () => {
    let inner: Float64Array[] = [];
    const outer = runPropagation(0, () => {
      if (inner.length === 0) inner = runPropagation(1);
    });
    expect(bitwiseEqual(outer, alone[0].propagation)).toBe(true);
    expect(bitwiseEqual(inner, alone[1].propagation)).toBe(true);
    let innerFlow: Float64Array[] = [];
    const outerFlow = runFlow(0, () => {
      if (innerFlow.length === 0) innerFlow = runFlow(1);
    });
    expect(bitwiseEqual(outerFlow, alone[0].flow)).toBe(true);
    expect(bitwiseEqual(innerFlow, alone[1].flow)).toBe(true);
  });

  it('two worker threads give the results of the main thread', async () => {
    const [w0, w1] = await Promise.all([inWorker(0), inWorker(1)]);
    expect(bitwiseEqual(w0.propagation, alone[0].propagation)).toBe(true);
    expect(bitwiseEqual(w1.propagation, alone[1].propagation)).toBe(true);
    expect(bitwiseEqual(w0.flow, alone[0].flow)).toBe(true);
    expect(bitwiseEqual(w1.flow, alone[1].flow)).toBe(true);
  });
});
