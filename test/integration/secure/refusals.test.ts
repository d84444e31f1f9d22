/**
 * Each refusal ends in one line naming the dependency and the cause, exit code 2, and no secret:
 * a wrong SASL password, an untrusted certificate (no CA given), plain text sent to the SASL_SSL
 * port, an operation the ACL denies, and plain text sent to the TLS-only Redis.
 */
import { spawnSync } from 'node:child_process';
import { mkdtempSync, readFileSync, writeFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import path from 'node:path';
import { describe, expect, it } from 'vitest';
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
  const redisAt = new URL(stack.monitor.STREAMFENCE_REDIS_URL).host;
  const alerts = ['alerts', '--once', '--no-actions', '--alert-topic', `sf-alerts-${uniqueName('r')}`];
  const denied = `sf-in-${uniqueName('denied')}`;

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
  ] as const)('%s', (_name, args, env, line) => {
    const r = refused([...args], { ...env });
    expect(r.last).toBe(line);
    expect(r.status).toBe(2);
    expect(r.all).not.toContain('    at ');
    for (const s of secrets) expect(r.all).not.toContain(s);
  });
});
