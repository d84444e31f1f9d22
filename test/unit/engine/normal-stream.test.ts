/**
 * End to end: a long stream of standard normal readings through the Engine with the default
 * fences (1.5 and 3 IQR), trigger "either", z limit 3, the default 24 h / 12 bucket window and
 * the flatline rule off. Reference shares (reference-values.md, "Normal distribution": normal
 * table, NIST/SEMATECH e-Handbook 1.3.6.7.1; Tukey 1977 section 2C for the fences):
 *   outside 1.5*IQR fences 0.0069766032, |z| > 3 0.0026997961, outside 3*IQR fences 2.3419425e-6.
 *
 * Two sources of error are checked separately, so each tolerance is sound:
 * 1. Rule application. Given the fences (and mean, sd) a baseline produced, each later reading
 *    is an independent Bernoulli trial whose chance of a hit is known exactly from N(0,1). The
 *    observed count must match the summed chances within 4 binomial standard errors
 *    sqrt(sum p(1-p)) (false failure about 1 in 16,000 for a fresh seed).
 * 2. Baseline estimation. The expected share under the engine's fences must approach the table.
 *    Here the baseline's own sampling error dominates, not the sketch: the first baseline holds
 *    one 2 h bucket (about 154,000 readings), whose sample quartiles have rank standard error
 *    sqrt(0.25*0.75/154,000) = 0.0011; a rank error e on Q1 and Q3 in opposite directions moves
 *    the two-sided fence share by about 0.26 e. We allow 4e-4 (about 6 %, 1.4 times that effect
 *    at e = 0.0011, averaged over 12 baselines of growing size) for the fences and 1e-4 for z
 *    (mean and sd of 154,000+ readings are far tighter). The sketch's own quartile rank error
 *    (about 1e-3, digest-accuracy.test.ts) is inside this allowance.
 * The outer-fence count is Poisson with mean 2.34e-6 * n (about 4.3): 15 or more has chance < 1e-4.
 */
import { describe, expect, it } from 'vitest';
import { errorFunction } from 'simple-statistics';
import { validateConfig } from '../../../libs/config/config.js';
import { Engine } from '../../../libs/engine/engine.js';
import type { Fences } from '../../../libs/engine/judge.js';
import type { Baseline } from '../../../libs/engine/window.js';
import { Rng } from '../stats/random.js';

const FENCE_SHARE = 0.0069766032; // normal table, reference-values.md
const Z3_SHARE = 0.0026997961; // normal table, reference-values.md
const OUTER_SHARE = 2.3419425e-6; // normal table, reference-values.md

/**
 * Upper tail of N(0,1). simple-statistics' errorFunction is the Numerical Recipes erfc
 * approximation (fractional error below 1.2e-7), ample for shares of 1e-3.
 */
const upperTail = (x: number) => (1 - errorFunction(x / Math.SQRT2)) / 2;
const outside = (lo: number, hi: number) => upperTail(hi) + upperTail(-lo);

describe('normal stream through the engine (2 million readings over 26 h)', () => {
  it('the N(0,1) tail function reproduces the table it is checked with', () => {
    expect(outside(-2.697959, 2.697959)).toBeCloseTo(FENCE_SHARE, 8);
    expect(outside(-3, 3)).toBeCloseTo(Z3_SHARE, 8);
    expect(outside(-4.7214282514, 4.7214282514) / OUTER_SHARE).toBeCloseTo(1, 4);
  });

  it('flag shares match the chances under the engine baselines, and those match the normal table', () => {
    const engine = new Engine(validateConfig({ defaults: { flatlineAfter: 0, trigger: 'either' } }));
    const rng = new Rng(20260105);
    const n = 2_000_000;
    const t0 = Date.UTC(2026, 0, 5);
    const step = (26 * 3_600_000) / n;
    const sensor = 'line-3/flow';
    // Readings judged under each baseline (baselines change only when a bucket closes).
    const judged = new Map<Baseline, { fences: Fences; count: number }>();
    let firstEvaluated = -1;
    for (let i = 0; i < n; i++) {
      const out = engine.process({ sensor, ts: Math.round(t0 + i * step), value: rng.normal() });
      if (!out.accepted || !out.verdict.evaluated) continue;
      if (firstEvaluated < 0) firstEvaluated = i;
      const st = engine.get(sensor)!;
      const b = st.window.baseline()!;
      const j = judged.get(b);
      if (j) j.count++;
      else judged.set(b, { fences: st.fences!, count: 1 });
    }
    let eFence = 0;
    let vFence = 0;
    let eZ = 0;
    let vZ = 0;
    let eOuter = 0;
    for (const [b, { fences: f, count }] of judged) {
      const pf = outside(f.lower, f.upper);
      const pz = outside(b.mean - 3 * b.stdDev, b.mean + 3 * b.stdDev);
      eFence += count * pf;
      vFence += count * pf * (1 - pf);
      eZ += count * pz;
      vZ += count * pz * (1 - pz);
      eOuter += count * outside(f.lowerOuter, f.upperOuter);
    }
    const c = engine.counters;
    const ev = c.evaluated;
    console.log(
      `[normal stream] evaluated=${ev} baselines=${judged.size} fence: observed ${(c.flagged.fence / ev).toFixed(6)}` +
        ` expected-under-baselines ${(eFence / ev).toFixed(6)} table ${FENCE_SHARE}; z>3: observed ` +
        `${(c.flagged.z / ev).toFixed(6)} expected ${(eZ / ev).toFixed(6)} table ${Z3_SHARE}; outer: observed ` +
        `${c.flagged.outerFence} expected ${eOuter.toFixed(2)}`,
    );
    // Judgement starts only once the first 2 h bucket has closed (the open bucket is never baseline).
    expect(firstEvaluated).toBeGreaterThan(n / 13 - 10);
    expect(ev).toBe(c.readings - firstEvaluated);
    expect(judged.size).toBe(12);
    expect(c.late).toBe(0);
    // 1. rule application, binomial
    expect(Math.abs(c.flagged.fence - eFence)).toBeLessThan(4 * Math.sqrt(vFence));
    expect(Math.abs(c.flagged.z - eZ)).toBeLessThan(4 * Math.sqrt(vZ));
    expect(c.flagged.outerFence).toBeLessThan(15);
    // 2. baseline estimation against the normal table
    expect(Math.abs(eFence / ev - FENCE_SHARE)).toBeLessThan(4e-4);
    expect(Math.abs(eZ / ev - Z3_SHARE)).toBeLessThan(1e-4);
    expect(eOuter / ev / OUTER_SHARE).toBeGreaterThan(0.5);
    expect(eOuter / ev / OUTER_SHARE).toBeLessThan(2);
    // trigger "either": every fence or z hit is flagged; raised minus cleared are still active.
    expect(c.flagged.any).toBeGreaterThanOrEqual(c.flagged.fence);
    expect(c.alerts.raised - c.alerts.cleared).toBe(engine.activeAlertCount());
  });
});
