// Progress of long runs on stderr: a bar on a terminal, one line per step of news when stderr is
// a file or a pipe, nothing with --quiet. The runs report through their reporter interfaces;
// drawing is the command line's.

import cliProgress from 'cli-progress';
import type { EvolveReporter } from '../src/dynamics/evolveRun.js';
import { compactDuration } from '../src/format/durations.js';
import { fmt, fmtSmall, plural } from '../src/format/tables.js';
import { formatParams } from '../src/scan/plan.js';
import type { ScanReporter } from '../src/scan/runner.js';

type ProgressMode = 'bar' | 'lines' | 'none';

function progressMode(quiet: boolean | undefined): ProgressMode {
  if (quiet) return 'none';
  return process.stderr.isTTY ? 'bar' : 'lines';
}

const writeLine = (line: string): void => void process.stderr.write(line + '\n');

function newBar(format: string): cliProgress.SingleBar {
  return new cliProgress.SingleBar(
    { stream: process.stderr, format, hideCursor: true, clearOnComplete: false, fps: 5 },
    cliProgress.Presets.shades_classic,
  );
}

/** A scan's messages and progress; the remaining time is weighted by estimated cost, as the largest points run first. */
export function scanReporter(quiet: boolean | undefined): ScanReporter {
  const mode = progressMode(quiet);
  if (mode === 'none')
    return { note: () => undefined, start: () => undefined, recorded: () => undefined, stop: () => undefined };
  let started = 0;
  let remainingCost = 0;
  let costDone = 0;
  const elapsed = (): number => (performance.now() - started) / 1000;
  // Cost-weighted: largest points run first, so a count-based estimate would be far too pessimistic.
  const eta = (): number => (costDone > 0 ? (elapsed() * (remainingCost - costDone)) / costDone : NaN);
  const begin = (cost: number): void => {
    started = performance.now();
    remainingCost = cost;
  };
  if (mode === 'lines') {
    let width = 0;
    return {
      note: writeLine,
      start(counts, cost) {
        begin(cost);
        width = String(counts.total).length;
      },
      recorded(r, { total, done, failed }, cost) {
        costDone += cost;
        const head = `[${String(done + failed).padStart(width)}/${total}] #${r.index} ${formatParams(r.params)}`;
        const tail =
          r.status === 'done'
            ? `done E0=${r.result!.energies[0].toPrecision(10)} products=${r.iterations}${r.warm_start ? ' warm' : ''} ${r.seconds.toFixed(2)}s`
            : `FAILED ${r.error}`;
        writeLine(`${head} ${tail}  (eta ${compactDuration(eta())})`);
      },
      stop: () => undefined,
    };
  }
  const bar = newBar(' {bar} {value}/{total} points | {failed} failed | elapsed {elapsedText} | eta {etaText}');
  let timer: ReturnType<typeof setInterval> | null = null;
  return {
    note: writeLine,
    start({ total, done, failed }, cost) {
      begin(cost);
      bar.start(total, done + failed, { failed, elapsedText: '0s', etaText: '?' });
      timer = setInterval(() => bar.update({ elapsedText: compactDuration(elapsed()) }), 1000);
      timer.unref();
    },
    recorded(_record, { done, failed }, cost) {
      costDone += cost;
      bar.update(done + failed, { failed, elapsedText: compactDuration(elapsed()), etaText: compactDuration(eta()) });
    },
    stop() {
      if (timer) clearInterval(timer);
      bar.stop();
    },
  };
}

/** An evolve run's messages and progress: recorded times over every trace. */
export function evolveReporter(quiet: boolean | undefined): EvolveReporter {
  const mode = progressMode(quiet);
  const nothing = (): void => undefined;
  if (mode === 'none')
    return { note: nothing, start: nothing, recorded: nothing, running: nothing, traceDone: nothing, stop: nothing };
  if (mode === 'lines')
    return {
      note: writeLine,
      start: nothing,
      recorded: nothing,
      running(label, time, end, recorded, count) {
        writeLine(`${label}: t = ${fmt(time, 6)} of ${fmt(end, 6)}, ${recorded}/${count} times`);
      },
      traceDone(label, stats) {
        writeLine(
          `${label}: done, ${plural(stats.steps, 'step')}, ${plural(stats.matvecs, 'product')}, error bound ${fmtSmall(stats.error_bound, 1)}`,
        );
      },
      stop: nothing,
    };
  const bar = newBar(' {bar} {value}/{total} times | t = {t} of {end}');
  return {
    note: writeLine,
    start(done, total) {
      bar.start(Math.max(1, total), Math.min(done, total), { t: '0', end: '?' });
    },
    recorded(done, total, time, end) {
      bar.update(Math.min(done, total), { t: fmt(time, 5), end: fmt(end, 5) });
    },
    running: nothing,
    traceDone: nothing,
    stop: () => bar.stop(),
  };
}
