/**
 * `streamfence topics` on the secured stack (SASL_SSL + SCRAM-SHA-512 + ACLs): the admin user
 * creates the four topics and checks them, through the same connection options as every other
 * command; the monitor user (no CREATE, no DESCRIBE on the action topics) gets one NOT_AUTHORISED
 * line naming what it may not do, exit 2. No password appears in any output.
 */
import { spawnSync } from 'node:child_process';
import { readFileSync } from 'node:fs';
import path from 'node:path';
import { afterAll, describe, expect, it } from 'vitest';
import { buildKafka, readKafkaSettings } from '../../../services/connect/index.js';
import { secureStack } from '../../harness/secure.js';
import { uniqueName } from '../../harness/services.js';

const CLI = path.resolve('dist/services/cli/main.js');

function topics(args: string[], env: Record<string, string>) {
  const r = spawnSync(process.execPath, [CLI, 'topics', ...args], {
    env: { ...process.env, ...env },
    encoding: 'utf8',
    timeout: 60_000,
  });
  const lines = r.stderr.split('\n').filter(Boolean);
  return {
    status: r.status,
    stdout: r.stdout,
    all: r.stdout + r.stderr,
    last: lines[lines.length - 1] ?? '',
  };
}

describe('streamfence topics on the secured stack', () => {
  const stack = secureStack();
  const secrets = Object.keys(stack.raw)
    .filter((n) => n.endsWith('PASSWORD_FILE'))
    .map((n) => readFileSync(stack.raw[n], 'utf8').trim());
  const id = uniqueName('tp');
  const names = [`sf-in-${id}`, `sf-alerts-${id}`, `sf-rejected-${id}`, `sf-actions-${id}`];
  const opts = [
    ...['--input-topic', names[0], '--alert-topic', names[1]],
    ...['--rejected-topic', names[2], '--action-topic', names[3]],
  ];
  const outputs: string[] = [];

  afterAll(async () => {
    const admin = buildKafka(readKafkaSettings({}, stack.admin, { cmd: 'test' }), {
      clientId: 'sf-test',
    }).admin();
    await admin.connect();
    await admin.deleteTopics({ topics: names }).catch(() => {});
    await admin.disconnect();
    for (const s of secrets) for (const o of outputs) expect(o).not.toContain(s);
  });

  it('the admin user creates the topics, a second run and check say ok', () => {
    const created = topics(['create', ...opts, '--partitions', '3', '--retention', '2d'], stack.admin);
    outputs.push(created.all);
    expect(created.status, created.all).toBe(0);
    expect(
      created.stdout
        .trim()
        .split('\n')
        .map((l) => l.split(/\s+/).slice(1, 3)),
    ).toEqual(names.map((n) => [n, 'created']));
    expect(created.stdout).toContain('partitions 3, replication 1, retention 2d');
    const check = topics(['check', ...opts, '--partitions', '3', '--retention', '48h'], stack.admin);
    outputs.push(check.all);
    expect(check.status, check.all).toBe(0);
    expect(
      check.stdout
        .trim()
        .split('\n')
        .map((l) => l.split(/\s+/)[2]),
    ).toEqual(['ok', 'ok', 'ok', 'ok']);
  });

  it('the monitor user may not describe the action topic: one NOT_AUTHORISED line', () => {
    const r = topics(['check', ...opts, '--partitions', '3'], stack.monitor);
    outputs.push(r.all);
    expect(r.status).toBe(2);
    expect(r.last).toBe(
      `streamfence: kafka: not authorised to describe topic ${names[3]} (topic ACL) for user monitor; grant the ACL or use another user [NOT_AUTHORISED]`,
    );
    expect(r.all).not.toContain('    at ');
  });

  it('the monitor user may not create topics: one NOT_AUTHORISED line naming them', () => {
    // Names under prefixes the monitor may describe, so the refusal is the create itself.
    const own = uniqueName('tm');
    const mine = [`sf-in-${own}`, `sf-alerts-${own}`, `sf-rejected-${own}`, `sf-alerts-${own}-act`];
    const r = topics(
      [
        'create',
        '--input-topic',
        mine[0],
        '--alert-topic',
        mine[1],
        '--rejected-topic',
        mine[2],
        '--action-topic',
        mine[3],
      ],
      stack.monitor,
    );
    outputs.push(r.all);
    expect(r.status).toBe(2);
    expect(r.last).toBe(
      `streamfence: kafka: not authorised to create topics ${mine.join(', ')} (topic ACL) for user monitor; grant the ACL or use another user [NOT_AUTHORISED]`,
    );
  });
});
