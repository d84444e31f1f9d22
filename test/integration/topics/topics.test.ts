/**
 * `streamfence topics create|check` against the real local Kafka (the harness's brokers), the built
 * CLI as a child process: check reports missing topics (exit 2, one TOPICS_DIFFER line), create makes
 * them with the partitions and retention asked for (read back here with the test's own admin client,
 * not through the command), a second create changes nothing, a partly present set gets only its
 * missing topics, check names each difference, and a replication factor above the broker count is
 * refused before anything is created.
 */
import { spawnSync } from 'node:child_process';
import path from 'node:path';
import { afterAll, describe, expect, it } from 'vitest';
import kafkajs from 'kafkajs';
import { deleteTopics, kafkaBrokers, kafkaClient, uniqueName } from '../../harness/services.js';

const { ConfigResourceTypes } = kafkajs;
const CLI = path.resolve('dist/services/cli/main.js');

function topics(args: string[], env: Record<string, string> = {}) {
  const base = Object.fromEntries(Object.entries(process.env).filter(([k]) => !k.startsWith('STREAMFENCE_')));
  const r = spawnSync(process.execPath, [CLI, 'topics', ...args], {
    env: { ...base, STREAMFENCE_BROKERS: kafkaBrokers().join(','), ...env },
    encoding: 'utf8',
    timeout: 60_000,
  });
  const errLines = r.stderr.split('\n').filter((l) => l !== '');
  return { status: r.status, stdout: r.stdout, stderr: r.stderr, last: errLines[errLines.length - 1] ?? '' };
}

/** The layout the cluster reports, read without streamfence's code. */
async function layout(names: string[]) {
  const admin = kafkaClient().admin();
  await admin.connect();
  try {
    const { topics: meta } = await admin.fetchTopicMetadata({ topics: names });
    const configs = await admin.describeConfigs({
      resources: names.map((name) => ({
        type: ConfigResourceTypes.TOPIC,
        name,
        configNames: ['retention.ms'],
      })),
      includeSynonyms: false,
    });
    return Object.fromEntries(
      meta.map((t) => [
        t.name,
        {
          partitions: t.partitions.length,
          replicas: t.partitions[0].replicas.length,
          retentionMs: Number(
            configs.resources.find((r) => r.resourceName === t.name)!.configEntries[0].configValue,
          ),
        },
      ]),
    );
  } finally {
    await admin.disconnect();
  }
}

describe('streamfence topics on the plain stack', () => {
  const id = uniqueName('topics');
  const names = {
    input: `in-${id}`,
    alert: `alerts-${id}`,
    rejected: `rejected-${id}`,
    action: `actions-${id}`,
  };
  const all = Object.values(names);
  const opts = [
    ...['--input-topic', names.input, '--alert-topic', names.alert],
    ...['--rejected-topic', names.rejected, '--action-topic', names.action],
  ];
  const asked = ['--partitions', '2', '--retention', '36h'];

  afterAll(async () => {
    await deleteTopics(...all).catch(() => {});
  });

  it('check before create: every topic missing, exit 2, one line naming them', () => {
    const r = topics(['check', ...opts, ...asked]);
    expect(r.status).toBe(2);
    expect(
      r.stdout
        .trim()
        .split('\n')
        .map((l) => l.split(/\s+/).slice(0, 3)),
    ).toEqual([
      ['input', names.input, 'missing'],
      ['alert', names.alert, 'missing'],
      ['rejected', names.rejected, 'missing'],
      ['action', names.action, 'missing'],
    ]);
    expect(r.last).toBe(
      `streamfence: kafka ${kafkaBrokers().join(',')}: 4 of 4 topics not as asked (${all.map((n) => `${n} is missing`).join('; ')}); run "streamfence topics create" with the same options [TOPICS_DIFFER]`,
    );
  });

  it('create makes them as asked; the cluster agrees', async () => {
    const r = topics(['create', ...opts, ...asked, '--json']);
    expect(r.status, r.stderr).toBe(0);
    const verdicts = r.stdout
      .trim()
      .split('\n')
      .map((l) => JSON.parse(l) as { name: string; status: string });
    expect(verdicts.map((v) => [v.name, v.status])).toEqual(all.map((n) => [n, 'created']));
    const held = await layout(all);
    for (const n of all) expect(held[n]).toEqual({ partitions: 2, replicas: 1, retentionMs: 36 * 3_600_000 });
  });

  it('a second create changes nothing and says ok; check agrees', () => {
    const again = topics(['create', ...opts, ...asked]);
    expect(again.status, again.stderr).toBe(0);
    expect(
      again.stdout
        .trim()
        .split('\n')
        .map((l) => l.split(/\s+/)[2]),
    ).toEqual(['ok', 'ok', 'ok', 'ok']);
    const check = topics(['check', ...opts], {
      STREAMFENCE_TOPICS_PARTITIONS: '2',
      STREAMFENCE_TOPICS_RETENTION: '36h',
    });
    expect(check.status, check.stderr).toBe(0);
    expect(check.stdout).toContain('partitions 2, replication 1, retention 36h');
  });

  it('check names each difference and exits 2; create never alters an existing topic', async () => {
    const r = topics(['check', ...opts, '--partitions', '3', '--retention', '36h']);
    expect(r.status).toBe(2);
    expect(r.stdout).toMatch(new RegExp(`^input +${names.input} +differs +partitions 2, asked 3$`, 'm'));
    expect(r.last).toMatch(
      /4 of 4 topics not as asked .*streamfence never changes an existing topic.*\[TOPICS_DIFFER\]$/,
    );
    const c = topics(['create', ...opts, '--partitions', '3', '--retention', '36h']);
    expect(c.status).toBe(2);
    expect((await layout(all))[names.input].partitions).toBe(2);
  });

  it('a partly present set: create makes only the missing topic', async () => {
    await deleteTopics(names.action);
    // The deletion is asynchronous in the broker; wait until the topic is gone from the list.
    const admin = kafkaClient().admin();
    await admin.connect();
    for (let i = 0; i < 50 && (await admin.listTopics()).includes(names.action); i++)
      await new Promise((r) => setTimeout(r, 200));
    await admin.disconnect();
    const r = topics(['create', ...opts, ...asked]);
    expect(r.status, r.stderr).toBe(0);
    expect(
      r.stdout
        .trim()
        .split('\n')
        .map((l) => l.split(/\s+/)[2]),
    ).toEqual(['ok', 'ok', 'ok', 'created']);
  });

  it('refuses a replication factor above the broker count before creating anything', async () => {
    const other = `in-${uniqueName('rf')}`;
    const r = topics(['create', ...opts.slice(2), '--input-topic', other, '--replication-factor', '2']);
    expect(r.status).toBe(2);
    expect(r.stderr.split('\n').filter(Boolean)).toEqual([
      `streamfence: --replication-factor 2 is more than the 1 broker of the cluster at ${kafkaBrokers().join(',')}; give at most 1 [ARGS_INVALID]`,
    ]);
    const admin = kafkaClient().admin();
    await admin.connect();
    expect(await admin.listTopics()).not.toContain(other);
    await admin.disconnect();
  });

  it('refuses contradictions in the options in one line, before connecting', () => {
    const same = topics(['create', '--input-topic', 'x', '--alert-topic', 'x'], {
      STREAMFENCE_BROKERS: '127.0.0.1:1',
    });
    expect(same.status).toBe(2);
    expect(same.last).toBe(
      'streamfence: --input-topic and --alert-topic are both "x"; each topic has one job, give them different names [ARGS_INVALID]',
    );
    const retention = topics(['check', '--retention', '0'], { STREAMFENCE_BROKERS: '127.0.0.1:1' });
    expect(retention.last).toMatch(
      /--retention must be a positive duration \(30m, 36h, 7d\) or "forever", got "0"/,
    );
    const action = topics(['drop'], { STREAMFENCE_BROKERS: '127.0.0.1:1' });
    expect(action.last).toMatch(/unknown action "drop"; use create or check/);
  });
});
