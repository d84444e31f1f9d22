/**
 * Replay throughput: end-to-end `runReplay` over generated files of 1,000,000 readings (1,000
 * sensors, one reading a minute each, ~17 h so the engine judges most of them) as NDJSON and as
 * CSV, each with ISO-8601 timestamps (`2026-01-05T00:01:00.000Z`, the form users send) and with
 * epoch milliseconds, against raw baselines measured in the same run on the same file:
 * `node:readline` + JSON.parse (NDJSON) or split(',') (CSV) (the headline baseline), bare stream +
 * indexOf line split with and without the parse, readline alone, and the reader alone (split +
 * parse + validate, no engine). Each figure is the best of two passes. Figures are rows/s and time
 * ratios: `timeVsReadlineParse` = replay time / baseline time (lower is better).
 */
import { createReadStream, createWriteStream, rmSync, mkdtempSync, statSync } from 'node:fs';
import { once } from 'node:events';
import { createInterface } from 'node:readline';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { defaultConfig } from '../../libs/config/config.js';
import { readInput, type InputFormat } from '../../services/replay/input.js';
import { runReplay } from '../../services/replay/replay.js';
import { mulberry32 } from './prng.js';

const SENSORS = 1000;
const PER_SENSOR = 1000;
const PASSES = 2;

type TsForm = 'iso' | 'epoch';
const TS_FORMS: readonly TsForm[] = ['iso', 'epoch'];
const START = Date.parse('2026-01-05T00:00:00Z');

async function generate(dir: string, form: TsForm): Promise<{ ndjson: string; csv: string; rows: number }> {
  const rand = mulberry32(7);
  const gauss = () => Math.sqrt(-2 * Math.log(Math.max(rand(), 1e-12))) * Math.cos(2 * Math.PI * rand());
  const ids = Array.from(
    { length: SENSORS },
    (_, i) => `bench-works/line-${Math.floor(i / 50)}/probe-${i % 50}`,
  );
  const ndjson = join(dir, `bench-${form}.ndjson`);
  const csv = join(dir, `bench-${form}.csv`);
  const wj = createWriteStream(ndjson);
  const wc = createWriteStream(csv);
  wc.write('sensor,ts,value,unit\n');
  for (let k = 0; k < PER_SENSOR; k++) {
    const epoch = START + k * 60_000;
    const ts = form === 'iso' ? new Date(epoch).toISOString() : String(epoch);
    const tsJson = form === 'iso' ? `"${ts}"` : ts;
    let j = '';
    let c = '';
    for (let s = 0; s < SENSORS; s++) {
      const v = (50 + (s % 7) * 3 + gauss() * (1 + (s % 5))).toFixed(3);
      j += `{"sensor":"${ids[s]}","ts":${tsJson},"value":${v}}\n`;
      c += `${ids[s]},${ts},${v},degC\n`;
    }
    if (!wj.write(j)) await once(wj, 'drain');
    if (!wc.write(c)) await once(wc, 'drain');
  }
  wj.end();
  wc.end();
  await Promise.all([once(wj, 'finish'), once(wc, 'finish')]);
  return { ndjson, csv, rows: SENSORS * PER_SENSOR };
}

async function timedOnce<T>(f: () => Promise<T>): Promise<{ secs: number; value: T }> {
  (globalThis as { gc?: () => void }).gc?.();
  const t0 = performance.now();
  const value = await f();
  return { secs: (performance.now() - t0) / 1000, value };
}

/** Best of PASSES runs (the machine is shared: the fastest pass is the least disturbed one). */
async function timed<T>(f: () => Promise<T>): Promise<{ secs: number; value: T }> {
  let best = await timedOnce(f);
  for (let i = 1; i < PASSES; i++) {
    const next = await timedOnce(f);
    if (next.secs < best.secs) best = next;
  }
  return best;
}

/** Bare baseline: stream the file as text and split lines with indexOf; `each` sees every line. */
async function bareLines(path: string, each: (line: string) => void): Promise<number> {
  let n = 0;
  let carry = '';
  const stream = createReadStream(path, { highWaterMark: 256 * 1024, encoding: 'utf8' });
  for await (const chunk of stream as AsyncIterable<string>) {
    let start = 0;
    let nl = chunk.indexOf('\n');
    if (nl >= 0 && carry) {
      each(carry + chunk.slice(0, nl));
      n++;
      carry = '';
      start = nl + 1;
      nl = chunk.indexOf('\n', start);
    }
    while (nl >= 0) {
      each(chunk.slice(start, nl));
      n++;
      start = nl + 1;
      nl = chunk.indexOf('\n', start);
    }
    carry += chunk.slice(start);
  }
  if (carry) {
    each(carry);
    n++;
  }
  return n;
}

/** `node:readline` over the file; `each` sees every line. */
async function readlineLines(path: string, each: (line: string) => void): Promise<number> {
  let n = 0;
  const rl = createInterface({
    input: createReadStream(path, { highWaterMark: 256 * 1024 }),
    crlfDelay: Infinity,
  });
  for await (const line of rl) {
    each(line);
    n++;
  }
  return n;
}

async function readerOnly(path: string, format: InputFormat): Promise<number> {
  let n = 0;
  let ok = 0;
  for await (const batch of readInput(path, format)) {
    n += batch.length;
    for (const r of batch) if (r.result.ok) ok++;
  }
  if (ok !== n) throw new Error(`reader rejected ${n - ok} generated lines`);
  return n;
}

const rate = (rows: number, secs: number) => Math.round(rows / secs);

async function measure(path: string, format: InputFormat, outDir: string, rows: number) {
  let sink = 0;
  const parseLine =
    format === 'ndjson'
      ? (l: string) => {
          sink += (JSON.parse(l) as { value: number }).value;
        }
      : (l: string) => {
          sink += l.split(',').length;
        };
  const split = await timed(() => bareLines(path, () => {}));
  const parse = await timed(() => bareLines(path, parseLine));
  const rl = await timed(() => readlineLines(path, () => {}));
  const rlParse = await timed(() => readlineLines(path, parseLine));
  const reader = await timed(() => readerOnly(path, format));
  const rssBefore = process.memoryUsage().rss;
  const e2e = await timed(() =>
    runReplay({
      source: readInput(path, format),
      config: defaultConfig(),
      outDir,
      inputInfo: { path, format },
    }),
  );
  const s = e2e.value;
  if (s.readings !== rows) throw new Error(`replay accepted ${s.readings} of ${rows}`);
  return {
    readlineParseRowsPerSec: rate(rows, rlParse.secs),
    readlineRowsPerSec: rate(rows, rl.secs),
    rawSplitRowsPerSec: rate(rows, split.secs),
    rawParseRowsPerSec: rate(rows, parse.secs),
    readerRowsPerSec: rate(rows, reader.secs),
    endToEndRowsPerSec: rate(rows, e2e.secs),
    endToEndSeconds: +e2e.secs.toFixed(2),
    timeVsReadlineParse: +(e2e.secs / rlParse.secs).toFixed(3),
    timeVsRawParse: +(e2e.secs / parse.secs).toFixed(3),
    readerTimeVsReadlineParse: +(reader.secs / rlParse.secs).toFixed(3),
    evaluated: s.evaluated,
    alertsRaised: s.alerts.raised,
    rssGrowthMB: +((process.memoryUsage().rss - rssBefore) / 1e6).toFixed(1),
    sink: sink > 0,
  };
}

export async function run(): Promise<Record<string, unknown>> {
  const dir = mkdtempSync(join(tmpdir(), 'streamfence-replay-bench-'));
  const only = process.env.STREAMFENCE_BENCH_TS;
  try {
    const out: Record<string, unknown> = { rows: SENSORS * PER_SENSOR, sensors: SENSORS, passes: PASSES };
    for (const form of TS_FORMS) {
      if (only !== undefined && only !== form) continue;
      const gen = await timedOnce(() => generate(dir, form));
      const { ndjson, csv, rows } = gen.value;
      for (const [format, path] of [
        ['ndjson', ndjson],
        ['csv', csv],
      ] as const) {
        out[`${format}-${form}`] = {
          fileMB: +(statSync(path).size / 1e6).toFixed(1),
          ...(await measure(path, format, join(dir, `out-${format}-${form}`), rows)),
        };
      }
      rmSync(ndjson);
      rmSync(csv);
    }
    return out;
  } finally {
    rmSync(dir, { recursive: true, force: true });
  }
}
