// Loads the npm package `ebur128-wasm` (a BS.1770 / R 128 meter compiled to WebAssembly) as an
// independent reference. Its glue module imports the .wasm as an ES module, which Node 20 only
// allows behind a flag, so we instantiate the .wasm ourselves and hand it to a copy of the glue.
import { readFile, writeFile, mkdtemp } from 'node:fs/promises';
import { createRequire } from 'node:module';
import { tmpdir } from 'node:os';
import { dirname, join } from 'node:path';
import { pathToFileURL } from 'node:url';

export interface Ebur128Reference {
  integratedMono(sampleRate: number, samples: Float32Array): number;
  integratedStereo(sampleRate: number, left: Float32Array, right: Float32Array): number;
  truePeakMono(sampleRate: number, samples: Float32Array): number;
  truePeakStereo(sampleRate: number, left: Float32Array, right: Float32Array): number;
}

// Minimal WebAssembly typing: the ES lib set used here does not declare it.
declare const WebAssembly: {
  instantiate(bytes: Uint8Array, imports: object): Promise<{ instance: { exports: object } }>;
};

interface GlueModule {
  __setWasm(exports: object): void;
  ebur128_integrated_mono(sampleRate: number, samples: Float32Array): number;
  ebur128_integrated_stereo(sampleRate: number, left: Float32Array, right: Float32Array): number;
  ebur128_true_peak_mono(sampleRate: number, samples: Float32Array): number;
  ebur128_true_peak_stereo(sampleRate: number, left: Float32Array, right: Float32Array): number;
}

export async function loadEbur128Reference(): Promise<Ebur128Reference> {
  const packageDir = dirname(createRequire(import.meta.url).resolve('ebur128-wasm/package.json'));
  const glueSource = await readFile(join(packageDir, 'ebur128_wasm_bg.js'), 'utf8');
  const patched = glueSource.replace(
    /import \* as wasm from ['"]\.\/ebur128_wasm_bg\.wasm['"];?/,
    'let wasm; export function __setWasm(exports) { wasm = exports; }',
  );
  const dir = await mkdtemp(join(tmpdir(), 'earmark-ebur128-'));
  const gluePath = join(dir, 'glue.mjs');
  await writeFile(gluePath, patched);
  const glue = (await import(pathToFileURL(gluePath).href)) as GlueModule;
  const bytes = await readFile(join(packageDir, 'ebur128_wasm_bg.wasm'));
  const { instance } = await WebAssembly.instantiate(bytes, { './ebur128_wasm_bg.js': glue });
  glue.__setWasm(instance.exports);
  return {
    integratedMono: (rate, samples) => glue.ebur128_integrated_mono(rate, samples),
    integratedStereo: (rate, left, right) => glue.ebur128_integrated_stereo(rate, left, right),
    truePeakMono: (rate, samples) => glue.ebur128_true_peak_mono(rate, samples),
    truePeakStereo: (rate, left, right) => glue.ebur128_true_peak_stereo(rate, left, right),
  };
}
