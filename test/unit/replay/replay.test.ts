import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { existsSync, mkdtempSync, readFileSync, rmSync, writeFileSync, mkdirSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join, resolve } from 'node:path';
import { defaultConfig, parseConfigText } from '../../../libs/config/config.js';
import { LIMITS, REJECT_REASONS } from '../../../libs/engine/reading.js';
import { readInput, type InputRecord } from '../../../services/replay/input.js';
import { runReplay, REPLAY_FILES, type ReplayObserver } from '../../../services/replay/replay.js';

const repo = resolve(import.meta.dirname, '../../..');
const SAMPLE_NDJSON = join(repo, 'deploy/samples/pump-station.ndjson');
const SAMPLE_CSV = join(repo, 'deploy/samples/pump-station.csv');
const SAMPLE_CONFIG = parseConfigText(
  readFileSync(join(repo, 'deploy/samples/pump-station.yaml'), 'utf8'),
  'sample',
);

let dir: string;
beforeAll(() => {
  dir = mkdtempSync(join(tmpdir(), 'sf-replay-'));
});
afterAll(() => rmSync(dir, { recursive: true, force: true }));

const read = (d: string, f: string) => readFileSync(join(d, f), 'utf8');
const ndjsonLines = (text: string) =>
  text
    .split('\n')
    .filter((l) => l.length > 0)
    .map((l) => JSON.parse(l) as Record<string, unknown>);

async function replayFile(path: string, format: 'ndjson' | 'csv', outDir: string, config = SAMPLE_CONFIG) {
  return runReplay({
    source: readInput(path, format),
    config,
    outDir,
    inputInfo: { path: 'sample', format },
  });
}

describe('runReplay', () => {
  it('writes every reject reason to rejected.ndjson with its line number, raw text and detail', async () => {
    const t = (m: number) => `"2026-04-01T00:${String(m).padStart(2, '0')}:00Z"`;
    const lines = [
      `{"sensor":"ok/a","ts":"2026-04-02T12:00:00Z","value":1}`, // 1: accepted, makes line 16 late
      `{"sensor":"x","ts":${t(1)},"value":"${'9'.repeat(LIMITS.maxLineLength)}"}`, // 2 line_too_long
      `{"sensor": "x", "ts": ${t(1)}, "value": 1`, // 3 not_json
      `[1, 2, 3]`, // 4 not_object
      `{"ts":${t(1)},"value":1}`, // 5 sensor_missing
      `{"sensor":"  ","ts":${t(1)},"value":1}`, // 6 sensor_empty
      `{"sensor":"${'s'.repeat(LIMITS.maxSensorLength + 1)}","ts":${t(1)},"value":1}`, // 7 sensor_too_long
      `{"sensor":"bad\\u0007id","ts":${t(1)},"value":1}`, // 8 sensor_bad_chars
      `{"sensor":"x","ts":${t(1)}}`, // 9 value_missing
      `{"sensor":"x","ts":${t(1)},"value":"12"}`, // 10 value_not_number
      `{"sensor":"x","ts":${t(1)},"value":1e999}`, // 11 value_not_finite
      `{"sensor":"x","value":1}`, // 12 ts_missing
      ``, // 13 blank: skipped, not a reject
      `{"sensor":"x","ts":"yesterday","value":1}`, // 14 ts_invalid
      `{"sensor":"x","ts":-5,"value":1}`, // 15 ts_out_of_range
      `{"sensor":"ok/a","ts":"2026-04-01T00:00:00Z","value":1}`, // 16 late (36 h before ok/a's newest)
      `{"sensor":"ok/b","ts":"2026-04-02T12:00:00Z","value":1}`, // 17 sensor_limit (limit 1: ok/a holds it)
      `{"sensor":"x","ts":${t(1)},"value":1,"quality":"questionable"}`, // 18 quality_invalid
    ];
    const p = join(dir, 'rejects.ndjson');
    writeFileSync(p, lines.join('\n') + '\n');
    const out = join(dir, 'out-rejects');
    const s = await runReplay({
      source: readInput(p, 'ndjson'),
      config: defaultConfig(),
      outDir: out,
      inputInfo: {},
      maxSensors: 1,
    });
    const rej = ndjsonLines(read(out, REPLAY_FILES.rejected));
    expect(rej.map((r) => r.reason).sort()).toEqual([...REJECT_REASONS].sort());
    const lineOf = Object.fromEntries(rej.map((r) => [r.reason, r.line]));
    expect(lineOf).toMatchObject({
      line_too_long: 2,
      not_json: 3,
      ts_missing: 12,
      ts_invalid: 14,
      late: 16,
      sensor_limit: 17,
      quality_invalid: 18,
    });
    for (const r of rej) {
      expect(Object.keys(r)).toEqual(['line', 'raw', 'reason', 'detail']);
      expect(String(r.detail).length).toBeGreaterThan(0);
      const n = r.line as number;
      expect(r.raw).toBe(lines[n - 1].slice(0, LIMITS.maxLineLength));
    }
    expect((rej.find((r) => r.reason === 'line_too_long')!.raw as string).length).toBe(LIMITS.maxLineLength);
    expect(s.readings).toBe(1);
    expect(s.rejected.total).toBe(REJECT_REASONS.length);
    expect(Object.keys(s.rejected.byReason)).toEqual([...REJECT_REASONS].sort());
    expect(JSON.parse(read(out, REPLAY_FILES.summary))).toEqual(JSON.parse(JSON.stringify(s)));
  });

  it('counts readings by quality, judges only good ones, and reads the quality from NDJSON and CSV alike', async () => {
    const rows: { ts: string; value: number; quality?: string }[] = [];
    const start = Date.parse('2026-04-01T00:00:00Z');
    // Two hours of good readings a minute apart (the first closes a bucket), then twelve bad
    // readings far out (not judged: a bad_quality alert instead), then good ones again.
    for (let i = 0; i < 200; i++) {
      const ts = new Date(start + i * 60_000).toISOString();
      const doubtful = i >= 150 && i < 162;
      rows.push(
        doubtful ? { ts, value: 999, quality: i === 150 ? 'uncertain' : 'bad' } : { ts, value: 20 + (i % 5) },
      );
    }
    const ndjson = join(dir, 'quality.ndjson');
    writeFileSync(
      ndjson,
      rows
        .map((r) =>
          JSON.stringify({
            sensor: 'kiln-2/temp',
            ts: r.ts,
            value: r.value,
            ...(r.quality ? { quality: r.quality } : {}),
          }),
        )
        .join('\n') + '\n',
    );
    const csv = join(dir, 'quality.csv');
    writeFileSync(
      csv,
      'quality,sensor,ts,value\n' +
        rows.map((r) => `${r.quality ?? ''},kiln-2/temp,${r.ts},${r.value}`).join('\n') +
        '\n',
    );
    const config = parseConfigText('defaults: { window: 2h, buckets: 2, minSamples: 30, flatlineAfter: 0 }');
    const sj = await runReplay({
      source: readInput(ndjson, 'ndjson'),
      config,
      outDir: join(dir, 'q-json'),
      inputInfo: {},
    });
    const sc = await runReplay({
      source: readInput(csv, 'csv'),
      config,
      outDir: join(dir, 'q-csv'),
      inputInfo: {},
    });
    expect(sj.readings).toBe(200);
    expect(sj.quality).toEqual({ good: 188, uncertain: 1, bad: 11 });
    expect(sj.evaluated).toBe(200 - 60 - 12); // the first bucket warms up; doubtful ones are not judged
    expect(sj.flagged.any).toBe(0);
    const alerts = ndjsonLines(read(join(dir, 'q-json'), REPLAY_FILES.alerts));
    expect(alerts.map((a) => `${a.state}:${(a.reasons as string[]).join('+')}:${a.ts}`)).toEqual([
      `raised:bad_quality:${rows[159].ts}`,
      `cleared::${rows[162].ts}`,
    ]);
    expect(read(join(dir, 'q-csv'), REPLAY_FILES.alerts)).toBe(
      read(join(dir, 'q-json'), REPLAY_FILES.alerts),
    );
    expect(sc.quality).toEqual(sj.quality);
    expect(Object.keys(sj).slice(0, 4)).toEqual(['engineVersion', 'input', 'readings', 'quality']);
  });

  it('gives byte-identical files on two runs of the same input and config', async () => {
    const a = join(dir, 'same-a');
    const b = join(dir, 'same-b');
    await replayFile(SAMPLE_NDJSON, 'ndjson', a);
    await replayFile(SAMPLE_NDJSON, 'ndjson', b);
    for (const f of Object.values(REPLAY_FILES)) expect(read(a, f)).toBe(read(b, f));
  });

  it('gives identical alerts from the CSV and NDJSON forms of the sample, and finds its four injected faults', async () => {
    const j = join(dir, 'sample-json');
    const c = join(dir, 'sample-csv');
    const sj = await replayFile(SAMPLE_NDJSON, 'ndjson', j);
    const sc = await replayFile(SAMPLE_CSV, 'csv', c);
    const alerts = read(j, REPLAY_FILES.alerts);
    expect(alerts.length).toBeGreaterThan(0);
    expect(read(c, REPLAY_FILES.alerts)).toBe(alerts);
    expect(sj.readings).toBe(14_400);
    expect(sc.readings).toBe(14_400);
    expect(sj.rejected.total).toBe(6);
    expect(sc.rejected.total).toBe(6);
    expect(sj.rejected.byReason.late).toBe(1);
    const raised = ndjsonLines(alerts).filter((e) => e.state === 'raised');
    // The generator (deploy/samples/make-samples.mjs) injects exactly these faults on day 2.
    expect(raised.map((e) => [e.sensor, e.ts, e.severity])).toEqual([
      ['south-basin/wet-well/level', '2026-03-03T05:01:00.000Z', 'warning'],
      ['north-basin/pump-2/bearing-temp', '2026-03-03T10:02:00.000Z', 'critical'],
      ['north-basin/outlet/pressure', '2026-03-03T15:02:00.000Z', 'critical'],
      ['south-basin/pump-3/vibration', '2026-03-03T20:17:00.000Z', 'warning'],
    ]);
    expect(raised[0].reasons).toEqual(['flatline']);
    for (const e of raised) expect(e.notice).toMatch(/^Advisory only/);
  });

  it('feeds observers every reading, every reject and the end, from any record source', async () => {
    const base = Date.parse('2026-04-01T00:00:00Z');
    const batches: InputRecord[][] = [
      [
        {
          line: 1,
          raw: 'r1',
          result: { ok: true, reading: { sensor: 'a', ts: base + 100 * 3_600_000, value: 1 } },
        },
        { line: 2, raw: 'r2', result: { ok: false, reason: 'not_json', detail: 'd' } },
      ],
      [{ line: 3, raw: 'r3', result: { ok: true, reading: { sensor: 'a', ts: base, value: 1 } } }],
    ];
    async function* source() {
      yield* batches;
    }
    const seen = { readings: 0, late: 0, rejects: [] as string[], ends: 0 };
    const obs: ReplayObserver = {
      onReading: (_r, o) => {
        seen.readings++;
        if (!o.accepted) seen.late++;
      },
      onReject: (rec, reason) => seen.rejects.push(`${rec.line}:${reason}`),
      onEnd: (engine) => {
        seen.ends++;
        expect(engine.sensorCount).toBe(1);
      },
      summaryFields: () => ({ extraPart: { ok: seen.ends } }),
    };
    const counts: number[] = [];
    await runReplay({
      source: source(),
      config: defaultConfig(),
      outDir: join(dir, 'obs'),
      inputInfo: () => ({ from: 'test' }),
      observers: [obs],
      progress: (n) => counts.push(n),
    });
    expect(seen).toEqual({ readings: 2, late: 1, rejects: ['2:not_json', '3:late'], ends: 1 });
    expect(counts).toEqual([2, 3]);
    const written = JSON.parse(read(join(dir, 'obs'), REPLAY_FILES.summary));
    expect(written.input).toEqual({ from: 'test' });
    expect(Object.keys(written).slice(-2)).toEqual(['kpis', 'extraPart']);
    expect(written.kpis.raised).toBe(written.alerts.raised);
    expect(written.kpis.cleared).toBe(written.alerts.cleared);
    expect(written.extraPart).toEqual({ ok: 1 });
    await expect(
      runReplay({
        source: source(),
        config: defaultConfig(),
        outDir: join(dir, 'obs2'),
        inputInfo: {},
        observers: [{ summaryFields: () => ({ readings: -1 }) }],
      }),
    ).rejects.toThrow(/clashes/);
  });

  it('removes a stale summary.json first, so a failed run never looks finished', async () => {
    const out = join(dir, 'stale');
    mkdirSync(out, { recursive: true });
    writeFileSync(join(out, REPLAY_FILES.summary), '{"old":true}');
    await expect(
      replayFile(join(dir, 'does-not-exist.ndjson'), 'ndjson', out, defaultConfig()),
    ).rejects.toMatchObject({ code: 'INPUT_UNREADABLE' });
    expect(existsSync(join(out, REPLAY_FILES.summary))).toBe(false);
  });
});
