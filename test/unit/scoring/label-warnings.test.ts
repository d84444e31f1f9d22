import { describe, expect, it } from 'vitest';
import { labelWarnings, type Incident } from '../../../libs/scoring/labels.js';

const T0 = Date.UTC(2026, 0, 5);
const H = 3_600_000;
const inc = (sensor: string, start: number, end: number): Incident => ({ sensor, start, end, kind: 'spike' });

describe('labelWarnings', () => {
  it('names labels whose sensors never appear and labels outside the data span', () => {
    const w = labelWarnings(
      [inc('a', T0 + H, T0 + 2 * H), inc('ghost', T0 + H, T0 + 2 * H), inc('a', T0 + 50 * H, T0 + 51 * H)],
      new Set(['a', 'b']),
      T0,
      T0 + 24 * H,
    );
    expect(w).toHaveLength(2);
    expect(w[0]).toMatch(/^1 label names a sensor that never appears in the data \(ghost\)/);
    expect(w[1]).toMatch(/^1 label lies outside the data's time span/);
  });

  it('is silent when every label fits the data', () => {
    expect(labelWarnings([inc('a', T0 + H, T0 + 2 * H)], new Set(['a']), T0, T0 + 24 * H)).toEqual([]);
  });
});
