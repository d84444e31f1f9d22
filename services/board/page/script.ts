/**
 * The board page's script, served as /assets/board.js. Plain browser JavaScript kept in a string so
 * the page needs no build step and no network beyond this server. It renders from /api/board and
 * refreshes when the event stream (/api/events) says something changed. Text is always inserted
 * with textContent, never as HTML.
 */
export const BOARD_JS = String.raw`
'use strict';
(function () {
  var SVGNS = 'http://www.w3.org/2000/svg';
  var NAME_KEY = 'streamfence.board.operator';
  var LARGE_KEY = 'streamfence.board.large';
  var TOKEN_KEY = 'streamfence.board.token';
  var state = { data: null, fetchedAt: 0, timer: null, shelveId: null, marked: false };
  var $ = function (id) { return document.getElementById(id); };

  function el(tag, attrs, kids) {
    var n = document.createElement(tag);
    if (attrs) for (var k in attrs) {
      if (k === 'text') n.textContent = attrs[k];
      else if (k === 'cls') n.className = attrs[k];
      else n.setAttribute(k, attrs[k]);
    }
    (kids || []).forEach(function (c) { if (c) n.appendChild(typeof c === 'string' ? document.createTextNode(c) : c); });
    return n;
  }
  function svg(tag, attrs) {
    var n = document.createElementNS(SVGNS, tag);
    for (var k in attrs) n.setAttribute(k, String(attrs[k]));
    return n;
  }
  function pad(n) { return (n < 10 ? '0' : '') + n; }
  function absTime(iso) {
    if (!iso) return '';
    var d = new Date(iso);
    return d.getFullYear() + '-' + pad(d.getMonth() + 1) + '-' + pad(d.getDate()) + ' ' + pad(d.getHours()) + ':' + pad(d.getMinutes()) + ':' + pad(d.getSeconds());
  }
  function relTime(ms) {
    var s = Math.round(Math.abs(ms) / 1000);
    var t = s < 60 ? s + ' s' : s < 3600 ? Math.round(s / 60) + ' min' : s < 172800 ? (s / 3600).toFixed(1) + ' h' : Math.round(s / 86400) + ' days';
    return ms >= 0 ? t + ' ago' : 'in ' + t;
  }
  // The plant clock runs at "speed" times the wall clock in the demo; relative times use it.
  function plantNow() {
    var d = state.data;
    if (!d) return Date.now();
    return Date.parse(d.plantNow) + (Date.now() - state.fetchedAt) * (d.speed || 1);
  }
  function wallNow() {
    var d = state.data;
    return d ? Date.parse(d.wallNow) + (Date.now() - state.fetchedAt) : Date.now();
  }
  function fmt(v) {
    if (v === null || v === undefined || !isFinite(v)) return '–';
    var a = Math.abs(v);
    return a >= 1000 ? v.toFixed(0) : a >= 10 ? v.toFixed(1) : v.toFixed(2);
  }
  function operator() { return ($('operator').value || '').trim(); }

  function sevBadge(kind) {
    var b = el('span', { cls: 'sev ' + kind });
    var s = svg('svg', { viewBox: '0 0 10 10', 'aria-hidden': 'true', focusable: 'false' });
    if (kind === 'critical') s.appendChild(svg('polygon', { points: '5,0 10,5 5,10 0,5', fill: 'currentColor' }));
    else if (kind === 'warning') s.appendChild(svg('polygon', { points: '5,0.5 9.8,9.5 0.2,9.5', fill: 'currentColor' }));
    else s.appendChild(svg('circle', { cx: 5, cy: 5, r: 4, fill: 'none', stroke: 'currentColor', 'stroke-width': 1.6 }));
    b.appendChild(s);
    b.appendChild(document.createTextNode(kind === 'critical' ? 'CRITICAL' : kind === 'warning' ? 'WARNING' : 'CLEARED'));
    return b;
  }

  function chart(a, pts) {
    var W = 320, H = 80, P = 4;
    var b = a.baseline || {};
    var vals = pts.map(function (p) { return p.value; });
    var ys = vals.concat([b.median, b.lowerFence, b.upperFence, a.value]).filter(function (v) { return v !== null && v !== undefined && isFinite(v); });
    var s = svg('svg', { viewBox: '0 0 ' + W + ' ' + H, cls: 'chart', role: 'img' });
    s.setAttribute('class', 'chart');
    var desc = 'Recent readings of ' + a.sensor + ': ' + pts.length + ' points';
    if (b.lowerFence !== null && b.upperFence !== null) desc += '; normal band ' + fmt(b.lowerFence) + ' to ' + fmt(b.upperFence);
    if (b.median !== null) desc += '; median ' + fmt(b.median);
    s.setAttribute('aria-label', desc);
    if (ys.length === 0) return s;
    var lo = Math.min.apply(null, ys), hi = Math.max.apply(null, ys);
    if (hi === lo) { hi += 1; lo -= 1; }
    var span = hi - lo; lo -= span * 0.08; hi += span * 0.08;
    var y = function (v) { return P + (H - 2 * P) * (1 - (v - lo) / (hi - lo)); };
    if (b.lowerFence !== null && b.upperFence !== null) {
      var top = y(Math.min(hi, b.upperFence)), bot = y(Math.max(lo, b.lowerFence));
      if (bot > top) s.appendChild(svg('rect', { x: 0, y: top, width: W, height: bot - top, class: 'band' }));
    }
    if (b.median !== null) s.appendChild(svg('line', { x1: 0, x2: W, y1: y(b.median), y2: y(b.median), class: 'median' }));
    if (pts.length > 0) {
      var t0 = pts[0].ts, t1 = pts[pts.length - 1].ts;
      var x = function (t) { return t1 === t0 ? W / 2 : P + (W - 2 * P) * (t - t0) / (t1 - t0); };
      s.appendChild(svg('polyline', { points: pts.map(function (p) { return x(p.ts).toFixed(1) + ',' + y(p.value).toFixed(1); }).join(' '), class: 'line' }));
      pts.forEach(function (p) {
        if (!p.flagged) return;
        var cx = x(p.ts), cy = y(p.value);
        // Flagged points: a small diamond, so they differ by shape as well as colour.
        s.appendChild(svg('polygon', { points: [cx, cy - 4, cx + 4, cy, cx, cy + 4, cx - 4, cy].join(','), class: 'flag' }));
      });
    }
    return s;
  }

  function actionButton(label, act, a) {
    var b = el('button', { type: 'button', 'data-key': a.id + ':' + act, text: label });
    b.addEventListener('click', function () {
      if (act === 'shelve') openShelve(a);
      else post(a.id, act, {});
    });
    return b;
  }

  function card(a) {
    var kind = a.status === 'cleared' ? 'cleared' : a.severity;
    var li = el('li', { cls: 'card ' + kind, 'data-id': a.id, 'data-status': a.status });
    var head = el('div', { cls: 'head' }, [sevBadge(a.status === 'cleared' ? 'cleared' : a.severity), el('span', { cls: 'sensor', text: a.sensor })]);
    if (a.status === 'cleared') head.appendChild(el('span', { cls: 'muted', text: 'was ' + a.severity }));
    li.appendChild(head);
    li.appendChild(el('p', { cls: 'msg', text: a.message }));
    var since = Date.parse(a.since);
    var facts = el('p', { cls: 'facts' });
    facts.appendChild(el('span', {}, ['Since ', el('b', { text: absTime(a.since) }), ' (' + relTime(plantNow() - since) + ')']));
    var live = state.data.flaggedNow && state.data.flaggedNow[a.id];
    facts.appendChild(el('span', {}, ['Flagged readings ', el('b', { text: String(Math.max(a.flaggedReadings, live || 0)) })]));
    facts.appendChild(el('span', {}, ['Value at last alert event ', el('b', { text: fmt(a.value) }), ' at ' + absTime(a.ts)]));
    if (a.status === 'cleared') facts.appendChild(el('span', {}, ['Cleared ', el('b', { text: absTime(a.ts) })]));
    li.appendChild(facts);
    var raw = (state.data.series && state.data.series[a.sensor]) || [];
    var pts = raw.map(function (q) { return { ts: q[0], value: q[1], flagged: q[2] === 1 }; });
    if (a.status !== 'cleared') {
      li.appendChild(chart(a, pts));
      var bl = a.baseline || {};
      li.appendChild(el('p', { cls: 'legend', text: 'Shaded: normal band ' + fmt(bl.lowerFence) + ' to ' + fmt(bl.upperFence) + '. Dashed: median ' + fmt(bl.median) + '. Diamonds: flagged readings. ' + pts.length + ' recent readings.' }));
    }
    if (a.acknowledged) {
      li.appendChild(el('p', { cls: 'ack yes', text: '✓ Acknowledged by ' + a.acknowledgedBy + ' at ' + absTime(a.acknowledgedAt) }));
    } else if (a.status !== 'cleared') {
      li.appendChild(el('p', { cls: 'ack no', text: '• Not acknowledged' }));
    }
    if (a.status === 'shelved') {
      li.appendChild(el('p', { cls: 'facts' }, ['Shelved by ', el('b', { text: a.shelvedBy || 'unnamed' }), ' until ', el('b', { text: absTime(a.shelvedUntil) }),
        ' (back ' + relTime(wallNow() - Date.parse(a.shelvedUntil)) + '). Reason: ', el('b', { text: a.shelveReason || '' })]));
    }
    var acts = el('div', { cls: 'actions' });
    if (a.status !== 'cleared' && !a.acknowledged) acts.appendChild(actionButton('Acknowledge', 'acknowledge', a));
    if (a.status === 'active') acts.appendChild(actionButton('Shelve…', 'shelve', a));
    if (a.status === 'shelved') acts.appendChild(actionButton('Unshelve', 'unshelve', a));
    if (acts.childNodes.length) li.appendChild(acts);
    return li;
  }

  function fill(listId, alerts) {
    var list = $(listId);
    list.replaceChildren.apply(list, alerts.map(card));
    $(listId + '-empty').hidden = alerts.length > 0;
    $('n-' + listId).textContent = '(' + alerts.length + ')';
  }

  function renderRate(r) {
    var box = $('rate');
    var meter = el('meter', { min: '0', max: String(Math.max(r.budgetPerHour * 2, r.lastHour)), low: String(r.budgetPerHour * 0.67), high: String(r.budgetPerHour), optimum: '0', value: String(r.lastHour), 'aria-label': 'alerts raised in the last hour against the budget' });
    box.replaceChildren(
      el('span', {}, ['Raised in the last 10 min: ', el('b', { text: String(r.last10Min) })]),
      el('span', { cls: r.overBudget ? 'over' : '' }, ['Last hour: ', el('b', { text: String(r.lastHour) }), ' of budget ' + r.budgetPerHour + '/h' + (r.overBudget ? ' — over budget' : '')]),
      meter
    );
    var f = $('flood');
    f.hidden = !r.flood;
    f.textContent = r.flood ? 'Alert flood: ' + r.last10Min + ' alerts raised in the last 10 minutes (more than ' + r.floodPer10Min + '). Deal with the most severe first.' : '';
  }

  function render() {
    var d = state.data;
    if (!d) return;
    var focused = document.activeElement && document.activeElement.getAttribute && document.activeElement.getAttribute('data-key');
    var active = [], shelved = [], cleared = [];
    d.alerts.forEach(function (a) { (a.status === 'active' ? active : a.status === 'shelved' ? shelved : cleared).push(a); });
    fill('active', active);
    // Marks the first time alerts are on screen, for the page-load measurement.
    if (active.length && !state.marked && window.performance && performance.mark) { performance.mark('board-first-alert'); state.marked = true; }
    fill('shelved', shelved);
    fill('cleared', cleared);
    renderRate(d.rate);
    $('token').hidden = $('token-label').hidden = !d.tokenRequired;
    document.title = (active.length ? '(' + active.length + ') ' : '') + 'streamfence board';
    if (focused) {
      var again = document.querySelector('[data-key="' + focused.replace(/"/g, '') + '"]');
      if (again) again.focus();
    }
  }

  function load() {
    return fetch('/api/board', { cache: 'no-store' }).then(function (r) { return r.json(); }).then(function (d) {
      state.data = d; state.fetchedAt = Date.now(); render();
    }).catch(function (e) { say('Could not load the board: ' + e.message, true); });
  }
  function soon() {
    if (state.timer) return;
    // At most one refresh a second however many events arrive (an alert flood stays cheap).
    state.timer = setTimeout(function () { state.timer = null; load(); }, 1000);
  }
  function say(text, bad) {
    var m = $('message'); m.textContent = text; m.className = 'message' + (bad ? ' bad' : '');
  }

  function post(id, act, body) {
    body.by = operator() || undefined;
    var headers = { 'content-type': 'application/json' };
    var tok = $('token').value.trim();
    if (tok) headers.authorization = 'Bearer ' + tok;
    return fetch('/api/alerts/' + encodeURIComponent(id) + '/' + act, { method: 'POST', headers: headers, body: JSON.stringify(body) })
      .then(function (r) { return r.json().then(function (j) { return { ok: r.ok, j: j }; }); })
      .then(function (res) {
        if (!res.ok) { say(res.j.message || 'The board refused the action.', true); return res; }
        var who = res.j.acknowledgedBy || res.j.shelvedBy || 'unnamed';
        say(act === 'acknowledge' ? 'Acknowledged ' + res.j.sensor + ' as ' + who + '.' : act === 'shelve' ? 'Shelved ' + res.j.sensor + ' until ' + absTime(res.j.shelvedUntil) + '.' : 'Unshelved ' + res.j.sensor + '.');
        load();
        return res;
      })
      .catch(function (e) { say('The action did not reach the board: ' + e.message, true); });
  }

  function openShelve(a) {
    state.shelveId = a.id;
    $('shelve-what').textContent = a.sensor + ': ' + a.message;
    $('shelve-reason').value = '';
    $('shelve-error').textContent = '';
    $('shelve-dialog').showModal();
    $('shelve-reason').focus();
  }
  function setup() {
    var name = $('operator');
    try { name.value = localStorage.getItem(NAME_KEY) || ''; } catch (e) { /* storage may be off */ }
    var showName = function () { $('operator-state').textContent = operator() ? '' : 'actions recorded as "unnamed"'; };
    name.addEventListener('input', function () {
      try { localStorage.setItem(NAME_KEY, operator()); } catch (e) { /* ignore */ }
      showName();
    });
    showName();
    var tok = $('token');
    try { tok.value = sessionStorage.getItem(TOKEN_KEY) || ''; } catch (e) { /* ignore */ }
    tok.addEventListener('input', function () { try { sessionStorage.setItem(TOKEN_KEY, tok.value.trim()); } catch (e) { /* ignore */ } });
    var large = $('large-type');
    var setLarge = function (on) {
      document.documentElement.classList.toggle('large', on);
      large.setAttribute('aria-pressed', on ? 'true' : 'false');
      try { localStorage.setItem(LARGE_KEY, on ? '1' : '0'); } catch (e) { /* ignore */ }
    };
    try { setLarge(localStorage.getItem(LARGE_KEY) === '1'); } catch (e) { /* ignore */ }
    large.addEventListener('click', function () { setLarge(large.getAttribute('aria-pressed') !== 'true'); });

    $('shelve-cancel').addEventListener('click', function () { $('shelve-dialog').close(); });
    $('shelve-form').addEventListener('submit', function (ev) {
      ev.preventDefault();
      var reason = $('shelve-reason').value.trim();
      if (!reason) { $('shelve-error').textContent = 'Say why this alert can wait.'; $('shelve-reason').focus(); return; }
      var picked = document.querySelector('input[name="shelve-minutes"]:checked');
      var minutes = Number(picked ? picked.value : 15);
      post(state.shelveId, 'shelve', { reason: reason, minutes: minutes }).then(function (res) {
        if (res && res.ok) $('shelve-dialog').close();
        else if (res) $('shelve-error').textContent = res.j.message || 'Refused.';
      });
    });

    var link = $('link');
    var es = new EventSource('/api/events');
    es.addEventListener('open', function () { link.textContent = 'live'; link.className = 'link'; });
    es.addEventListener('error', function () { link.textContent = 'connection lost — retrying'; link.className = 'link down'; });
    ['alert', 'action', 'returned'].forEach(function (t) { es.addEventListener(t, soon); });
    // Relative times and charts move on even when no event arrives.
    setInterval(load, 10000);
    load();
  }
  if (document.readyState === 'loading') document.addEventListener('DOMContentLoaded', setup); else setup();
})();
`;
