/**
 * The tune report's trade-off chart: what the noise-aware recommendation weighs. Each grid point is
 * drawn at its raised alerts per caught incident (across: 1 is one alert per incident) and its
 * recall (up). Shape tells the point's standing without colour: a filled dot within the budget, a
 * hollow dot over it, a square for a point with a flood. The recommended point is ringed, the
 * point the recall-first rule would pick is boxed, each with a label.
 */
import { coord, esc } from './escape.js';
import { axes, DEFAULT_FRAME, fmtNum, linearScale, niceTicks, type Frame } from './svg.js';

/** One grid point on the trade-off chart. */
export interface TradeoffPoint {
  label: string;
  recall: number | null;
  /** raised / caught; null when nothing was caught (not drawn). */
  alertsPerCaught: number | null;
  withinBudget: boolean;
  flood: boolean;
  recommended: boolean;
  recallFirst: boolean;
}

/** The marker of one point: square for a flood, dot otherwise; hollow when over the budget. */
function marker(point: TradeoffPoint, pointX: number, pointY: number): string {
  const cls = `pt${point.withinBudget ? '' : ' over'}${point.recommended ? ' recommended' : ''}`;
  const title = `<title>${esc(
    `${point.label}: ${fmtNum(point.alertsPerCaught as number)} raised per caught incident, recall ${fmtNum(point.recall as number)}` +
      `${point.flood ? ', flood' : ''}${point.withinBudget ? '' : ', over the budget'}`,
  )}</title>`;
  if (point.flood)
    return `<rect class="${cls}" x="${coord(pointX - 5)}" y="${coord(pointY - 5)}" width="10" height="10">${title}</rect>`;
  return `<circle class="${cls}" cx="${coord(pointX)}" cy="${coord(pointY)}" r="5">${title}</circle>`;
}

/** The ring and label of the recommended point, the box and label of the recall-first pick. */
function picks(point: TradeoffPoint, pointX: number, pointY: number): string {
  const parts: string[] = [];
  if (point.recommended)
    parts.push(
      `<circle class="ring" cx="${coord(pointX)}" cy="${coord(pointY)}" r="10"/>`,
      `<text class="line-label" x="${coord(pointX + 13)}" y="${coord(pointY - 10)}">recommended</text>`,
    );
  if (point.recallFirst)
    parts.push(
      `<rect class="pick-box" x="${coord(pointX - 9)}" y="${coord(pointY - 9)}" width="18" height="18"/>`,
      `<text class="line-label" x="${coord(pointX + 13)}" y="${coord(pointY + 18)}">recall-first pick</text>`,
    );
  return parts.join('');
}

/** The trade-off chart as one SVG string (at most one element group per grid point). */
export function tradeoffChart(points: readonly TradeoffPoint[], frame?: Frame): string {
  const chartFrame = frame ?? { ...DEFAULT_FRAME, height: 320, bottom: 40 };
  const label = 'tuning grid: raised alerts per caught incident against recall';
  const open = `<svg class="chart tradeoff-chart" xmlns="http://www.w3.org/2000/svg" width="${chartFrame.width}" height="${chartFrame.height}" viewBox="0 0 ${chartFrame.width} ${chartFrame.height}" role="img" aria-label="${esc(label)}">`;
  const drawn = points.filter(
    (p) => p.recall !== null && p.alertsPerCaught !== null && Number.isFinite(p.alertsPerCaught),
  );
  if (drawn.length === 0) return `${open}<text x="20" y="40">no grid point caught an incident</text></svg>`;
  const most = Math.max(...drawn.map((p) => p.alertsPerCaught as number));
  const highCost = Math.max(2, most * 1.08);
  const xScale = linearScale(1, highCost, chartFrame.left, chartFrame.width - chartFrame.right);
  const lowest = Math.min(...drawn.map((p) => p.recall as number));
  const lowRecall = Math.max(0, Math.floor(lowest * 10) / 10 - 0.05);
  const yScale = linearScale(lowRecall, 1, chartFrame.height - chartFrame.bottom, chartFrame.top);
  // Picks last, so their rings sit on top of the other dots.
  const order = [...drawn].sort(
    (a, b) => Number(a.recommended || a.recallFirst) - Number(b.recommended || b.recallFirst),
  );
  const body = order.map((point) => {
    const pointX = xScale(Math.max(1, point.alertsPerCaught as number));
    const pointY = yScale(point.recall as number);
    return marker(point, pointX, pointY) + picks(point, pointX, pointY);
  });
  return [
    open,
    axes(
      chartFrame,
      {
        ticks: niceTicks(1, highCost, 6),
        scale: xScale,
        label: fmtNum,
        title: 'raised alerts per caught incident (1 = one each)',
      },
      { ticks: niceTicks(lowRecall, 1, 5), scale: yScale, label: fmtNum, title: 'recall' },
    ),
    body.join(''),
    '</svg>',
  ].join('');
}
