/**
 * End to end: simulate a labelled plant data set, tune on it with worker threads, and check that
 * (1) the recommended config catches spikes, steps, drifts and stuck values with good precision and
 * (2) tune's figures equal what an independent replay of the file with recommended.json scores.
 */
import { mkdtempSync, readFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { beforeAll, describe, expect, it } from 'vitest';
import { parseConfigText } from '../../../libs/config/config.js';
import { Engine } from '../../../libs/engine/engine.js';
import { parseJsonReading, type Reading } from '../../../libs/engine/reading.js';
import { parseLabelsCsv } from '../../../libs/scoring/labels.js';
import { score, type RaisedAlert } from '../../../libs/scoring/score.js';
import { main as simulate } from '../../../services/cli/commands/simulate.js';
import { runTune, type TuneOutcome } from '../../../services/tune/tune.js';

const dir = mkdtempSync(join(tmpdir(), 'sf-tune-'));
const p = (name: string) => join(dir, name);
const GRID = 'fenceK=2,3;zLimit=4,5;debounce=1/1,2/3';
const sink = {
  chunks: [] as string[],
  write(c: string) {
    this.chunks.push(c);
    return true;
  },
};

let outcome: TuneOutcome;

beforeAll(async () => {
  const argv = ['--sensors', '12', '--duration', '2d', '--interval', '1m', '--seed', '1'];
  await simulate([
    ...argv,
    '--readings',
    p('data.ndjson'),
    '--labels',
    p('labels.csv'),
    '--config-out',
    p('base.yaml'),
  ]);
  outcome = await runTune({
    input: p('data.ndjson'),
    labels: p('labels.csv'),
    config: p('base.yaml'),
    grid: GRID,
    out: p('out'),
    workers: 2,
    stream: sink,
  });
}, 120_000);

describe('simulate + tune', () => {
  it('writes the outputs and a one-line summary', () => {
    const t = JSON.parse(readFileSync(p('out/tuning.json'), 'utf8'));
    expect(t.points).toHaveLength(8);
    expect(t.input).toMatchObject({ readings: outcome.result.input.readings, sensors: 12, rejected: {} });
    expect(t.notice).toMatch(/^Advisory only/);
    const csv = readFileSync(p('out/tuning.csv'), 'utf8').trimEnd().split('\n');
    expect(csv).toHaveLength(9);
    expect(csv.filter((l) => l.endsWith(',yes'))).toHaveLength(1);
    expect(readFileSync(p('out/report.html'), 'utf8')).toContain('<html');
    // The grid leaves the profile as the config has it, and says so first.
    expect(sink.chunks.join('')).toMatch(
      /^streamfence tune: every point keeps the config's profile setting \(profile none\);/,
    );
    expect(sink.chunks.join('')).toMatch(
      /^streamfence tune: 8 points x 34\.\dk readings .* recommended #\d+ \(fenceK=[^)]*\): recall .*within the budget/m,
    );
  });

  it('the recommended config reaches recall >= 0.9 on spikes, steps, drifts and stuck values, precision >= 0.8', () => {
    const r = outcome.result.recommended!;
    expect(r.withinBudget).toBe(true);
    for (const kind of ['spike', 'step', 'drift', 'stuck'])
      expect(r.recallByKind[kind], kind).toBeGreaterThanOrEqual(0.9);
    expect(r.recall!).toBeGreaterThanOrEqual(0.9);
    expect(r.precision!).toBeGreaterThanOrEqual(0.8);
    expect(r.flood).toBe(false);
    // Dropouts: the suggested config sets staleAfter (5m at one reading a minute), so a silent
    // sensor raises a stale alert inside its dropout, and dropouts count in the headline recall.
    expect(r.countsByKind.dropout.incidents).toBeGreaterThan(0);
    expect(r.recallByKind.dropout).toBe(1);
    expect(r.incidents).toBe(outcome.result.labels.incidents);
  });

  it("tune's figures equal a separate replay of the file with recommended.json", () => {
    const cfg = parseConfigText(readFileSync(p('out/recommended.json'), 'utf8'), 'recommended.json');
    const engine = new Engine(cfg);
    const readings: Reading[] = readFileSync(p('data.ndjson'), 'utf8')
      .trimEnd()
      .split('\n')
      .map((l) => {
        const r = parseJsonReading(l);
        if (!r.ok) throw new Error(r.detail);
        return r.reading;
      });
    const raised: RaisedAlert[] = [];
    for (const x of readings)
      for (const e of engine.process(x).events)
        if (e.state === 'raised') raised.push({ sensor: e.sensor, ts: Date.parse(e.ts) });
    const s = score(parseLabelsCsv(readFileSync(p('labels.csv'), 'utf8')), raised, {
      dataStart: readings[0].ts,
      dataEnd: readings[readings.length - 1].ts,
      excludeFromRecall: [],
    });
    const r = outcome.result.recommended!;
    expect({
      recall: s.recall,
      precision: s.precision,
      raised: s.raised,
      alertsPerHour: s.alertsPerHour,
      worst10min: s.worst10min,
    }).toEqual({
      recall: r.recall,
      precision: r.precision,
      raised: r.raised,
      alertsPerHour: r.alertsPerHour,
      worst10min: r.worst10min,
    });
    expect(Object.fromEntries(Object.entries(s.recallByKind).map(([k, v]) => [k, v.recall]))).toEqual(
      r.recallByKind,
    );
  });

  it('every point differs only in its settings: the in-process evaluation agrees with the workers', async () => {
    const again = await runTune({
      input: p('data.ndjson'),
      labels: p('labels.csv'),
      config: p('base.yaml'),
      grid: 'fenceK=2;zLimit=4;debounce=1/1',
      out: p('out-single'),
      workers: 0,
      stream: sink,
    });
    const same = outcome.result.points.find(
      (x) => x.settings.fenceK === 2 && x.settings.zLimit === 4 && x.settings.raiseAfter === 1,
    )!;
    expect({ ...again.result.points[0], index: same.index }).toEqual(same);
  });
});
