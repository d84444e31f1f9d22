/**
 * The board's HTTP API on a real server on 127.0.0.1: listing, actions, validation, 404s, token,
 * body limits and the live event stream. The hub is fed alert events directly (no simulator), with
 * a wall clock the test can move.
 */
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { request } from 'node:http';
import { BoardHub, type HubMessage } from '../../../services/board/hub.js';
import { createBoardMetrics } from '../../../services/metrics/board-metrics.js';
import { MAX_BODY_BYTES, startBoardServer, type RunningBoard } from '../../../services/board/server.js';
import type { AlertEvent } from '../../../libs/schema/alert-event.js';
import { NOTICE } from '../../../libs/schema/notice.js';
import { FIXTURE_BASELINE } from '../../support/alert-fixture.js';

const T0 = Date.parse('2026-05-10T06:00:00Z');
let wall = T0;

function ev(id: string, state: AlertEvent['state'], severity: AlertEvent['severity']): AlertEvent {
  return {
    id,
    sensor: `kiln-3/${id}`,
    state,
    severity,
    reasons: state === 'cleared' ? [] : ['fence_high'],
    value: 42,
    ts: new Date(T0).toISOString(),
    since: new Date(T0).toISOString(),
    flaggedReadings: 2,
    baseline: { ...FIXTURE_BASELINE },
    z: 40,
    robustZ: 30,
    percentileRank: 100,
    message: `${id} reads 42, above the upper fence`,
    notice: NOTICE,
  };
}

async function call(
  base: string,
  method: string,
  path: string,
  body?: unknown,
  headers: Record<string, string> = {},
) {
  const h: Record<string, string> = { ...headers };
  if (body !== undefined && !('content-type' in h)) h['content-type'] = 'application/json';
  const res = await fetch(base + path, {
    method,
    headers: h,
    body: body === undefined ? undefined : typeof body === 'string' ? body : JSON.stringify(body),
  });
  const text = await res.text();
  let json: unknown = null;
  try {
    json = JSON.parse(text);
  } catch {
    /* not JSON */
  }
  return {
    status: res.status,
    json: json as Record<string, unknown> & Record<string, unknown>[],
    text,
    type: res.headers.get('content-type'),
  };
}

describe('board API (loopback, no token)', () => {
  let hub: BoardHub;
  let board: RunningBoard;
  beforeAll(async () => {
    hub = new BoardHub({ mode: 'demo', clock: { wall: () => wall, plant: () => wall } });
    board = await startBoardServer({
      hub,
      metrics: createBoardMetrics(hub),
      host: '127.0.0.1',
      port: 0,
      token: null,
      tickMs: 50,
    });
    hub.applyEvent(ev('press', 'raised', 'warning'));
    hub.applyEvent(ev('fan', 'raised', 'critical'));
    hub.applyEvent(ev('old', 'raised', 'warning'));
    hub.applyEvent(ev('old', 'cleared', 'warning'));
  });
  afterAll(() => board.close());

  it('serves the page with the caution, the assets, health and metrics', async () => {
    const page = await call(board.url, 'GET', '/');
    expect(page.status).toBe(200);
    expect(page.text).toContain(NOTICE);
    expect((await call(board.url, 'GET', '/assets/board.js')).type).toMatch(/javascript/);
    expect((await call(board.url, 'GET', '/healthz')).json).toMatchObject({ ok: true, alertsOpen: 2 });
    const m = await call(board.url, 'GET', '/metrics');
    expect(m.text).toMatch(/streamfence_board_alerts\{status="active"\} 2/);
    expect(m.text).toMatch(/streamfence_board_alerts\{status="cleared"\} 1/);
  });

  it('lists active, shelved and cleared alerts with the board fields', async () => {
    const r = await call(board.url, 'GET', '/api/alerts');
    expect(r.status).toBe(200);
    const list = r.json as unknown as Record<string, unknown>[];
    expect(list.map((a) => `${a.status}:${a.id}`)).toEqual(['active:fan', 'active:press', 'cleared:old']);
    expect(list[0]).toMatchObject({
      severity: 'critical',
      acknowledged: false,
      acknowledgedBy: null,
      acknowledgedAt: null,
      shelvedUntil: null,
      shelveReason: null,
      notice: NOTICE,
    });
  });

  it('acknowledges, shelves (with expiry on the server clock) and unshelves', async () => {
    const a = await call(board.url, 'POST', '/api/alerts/press/acknowledge', { by: 'Tamsin Vey' });
    expect(a.status).toBe(200);
    expect(a.json).toMatchObject({
      acknowledged: true,
      acknowledgedBy: 'Tamsin Vey',
      acknowledgedAt: new Date(wall).toISOString(),
    });
    const s = await call(board.url, 'POST', '/api/alerts/fan/shelve', {
      reason: 'belt being replaced',
      minutes: 15,
    });
    expect(s.status).toBe(200);
    expect(s.json).toMatchObject({
      status: 'shelved',
      shelveReason: 'belt being replaced',
      shelvedBy: 'unnamed',
      shelvedUntil: new Date(wall + 15 * 60_000).toISOString(),
    });
    wall += 15 * 60_000; // the server clock reaches the end of the shelf; the ticker brings it back
    await expect
      .poll(
        async () =>
          (
            (await call(board.url, 'GET', '/api/alerts')).json as unknown as { id: string; status: string }[]
          ).find((x) => x.id === 'fan')?.status,
      )
      .toBe('active');
    await call(board.url, 'POST', '/api/alerts/fan/shelve', { reason: 'again', minutes: 60 });
    const u = await call(board.url, 'POST', '/api/alerts/fan/unshelve', {});
    expect(u.json).toMatchObject({ status: 'active', shelvedUntil: null });
  });

  it('refuses bad input with a clear 4xx JSON error', async () => {
    const cases: [string, unknown, Record<string, string>, number, RegExp][] = [
      ['/api/alerts/press/shelve', { minutes: 15 }, {}, 400, /reason/],
      ['/api/alerts/press/shelve', { reason: 'x', minutes: 5000 }, {}, 400, /minutes/],
      ['/api/alerts/press/shelve', { reason: 'x'.repeat(501), minutes: 5 }, {}, 400, /500/],
      ['/api/alerts/press/acknowledge', '{not json', {}, 400, /not valid JSON/],
      [
        '/api/alerts/press/acknowledge',
        { by: 'x' },
        { 'content-type': 'text/plain' },
        415,
        /application\/json/,
      ],
      ['/api/alerts/press/acknowledge', { by: 'x'.repeat(MAX_BODY_BYTES) }, {}, 413, /at most/],
      ['/api/alerts/nope/acknowledge', {}, {}, 404, /no alert with id nope/],
      ['/api/alerts/old/acknowledge', {}, {}, 409, /already cleared/],
      ['/api/alerts/press/unshelve', {}, {}, 409, /not shelved/],
      ['/api/alerts/press/explode', {}, {}, 404, /no such endpoint/],
    ];
    for (const [path, body, headers, status, msg] of cases) {
      const r = await call(board.url, 'POST', path, body, headers);
      expect({ path, status: r.status }).toEqual({ path, status });
      expect(r.type).toMatch(/application\/json/);
      expect(String(r.json.message)).toMatch(msg);
    }
    expect((await call(board.url, 'GET', '/nowhere')).status).toBe(404);
    expect((await call(board.url, 'DELETE', '/api/alerts')).status).toBe(405);
  });

  it('streams alert events and operator actions over SSE', async () => {
    const got: string[] = [];
    const req = request(board.url + '/api/events');
    const done = new Promise<void>((resolve) => {
      req.on('response', (res) => {
        res.setEncoding('utf8');
        res.on('data', (chunk: string) => {
          for (const block of chunk.split('\n\n')) {
            const type = /^event: (\w+)/m.exec(block)?.[1];
            const data = /^data: (.*)$/m.exec(block)?.[1];
            if (type)
              got.push(type === 'hello' ? 'hello' : `${type}:${(JSON.parse(data!) as HubMessage).alert.id}`);
          }
          if (got.length >= 3) resolve();
        });
      });
    });
    req.end();
    await expect.poll(() => hub.listenerCount).toBe(1);
    hub.applyEvent(ev('pump', 'raised', 'warning'));
    await call(board.url, 'POST', '/api/alerts/pump/acknowledge', {});
    await done;
    req.destroy();
    expect(got).toEqual(['hello', 'alert:pump', 'action:pump']);
  });
});

describe('board API with a token', () => {
  it('refuses actions without the bearer token and accepts them with it', async () => {
    const hub = new BoardHub({ mode: 'demo', clock: { wall: () => wall, plant: () => wall } });
    const board = await startBoardServer({
      hub,
      metrics: createBoardMetrics(hub),
      host: '127.0.0.1',
      port: 0,
      token: 'kiln-secret',
    });
    try {
      hub.applyEvent(ev('press', 'raised', 'warning'));
      const no = await call(board.url, 'POST', '/api/alerts/press/acknowledge', {});
      expect(no.status).toBe(401);
      expect(String(no.json.message)).toMatch(/Authorization: Bearer/);
      expect(
        (
          await call(
            board.url,
            'POST',
            '/api/alerts/press/acknowledge',
            {},
            { authorization: 'Bearer wrong' },
          )
        ).status,
      ).toBe(401);
      const ok = await call(
        board.url,
        'POST',
        '/api/alerts/press/acknowledge',
        {},
        { authorization: 'Bearer kiln-secret' },
      );
      expect(ok.status).toBe(200);
      // Reads that show alerts need the token too; the page shell, assets and probes do not.
      const bearer = { authorization: 'Bearer kiln-secret' };
      for (const path of ['/api/alerts', '/api/groups', '/api/board', '/api/events']) {
        const refused = await call(board.url, 'GET', path);
        expect(refused.status, path).toBe(401);
        expect(String(refused.json.message)).toMatch(/Board token/);
        expect(
          (await call(board.url, 'GET', path, undefined, { authorization: 'Bearer wrong' })).status,
        ).toBe(401);
      }
      for (const path of ['/api/alerts', '/api/groups', '/api/board']) {
        expect((await call(board.url, 'GET', path, undefined, bearer)).status, path).toBe(200);
      }
      const stream = await fetch(board.url + '/api/events', { headers: bearer });
      expect(stream.status).toBe(200);
      expect(stream.headers.get('content-type')).toMatch(/text\/event-stream/);
      await stream.body?.cancel();
      for (const path of ['/', '/assets/board.js', '/assets/board.css', '/healthz', '/metrics']) {
        expect((await call(board.url, 'GET', path)).status, path).toBe(200);
      }
    } finally {
      await board.close();
    }
  });
});

describe('board API: grouped alerts', () => {
  const member = (id: string, sensor: string, sinceMin: number): AlertEvent => ({
    ...ev(id, 'raised', 'warning'),
    sensor,
    since: new Date(T0 + sinceMin * 60_000).toISOString(),
    ts: new Date(T0 + sinceMin * 60_000).toISOString(),
  });

  it("groups one asset's alerts, marks the first-out, and acts on the whole group", async () => {
    const hub = new BoardHub({
      mode: 'demo',
      clock: { wall: () => wall, plant: () => wall },
      groupRule: { depth: 2, globs: [], windowMs: 5 * 60_000 },
    });
    const board = await startBoardServer({
      hub,
      metrics: createBoardMetrics(hub),
      host: '127.0.0.1',
      port: 0,
      token: null,
    });
    try {
      hub.applyEvent(member('c2', 'kiln-3/burner/flame', 2));
      hub.applyEvent(member('c1', 'kiln-3/burner/gas-flow', 1));
      hub.applyEvent(member('c3', 'kiln-3/burner/air-flow', 4));
      hub.applyEvent(member('far', 'kiln-3/burner/exhaust', 9)); // outside the 5 min window
      hub.applyEvent(member('other', 'kiln-4/burner/flame', 1)); // another asset
      const groups = await call(board.url, 'GET', '/api/groups');
      expect(groups.json).toEqual([
        { id: 'c1', asset: 'kiln-3/burner', status: 'active', firstOut: 'c1', members: ['c1', 'c2', 'c3'] },
      ]);
      const snapshot = await call(board.url, 'GET', '/api/board');
      expect(snapshot.json.groups).toEqual(groups.json);

      // One alert of the group on its own.
      expect((await call(board.url, 'POST', '/api/alerts/c2/acknowledge', { by: 'Ines' })).status).toBe(200);
      const acked = await call(board.url, 'POST', '/api/groups/c1/acknowledge', { by: 'Tomasz' });
      expect(acked.status).toBe(200);
      const list = (await call(board.url, 'GET', '/api/alerts')).json as unknown as {
        id: string;
        acknowledged: boolean;
        acknowledgedBy: string | null;
      }[];
      const byId = new Map(list.map((a) => [a.id, a]));
      expect(byId.get('c1')).toMatchObject({ acknowledged: true, acknowledgedBy: 'Tomasz' });
      expect(byId.get('c2')).toMatchObject({ acknowledged: true, acknowledgedBy: 'Ines' });
      expect(byId.get('c3')).toMatchObject({ acknowledged: true, acknowledgedBy: 'Tomasz' });
      expect(byId.get('far')!.acknowledged).toBe(false);
      expect(byId.get('other')!.acknowledged).toBe(false);

      const shelved = await call(board.url, 'POST', '/api/groups/c1/shelve', {
        reason: 'burner relit',
        minutes: 15,
      });
      expect(shelved.status).toBe(200);
      const statuses = (
        (await call(board.url, 'GET', '/api/alerts')).json as unknown as { id: string; status: string }[]
      )
        .filter((a) => a.id.startsWith('c'))
        .map((a) => a.status);
      expect(statuses).toEqual(['shelved', 'shelved', 'shelved']);
      expect(
        (await call(board.url, 'POST', '/api/groups/c1/shelve', { reason: 'again', minutes: 15 })).status,
      ).toBe(409);
      expect((await call(board.url, 'POST', '/api/groups/c1/unshelve', {})).status).toBe(200);
      expect((await call(board.url, 'POST', '/api/groups/nope/acknowledge', {})).status).toBe(404);
    } finally {
      await board.close();
    }
  });
});

describe("board API: a fault of the board's own", () => {
  it('answers 500 with a plain line naming the request (no library text, no stack), logs it once and counts it', async () => {
    // A fault inside the board (here: the share step and the alert list fail as a bug would),
    // not the request and not an outage, which have their own answers (400s, 503).
    const libraryText = "Cannot read properties of undefined (reading 'xadd')\n    at share (file.js:1:1)";
    const hub = new BoardHub({
      mode: 'demo',
      clock: { wall: () => wall, plant: () => wall },
      share: () => Promise.reject(new TypeError(libraryText)),
    });
    const metrics = createBoardMetrics(hub);
    const logged: string[] = [];
    const board = await startBoardServer({
      hub,
      metrics,
      host: '127.0.0.1',
      port: 0,
      token: null,
      log: (line) => logged.push(line),
    });
    try {
      hub.applyEvent(ev('valve', 'raised', 'warning'));
      const ack = await call(board.url, 'POST', '/api/alerts/valve/acknowledge', { by: 'Ines' });
      expect(ack.status).toBe(500);
      expect(ack.json).toEqual({
        error: 'internal',
        message:
          "the board could not take this action: an internal error (TypeError); it is in the board's log; try again",
      });
      const shelve = await call(board.url, 'POST', '/api/alerts/valve/shelve', {
        reason: 'swap',
        minutes: 15,
      });
      expect(shelve.status).toBe(500);
      // Nothing was applied that was not shared.
      const [alert] = (await call(board.url, 'GET', '/api/alerts')).json as unknown as Record<
        string,
        unknown
      >[];
      expect(alert).toMatchObject({ acknowledged: false, status: 'active' });

      const list = hub.store.list.bind(hub.store);
      hub.store.list = () => {
        throw Object.assign(new Error('socket hang up'), { code: 'ECONNRESET' });
      };
      const read = await call(board.url, 'GET', '/api/alerts');
      expect(read.status).toBe(500);
      expect(read.json.message).toBe(
        "the board could not answer /api/alerts: an internal error (Error ECONNRESET); it is in the board's log; try again",
      );

      hub.store.list = list;

      expect(logged).toEqual([
        'could not answer POST /api/alerts/valve/acknowledge: an internal error (TypeError)',
        'could not answer POST /api/alerts/valve/shelve: an internal error (TypeError)',
        'could not answer GET /api/alerts: an internal error (Error ECONNRESET)',
      ]);
      const text = `${ack.text}${shelve.text}${read.text}${logged.join('\n')}`;
      expect(text).not.toMatch(/Cannot read|xadd|\s+at |socket hang up/);
      const metricsText = (await call(board.url, 'GET', '/metrics')).text;
      expect(metricsText).toMatch(/^streamfence_board_request_failures_total\{request="action"\} 2$/m);
      expect(metricsText).toMatch(/^streamfence_board_request_failures_total\{request="read"\} 1$/m);
    } finally {
      await board.close();
    }
  });
});
