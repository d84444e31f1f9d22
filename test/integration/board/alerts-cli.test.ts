/**
 * `streamfence alerts` against the real Kafka: spawns the built CLI (npm run build first) and checks
 * the lines, the filters, --since, --json and that piped output has no colour codes.
 */
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { execFile } from 'node:child_process';
import { existsSync } from 'node:fs';
import { promisify } from 'node:util';
import { createTopic, deleteTopics, kafkaBrokers, kafkaClient, uniqueName } from '../../harness/services.js';
import type { AlertEvent } from '../../../libs/schema/alert-event.js';
import { NOTICE } from '../../../libs/schema/notice.js';
import { FIXTURE_BASELINE } from '../../support/alert-fixture.js';

const run = promisify(execFile);
const CLI = 'dist/services/cli/main.js';

function ev(
  id: string,
  sensor: string,
  state: AlertEvent['state'],
  severity: AlertEvent['severity'],
): AlertEvent {
  const t = '2026-04-01T03:00:00.000Z';
  return {
    id,
    sensor,
    state,
    severity,
    reasons: state === 'cleared' ? [] : ['z_high'],
    value: 7.5,
    ts: t,
    since: t,
    flaggedReadings: 1,
    baseline: { ...FIXTURE_BASELINE },
    z: 5.5,
    robustZ: 4,
    percentileRank: 100,
    message: `${sensor} reads 7.5 (${state})`,
    notice: NOTICE,
  };
}

describe('streamfence alerts (terminal view)', () => {
  const alertTopic = uniqueName('alerts');
  const actionTopic = uniqueName('actions');
  const events = [
    ev('a1', 'kiln-2/zone-1/temp', 'raised', 'warning'),
    ev('a2', 'dryer-4/fan/current', 'raised', 'critical'),
    ev('a1', 'kiln-2/zone-1/temp', 'updated', 'critical'),
    ev('a2', 'dryer-4/fan/current', 'cleared', 'critical'),
  ];
  let brokers: string;

  beforeAll(async () => {
    if (!existsSync(CLI))
      throw new Error(`${CLI} is missing: run "npm run build" before the integration tests`);
    brokers = kafkaBrokers().join(',');
    await createTopic(alertTopic, 2);
    await createTopic(actionTopic, 1);
    const p = kafkaClient().producer();
    await p.connect();
    await p.send({
      topic: alertTopic,
      messages: events.map((e) => ({ key: e.sensor, value: JSON.stringify(e) })),
    });
    await p.send({
      topic: actionTopic,
      messages: [
        {
          key: 'a1',
          value: JSON.stringify({
            kind: 'streamfence.operator-action',
            origin: 'test',
            action: { kind: 'acknowledge', id: 'a1', by: 'Oskar Feld', at: '2026-04-01T03:01:00.000Z' },
          }),
        },
      ],
    });
    await p.disconnect();
  });
  afterAll(() => deleteTopics(alertTopic, actionTopic));

  const alerts = async (...extra: string[]) => {
    const r = await run(
      process.execPath,
      [
        CLI,
        'alerts',
        '--brokers',
        brokers,
        '--alert-topic',
        alertTopic,
        '--action-topic',
        actionTopic,
        '--once',
        ...extra,
      ],
      {
        timeout: 60_000,
        env: { ...process.env, NO_COLOR: '' },
      },
    );
    return { lines: r.stdout.split('\n').filter(Boolean), stderr: r.stderr };
  };

  it('prints one readable line per event and action, without colour when piped, and the caution on stderr', async () => {
    const { lines, stderr } = await alerts();
    expect(stderr).toContain(NOTICE);
    expect(lines).toHaveLength(5);
    expect(lines.join('\n').includes(String.fromCharCode(27))).toBe(false); // no ANSI escape
    // Partitions interleave, so check content rather than global order.
    expect(lines).toContain(
      '2026-04-01 03:00:00Z  ▲ WARNING   raised   kiln-2/zone-1/temp  kiln-2/zone-1/temp reads 7.5 (raised)',
    );
    expect(lines.some((l) => /◆ CRITICAL {2}updated {2}kiln-2\/zone-1\/temp/.test(l))).toBe(true);
    expect(lines.some((l) => /○ CLEARED {3}cleared {2}dryer-4\/fan\/current/.test(l))).toBe(true);
    // --once merges both topics in time order, so the action (03:01) comes last, named by its sensor.
    expect(lines[4]).toBe(
      '2026-04-01 03:01:00Z  » OPERATOR  acknowl  kiln-2/zone-1/temp  acknowledged by Oskar Feld',
    );
  });

  it('filters by severity floor and sensor glob', async () => {
    const crit = await alerts('--severity', 'critical', '--no-actions');
    expect(crit.lines).toHaveLength(3);
    expect(crit.lines.every((l) => /CRITICAL|CLEARED/.test(l))).toBe(true);
    const kiln = await alerts('--sensor', 'kiln-2/**');
    expect(kiln.lines).toHaveLength(3);
    expect(kiln.lines[2]).toContain('acknowledged by Oskar Feld');
    expect(kiln.lines.every((l) => l.includes('kiln-2/zone-1/temp'))).toBe(true); // action lines name the sensor too
  });

  it('--json writes valid NDJSON, the messages unchanged', async () => {
    const { lines } = await alerts('--json', '--no-actions');
    const parsed = lines.map((l) => JSON.parse(l) as AlertEvent);
    expect(parsed.map((e) => `${e.id}:${e.state}`).sort()).toEqual([
      'a1:raised',
      'a1:updated',
      'a2:cleared',
      'a2:raised',
    ]);
    expect(parsed.find((e) => e.id === 'a2' && e.state === 'raised')).toEqual(events[1]);
  });

  it('--since after the last message prints nothing; bad options are refused with exit 2', async () => {
    const later = await alerts('--since', new Date(Date.now() + 3_600_000).toISOString());
    expect(later.lines).toEqual([]);
    await expect(
      run(process.execPath, [CLI, 'alerts', '--brokers', brokers, '--severity', 'loud']),
    ).rejects.toMatchObject({
      code: 2,
      stderr: expect.stringMatching(/--severity must be warning or critical.*\[ARGS_INVALID\]/),
    });
    await expect(
      run(process.execPath, [
        CLI,
        'alerts',
        '--brokers',
        brokers,
        '--alert-topic',
        uniqueName('missing'),
        '--no-actions',
        '--once',
      ]),
    ).rejects.toMatchObject({
      code: 2,
      stderr: expect.stringMatching(/does not exist.*\[NOT_FOUND\]/),
    });
  });
});
