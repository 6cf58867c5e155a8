// The few names of the WebAssembly JavaScript API the kernels use. Node has the API; TypeScript
// declares it only in lib "dom", which would bring the whole browser with it.
declare namespace WebAssembly {
  class Module {
    constructor(bytes: Uint8Array);
  }
  class Instance {
    constructor(module: Module, imports?: Record<string, unknown>);
    readonly exports: Record<string, unknown>;
  }
  class Memory {
    readonly buffer: ArrayBuffer;
    grow(pages: number): number;
  }
}
