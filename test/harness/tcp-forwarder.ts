/**
 * A TCP forwarder a test puts between a command and a server of its own, standing for what sits
 * there in many deployments (a container platform's sidecar, a TLS terminator, a load balancer):
 * it accepts every connection while it listens, and when the server behind it refuses, it resets
 * the client's connection, as such proxies do. Bytes pass unchanged; it never answers by itself.
 */
import net from 'node:net';

/** A running forwarder: `listen` again after `close` to bring its port back. */
export interface TcpForwarder {
  port: number;
  /** Starts accepting on `port` (again). */
  listen(): Promise<void>;
  /** Stops accepting (then connects are refused) and resets the connections it carries. */
  close(): Promise<void>;
}

/** A forwarder from 127.0.0.1:`port` to 127.0.0.1:`targetPort`, listening once `listen()` resolves. */
export function tcpForwarder(port: number, targetPort: number): TcpForwarder {
  const open = new Set<net.Socket>();
  const server = net.createServer((client) => {
    const upstream = net.connect({ host: '127.0.0.1', port: targetPort });
    open.add(client);
    client.once('close', () => open.delete(client));
    client.pipe(upstream).pipe(client);
    // The server refused or dropped us: reset the client's side (no bytes of our own).
    upstream.once('error', () => client.resetAndDestroy());
    upstream.once('close', () => client.destroyed || client.resetAndDestroy());
    client.once('error', () => upstream.destroy());
    client.once('close', () => upstream.destroy());
  });
  return {
    port,
    listen: () =>
      new Promise<void>((resolve, reject) => {
        server.once('error', reject);
        server.listen(port, '127.0.0.1', () => {
          server.off('error', reject);
          resolve();
        });
      }),
    close: () =>
      new Promise<void>((resolve) => {
        for (const socket of open) socket.resetAndDestroy();
        server.close(() => resolve());
      }),
  };
}
