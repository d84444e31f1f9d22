/**
 * An expired server certificate is refused in one line with exit 2. The test makes its own CA and
 * a server certificate valid only on 1 January 2020 (openssl, in a temp folder), starts a real
 * redis-server with a TLS port only on a free port, and points `inspect` at it trusting that CA:
 * the chain is trusted, so the only fault is the expiry.
 */
import { spawn, spawnSync, type ChildProcess } from 'node:child_process';
import { mkdtempSync, writeFileSync } from 'node:fs';
import { createServer } from 'node:net';
import { tmpdir } from 'node:os';
import path from 'node:path';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';

const CLI = path.resolve('dist/services/cli/main.js');

function sh(cmd: string, args: string[], cwd: string): void {
  const r = spawnSync(cmd, args, { cwd, encoding: 'utf8' });
  if (r.status !== 0) throw new Error(`${cmd} ${args.join(' ')} failed: ${r.stderr || r.error}`);
}

async function freePort(): Promise<number> {
  return new Promise((resolve, reject) => {
    const srv = createServer();
    srv.once('error', reject);
    srv.listen(0, '127.0.0.1', () => {
      const port = (srv.address() as { port: number }).port;
      srv.close(() => resolve(port));
    });
  });
}

describe('expired certificate', () => {
  const dir = mkdtempSync(path.join(tmpdir(), 'sf-expired-'));
  let redis: ChildProcess | null = null;
  let port = 0;

  beforeAll(async () => {
    writeFileSync(
      path.join(dir, 'ca.cnf'),
      [
        '[ ca ]',
        'default_ca = sf',
        '[ sf ]',
        `database = ${dir}/index.txt`,
        `new_certs_dir = ${dir}`,
        `serial = ${dir}/serial`,
        'default_md = sha256',
        'policy = any',
        'copy_extensions = copy',
        '[ any ]',
        'commonName = supplied',
        '',
      ].join('\n'),
    );
    writeFileSync(path.join(dir, 'index.txt'), '');
    writeFileSync(path.join(dir, 'serial'), '01\n');
    sh(
      'openssl',
      [
        'req',
        '-x509',
        '-newkey',
        'rsa:2048',
        '-nodes',
        '-keyout',
        'ca.key',
        '-out',
        'ca.pem',
        '-days',
        '2',
        '-subj',
        '/CN=sf-test-ca',
      ],
      dir,
    );
    sh(
      'openssl',
      [
        'req',
        '-newkey',
        'rsa:2048',
        '-nodes',
        '-keyout',
        'server.key',
        '-out',
        'server.csr',
        '-subj',
        '/CN=127.0.0.1',
        '-addext',
        'subjectAltName=IP:127.0.0.1',
      ],
      dir,
    );
    // `openssl ca` is the way OpenSSL 3.0 sets a validity window in the past.
    sh(
      'openssl',
      [
        'ca',
        '-batch',
        '-config',
        'ca.cnf',
        '-cert',
        'ca.pem',
        '-keyfile',
        'ca.key',
        '-in',
        'server.csr',
        '-out',
        'server.pem',
        '-startdate',
        '20200101000000Z',
        '-enddate',
        '20200102000000Z',
        '-notext',
      ],
      dir,
    );
    port = await freePort();
    redis = spawn(
      'redis-server',
      [
        ...['--port', '0', '--tls-port', String(port), '--bind', '127.0.0.1'],
        ...['--tls-cert-file', 'server.pem', '--tls-key-file', 'server.key', '--tls-ca-cert-file', 'ca.pem'],
        ...['--tls-auth-clients', 'no', '--save', '', '--appendonly', 'no', '--dir', dir],
      ],
      { cwd: dir, stdio: ['ignore', 'pipe', 'pipe'] },
    );
    let log = '';
    redis.stdout!.on('data', (c) => (log += String(c)));
    const deadline = Date.now() + 20_000;
    while (!log.includes('Ready to accept connections')) {
      if (Date.now() > deadline || redis.exitCode !== null)
        throw new Error(`redis-server did not start: ${log}`);
      await new Promise((r) => setTimeout(r, 100));
    }
  }, 60_000);

  afterAll(async () => {
    if (redis && redis.exitCode === null) {
      redis.kill('SIGTERM');
      await new Promise((r) => redis!.once('exit', r));
    }
  });

  it('inspect against a Redis whose certificate has expired: one line, exit 2', () => {
    const r = spawnSync(process.execPath, [CLI, 'inspect', '--state-prefix', 'sf:expired'], {
      env: {
        ...process.env,
        STREAMFENCE_REDIS_URL: `rediss://127.0.0.1:${port}`,
        STREAMFENCE_REDIS_CA_FILE: path.join(dir, 'ca.pem'),
        STREAMFENCE_REDIS_USERNAME: '',
        STREAMFENCE_REDIS_PASSWORD_FILE: '',
        STREAMFENCE_REDIS_PASSWORD: '',
      },
      encoding: 'utf8',
      timeout: 60_000,
    });
    const lines = r.stderr.trim().split('\n');
    expect(lines[lines.length - 1]).toBe(
      `streamfence: redis: TLS handshake with 127.0.0.1:${port} failed: certificate has expired; check --redis-ca-file and the server's certificate [TLS_FAILED]`,
    );
    expect(r.status).toBe(2);
    expect(r.stderr).not.toContain('    at ');
  });
});
