/**
 * Report cost: the same 500,000 pre-parsed readings (500 sensors, one a minute, ~17 h, spikes
 * planted) through runReplay with no observer (the baseline measured in this run), with the report
 * observer, and with the report observer plus the sketch audit; then the render time, the page
 * size and the number of SVG elements (which must not grow with the readings). Also a bare
 * engine.process loop, the floor under all of them. Best of 2 runs each, alternating.
 */
import { mkdtempSync, rmSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { validateConfig } from '../../libs/config/config.js';
import { Engine } from '../../libs/engine/engine.js';
import type { Reading } from '../../libs/engine/reading.js';
import type { InputRecord } from '../../services/replay/input.js';
import { runReplay } from '../../services/replay/replay.js';
import { createReportObserver } from '../../libs/report/replay-report.js';
import { mulberry32 } from './prng.js';

const SENSORS = 500;
const PER_SENSOR = 1000;
const START = Date.parse('2026-01-05T00:00:00Z');

function readings(): Reading[] {
  const rand = mulberry32(42);
  const gauss = (): number =>
    Math.sqrt(-2 * Math.log(Math.max(rand(), 1e-12))) * Math.cos(2 * Math.PI * rand());
  const out: Reading[] = [];
  for (let k = 0; k < PER_SENSOR; k++) {
    for (let s = 0; s < SENSORS; s++) {
      let value = 40 + (s % 9) * 2 + gauss() * (1 + (s % 4));
      if (rand() < 0.002) value += 12 * (1 + (s % 4));
      out.push({
        sensor: `bench-yard/cell-${Math.floor(s / 25)}/gauge-${s % 25}`,
        ts: START + k * 60_000,
        value,
      });
    }
  }
  return out;
}

async function* source(rs: readonly Reading[]): AsyncGenerator<InputRecord[]> {
  for (let i = 0; i < rs.length; i += 4096) {
    yield rs
      .slice(i, i + 4096)
      .map((reading, j) => ({ line: i + j + 1, raw: '', result: { ok: true as const, reading } }));
  }
}

export async function run(): Promise<Record<string, unknown>> {
  const rs = readings();
  const config = validateConfig({ defaults: { window: '2h', buckets: 12, minSamples: 60 } });
  const dir = mkdtempSync(join(tmpdir(), 'sf-bench-report-'));
  const best: Record<string, number> = {
    engineOnly: Infinity,
    replay: Infinity,
    replayReport: Infinity,
    replayReportAudit: Infinity,
  };
  let render = { ms: 0, bytes: 0, svgElements: 0, auditRows: 0, worstRankError: 0 };
  try {
    for (let rep = 0; rep < 2; rep++) {
      let t = performance.now();
      const engine = new Engine(config);
      for (const r of rs) engine.process(r);
      best.engineOnly = Math.min(best.engineOnly, performance.now() - t);

      for (const mode of ['replay', 'replayReport', 'replayReportAudit'] as const) {
        const obs = mode === 'replay' ? null : createReportObserver({ audit: mode === 'replayReportAudit' });
        t = performance.now();
        const summary = await runReplay({
          source: source(rs),
          config,
          outDir: join(dir, mode),
          inputInfo: {},
          observers: obs ? [obs] : [],
        });
        best[mode] = Math.min(best[mode], performance.now() - t);
        if (obs !== null && mode === 'replayReportAudit') {
          t = performance.now();
          const html = obs.render(summary);
          const a = obs.auditResult()!;
          render = {
            ms: Math.round(performance.now() - t),
            bytes: html.length,
            svgElements: (html.match(/<(path|rect|line|circle|text)\b/g) ?? []).length,
            auditRows: a.rows.length,
            worstRankError: Math.max(
              ...a.rows.flatMap((r) => [r.q1, r.median, r.q3].map((q) => Math.abs(q.rankError))),
            ),
          };
        }
      }
    }
  } finally {
    rmSync(dir, { recursive: true, force: true });
  }
  const n = rs.length;
  const perSec = (ms: number): number => Math.round(n / (ms / 1000));
  return {
    readings: n,
    sensors: SENSORS,
    readingsPerSec: {
      engineOnly: perSec(best.engineOnly),
      replay: perSec(best.replay),
      replayReport: perSec(best.replayReport),
      replayReportAudit: perSec(best.replayReportAudit),
    },
    // Time with the observer over time without it, in the same run (1.0 = free).
    ratioToReplay: {
      report: +(best.replayReport / best.replay).toFixed(3),
      reportAudit: +(best.replayReportAudit / best.replay).toFixed(3),
    },
    render,
  };
}
