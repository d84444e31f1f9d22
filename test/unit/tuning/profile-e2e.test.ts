/**
 * End to end, the daily profile's worth on simulated data: the water-supply scenario (strong daily
 * cycles in Europe/Berlin local time, timeshift faults that read another hour's normal level) is
 * simulated, then tuned twice over the same grid at the same alert budget, once with the suggested
 * config (`profile: daily`) and once with the same config at `profile: none`. Every figure comes
 * from the real simulator, engine and tune workers; nothing here is a stored result.
 *
 * The bounds are properties, not measured values: a timeshift keeps every value inside a normal
 * day's range, so the 24 h window can only catch one by chance (at most a fifth: "mostly missed"),
 * while the hourly profile should catch nearly all of them (at least 90 %, the bar tune-e2e sets for
 * the other kinds). The run also draws the README's figure (test-artifacts/docs/
 * profile-comparison.svg, copied to deploy/docs/ by `npm run docs:images`) with the figures beside
 * it in profile-comparison.json. About 16 s of CPU (two tunes of 6 points over 200k readings).
 */
import { mkdirSync, mkdtempSync, readFileSync, writeFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join, resolve } from 'node:path';
import { beforeAll, describe, expect, it } from 'vitest';
import { tuneComparisonChart, type ComparedRun } from '../../../libs/report/tune-comparison.js';
import { ALERT_BUDGET_PER_HOUR } from '../../../libs/schema/vocabulary.js';
import { main as simulate } from '../../../services/cli/commands/simulate.js';
import { runTune, type TuneOutcome } from '../../../services/tune/tune.js';

const dir = mkdtempSync(join(tmpdir(), 'sf-profile-'));
const at = (name: string) => join(dir, name);
const ARTIFACTS = resolve('test-artifacts', 'docs');
/** The README's command, word for word (README "Daily profiles on history"). */
const SIMULATE = ['--scenario', 'water-supply', '--duration', '10d', '--seed', '1'];
const GRID = 'fenceK=1.5,2,3;zLimit=3,5';
const quiet = { write: () => true };

let daily: TuneOutcome;
let flat: TuneOutcome;

const tune = (config: string, out: string): Promise<TuneOutcome> =>
  runTune({
    input: at('ws.ndjson'),
    labels: at('ws-labels.csv'),
    config: at(config),
    grid: GRID,
    out: at(out),
    workers: 2,
    stream: quiet,
  });

const compared = (outcome: TuneOutcome, label: string): ComparedRun => {
  const r = outcome.result.recommended!;
  return { label, ...r };
};

beforeAll(async () => {
  await simulate([
    ...SIMULATE,
    '--readings',
    at('ws.ndjson'),
    '--labels',
    at('ws-labels.csv'),
    '--config-out',
    at('ws-daily.yaml'),
  ]);
  const suggested = readFileSync(at('ws-daily.yaml'), 'utf8');
  expect(suggested).toMatch(/^ {2}profile: daily$/m);
  writeFileSync(at('ws-flat.yaml'), suggested.replace(/^ {2}profile: daily$/m, '  profile: none'));
  daily = await tune('ws-daily.yaml', 'tune-daily');
  flat = await tune('ws-flat.yaml', 'tune-flat');
}, 180_000);

describe('water-supply: recall with profile: daily against without, at the same alert budget', () => {
  it('both runs score the same data, labels, grid and budget, and recommend a point within it', () => {
    for (const run of [daily, flat]) {
      expect(run.result.budgetPerHour).toBe(ALERT_BUDGET_PER_HOUR);
      expect(run.result.pointCount).toBe(6);
      expect(run.result.recommended!.withinBudget).toBe(true);
    }
    expect(flat.result.input).toEqual(daily.result.input);
    expect(flat.result.labels.byKind).toEqual(daily.result.labels.byKind);
    expect(daily.result.labels.byKind.timeshift).toBeGreaterThan(0);
    expect(daily.result.baseConfig).toMatchObject({ defaults: { profile: 'daily' } });
    expect(flat.result.baseConfig).toMatchObject({ defaults: { profile: 'none' } });
  });

  it('timeshift faults: caught with the profile, mostly missed without', () => {
    expect(daily.result.recommended!.recallByKind.timeshift).toBeGreaterThanOrEqual(0.9);
    expect(flat.result.recommended!.recallByKind.timeshift).toBeLessThanOrEqual(0.2);
    // Not an accident of the recommended point: no grid point without the profile catches more.
    for (const point of flat.result.points) expect(point.recallByKind.timeshift).toBeLessThanOrEqual(0.2);
  });

  it('the headline recall is higher with the profile than at any point of the grid without it', () => {
    const withProfile = daily.result.recommended!.recall!;
    expect(withProfile).toBeGreaterThanOrEqual(0.9);
    for (const point of flat.result.points) expect(point.recall!).toBeLessThan(withProfile);
  });

  it('draws the README figure from these two runs, and writes its figures beside it', () => {
    const runs: [ComparedRun, ComparedRun] = [
      compared(daily, 'with profile: daily'),
      compared(flat, 'without (profile: none)'),
    ];
    const svg = tuneComparisonChart(runs, {
      title: 'water-supply, 10 days, 14 sensors: best recall of the same grid at the same alert budget',
      budgetPerHour: daily.result.budgetPerHour,
    });
    const shift = (r: TuneOutcome) => r.result.recommended!.countsByKind.timeshift;
    expect(svg).toContain(`>${shift(daily).caught}/${shift(daily).incidents}<`);
    expect(svg).toContain(`>${shift(flat).caught}/${shift(flat).incidents}<`);
    expect(svg).toContain(`recall ${(daily.result.recommended!.recall! * 100).toFixed(1)} %`);
    expect(svg).toContain('Advisory only');
    mkdirSync(ARTIFACTS, { recursive: true });
    writeFileSync(join(ARTIFACTS, 'profile-comparison.svg'), svg);
    const figures = Object.fromEntries(
      [daily, flat].map((outcome, i) => [
        runs[i].label,
        {
          settings: outcome.result.recommended!.settings,
          recall: runs[i].recall,
          caught: runs[i].caught,
          incidents: runs[i].incidents,
          precision: runs[i].precision,
          alertsPerHour: runs[i].alertsPerHour,
          countsByKind: runs[i].countsByKind,
        },
      ]),
    );
    writeFileSync(
      join(ARTIFACTS, 'profile-comparison.json'),
      `${JSON.stringify({ simulate: SIMULATE, grid: GRID, budgetPerHour: daily.result.budgetPerHour, runs: figures }, null, 2)}\n`,
    );
  });
});
