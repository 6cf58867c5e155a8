// One place that turns a generated kernel module (base64, see bin/build-kernels.js) into an
// instance: each module is compiled once per thread, each caller gets its own instance and memory.

const compiled = new Map<string, WebAssembly.Module>();

/** A new instance's exports; `T` names the memory and the functions the .wat file exports. */
export function instantiateKernel<T>(base64: string): T & { memory: WebAssembly.Memory } {
  let module = compiled.get(base64);
  if (!module) {
    module = new WebAssembly.Module(Uint8Array.from(atob(base64), (c) => c.charCodeAt(0)));
    compiled.set(base64, module);
  }
  return new WebAssembly.Instance(module).exports as unknown as T & { memory: WebAssembly.Memory };
}
