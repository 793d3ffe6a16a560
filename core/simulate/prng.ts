/**
 * Seeded pseudo-random numbers for the simulator: sfc32 (Chris Doty-Humphrey's
 * "small fast counting" generator, from the PractRand suite) seeded through
 * splitmix32, plus uniform and normal (ziggurat) deviates. No allocation per draw.
 */

/** splitmix32 finaliser: spreads a 32-bit value over all bits (public-domain mixer). */
export function mix32(x: number): number {
  x = (x + 0x9e3779b9) | 0;
  x = Math.imul(x ^ (x >>> 16), 0x85ebca6b);
  x = Math.imul(x ^ (x >>> 13), 0xc2b2ae35);
  return (x ^ (x >>> 16)) >>> 0;
}

/** Seed of an independent stream: the scene seed hashed with a stream number. */
export function streamSeed(seed: number, stream: number): number {
  return mix32(mix32(seed >>> 0) ^ Math.imul(stream + 1, 0x27d4eb2f));
}

const INV32 = 1 / 4294967296;

export class Rng {
  private a: number;
  private b: number;
  private c: number;
  private d: number;
  constructor(seed: number) {
    const s = seed >>> 0;
    this.a = mix32(s);
    this.b = mix32(s ^ 0x6a09e667);
    this.c = mix32(s ^ 0xbb67ae85);
    this.d = 1;
    // Discard the first outputs so that nearby seeds decorrelate (sfc32 practice).
    for (let i = 0; i < 12; i++) this.u32();
  }

  /** Next 32-bit unsigned integer (sfc32 step). */
  u32(): number {
    const a = this.a, b = this.b, c = this.c, d = this.d;
    const t = (((a + b) | 0) + d) | 0;
    this.d = (d + 1) | 0;
    this.a = b ^ (b >>> 9);
    this.b = (c + (c << 3)) | 0;
    const cr = (c << 21) | (c >>> 11);
    this.c = (cr + t) | 0;
    return t >>> 0;
  }

  /** Uniform on [0, 1), 32-bit resolution. */
  uniform(): number {
    return this.u32() * INV32;
  }

  /** Uniform on (0, 1): never 0, safe for logarithms. */
  uniformOpen(): number {
    return (this.u32() + 0.5) * INV32;
  }

  /**
   * Standard normal deviate by the ziggurat method (Marsaglia & Tsang 2000, "The
   * Ziggurat Method for Generating Random Variables", J. Stat. Softw. 5(8), 128
   * layers). The layer index and the value come from disjoint bits of one draw,
   * avoiding the index/value correlation noted by Doornik (2005).
   */
  normal(): number {
    for (;;) {
      const j = this.u32() | 0;
      const iz = j & 127;
      const hz = j >> 7; // signed, |hz| < 2^24
      if (Math.abs(hz) < KN[iz]) return hz * WN[iz];
      if (iz === 0) {
        // Tail beyond R (Marsaglia 1964).
        let x: number, y: number;
        do {
          x = -Math.log(this.uniformOpen()) / ZIG_R;
          y = -Math.log(this.uniformOpen());
        } while (y + y < x * x);
        return hz > 0 ? ZIG_R + x : -ZIG_R - x;
      }
      const x = hz * WN[iz];
      if (FN[iz] + this.uniform() * (FN[iz - 1] - FN[iz]) < Math.exp(-0.5 * x * x)) return x;
    }
  }
}

/** Ziggurat tables (Marsaglia & Tsang 2000, zigset), for a signed 25-bit value part. */
const ZIG_R = 3.442619855899;
const KN = new Float64Array(128), WN = new Float64Array(128), FN = new Float64Array(128);
(function zigset() {
  const m1 = 16777216; // 2^24
  const vn = 9.91256303526217e-3;
  let dn = ZIG_R, tn = dn;
  const q = vn / Math.exp(-0.5 * dn * dn);
  KN[0] = (dn / q) * m1;
  KN[1] = 0;
  WN[0] = q / m1;
  WN[127] = dn / m1;
  FN[0] = 1;
  FN[127] = Math.exp(-0.5 * dn * dn);
  for (let i = 126; i >= 1; i--) {
    dn = Math.sqrt(-2 * Math.log(vn / dn + Math.exp(-0.5 * dn * dn)));
    KN[i + 1] = (dn / tn) * m1;
    tn = dn;
    FN[i] = Math.exp(-0.5 * dn * dn);
    WN[i] = dn / m1;
  }
})();
