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
