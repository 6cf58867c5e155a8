/** The kernel folders: src/analysis/kernels and src/decode/kernels. */
export const KERNEL_DIRS: string[];
/** The .wasm.ts text `npm run kernels` writes for a .wat file (a path). */
export function kernelModuleText(watPath: string): Promise<string>;
