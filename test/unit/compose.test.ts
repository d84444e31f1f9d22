/**
 * docker-compose.yml cannot run on machines without Docker, so this checks it statically: the services
 * exist, and the monitor's environment, ports and addresses agree with what the code reads
 * (services/config/env.ts) and with the kafka and redis services beside it.
 */
import { readFileSync, readdirSync, statSync } from 'node:fs';
import path from 'node:path';
import { fileURLToPath } from 'node:url';
import { describe, expect, it } from 'vitest';
import { parse } from 'yaml';
import {
  DEFAULT_KAFKA_PORT,
  DEFAULT_METRICS_PORT,
  DEFAULT_REDIS_PORT,
  ENV,
  ENV_NAMES,
} from '../../services/config/env.js';

const ROOT = path.resolve(path.dirname(fileURLToPath(import.meta.url)), '../..');

interface ComposeService {
  image?: string;
  build?: string | { context?: string; dockerfile?: string };
  command?: string | string[];
  environment?: Record<string, string | number | boolean | null> | string[];
  ports?: (string | number | { target: number; published?: number | string })[];
  depends_on?: string[] | Record<string, unknown>;
}

const compose = parse(readFileSync(path.join(ROOT, 'docker-compose.yml'), 'utf8')) as {
  services: Record<string, ComposeService>;
};
const service = (name: string): ComposeService => {
  const s = compose.services?.[name];
  if (!s) throw new Error(`docker-compose.yml has no service "${name}"`);
  return s;
};

/** Compose allows environment as a map or as KEY=VALUE strings; normalise to a map of strings. */
function envOf(s: ComposeService): Record<string, string> {
  const env = s.environment ?? {};
  if (Array.isArray(env)) {
    return Object.fromEntries(
      env.map((e) => {
        const i = e.indexOf('=');
        return i < 0 ? [e, ''] : [e.slice(0, i), e.slice(i + 1)];
      }),
    );
  }
  return Object.fromEntries(Object.entries(env).map(([k, v]) => [k, v == null ? '' : String(v)]));
}

/** "host:container" pairs published by a service, as numbers. */
function publishedPorts(s: ComposeService): { host: number; container: number }[] {
  return (s.ports ?? []).map((p) => {
    if (typeof p === 'object') return { host: Number(p.published ?? p.target), container: p.target };
    const parts = String(p).split(':');
    const container = Number(parts[parts.length - 1].split('/')[0]);
    const host = parts.length > 1 ? Number(parts[parts.length - 2]) : container;
    return { host, container };
  });
}

/** Kafka listener lists look like NAME://host:port,NAME://host:port. */
function listeners(value: string | undefined): { name: string; host: string; port: number }[] {
  return (value ?? '')
    .split(',')
    .filter(Boolean)
    .map((l) => {
      const m = /^([A-Z_]+):\/\/([^:]*):(\d+)$/.exec(l.trim());
      if (!m) throw new Error(`unparseable Kafka listener "${l}"`);
      return { name: m[1], host: m[2], port: Number(m[3]) };
    });
}

function sourceFiles(dir: string): string[] {
  return readdirSync(dir).flatMap((entry) => {
    const p = path.join(dir, entry);
    if (statSync(p).isDirectory()) return sourceFiles(p);
    return p.endsWith('.ts') && !p.endsWith('.test.ts') ? [p] : [];
  });
}

describe('docker-compose.yml', () => {
  it('has the kafka, redis and monitor services', () => {
    expect(Object.keys(compose.services).sort()).toEqual(
      expect.arrayContaining(['kafka', 'monitor', 'redis']),
    );
    expect(service('kafka').image).toMatch(/^apache\/kafka:3\.9\./);
    expect(service('redis').image).toMatch(/^redis:/);
  });

  it('builds the monitor from the Dockerfile and runs `streamfence run`', () => {
    const monitor = service('monitor');
    const build = typeof monitor.build === 'string' ? { context: monitor.build } : (monitor.build ?? {});
    const dockerfile = readFileSync(
      path.join(ROOT, build.context ?? '.', build.dockerfile ?? 'Dockerfile'),
      'utf8',
    );
    expect(monitor.command).toEqual(['run']);

    // The image's entry point is the package's `streamfence` binary.
    const pkg = JSON.parse(readFileSync(path.join(ROOT, 'package.json'), 'utf8')) as {
      bin: Record<string, string>;
    };
    expect(dockerfile).toContain(`ENTRYPOINT ["node", "${pkg.bin.streamfence}"]`);
    expect(dockerfile).toMatch(new RegExp(`^EXPOSE ${DEFAULT_METRICS_PORT}$`, 'm'));

    const deps = Array.isArray(monitor.depends_on)
      ? monitor.depends_on
      : Object.keys(monitor.depends_on ?? {});
    expect(deps.sort()).toEqual(['kafka', 'redis']);
  });

  it('sets the variables `streamfence run` needs, and only names the code knows', () => {
    const names = Object.keys(envOf(service('monitor'))).filter((n) => n.startsWith('STREAMFENCE_'));
    // Optional settings (TLS, SASL, tuning) may stay out of compose; a misspelt or retired name may not.
    const unknown = names.filter((n) => !(ENV_NAMES as readonly string[]).includes(n));
    expect(unknown, 'not in ENV (services/config/env.ts)').toEqual([]);
    expect(names).toEqual(
      expect.arrayContaining([ENV.brokers, ENV.redisUrl, ENV.statePrefix, ENV.metricsPort]),
    );
  });

  it('points the monitor at the kafka service through an advertised listener', () => {
    const kafkaEnv = envOf(service('kafka'));
    const advertised = listeners(kafkaEnv.KAFKA_ADVERTISED_LISTENERS);
    const bound = listeners(kafkaEnv.KAFKA_LISTENERS);
    const brokers = envOf(service('monitor'))[ENV.brokers].split(',');
    expect(brokers.length).toBeGreaterThan(0);
    for (const broker of brokers) {
      const [host, port] = broker.split(':');
      expect(host).toBe('kafka');
      const listener = advertised.find((l) => l.host === 'kafka' && l.port === Number(port));
      expect(listener, `no advertised listener for ${broker}`).toBeDefined();
      expect(bound.map((l) => `${l.name}:${l.port}`)).toContain(`${listener!.name}:${listener!.port}`);
    }
    // And the host-facing listener is published on the default port, as the docs promise.
    const hostListener = advertised.find((l) => l.host === 'localhost');
    expect(hostListener?.port).toBe(DEFAULT_KAFKA_PORT);
    expect(publishedPorts(service('kafka'))).toContainEqual({
      host: DEFAULT_KAFKA_PORT,
      container: DEFAULT_KAFKA_PORT,
    });
  });

  it('points the monitor at the redis service', () => {
    const url = new URL(envOf(service('monitor'))[ENV.redisUrl]);
    expect(url.protocol).toBe('redis:');
    expect(url.hostname).toBe('redis');
    expect(Number(url.port || DEFAULT_REDIS_PORT)).toBe(DEFAULT_REDIS_PORT);
    expect(publishedPorts(service('redis'))).toContainEqual({
      host: DEFAULT_REDIS_PORT,
      container: DEFAULT_REDIS_PORT,
    });
  });

  it('runs Redis with the append-only file, fsync every second, on a volume', () => {
    const redis = service('redis');
    const cmd = Array.isArray(redis.command) ? redis.command : String(redis.command).split(/\s+/);
    const flag = (name: string) => cmd[cmd.indexOf(name) + 1];
    expect(flag('--appendonly')).toBe('yes');
    expect(flag('--appendfsync')).toBe('everysec');
    const volumes = (redis as { volumes?: string[] }).volumes ?? [];
    expect(volumes.some((v) => v.endsWith(':/data'))).toBe(true);
  });

  it('serves metrics on the default port and publishes it', () => {
    const env = envOf(service('monitor'));
    expect(Number(env[ENV.metricsPort])).toBe(DEFAULT_METRICS_PORT);
    expect(env[ENV.statePrefix]).not.toBe('');
    expect(publishedPorts(service('monitor'))).toContainEqual({
      host: DEFAULT_METRICS_PORT,
      container: DEFAULT_METRICS_PORT,
    });
  });
});

describe('services/config/env.ts', () => {
  it('lists distinct STREAMFENCE_ names', () => {
    expect(new Set(ENV_NAMES).size).toBe(ENV_NAMES.length);
    for (const name of ENV_NAMES) expect(name).toMatch(/^STREAMFENCE_[A-Z0-9_]+$/);
  });

  it('is the only place service and library code names a STREAMFENCE_ variable', () => {
    // A name spelled out anywhere else would be read behind the list's back, and compose would miss it.
    const own = path.join(ROOT, 'services/config/env.ts');
    const stray: string[] = [];
    for (const file of [
      ...sourceFiles(path.join(ROOT, 'services')),
      ...sourceFiles(path.join(ROOT, 'libs')),
    ]) {
      if (file === own) continue;
      for (const m of readFileSync(file, 'utf8').matchAll(/STREAMFENCE_[A-Z0-9_]+/g)) {
        if (!(ENV_NAMES as readonly string[]).includes(m[0]))
          stray.push(`${path.relative(ROOT, file)}: ${m[0]}`);
      }
    }
    expect(stray, 'add these to ENV in services/config/env.ts (and docker-compose.yml)').toEqual([]);
  });
});
