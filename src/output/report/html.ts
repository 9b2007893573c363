// Small HTML helpers shared by the reports (of scans and of time traces) and their plots.

import { REPORT_STYLE } from './style.js';

/** Text made safe inside HTML elements and double-quoted attributes. */
export function esc(text: string): string {
  return text.replace(/&/g, '&amp;').replace(/</g, '&lt;').replace(/>/g, '&gt;').replace(/"/g, '&quot;');
}

/** A coordinate for SVG. */
export function num(x: number): string {
  // Two decimals of a pixel are plenty and keep the file small.
  return (Math.round(x * 100) / 100).toString();
}

/** One report section: its heading, an optional intro and its figures; empty when every figure is. */
export function section(id: string, title: string, body: string[], intro?: string): string {
  const content = body.filter((b) => b !== '');
  if (content.length === 0) return '';
  return `<section id="${id}"><h2>${esc(title)}</h2>${intro ? `<p class="intro">${esc(intro)}</p>` : ''}<div class="figures">${content.join('\n')}</div></section>`;
}

/**
 * A whole report page: the title, lines about what it shows, notes, a table of contents of its
 * sections (their ids and headings) and the sections; the style inline, nothing fetched.
 */
export function reportDocument(page: { title: string; about: string[]; notes: string[]; sections: string[] }): string {
  const toc = page.sections
    .map((s) => /<section id="([^"]+)"><h2>([^<]+)<\/h2>/.exec(s))
    .filter((m): m is RegExpExecArray => m !== null)
    .map((m) => `<a href="#${m[1]}">${m[2]}</a>`)
    .join(' · ');
  return `<!DOCTYPE html>
<html lang="en">
<head>
<meta charset="utf-8">
<meta name="viewport" content="width=device-width, initial-scale=1">
<title>${esc(page.title)}</title>
<style>${REPORT_STYLE}</style>
</head>
<body>
<header>
<h1>${esc(page.title)}</h1>
${page.about.map((a) => `<p class="about">${esc(a)}</p>`).join('\n')}
${page.notes.map((n) => `<p class="note">${esc(n)}</p>`).join('\n')}
<nav>${toc}</nav>
</header>
<main>
${page.sections.join('\n')}
</main>
<footer><p>Written by rungchain. Self-contained: no scripts, nothing fetched.</p></footer>
</body>
</html>
`;
}
