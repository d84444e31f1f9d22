/**
 * The board's stylesheet. Neutral greys; colour only marks abnormal states, and every state also
 * has text and a shape. Sizes in rem so the "Large type" switch scales the whole page for a wall screen.
 */
export const BOARD_CSS = String.raw`
:root {
  --bg: #f4f4f2; --panel: #ffffff; --ink: #1d1f21; --muted: #5b6064; --line: #cfd2d4;
  --warn: #9a5b00; --warn-bg: #fff4e0; --crit: #a4161a; --crit-bg: #fdeaea; --ok: #2f5d3a;
  --focus: #1a4fb5; --band: #dfe6ee; --median: #4b5963;
}
* { box-sizing: border-box; }
html { font-size: 16px; }
html.large { font-size: 22px; }
body { margin: 0; background: var(--bg); color: var(--ink); font: 1rem/1.4 system-ui, -apple-system, "Segoe UI", Roboto, sans-serif; padding-bottom: 4.5rem; }
button, input, textarea, select { font: inherit; }
:focus-visible { outline: 3px solid var(--focus); outline-offset: 2px; }
.top { display: flex; flex-wrap: wrap; gap: .5rem 1.5rem; align-items: center; justify-content: space-between; padding: .6rem 1rem; background: var(--panel); border-bottom: 1px solid var(--line); }
.top h1 { font-size: 1.25rem; margin: 0; letter-spacing: .02em; }
.top .sub { font-weight: 400; color: var(--muted); }
.controls { display: flex; flex-wrap: wrap; gap: .4rem .6rem; align-items: center; }
.controls input { padding: .25rem .4rem; border: 1px solid var(--line); border-radius: 4px; min-width: 10rem; }
button { padding: .35rem .8rem; border: 1px solid #8a9096; border-radius: 4px; background: #fafafa; color: var(--ink); cursor: pointer; }
button:hover { background: #eceeef; }
button[aria-pressed="true"] { background: #dde3ea; }
.muted { color: var(--muted); }
.link { font-size: .85rem; color: var(--muted); }
.link.down { color: var(--crit); font-weight: 600; }
.rate { display: flex; flex-wrap: wrap; gap: .4rem 1.5rem; align-items: center; padding: .5rem 1rem; background: var(--panel); border-bottom: 1px solid var(--line); font-size: .95rem; }
.rate meter { width: 10rem; height: 1rem; }
.rate .over { color: var(--crit); font-weight: 600; }
.flood { margin: .6rem 1rem 0; padding: .6rem .8rem; border: 2px solid var(--crit); background: var(--crit-bg); color: var(--crit); font-weight: 600; border-radius: 4px; }
.waiting { margin: .6rem 1rem 0; padding: .6rem .8rem; border: 2px dashed var(--warn); background: var(--warn-bg); color: var(--warn); font-weight: 600; border-radius: 4px; }
.message { min-height: 1.4rem; margin: .3rem 1rem 0; font-size: .9rem; color: var(--muted); }
.message.bad { color: var(--crit); }
main { padding: 0 1rem; display: grid; gap: .5rem; }
h2 { font-size: 1.1rem; margin: 1rem 0 .4rem; }
.count { color: var(--muted); font-weight: 400; }
.cards { list-style: none; margin: 0; padding: 0; display: grid; gap: .6rem; grid-template-columns: repeat(auto-fill, minmax(26rem, 1fr)); }
.cards.compact { grid-template-columns: repeat(auto-fill, minmax(22rem, 1fr)); }
@media (max-width: 640px) { .cards, .cards.compact { grid-template-columns: 1fr; } }
.card { background: var(--panel); border: 1px solid var(--line); border-left-width: 6px; border-radius: 4px; padding: .6rem .8rem; display: grid; gap: .35rem; }
.card.critical { border-left-color: var(--crit); }
.card.warning { border-left-color: var(--warn); }
.card.cleared { border-left-color: var(--line); opacity: .9; }
.card .head { display: flex; flex-wrap: wrap; gap: .3rem .8rem; align-items: center; }
.sev { display: inline-flex; align-items: center; gap: .3rem; font-weight: 700; font-size: .85rem; letter-spacing: .05em; padding: .05rem .45rem; border-radius: 3px; }
.sev.critical { color: var(--crit); background: var(--crit-bg); }
.sev.warning { color: var(--warn); background: var(--warn-bg); }
.sev.cleared { color: var(--muted); background: #eceeef; }
.sev svg { width: 1em; height: 1em; }
.sensor { font-weight: 700; font-family: ui-monospace, "SFMono-Regular", Menlo, Consolas, monospace; }
.msg { margin: 0; }
.facts { display: flex; flex-wrap: wrap; gap: .2rem 1rem; font-size: .9rem; color: var(--muted); margin: 0; }
.facts b { color: var(--ink); font-weight: 600; }
.ack { font-size: .9rem; }
.ack.yes { color: var(--ok); }
.ack.no { color: var(--ink); font-weight: 600; }
.chart { width: 100%; max-width: 32rem; height: auto; background: #fbfbfa; border: 1px solid #e4e6e7; }
.chart .band { fill: var(--band); }
.chart .median { stroke: var(--median); stroke-dasharray: 4 3; stroke-width: 1; }
.chart .line { fill: none; stroke: #3a4148; stroke-width: 1.4; }
.chart .flag { fill: var(--crit); stroke: #fff; stroke-width: 1; }
.legend { font-size: .8rem; color: var(--muted); }
.actions { display: flex; flex-wrap: wrap; gap: .5rem; }
.caution { position: fixed; left: 0; right: 0; bottom: 0; z-index: 10; padding: .6rem 1rem; background: #2b2f33; color: #f4f4f2; font-size: .95rem; border-top: 3px solid #e0b341; }
.caution strong { color: #e0b341; margin-right: .5rem; text-transform: uppercase; letter-spacing: .06em; }
.empty { color: var(--muted); margin: .2rem 0; }
dialog { border: 1px solid var(--line); border-radius: 6px; padding: 1rem 1.2rem; max-width: 32rem; width: 92vw; }
dialog::backdrop { background: rgba(20, 22, 24, .45); }
dialog label, dialog legend { display: block; margin: .4rem 0 .2rem; }
dialog textarea { width: 100%; }
dialog fieldset { border: 1px solid var(--line); margin: .6rem 0; }
dialog fieldset label { display: inline-block; margin-right: 1rem; }
.error { color: var(--crit); min-height: 1.2rem; }
.row { display: flex; gap: .6rem; justify-content: flex-end; }
.token-prompt { color: var(--crit); font-weight: 600; font-size: .9rem; }
.ack.later { color: var(--muted); font-size: .85rem; }
.cards { align-items: start; }
.card { align-content: start; }
.card.group { gap: .5rem; background: #f9fafb; }
.group-tag { font-weight: 700; font-size: .8rem; letter-spacing: .08em; padding: .05rem .45rem; border: 1px dashed var(--muted); border-radius: 3px; color: var(--muted); }
.card.group ol { list-style: none; margin: 0; padding: 0; display: grid; gap: .4rem; }
.card.first-out { border-left-width: 10px; }
.first-out-tag { font-weight: 700; font-size: .8rem; letter-spacing: .06em; padding: .05rem .45rem; border-radius: 3px; background: var(--ink); color: var(--panel); }
.member { border-top: 1px solid var(--line); padding-top: .4rem; display: grid; gap: .25rem; }
.member .msg { font-size: .9rem; }
.health { display: flex; flex-wrap: wrap; gap: .3rem 1rem; align-items: center; padding: .35rem 1rem; background: var(--panel); border-bottom: 1px solid var(--line); font-size: .85rem; }
.health h2 { font-size: .85rem; margin: 0; text-transform: uppercase; letter-spacing: .06em; color: var(--muted); }
.health .kpis { list-style: none; margin: 0; padding: 0; display: flex; flex-wrap: wrap; gap: .3rem .9rem; }
.kpi { display: inline-flex; align-items: center; gap: .3rem; }
.kpi svg { width: .85rem; height: .85rem; }
.kpi b { font-variant-numeric: tabular-nums; }
.kpi.met svg { color: var(--ok); }
.kpi.not-met { color: var(--crit); }
.kpi.not-judged svg { color: var(--muted); }
.kpi .verdict-words { font-size: .75rem; color: var(--muted); }
.kpi.not-met .verdict-words { color: var(--crit); font-weight: 700; letter-spacing: .04em; }
`;
