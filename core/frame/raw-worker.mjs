// Worker thread for camera raw decoding: LibRaw (libraw-wasm's emscripten module, loaded directly
// with its wasm bytes, since its packaged entry point needs a browser Worker). Running it in a
// thread lets the caller time out a decode that does not end, and keeps a crashed module away
// from the main thread. Replies with the sensor mosaic (a copy) and the metadata fields used.
import { parentPort } from 'node:worker_threads';
import { readFileSync } from 'node:fs';
import { createRequire } from 'node:module';
import { pathToFileURL } from 'node:url';

const require = createRequire(import.meta.url);
let modP = null;

function lib() {
  if (!modP) {
    modP = (async () => {
      const js = require.resolve('libraw-wasm/dist/libraw.js');
      const wasmBinary = readFileSync(js.replace(/libraw\.js$/, 'libraw.wasm'));
      const mod = await import(pathToFileURL(js).href);
      return mod.default({ wasmBinary, print() {}, printErr() {} });
    })();
  }
  return modP;
}

function pick(md) {
  const cd = md.color_data ?? {};
  return {
    width: md.width, height: md.height, raw_width: md.raw_width, raw_height: md.raw_height,
    top_margin: md.top_margin, left_margin: md.left_margin, flip: md.flip,
    camera_make: md.camera_make, camera_model: md.camera_model, iso_speed: md.iso_speed,
    shutter: md.shutter, aperture: md.aperture, focal_len: md.focal_len, timestamp: md.timestamp,
    filters: md.filters, cdesc: md.cdesc, colors: md.colors, is_foveon: md.is_foveon,
    black: cd.black, maximum: cd.maximum, cblack: Array.isArray(cd.cblack) ? cd.cblack.slice(0, 4) : null,
    lens: md.lens?.Lens ?? '',
  };
}

function describe(e) {
  if (e instanceof Error) return e.message.split('\n')[0];
  // emscripten C++ exceptions arrive as objects holding a pointer, without a message
  return 'LibRaw refused it (damaged, or a variant it does not read)';
}

parentPort.on('message', async ({ id, bytes }) => {
  let lr = null;
  try {
    const M = await lib();
    lr = new M.LibRaw();
    lr.open(bytes, {});
    const meta = pick(lr.metadata(true));
    const r = lr.rawImageData();
    const src = r && r.data;
    if (!src || !(src.length > 0)) {
      parentPort.postMessage({ id, ok: false, error: 'no sensor mosaic in this raw file (e.g. a linear or demosaiced DNG)' });
      return;
    }
    const data = new Uint16Array(src); // a copy: the original may be a view of the module's memory
    const raw = { raw_width: r.raw_width, raw_height: r.raw_height, top_margin: r.top_margin, left_margin: r.left_margin, width: r.width, height: r.height, data };
    parentPort.postMessage({ id, ok: true, meta, raw }, [data.buffer]);
  } catch (e) {
    // A WebAssembly trap leaves the module unusable: start afresh next time.
    if (e instanceof WebAssembly.RuntimeError) modP = null;
    parentPort.postMessage({ id, ok: false, error: describe(e) });
  } finally {
    try { lr?.delete?.(); } catch { /* already gone */ }
  }
});
