// Faults for end-to-end tests, installed in the built command line by preloading this module
// (`node --import`, see FAULTS in tests/support/cli.ts). Node preloads it in every worker thread
// too, so scan workers get the faults. Each fault is chosen by an environment variable of the
// spawned process; without them this module does nothing.
//
//   RUNGCHAIN_TEST_WORKER_EXIT_AT=5        a scan worker exits abruptly (as on running out of memory) at point 5
//   RUNGCHAIN_TEST_POINT_DELAY_MS=150      each point first waits 150 ms; "150@0-4": only points 0 to 4
//   RUNGCHAIN_TEST_POINT_ALLOCATE=heap:300@5
//                                          at point 5 the worker first takes 300 MiB of JS heap ("heap")
//                                          or of typed arrays ("buffer", held for up to 10 s so the
//                                          scan's memory watch sees it), then solves the point as usual
//   RUNGCHAIN_TEST_DISK_BYTES=300          the run files of the process may take 300 bytes in all (a full disk)
//
// Delays let tests that interrupt a scan part way (kill, Ctrl-C, a second writer) not race a scan
// that finishes too fast, and tests of uneven work make some points slow.
import { isMainThread } from 'node:worker_threads';

const env = process.env;
const dist = (file) => new URL(`../../dist/src/${file}`, import.meta.url).href;

const exitAt = env.RUNGCHAIN_TEST_WORKER_EXIT_AT;
const delay = /^(\d+)(?:@(\d+)-(\d+))?$/.exec(env.RUNGCHAIN_TEST_POINT_DELAY_MS ?? '');
const allocate = /^(heap|buffer):(\d+)@(\d+)$/.exec(env.RUNGCHAIN_TEST_POINT_ALLOCATE ?? '');

/** @param {number} ms */
function sleep(ms) {
  Atomics.wait(new Int32Array(new SharedArrayBuffer(4)), 0, 0, ms);
}

/** @param {number} index */
function delayFor(index) {
  if (!delay) return 0;
  const [, ms, from, to] = delay;
  return from === undefined || (index >= Number(from) && index <= Number(to)) ? Number(ms) : 0;
}

/** @param {number} index @returns {unknown[]} */
function allocationFor(index) {
  if (!allocate || Number(allocate[3]) !== index) return [];
  const held = [];
  const mib = Number(allocate[2]);
  if (allocate[1] === 'heap') {
    // A JS array of doubles holds them unboxed: 2^17 of them are 1 MiB of heap.
    for (let m = 0; m < mib; m++) held.push(new Array(1 << 17).fill(m + 0.5));
  } else {
    for (let m = 0; m < mib; m += 16) held.push(new Uint8Array(16 << 20).fill(1));
    sleep(10_000);
  }
  return held;
}

// Scan tasks run in worker threads only.
if (!isMainThread && (exitAt !== undefined || delay || allocate)) {
  const { setScanTaskHooks } = await import(dist('scan/task.js'));
  /** @type {unknown[]} */
  let held = [];
  setScanTaskHooks({
    /** @param {number} index */
    pointStarting(index) {
      if (exitAt !== undefined && Number(exitAt) === index) process.exit(70);
      const ms = delayFor(index);
      if (ms > 0) sleep(ms);
      held = allocationFor(index);
    },
    pointFinished() {
      held = [];
    },
  });
}

if (env.RUNGCHAIN_TEST_DISK_BYTES !== undefined) {
  const { limitRunFileBytes } = await import(dist('runs/runFiles.js'));
  limitRunFileBytes(Number(env.RUNGCHAIN_TEST_DISK_BYTES));
}
