/**
 * The picture the figures draw over: a stretched, downsized preview of the whole frame
 * (sharp encodes it). The desktop
 * program and the CLI's HTML report make them here, so both show the same pictures.
 * Node only (sharp): the page gets them through the bridge.
 */
import sharp from 'sharp';
import { chooseStretch, stretchGrey, type Stretch } from '../image/stretch.ts';
import { medianOf } from '../image/stats.ts';
import type { Preview } from './svg/types.ts';

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

/** The preview of a frame (what the page and the HTML report show; the close-ups are the report's zone stacks). */
export async function framePictures(f: FrameImageInput): Promise<{ preview: Preview }> {
  return { preview: await makePreview(f, chooseStretch(f.data, f.sky)) };
}
