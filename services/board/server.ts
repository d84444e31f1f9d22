/**
 * The board's HTTP server: the page, the JSON API, the live event stream (SSE), metrics, health
 * (/healthz: the process answers) and readiness (/readyz: 200 once the live feed follows its topics).
 * Plain node:http; every response is small and every request body is size-limited.
 */
import { createServer, type IncomingMessage, type Server, type ServerResponse } from 'node:http';
import type { AddressInfo } from 'node:net';
import type { ActionKind } from '../../libs/board/store.js';
import { NOTICE } from '../../libs/schema/notice.js';
import { isStreamfenceError } from '../../libs/errors/index.js';
import { listenFailure } from '../setup/listen-errors.js';
import { authorized } from './auth.js';
import type { BoardReadiness, BoardReadinessState } from './readiness.js';
import type { BoardHub, HubMessage } from './hub.js';
import type { BoardMetrics } from '../metrics/board-metrics.js';
import { BOARD_CSS } from './page/style.js';
import { BOARD_HTML } from './page/html.js';
import { BOARD_JS } from './page/script.js';

export const MAX_BODY_BYTES = 4096;
const SSE_HEARTBEAT_MS = 15_000;

export interface BoardServerOptions {
  hub: BoardHub;
  metrics: BoardMetrics;
  host: string;
  port: number;
  /** Bearer token required on the API (reads, the event stream and actions); null = none (loopback only, see auth.ts). */
  token: string | null;
  /** How often shelves are checked for expiry. */
  tickMs?: number;
  /** Whether the live feed follows its topics yet (absent: always ready, as the demo is). */
  readiness?: BoardReadiness;
  /** Where the one line about a request the board failed to answer goes (default: stderr, "streamfence board: …"). */
  log?: (line: string) => void;
}

export interface RunningBoard {
  server: Server;
  url: string;
  close(): Promise<void>;
}

const SECURITY_HEADERS = {
  'x-content-type-options': 'nosniff',
  'referrer-policy': 'no-referrer',
  'x-frame-options': 'DENY',
};

const PAGE_CSP =
  "default-src 'self'; img-src 'self' data:; style-src 'self'; script-src 'self'; connect-src 'self'; frame-ancestors 'none'";

function send(
  res: ServerResponse,
  status: number,
  type: string,
  body: string | Buffer,
  extra: Record<string, string> = {},
): void {
  res.writeHead(status, { 'content-type': type, 'cache-control': 'no-store', ...SECURITY_HEADERS, ...extra });
  res.end(body);
}

function json(res: ServerResponse, status: number, body: unknown): void {
  send(res, status, 'application/json; charset=utf-8', JSON.stringify(body));
}

function fail(res: ServerResponse, status: number, error: string, message: string): void {
  json(res, status, { error, message });
}

class BodyError extends Error {
  constructor(
    readonly status: number,
    message: string,
  ) {
    super(message);
  }
}

async function readJsonBody(req: IncomingMessage): Promise<unknown> {
  const type = (req.headers['content-type'] ?? '').split(';')[0].trim().toLowerCase();
  if (type !== 'application/json') {
    throw new BodyError(415, 'send the body as JSON with "Content-Type: application/json"');
  }
  const declared = Number(req.headers['content-length'] ?? '0');
  if (declared > MAX_BODY_BYTES) throw new BodyError(413, `the body must be at most ${MAX_BODY_BYTES} bytes`);
  const chunks: Buffer[] = [];
  let size = 0;
  try {
    for await (const c of req) {
      size += (c as Buffer).length;
      if (size > MAX_BODY_BYTES) throw new BodyError(413, `the body must be at most ${MAX_BODY_BYTES} bytes`);
      chunks.push(c as Buffer);
    }
  } catch (err) {
    // The client went away mid-body: its problem, not the board's.
    if (err instanceof BodyError) throw err;
    throw new BodyError(400, 'the body did not arrive whole (the connection closed while sending it)');
  }
  const text = Buffer.concat(chunks).toString('utf8').trim();
  if (text.length === 0) return undefined;
  try {
    return JSON.parse(text);
  } catch {
    throw new BodyError(400, 'the body is not valid JSON');
  }
}

const ACTION_ROUTE = /^\/api\/(alerts|groups)\/([^/]+)\/(acknowledge|shelve|unshelve)$/;
/** Reads that show alerts: behind the token when the board has one (the page and assets are not). */
const GUARDED_READS = new Set(['/api/alerts', '/api/groups', '/api/board', '/api/events']);
const ALWAYS_READY: BoardReadinessState = { ready: true, waiting: null };
const TOKEN_NEEDED =
  'this board needs its token: type it into the "Board token" field in the page header, or send "Authorization: Bearer <token>" from a program';

/** What every request handler needs: the hub, the metrics, the token and the open event streams. */
interface BoardContext {
  hub: BoardHub;
  metrics: BoardMetrics;
  token: string | null;
  streams: Set<ServerResponse>;
  readiness: () => BoardReadinessState;
  log: (line: string) => void;
}

/** POST /api/alerts|groups/<id>/<action>: an operator action, behind the token. */
async function handleAction(
  context: BoardContext,
  req: IncomingMessage,
  res: ServerResponse,
  path: string,
): Promise<void> {
  const route = ACTION_ROUTE.exec(path);
  if (!route) return fail(res, 404, 'not_found', `no such endpoint: POST ${path}`);
  if (!authorized(context.token, req.headers.authorization))
    return fail(res, 401, 'unauthorized', TOKEN_NEEDED);
  let body: unknown;
  try {
    body = await readJsonBody(req);
  } catch (err) {
    if (err instanceof BodyError) return fail(res, err.status, 'bad_request', err.message);
    throw err;
  }
  let id: string;
  try {
    id = decodeURIComponent(route[2]);
  } catch {
    return fail(res, 400, 'bad_request', 'the id in the path is not valid URL encoding');
  }
  const kind = route[3] as ActionKind;
  let result: Awaited<ReturnType<BoardHub['act']>> | Awaited<ReturnType<BoardHub['actOnGroup']>>;
  try {
    result =
      route[1] === 'groups'
        ? await context.hub.actOnGroup(kind, id, body)
        : await context.hub.act(kind, id, body);
  } catch (err) {
    // Kafka or Redis refused to record it (the live board words it, logs and counts it): the
    // operator may try again, so 503 with that one line, never the client library's text.
    if (isStreamfenceError(err) && err.code === 'SERVICE_UNAVAILABLE')
      return fail(res, 503, 'unavailable', err.message);
    throw err;
  }
  if (!result.ok) {
    const code = result.status === 404 ? 'not_found' : result.status === 409 ? 'conflict' : 'bad_request';
    return fail(res, result.status, code, result.message);
  }
  return json(res, 200, 'group' in result ? { group: result.group, alerts: result.alerts } : result.alert);
}

/** GET/HEAD: the page, its assets, the JSON reads (behind the token when there is one), metrics, health. */
async function handleRead(
  context: BoardContext,
  req: IncomingMessage,
  res: ServerResponse,
  path: string,
): Promise<void> {
  const { hub, token } = context;
  if (GUARDED_READS.has(path) && !authorized(token, req.headers.authorization)) {
    return fail(res, 401, 'unauthorized', TOKEN_NEEDED);
  }
  switch (path) {
    case '/':
    case '/index.html':
      return send(res, 200, 'text/html; charset=utf-8', BOARD_HTML, {
        'content-security-policy': PAGE_CSP,
      });
    case '/assets/board.js':
      return send(res, 200, 'text/javascript; charset=utf-8', BOARD_JS);
    case '/assets/board.css':
      return send(res, 200, 'text/css; charset=utf-8', BOARD_CSS);
    case '/api/alerts':
      return json(res, 200, hub.store.list());
    case '/api/groups':
      return json(res, 200, hub.groups());
    case '/api/board':
      return json(res, 200, {
        ...hub.snapshot({ notice: NOTICE, tokenRequired: token !== null }),
        waiting: context.readiness().waiting,
      });
    case '/api/events':
      return openStream(context, req, res);
    case '/metrics': {
      const text = await context.metrics.registry.metrics();
      return send(res, 200, context.metrics.registry.contentType, text);
    }
    case '/healthz':
      return json(res, 200, {
        ok: true,
        mode: hub.opts.mode,
        alertsOpen: hub.store.openCount,
        ready: context.readiness().ready,
      });
    case '/readyz': {
      // 503 until the live feed follows its topics: a load balancer sends no operator here yet.
      const state = context.readiness();
      return json(res, state.ready ? 200 : 503, state);
    }
    default:
      return fail(res, 404, 'not_found', `no such page or endpoint: ${path}`);
  }
}

/** GET /api/events: the live event stream (SSE), a hello first, then every hub message. */
function openStream(context: BoardContext, req: IncomingMessage, res: ServerResponse): void {
  res.writeHead(200, {
    'content-type': 'text/event-stream; charset=utf-8',
    'cache-control': 'no-store',
    connection: 'keep-alive',
    ...SECURITY_HEADERS,
  });
  res.write(
    `retry: 3000\nevent: hello\ndata: ${JSON.stringify({ notice: NOTICE, mode: context.hub.opts.mode })}\n\n`,
  );
  const unsubscribe = context.hub.subscribe((message: HubMessage) => {
    res.write(`event: ${message.type}\ndata: ${JSON.stringify(message)}\n\n`);
  });
  context.streams.add(res);
  const done = () => {
    unsubscribe();
    context.streams.delete(res);
  };
  req.on('close', done);
  res.on('error', done);
}

/**
 * A request the board failed to answer for a reason of its own (a fault in the board, never the
 * request or an outage, which have their own answers): 500 with a plain line naming the request,
 * one log line, one count. Our own typed errors keep their words; anything else (a library's or
 * node's error) is named by its class and code only, never by its text or stack.
 */
function answerFailure(context: BoardContext, req: IncomingMessage, res: ServerResponse, err: unknown): void {
  const method = req.method ?? 'GET';
  const path = new URL(req.url ?? '/', 'http://board.local').pathname;
  const request = method === 'POST' ? 'action' : 'read';
  context.metrics.requestFailures.inc({ request });
  const why = isStreamfenceError(err) ? err.message : `an internal error (${errorKind(err)})`;
  context.log(`could not answer ${method} ${path}: ${why}`);
  if (res.headersSent) {
    res.end();
    return;
  }
  const message =
    request === 'action'
      ? `the board could not take this action: ${why}; it is in the board's log; try again`
      : `the board could not answer ${path}: ${why}; it is in the board's log; try again`;
  fail(res, 500, 'internal', message);
}

/** "TypeError", "Error ECONNRESET": what kind of failure, without the library's words. */
function errorKind(err: unknown): string {
  if (!(err instanceof Error)) return typeof err;
  const code = (err as { code?: unknown }).code;
  return typeof code === 'string' && /^[A-Z0-9_]+$/.test(code) ? `${err.name} ${code}` : err.name;
}

async function handle(context: BoardContext, req: IncomingMessage, res: ServerResponse): Promise<void> {
  const path = new URL(req.url ?? '/', 'http://board.local').pathname;
  const method = req.method ?? 'GET';
  if (method === 'POST') return handleAction(context, req, res, path);
  if (method !== 'GET' && method !== 'HEAD') {
    return fail(res, 405, 'method_not_allowed', `${method} is not supported here; use GET or POST`);
  }
  return handleRead(context, req, res, path);
}

/** Serves the board on `opts.host:opts.port`; resolves once listening (a port it cannot take rejects with one line). */
export function startBoardServer(opts: BoardServerOptions): Promise<RunningBoard> {
  const context: BoardContext = {
    hub: opts.hub,
    metrics: opts.metrics,
    token: opts.token,
    streams: new Set<ServerResponse>(),
    readiness: () => opts.readiness?.state ?? ALWAYS_READY,
    log: opts.log ?? ((line) => process.stderr.write(`streamfence board: ${line}\n`)),
  };
  const { streams } = context;
  // The page reloads on a readiness change (it then shows or hides what the board waits for).
  const stopReadiness = opts.readiness?.subscribe((state) => {
    for (const stream of streams) stream.write(`event: readiness\ndata: ${JSON.stringify(state)}\n\n`);
  });
  const server = createServer((req, res) => {
    handle(context, req, res).catch((err: unknown) => answerFailure(context, req, res, err));
  });
  server.requestTimeout = 30_000;
  server.headersTimeout = 10_000;

  const ticker = setInterval(() => opts.hub.tick(), opts.tickMs ?? 1000);
  ticker.unref();
  const heartbeat = setInterval(() => {
    for (const stream of streams) stream.write(': keep-alive\n\n');
  }, SSE_HEARTBEAT_MS);
  heartbeat.unref();

  return new Promise((resolve, reject) => {
    // A port that cannot be taken leaves nothing running behind (the caller may try another).
    const failed = (err: unknown) => {
      stopReadiness?.();
      clearInterval(ticker);
      clearInterval(heartbeat);
      // One line naming the port and --port; the node error stays as `cause` (demo reads its code).
      reject(listenFailure(err, { port: opts.port, host: opts.host, option: '--port' }));
    };
    server.once('error', failed);
    server.listen(opts.port, opts.host, () => {
      server.off('error', failed);
      const addr = server.address() as AddressInfo;
      const hostPart = addr.family === 'IPv6' ? `[${addr.address}]` : addr.address;
      resolve({
        server,
        url: `http://${hostPart}:${addr.port}`,
        close: () =>
          new Promise<void>((done) => {
            stopReadiness?.();
            clearInterval(ticker);
            clearInterval(heartbeat);
            for (const stream of streams) stream.end();
            streams.clear();
            server.close(() => done());
            server.closeAllConnections();
          }),
      });
    });
  });
}
