// Colours of the report, our own: eight line colours chosen so that every pair stays at least 30
// CIELAB units apart for normal vision and under simulated protanopia, deuteranopia and tritanopia,
// and a sequential map for heat maps whose lightness rises monotonically (readable in grey too).

/** Line colours (see the header): navy, amber, wine, green, violet, lavender, brown, mauve. */
export const PALETTE = [
  '#1d367e',
  '#e99a00',
  '#94134c',
  '#00be72',
  '#7703cc',
  '#8a88f1',
  '#694300',
  '#bb8eb7',
] as const;
/** Anchors of the sequential map, lightness L* = 11.5, 34.1, 53.2, 72.3, 93.0: indigo, blue, teal, green, cream. */
export const SEQUENTIAL_ANCHORS = ['#1b1a3f', '#2d4f8c', '#2f8c8a', '#8cc063', '#f7ecb0'] as const;

// Colour arithmetic (sRGB <-> CIELAB, D65), for the sequential map

function srgbToLinear(c: number): number {
  return c <= 0.04045 ? c / 12.92 : ((c + 0.055) / 1.055) ** 2.4;
}
function linearToSrgb(c: number): number {
  return c <= 0.0031308 ? 12.92 * c : 1.055 * c ** (1 / 2.4) - 0.055;
}
const WHITE = [0.95047, 1, 1.08883];

export function hexToRgb(hex: string): [number, number, number] {
  return [1, 3, 5].map((i) => parseInt(hex.slice(i, i + 2), 16) / 255) as [number, number, number];
}

function rgbToHex(rgb: number[]): string {
  return (
    '#' +
    rgb
      .map((c) =>
        Math.round(Math.min(1, Math.max(0, c)) * 255)
          .toString(16)
          .padStart(2, '0'),
      )
      .join('')
  );
}

/** CIELAB of a linear-light RGB triple (sRGB primaries, D65 white). */
export function linearRgbToLab(rgb: number[]): [number, number, number] {
  const [r, g, b] = rgb.map((v) => Math.min(1, Math.max(0, v)));
  const X = 0.4124564 * r + 0.3575761 * g + 0.1804375 * b;
  const Y = 0.2126729 * r + 0.7151522 * g + 0.072175 * b;
  const Z = 0.0193339 * r + 0.119192 * g + 0.9503041 * b;
  const f = (t: number) => (t > 216 / 24389 ? Math.cbrt(t) : ((24389 / 27) * t + 16) / 116);
  const fx = f(X / WHITE[0]);
  const fy = f(Y / WHITE[1]);
  const fz = f(Z / WHITE[2]);
  return [116 * fy - 16, 500 * (fx - fy), 200 * (fy - fz)];
}

export function hexToLab(hex: string): [number, number, number] {
  return linearRgbToLab(hexToRgb(hex).map(srgbToLinear));
}

function labToHex([L, a, b]: number[]): string {
  const fy = (L + 16) / 116;
  const fx = fy + a / 500;
  const fz = fy - b / 200;
  const inv = (t: number) => (t ** 3 > 216 / 24389 ? t ** 3 : (116 * t - 16) / (24389 / 27));
  const X = inv(fx) * WHITE[0];
  const Y = inv(fy) * WHITE[1];
  const Z = inv(fz) * WHITE[2];
  const r = 3.2404542 * X - 1.5371385 * Y - 0.4985314 * Z;
  const g = -0.969266 * X + 1.8760108 * Y + 0.041556 * Z;
  const bl = 0.0556434 * X - 0.2040259 * Y + 1.0572252 * Z;
  return rgbToHex([r, g, bl].map((c) => linearToSrgb(Math.min(1, Math.max(0, c)))));
}

const anchorLabs = SEQUENTIAL_ANCHORS.map(hexToLab);

/** The sequential map at t in [0, 1]: piecewise-linear in CIELAB between the anchors. */
export function sequentialColour(t: number): string {
  const u = Math.min(1, Math.max(0, Number.isFinite(t) ? t : 0)) * (anchorLabs.length - 1);
  const k = Math.min(anchorLabs.length - 2, Math.floor(u));
  const f = u - k;
  return labToHex(anchorLabs[k].map((v, i) => v + f * (anchorLabs[k + 1][i] - v)));
}
