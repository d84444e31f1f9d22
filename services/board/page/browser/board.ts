/**
 * The board page's script (browser code, DOM types; its own tsconfig.json here). It renders from
 * /api/board and refreshes when the event stream (/api/events) says something changed. Text is
 * always inserted with textContent, never as HTML. It imports types only, so the page loads one
 * file and nothing from the network: `npm run board:script` transpiles it into
 * services/board/page/script.ts (BOARD_JS, served as /assets/board.js); a unit test checks that
 * file is up to date.
 */
import type { BoardSnapshot } from '../../../../libs/board/snapshot.js';
import type { BoardAlert } from '../../../../libs/board/store.js';
import type { RateReading } from '../../../../libs/board/rate.js';
import type { AlertGroup } from '../../../../libs/board/groups.js';
import type { BoardHealth, HealthFigure } from '../../../../libs/board/health.js';

type ActionName = 'acknowledge' | 'shelve' | 'unshelve';
type BadgeKind = 'warning' | 'critical' | 'cleared';

interface ChartPoint {
  ts: number;
  value: number;
  flagged: boolean;
}

/** The answer to an action: the alert (or, for a group, every member) as it now stands, or the refusal's message. */
interface ActionReply {
  ok: boolean;
  status: number;
  body: Partial<BoardAlert> & { message?: string; alerts?: BoardAlert[]; group?: AlertGroup };
}

/** What an action applies to: one alert, or every alert of a group. */
interface ActionTarget {
  scope: 'alerts' | 'groups';
  id: string;
  /** Words for messages: the sensor, or "the group of <asset>". */
  label: string;
}

const SVGNS = 'http://www.w3.org/2000/svg';
const NAME_KEY = 'streamfence.board.operator';
const LARGE_KEY = 'streamfence.board.large';
const TOKEN_KEY = 'streamfence.board.token';

const page: {
  data: BoardSnapshot | null;
  fetchedAt: number;
  timer: ReturnType<typeof setTimeout> | null;
  shelveTarget: ActionTarget | null;
  marked: boolean;
  /** The server refused the token (or there was none): wait for the operator to type it. */
  locked: boolean;
  stream: AbortController | null;
  /** The event stream is open (the header says "live" unless the board waits for Kafka/Redis). */
  live: boolean;
} = {
  data: null,
  fetchedAt: 0,
  timer: null,
  shelveTarget: null,
  marked: false,
  locked: false,
  stream: null,
  live: false,
};

function byId<T extends HTMLElement = HTMLElement>(id: string): T {
  return document.getElementById(id) as T;
}
const inputById = (id: string): HTMLInputElement => byId<HTMLInputElement>(id);

/** Attributes to set; `text` becomes textContent and `cls` the class name. */
type ElementAttributes = Record<string, string>;

function el(tag: string, attrs?: ElementAttributes, children?: (Node | string | null)[]): HTMLElement {
  const node = document.createElement(tag);
  if (attrs)
    for (const key in attrs) {
      if (key === 'text') node.textContent = attrs[key];
      else if (key === 'cls') node.className = attrs[key];
      else node.setAttribute(key, attrs[key]);
    }
  (children || []).forEach((child) => {
    if (child) node.appendChild(typeof child === 'string' ? document.createTextNode(child) : child);
  });
  return node;
}
function svg(tag: string, attrs: Record<string, string | number>): SVGElement {
  const node = document.createElementNS(SVGNS, tag);
  for (const key in attrs) node.setAttribute(key, String(attrs[key]));
  return node;
}
function pad(n: number): string {
  return (n < 10 ? '0' : '') + n;
}
function absTime(iso: string | null | undefined): string {
  if (!iso) return '';
  const date = new Date(iso);
  return (
    date.getFullYear() +
    '-' +
    pad(date.getMonth() + 1) +
    '-' +
    pad(date.getDate()) +
    ' ' +
    pad(date.getHours()) +
    ':' +
    pad(date.getMinutes()) +
    ':' +
    pad(date.getSeconds())
  );
}
function relTime(ms: number): string {
  const seconds = Math.round(Math.abs(ms) / 1000);
  const text =
    seconds < 60
      ? seconds + ' s'
      : seconds < 3600
        ? Math.round(seconds / 60) + ' min'
        : seconds < 172800
          ? (seconds / 3600).toFixed(1) + ' h'
          : Math.round(seconds / 86400) + ' days';
  return ms >= 0 ? text + ' ago' : 'in ' + text;
}
// The plant clock runs at "speed" times the wall clock in the demo; relative times use it.
function plantNow(): number {
  const data = page.data;
  if (!data) return Date.now();
  return Date.parse(data.plantNow) + (Date.now() - page.fetchedAt) * (data.speed || 1);
}
function wallNow(): number {
  const data = page.data;
  return data ? Date.parse(data.wallNow) + (Date.now() - page.fetchedAt) : Date.now();
}
function fmt(value: number | null | undefined): string {
  if (value === null || value === undefined || !isFinite(value)) return '–';
  const magnitude = Math.abs(value);
  return magnitude >= 1000 ? value.toFixed(0) : magnitude >= 10 ? value.toFixed(1) : value.toFixed(2);
}
function operator(): string {
  return (inputById('operator').value || '').trim();
}

function sevBadge(kind: BadgeKind): HTMLElement {
  const badge = el('span', { cls: 'sev ' + kind });
  const icon = svg('svg', { viewBox: '0 0 10 10', 'aria-hidden': 'true', focusable: 'false' });
  if (kind === 'critical')
    icon.appendChild(svg('polygon', { points: '5,0 10,5 5,10 0,5', fill: 'currentColor' }));
  else if (kind === 'warning')
    icon.appendChild(svg('polygon', { points: '5,0.5 9.8,9.5 0.2,9.5', fill: 'currentColor' }));
  else
    icon.appendChild(
      svg('circle', { cx: 5, cy: 5, r: 4, fill: 'none', stroke: 'currentColor', 'stroke-width': 1.6 }),
    );
  badge.appendChild(icon);
  badge.appendChild(
    document.createTextNode(kind === 'critical' ? 'CRITICAL' : kind === 'warning' ? 'WARNING' : 'CLEARED'),
  );
  return badge;
}

const usable = (value: number | null | undefined): value is number =>
  value !== null && value !== undefined && isFinite(value);

function chart(alert: BoardAlert, points: ChartPoint[]): SVGElement {
  const width = 320,
    height = 80,
    inset = 4;
  const baseline = alert.baseline;
  const values = points.map((point) => point.value);
  const ys = [...values, baseline.median, baseline.lowerFence, baseline.upperFence, alert.value].filter(
    usable,
  );
  const box = svg('svg', { viewBox: '0 0 ' + width + ' ' + height, cls: 'chart', role: 'img' });
  box.setAttribute('class', 'chart');
  let desc = 'Recent readings of ' + alert.sensor + ': ' + points.length + ' points';
  if (baseline.lowerFence !== null && baseline.upperFence !== null)
    desc += '; normal band ' + fmt(baseline.lowerFence) + ' to ' + fmt(baseline.upperFence);
  if (baseline.median !== null) desc += '; median ' + fmt(baseline.median);
  box.setAttribute('aria-label', desc);
  if (ys.length === 0) return box;
  let lo = Math.min.apply(null, ys),
    hi = Math.max.apply(null, ys);
  if (hi === lo) {
    hi += 1;
    lo -= 1;
  }
  const span = hi - lo;
  lo -= span * 0.08;
  hi += span * 0.08;
  const y = (value: number): number => inset + (height - 2 * inset) * (1 - (value - lo) / (hi - lo));
  if (baseline.lowerFence !== null && baseline.upperFence !== null) {
    const top = y(Math.min(hi, baseline.upperFence)),
      bottom = y(Math.max(lo, baseline.lowerFence));
    if (bottom > top)
      box.appendChild(svg('rect', { x: 0, y: top, width, height: bottom - top, class: 'band' }));
  }
  if (baseline.median !== null)
    box.appendChild(
      svg('line', { x1: 0, x2: width, y1: y(baseline.median), y2: y(baseline.median), class: 'median' }),
    );
  if (points.length > 0) {
    const t0 = points[0].ts,
      t1 = points[points.length - 1].ts;
    const x = (ts: number): number =>
      t1 === t0 ? width / 2 : inset + ((width - 2 * inset) * (ts - t0)) / (t1 - t0);
    box.appendChild(
      svg('polyline', {
        points: points.map((point) => x(point.ts).toFixed(1) + ',' + y(point.value).toFixed(1)).join(' '),
        class: 'line',
      }),
    );
    points.forEach((point) => {
      if (!point.flagged) return;
      const cx = x(point.ts),
        cy = y(point.value);
      // Flagged points: a small diamond, so they differ by shape as well as colour.
      box.appendChild(
        svg('polygon', { points: [cx, cy - 4, cx + 4, cy, cx, cy + 4, cx - 4, cy].join(','), class: 'flag' }),
      );
    });
  }
  return box;
}

function actionButton(label: string, action: ActionName, alert: BoardAlert): HTMLElement {
  return targetButton(
    label,
    action,
    { scope: 'alerts', id: alert.id, label: alert.sensor },
    alert.sensor + ': ' + alert.message,
  );
}

function targetButton(label: string, action: ActionName, target: ActionTarget, what: string): HTMLElement {
  const button = el('button', {
    type: 'button',
    'data-key': target.scope + ':' + target.id + ':' + action,
    text: label,
  });
  button.addEventListener('click', () => {
    if (action === 'shelve') openShelve(target, what);
    else void post(target, action, {});
  });
  return button;
}

/** Acknowledgements after the first, which stands: listed, never replacing it. */
function laterAcks(alert: BoardAlert): HTMLElement | null {
  const later = alert.laterAcknowledgements || [];
  if (later.length === 0) return null;
  return el('p', {
    cls: 'ack later',
    text: 'Also acknowledged by ' + later.map((ack) => ack.by + ' at ' + absTime(ack.at)).join(', '),
  });
}

function severityOf(alerts: BoardAlert[]): 'critical' | 'warning' {
  return alerts.some((alert) => alert.severity === 'critical') ? 'critical' : 'warning';
}

/** One line of a group's listing: a member other than the first-out, with its own actions. */
function memberRow(alert: BoardAlert): HTMLElement {
  const row = el('li', { cls: 'member', 'data-id': alert.id, 'data-status': alert.status });
  row.appendChild(
    el('div', { cls: 'head' }, [
      sevBadge(alert.severity),
      el('span', { cls: 'sensor', text: alert.sensor }),
      el('span', { cls: 'muted', text: 'raised ' + absTime(alert.since) }),
    ]),
  );
  row.appendChild(el('p', { cls: 'msg', text: alert.message }));
  row.appendChild(
    alert.acknowledged
      ? el('p', {
          cls: 'ack yes',
          text: '✓ Acknowledged by ' + alert.acknowledgedBy + ' at ' + absTime(alert.acknowledgedAt),
        })
      : el('p', { cls: 'ack no', text: '• Not acknowledged' }),
  );
  const later = laterAcks(alert);
  if (later) row.appendChild(later);
  const actions = el('div', { cls: 'actions' });
  if (!alert.acknowledged) actions.appendChild(actionButton('Acknowledge', 'acknowledge', alert));
  if (alert.status === 'active') actions.appendChild(actionButton('Shelve…', 'shelve', alert));
  if (alert.status === 'shelved') actions.appendChild(actionButton('Unshelve', 'unshelve', alert));
  if (actions.childNodes.length) row.appendChild(actions);
  return row;
}

/**
 * A group as one card: what it is, the actions on all its alerts, the first-out alert in full
 * (marked), then the other members listed in the order they were raised.
 */
function groupCard(group: AlertGroup, members: BoardAlert[]): HTMLElement {
  const data = page.data!;
  const first = members[0];
  const item = el('li', {
    cls: 'card group ' + severityOf(members),
    'data-group': group.id,
    'data-status': group.status,
  });
  const minutes = data.grouping ? data.grouping.windowMinutes : 0;
  item.appendChild(
    el('div', { cls: 'head' }, [
      el('span', { cls: 'group-tag', text: 'GROUP' }),
      el('span', { cls: 'sensor', text: group.asset }),
      el('span', {
        cls: 'muted',
        text: members.length + ' alerts raised within ' + minutes + ' min of the first-out',
      }),
    ]),
  );
  const target: ActionTarget = { scope: 'groups', id: group.id, label: 'the group of ' + group.asset };
  const groupActions = el('div', { cls: 'actions group-actions' });
  const open = members.filter((alert) => !alert.acknowledged).length;
  if (open > 0)
    groupActions.appendChild(
      targetButton('Acknowledge all ' + members.length, 'acknowledge', target, group.asset),
    );
  if (group.status === 'active')
    groupActions.appendChild(
      targetButton('Shelve group…', 'shelve', target, group.asset + ': ' + members.length + ' alerts'),
    );
  if (group.status === 'shelved')
    groupActions.appendChild(targetButton('Unshelve group', 'unshelve', target, group.asset));
  item.appendChild(groupActions);
  const firstOut = card(first);
  firstOut.classList.add('first-out');
  firstOut.querySelector('.head')!.prepend(el('span', { cls: 'first-out-tag', text: 'FIRST-OUT' }));
  const list = el('ol', { cls: 'members', 'aria-label': 'Other alerts of ' + group.asset });
  members.slice(1).forEach((alert) => list.appendChild(memberRow(alert)));
  item.appendChild(el('ol', { cls: 'first' }, [firstOut]));
  item.appendChild(list);
  return item;
}

function card(alert: BoardAlert): HTMLElement {
  const kind: BadgeKind = alert.status === 'cleared' ? 'cleared' : alert.severity;
  const item = el('li', { cls: 'card ' + kind, 'data-id': alert.id, 'data-status': alert.status });
  const head = el('div', { cls: 'head' }, [
    sevBadge(kind),
    el('span', { cls: 'sensor', text: alert.sensor }),
  ]);
  if (alert.status === 'cleared')
    head.appendChild(el('span', { cls: 'muted', text: 'was ' + alert.severity }));
  item.appendChild(head);
  item.appendChild(el('p', { cls: 'msg', text: alert.message }));
  item.appendChild(cardFacts(alert));
  if (alert.status !== 'cleared') cardChart(alert).forEach((part) => item.appendChild(part));
  const ackLine = cardAckLine(alert);
  if (ackLine) item.appendChild(ackLine);
  const later = laterAcks(alert);
  if (later) item.appendChild(later);
  if (alert.status === 'shelved') item.appendChild(shelvedLine(alert));
  const actions = cardActions(alert);
  if (actions.childNodes.length) item.appendChild(actions);
  return item;
}

/** A card's facts line: since when, how many flagged readings, the last value, when it cleared. */
function cardFacts(alert: BoardAlert): HTMLElement {
  const data = page.data!;
  const since = Date.parse(alert.since);
  const facts = el('p', { cls: 'facts' });
  facts.appendChild(
    el('span', {}, [
      'Since ',
      el('b', { text: absTime(alert.since) }),
      ' (' + relTime(plantNow() - since) + ')',
    ]),
  );
  const live = data.flaggedNow && data.flaggedNow[alert.id];
  facts.appendChild(
    el('span', {}, [
      'Flagged readings ',
      el('b', { text: String(Math.max(alert.flaggedReadings, live || 0)) }),
    ]),
  );
  facts.appendChild(
    el('span', {}, [
      'Value at last alert event ',
      el('b', { text: fmt(alert.value) }),
      ' at ' + absTime(alert.ts),
    ]),
  );
  if (alert.status === 'cleared')
    facts.appendChild(el('span', {}, ['Cleared ', el('b', { text: absTime(alert.ts) })]));
  return facts;
}

/** An open alert's chart of its sensor's recent readings and the legend under it. */
function cardChart(alert: BoardAlert): Element[] {
  const data = page.data!;
  const raw = (data.series && data.series[alert.sensor]) || [];
  const points = raw.map((point): ChartPoint => ({ ts: point[0], value: point[1], flagged: point[2] === 1 }));
  const baseline = alert.baseline;
  const legend = el('p', {
    cls: 'legend',
    text:
      'Shaded: normal band ' +
      fmt(baseline.lowerFence) +
      ' to ' +
      fmt(baseline.upperFence) +
      '. Dashed: median ' +
      fmt(baseline.median) +
      '. Diamonds: flagged readings. ' +
      points.length +
      ' recent readings.',
  });
  return [chart(alert, points), legend];
}

/** Who acknowledged the alert and when, or that nobody has (none for a cleared, unacknowledged one). */
function cardAckLine(alert: BoardAlert): HTMLElement | null {
  if (alert.acknowledged)
    return el('p', {
      cls: 'ack yes',
      text: '✓ Acknowledged by ' + alert.acknowledgedBy + ' at ' + absTime(alert.acknowledgedAt),
    });
  if (alert.status !== 'cleared') return el('p', { cls: 'ack no', text: '• Not acknowledged' });
  return null;
}

/** A shelved alert's line: by whom, until when, when it comes back and why. */
function shelvedLine(alert: BoardAlert): HTMLElement {
  return el('p', { cls: 'facts' }, [
    'Shelved by ',
    el('b', { text: alert.shelvedBy || 'unnamed' }),
    ' until ',
    el('b', { text: absTime(alert.shelvedUntil) }),
    ' (back ' + relTime(wallNow() - Date.parse(alert.shelvedUntil ?? '')) + '). Reason: ',
    el('b', { text: alert.shelveReason || '' }),
  ]);
}

/** The buttons an alert's state allows: acknowledge, shelve or unshelve (may be empty). */
function cardActions(alert: BoardAlert): HTMLElement {
  const actions = el('div', { cls: 'actions' });
  if (alert.status !== 'cleared' && !alert.acknowledged)
    actions.appendChild(actionButton('Acknowledge', 'acknowledge', alert));
  if (alert.status === 'active') actions.appendChild(actionButton('Shelve…', 'shelve', alert));
  if (alert.status === 'shelved') actions.appendChild(actionButton('Unshelve', 'unshelve', alert));
  return actions;
}

/** A list's cards: a group's card takes the place of its first-out; its other members go inside it. */
function fill(listId: string, alerts: BoardAlert[], groups: AlertGroup[]): void {
  const list = byId(listId);
  const byAlert: Record<string, AlertGroup> = {};
  groups.forEach((group) => group.members.forEach((id) => (byAlert[id] = group)));
  const alertById: Record<string, BoardAlert> = {};
  alerts.forEach((alert) => (alertById[alert.id] = alert));
  const cards: HTMLElement[] = [];
  alerts.forEach((alert) => {
    const group = byAlert[alert.id];
    if (!group) cards.push(card(alert));
    else if (group.firstOut === alert.id) {
      const members = group.members.map((id) => alertById[id]).filter((member) => member !== undefined);
      cards.push(groupCard(group, members));
    }
  });
  list.replaceChildren(...cards);
  byId(listId + '-empty').hidden = alerts.length > 0;
  byId('n-' + listId).textContent = '(' + alerts.length + ')';
}

function renderRate(rate: RateReading): void {
  const box = byId('rate');
  const meter = el('meter', {
    min: '0',
    max: String(Math.max(rate.budgetPerHour * 2, rate.lastHour)),
    low: String(rate.budgetPerHour * 0.67),
    high: String(rate.budgetPerHour),
    optimum: '0',
    value: String(rate.lastHour),
    'aria-label': 'alerts raised in the last hour against the budget',
  });
  box.replaceChildren(
    el('span', {}, ['Raised in the last 10 min: ', el('b', { text: String(rate.last10Min) })]),
    el('span', { cls: rate.overBudget ? 'over' : '' }, [
      'Last hour: ',
      el('b', { text: String(rate.lastHour) }),
      ' of budget ' + rate.budgetPerHour + '/h' + (rate.overBudget ? ' — over budget' : ''),
    ]),
    meter,
  );
  const flood = byId('flood');
  flood.hidden = !rate.flood;
  flood.textContent = rate.flood
    ? 'Alert flood: ' +
      rate.last10Min +
      ' alerts raised in the last 10 minutes (more than ' +
      rate.floodPer10Min +
      '). Deal with the most severe first.'
    : '';
}

/** A verdict's shape: a ticked square (met), a crossed circle (not met), a bar (not judged). */
function verdictShape(verdict: HealthFigure['verdict']): SVGElement {
  const icon = svg('svg', { viewBox: '0 0 12 12', 'aria-hidden': 'true', focusable: 'false' });
  const line = { fill: 'none', stroke: 'currentColor', 'stroke-width': 1.6 };
  if (verdict === 'met') {
    icon.appendChild(svg('rect', { x: 1, y: 1, width: 10, height: 10, rx: 1.5, ...line }));
    icon.appendChild(svg('path', { d: 'M3 6.2 5.1 8.3 9 3.8', ...line }));
  } else if (verdict === 'not-met') {
    icon.appendChild(svg('circle', { cx: 6, cy: 6, r: 5, ...line }));
    icon.appendChild(svg('path', { d: 'M3.8 3.8 8.2 8.2M8.2 3.8 3.8 8.2', ...line }));
  } else icon.appendChild(svg('path', { d: 'M2.5 6H9.5', ...line }));
  return icon;
}

/** The compact alert-system health strip: each figure with its verdict; the target on hover. */
function renderHealth(health: BoardHealth | undefined): void {
  const box = byId('health');
  if (!health) {
    box.hidden = true;
    return;
  }
  box.hidden = false;
  const span = health.hours >= 23.99 ? 'last 24 h' : 'since the board started, ' + fmt(health.hours) + ' h';
  const chips = health.figures.map((figure) => {
    const words = figure.verdict === 'met' ? 'met' : figure.verdict === 'not-met' ? 'NOT MET' : 'not judged';
    return el(
      'li',
      {
        cls: 'kpi ' + figure.verdict,
        'data-figure': figure.figure,
        title: figure.target ? 'target: ' + figure.target : 'no target set',
      },
      [
        verdictShape(figure.verdict),
        figure.label + ' ',
        el('b', { text: figure.shown }),
        el('span', { cls: 'verdict-words', text: words }),
      ],
    );
  });
  box.replaceChildren(
    el('h2', { text: 'Alert-system health' }),
    el('span', {
      cls: 'muted',
      text:
        span + ' · ' + health.raised + ' raised · ' + health.met + ' of ' + health.judged + ' targets met',
    }),
    el('ul', { cls: 'kpis' }, chips),
  );
}

function render(): void {
  const data = page.data;
  if (!data) return;
  const current = document.activeElement;
  const focused = current && current.getAttribute && current.getAttribute('data-key');
  const active: BoardAlert[] = [],
    shelved: BoardAlert[] = [],
    cleared: BoardAlert[] = [];
  data.alerts.forEach((alert) => {
    (alert.status === 'active' ? active : alert.status === 'shelved' ? shelved : cleared).push(alert);
  });
  const groups = data.groups || [];
  fill('active', active, groups);
  // Marks the first time alerts are on screen, for the page-load measurement.
  if (active.length && !page.marked && window.performance && performance.mark) {
    performance.mark('board-first-alert');
    page.marked = true;
  }
  fill('shelved', shelved, groups);
  fill('cleared', cleared, []);
  renderRate(data.rate);
  renderHealth(data.health);
  renderWaiting(data.waiting || null);
  if (data.tokenRequired) showToken(false);
  document.title = (active.length ? '(' + active.length + ') ' : '') + 'streamfence board';
  if (focused) {
    const again = document.querySelector<HTMLElement>('[data-key="' + focused.replace(/"/g, '') + '"]');
    if (again) again.focus();
  }
}

/**
 * A live board that cannot follow its topics yet says so above the alerts, with the retry line its
 * terminal shows, and its header says "waiting for Kafka/Redis" instead of "live".
 */
function renderWaiting(waiting: string | null): void {
  const box = byId('waiting');
  box.hidden = waiting === null;
  box.textContent =
    waiting === null
      ? ''
      : 'Waiting for Kafka/Redis: ' + waiting + '. Alerts appear here once the board can read them.';
  showLink();
}

/** The header's link state: the event stream, and whether the board waits for Kafka/Redis. */
function showLink(): void {
  // Without the stream its own states stand ("connecting…", "connection lost — retrying").
  if (page.locked || !page.live) return;
  const link = byId('link');
  const waiting = page.data !== null && Boolean(page.data.waiting);
  link.textContent = waiting ? 'waiting for Kafka/Redis' : 'live';
  link.className = waiting ? 'link down' : 'link';
}

/** The board token typed in the header, as request headers (none when the field is empty). */
function tokenHeaders(): Record<string, string> {
  const token = inputById('token').value.trim();
  return token ? { authorization: 'Bearer ' + token } : {};
}

/** Show the token field; `ask` also says the board needs it and puts the cursor there. */
function showToken(ask: boolean): void {
  byId('token').hidden = byId('token-label').hidden = byId('token-use').hidden = false;
  const prompt = byId('token-prompt');
  prompt.hidden = !ask;
  if (ask) {
    prompt.textContent = inputById('token').value.trim()
      ? 'That board token was not accepted. Check it and press Enter.'
      : 'This board needs its token to show alerts. Type it here and press Enter.';
    say('');
    if (document.activeElement !== inputById('token')) inputById('token').focus();
  }
}

/** The server refused the token: stop asking it until the operator types one. */
function lock(): void {
  page.locked = true;
  page.live = false;
  if (page.stream) page.stream.abort();
  page.stream = null;
  byId('link').textContent = 'waiting for the board token';
  byId('link').className = 'link down';
  showToken(true);
}

/** After the operator entered a token: try again at once. */
function unlock(): void {
  page.locked = false;
  byId('token-prompt').hidden = true;
  void load();
  openStream();
}

function load(): Promise<void> {
  if (page.locked) return Promise.resolve();
  return fetch('/api/board', { cache: 'no-store', headers: tokenHeaders() })
    .then((response) => {
      if (response.status === 401) {
        lock();
        return;
      }
      return (response.json() as Promise<BoardSnapshot>).then((data) => {
        page.data = data;
        page.fetchedAt = Date.now();
        render();
      });
    })
    .catch((err: Error) => say('Could not load the board: ' + err.message, true));
}

/**
 * Follow /api/events. Read with fetch rather than EventSource, which cannot send the token; the
 * stream only says that something changed, and the page then reloads (at most once a second).
 */
function openStream(): void {
  if (page.locked || page.stream) return;
  const link = byId('link');
  const control = new AbortController();
  page.stream = control;
  const retry = (): void => {
    if (page.stream === control) page.stream = null;
    if (page.locked || control.signal.aborted) return;
    page.live = false;
    link.textContent = 'connection lost — retrying';
    link.className = 'link down';
    setTimeout(openStream, 3000);
  };
  fetch('/api/events', { headers: tokenHeaders(), signal: control.signal, cache: 'no-store' })
    .then((response) => {
      if (response.status === 401) {
        lock();
        return;
      }
      if (!response.ok || !response.body) return retry();
      page.live = true;
      showLink();
      const reader = response.body.getReader();
      const decoder = new TextDecoder();
      let buffered = '';
      const next = (): Promise<void> =>
        reader.read().then((chunk) => {
          if (chunk.done) return retry();
          buffered += decoder.decode(chunk.value, { stream: true });
          const lines = buffered.split('\n');
          buffered = lines.pop() || '';
          lines.forEach((line) => {
            const kind = line.startsWith('event: ') ? line.slice(7).trim() : '';
            if (kind === 'alert' || kind === 'action' || kind === 'returned' || kind === 'readiness') soon();
          });
          return next();
        });
      return next();
    })
    .catch(() => retry());
}
function soon(): void {
  if (page.timer) return;
  // At most one refresh a second however many events arrive (an alert flood stays cheap).
  page.timer = setTimeout(() => {
    page.timer = null;
    void load();
  }, 1000);
}
function say(text: string, bad?: boolean): void {
  const message = byId('message');
  message.textContent = text;
  message.className = 'message' + (bad ? ' bad' : '');
}

function post(
  target: ActionTarget,
  action: ActionName,
  body: Record<string, unknown>,
): Promise<ActionReply | undefined> {
  body.by = operator() || undefined;
  const headers: Record<string, string> = { 'content-type': 'application/json', ...tokenHeaders() };
  return fetch('/api/' + target.scope + '/' + encodeURIComponent(target.id) + '/' + action, {
    method: 'POST',
    headers,
    body: JSON.stringify(body),
  })
    .then((response) =>
      response.json().then((answer: ActionReply['body']): ActionReply => ({
        ok: response.ok,
        status: response.status,
        body: answer,
      })),
    )
    .then((reply) => {
      if (reply.status === 401) {
        lock();
        return reply;
      }
      if (!reply.ok) {
        say(reply.body.message || 'The board refused the action.', true);
        return reply;
      }
      const alert = reply.body.alerts ? reply.body.alerts[0] || {} : reply.body;
      const who = operator() || 'unnamed';
      const count = reply.body.alerts ? ' (' + reply.body.alerts.length + ' alerts)' : '';
      say(
        action === 'acknowledge'
          ? 'Acknowledged ' + target.label + count + ' as ' + who + '.'
          : action === 'shelve'
            ? 'Shelved ' + target.label + count + ' until ' + absTime(alert.shelvedUntil) + '.'
            : 'Unshelved ' + target.label + count + '.',
      );
      void load();
      return reply;
    })
    .catch((err: Error) => {
      say('The action did not reach the board: ' + err.message, true);
      return undefined;
    });
}

function openShelve(target: ActionTarget, what: string): void {
  page.shelveTarget = target;
  byId('shelve-what').textContent = what;
  byId<HTMLTextAreaElement>('shelve-reason').value = '';
  byId('shelve-error').textContent = '';
  byId<HTMLDialogElement>('shelve-dialog').showModal();
  byId('shelve-reason').focus();
}

/** Storage may be switched off in the browser; the page then simply does not remember. */
function remember(action: () => void): void {
  try {
    action();
  } catch {
    /* storage off */
  }
}

function setup(): void {
  const name = inputById('operator');
  remember(() => (name.value = localStorage.getItem(NAME_KEY) || ''));
  const showName = (): void => {
    byId('operator-state').textContent = operator() ? '' : 'actions recorded as "unnamed"';
  };
  name.addEventListener('input', () => {
    remember(() => localStorage.setItem(NAME_KEY, operator()));
    showName();
  });
  showName();
  const token = inputById('token');
  remember(() => (token.value = sessionStorage.getItem(TOKEN_KEY) || ''));
  token.addEventListener('input', () =>
    remember(() => sessionStorage.setItem(TOKEN_KEY, token.value.trim())),
  );
  token.addEventListener('keydown', (event) => {
    if (event.key === 'Enter') unlock();
  });
  byId('token-use').addEventListener('click', unlock);
  const large = byId('large-type');
  const setLarge = (on: boolean): void => {
    document.documentElement.classList.toggle('large', on);
    large.setAttribute('aria-pressed', on ? 'true' : 'false');
    remember(() => localStorage.setItem(LARGE_KEY, on ? '1' : '0'));
  };
  remember(() => setLarge(localStorage.getItem(LARGE_KEY) === '1'));
  large.addEventListener('click', () => setLarge(large.getAttribute('aria-pressed') !== 'true'));

  const dialog = byId<HTMLDialogElement>('shelve-dialog');
  byId('shelve-cancel').addEventListener('click', () => dialog.close());
  byId('shelve-form').addEventListener('submit', (event) => {
    event.preventDefault();
    const reasonBox = byId<HTMLTextAreaElement>('shelve-reason');
    const reason = reasonBox.value.trim();
    if (!reason) {
      byId('shelve-error').textContent = 'Say why this alert can wait.';
      reasonBox.focus();
      return;
    }
    const picked = document.querySelector<HTMLInputElement>('input[name="shelve-minutes"]:checked');
    const minutes = Number(picked ? picked.value : 15);
    void post(page.shelveTarget!, 'shelve', { reason, minutes }).then((reply) => {
      if (reply && reply.ok) dialog.close();
      else if (reply) byId('shelve-error').textContent = reply.body.message || 'Refused.';
    });
  });

  openStream();
  // Relative times and charts move on even when no event arrives.
  setInterval(load, 10000);
  void load();
}
if (document.readyState === 'loading') document.addEventListener('DOMContentLoaded', setup);
else setup();
