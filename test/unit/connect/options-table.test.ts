/**
 * The connection options are one table: the README's *Connection options* table is rendered from
 * KAFKA_OPTIONS / REDIS_OPTIONS and must match, and every command that connects must really read
 * its options through services/connect/ (each refuses a bad connection option with the shared
 * message, before touching the network) and list them in its --help.
 *
 * To refresh the README after changing an option: STREAMFENCE_UPDATE_DOCS=1 npx vitest run test/unit/connect
 */
import { readFileSync, writeFileSync } from 'node:fs';
import { describe, expect, it, vi } from 'vitest';
import { ENV } from '../../../services/config/env.js';
import { KAFKA_OPTIONS, REDIS_OPTIONS, type OptionSpec } from '../../../services/connect/index.js';
import { parseRunOptions, RUN_OPTIONS, optionsHelp } from '../../../services/cli/run-options.js';

/** Which commands connect to what; a new connecting command is added here and to the README. */
const USERS = {
  kafka: ['run', 'board', 'alerts', 'simulate --kafka', 'replay kafka://', 'topics'],
  redis: ['run', 'inspect', 'board'],
};

function rows(specs: Record<string, OptionSpec>): string[] {
  return Object.entries(specs).map(([name, s]) => `| \`--${name}\` | \`${s.env}\` | ${s.help} |`);
}

export function connectionTable(): string {
  const used = (xs: string[]) => xs.map((x) => `\`${x}\``).join(', ');
  return [
    `Kafka options are read by ${used(USERS.kafka)}; Redis options by ${used(USERS.redis)}.`,
    '',
    '| option | environment | meaning |',
    '|---|---|---|',
    ...rows(KAFKA_OPTIONS),
    `| (no flag) | \`${ENV.kafkaSaslPassword}\` | the SASL password itself (or use the password file) |`,
    ...rows(REDIS_OPTIONS),
    `| (no flag) | \`${ENV.redisPassword}\` | the Redis password itself (or use the password file) |`,
  ].join('\n');
}

const START = '<!-- connection-options:start -->';
const END = '<!-- connection-options:end -->';

describe('connection options table', () => {
  it('the README table is the one the code defines', () => {
    const readme = readFileSync('README.md', 'utf8');
    const from = readme.indexOf(START);
    const to = readme.indexOf(END);
    expect(from, 'README has the connection-options markers').toBeGreaterThan(0);
    const want = `${START}\n${connectionTable()}\n${END}`;
    const have = readme.slice(from, to + END.length);
    if (have !== want && process.env.STREAMFENCE_UPDATE_DOCS === '1')
      writeFileSync('README.md', readme.slice(0, from) + want + readme.slice(to + END.length));
    else expect(have).toBe(want);
  });

  it('every option has its own variable, and the variables are the documented ones', () => {
    const envs = [...Object.values(KAFKA_OPTIONS), ...Object.values(REDIS_OPTIONS)].map((s) => s.env);
    expect(new Set(envs).size).toBe(envs.length);
    for (const e of envs) expect(Object.values(ENV)).toContain(e);
    // run takes exactly the shared specs (same objects), not copies of them.
    for (const [name, s] of Object.entries({ ...KAFKA_OPTIONS, ...REDIS_OPTIONS }))
      expect(RUN_OPTIONS[name]).toBe(s);
  });
});

/** Runs a command's main() and returns what it threw (commands throw typed errors on bad options). */
async function refusal(load: () => Promise<{ main: (a: string[]) => Promise<number> }>, argv: string[]) {
  const mod = await load();
  const stderr = vi.spyOn(process.stderr, 'write').mockImplementation(() => true);
  try {
    await mod.main(argv);
  } catch (e) {
    return e as Error & { code?: string };
  } finally {
    stderr.mockRestore();
  }
  throw new Error(`${argv.join(' ')} was accepted`);
}

async function helpOf(load: () => Promise<{ main: (a: string[]) => Promise<number> }>): Promise<string> {
  const mod = await load();
  let text = '';
  const stdout = vi.spyOn(process.stdout, 'write').mockImplementation((c) => {
    text += String(c);
    return true;
  });
  try {
    await mod.main(['--help']);
  } finally {
    stdout.mockRestore();
  }
  return text;
}

const BAD_MECH = ['--kafka-sasl-mechanism', 'gssapi', '--kafka-sasl-username', 'u'];
const BAD_REDIS = ['--redis', 'redis://127.0.0.1:1', '--redis-ca-file', '/nowhere/ca.pem'];
const KAFKA = ['--brokers', '127.0.0.1:1'];
const RANGE = ['--from', '2026-01-01T00:00:00Z', '--to', '2026-01-02T00:00:00Z'];

const COMMANDS = {
  board: () => import('../../../services/cli/commands/board.js'),
  alerts: () => import('../../../services/cli/commands/alerts.js'),
  simulate: () => import('../../../services/cli/commands/simulate.js'),
  replay: () => import('../../../services/cli/commands/replay.js'),
  inspect: () => import('../../../services/cli/commands/inspect.js'),
  run: () => import('../../../services/cli/commands/run.js'),
  topics: () => import('../../../services/cli/commands/topics.js'),
};

describe('every connecting command reads the shared options', () => {
  const mechMsg = /--kafka-sasl-mechanism must be one of plain, scram-sha-256, scram-sha-512/;
  const redisMsg = /the URL is redis:\/\/; use rediss:\/\/ for TLS/;
  it.each([
    ['board', [...KAFKA, ...BAD_MECH, '--redis', 'redis://127.0.0.1:1'], mechMsg],
    ['board', [...KAFKA, ...BAD_REDIS], redisMsg],
    ['alerts', [...KAFKA, ...BAD_MECH], mechMsg],
    ['simulate', ['--kafka', 'sf-in-x', ...KAFKA, ...BAD_MECH], mechMsg],
    ['replay', ['kafka://sf-in-x', ...KAFKA, ...RANGE, ...BAD_MECH], mechMsg],
    ['replay', ['kafka://127.0.0.1:1/sf-in-x?from=0&to=10', ...BAD_MECH], mechMsg],
    ['inspect', BAD_REDIS, redisMsg],
    ['run', [...KAFKA, ...BAD_MECH, '--redis', 'redis://127.0.0.1:1'], mechMsg],
    ['run', [...KAFKA, ...BAD_REDIS], redisMsg],
    ['topics', ['check', ...KAFKA, ...BAD_MECH], mechMsg],
  ] as const)('%s %j', async (cmd, argv, msg) => {
    const e = await refusal(COMMANDS[cmd], [...argv]);
    expect(e.code).toBe('ARGS_INVALID');
    expect(e.message).toMatch(msg);
  });

  it.each([
    ['board', { ...KAFKA_OPTIONS, ...REDIS_OPTIONS }],
    ['alerts', KAFKA_OPTIONS],
    ['simulate', KAFKA_OPTIONS],
    ['replay', KAFKA_OPTIONS],
    ['inspect', REDIS_OPTIONS],
    ['topics', KAFKA_OPTIONS],
  ] as const)('%s --help lists every connection option', async (cmd, specs) => {
    const help = await helpOf(COMMANDS[cmd]);
    for (const name of Object.keys(specs)) expect(help).toContain(`--${name}`);
  });

  it('run --help is generated from the same specs', () => {
    expect(parseRunOptions(['--help'], {})).toEqual({ help: true });
    const help = optionsHelp(RUN_OPTIONS);
    for (const name of Object.keys({ ...KAFKA_OPTIONS, ...REDIS_OPTIONS }))
      expect(help).toContain(`--${name} `);
  });
});
