// Every path of the tree that the documentation cites exists, and every link between the pages
// lands on a file and a heading that are there: a file moved or renamed fails here instead of
// sending a reader or a contributor to nothing.
import { existsSync, readdirSync, readFileSync } from 'node:fs';
import path from 'node:path';
import { fileURLToPath } from 'node:url';
import { describe, expect, it } from 'vitest';

const ROOT = path.resolve(path.dirname(fileURLToPath(import.meta.url)), '../..');
const PAGES = [
  'README.md',
  'DEVELOPERS.md',
  ...readdirSync(path.join(ROOT, 'docs'))
    .filter((name) => name.endsWith('.md'))
    .map((name) => `docs/${name}`),
];

/** A path from the top of the tree, e.g. `src/operator/pinned.ts`; not `dist/bin/...` nor `RUN/...`. */
const TREE_PATH = /(?<![\w./<-])((?:src|tests|bin|workers|bench|docs|examples)\/[\w./-]*)/g;
/** A Markdown link target: `[text](target)`. */
const LINK = /\]\(([^)\s]+)\)/g;

function read(page: string): string {
  return readFileSync(path.join(ROOT, page), 'utf8');
}

/** Paths cited in a page, without sentence punctuation after them. */
function citedPaths(text: string): string[] {
  const found = new Set<string>();
  for (const m of text.matchAll(TREE_PATH)) found.add(m[1].replace(/[.,;:]+$/, ''));
  return [...found].sort();
}

/** The anchors of a page's headings, as Markdown renderers make them (lower case, punctuation dropped). */
function anchors(text: string): Set<string> {
  const out = new Set<string>();
  for (const line of text.split('\n')) {
    const heading = /^#{1,6} (.*)$/.exec(line);
    if (!heading) continue;
    out.add(
      heading[1]
        .trim()
        .toLowerCase()
        .replace(/[^\p{L}\p{N} _-]/gu, '')
        .replace(/ /g, '-'),
    );
  }
  return out;
}

describe('paths and links in the documentation', () => {
  it.each(PAGES)('%s cites only paths that exist', (page) => {
    const missing = citedPaths(read(page)).filter((cited) => !existsSync(path.join(ROOT, cited)));
    expect(missing).toEqual([]);
  });

  it.each(PAGES)('%s links only to files and headings that exist', (page) => {
    const broken: string[] = [];
    for (const m of read(page).matchAll(LINK)) {
      const target = m[1];
      if (/^[a-z]+:/.test(target)) continue; // a web address
      const [file, anchor] = target.split('#');
      const linked = file === '' ? page : path.join(path.dirname(page), file);
      if (!existsSync(path.join(ROOT, linked))) broken.push(target);
      else if (anchor !== undefined && !anchors(read(linked)).has(anchor)) broken.push(target);
    }
    expect(broken).toEqual([]);
  });
});
