/**
 * Lazy loading of a small WebAssembly SIMD kernel module with its own growable memory, shared by the metrics
 * and codec kernels (./runtime.ts, ../../codec/wasm/runtime.ts).
 *
 * Every kernel behind this loader gives results bit-identical to its TypeScript reference, so callers may
 * use either path at any time. Where synchronous compilation is allowed (Node, worker threads) the first
 * call compiles at once; where it is refused (a browser page's main thread refuses large synchronous
 * compiles) the first call starts an asynchronous compile and the TypeScript path runs until it is ready.
 * Where WebAssembly or its SIMD extension is missing, the TypeScript path runs always.
 */
import { decodeBase64, growMemoryTo } from '../../linalg/wasm/runtime';

export interface LoadedKernel<T> {
  readonly exports: T;
  readonly memory: WebAssembly.Memory;
}

let disabled = false;

/**
 * Force the TypeScript path of every kernel behind this loader (true), or allow WebAssembly again (false).
 * For tests that compare the two paths and for diagnosing a suspected kernel fault.
 */
export function setKernelsDisabled(value: boolean): void {
  disabled = value;
}

/** A kernel module compiled on first use; `get()` is null until it is ready, when disabled, or without SIMD. */
export class LazyKernel<T> {
  private kernel: LoadedKernel<T> | null = null;
  private state: 'new' | 'pending' | 'ready' | 'failed' = 'new';

  constructor(private readonly base64: string) {}

  /** The instantiated kernel, or null (use the TypeScript path); `evenIfDisabled` to read back state. */
  get(evenIfDisabled = false): LoadedKernel<T> | null {
    if (disabled && !evenIfDisabled) return null;
    if (this.state === 'new') this.load();
    return this.kernel;
  }

  private load(): void {
    if (typeof WebAssembly !== 'object') {
      this.state = 'failed';
      return;
    }
    const bytes = decodeBase64(this.base64);
    // Invalid bytes here mean no SIMD support: stay on TypeScript.
    if (!WebAssembly.validate(bytes)) {
      this.state = 'failed';
      return;
    }
    let module: WebAssembly.Module;
    try {
      module = new WebAssembly.Module(bytes);
    } catch {
      // Synchronous compilation refused (a page's main thread): compile asynchronously instead.
      this.loadAsync(bytes);
      return;
    }
    this.instantiate(module);
  }

  private loadAsync(bytes: Uint8Array<ArrayBuffer>): void {
    this.state = 'pending';
    WebAssembly.compile(bytes).then(
      (module) => this.instantiate(module),
      () => {
        this.state = 'failed';
      },
    );
  }

  private instantiate(module: WebAssembly.Module): void {
    try {
      const memory = new WebAssembly.Memory({ initial: 1 });
      const instance = new WebAssembly.Instance(module, { env: { memory, abort: abortHandler } });
      this.kernel = { exports: instance.exports as unknown as T, memory };
      this.state = 'ready';
    } catch {
      this.state = 'failed';
    }
  }
}

function abortHandler(): never {
  throw new Error('rankfold engine: WebAssembly kernel aborted');
}

/**
 * Make sure the kernel's memory has at least `bytes` bytes (detaching earlier views of its buffer); false when
 * it cannot grow that far, and the caller takes the TypeScript path.
 */
export function reserveBytes(k: LoadedKernel<unknown>, bytes: number): boolean {
  return growMemoryTo(k.memory, bytes);
}
