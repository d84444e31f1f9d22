/**
 * `board` and `replay kafka://` on the secured stack, each as its least-privileged user: the
 * operator's board (reads sf-alerts-*, writes sf-actions-*, actions under the sf: Redis prefix)
 * serves alert events and records an acknowledgement on the action topic and in the TLS Redis;
 * `replay kafka://` as the monitor user reads a time range of readings over SASL_SSL and finds
 * the alerts a file replay of the same readings finds. No password appears in any output.
 */
import { spawn, spawnSync, type ChildProcess } from 'node:child_process';
import { mkdtempSync, readFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import path from 'node:path';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import {
  buildKafka,
  buildRedis,
  readKafkaSettings,
  readRedisSettings,
} from '../../../services/connect/index.js';
import { NOTICE } from '../../../libs/schema/notice.js';
import type { AlertEvent } from '../../../libs/schema/alert-event.js';
import { FIXTURE_BASELINE } from '../../support/alert-fixture.js';
import { secureStack, type SecureStack } from '../../harness/secure.js';
import { uniqueName } from '../../harness/services.js';

const CLI = path.resolve('dist/services/cli/main.js');
const SIM = ['--duration', '6h', '--sensors', '3', '--seed', '11', '--start', '2026-01-05T00:00:00Z'];

function cli(args: string[], env: Record<string, string>, timeout = 90_000) {
  return spawnSync(process.execPath, [CLI, ...args], {
    env: { ...process.env, ...env },
    encoding: 'utf8',
    timeout,
  });
}

function alertEvent(id: string): AlertEvent {
  const t = new Date().toISOString();
  return {
    id,
    sensor: `kiln-2/${id}`,
    state: 'raised',
    severity: 'critical',
    reasons: ['outer_fence_high'],
    value: 412,
    ts: t,
    since: t,
    flaggedReadings: 3,
    baseline: { ...FIXTURE_BASELINE },
    z: 9,
    robustZ: 9,
    percentileRank: 100,
    message: `kiln-2/${id} reads 412`,
    notice: NOTICE,
  };
}

describe('board and replay kafka:// on the secured stack', () => {
  let stack: SecureStack;
  const id = uniqueName('br');
  const alertTopic = `sf-alerts-${id}`;
  const actionTopic = `sf-actions-${id}`;
  const inputTopic = `sf-in-${id}`;
  const prefix = `sf:${id}`;
  const outputs: string[] = [];
  const secrets: string[] = [];
  let board: ChildProcess | null = null;
  const adminKafka = () =>
    buildKafka(readKafkaSettings({}, stack.admin, { cmd: 'test' }), { clientId: 'sf-test' });

  beforeAll(async () => {
    stack = secureStack();
    for (const k of Object.keys(stack.raw).filter((n) => n.endsWith('PASSWORD_FILE')))
      secrets.push(readFileSync(stack.raw[k], 'utf8').trim());
    const kafka = adminKafka();
    const admin = kafka.admin();
    await admin.connect();
    await admin.createTopics({
      topics: [{ topic: alertTopic }, { topic: actionTopic }],
      waitForLeaders: true,
    });
    await admin.disconnect();
    const p = kafka.producer();
    await p.connect();
    const ev = alertEvent(`a-${id}`);
    await p.send({ topic: alertTopic, messages: [{ key: ev.sensor, value: JSON.stringify(ev) }] });
    await p.disconnect();
  }, 120_000);

  afterAll(async () => {
    if (board && board.exitCode === null) {
      board.kill('SIGTERM');
      await new Promise((r) => board!.once('exit', r));
    }
    const admin = adminKafka().admin();
    await admin.connect();
    await admin.deleteTopics({ topics: [alertTopic, actionTopic, inputTopic] }).catch(() => {});
    await admin.disconnect();
    const redis = buildRedis(readRedisSettings({}, stack.admin, { cmd: 'test', required: true }));
    await redis.connect();
    const keys = await redis.keys(`${prefix}*`);
    if (keys.length) await redis.del(...keys);
    redis.disconnect();
  });

  it('board as the operator serves the alert and records an acknowledgement', async () => {
    board = spawn(
      process.execPath,
      [
        CLI,
        'board',
        '--alert-topic',
        alertTopic,
        '--action-topic',
        actionTopic,
        '--state-prefix',
        prefix,
        '--port',
        '0',
      ],
      { env: { ...process.env, ...stack.operator } },
    );
    let log = '';
    board.stdout!.on('data', (c) => (log += String(c)));
    board.stderr!.on('data', (c) => (log += String(c)));
    await expect.poll(() => /board at (http:\/\/\S+?)\/?\n/.exec(log)?.[1], { timeout: 60_000 }).toBeTruthy();
    const url = /board at (http:\/\/\S+?)\/?\n/.exec(log)![1];
    const alertId = `a-${id}`;
    await expect
      .poll(
        async () => ((await (await fetch(`${url}/api/alerts`)).json()) as { id: string }[]).map((a) => a.id),
        { timeout: 30_000 },
      )
      .toEqual([alertId]);
    const ack = await fetch(`${url}/api/alerts/${alertId}/acknowledge`, {
      method: 'POST',
      headers: { 'content-type': 'application/json' },
      body: JSON.stringify({ by: 'Tamsin Oakridge' }),
    });
    expect(ack.status, await ack.clone().text()).toBe(200);

    // The acknowledgement is on the action topic (read back by the operator's terminal view) ...
    await expect
      .poll(
        () => {
          const r = cli(
            ['alerts', '--once', '--json', '--alert-topic', alertTopic, '--action-topic', actionTopic],
            stack.operator,
          );
          outputs.push(r.stdout, r.stderr);
          return r.stdout
            .split('\n')
            .filter(Boolean)
            .map((l) => JSON.parse(l) as { kind?: string; action?: { kind: string; id: string; by: string } })
            .filter((m) => m.kind === 'streamfence.operator-action')
            .map((m) => `${m.action!.kind}:${m.action!.id}:${m.action!.by}`);
        },
        { timeout: 30_000, interval: 2_000 },
      )
      .toEqual([`acknowledge:${alertId}:Tamsin Oakridge`]);
    // ... and kept in the TLS Redis under the prefix.
    const redis = buildRedis(readRedisSettings({}, stack.admin, { cmd: 'test', required: true }));
    await redis.connect();
    const saved = await redis.hgetall(`${prefix}:board:actions`);
    redis.disconnect();
    expect(Object.keys(saved)).toEqual([`${alertId}|ack`]);

    board.kill('SIGTERM');
    await new Promise((r) => board!.once('exit', r));
    outputs.push(log);
    for (const s of secrets) expect(outputs.join('\n')).not.toContain(s);
  }, 180_000);

  it('replay kafka:// as the monitor reads a time range, and the whole range equals a file replay', () => {
    const sim = cli(['simulate', '--kafka', inputTopic, ...SIM], stack.admin);
    outputs.push(sim.stdout, sim.stderr);
    expect(sim.status, sim.stderr).toBe(0);
    const dir = mkdtempSync(path.join(tmpdir(), 'sf-secure-replay-'));
    // simulate --kafka stamps each message with its reading time, so the range is in plant time.
    const replayKafka = (from: string, to: string, out: string) => {
      const r = cli(
        ['replay', `kafka://${inputTopic}`, '--from', from, '--to', to, '--out', path.join(dir, out)],
        stack.monitor,
      );
      outputs.push(r.stdout, r.stderr);
      expect(r.status, r.stderr).toBe(0);
    };
    replayKafka('2026-01-05T00:00:00Z', '2026-01-05T07:00:00Z', 'kafka-all');
    replayKafka('2026-01-05T01:00:00Z', '2026-01-05T03:00:00Z', 'kafka-part');

    const file = path.join(dir, 'readings.ndjson');
    const made = cli(['simulate', '--readings', file, ...SIM], {});
    expect(made.status, made.stderr).toBe(0);
    expect(cli(['replay', file, '--out', path.join(dir, 'file')], {}).status).toBe(0);

    const ids = (sub: string) =>
      readFileSync(path.join(dir, sub, 'alerts.ndjson'), 'utf8')
        .split('\n')
        .filter(Boolean)
        .map((l) => JSON.parse(l) as { id: string; state: string })
        .map((e) => `${e.id}:${e.state}`)
        .sort();
    const messages = (sub: string) =>
      (
        JSON.parse(readFileSync(path.join(dir, sub, 'summary.json'), 'utf8')) as {
          input: { kafka: { messages: number } };
        }
      ).input.kafka.messages;
    expect(ids('file').length).toBeGreaterThan(0);
    expect(ids('kafka-all')).toEqual(ids('file'));
    const lines = readFileSync(file, 'utf8').split('\n').filter(Boolean);
    const inPart = lines.filter((l) => {
      const ts = Date.parse((JSON.parse(l) as { ts: string }).ts);
      return ts >= Date.parse('2026-01-05T01:00:00Z') && ts < Date.parse('2026-01-05T03:00:00Z');
    });
    expect(messages('kafka-all')).toBe(lines.length);
    expect(messages('kafka-part')).toBe(inPart.length);
    for (const s of secrets) expect(outputs.join('\n')).not.toContain(s);
  }, 180_000);
});
