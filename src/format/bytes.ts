// Byte counts as a person reads them (binary units).

export function formatBytes(bytes: number): string {
  if (!Number.isFinite(bytes)) return 'more than can be counted';
  const units = ['B', 'KiB', 'MiB', 'GiB', 'TiB', 'PiB', 'EiB'];
  let v = bytes;
  let u = 0;
  while (v >= 1024 && u < units.length - 1) {
    v /= 1024;
    u++;
  }
  // Past EiB the mantissa alone says how far out of reach a problem is: 3.02e+9 EiB.
  if (v >= 1024) return `${v.toExponential(2)} ${units[u]}`;
  return `${v < 10 && u > 0 ? v.toFixed(2) : v < 100 && u > 0 ? v.toFixed(1) : Math.round(v)} ${units[u]}`;
}
