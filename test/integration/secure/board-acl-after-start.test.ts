/**
 * A board that had started, then lost its read ACL (#9, point 3): the operator's board follows its
 * topics on the secured stack; a DENY ACL on its alert topic (literal, this test's topic only, so no
 * other test is touched) makes its follower fail while running. The board then logs one backoff line
 * per attempt, naming the dependency and the cause, counts each in `streamfence_backoff_total` on its
 * /metrics, keeps serving (no exit, no crash loop, no stack trace, no secret) while /readyz answers
 * 503 with the retry line, and once the ACL is gone follows again from where it stopped (/readyz
 * 200): a new alert event shows, the old one is not doubled. Then a DENY on writing the action
 * topic: an acknowledgement is answered 503 with the refusal's one line, logged and counted.
 */
import { spawn, type ChildProcess } from 'node:child_process';
import { readFileSync } from 'node:fs';
import path from 'node:path';
import kafkajs from 'kafkajs';
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

const { AclOperationTypes, AclPermissionTypes, AclResourceTypes, ResourcePatternTypes } = kafkajs;
const CLI = path.resolve('dist/services/cli/main.js');

function alertEvent(id: string): AlertEvent {
  const t = new Date().toISOString();
  return {
    id,
    sensor: `press-4/${id}`,
    state: 'raised',
    severity: 'warning',
    reasons: ['fence_high'],
    value: 87,
    ts: t,
    since: t,
    flaggedReadings: 1,
    baseline: { ...FIXTURE_BASELINE },
    z: 4,
    robustZ: 4,
    percentileRank: 99,
    message: `press-4/${id} reads 87`,
    notice: NOTICE,
  };
}

describe('board on the secured stack: a read ACL taken away after start', () => {
  let stack: SecureStack;
  const id = uniqueName('bacl');
  const alertTopic = `sf-alerts-${id}`;
  const actionTopic = `sf-actions-${id}`;
  const prefix = `sf:${id}`;
  const deny = {
    resourceType: AclResourceTypes.TOPIC,
    resourceName: alertTopic,
    resourcePatternType: ResourcePatternTypes.LITERAL,
    principal: 'User:operator',
    host: '*',
    operation: AclOperationTypes.READ,
    permissionType: AclPermissionTypes.DENY,
  };
  const denyWrite = { ...deny, resourceName: actionTopic, operation: AclOperationTypes.WRITE };
  let board: ChildProcess | null = null;
  const adminKafka = () =>
    buildKafka(readKafkaSettings({}, stack.admin, { cmd: 'test' }), { clientId: 'sf-test' });
  const publish = async (ev: AlertEvent) => {
    const producer = adminKafka().producer();
    await producer.connect();
    await producer.send({ topic: alertTopic, messages: [{ key: ev.sensor, value: JSON.stringify(ev) }] });
    await producer.disconnect();
  };
  const withAdmin = async (task: (admin: kafkajs.Admin) => Promise<unknown>) => {
    const admin = adminKafka().admin();
    await admin.connect();
    try {
      await task(admin);
    } finally {
      await admin.disconnect();
    }
  };

  beforeAll(async () => {
    stack = secureStack();
    await withAdmin((admin) =>
      admin.createTopics({ topics: [{ topic: alertTopic }, { topic: actionTopic }], waitForLeaders: true }),
    );
    await publish(alertEvent(`first-${id}`));
  }, 120_000);

  afterAll(async () => {
    if (board && board.exitCode === null) {
      board.kill('SIGTERM');
      await new Promise((r) => board!.once('exit', r));
    }
    await withAdmin(async (admin) => {
      await admin.deleteAcls({ filters: [deny, denyWrite] }).catch(() => {});
      await admin.deleteTopics({ topics: [alertTopic, actionTopic] }).catch(() => {});
    });
    const redis = buildRedis(readRedisSettings({}, stack.admin, { cmd: 'test', required: true }));
    await redis.connect();
    const keys = await redis.keys(`${prefix}*`);
    if (keys.length) await redis.del(...keys);
    redis.disconnect();
  });

  it('logs and counts each retry, keeps serving, and follows on once allowed again', async () => {
    board = spawn(
      process.execPath,
      [CLI, 'board', '--alert-topic', alertTopic, '--action-topic', actionTopic],
      {
        env: {
          ...process.env,
          ...stack.operator,
          STREAMFENCE_STATE_PREFIX: prefix,
          STREAMFENCE_BOARD_PORT: '0',
        },
      },
    );
    let log = '';
    board.stdout!.on('data', (c) => (log += String(c)));
    board.stderr!.on('data', (c) => (log += String(c)));
    await expect.poll(() => /board at (http:\/\/\S+?)\/?\n/.exec(log)?.[1], { timeout: 60_000 }).toBeTruthy();
    const url = /board at (http:\/\/\S+?)\/?\n/.exec(log)![1];
    const alertIds = async () =>
      ((await (await fetch(`${url}/api/alerts`)).json()) as { id: string }[]).map((a) => a.id).sort();
    await expect.poll(alertIds, { timeout: 30_000 }).toEqual([`first-${id}`]);

    await withAdmin((admin) => admin.createAcls({ acl: [deny] }));
    const retryLines = () =>
      log
        .split('\n')
        .filter((line) => line.startsWith('streamfence board: ') && line.includes('retrying in'));
    await expect
      .poll(() => retryLines().length, { timeout: 60_000, interval: 500 })
      .toBeGreaterThanOrEqual(2);
    for (const line of retryLines())
      expect(line).toMatch(
        new RegExp(
          `^streamfence board: kafka: not authorised to read ${alertTopic} and ${actionTopic} \\(topic ACL\\) for user operator; grant the ACL or use another user; retrying in \\d+(\\.\\d)? s$`,
        ),
      );
    const metrics = await (await fetch(`${url}/metrics`)).text();
    const counted = Number(
      /^streamfence_backoff_total\{dependency="kafka",cause="acl"\} (\d+)$/m.exec(metrics)?.[1] ?? 0,
    );
    // Every logged line is counted: the count at the scrape is at least 2 and no more than the
    // lines logged by now (a retry may land between the scrape and this read).
    expect(counted).toBeGreaterThanOrEqual(2);
    expect(counted).toBeLessThanOrEqual(retryLines().length);
    // Still serving what it had, still running, but not ready: /readyz says what it waits for.
    expect(await alertIds()).toEqual([`first-${id}`]);
    expect(board.exitCode).toBeNull();
    const notReady = await fetch(`${url}/readyz`);
    expect(notReady.status).toBe(503);
    expect(((await notReady.json()) as { waiting: string }).waiting).toMatch(
      new RegExp(
        `^kafka: not authorised to read ${alertTopic} and ${actionTopic} \\(topic ACL\\) .*; retrying in `,
      ),
    );

    await withAdmin((admin) => admin.deleteAcls({ filters: [deny] }));
    await publish(alertEvent(`second-${id}`));
    await expect
      .poll(alertIds, { timeout: 60_000, interval: 1_000 })
      .toEqual([`first-${id}`, `second-${id}`]);
    const events = Number(
      /^streamfence_board_alert_events_total (\d+)$/m.exec(await (await fetch(`${url}/metrics`)).text())?.[1],
    );
    // Followed on from where it stopped: the first event was not read (and applied) again.
    expect(events).toBe(2);
    await expect.poll(async () => (await fetch(`${url}/readyz`)).status, { timeout: 30_000 }).toBe(200);

    // An acknowledgement Kafka refuses (the operator may no longer write the action topic): 503
    // with the one line, logged and counted, no client library text.
    await withAdmin((admin) => admin.createAcls({ acl: [denyWrite] }));
    const ack = await fetch(`${url}/api/alerts/second-${id}/acknowledge`, {
      method: 'POST',
      headers: { 'content-type': 'application/json' },
      body: JSON.stringify({ by: 'Ossian Marl' }),
    });
    expect(ack.status).toBe(503);
    const refusal = `kafka: not authorised to write topic ${actionTopic} (topic ACL) for user operator; grant the ACL or use another user`;
    expect(await ack.json()).toEqual({
      error: 'unavailable',
      message: `acknowledgement not shared with the other boards: ${refusal}; try again in a moment`,
    });
    expect(log).toContain(`streamfence board: acknowledge of alert second-${id} not taken: ${refusal}\n`);
    expect(await (await fetch(`${url}/metrics`)).text()).toMatch(
      /^streamfence_board_action_failures_total\{dependency="kafka",cause="acl"\} 1$/m,
    );
    await withAdmin((admin) => admin.deleteAcls({ filters: [denyWrite] }));

    board.kill('SIGTERM');
    await new Promise((r) => board!.once('exit', r));
    expect(board.exitCode).toBe(0);
    expect(log).not.toContain('    at ');
    expect(log).not.toMatch(/KafkaJS|TOPIC_AUTHORIZATION_FAILED/);
    for (const name of Object.keys(stack.raw).filter((n) => n.endsWith('PASSWORD_FILE')))
      expect(log).not.toContain(readFileSync(stack.raw[name], 'utf8').trim());
  }, 240_000);
});
