import { describe, expect, it } from 'vitest';
import { PALETTE, hexToRgb, linearRgbToLab, sequentialColour } from '../../../src/output/report/colours.js';

// Colour-vision-deficiency simulation in linear RGB (from memory): protanopia and deuteranopia
// after Vienot, Brettel and Mollon, Color Res. Appl. 24, 243 (1999); tritanopia after Machado,
// Oliveira and Fernandes, IEEE TVCG 15, 1291 (2009), severity 1.
const SIMULATIONS: Record<string, number[][]> = {
  normal: [
    [1, 0, 0],
    [0, 1, 0],
    [0, 0, 1],
  ],
  protan: [
    [0.11238, 0.88762, 0],
    [0.11238, 0.88762, 0],
    [0.00401, -0.00401, 1],
  ],
  deutan: [
    [0.29275, 0.70725, 0],
    [0.29275, 0.70725, 0],
    [-0.02234, 0.02234, 1],
  ],
  tritan: [
    [1.255528, -0.076749, -0.178779],
    [-0.078411, 0.930809, 0.147602],
    [0.004733, 0.691367, 0.3039],
  ],
};

function seenAs(hex: string, matrix: number[][]): [number, number, number] {
  // sRGB decoding (IEC 61966-2-1), then the simulation, then CIELAB.
  const linear = hexToRgb(hex).map((c) => (c <= 0.04045 ? c / 12.92 : ((c + 0.055) / 1.055) ** 2.4));
  return linearRgbToLab(matrix.map((row) => row[0] * linear[0] + row[1] * linear[1] + row[2] * linear[2]));
}

const deltaE = (a: number[], b: number[]) => Math.hypot(a[0] - b[0], a[1] - b[1], a[2] - b[2]); // CIE76

describe('colours readable for colour-blind readers', () => {
  it.each(Object.keys(SIMULATIONS))('line colours stay at least 30 CIELAB units apart (%s vision)', (name) => {
    const labs = PALETTE.map((c) => seenAs(c, SIMULATIONS[name]));
    for (let i = 0; i < labs.length; i++)
      for (let j = i + 1; j < labs.length; j++) expect(deltaE(labs[i], labs[j])).toBeGreaterThan(30);
    // Dark enough to read as thin lines on white (L* of white is 100).
    labs.forEach((lab) => expect(lab[0]).toBeLessThan(72));
  });

  it.each(Object.keys(SIMULATIONS))('the heat-map scale gets lighter all the way (%s vision)', (name) => {
    const lightness = Array.from({ length: 101 }, (_, k) => seenAs(sequentialColour(k / 100), SIMULATIONS[name])[0]);
    for (let k = 1; k < lightness.length; k++) expect(lightness[k]).toBeGreaterThan(lightness[k - 1]);
    expect(lightness[100] - lightness[0]).toBeGreaterThan(70);
  });
});
