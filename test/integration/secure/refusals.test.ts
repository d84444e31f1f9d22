/**
 * Each refusal ends in one line naming the dependency and the cause, exit code 2, and no secret:
 * a wrong SASL password, an untrusted certificate (no CA given), plain text sent to the SASL_SSL
 * port, an operation the ACL denies (creating a topic, a viewer's group, reading a topic), plain
 * text sent to the TLS-only Redis, a wrong Redis password or unknown Redis user, and the same at
 * the start of `run` (which otherwise waits out outages) together with a key prefix its Redis
 * user may not write.
 */
import { spawnSync } from 'node:child_process';
import { mkdtempSync, readFileSync, writeFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import path from 'node:path';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { buildKafka, readKafkaSettings } from '../../../services/connect/index.js';
import { secureStack } from '../../harness/secure.js';
import { uniqueName } from '../../harness/services.js';

const CLI = path.resolve('dist/services/cli/main.js');

function refused(args: string[], env: Record<string, string>) {
  const r = spawnSync(process.execPath, [CLI, ...args], {
    env: { ...process.env, ...env },
    encoding: 'utf8',
    timeout: 60_000,
  });
  const lines = r.stderr.trim().split('\n');
  return { status: r.status, last: lines[lines.length - 1], all: r.stdout + r.stderr };
}

describe('secured stack refusals', () => {
  const stack = secureStack();
  const secrets = Object.keys(stack.raw)
    .filter((n) => n.endsWith('PASSWORD_FILE'))
    .map((n) => readFileSync(stack.raw[n], 'utf8').trim());
  const wrong = path.join(mkdtempSync(path.join(tmpdir(), 'sf-pw-')), 'wrong.pw');
  writeFileSync(wrong, 'not-the-password\n');
  const broker = stack.monitor.STREAMFENCE_BROKERS;
  const alerts = ['alerts', '--once', '--no-actions', '--alert-topic', `sf-alerts-${uniqueName('r')}`];
  const denied = `sf-in-${uniqueName('denied')}`;
  const redisUrl = new URL(stack.monitor.STREAMFENCE_REDIS_URL);
  const redisAt = `${redisUrl.hostname}:${redisUrl.port}`;
  const inspect = ['inspect', '--state-prefix', `sf:${uniqueName('r')}`];

  it.each([
    [
      'wrong SASL password',
      alerts,
      { ...stack.monitor, STREAMFENCE_KAFKA_SASL_PASSWORD_FILE: wrong },
      `streamfence: kafka: authentication failed for user monitor (SCRAM-SHA-512) at ${broker}; check the user and password [AUTH_FAILED]`,
    ],
    [
      'untrusted certificate',
      alerts,
      { ...stack.monitor, STREAMFENCE_KAFKA_CA_FILE: '' },
      `streamfence: kafka: TLS handshake with ${broker} failed: Connection error: self-signed certificate in certificate chain; check --kafka-ca-file and the broker's certificate [TLS_FAILED]`,
    ],
    [
      'plain text to the SASL_SSL port',
      alerts,
      {
        STREAMFENCE_BROKERS: broker,
        STREAMFENCE_KAFKA_TLS: 'false',
        STREAMFENCE_KAFKA_CA_FILE: '',
        STREAMFENCE_KAFKA_SASL_MECHANISM: '',
        STREAMFENCE_KAFKA_SASL_USERNAME: '',
        STREAMFENCE_KAFKA_SASL_PASSWORD_FILE: '',
      },
      `streamfence: kafka: ${broker} closed the connection without answering; if its listener expects TLS or SASL, set --kafka-tls and the SASL options [TLS_FAILED]`,
    ],
    [
      'ACL denied (the monitor may not create or write input topics)',
      ['simulate', '--kafka', denied, '--duration', '1h'],
      stack.monitor,
      `streamfence: kafka: not authorised to create or write topic ${denied} (topic ACL) for user monitor; grant the ACL or use another user [NOT_AUTHORISED]`,
    ],
    [
      'plain text to the TLS-only Redis',
      ['inspect'],
      { ...stack.reader, STREAMFENCE_REDIS_URL: `redis://${redisAt}`, STREAMFENCE_REDIS_CA_FILE: '' },
      `streamfence: redis: ${redisAt} closed the connection; if it expects TLS, use a rediss:// URL [TLS_FAILED]`,
    ],
    [
      'wrong Redis password',
      inspect,
      { ...stack.reader, STREAMFENCE_REDIS_PASSWORD_FILE: wrong },
      `streamfence: redis: authentication failed for user reader at ${redisAt}; check the user and password [AUTH_FAILED]`,
    ],
    [
      'unknown Redis ACL user',
      inspect,
      { ...stack.reader, STREAMFENCE_REDIS_USERNAME: 'nobody' },
      `streamfence: redis: authentication failed for user nobody at ${redisAt}; check the user and password [AUTH_FAILED]`,
    ],
  ] as const)('%s', (_name, args, env, line) => {
    const r = refused([...args], { ...env });
    expect(r.last).toBe(line);
    expect(r.status).toBe(2);
    expect(r.all).not.toContain('    at ');
    for (const s of secrets) expect(r.all).not.toContain(s);
  });
});

/** `run` logs JSON lines; a refusal at start is the last one, then it exits 2 instead of retrying. */
describe('secured stack refusals at the start of run', () => {
  const stack = secureStack();
  const wrong = path.join(mkdtempSync(path.join(tmpdir(), 'sf-pw-')), 'wrong.pw');
  writeFileSync(wrong, 'not-the-password\n');
  const redisUrl = new URL(stack.monitor.STREAMFENCE_REDIS_URL);
  const redisAt = `${redisUrl.hostname}:${redisUrl.port}`;
  const id = uniqueName('run');
  const runArgs = (prefix: string) => [
    'run',
    ...['--input-topic', `sf-in-${id}`, '--alert-topic', `sf-alerts-${id}`],
    ...['--rejected-topic', `sf-rejected-${id}`, '--group', `sf-g-${id}`],
    ...['--state-prefix', prefix, '--metrics-port', '0'],
  ];

  it.each([
    [
      'wrong Redis password',
      runArgs(`sf:${id}`),
      { ...stack.monitor, STREAMFENCE_REDIS_PASSWORD_FILE: wrong },
      `redis: authentication failed for user monitor at ${redisAt}; check the user and password [AUTH_FAILED]`,
    ],
    [
      'a key prefix the Redis ACL does not allow (the monitor may use sf* only)',
      runArgs(`other:${id}`),
      stack.monitor,
      `redis: not authorised for user monitor at ${redisAt}: this user has no permissions to access one of the keys used as arguments; grant the ACL or use another user (or a key prefix the user may use) [NOT_AUTHORISED]`,
    ],
    [
      'wrong SASL password',
      runArgs(`sf:${id}`),
      { ...stack.monitor, STREAMFENCE_KAFKA_SASL_PASSWORD_FILE: wrong },
      `kafka: authentication failed for user monitor (SCRAM-SHA-512) at ${stack.monitor.STREAMFENCE_BROKERS}; check the user and password [AUTH_FAILED]`,
    ],
  ] as const)('%s', (_name, args, env, msg) => {
    const r = refused([...args], { ...env });
    const last = JSON.parse(r.last) as { level: number; msg: string };
    expect(last.msg).toBe(msg);
    expect(r.status).toBe(2);
    expect(r.all).not.toContain('    at ');
  });
});

/**
 * A viewer the ACL stops: `alerts --once` as the monitor user (its viewer group is not granted to
 * the monitor) and as the operator on an input topic (not granted to the operator) ends in one line
 * and exit 2, instead of waiting or printing nothing.
 */
describe('secured stack refusals of alerts --once', () => {
  const stack = secureStack();
  const alertTopic = `sf-alerts-${uniqueName('acl')}`;
  const inputTopic = `sf-in-${uniqueName('acl')}`;
  const admin = () =>
    buildKafka(readKafkaSettings({}, stack.admin, { cmd: 'test' }), { clientId: 'sf-test' });

  beforeAll(async () => {
    const kafka = admin();
    const a = kafka.admin();
    await a.connect();
    await a.createTopics({ topics: [{ topic: alertTopic }, { topic: inputTopic }], waitForLeaders: true });
    await a.disconnect();
    const p = kafka.producer();
    await p.connect();
    await p.send({ topic: alertTopic, messages: [{ value: '{}' }] });
    await p.send({ topic: inputTopic, messages: [{ value: '{}' }] });
    await p.disconnect();
  }, 60_000);

  afterAll(async () => {
    const a = admin().admin();
    await a.connect();
    await a.deleteTopics({ topics: [alertTopic, inputTopic] }).catch(() => {});
    await a.disconnect();
  });

  it('the group ACL denies the monitor user a viewer group', () => {
    const r = refused(['alerts', '--once', '--no-actions', '--alert-topic', alertTopic], stack.monitor);
    expect(r.last).toBe(
      `streamfence: kafka: not authorised to read topic ${alertTopic} (group ACL) for user monitor; grant the ACL or use another user [NOT_AUTHORISED]`,
    );
    expect(r.status).toBe(2);
  });

  it('the topic ACL denies the operator user the input topic', () => {
    const r = refused(['alerts', '--once', '--no-actions', '--alert-topic', inputTopic], stack.operator);
    expect(r.last).toBe(
      `streamfence: kafka: not authorised to read topic ${inputTopic} (topic ACL) for user operator; grant the ACL or use another user [NOT_AUTHORISED]`,
    );
    expect(r.status).toBe(2);
  });
});

/**
 * A consumer group the ACL does not grant (the monitor user may use groups starting `sf-` only):
 * `run` ends while joining with one NOT_AUTHORISED line naming the topic and the group, exit 2,
 * within seconds, the denial never retried (no crash loop).
 */
describe('secured stack: run with a group the ACL denies', () => {
  const stack = secureStack();
  const id = uniqueName('grp');
  const topics = [`sf-in-${id}`, `sf-alerts-${id}`, `sf-rejected-${id}`];
  const admin = () =>
    buildKafka(readKafkaSettings({}, stack.admin, { cmd: 'test' }), { clientId: 'sf-test' }).admin();

  beforeAll(async () => {
    const a = admin();
    await a.connect();
    await a.createTopics({ topics: topics.map((topic) => ({ topic })), waitForLeaders: true });
    await a.disconnect();
  }, 60_000);

  afterAll(async () => {
    const a = admin();
    await a.connect();
    await a.deleteTopics({ topics }).catch(() => {});
    await a.disconnect();
  });

  it('ends with one line and exit 2', () => {
    const started = Date.now();
    const r = refused(
      [
        'run',
        ...['--input-topic', topics[0], '--alert-topic', topics[1], '--rejected-topic', topics[2]],
        ...['--group', `other-${id}`, '--state-prefix', `sf:${id}`, '--metrics-port', '0'],
      ],
      stack.monitor,
    );
    const last = JSON.parse(r.last) as { msg: string; code: string };
    expect(last.msg).toBe(
      `kafka: not authorised to read topic ${topics[0]} in group other-${id} (group ACL) for user monitor; grant the ACL or use another user [NOT_AUTHORISED]`,
    );
    expect(last.code).toBe('NOT_AUTHORISED');
    expect(r.status).toBe(2);
    // The denial itself is never retried. A transient answer of a just-started broker ("the
    // coordinator is loading") may be retried once before it, as any outage is.
    const retriedDenials = r.all
      .split('\n')
      .filter((line) => line.includes('retrying') && /authori[sz]/i.test(line));
    expect(retriedDenials).toEqual([]);
    expect(r.all).not.toContain('    at ');
    expect(Date.now() - started).toBeLessThan(30_000);
  });
});
