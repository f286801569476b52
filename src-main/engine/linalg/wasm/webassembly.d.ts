/**
 * Minimal ambient declaration of the WebAssembly JS API used by the engine. The engine is type-checked
 * with lib ES2022 and no DOM or Node types, which do not declare `WebAssembly`; this file declares only
 * what wasm/runtime.ts and src-main/node/parallel use.
 * Source: WebAssembly JavaScript Interface, W3C Recommendation (https://www.w3.org/TR/wasm-js-api-2/), §5.
 */
declare namespace WebAssembly {
  interface MemoryDescriptor {
    initial: number;
    maximum?: number;
    shared?: boolean;
  }
  class Memory {
    constructor(descriptor: MemoryDescriptor);
    readonly buffer: ArrayBuffer | SharedArrayBuffer;
    grow(delta: number): number;
  }
  class Module {
    constructor(bytes: ArrayBufferView | ArrayBuffer);
  }
  class Instance {
    constructor(module: Module, imports?: Record<string, Record<string, unknown>>);
    readonly exports: Record<string, unknown>;
  }
  function compile(bytes: ArrayBufferView | ArrayBuffer): Promise<Module>;
  function instantiate(module: Module, imports?: Record<string, Record<string, unknown>>): Promise<Instance>;
  function validate(bytes: ArrayBufferView | ArrayBuffer): boolean;
}
