/** The bundled catalogue (Hipparcos from d3-celestial, built by bin/build-catalogue.ts), decoded once per thread. */
import { decodeCatalogue, type Catalogue } from './catalogue.ts';
import { HIPPARCOS_BASE64 } from './catalogue-hipparcos.gen.ts';

let cached: Catalogue | null = null;

function fromBase64(b64: string): Uint8Array {
  const B = (globalThis as unknown as { Buffer?: { from(s: string, enc: string): Uint8Array } }).Buffer;
  if (B) return new Uint8Array(B.from(b64, 'base64'));
  return Uint8Array.from(atob(b64), (c) => c.charCodeAt(0));
}

export function bundledCatalogue(): Catalogue {
  if (!cached) cached = decodeCatalogue(fromBase64(HIPPARCOS_BASE64));
  return cached;
}
