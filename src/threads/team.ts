// The hand-off both shared-memory teams use (the split matrix-vector product in operator/threaded.ts and
// the solver's vector kernels in solver/team.ts): the calling thread writes a command into shared
// control words, bumps a generation counter, does its own share, and waits until every helper
// thread has counted itself done. Everything stays synchronous, so callers look single-threaded.
// Also the two small pieces every thread helper needs: where its script is, and a spin lock.

import { Worker, type TransferListItem } from 'node:worker_threads';

/** A worker entry point in workers/ (from dist/src/threads; tests that load src/*.ts use the built one). */
export function workerScript(name: string): URL {
  return new URL(
    import.meta.url.endsWith('.ts') ? `../../dist/workers/${name}.js` : `../../workers/${name}.js`,
    import.meta.url,
  );
}

/** Runs `body` holding the spin lock in words[at] (0 free, 1 held); for critical sections of a few instructions. */
export function spinLocked<T>(words: Int32Array, at: number, body: () => T): T {
  while (Atomics.compareExchange(words, at, 0, 1) !== 0) {
    /* held for a few instructions by another thread */
  }
  try {
    return body();
  } finally {
    Atomics.store(words, at, 0);
  }
}

const GENERATION = 0; // bumped by the caller for every command
const DONE = 1; // helpers that finished the current command
const READY = 2; // helpers that have started
const COMMAND = 3;
const FAILED = 4; // a helper could not set itself up
/** Control words the hand-off uses; a team's own parameters start at this index. */
export const TEAM_WORDS = 5;
const STOP = -1;

export class SyncTeam {
  /** The control words, TEAM_WORDS of them first, then the team's own parameters. */
  readonly control: Int32Array;
  private readonly workers: Worker[] = [];
  private closed = false;

  /**
   * Starts `threads - 1` helpers running `script` (which calls `serveTeam`) and waits for them
   * without the event loop. Throws if they do not start within 30 s or one reports a failure.
   */
  constructor(
    script: URL,
    threads: number,
    words: number,
    workerData: (thread: number, control: Int32Array) => unknown,
    transferList: (thread: number) => TransferListItem[] = () => [],
  ) {
    this.control = new Int32Array(new SharedArrayBuffer(4 * (TEAM_WORDS + words)));
    for (let t = 1; t < threads; t++) {
      const worker = new Worker(script, { workerData: workerData(t, this.control), transferList: transferList(t) });
      worker.unref();
      this.workers.push(worker);
    }
    const deadline = Date.now() + 30_000;
    let ready;
    while ((ready = Atomics.load(this.control, READY)) < this.workers.length) {
      if (Date.now() > deadline) {
        this.close();
        throw new Error('worker threads did not start within 30 s');
      }
      Atomics.wait(this.control, READY, ready, 100);
    }
    if (Atomics.load(this.control, FAILED) !== 0) {
      this.close();
      throw new Error('a worker thread could not set itself up');
    }
  }

  /** Every helper runs `command` on its share while this thread runs `own`; returns when all are done. */
  run(command: number, own: () => void): void {
    const c = this.control;
    Atomics.store(c, COMMAND, command);
    Atomics.store(c, DONE, 0);
    Atomics.add(c, GENERATION, 1);
    Atomics.notify(c, GENERATION);
    try {
      own();
    } finally {
      // Even when this thread's share throws: the helpers must be done before the next command
      // resets what they read.
      const helpers = this.workers.length;
      let done;
      while ((done = Atomics.load(c, DONE)) < helpers) Atomics.wait(c, DONE, done);
    }
  }

  close(): void {
    if (this.closed) return;
    this.closed = true;
    Atomics.store(this.control, COMMAND, STOP);
    Atomics.add(this.control, GENERATION, 1);
    Atomics.notify(this.control, GENERATION);
    for (const w of this.workers) void w.terminate();
  }
}

/**
 * The loop a helper runs: report ready (or failed, when `ready` is false, and leave), then wait
 * for each command, do its share with `work`, count itself done, until told to stop.
 */
export function serveTeam(control: Int32Array, ready: boolean, work: (command: number) => void): void {
  let generation = Atomics.load(control, GENERATION);
  if (!ready) Atomics.store(control, FAILED, 1);
  Atomics.add(control, READY, 1);
  Atomics.notify(control, READY);
  if (!ready) return;
  for (;;) {
    Atomics.wait(control, GENERATION, generation);
    generation = Atomics.load(control, GENERATION);
    const command = Atomics.load(control, COMMAND);
    if (command === STOP) return;
    work(command);
    Atomics.add(control, DONE, 1);
    Atomics.notify(control, DONE);
  }
}

/**
 * One team of helper threads kept for call after call (a sector-by-sector solve runs dozens of
 * solves): started on first use, restarted only when the thread count changes, and not tried
 * again once it failed to start (callers then work on their own thread).
 */
export class KeptTeam<T extends { readonly threads: number; close(): void }> {
  private team: T | null = null;
  private failed = false;

  constructor(private readonly start: (threads: number) => T | null) {}

  for(threads: number): T | null {
    if (threads < 2 || this.failed) return null;
    if (this.team?.threads !== threads) {
      this.team?.close();
      this.team = this.start(threads);
      this.failed = this.team === null;
    }
    return this.team;
  }

  close(): void {
    this.team?.close();
    this.team = null;
  }
}
