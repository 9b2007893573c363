// The NumPy array file format, version 1.0, written by hand: NumPy's NEP 1 ("A simple file format
// for NumPy arrays") and the numpy.lib.format module documentation define it:
//   magic "\x93NUMPY", major version 1, minor version 0, a little-endian uint16 header length,
//   an ASCII Python dict literal {'descr': ..., 'fortran_order': ..., 'shape': (...), } padded
//   with spaces and ended by '\n' so that the data starts at a multiple of 64 bytes,
//   then the data in C order (last index fastest).
// '<f8' is a little-endian float64, '<c16' a little-endian complex128 (real part, then imaginary).

const MAGIC = [0x93, 0x4e, 0x55, 0x4d, 0x50, 0x59]; // \x93NUMPY
const PREAMBLE_BYTES = 10; // magic, two version bytes, the uint16 header length
const ALIGNMENT = 64;

export type NpyDescr = '<f8' | '<c16';

/** The file's bytes before the data: magic, version 1.0, header dict padded to 64 bytes. */
export function npyHeader(descr: NpyDescr, shape: number[]): Uint8Array {
  const dims = shape.length === 1 ? `(${shape[0]},)` : `(${shape.join(', ')})`;
  const dict = `{'descr': '${descr}', 'fortran_order': False, 'shape': ${dims}, }`;
  const unpadded = PREAMBLE_BYTES + dict.length + 1;
  const total = Math.ceil(unpadded / ALIGNMENT) * ALIGNMENT;
  const headerLength = total - PREAMBLE_BYTES;
  if (headerLength > 0xffff) throw new RangeError(`a .npy 1.0 header holds at most 65535 bytes, not ${headerLength}`);
  const bytes = new Uint8Array(total);
  bytes.set(MAGIC, 0);
  bytes[6] = 1;
  bytes[7] = 0;
  bytes[8] = headerLength & 0xff;
  bytes[9] = headerLength >> 8;
  const text = dict + ' '.repeat(total - unpadded) + '\n';
  for (let i = 0; i < text.length; i++) bytes[PREAMBLE_BYTES + i] = text.charCodeAt(i);
  return bytes;
}

/** Size of a .npy file of float64 (8 bytes) or complex128 (16 bytes) entries: header plus data. */
export function npyFileBytes(descr: NpyDescr, shape: number[]): number {
  const entries = shape.reduce((a, b) => a * b, 1);
  return npyHeader(descr, shape).length + entries * (descr === '<c16' ? 16 : 8);
}

/** Whether this machine stores doubles little-endian, as '<f8' and '<c16' data must be. */
export function littleEndianHost(): boolean {
  return new Uint8Array(new Float64Array([1]).buffer)[7] === 0x3f;
}
