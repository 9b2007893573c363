// How much of one ground space survives in the next (consecutive scan points, the demo's report).

/** Square root of the mean squared overlap between two sets of orthonormal vectors (see ScanRecord). */
export function groundSpaceOverlap(previous: Float64Array[], current: Float64Array[], isComplex: boolean): number {
  let sum = 0;
  for (const p of previous) {
    for (const q of current) {
      let re = 0;
      let im = 0;
      if (isComplex) {
        for (let t = 0; t < p.length; t += 2) {
          re += p[t] * q[t] + p[t + 1] * q[t + 1];
          im += p[t] * q[t + 1] - p[t + 1] * q[t];
        }
      } else {
        for (let t = 0; t < p.length; t++) re += p[t] * q[t];
      }
      sum += re * re + im * im;
    }
  }
  return Math.sqrt(sum / Math.max(previous.length, current.length));
}
