// How a line of a plot looks: its colour, dash pattern and marker shape, so that lines stay apart
// for colour-blind readers and in grey too.

import { PALETTE } from './colours.js';
import { num } from './html.js';

const DASHES = ['', '7 3', '2 3', '9 3 2 3', '4 4', '1 2', '12 4', '6 2 2 2 2 2'];
const MARKERS = ['circle', 'square', 'triangle', 'diamond', 'down', 'cross', 'plus', 'star'] as const;

/** SVG path of one marker of the given shape and radius centred at (x, y). */
export function markerPath(shape: (typeof MARKERS)[number], x: number, y: number, r: number): string {
  const p = (dx: number, dy: number) => `${num(x + dx)},${num(y + dy)}`;
  switch (shape) {
    case 'circle':
      return `M${p(-r, 0)}A${r},${r} 0 1,0 ${p(r, 0)}A${r},${r} 0 1,0 ${p(-r, 0)}Z`;
    case 'square':
      return `M${p(-r, -r)}L${p(r, -r)}L${p(r, r)}L${p(-r, r)}Z`;
    case 'triangle':
      return `M${p(0, -r * 1.2)}L${p(r * 1.1, r * 0.8)}L${p(-r * 1.1, r * 0.8)}Z`;
    case 'diamond':
      return `M${p(0, -r * 1.3)}L${p(r * 1.1, 0)}L${p(0, r * 1.3)}L${p(-r * 1.1, 0)}Z`;
    case 'down':
      return `M${p(0, r * 1.2)}L${p(r * 1.1, -r * 0.8)}L${p(-r * 1.1, -r * 0.8)}Z`;
    case 'cross':
      return `M${p(-r, -r)}L${p(r, r)}M${p(-r, r)}L${p(r, -r)}`;
    case 'plus':
      return `M${p(-r * 1.2, 0)}L${p(r * 1.2, 0)}M${p(0, -r * 1.2)}L${p(0, r * 1.2)}`;
    case 'star':
      return `M${p(-r, -r)}L${p(r, r)}M${p(-r, r)}L${p(r, -r)}M${p(-r * 1.3, 0)}L${p(r * 1.3, 0)}`;
  }
}

/** The look of palette slot `slot` (any integer: slots wrap around the palette). */
export function styleOf(slot: number): {
  colour: string;
  dash: string;
  marker: (typeof MARKERS)[number];
  filled: boolean;
} {
  const k = ((slot % PALETTE.length) + PALETTE.length) % PALETTE.length;
  const marker = MARKERS[k];
  return {
    colour: PALETTE[k],
    dash: DASHES[k],
    marker,
    filled: marker !== 'cross' && marker !== 'plus' && marker !== 'star',
  };
}

/** A legend entry's sample: the line with its dash pattern and marker, or the marker alone. */
export function legendSwatch(slot: number, pointsOnly = false): string {
  const s = styleOf(slot);
  const line = pointsOnly
    ? ''
    : `<line x1="2" y1="6" x2="30" y2="6" stroke="${s.colour}" stroke-width="2"${s.dash ? ` stroke-dasharray="${s.dash}"` : ''}/>`;
  return `<svg class="swatch" width="32" height="12" aria-hidden="true">${line}<path d="${markerPath(s.marker, 16, 6, 3.5)}" fill="${s.filled ? s.colour : 'none'}" stroke="${s.colour}" stroke-width="1.4"/></svg>`;
}
