/** The .wasm.ts text `npm run kernels` writes for a .wat file in src/analysis/kernels. */
export function kernelModuleText(watFile: string): Promise<string>;
