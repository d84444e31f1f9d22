/** The shared alert vocabulary: one order for severities, words for every reason, typed guards. */
import { describe, expect, it } from 'vitest';
import { DEFAULT_SETTINGS } from '../../../libs/config/settings.js';
import { decodeSensorState, encodeSensorState, SensorState } from '../../../libs/engine/sensor-state.js';
import {
  ALERT_STATES,
  isReason,
  isSeverity,
  REASON_WORDS,
  REASONS,
  SEVERITIES,
  severityRank,
  type Reason,
} from '../../../libs/schema/vocabulary.js';

describe('alert vocabulary', () => {
  it('orders severities mildest first, with no severity below all', () => {
    expect(SEVERITIES).toEqual(['warning', 'critical']);
    expect(severityRank(null)).toBe(0);
    expect(severityRank('warning')).toBeLessThan(severityRank('critical'));
    expect(SEVERITIES.map(severityRank)).toEqual([1, 2]);
  });

  it('has plain words for exactly the listed reasons', () => {
    expect(Object.keys(REASON_WORDS).sort()).toEqual([...REASONS].sort());
    for (const reason of REASONS) expect(REASON_WORDS[reason]).toMatch(/^[a-z]/);
  });

  it('guards accept the vocabulary and nothing else', () => {
    for (const reason of REASONS) expect(isReason(reason)).toBe(true);
    for (const severity of SEVERITIES) expect(isSeverity(severity)).toBe(true);
    for (const other of ['', 'toString', 'constructor', 'Critical', 'cleared', 3, null, undefined]) {
      expect(isReason(other)).toBe(false);
      expect(isSeverity(other)).toBe(false);
    }
    expect(ALERT_STATES).toEqual(['raised', 'updated', 'cleared']);
  });

  it('sensor state with a reason outside the vocabulary is refused as corrupt', () => {
    const settings = { ...DEFAULT_SETTINGS };
    const state = new SensorState('tank-3/level', settings);
    const active = {
      id: 'a1',
      severity: 'warning' as const,
      raisedTs: 0,
      flaggedReadings: 1,
      clearRun: 0,
      clearSinceTs: NaN,
      easeRun: 0,
    };
    state.life.active = { ...active, reasons: ['fence_high'] };
    expect(decodeSensorState(encodeSensorState(state), () => settings).life.active?.reasons).toEqual([
      'fence_high',
    ]);
    state.life.active = { ...active, reasons: ['fence_hgih' as Reason] };
    expect(() => decodeSensorState(encodeSensorState(state), () => settings)).toThrow(
      expect.objectContaining({ code: 'STATE_CORRUPT' }),
    );
  });
});
