// Small HTML helpers shared by the report and its plots.

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
