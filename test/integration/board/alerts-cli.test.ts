/**
 * `streamfence alerts` against the real Kafka: spawns the built CLI (npm run build first) and checks
 * the lines, the filters, --since, --json and that piped output has no colour codes.
 */
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { execFile, spawn } from 'node:child_process';
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
      '2026-04-01 03:00:00Z  ▲ WARNING   raised        kiln-2/zone-1/temp  reads 7.5 (raised)',
    );
    expect(lines.some((l) => /◆ CRITICAL {2}updated {7}kiln-2\/zone-1\/temp/.test(l))).toBe(true);
    expect(lines.some((l) => /○ CLEARED {3}cleared {7}dryer-4\/fan\/current/.test(l))).toBe(true);
    // --once merges both topics in time order, so the action (03:01) comes last, named by its sensor.
    expect(lines[4]).toBe(
      '2026-04-01 03:01:00Z  » OPERATOR  acknowledged  kiln-2/zone-1/temp  by Oskar Feld',
    );
  });

  it('filters by severity floor and sensor glob', async () => {
    const crit = await alerts('--severity', 'critical', '--no-actions');
    expect(crit.lines).toHaveLength(3);
    expect(crit.lines.every((l) => /CRITICAL|CLEARED/.test(l))).toBe(true);
    const kiln = await alerts('--sensor', 'kiln-2/**');
    expect(kiln.lines).toHaveLength(3);
    expect(kiln.lines[2]).toContain('acknowledged  kiln-2/zone-1/temp  by Oskar Feld');
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

  it('following: lines in time order across both topics, at most 120 columns, groups tagged; Ctrl-C stops within 1 s', async () => {
    const alertTopic2 = uniqueName('alerts-follow');
    const actionTopic2 = uniqueName('actions-follow');
    await createTopic(alertTopic2, 3);
    await createTopic(actionTopic2, 1);
    try {
      const at = (m: number) => new Date(Date.parse('2026-04-01T05:00:00Z') + m * 60_000).toISOString();
      const raise = (id: string, sensor: string, minute: number): AlertEvent => ({
        ...ev(id, sensor, 'raised', 'warning'),
        ts: at(minute),
        since: at(minute),
        message: `${sensor} reads 7.5, above the upper fence 6.9 of its six-hour baseline, and has stayed there for many readings in a row`,
      });
      const p = kafkaClient().producer();
      await p.connect();
      // Written out of time order, over three partitions.
      await p.send({
        topic: alertTopic2,
        messages: [
          raise('g3', 'kiln-5/burner/air-flow', 3),
          raise('g1', 'kiln-5/burner/gas-flow', 1),
          raise('g2', 'kiln-5/burner/flame', 2),
          raise('lone', 'dryer-9/fan/current', 0),
        ].map((e) => ({ key: e.sensor, value: JSON.stringify(e) })),
      });
      await p.send({
        topic: actionTopic2,
        messages: [
          {
            key: 'g2',
            value: JSON.stringify({
              kind: 'streamfence.operator-action',
              origin: 'test',
              sensor: 'kiln-5/burner/flame',
              action: { kind: 'acknowledge', id: 'g2', by: 'Wanjiru Halvorsen', at: at(2.5) },
            }),
          },
        ],
      });
      await p.disconnect();

      const child = spawn(
        process.execPath,
        [CLI, 'alerts', '--brokers', brokers, '--alert-topic', alertTopic2, '--action-topic', actionTopic2],
        {
          env: { ...process.env, NO_COLOR: '' },
        },
      );
      let out = '';
      child.stdout.on('data', (d: Buffer) => (out += d.toString('utf8')));
      const exited = new Promise<number | null>((r) => child.on('exit', (code) => r(code)));
      await expect.poll(() => out.split('\n').filter(Boolean).length, { timeout: 30_000 }).toBe(5);
      const lines = out.split('\n').filter(Boolean);
      expect(lines.map((l) => l.slice(0, 20))).toEqual([
        '2026-04-01 05:00:00Z',
        '2026-04-01 05:01:00Z',
        '2026-04-01 05:02:00Z',
        '2026-04-01 05:02:30Z',
        '2026-04-01 05:03:00Z',
      ]);
      for (const l of lines) expect(Array.from(l).length, l).toBeLessThanOrEqual(120);
      expect(lines[0]).not.toContain('[');
      expect(lines[1]).not.toContain('['); // alone so far: a group needs a second alert
      expect(lines[2]).toContain('kiln-5/burner/flame  [grouped, first-out kiln-5/burner/gas-flow]');
      expect(lines[3]).toContain('acknowledged  kiln-5/burner/flame  by Wanjiru Halvorsen');
      expect(lines[4]).toContain('kiln-5/burner/air-flow  [grouped, first-out kiln-5/burner/gas-flow]');
      expect(lines[4].endsWith('…')).toBe(true);

      const t0 = performance.now();
      child.kill('SIGINT');
      expect(await exited).toBe(0);
      const stopMs = performance.now() - t0;
      expect(stopMs).toBeLessThan(1000);
    } finally {
      await deleteTopics(alertTopic2, actionTopic2);
    }
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
