// Compiles src/simd/vector.wat with wabt (a development dependency) to the base64 text that
// src/simd/vectorWasm.ts carries, so the shipped kernels can be checked against their source.
// `node tests/support/wat.mjs --write` (npm run wasm) regenerates that file.
import fs from 'node:fs';
import wabtInit from 'wabt';

export const WAT_PATH = new URL('../../src/simd/vector.wat', import.meta.url);
export const GENERATED_PATH = new URL('../../src/simd/vectorWasm.ts', import.meta.url);

/** @returns {Promise<string>} the module's bytes in base64 */
export async function compiledVectorKernels() {
  const wabt = await wabtInit();
  const parsed = wabt.parseWat('vector.wat', fs.readFileSync(WAT_PATH, 'utf8'), {
    simd: true,
    threads: true,
    bulk_memory: true,
  });
  const { buffer } = parsed.toBinary({});
  parsed.destroy();
  return Buffer.from(buffer).toString('base64');
}

/** @param {string} base64 */
export function generatedSource(base64) {
  const lines = base64.match(/.{1,96}/g) ?? [];
  return [
    '// Generated from vector.wat by `npm run wasm` (wabt); tests/linalg/vectorKernels.test.ts checks that',
    '// it matches its source. Do not edit by hand.',
    'export const VECTOR_WASM_BASE64 =',
    lines.map((l) => `  '${l}'`).join(' +\n') + ';',
    '',
  ].join('\n');
}

if (process.argv.includes('--write')) {
  fs.writeFileSync(GENERATED_PATH, generatedSource(await compiledVectorKernels()));
  console.log(`wrote ${GENERATED_PATH.pathname}`);
}
