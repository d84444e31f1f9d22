/**
 * A new user's first hour, command by command: each mistake that waiting cannot fix (a missing
 * topic, a closed port, an unreadable, empty or misnamed file, an empty or broken config, an
 * out-of-range number, a time without a zone, a secret on the command line) ends the command with
 * exit 2 and ONE line on stderr that names the culprit, with no stack trace and no library's raw
 * text, well within 15 s. Real Kafka and Redis (the harness), the built CLI as a child process.
 *
 * The caution banner (`streamfence <cmd> — NOTICE`) is the only other line a failing command may
 * print, and only when the failure is found after the command has started its work. `run` logs
 * JSON (pino): its info entries are log, not lines for the user; its error entry's `msg` is the line.
 * Options that do nothing, and labels that cannot count, are one warning line each, the command
 * still running (exit 0).
 *
 * The rows run concurrently (at most MAX_CHILDREN child processes at a time): each uses its own
 * output folder and names, and the closed port is shared (nothing ever listens there).
 */
import { execFile, spawn } from 'node:child_process';
import { mkdirSync, mkdtempSync, readFileSync, writeFileSync } from 'node:fs';
import { createServer, type Server } from 'node:net';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { gzipSync } from 'node:zlib';
import { afterAll, beforeAll, describe, it } from 'vitest';
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

/**
 * At most this many CLI children at once (the machine has 2 cores): more would only make each
 * command slower, and a row's time is measured from its child's start, not from its wait here.
 */
const MAX_CHILDREN = 3;
let running = 0;
const waiting: (() => void)[] = [];

async function withChildSlot<T>(work: () => Promise<T>): Promise<T> {
  while (running >= MAX_CHILDREN) await new Promise<void>((resolve) => waiting.push(resolve));
  running++;
  try {
    return await work();
  } finally {
    running--;
    waiting.shift()?.();
  }
}

/** Run the CLI with only the variables given (none of the harness's STREAMFENCE_* leak in). */
function cli(args: string[], env: Record<string, string> = {}): Promise<Outcome> {
  return withChildSlot(() => runCli(args, env));
}

function runCli(args: string[], env: Record<string, string>): Promise<Outcome> {
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
  writeFileSync(
    p('stray-labels.csv'),
    'sensor,start,end\nkiln-2/temp,2026-04-01T02:00:00Z,2026-04-01T02:30:00Z\n' +
      'kiln-9/flow,2026-04-01T02:00:00Z,2026-04-01T02:30:00Z\nkiln-2/temp,2026-05-01T02:00:00Z,2026-05-01T02:30:00Z\n',
  );
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
/** A port that is certainly taken: the shared Redis's. */
const redisPort = () => new URL(redisUrl()).port || '6379';

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
  // alerts following (no --once): a missing topic is a refusal too; a closed port is waited out (board/alerts-outage.test.ts)
  ['alerts (following): missing alert topic', () => ['alerts', '--brokers', brokers(), '--alert-topic', missingTopic, '--no-actions'], none, 'NOT_FOUND', () => new RegExp(`topic "${missingTopic}" does not exist`)],
  ['alerts (following): missing action topic named', () => ['alerts', '--brokers', brokers(), '--alert-topic', presentTopic, '--action-topic', missingTopic], none, 'NOT_FOUND', () => new RegExp(`topic "${missingTopic}" does not exist \\(--action-topic\\)`)],
  ['alerts: --since without a zone', () => ['alerts', '--once', '--brokers', brokers(), '--since', '2026-12-02T05:00:00'], none, 'ARGS_INVALID', () => /--since "2026-12-02T05:00:00" must be a time with a zone/],
  // topics
  ['topics: closed Kafka port', () => ['topics', 'check', '--brokers', `127.0.0.1:${deadPort}`], none, 'SERVICE_UNAVAILABLE', () => new RegExp(`^streamfence: kafka 127\\.0\\.0\\.1:${deadPort}: connection refused`)],
  ['topics: no action', () => ['topics', '--brokers', brokers()], none, 'ARGS_INVALID', () => /say what to do: streamfence topics create, or streamfence topics check/],
  ['topics: more replicas than brokers', () => ['topics', 'create', '--brokers', brokers(), '--input-topic', missingTopic, '--replication-factor', '9'], none, 'ARGS_INVALID', () => /--replication-factor 9 is more than the 1 broker of the cluster/],
  // run, board, demo: argument mistakes (their outages are retried, not refused)
  ['run: metrics port out of range', () => ['run', '--brokers', brokers(), '--redis', redisUrl(), '--metrics-port', '70000'], none, 'ARGS_INVALID', () => /--metrics-port must be a TCP port from 1 to 65535, or 0 for any free port, got "70000"/],
  ['run: metrics port in use', () => ['run', '--brokers', brokers(), '--redis', redisUrl(), '--metrics-port', redisPort()], none, 'PORT_IN_USE', () => new RegExp(`^streamfence: port ${redisPort()} on 0\\.0\\.0\\.0 is in use; choose another with --metrics-port`)],
  ['run: missing input topic', () => ['run', '--brokers', brokers(), '--redis', redisUrl(), '--metrics-port', '0', '--input-topic', missingTopic, '--alert-topic', presentTopic, '--rejected-topic', presentTopic, '--group', uniqueName('first-hour-group'), '--state-prefix', uniqueName('first-hour-state')], none, 'NOT_FOUND', () => new RegExp(`topic "${missingTopic}" \\(--input-topic\\) does not exist; check the name or create it first`)],
  ['run: empty config', () => ['run', '--brokers', brokers(), '--redis', redisUrl(), '--metrics-port', '0', '--config', p('empty.yaml')], none, 'CONFIG_INVALID', () => /empty\.yaml.*empty.*leave --config .* out for the built-in defaults/],
  ['run: negative checkpoint interval', () => ['run', '--brokers', brokers(), '--redis', redisUrl(), '--checkpoint-ms', '-5'], none, 'ARGS_INVALID', () => /--checkpoint-ms must be/],
  ['board: token on the command line', () => ['board', '--brokers', brokers(), '--redis', redisUrl(), '--board-token', 'kiln-room-secret-0042'], none, 'ARGS_INVALID', () => /board token is a secret.*STREAMFENCE_BOARD_TOKEN.*--board-token-file/],
  ['board: token too short', () => ['board', '--brokers', brokers(), '--redis', redisUrl(), '--board-token-file', p('short-token')], none, 'ARGS_INVALID', () => /4 characters; use at least 16/],
  ['board: missing alert topic', () => ['board', '--brokers', brokers(), '--redis', redisUrl(), '--alert-topic', missingTopic, '--action-topic', presentTopic, '--port', '0'], none, 'NOT_FOUND', () => new RegExp(`"${missingTopic}" does not exist`)],
  ['board: missing action topic', () => ['board', '--brokers', brokers(), '--redis', redisUrl(), '--alert-topic', presentTopic, '--action-topic', missingTopic, '--port', '0'], none, 'NOT_FOUND', () => new RegExp(`"${missingTopic}" does not exist`)],
  ['board: port in use', () => ['board', '--brokers', brokers(), '--redis', redisUrl(), '--alert-topic', presentTopic, '--action-topic', presentTopic, '--port', redisPort()], none, 'PORT_IN_USE', () => /^streamfence: port \d+ on 127\.0\.0\.1 is in use; choose another with --port/],
  ['board: port out of range', () => ['board', '--brokers', brokers(), '--redis', redisUrl(), '--port', '70000'], none, 'ARGS_INVALID', () => /--port must be a TCP port/],
  ['demo: port out of range', () => ['demo', '--port', '-1'], none, 'ARGS_INVALID', () => /--port must be a TCP port .* got "-1"/],
  ['demo: port in use', () => ['demo', '--port', redisPort()], none, 'PORT_IN_USE', () => new RegExp(`^streamfence: port ${redisPort()} on 127\\.0\\.0\\.1 is in use; choose another with --port`)],
];

/** The lines meant for the user: not the banner, and of `run`'s JSON log only its error entries' messages. */
function userLines(stderr: string, cmd: string): string[] {
  const lines = stderr.split('\n').filter((l) => l !== '' && `${l}\n` !== bannerText(cmd));
  return lines.flatMap((line) => {
    if (!line.startsWith('{')) return [line];
    const entry = JSON.parse(line) as { level: string; msg: string };
    return entry.level === 'error' || entry.level === 'fatal' ? [`streamfence: ${entry.msg}`] : [];
  });
}

describe.concurrent('a new user’s first hour: one line per mistake', () => {
  it.for(ROWS)('%s', async ([, args, env, code, culprit], { expect }) => {
    const r = await cli(args(), env());
    const withoutBanner = userLines(r.stderr, args()[0]);
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

describe.concurrent('every command alike', () => {
  it.for(COMMANDS.flatMap((c) => [[c, '-h'] as const, [c, '--help'] as const]))(
    '%s %s prints its help and exits 0',
    async ([cmd, flag], { expect }) => {
      const r = await cli([cmd, flag]);
      expect(r.code, r.stderr).toBe(0);
      expect(r.stdout).toMatch(/Usage: streamfence/);
      expect(r.stderr).toBe('');
    },
  );

  it('a gzip file without the .gz suffix is read by its content', async ({ expect }) => {
    const r = await cli(['replay', p('zipped.ndjson'), '--out', p('zipped-out')]);
    expect(r.code, r.stderr).toBe(0);
    const summary = JSON.parse(readFileSync(join(p('zipped-out'), 'summary.json'), 'utf8')) as {
      readings: number;
      rejected: { total: number };
    };
    expect(summary).toMatchObject({ readings: 300, rejected: { total: 0 } });
  });

  it('an option with no effect is named in one warning line, and the command still runs', async ({
    expect,
  }) => {
    const r = await cli(['replay', p('readings.ndjson'), '--out', p('w-out'), '--report-top', '3']);
    expect(r.code, r.stderr).toBe(0);
    expect(r.stderr).toContain('streamfence replay: warning: --report-top has no effect without --report');
  });

  it('replay --from/--to with a file input: one warning line naming both, and the whole file is read', async ({
    expect,
  }) => {
    const r = await cli([
      'replay',
      p('readings.ndjson'),
      '--out',
      p('ft-out'),
      '--from',
      '2026-04-01T01:00:00Z',
      '--to',
      '2026-04-01T02:00:00Z',
    ]);
    expect(r.code, r.stderr).toBe(0);
    const warnings = r.stderr.split('\n').filter((l) => l.includes('warning'));
    expect(warnings).toEqual([
      'streamfence replay: warning: --from, --to have no effect with a file input: only a kafka:// time range uses them',
    ]);
    const summary = JSON.parse(readFileSync(join(p('ft-out'), 'summary.json'), 'utf8')) as {
      readings: number;
    };
    expect(summary.readings).toBe(300);
  });

  it('tune: labels naming an absent sensor or outside the data are warned about (console and tuning.json); the summary line gives the settings and the reason', async ({
    expect,
  }) => {
    const r = await cli([
      'tune',
      p('readings.ndjson'),
      '--labels',
      p('stray-labels.csv'),
      '--out',
      p('tune-warn'),
      '--grid',
      'fenceK=1.5,3',
    ]);
    expect(r.code, r.stderr).toBe(0);
    const warnings = r.stderr.split('\n').filter((l) => l.includes('warning'));
    expect(warnings).toHaveLength(2);
    expect(warnings[0]).toMatch(
      /^streamfence tune: warning: 1 label names a sensor that never appears in the data \(kiln-9\/flow\); they count as missed: check the sensor names in the labels file$/,
    );
    expect(warnings[1]).toMatch(
      /^streamfence tune: warning: 1 label lies outside the data's time span 2026-04-01T00:00:00\.000Z to 2026-04-01T04:59:00\.000Z \(kiln-2\/temp 2026-05-01T02:00:00\.000Z\); they count as missed: check the labels' times and zone$/,
    );
    const summary = r.stderr.split('\n').find((l) => / points x \d+ readings in /.test(l));
    // The recommended point by its settings (not only "#0") and why it was chosen.
    expect(summary).toMatch(/recommended #\d+ \(fenceK=(1\.5|3) outerK=\S+ zLimit=\S+ .*\): recall /);
    expect(summary).toMatch(
      /; 2 of 2 points are within the budget of 6 raised alerts\/hour.*; this one has /,
    );
    const tuning = JSON.parse(readFileSync(join(p('tune-warn'), 'tuning.json'), 'utf8')) as {
      labels: { warnings: string[] };
    };
    expect(tuning.labels.warnings.map((w) => `streamfence tune: warning: ${w}`)).toEqual(warnings);
  });

  it('demo: with its default port 8080 taken it serves on a free port and says which', async ({ expect }) => {
    // Taken by this test, or already by another program: either way the demo cannot have it.
    const holder = createServer();
    const held = await new Promise<boolean>((resolve) => {
      holder.once('error', () => resolve(false));
      holder.listen(8080, '127.0.0.1', () => resolve(true));
    });
    const base = Object.fromEntries(
      Object.entries(process.env).filter(([k]) => !k.startsWith('STREAMFENCE_')),
    );
    const demo = spawn(process.execPath, [CLI, 'demo'], { env: base });
    let out = '';
    let err = '';
    demo.stdout.on('data', (c) => (out += String(c)));
    demo.stderr.on('data', (c) => (err += String(c)));
    const exited = new Promise<number | null>((resolve) => demo.once('exit', (code) => resolve(code)));
    try {
      await expect
        .poll(() => /board at http:\/\/127\.0\.0\.1:(\d+)\//.exec(out)?.[1], { timeout: 30_000 })
        .toBeTruthy();
      const port = /board at http:\/\/127\.0\.0\.1:(\d+)\//.exec(out)![1];
      expect(port).not.toBe('8080');
      expect(err).toContain(
        `streamfence demo: port 8080 is in use; serving on free port ${port} instead (choose one with --port)\n`,
      );
      demo.kill('SIGINT');
      expect(await exited).toBe(0);
    } finally {
      demo.kill('SIGKILL');
      if (held) await new Promise<void>((r) => holder.close(() => r()));
    }
  });
});
