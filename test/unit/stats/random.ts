/**
 * Seeded pseudo-random numbers for tests and benchmarks (never Math.random, so every failure
 * replays). mulberry32 for 32-bit words; two words make a 53-bit uniform so that far normal
 * tails (share 2e-6 beyond the outer fences) are not distorted by a coarse grid.
 */
export class Rng {
  private s: number;
  private spare: number | null = null;
  constructor(seed: number) {
    this.s = seed >>> 0;
  }

  /** mulberry32 step. */
  u32(): number {
    let t = (this.s = (this.s + 0x6d2b79f5) >>> 0);
    t = Math.imul(t ^ (t >>> 15), t | 1);
    t ^= t + Math.imul(t ^ (t >>> 7), t | 61);
    return (t ^ (t >>> 14)) >>> 0;
  }

  /** Uniform in the open interval (0, 1) with 53 bits. */
  uniform(): number {
    const hi = this.u32() >>> 5; // 27 bits
    const lo = this.u32() >>> 6; // 26 bits
    return (hi * 67108864 + lo + 0.5) / 9007199254740992;
  }

  /** Standard normal (Box-Muller, both outputs used). */
  normal(): number {
    if (this.spare !== null) {
      const s = this.spare;
      this.spare = null;
      return s;
    }
    const r = Math.sqrt(-2 * Math.log(this.uniform()));
    const a = 2 * Math.PI * this.uniform();
    this.spare = r * Math.sin(a);
    return r * Math.cos(a);
  }

  lognormal(sigma = 1): number {
    return Math.exp(sigma * this.normal());
  }

  /** Student t with `df` degrees of freedom (normal over the root of a chi-square / df). */
  studentT(df: number): number {
    let chi = 0;
    for (let i = 0; i < df; i++) {
      const z = this.normal();
      chi += z * z;
    }
    return this.normal() / Math.sqrt(chi / df);
  }

  /** Poisson by Knuth's multiplication method (fine for small means). */
  poisson(mean: number): number {
    const limit = Math.exp(-mean);
    let k = 0;
    let p = this.uniform();
    while (p > limit) {
      k++;
      p *= this.uniform();
    }
    return k;
  }

  int(lo: number, hi: number): number {
    return lo + Math.floor(this.uniform() * (hi - lo + 1));
  }
}
