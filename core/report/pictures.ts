/**
 * The pictures the figures draw over: a stretched, downsized preview of the whole frame and
 * full-resolution crops of the centre and the four corners (sharp encodes them). The desktop
 * program and the CLI's HTML report make them here, so both show the same pictures.
 * Node only (sharp): the page gets them through the bridge.
 */
import sharp from 'sharp';
import { chooseStretch, stretchGrey, type Stretch } from '../image/stretch.ts';
import { medianOf } from '../image/stats.ts';
import type { Preview, Tile, TileName } from './svg/types.ts';

/** Longest side of the preview; bigger frames are block-averaged down by an integer factor. */
export const PREVIEW_MAX_SIDE = 2048;

export interface FrameImageInput {
  data: Float32Array;
  width: number;
  height: number;
  /** FITS frames are shown with the last stored row at the top. */
  flipY: boolean;
  sky: { level: number; sigma: number };
}

async function encode(pixels: Uint8Array, width: number, height: number, kind: 'jpeg' | 'png'): Promise<string> {
  const img = sharp(Buffer.from(pixels.buffer, pixels.byteOffset, pixels.length), { raw: { width, height, channels: 1 } });
  const buf = kind === 'jpeg' ? await img.jpeg({ quality: 85 }).toBuffer() : await img.png({ compressionLevel: 6 }).toBuffer();
  return `data:image/${kind};base64,${buf.toString('base64')}`;
}

export async function makePreview(f: FrameImageInput, stretch: Stretch = chooseStretch(f.data, f.sky)): Promise<Preview> {
  const factor = Math.max(1, Math.ceil(Math.max(f.width, f.height) / PREVIEW_MAX_SIDE));
  const g = stretchGrey(f.data, f.width, { x0: 0, y0: 0, w: f.width, h: f.height }, factor, f.flipY, stretch);
  return { href: await encode(g.pixels, g.width, g.height, 'jpeg'), width: g.width, height: g.height, factor };
}

/** Side of the corner crops: small enough to be shown enlarged beside each other. */
export const TILE_SIDE = 128;

/**
 * Square crops of side min(128, width/4, height/4) px at the centre and in the four corners
 * (as displayed: with flipY the displayed top is the last stored row).
 */
export function tileRects(width: number, height: number, flipY: boolean): { name: TileName; x0: number; y0: number; w: number; h: number }[] {
  const s = Math.max(8, Math.floor(Math.min(TILE_SIDE, width / 4, height / 4)));
  const topY = flipY ? height - s : 0;
  const bottomY = flipY ? 0 : height - s;
  const cx = Math.floor((width - s) / 2);
  const cy = Math.floor((height - s) / 2);
  return [
    { name: 'top-left', x0: 0, y0: topY, w: s, h: s },
    { name: 'top-right', x0: width - s, y0: topY, w: s, h: s },
    { name: 'center', x0: cx, y0: cy, w: s, h: s },
    { name: 'bottom-left', x0: 0, y0: bottomY, w: s, h: s },
    { name: 'bottom-right', x0: width - s, y0: bottomY, w: s, h: s },
  ];
}

/** Median of a crop, so each crop's black sits at its own sky (vignetting and gradients differ). */
function cropMedian(f: FrameImageInput, r: { x0: number; y0: number; w: number; h: number }): number {
  const v: number[] = [];
  for (let y = r.y0; y < r.y0 + r.h; y += 2) for (let x = r.x0; x < r.x0 + r.w; x += 2) v.push(f.data[y * f.width + x]);
  const m = medianOf(v);
  return Number.isFinite(m) ? m : f.sky.level;
}

/** The crops with one stretch span, each shifted to its own sky level. */
export async function makeTiles(f: FrameImageInput, stretch: Stretch = chooseStretch(f.data, f.sky)): Promise<Tile[]> {
  const out: Tile[] = [];
  for (const r of tileRects(f.width, f.height, f.flipY)) {
    const shift = cropMedian(f, r) - f.sky.level;
    const g = stretchGrey(f.data, f.width, r, 1, f.flipY, { ...stretch, black: stretch.black + shift, white: stretch.white + shift });
    out.push({ ...r, href: await encode(g.pixels, g.width, g.height, 'png'), width: g.width, height: g.height });
  }
  return out;
}

/** The preview and the crops of a frame with one stretch (what the page and the HTML report show). */
export async function framePictures(f: FrameImageInput): Promise<{ preview: Preview; tiles: Tile[] }> {
  const stretch = chooseStretch(f.data, f.sky);
  return { preview: await makePreview(f, stretch), tiles: await makeTiles(f, stretch) };
}
