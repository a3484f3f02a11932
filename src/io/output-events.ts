/**
 * What a command writes, as it happens: output folders announced, commits of run folders (start and end) and files
 * written in place, published on one node:diagnostics_channel. Publishing costs nothing without a subscriber; the
 * CLI's supervisor (cli/supervisor.ts) subscribes to tell, after an interrupt, what was kept, and holds an
 * interrupt back while a commit is under way (a subscriber of `commit-start` may block until it is allowed).
 */
import { channel } from 'node:diagnostics_channel';

export const OUTPUT_CHANNEL = 'isotrap:output';

export type OutputEvent =
  /** an output folder is about to be used (`dir` absolute, `shown` as the user named it) */
  | { kind: 'folder'; dir: string; shown: string }
  /** a run folder moves its staged files into place (start) and has written its manifest (end) */
  | { kind: 'commit-start' | 'commit-end'; dir: string; job: string; run: string; files: string[] }
  /** one file was written atomically at `path` */
  | { kind: 'file'; path: string };

const output = channel(OUTPUT_CHANNEL);

/** publish one event (synchronously, to every subscriber) */
export function publishOutput(event: OutputEvent): void {
  if (output.hasSubscribers) output.publish(event);
}

/** call `listener` with every event of this thread; returns the function that unsubscribes */
export function subscribeOutput(listener: (event: OutputEvent) => void): () => void {
  const handler = (message: unknown) => listener(message as OutputEvent);
  output.subscribe(handler);
  return () => output.unsubscribe(handler);
}
