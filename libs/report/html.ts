/**
 * The HTML page shell shared by the replay and tune reports: one self-contained file with inline
 * CSS and inline SVG, no script and no external resource, so it opens offline and from an email.
 * The safety caution is always shown near the top.
 */
import { NOTICE } from '../schema/notice.js';
import { esc } from './escape.js';

const CSS = `
:root { --ink:#1f2430; --muted:#5d6577; --line:#d5d9e2; --paper:#fbfbf8; --band:#3d6fb4; --warn:#d88a12; --crit:#b3261e; --ok:#2f8a6b; }
* { box-sizing: border-box; }
body { margin: 0; font: 14px/1.45 system-ui, sans-serif; color: var(--ink); background: var(--paper); }
main { max-width: 1000px; margin: 0 auto; padding: 18px 20px 40px; }
h1 { font-size: 22px; margin: 4px 0 2px; }
h2 { font-size: 17px; margin: 26px 0 8px; border-bottom: 1px solid var(--line); padding-bottom: 3px; }
h3 { font-size: 14px; margin: 18px 0 4px; font-family: ui-monospace, monospace; word-break: break-all; }
.sub { color: var(--muted); margin: 0 0 10px; }
.caution { border-left: 4px solid var(--crit); background: #fff4f2; padding: 8px 12px; margin: 10px 0 14px; }
table { border-collapse: collapse; margin: 6px 0 10px; }
th, td { border-bottom: 1px solid var(--line); padding: 3px 10px 3px 0; text-align: left; vertical-align: top; }
td.n, th.n { text-align: right; font-variant-numeric: tabular-nums; }
tr.pick td { background: #eaf1fb; font-weight: 600; }
.note { color: var(--muted); font-size: 12.5px; }
.legend { display: flex; flex-wrap: wrap; gap: 14px; font-size: 12.5px; color: var(--muted); margin: 4px 0; }
.legend svg { vertical-align: middle; }
svg.chart { display: block; max-width: 100%; height: auto; background: #fff; border: 1px solid var(--line); }
svg .grid { stroke: #eceef3; }
svg .frame { fill: none; stroke: #b9bfcc; }
svg .tick, svg .axis-title, svg .line-label { font: 11px system-ui, sans-serif; fill: var(--muted); }
svg .readings { fill: var(--band); fill-opacity: .6; stroke: var(--band); stroke-width: .6; }
svg .fence-inner { fill: #5e9c72; fill-opacity: .3; }
svg .fence-outer { fill: #c9b35f; fill-opacity: .16; }
svg .median { fill: none; stroke: #2c3140; stroke-width: 1.4; stroke-dasharray: 5 3; }
svg .mark.raised.warning { fill: var(--warn); stroke: #fff; stroke-width: 1; }
svg .mark.raised.critical { fill: var(--crit); stroke: #fff; stroke-width: 1; }
svg .mark.updated { fill: #6c7386; }
svg .mark.cleared { fill: #fff; stroke: var(--ok); stroke-width: 2; }
svg .bar { fill: var(--band); }
svg .bar.over { fill: var(--warn); }
svg .budget { stroke: var(--warn); stroke-width: 1.5; stroke-dasharray: 6 4; }
svg .flood { stroke: var(--crit); stroke-width: 1.5; stroke-dasharray: 2 3; }
svg .pt { fill: var(--band); stroke: #1e3f6e; }
svg .pt.recommended { fill: var(--ok); stroke: #1c5a45; }
svg .ring { fill: none; stroke: var(--ok); stroke-width: 2; }
svg .pt.over { fill: #fff; }
svg .pick-box { fill: none; stroke: var(--warn); stroke-width: 2; stroke-dasharray: 3 2; }
h3.plain { font-family: inherit; word-break: normal; }
.verdict { display: inline-flex; align-items: center; gap: 5px; white-space: nowrap; font-weight: 600; }
.verdict svg { fill: none; stroke: currentColor; stroke-width: 1.7; }
.verdict.met { color: var(--ok); }
.verdict.not-met { color: var(--crit); letter-spacing: .03em; }
.verdict.not-judged { color: var(--muted); font-weight: 400; }
.sources { margin: 2px 0 10px; padding-left: 18px; }
`;

/**
 * A whole self-contained report page (inline style, strict Content-Security-Policy, no script, the
 * caution).
 */
export function page(title: string, subtitle: string, body: string): string {
  return [
    '<!doctype html>',
    '<html lang="en"><head><meta charset="utf-8">',
    '<meta name="viewport" content="width=device-width, initial-scale=1">',
    // No network: the page may not load anything, even if a value somehow contained a URL.
    `<meta http-equiv="Content-Security-Policy" content="default-src 'none'; style-src 'unsafe-inline'; img-src data:">`,
    `<title>${esc(title)}</title><style>${CSS}</style></head><body><main>`,
    `<h1>${esc(title)}</h1><p class="sub">${esc(subtitle)}</p>`,
    `<p class="caution" id="notice"><strong>Caution.</strong> ${esc(NOTICE)}</p>`,
    body,
    `<footer class="note"><p>${esc(NOTICE)}</p></footer>`,
    '</main></body></html>',
    '',
  ].join('\n');
}

/** A table cell: text (escaped), a number (formatted), trusted markup, or empty. */
export type Cell = string | number | null | { html: string } | { num: number | null; digits?: number };

/** A table; strings are escaped, `{html}` cells are trusted markup built by our own code. */
export function table(
  head: readonly string[],
  rows: readonly (readonly Cell[])[],
  opts: { pick?: (column: number) => boolean; numeric?: readonly number[] } = {},
): string {
  const numeric = new Set(opts.numeric ?? []);
  const cell = (content: Cell, column: number, tag: 'td' | 'th'): string => {
    const cls = numeric.has(column) ? ' class="n"' : '';
    return `<${tag}${cls}>${renderCell(content)}</${tag}>`;
  };
  const headRow = `<tr>${head.map((h, i) => cell(h, i, 'th')).join('')}</tr>`;
  const body = rows
    .map(
      (r, ri) =>
        `<tr${opts.pick?.(ri) ? ' class="pick"' : ''}>${r.map((c, i) => cell(c, i, 'td')).join('')}</tr>`,
    )
    .join('');
  return `<table><thead>${headRow}</thead><tbody>${body}</tbody></table>`;
}

function renderCell(content: Cell): string {
  if (content === null) return '–';
  if (typeof content === 'number') return esc(fmtCount(content));
  if (typeof content === 'string') return esc(content);
  if ('html' in content) return content.html;
  if (content.num === null || !Number.isFinite(content.num)) return '–';
  return esc(content.digits === undefined ? String(content.num) : content.num.toFixed(content.digits));
}

/** Integers with thin grouping; other numbers as given. */
export function fmtCount(count: number): string {
  if (!Number.isInteger(count)) return String(count);
  return count.toLocaleString('en-US');
}
