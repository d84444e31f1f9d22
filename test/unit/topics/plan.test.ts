/**
 * The topic plan of `streamfence topics`: the replication factor chosen for a cluster (and the
 * refusal of more copies than brokers), name rules (Kafka's legal topic names: 1-249 characters of
 * [A-Za-z0-9._-], from the Kafka documentation's topic naming rule), and how a topic found is
 * compared with the one asked for. The 3-copy default is common practice, not a standard.
 */
import { describe, expect, it } from 'vitest';
import {
  checkDistinct,
  checkTopicName,
  mismatchError,
  replicationFor,
  retentionText,
  verdictFor,
  verdictLine,
  type TopicSpec,
} from '../../../libs/topics/plan.js';

const DAY = 86_400_000;
const spec: TopicSpec = {
  role: 'alert',
  name: 'sf-alerts-a',
  partitions: 6,
  replicationFactor: 3,
  retentionMs: 7 * DAY,
};

describe('replication factor', () => {
  it('defaults to 3, or the broker count when smaller', () => {
    expect(replicationFor(undefined, 1, '--replication-factor', 'k:9092')).toBe(1);
    expect(replicationFor(undefined, 2, '--replication-factor', 'k:9092')).toBe(2);
    expect(replicationFor(undefined, 5, '--replication-factor', 'k:9092')).toBe(3);
  });

  it('refuses more copies than brokers in one line naming both', () => {
    expect(() => replicationFor(3, 1, '--replication-factor', 'k:9092')).toThrow(
      expect.objectContaining({
        code: 'ARGS_INVALID',
        message: '--replication-factor 3 is more than the 1 broker of the cluster at k:9092; give at most 1',
      }),
    );
    expect(replicationFor(2, 2, 'STREAMFENCE_TOPICS_REPLICATION_FACTOR', 'k:9092')).toBe(2);
  });
});

describe('names', () => {
  it.each(['sensor-readings', 'a', 'plant_1.alerts', 'x'.repeat(249)])('accepts %s', (name) => {
    expect(() => checkTopicName(name, '--input-topic')).not.toThrow();
  });
  it.each(['', '.', '..', 'has space', 'slash/no', 'x'.repeat(250), 'ümlaut'])('refuses "%s"', (name) => {
    expect(() => checkTopicName(name, '--input-topic')).toThrow(
      /--input-topic ".*" is not a Kafka topic name/,
    );
  });
  it('refuses one topic for two jobs', () => {
    expect(() =>
      checkDistinct([
        { role: 'input', name: 'same', label: '--input-topic' },
        { role: 'alert', name: 'other', label: '--alert-topic' },
        { role: 'action', name: 'same', label: 'STREAMFENCE_ACTION_TOPIC' },
      ]),
    ).toThrow('--input-topic and STREAMFENCE_ACTION_TOPIC are both "same"');
  });
});

describe('verdicts', () => {
  it('a missing topic says what would be made', () => {
    const v = verdictFor(spec, undefined);
    expect(v.status).toBe('missing');
    expect(verdictLine(v)).toBe(
      'alert    sf-alerts-a  missing  (asked: partitions 6, replication 3, retention 7d)',
    );
  });

  it('a topic as asked is ok, or created when made now', () => {
    const found = { name: spec.name, partitions: 6, replicationFactor: 3, retentionMs: 7 * DAY };
    expect(verdictFor(spec, found).status).toBe('ok');
    expect(verdictFor(spec, found, true).status).toBe('created');
    expect(verdictLine(verdictFor(spec, found), 14)).toBe(
      'alert    sf-alerts-a     ok       partitions 6, replication 3, retention 7d',
    );
  });

  it('names each difference', () => {
    const found = { name: spec.name, partitions: 3, replicationFactor: 1, retentionMs: DAY };
    const v = verdictFor(spec, found, true);
    expect(v.status).toBe('differs');
    expect(v.differences).toEqual([
      'partitions 3, asked 6',
      'replication factor 1, asked 3',
      'retention 1d, asked 7d',
    ]);
  });

  it('any negative retention is "forever" (Kafka reads every negative retention.ms as no limit)', () => {
    const forever = { ...spec, retentionMs: -1 };
    expect(
      verdictFor(forever, { name: spec.name, partitions: 6, replicationFactor: 3, retentionMs: -2 }).status,
    ).toBe('ok');
    expect(retentionText(-1)).toBe('forever');
    expect(retentionText(null)).toBe('unknown');
    expect(
      verdictFor(spec, { name: spec.name, partitions: 6, replicationFactor: 3, retentionMs: null })
        .differences,
    ).toEqual(['retention unknown, asked 7d']);
  });

  it('the mismatch error lists what is wrong and what to do; none when all are as asked', () => {
    const ok = verdictFor(spec, {
      name: spec.name,
      partitions: 6,
      replicationFactor: 3,
      retentionMs: 7 * DAY,
    });
    expect(mismatchError([ok], 'k:9092')).toBeNull();
    const missing = verdictFor({ ...spec, role: 'input', name: 'sf-in-a' }, undefined);
    const e1 = mismatchError([ok, missing], 'k:9092');
    expect(e1?.code).toBe('TOPICS_DIFFER');
    expect(e1?.message).toBe(
      'kafka k:9092: 1 of 2 topics not as asked (sf-in-a is missing); run "streamfence topics create" with the same options',
    );
    const differs = verdictFor(spec, {
      name: spec.name,
      partitions: 2,
      replicationFactor: 3,
      retentionMs: 7 * DAY,
    });
    expect(mismatchError([differs, missing], 'k:9092')?.message).toMatch(
      /^kafka k:9092: 2 of 2 topics not as asked \(sf-alerts-a: partitions 2, asked 6; sf-in-a is missing\); streamfence never changes an existing topic/,
    );
  });
});
