/**
 * The worker-thread side of cli/supervisor.ts: the command runs here (commander and the jobs, unchanged) while
 * the main thread owns the signals.
 *
 *  - stdout and stderr are written synchronously to file descriptors 1 and 2, in order and at once even inside
 *    synchronous loops (a worker's own streams only reach the terminal when its event loop turns), and report
 *    whether they are a terminal and its width as the main thread saw them, so progress bars draw as before;
 *  - what the command writes (io/output-events.ts) is forwarded to the main thread;
 *  - a commit enters the shared gate before its first rename and leaves it after its manifest: once the main
 *    thread has closed the gate, a commit waits here until the thread is terminated, so a folder is never left
 *    half committed.
 */
import { Writable } from 'node:stream';
import { subscribeOutput } from '../io/output-events.ts';
import { GATE_COMMITTING, GATE_IDLE, GATE_STOPPING, writeFully, type StreamInfo, type WorkerInput } from './supervisor.ts';

/** a synchronous stream on a file descriptor that answers isTTY and columns as `info` says */
class DescriptorStream extends Writable {
  readonly isTTY: boolean;
  readonly columns: number | undefined;
  constructor(
    readonly fd: number,
    info: StreamInfo,
  ) {
    super({ decodeStrings: true });
    this.isTTY = info.tty;
    this.columns = info.columns;
  }

  override _write(chunk: Buffer, _encoding: BufferEncoding, done: (err?: Error | null) => void): void {
    try {
      writeFully(this.fd, chunk);
      done();
    } catch (err) {
      done(err as Error);
    }
  }
}

/** block until the gate lets a commit start (it never does once the main thread has closed it) */
export function enterCommit(gate: Int32Array): void {
  while (Atomics.compareExchange(gate, 0, GATE_IDLE, GATE_COMMITTING) !== GATE_IDLE) Atomics.wait(gate, 0, GATE_STOPPING);
}

/** run the command line `input.argv` in this worker thread; returns its exit code */
export async function runCommandThread(input: WorkerInput): Promise<number> {
  Object.defineProperty(process, 'stdout', { value: new DescriptorStream(1, input.stdout), configurable: true });
  Object.defineProperty(process, 'stderr', { value: new DescriptorStream(2, input.stderr), configurable: true });
  const gate = new Int32Array(input.gate);
  subscribeOutput((event) => {
    if (event.kind === 'commit-start') enterCommit(gate);
    input.events.postMessage(event);
    if (event.kind === 'commit-end') Atomics.store(gate, 0, GATE_IDLE);
  });
  const { main } = await import('./main.ts');
  try {
    return await main(input.argv);
  } finally {
    input.events.close();
  }
}
