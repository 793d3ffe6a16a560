/**
 * Instantiates one of the engine's WebAssembly modules (compiled from AssemblyScript by
 * bin/build-wasm.mjs and kept as base64 in a generated module) in this thread; null where
 * WebAssembly is missing or SKYLOUPE_WASM=0 asks for the TypeScript versions.
 */
interface WasmApi {
  Module: new (bytes: Uint8Array) => object;
  Instance: new (module: object, imports: object) => { exports: Record<string, unknown> };
}

export interface WasmExports {
  readonly memory: { readonly buffer: ArrayBuffer };
  readonly [name: string]: unknown;
}

export function instantiateWasm(base64: string, name: string): WasmExports | null {
  try {
    if (typeof process !== 'undefined' && process.env?.SKYLOUPE_WASM === '0') return null;
    // the platform's WebAssembly (this project's lib setting has no DOM types for it)
    const WA = (globalThis as unknown as { WebAssembly?: WasmApi }).WebAssembly;
    if (!WA) return null;
    const bin = Uint8Array.from(atob(base64), (c) => c.charCodeAt(0));
    const inst = new WA.Instance(new WA.Module(bin), { env: { abort: () => { throw new Error(`${name} (WebAssembly): abort`); } } });
    return inst.exports as unknown as WasmExports;
  } catch {
    return null;
  }
}

/** What a kernel's set-up sees of its module: its functions and typed views of its buffers. */
export interface WasmModule {
  readonly memory: { readonly buffer: ArrayBuffer };
  /** An exported function. */
  fn<F>(name: string): F;
  /** A Float32Array / Float64Array view of `length` elements at the address the export `ptr` returns. */
  f32(ptr: string, length: number): Float32Array;
  f64(ptr: string, length: number): Float64Array;
  /** The number an export without arguments returns (e.g. a capacity). */
  int(name: string): number;
}

/**
 * A kernel made once per thread on first use: `make` builds it from the instantiated module;
 * the getter returns null where WebAssembly is unavailable (callers then use TypeScript).
 */
export function lazyKernel<T>(base64: string, name: string, make: (m: WasmModule) => T): () => T | null {
  let k: T | null | undefined;
  return () => {
    if (k !== undefined) return k;
    const e = instantiateWasm(base64, name);
    if (!e) return (k = null);
    const call = (f: string) => (e[f] as () => number)();
    const m: WasmModule = {
      memory: e.memory,
      fn: <F>(f: string) => e[f] as F,
      f32: (p, n) => new Float32Array(e.memory.buffer, call(p), n),
      f64: (p, n) => new Float64Array(e.memory.buffer, call(p), n),
      int: call,
    };
    try { k = make(m); } catch { k = null; }
    return k;
  };
}
