// The README's JSON examples list every observable the catalogue says each output holds: a new
// observable without documentation fails here. Each example is marked for the output it shows by
// an HTML comment just above its code block, `<!-- observables: solve | record | summary | trace -->`
// (invisible when the page is rendered); an output may have several (pinned and itinerant kinds).
import { readFileSync } from 'node:fs';
import path from 'node:path';
import { fileURLToPath } from 'node:url';
import { describe, expect, it } from 'vitest';
import { OBSERVABLES } from '../../src/observables/catalogue.js';

const ROOT = path.resolve(path.dirname(fileURLToPath(import.meta.url)), '../..');
const README = readFileSync(path.join(ROOT, 'README.md'), 'utf8');

type Output = 'solve' | 'record' | 'summary' | 'trace';

/** The JSON code blocks marked for each output. */
function examples(): Map<Output, string[]> {
  const out = new Map<Output, string[]>();
  for (const m of README.matchAll(/<!-- observables: (\w+) -->\n```json\n([\s\S]*?)\n```/g)) {
    const output = m[1] as Output;
    out.set(output, [...(out.get(output) ?? []), m[2]]);
  }
  return out;
}

/** The keys written in a block, `"name":`, with how often each occurs. */
function keys(blocks: string[]): Map<string, number> {
  const count = new Map<string, number>();
  for (const block of blocks)
    for (const m of block.matchAll(/"([\w/]+)"\s*:/g)) count.set(m[1], (count.get(m[1]) ?? 0) + 1);
  return count;
}

// What each output holds, from the catalogue: solved points (solve --json, a run's records and
// summary --json all carry the record's `observables`), and time traces (evolve --json, trace --json).
const RECORD = OBSERVABLES.filter((o) => o.record !== undefined);
const EXPECTED: Record<Output, string[]> = {
  solve: RECORD.map((o) => o.name),
  record: RECORD.map((o) => o.name),
  summary: RECORD.map((o) => o.name),
  trace: OBSERVABLES.filter((o) => o.trace !== undefined).map((o) => o.name),
};

describe("the README's JSON examples", () => {
  const found = examples();

  it.each(Object.keys(EXPECTED) as Output[])('%s: every observable the output holds appears', (output) => {
    const blocks = found.get(output) ?? [];
    expect(blocks.length, `no example marked <!-- observables: ${output} -->`).toBeGreaterThan(0);
    const present = keys(blocks);
    const missing = EXPECTED[output].filter((name) => !present.has(name));
    expect(missing, `observables missing from the ${output} JSON examples of README.md`).toEqual([]);
  });

  it('summary --json: scalar observables also appear at top level', () => {
    // Inside `observables` and beside it: at least twice in the summary examples.
    const present = keys(found.get('summary') ?? []);
    for (const o of RECORD.filter((r) => r.shape === 'scalar'))
      expect(present.get(o.name) ?? 0, o.name).toBeGreaterThanOrEqual(2);
  });

  it("names no observable the catalogue does not know inside an example's observables", () => {
    const known = new Set(OBSERVABLES.map((o) => o.name));
    for (const blocks of found.values())
      for (const block of blocks)
        for (const inner of block.matchAll(/"observables":\s*\{([\s\S]*?)\}\s*(?:,|\}|$)/g)) {
          // Top-level keys of the observables object only (entries of an entanglement cut are nested).
          const names = [...inner[1].replace(/\[[^\]]*\]/g, '[]').matchAll(/"([\w/]+)"\s*:/g)].map((m) => m[1]);
          for (const name of names) expect(known.has(name), `${name} is not in the catalogue`).toBe(true);
        }
  });
});
