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
  profiles?: string[];
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

/** A service's command as words. */
function words(s: ComposeService): string[] {
  if (s.command === undefined) return [];
  return Array.isArray(s.command) ? s.command.map(String) : String(s.command).split(/\s+/);
}
/** The value after a flag in a command, or undefined (the last one: redis-server takes the last). */
function flagValue(cmd: string[], name: string): string | undefined {
  const i = cmd.lastIndexOf(name);
  return i < 0 ? undefined : cmd[i + 1];
}
/** A service that runs redis-server (the image's default command is redis-server too). */
function runsRedisServer(s: ComposeService): boolean {
  const cmd = words(s);
  return cmd[0] === 'redis-server' || (/^redis:/.test(s.image ?? '') && cmd.length === 0);
}

/** What a Redis service lacks for the README's promise (lose at most about a second on a restart). */
function persistenceProblems(name: string, s: ComposeService): string[] {
  const cmd = words(s);
  const problems: string[] = [];
  for (const [flag, want] of [
    ['--appendonly', 'yes'],
    ['--appendfsync', 'everysec'],
  ]) {
    const got = flagValue(cmd, flag);
    if (got !== want) problems.push(`${name}: ${flag} is ${got ?? 'not set'}, not ${want}`);
  }
  const volumes = (s as { volumes?: string[] }).volumes ?? [];
  if (!volumes.some((v) => v.endsWith(':/data'))) problems.push(`${name}: no volume on /data`);
  return problems;
}

/**
 * A Redis Cluster profile's consistency: every node runs with cluster mode on and the same
 * cluster-node-timeout, on a port of its own, and a `redis-cli --cluster create` service names
 * exactly those nodes (service:port), six of them with one replica each (the local stack's shape).
 * No cluster nodes, no problems.
 */
function clusterProblems(services: Record<string, ComposeService>): string[] {
  const nodes = Object.entries(services).filter(
    ([, s]) => flagValue(words(s), '--cluster-enabled') === 'yes',
  );
  const creates = Object.entries(services).filter(([, s]) => words(s).join(' ').includes('--cluster create'));
  if (nodes.length === 0 && creates.length === 0) return [];
  const problems: string[] = [];
  const portOf = new Map(nodes.map(([name, s]) => [name, Number(flagValue(words(s), '--port') ?? 6379)]));
  const timeouts = nodes.map(
    ([, s]) => flagValue(words(s), '--cluster-node-timeout') ?? '15000 (the default)',
  );
  const common = timeouts.sort(
    (a, b) => timeouts.filter((t) => t === b).length - timeouts.filter((t) => t === a).length,
  )[0];
  for (const [name, s] of nodes) {
    const timeout = flagValue(words(s), '--cluster-node-timeout') ?? '15000 (the default)';
    if (timeout !== common)
      problems.push(`${name}: --cluster-node-timeout ${timeout} differs from the other nodes (${common})`);
  }
  if (new Set(portOf.values()).size !== nodes.length) problems.push('two cluster nodes listen on one port');
  if (creates.length !== 1)
    problems.push(`${creates.length} services run redis-cli --cluster create; want one`);
  for (const [name, s] of creates) {
    const cmd = words(s);
    const targets = cmd.filter((w) => /^[\w.-]+:\d+$/.test(w));
    for (const target of targets) {
      const [host, port] = target.split(':');
      if (!portOf.has(host)) problems.push(`${name}: names ${target}, which is not a cluster node service`);
      else if (portOf.get(host) !== Number(port))
        problems.push(`${name}: names ${target}, but ${host} listens on ${portOf.get(host)}`);
    }
    const named = new Set(targets.map((t) => t.split(':')[0]));
    for (const [node] of nodes) if (!named.has(node)) problems.push(`${name}: does not name ${node}`);
    if (flagValue(cmd, '--cluster-replicas') !== '1' || nodes.length !== 6)
      problems.push(`${name}: want six nodes with --cluster-replicas 1 (three primaries, one replica each)`);
  }
  return problems;
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

  it('runs every Redis service with the append-only file, fsync every second, on a volume', () => {
    const redisServices = Object.entries(compose.services).filter(([, s]) => runsRedisServer(s));
    expect(redisServices.map(([name]) => name)).toContain('redis');
    for (const [name, s] of redisServices) expect(persistenceProblems(name, s)).toEqual([]);
  });

  it('keeps the nodes of a Redis Cluster profile, if there is one, consistent', () => {
    expect(clusterProblems(compose.services)).toEqual([]);
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

// The checks run on the real file above; here they are shown to catch what they are for, on
// invented compose fragments (a cluster profile that is not in docker-compose.yml today).
describe('the compose Redis checks', () => {
  const node = (port: number, extra: string[] = []): ComposeService =>
    ({
      image: 'redis:7.2-alpine',
      profiles: ['cluster'],
      command: [
        ...['redis-server', '--port', String(port), '--cluster-enabled', 'yes'],
        ...['--cluster-node-timeout', '2000', '--appendonly', 'yes', '--appendfsync', 'everysec'],
        ...extra,
      ],
      volumes: [`node-${port}:/data`],
    }) as ComposeService;
  const create = (targets: string[]): ComposeService =>
    ({
      image: 'redis:7.2-alpine',
      profiles: ['cluster'],
      command: ['redis-cli', '--cluster', 'create', ...targets, '--cluster-replicas', '1', '--cluster-yes'],
    }) as ComposeService;
  const six = [7001, 7002, 7003, 7004, 7005, 7006];
  const good = (): Record<string, ComposeService> => ({
    ...Object.fromEntries(six.map((p, i) => [`redis-node-${i + 1}`, node(p)])),
    'redis-cluster-create': create(six.map((p, i) => `redis-node-${i + 1}:${p}`)),
  });

  it('accept a consistent six-node cluster profile', () => {
    expect(clusterProblems(good())).toEqual([]);
    for (const [name, s] of Object.entries(good()).filter(([, x]) => runsRedisServer(x)))
      expect(persistenceProblems(name, s)).toEqual([]);
  });

  it('catch a node without persistence, a different node timeout, and a create naming a wrong port', () => {
    const bad = good();
    bad['redis-node-2'] = node(7002, ['--cluster-node-timeout', '15000']);
    const cmd = bad['redis-node-3'].command as string[];
    cmd[cmd.indexOf('--appendonly') + 1] = 'no';
    bad['redis-cluster-create'] = create(six.map((p, i) => `redis-node-${i + 1}:${i === 5 ? 6379 : p}`));
    expect(persistenceProblems('redis-node-3', bad['redis-node-3'])).toEqual([
      'redis-node-3: --appendonly is no, not yes',
    ]);
    expect(clusterProblems(bad)).toEqual([
      'redis-node-2: --cluster-node-timeout 15000 differs from the other nodes (2000)',
      'redis-cluster-create: names redis-node-6:6379, but redis-node-6 listens on 7006',
    ]);
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
