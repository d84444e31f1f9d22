/**
 * Following `streamfence alerts` that had started, then lost its read ACL (#9 point 3, #15 point 1):
 * on the secured stack the operator's terminal view follows its topics; a DENY ACL on its alert
 * topic (literal, this test's topic only) makes its follower fail while running. It then logs one
 * line per attempt naming the dependency and the cause, keeps running (no exit, no stack trace, no
 * library text, no secret), and once the ACL is gone says it follows again and goes on from the
 * offsets it had reached: the new event prints, the old one is not printed twice.
 */
import { spawn, type ChildProcess } from 'node:child_process';
import { readFileSync } from 'node:fs';
import path from 'node:path';
import kafkajs from 'kafkajs';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { buildKafka, readKafkaSettings } from '../../../services/connect/index.js';
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
    sensor: `mixer-2/${id}`,
    state: 'raised',
    severity: 'warning',
    reasons: ['fence_high'],
    value: 64,
    ts: t,
    since: t,
    flaggedReadings: 1,
    baseline: { ...FIXTURE_BASELINE },
    z: 4,
    robustZ: 4,
    percentileRank: 99,
    message: `mixer-2/${id} reads 64`,
    notice: NOTICE,
  };
}

describe('alerts (following) on the secured stack: a read ACL taken away after start', () => {
  let stack: SecureStack;
  const id = uniqueName('aacl');
  const alertTopic = `sf-alerts-${id}`;
  const actionTopic = `sf-actions-${id}`;
  const deny = {
    resourceType: AclResourceTypes.TOPIC,
    resourceName: alertTopic,
    resourcePatternType: ResourcePatternTypes.LITERAL,
    principal: 'User:operator',
    host: '*',
    operation: AclOperationTypes.READ,
    permissionType: AclPermissionTypes.DENY,
  };
  let alerts: ChildProcess | null = null;
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
    if (alerts && alerts.exitCode === null) {
      alerts.kill('SIGTERM');
      await new Promise((r) => alerts!.once('exit', r));
    }
    await withAdmin(async (admin) => {
      await admin.deleteAcls({ filters: [deny] }).catch(() => {});
      await admin.deleteTopics({ topics: [alertTopic, actionTopic] }).catch(() => {});
    });
  });

  it('logs each retry, keeps running, and goes on from where it was once allowed again', async () => {
    alerts = spawn(
      process.execPath,
      [CLI, 'alerts', '--json', '--alert-topic', alertTopic, '--action-topic', actionTopic],
      { env: { ...process.env, ...stack.operator } },
    );
    let out = '';
    let err = '';
    alerts.stdout!.on('data', (c) => (out += String(c)));
    alerts.stderr!.on('data', (c) => (err += String(c)));
    const printedIds = () =>
      out
        .split('\n')
        .filter((line) => line.startsWith('{'))
        .map((line) => (JSON.parse(line) as { id: string }).id);
    await expect.poll(printedIds, { timeout: 60_000 }).toEqual([`first-${id}`]);

    await withAdmin((admin) => admin.createAcls({ acl: [deny] }));
    const retryLines = () =>
      err.split('\n').filter((line) => line.startsWith('streamfence alerts: ') && line.includes('retrying'));
    await expect
      .poll(() => retryLines().filter((line) => line.includes('retrying in')).length, {
        timeout: 60_000,
        interval: 500,
      })
      .toBeGreaterThanOrEqual(2);
    for (const line of retryLines().filter((l) => l.includes('retrying in')))
      expect(line).toMatch(
        new RegExp(
          `^streamfence alerts: kafka: not authorised to read topics ${alertTopic} and ${actionTopic} \\(topic ACL\\) for user operator; grant the ACL or use another user; retrying in \\d+(\\.\\d)? s$`,
        ),
      );
    expect(alerts.exitCode).toBeNull();

    await withAdmin((admin) => admin.deleteAcls({ filters: [deny] }));
    await publish(alertEvent(`second-${id}`));
    await expect
      .poll(printedIds, { timeout: 60_000, interval: 1_000 })
      .toEqual([`first-${id}`, `second-${id}`]);
    expect(err).toContain(`streamfence alerts: following ${alertTopic} and ${actionTopic} again\n`);

    alerts.kill('SIGTERM');
    await new Promise((r) => alerts!.once('exit', r));
    expect(alerts.exitCode).toBe(0);
    // Every stderr line is the banner (and its caution), a retry line or the "again" line.
    const log = `${out}${err}`;
    expect(log).not.toContain('    at ');
    expect(log).not.toMatch(/KafkaJS|TOPIC_AUTHORIZATION_FAILED|unexpected failure/);
    for (const name of Object.keys(stack.raw).filter((n) => n.endsWith('PASSWORD_FILE')))
      expect(log).not.toContain(readFileSync(stack.raw[name], 'utf8').trim());
  }, 240_000);
});
