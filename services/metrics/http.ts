/**
 * The monitor's small HTTP surface: /metrics (Prometheus text), /healthz (the process answers) and
 * /readyz (200 only while the consumer has joined its group and Redis answers).
 */
import { createServer, type Server } from 'node:http';
import type { AddressInfo } from 'node:net';
import type { Registry } from 'prom-client';
import { listenFailure } from '../setup/listen-errors.js';

export interface HttpSurface {
  server: Server;
  port: number;
  close(): Promise<void>;
}

export async function startMetricsServer(
  registry: Registry,
  port: number,
  ready: () => Promise<{ ready: boolean; detail: Record<string, unknown> }>,
  host = '0.0.0.0',
): Promise<HttpSurface> {
  const server = createServer((req, res) => {
    const path = (req.url ?? '/').split('?')[0];
    const send = (code: number, type: string, body: string) => {
      res.writeHead(code, { 'content-type': type, 'cache-control': 'no-store' });
      res.end(body);
    };
    if (req.method !== 'GET' && req.method !== 'HEAD') return send(405, 'text/plain', 'method not allowed\n');
    if (path === '/metrics') {
      registry.metrics().then(
        (text) => send(200, registry.contentType, text),
        (e: unknown) => send(500, 'text/plain', `metrics failed: ${(e as Error).message}\n`),
      );
    } else if (path === '/healthz') {
      send(200, 'application/json', '{"ok":true}\n');
    } else if (path === '/readyz') {
      ready().then(
        (r) =>
          send(
            r.ready ? 200 : 503,
            'application/json',
            `${JSON.stringify({ ready: r.ready, ...r.detail })}\n`,
          ),
        (e: unknown) =>
          send(503, 'application/json', `${JSON.stringify({ ready: false, error: (e as Error).message })}\n`),
      );
    } else {
      send(404, 'text/plain', 'not found: try /metrics, /healthz or /readyz\n');
    }
  });
  await new Promise<void>((resolve, reject) => {
    // A taken port is one line naming it and the option, never node's listen text.
    server.once('error', (e) => reject(listenFailure(e, { port, host, option: '--metrics-port' })));
    server.listen(port, host, () => resolve());
  });
  const bound = (server.address() as AddressInfo).port;
  return {
    server,
    port: bound,
    close: () =>
      new Promise<void>((resolve) => {
        server.closeAllConnections();
        server.close(() => resolve());
      }),
  };
}
