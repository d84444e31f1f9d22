/**
 * Seeded pseudo-random numbers for the simulator: mulberry32 (32-bit state, fast, good enough for
 * synthetic data) plus Box-Muller normals. Never Math.random: the same seed must give the same data.
 */
export class Prng {
  private state: number;
  private spare: number | null = null;

  constructor(seed: number) {
    this.state = seed >>> 0;
  }

  /** Uniform in [0, 1). */
  next(): number {
    let mixed = (this.state = (this.state + 0x6d2b79f5) >>> 0);
    mixed = Math.imul(mixed ^ (mixed >>> 15), mixed | 1);
    mixed ^= mixed + Math.imul(mixed ^ (mixed >>> 7), mixed | 61);
    return ((mixed ^ (mixed >>> 14)) >>> 0) / 4294967296;
  }

  /** Uniform real number in [low, high). */
  uniform(low: number, high: number): number {
    return low + (high - low) * this.next();
  }

  /** Whole number in [low, high]. */
  int(low: number, high: number): number {
    return low + Math.floor(this.next() * (high - low + 1));
  }

  /** Standard normal (Box-Muller; the second value of each pair is kept for the next call). */
  normal(): number {
    if (this.spare !== null) {
      const spare = this.spare;
      this.spare = null;
      return spare;
    }
    let uniformRadius = 0;
    while (uniformRadius === 0) uniformRadius = this.next();
    const uniformAngle = this.next();
    const radius = Math.sqrt(-2 * Math.log(uniformRadius));
    this.spare = radius * Math.sin(2 * Math.PI * uniformAngle);
    return radius * Math.cos(2 * Math.PI * uniformAngle);
  }

  /** One item, chosen with probability proportional to its weight. */
  pick<T>(items: readonly T[], weights: readonly number[]): T {
    let total = 0;
    for (const weight of weights) total += weight;
    let remaining = this.next() * total;
    for (let i = 0; i < items.length; i++) {
      remaining -= weights[i];
      if (remaining < 0) return items[i];
    }
    return items[items.length - 1];
  }
}

/** Derive an independent 32-bit seed for a named sub-stream (FNV-1a over the name, mixed with the seed). */
export function subSeed(seed: number, name: string): number {
  let hash = (0x811c9dc5 ^ (seed >>> 0)) >>> 0;
  for (let i = 0; i < name.length; i++) {
    hash ^= name.charCodeAt(i);
    hash = Math.imul(hash, 0x01000193) >>> 0;
  }
  // Final avalanche so nearby seeds give unrelated streams.
  hash ^= hash >>> 16;
  hash = Math.imul(hash, 0x85ebca6b) >>> 0;
  hash ^= hash >>> 13;
  return hash >>> 0;
}
