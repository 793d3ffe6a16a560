/**
 * Catalogue star fields through a known lens: the stars of a catalogue that a camera pointed at
 * (RA, Dec) with a given roll, projection, focal length and radial distortion would record, as
 * explicit scene stars (for renderScene) with their truth. The lens is core/sky/lens.ts's model,
 * so the solver's recovery can be checked against the values that made the frame.
 */
import type { Catalogue } from '../sky/catalogue.ts';
import { starsInCone } from '../sky/catalogue.ts';
import { maxFieldAngle, pixelToSky, skyToPixel, type LensModel, type Projection } from '../sky/lens.ts';
import { angleBetween, DEG, normalize, radecToVec, rotationFromAxes, tangentBasis } from '../sky/sphere.ts';
import { Rng } from './prng.ts';
import type { SceneStar } from './scene.ts';

export interface SkyLens {
  /** Pointing of the optical axis, degrees. */
  raDeg: number;
  decDeg: number;
  /** Direction of celestial north on the frame at the axis, degrees from +x toward +y. */
  northDeg: number;
  /** true: the frame is mirror-reversed (as through a diagonal). */
  mirrored: boolean;
  projection: Projection;
  focalLengthMm: number;
  pixelSizeUm: number;
  /** Radial distortion about the optical centre, r_d = r (1 + k1 q^2 + k2 q^4), q = r / (half diagonal). */
  k1: number;
  k2: number;
  /** Optical centre offset from the frame centre, px. */
  centreOffsetPx: { x: number; y: number };
}

export interface SkyFieldOptions {
  width: number;
  height: number;
  lens: SkyLens;
  /** Faintest magnitude recorded. */
  magLimit: number;
  /** Electrons of a magnitude-0 star. */
  fluxMag0E: number;
  /** Largest number of stars (the brightest). */
  maxStars?: number;
  /** Keep stars this far inside the frame, px. */
  marginPx?: number;
}

export interface SkyFieldStar extends SceneStar {
  /** Catalogue index and magnitude. */
  cat: number;
  mag: number;
}

/** The lens model of core/sky for these settings. */
export function skyLensModel(lens: SkyLens, width: number, height: number): LensModel {
  const z = radecToVec(lens.raDeg * DEG, lens.decDeg * DEG);
  const { east, north } = tangentBasis(z);
  // camera axes X (along +x), Y (+y before the parity), boresight z, with X x Y = z; east x north = z.
  // North's image direction (cos a, sin a) = (north.X, parity north.Y) gives
  // X = cos a north + parity sin a east, Y = z x X = parity sin a north - cos a east
  const parity: 1 | -1 = lens.mirrored ? -1 : 1;
  const a = lens.northDeg * DEG, ca = Math.cos(a), sa = parity * Math.sin(a);
  const X = normalize([ca * north[0] + sa * east[0], ca * north[1] + sa * east[1], ca * north[2] + sa * east[2]]);
  const Y = normalize([sa * north[0] - ca * east[0], sa * north[1] - ca * east[1], sa * north[2] - ca * east[2]]);
  return {
    rot: rotationFromAxes(X, Y, z),
    fPx: (lens.focalLengthMm * 1000) / lens.pixelSizeUm,
    cx: (width - 1) / 2 + lens.centreOffsetPx.x,
    cy: (height - 1) / 2 + lens.centreOffsetPx.y,
    parity,
    projection: lens.projection,
    k1: lens.k1,
    k2: lens.k2,
    rNorm: Math.hypot(width, height) / 2,
  };
}

/** The catalogue stars in the frame, brightest first. */
export function skyFieldStars(cat: Catalogue, o: SkyFieldOptions): SkyFieldStar[] {
  const m = skyLensModel(o.lens, o.width, o.height);
  const z: [number, number, number] = [m.rot[6], m.rot[7], m.rot[8]];
  const reach = Math.min(maxFieldAngle(m.projection), Math.atan(Math.hypot(o.width, o.height) / m.fPx) * 1.6 + 0.2);
  const margin = o.marginPx ?? 6;
  const out: SkyFieldStar[] = [];
  const pt: [number, number] = [0, 0];
  for (const i of starsInCone(cat, z, reach)) {
    if (cat.mag[i] > o.magLimit) break;
    const v: [number, number, number] = [cat.xyz[3 * i], cat.xyz[3 * i + 1], cat.xyz[3 * i + 2]];
    const r = skyToPixel(m, v, pt);
    if (!r || r[0] < margin || r[1] < margin || r[0] > o.width - 1 - margin || r[1] > o.height - 1 - margin) continue;
    // A star beyond the distortion polynomial's fold lands back inside the frame on paper; the
    // lens does not image it there (the pixel's own direction is another one).
    const back = pixelToSky(m, r[0], r[1]);
    if (!back || angleBetween(back, v) * m.fPx > 0.01) continue;
    out.push({ x: r[0], y: r[1], fluxE: o.fluxMag0E * 10 ** (-0.4 * cat.mag[i]), cat: i, mag: cat.mag[i] });
    if (o.maxStars && out.length >= o.maxStars) break;
  }
  return out;
}

/** Uniformly random dots (a frame that is not the sky), with the same brightness spread. */
export function randomDots(n: number, width: number, height: number, seed: number, marginPx = 6): SceneStar[] {
  const rng = new Rng(seed);
  const out: SceneStar[] = [];
  for (let i = 0; i < n; i++) {
    out.push({
      x: marginPx + rng.uniform() * (width - 1 - 2 * marginPx),
      y: marginPx + rng.uniform() * (height - 1 - 2 * marginPx),
      fluxE: 1e6 * 10 ** (-0.4 * 6 * rng.uniform()),
    });
  }
  return out;
}
