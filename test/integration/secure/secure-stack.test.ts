/**
 * Every command end to end against the secured local stack (SASL_SSL + SCRAM-SHA-512 + ACL Kafka,
 * TLS-only ACL Redis), each as the least-privileged user the README names: admin produces readings
 * (simulate --kafka), the monitor user judges them with state in the TLS Redis (run), the operator
 * follows the alerts (alerts --once), the read-only Redis user reads state (inspect), and the live
 * alerts equal a file replay of the same readings. No password appears in any output.
 */
import { spawn, spawnSync } from 'node:child_process';
import { mkdtempSync, readFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import path from 'node:path';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { buildKafka, readKafkaSettings } from '../../../services/connect/index.js';
import { secureStack, type SecureStack } from '../../harness/secure.js';
import { uniqueName } from '../../harness/services.js';

const CLI = path.resolve('dist/services/cli/main.js');
const SIM = ['--duration', '1d', '--sensors', '4', '--seed', '7', '--start', '2026-01-05T00:00:00Z'];

function cli(args: string[], env: Record<string, string>, timeout = 60_000) {
  return spawnSync(process.execPath, [CLI, ...args], {
    env: { ...process.env, ...env },
    encoding: 'utf8',
    timeout,
  });
}

describe('the secured stack, every command', () => {
  let stack: SecureStack;
  const id = uniqueName('x');
  const input = `sf-in-${id}`;
  const alerts = `sf-alerts-${id}`;
  const rejected = `sf-rejected-${id}`;
  const group = `sf-g-${id}`;
  const prefix = `sf:${id}`;
  const outputs: string[] = [];
  const secrets: string[] = [];

  beforeAll(async () => {
    stack = secureStack();
    for (const k of Object.keys(stack.raw).filter((n) => n.endsWith('PASSWORD_FILE')))
      secrets.push(readFileSync(stack.raw[k], 'utf8').trim());
    const admin = buildKafka(readKafkaSettings({}, stack.admin, { cmd: 'test' }), {
      clientId: 'sf-test',
    }).admin();
    await admin.connect();
    await admin.createTopics({
      topics: [{ topic: alerts }, { topic: rejected }],
      waitForLeaders: true,
    });
    await admin.disconnect();
  }, 200_000);

  afterAll(async () => {
    const admin = buildKafka(readKafkaSettings({}, stack.admin, { cmd: 'test' }), {
      clientId: 'sf-test',
    }).admin();
    await admin.connect();
    await admin.deleteTopics({ topics: [input, alerts, rejected] }).catch(() => {});
    await admin.disconnect();
  });

  it('simulate, run, alerts, inspect as their users; live equals replay; no secret printed', async () => {
    const sim = cli(['simulate', '--kafka', input, ...SIM], stack.admin);
    outputs.push(sim.stdout, sim.stderr);
    expect(sim.status, sim.stderr).toBe(0);

    const monitor = spawn(
      process.execPath,
      [
        CLI,
        'run',
        ...['--input-topic', input, '--alert-topic', alerts, '--rejected-topic', rejected],
        ...['--group', group, '--state-prefix', prefix, '--metrics-port', '0', '--checkpoint-ms', '200'],
        // The readings were simulated onto the topic before the monitor started.
        ...['--start-from', 'earliest'],
      ],
      { env: { ...process.env, ...stack.monitor } },
    );
    let monitorLog = '';
    monitor.stdout.on('data', (c) => (monitorLog += String(c)));
    monitor.stderr.on('data', (c) => (monitorLog += String(c)));
    let seen = 0;
    try {
      // Done when the stored counts stop moving (some readings are rejected, so no fixed total);
      // the comparison with the file replay below proves nothing was missed.
      let steady = 0;
      const deadline = Date.now() + 90_000;
      while (Date.now() < deadline && steady < 3) {
        const ins = cli(['inspect', '--state-prefix', prefix], stack.reader);
        if (ins.status === 0) {
          const lines = ins.stdout.trim().split('\n').filter(Boolean);
          const now = lines.reduce((n, l) => n + (JSON.parse(l) as { seen: number }).seen, 0);
          steady = now > 0 && now === seen ? steady + 1 : 0;
          seen = now;
          outputs.push(ins.stdout);
        } else outputs.push(ins.stderr);
        await new Promise((r) => setTimeout(r, 1000));
      }
    } finally {
      monitor.kill('SIGTERM');
      await new Promise((r) => monitor.once('exit', r));
      outputs.push(monitorLog);
    }
    expect(seen, monitorLog.slice(-2000)).toBeGreaterThan(4 * 1200);

    const live = cli(['alerts', '--once', '--json', '--no-actions', '--alert-topic', alerts], stack.operator);
    outputs.push(live.stderr);
    expect(live.status, live.stderr).toBe(0);
    const liveIds = live.stdout
      .trim()
      .split('\n')
      .filter(Boolean)
      .map(
        (l) =>
          (JSON.parse(l) as { id: string; state: string }).id +
          ':' +
          (JSON.parse(l) as { state: string }).state,
      );

    const dir = mkdtempSync(path.join(tmpdir(), 'sf-secure-'));
    const file = path.join(dir, 'readings.ndjson');
    expect(cli(['simulate', '--readings', file, ...SIM], {}).status).toBe(0);
    expect(cli(['replay', file, '--out', path.join(dir, 'out')], {}).status).toBe(0);
    const replayIds = readFileSync(path.join(dir, 'out', 'alerts.ndjson'), 'utf8')
      .trim()
      .split('\n')
      .filter(Boolean)
      .map((l) => (JSON.parse(l) as { id: string }).id + ':' + (JSON.parse(l) as { state: string }).state);
    expect(replayIds.length).toBeGreaterThan(0);
    expect([...new Set(liveIds)].sort()).toEqual([...new Set(replayIds)].sort());

    const all = outputs.join('\n');
    for (const s of secrets) expect(all).not.toContain(s);
  }, 200_000);
});
