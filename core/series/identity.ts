/** Which camera a decoded frame names and a hash of its pixels: how a series tells its frames apart. */
import { createHash } from 'node:crypto';
import type { Frame } from '../frame/types.ts';
import type { FrameIdentity } from './input.ts';

/** The camera a decoded frame names (EXIF model, INSTRUME or CAMERA card), or null. */
export function cameraName(frame: Pick<Frame, 'hints' | 'meta'>): string | null {
  const named = frame.hints?.camera ?? frame.meta.INSTRUME ?? frame.meta.CAMERA;
  return typeof named === 'string' && named.trim() ? named.trim().slice(0, 80) : null;
}

/** SHA-256 of the decoded pixels with the frame's size: two files holding the same picture hash alike. */
export function pixelsHash(frame: Pick<Frame, 'data' | 'width' | 'height'>): string {
  const h = createHash('sha256');
  h.update(`${frame.width}x${frame.height}:`);
  h.update(new Uint8Array(frame.data.buffer, frame.data.byteOffset, frame.data.byteLength));
  return h.digest('hex');
}

export function identityOf(frame: Pick<Frame, 'hints' | 'meta' | 'data' | 'width' | 'height'>): FrameIdentity {
  return { camera: cameraName(frame), pixelsHash: pixelsHash(frame) };
}

