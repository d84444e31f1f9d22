/**
 * Two tune recommendations side by side: recall per fault kind (and in all) of each, at the same
 * alert budget, as one standalone SVG (inline styles, no script, no fonts from the network), so it
 * works as a README image as well as inside a page. The README's daily-profile figure is drawn by
 * it from two real tune runs (test/unit/tuning/profile-e2e.test.ts). Pure: text in, text out.
 */
import { NOTICE } from '../schema/notice.js';
import { coord, esc } from './escape.js';
import { fmtNum, linearScale } from './svg.js';

/** One tune run's recommended point, as the comparison draws it. */
export interface ComparedRun {
  /** What distinguishes this run, e.g. "with profile: daily". */
  label: string;
  recall: number | null;
  precision: number | null;
  alertsPerHour: number;
  /** Incidents of the headline recall and how many were caught. */
  incidents: number;
  caught: number;
  countsByKind: Readonly<Record<string, { incidents: number; caught: number }>>;
}

/** The chart's heading and the budget both runs were recommended under. */
export interface ComparisonOptions {
  title: string;
  budgetPerHour: number;
}

const WIDTH = 960;
const HEIGHT = 400;
const PLOT = { left: 64, right: 16, top: 96, bottom: 62 };
// Run 0 solid and dark, run 1 light and hatched: told apart by pattern and by the legend, not by hue alone.
const FILLS = ['#1d4f73', 'url(#run-1-hatch)'] as const;
const pct = (v: number | null): string => (v === null ? '–' : `${(v * 100).toFixed(1)} %`);

/** A grouped bar chart: per group (all incidents first, then each kind) one bar per run, labelled caught/incidents. */
export function tuneComparisonChart(
  runs: readonly [ComparedRun, ComparedRun],
  opts: ComparisonOptions,
): string {
  const kinds = [...new Set(runs.flatMap((r) => Object.keys(r.countsByKind)))]
    .filter((k) => runs.some((r) => (r.countsByKind[k]?.incidents ?? 0) > 0))
    .sort();
  const groups = [
    { name: 'all', counts: runs.map((r) => ({ incidents: r.incidents, caught: r.caught })) },
    ...kinds.map((k) => ({
      name: k,
      counts: runs.map((r) => r.countsByKind[k] ?? { incidents: 0, caught: 0 }),
    })),
  ];
  const plotLeft = PLOT.left;
  const plotRight = WIDTH - PLOT.right;
  const yBase = HEIGHT - PLOT.bottom;
  const yScale = linearScale(0, 1, yBase, PLOT.top);
  const groupWidth = (plotRight - plotLeft) / groups.length;
  const barWidth = Math.min(34, groupWidth * 0.36);
  const parts: string[] = [
    `<svg xmlns="http://www.w3.org/2000/svg" width="${WIDTH}" height="${HEIGHT}" viewBox="0 0 ${WIDTH} ${HEIGHT}" role="img" aria-label="${esc(`${opts.title}: recall by fault kind, ${runs[0].label} against ${runs[1].label}`)}" font-family="sans-serif" font-size="12">`,
    `<defs><pattern id="run-1-hatch" width="6" height="6" patternUnits="userSpaceOnUse" patternTransform="rotate(45)"><rect width="6" height="6" fill="#d9e6f0"/><line x1="0" y1="0" x2="0" y2="6" stroke="#5b7f9c" stroke-width="2"/></pattern></defs>`,
    `<rect width="${WIDTH}" height="${HEIGHT}" fill="#ffffff"/>`,
    `<text x="${plotLeft}" y="22" font-size="15" font-weight="bold">${esc(opts.title)}</text>`,
  ];
  runs.forEach((run, runIndex) => {
    const legendY = 44 + runIndex * 20;
    parts.push(
      `<rect x="${plotLeft}" y="${legendY - 11}" width="22" height="13" fill="${FILLS[runIndex]}" stroke="#1d4f73"/>`,
      `<text x="${plotLeft + 30}" y="${legendY}">${esc(`${run.label}: recall ${pct(run.recall)} (${run.caught} of ${run.incidents}), precision ${pct(run.precision)}, ${run.alertsPerHour.toFixed(2)} raised alerts/h (budget ${fmtNum(opts.budgetPerHour)}/h)`)}</text>`,
    );
  });
  for (const tick of [0, 0.25, 0.5, 0.75, 1]) {
    parts.push(
      `<line x1="${plotLeft}" x2="${plotRight}" y1="${coord(yScale(tick))}" y2="${coord(yScale(tick))}" stroke="${tick === 0 ? '#333' : '#ddd'}"/>`,
      `<text x="${plotLeft - 6}" y="${coord(yScale(tick) + 4)}" text-anchor="end">${tick * 100} %</text>`,
    );
  }
  parts.push(
    `<text transform="translate(16 ${coord((PLOT.top + yBase) / 2)}) rotate(-90)" text-anchor="middle">recall (caught / incidents)</text>`,
  );
  groups.forEach((group, groupIndex) => {
    const centre = plotLeft + groupWidth * (groupIndex + 0.5);
    group.counts.forEach((count, runIndex) => {
      const share = count.incidents === 0 ? 0 : count.caught / count.incidents;
      const left = centre + (runIndex === 0 ? -barWidth - 2 : 2);
      const top = yScale(share);
      parts.push(
        `<rect x="${coord(left)}" y="${coord(top)}" width="${coord(barWidth)}" height="${coord(yBase - top)}" fill="${FILLS[runIndex]}" stroke="#1d4f73"><title>${esc(`${runs[runIndex].label}, ${group.name}: ${count.caught} of ${count.incidents}`)}</title></rect>`,
        `<text x="${coord(left + barWidth / 2)}" y="${coord(top - 4)}" text-anchor="middle" font-size="10">${count.caught}/${count.incidents}</text>`,
      );
    });
    parts.push(
      `<text x="${coord(centre)}" y="${yBase + 18}" text-anchor="middle"${group.name === 'all' ? ' font-weight="bold"' : ''}>${esc(group.name)}</text>`,
    );
  });
  parts.push(
    `<text x="${plotLeft}" y="${HEIGHT - 12}" font-size="10" fill="#444">${esc(NOTICE)}</text>`,
    '</svg>',
  );
  return `${parts.join('\n')}\n`;
}
