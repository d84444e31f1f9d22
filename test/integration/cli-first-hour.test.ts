/**
 * A new user's first hour, command by command: each mistake that waiting cannot fix (a missing
 * topic, a closed port, an unreadable, empty or misnamed file, an empty or broken config, an
 * out-of-range number, a time without a zone, a secret on the command line) ends the command with
 * exit 2 and ONE line on stderr that names the culprit, with no stack trace and no library's raw
 * text, well within 15 s. Real Kafka and Redis (the harness), the built CLI as a child process.
 *
 * The caution banner (`streamfence <cmd> — NOTICE`) is the only other line a failing command may
 * print, and only when the failure is found after the command has started its work.
 */
import { execFile } from 'node:child_process';
import { mkdirSync, mkdtempSync, readFileSync, writeFileSync } from 'node:fs';
import { createServer, type Server } from 'node:net';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { gzipSync } from 'node:zlib';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { bannerText } from '../../services/setup/args.js';
import { createTopic, deleteTopics, kafkaBrokers, redisUrl, uniqueName } from '../harness/services.js';

const CLI = 'dist/services/cli/main.js';
const COMMANDS = ['demo', 'replay', 'run', 'inspect', 'board', 'alerts', 'simulate', 'tune', 'topics'];
/** Generous: every refusal here is measured at 1-3 s on the shared 2-core machine. */
const TIME_LIMIT_MS = 15_000;

interface Outcome {
  code: number | null;
  stdout: string;
  stderr: string;
  ms: number;
}

/** Run the CLI with only the variables given (none of the harness's STREAMFENCE_* leak in). */
function cli(args: string[], env: Record<string, string> = {}): Promise<Outcome> {
  const base = Object.fromEntries(
    Object.entries(process.env).filter(([k]) => !k.startsWith('STREAMFENCE_')),
  ) as Record<string, string>;
  const started = performance.now();
  return new Promise((resolve) => {
    execFile(
      process.execPath,
      [CLI, ...args],
      { env: { ...base, ...env }, timeout: 60_000 },
      (err, stdout, stderr) => {
        const code = err === null ? 0 : typeof err.code === 'number' ? err.code : null;
        resolve({ code, stdout, stderr, ms: performance.now() - started });
      },
    );
  });
}

/** A port nothing listens on: bound once by the OS, then released. */
async function closedPort(): Promise<number> {
  const server = createServer();
  await new Promise<void>((r) => server.listen(0, '127.0.0.1', r));
  const port = (server.address() as { port: number }).port;
  await new Promise<void>((r) => server.close(() => r()));
  return port;
}

const dir = mkdtempSync(join(tmpdir(), 'sf-first-hour-'));
const p = (name: string) => join(dir, name);
const T0 = Date.parse('2026-04-01T00:00:00Z');
const readings = Array.from(
  { length: 300 },
  (_, i) =>
    `${JSON.stringify({ sensor: 'kiln-2/temp', ts: new Date(T0 + i * 60_000).toISOString(), value: 400 + (i % 7) })}\n`,
).join('');

let missingTopic: string;
let presentTopic: string;
let deadPort: number;
/** A TCP server that ends every connection on its first bytes (a TLS hello): a peer that drops TLS. */
let dropper: Server;
let dropPort: number;

beforeAll(async () => {
  writeFileSync(p('readings.ndjson'), readings);
  writeFileSync(p('empty.ndjson'), '');
  writeFileSync(p('blank.ndjson'), '\n  \n\n');
  writeFileSync(p('zipped.ndjson'), gzipSync(readings));
  writeFileSync(p('empty.yaml'), '# nothing yet\n');
  writeFileSync(p('broken.yaml'), 'defaults:\n  fenceK: [1.5\n');
  writeFileSync(p('labels.csv'), 'sensor,start,end\nkiln-2/temp,2026-04-01T02:00:00Z,2026-04-01T02:30:00Z\n');
  writeFileSync(p('a-file'), 'not a folder\n');
  writeFileSync(p('short-token'), 'tiny\n');
  mkdirSync(p('a-folder'));
  missingTopic = uniqueName('first-hour-missing');
  presentTopic = uniqueName('first-hour-alerts');
  await createTopic(presentTopic);
  deadPort = await closedPort();
  dropper = createServer((socket) => socket.once('data', () => socket.destroy()));
  await new Promise<void>((r) => dropper.listen(0, '127.0.0.1', r));
  dropPort = (dropper.address() as { port: number }).port;
}, 60_000);

afterAll(async () => {
  await new Promise<void>((r) => dropper.close(() => r()));
  await deleteTopics(presentTopic);
});

/** [what, args, env, code, culprit the line must name] */
type Row = [string, () => string[], () => Record<string, string>, string, () => RegExp];

const none = () => ({});
const brokers = () => kafkaBrokers().join(',');

// One row per mistake; kept as a table (prettier would spread each row over many lines).
// prettier-ignore
const ROWS: Row[] = [
  // replay
  ['replay: missing file', () => ['replay', p('nope.ndjson')], none, 'INPUT_UNREADABLE', () => /nope\.ndjson.*no such file/],
  ['replay: a folder as input', () => ['replay', p('a-folder')], none, 'INPUT_UNREADABLE', () => /a-folder.*folder, not a file/],
  ['replay: empty file', () => ['replay', p('empty.ndjson'), '--out', p('o1')], none, 'INPUT_EMPTY', () => /empty\.ndjson.*0 bytes/],
  ['replay: only blank lines', () => ['replay', p('blank.ndjson'), '--out', p('o2')], none, 'INPUT_EMPTY', () => /blank\.ndjson.*nothing to read/],
  ['replay: empty config', () => ['replay', p('readings.ndjson'), '--config', p('empty.yaml'), '--out', p('o3')], none, 'CONFIG_INVALID', () => /empty\.yaml.*empty/],
  ['replay: broken YAML', () => ['replay', p('readings.ndjson'), '--config', p('broken.yaml')], none, 'CONFIG_INVALID', () => /broken\.yaml.*line 3, column 1: [A-Z][^:]*\] \[CONFIG_INVALID\]$/],
  ['replay: --out is a file', () => ['replay', p('readings.ndjson'), '--out', p('a-file')], none, 'OUTPUT_UNWRITABLE', () => /a-file.*in the way/],
  ['replay: negative budget', () => ['replay', p('readings.ndjson'), '--report', '--budget', '-1'], none, 'ARGS_INVALID', () => /--budget must be a positive number, got "-1"/],
  ['replay: negative budget from the environment', () => ['replay', p('readings.ndjson'), '--report'], () => ({ STREAMFENCE_ALERT_BUDGET: '-1' }), 'ARGS_INVALID', () => /STREAMFENCE_ALERT_BUDGET must be a positive number/],
  ['replay: --from without a zone', () => ['replay', `kafka://${missingTopic}`, '--brokers', brokers(), '--from', '2026-04-01T00:00:00', '--to', '2026-04-02T00:00:00Z'], none, 'ARGS_INVALID', () => /--from "2026-04-01T00:00:00" is not a time with a zone/],
  ['replay: missing topic', () => ['replay', `kafka://${missingTopic}`, '--brokers', brokers(), '--from', '2026-04-01T00:00:00Z', '--to', '2026-04-02T00:00:00Z', '--out', p('o4')], none, 'NOT_FOUND', () => new RegExp(`topic "${missingTopic}" does not exist`)],
  ['replay: closed Kafka port', () => ['replay', 'kafka://x', '--brokers', `127.0.0.1:${deadPort}`, '--from', '2026-04-01T00:00:00Z', '--to', '2026-04-02T00:00:00Z', '--out', p('o5')], none, 'SERVICE_UNAVAILABLE', () => new RegExp(`^streamfence: kafka 127\\.0\\.0\\.1:${deadPort}: connection refused`)],
  // tune
  ['tune: missing labels', () => ['tune', p('readings.ndjson'), '--labels', p('nope.csv'), '--out', p('t1')], none, 'INPUT_UNREADABLE', () => /labels .*nope\.csv.*no such file/],
  ['tune: empty input', () => ['tune', p('empty.ndjson'), '--labels', p('labels.csv'), '--out', p('t2')], none, 'INPUT_EMPTY', () => /empty\.ndjson.*0 bytes/],
  ['tune: --out is a file', () => ['tune', p('readings.ndjson'), '--labels', p('labels.csv'), '--out', p('a-file'), '--grid', 'fenceK=2'], none, 'OUTPUT_UNWRITABLE', () => /a-file.*in the way/],
  ['tune: negative budget', () => ['tune', p('readings.ndjson'), '--labels', p('labels.csv'), '--out', p('t3'), '--budget', '-1'], none, 'ARGS_INVALID', () => /--budget must be a positive number of alerts per hour, got "-1"/],
  ['tune: empty config', () => ['tune', p('readings.ndjson'), '--labels', p('labels.csv'), '--out', p('t4'), '--config', p('empty.yaml')], none, 'CONFIG_INVALID', () => /empty\.yaml.*empty/],
  // simulate
  ['simulate: closed Kafka port', () => ['simulate', '--kafka', missingTopic, '--brokers', `127.0.0.1:${deadPort}`, '--duration', '1h'], none, 'SERVICE_UNAVAILABLE', () => new RegExp(`kafka 127\\.0\\.0\\.1:${deadPort}: connection refused`)],
  ['simulate: readings under a file', () => ['simulate', '--readings', join(p('a-file'), 'x.ndjson'), '--duration', '1h'], none, 'OUTPUT_UNWRITABLE', () => /a-file.*not a folder|a-file.*in the way/],
  ['simulate: --start without a zone', () => ['simulate', '--readings', p('s.ndjson'), '--start', '2026-01-05T00:00:00'], none, 'ARGS_INVALID', () => /--start "2026-01-05T00:00:00" is not a time with a zone/],
  ['simulate: --out (a folder elsewhere)', () => ['simulate', '--out', p('s.ndjson')], none, 'ARGS_INVALID', () => /--readings FILE/],
  // inspect
  ['inspect: closed Redis port', () => ['inspect', '--redis', `redis://127.0.0.1:${deadPort}`], none, 'SERVICE_UNAVAILABLE', () => new RegExp(`^streamfence: redis 127\\.0\\.0\\.1:${deadPort}: connection refused`)],
  ['inspect: rediss:// to a peer that drops the TLS handshake', () => ['inspect', '--redis', `rediss://127.0.0.1:${dropPort}`], none, 'TLS_FAILED', () => new RegExp(`^streamfence: redis: 127\\.0\\.0\\.1:${dropPort} ended the connection during the TLS handshake; check that this port serves TLS`)],
  ['inspect: a prefix that holds nothing', () => ['inspect', '--redis', redisUrl(), '--state-prefix', missingTopic], none, 'NOT_FOUND', () => new RegExp(`no sensor state under prefix "${missingTopic}"`)],
  // alerts --once
  ['alerts --once: missing topic', () => ['alerts', '--once', '--brokers', brokers(), '--alert-topic', missingTopic], none, 'NOT_FOUND', () => new RegExp(`topic "${missingTopic}" does not exist`)],
  ['alerts --once: missing action topic named', () => ['alerts', '--once', '--brokers', brokers(), '--alert-topic', presentTopic, '--action-topic', missingTopic], none, 'NOT_FOUND', () => new RegExp(`topic "${missingTopic}" does not exist`)],
  ['alerts --once: closed Kafka port', () => ['alerts', '--once', '--brokers', `127.0.0.1:${deadPort}`], none, 'SERVICE_UNAVAILABLE', () => new RegExp(`kafka 127\\.0\\.0\\.1:${deadPort}: connection refused`)],
  // The shared broker's listener is PLAINTEXT: it drops a TLS hello.
  ['alerts --once: --kafka-tls against a plain listener', () => ['alerts', '--once', '--brokers', brokers(), '--kafka-tls'], none, 'TLS_FAILED', () => /^streamfence: kafka: \S+ ended the connection during the TLS handshake; check that this port is a TLS listener/],
  ['replay: --kafka-tls against a plain listener', () => ['replay', `kafka://${missingTopic}`, '--brokers', brokers(), '--kafka-tls', '--from', '2026-04-01T00:00:00Z', '--to', '2026-04-02T00:00:00Z', '--out', p('o6')], none, 'TLS_FAILED', () => /ended the connection during the TLS handshake/],
  ['alerts: --since without a zone', () => ['alerts', '--once', '--brokers', brokers(), '--since', '2026-12-02T05:00:00'], none, 'ARGS_INVALID', () => /--since "2026-12-02T05:00:00" must be a time with a zone/],
  // topics
  ['topics: closed Kafka port', () => ['topics', 'check', '--brokers', `127.0.0.1:${deadPort}`], none, 'SERVICE_UNAVAILABLE', () => new RegExp(`^streamfence: kafka 127\\.0\\.0\\.1:${deadPort}: connection refused`)],
  ['topics: no action', () => ['topics', '--brokers', brokers()], none, 'ARGS_INVALID', () => /say what to do: streamfence topics create, or streamfence topics check/],
  ['topics: more replicas than brokers', () => ['topics', 'create', '--brokers', brokers(), '--input-topic', missingTopic, '--replication-factor', '9'], none, 'ARGS_INVALID', () => /--replication-factor 9 is more than the 1 broker of the cluster/],
  // run, board, demo: argument mistakes (their outages are retried, not refused)
  ['run: metrics port out of range', () => ['run', '--brokers', brokers(), '--redis', redisUrl(), '--metrics-port', '70000'], none, 'ARGS_INVALID', () => /--metrics-port must be a TCP port from 1 to 65535, or 0 for any free port, got "70000"/],
  ['run: negative checkpoint interval', () => ['run', '--brokers', brokers(), '--redis', redisUrl(), '--checkpoint-ms', '-5'], none, 'ARGS_INVALID', () => /--checkpoint-ms must be/],
  ['board: token on the command line', () => ['board', '--brokers', brokers(), '--redis', redisUrl(), '--board-token', 'kiln-room-secret-0042'], none, 'ARGS_INVALID', () => /board token is a secret.*STREAMFENCE_BOARD_TOKEN.*--board-token-file/],
  ['board: token too short', () => ['board', '--brokers', brokers(), '--redis', redisUrl(), '--board-token-file', p('short-token')], none, 'ARGS_INVALID', () => /4 characters; use at least 16/],
  ['board: missing alert topic', () => ['board', '--brokers', brokers(), '--redis', redisUrl(), '--alert-topic', missingTopic, '--action-topic', presentTopic, '--port', '0'], none, 'NOT_FOUND', () => new RegExp(`"${missingTopic}" does not exist`)],
  ['board: missing action topic', () => ['board', '--brokers', brokers(), '--redis', redisUrl(), '--alert-topic', presentTopic, '--action-topic', missingTopic, '--port', '0'], none, 'NOT_FOUND', () => new RegExp(`"${missingTopic}" does not exist`)],
  ['board: port in use', () => ['board', '--brokers', brokers(), '--redis', redisUrl(), '--alert-topic', presentTopic, '--action-topic', presentTopic, '--port', String(new URL(redisUrl()).port || 6379)], none, 'PORT_IN_USE', () => /^streamfence: port \d+ on 127\.0\.0\.1 is in use; choose another with --port/],
  ['board: port out of range', () => ['board', '--brokers', brokers(), '--redis', redisUrl(), '--port', '70000'], none, 'ARGS_INVALID', () => /--port must be a TCP port/],
  ['demo: port out of range', () => ['demo', '--port', '-1'], none, 'ARGS_INVALID', () => /--port must be a TCP port .* got "-1"/],
];

describe('a new user’s first hour: one line per mistake', () => {
  it.each(ROWS)('%s', async (_what, args, env, code, culprit) => {
    const r = await cli(args(), env());
    const lines = r.stderr.split('\n').filter((l) => l !== '');
    const cmd = args()[0];
    const withoutBanner = lines.filter((l) => `${l}\n` !== bannerText(cmd));
    expect(r.code, r.stderr).toBe(2);
    expect(withoutBanner, r.stderr).toHaveLength(1);
    const line = withoutBanner[0];
    expect(line).toMatch(new RegExp(`^streamfence: .+ \\[${code}\\]$`));
    expect(line).toMatch(culprit());
    // Nothing from a stack or a library: no frames, no class names, no errno syntax.
    expect(r.stderr).not.toMatch(/\n\s+at |KafkaJS|ioredis|E[A-Z]{4,}:|Did you forget|ambiguous/);
    expect(line).not.toMatch(/:\s*\[[A-Z_]+\]$/); // never a bare ":" before the code
    expect(r.ms).toBeLessThan(TIME_LIMIT_MS);
  });
});

describe('every command alike', () => {
  it.each(COMMANDS.flatMap((c) => [[c, '-h'] as const, [c, '--help'] as const]))(
    '%s %s prints its help and exits 0',
    async (cmd, flag) => {
      const r = await cli([cmd, flag]);
      expect(r.code, r.stderr).toBe(0);
      expect(r.stdout).toMatch(/Usage: streamfence/);
      expect(r.stderr).toBe('');
    },
  );

  it('a gzip file without the .gz suffix is read by its content', async () => {
    const r = await cli(['replay', p('zipped.ndjson'), '--out', p('zipped-out')]);
    expect(r.code, r.stderr).toBe(0);
    const summary = JSON.parse(readFileSync(join(p('zipped-out'), 'summary.json'), 'utf8')) as {
      readings: number;
      rejected: { total: number };
    };
    expect(summary).toMatchObject({ readings: 300, rejected: { total: 0 } });
  });

  it('an option with no effect is named in one warning line, and the command still runs', async () => {
    const r = await cli(['replay', p('readings.ndjson'), '--out', p('w-out'), '--report-top', '3']);
    expect(r.code, r.stderr).toBe(0);
    expect(r.stderr).toContain('streamfence replay: warning: --report-top has no effect without --report');
  });
});
