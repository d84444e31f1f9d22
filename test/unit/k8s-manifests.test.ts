/**
 * deploy/k8s/ cannot be applied here (no cluster), so it is checked statically: every object is
 * validated against the Kubernetes object schemas shipped by the `kubernetes-models` package (the
 * OpenAPI schemas of the Kubernetes API, compiled to validators), and the settings the README's
 * *Deploying* section promises are checked against what the code reads.
 */
import { readdirSync, readFileSync } from 'node:fs';
import path from 'node:path';
import { fileURLToPath } from 'node:url';
import { Deployment } from 'kubernetes-models/apps/v1';
import { PodDisruptionBudget } from 'kubernetes-models/policy/v1';
import { ConfigMap, Secret, Service } from 'kubernetes-models/v1';
import { describe, expect, it } from 'vitest';
import { parseAllDocuments } from 'yaml';
import { parseConfigText } from '../../libs/config/config.js';
import {
  DEFAULT_MAX_SENSORS,
  HEAP_BYTES_PER_SENSOR,
  processMemoryBudget,
} from '../../libs/engine/sensor-budget.js';
import { STOP_DEADLINE_MS } from '../../services/cli/commands/run.js';
import { DEFAULT_METRICS_PORT, ENV, ENV_NAMES } from '../../services/config/env.js';

const ROOT = path.resolve(path.dirname(fileURLToPath(import.meta.url)), '../..');
const K8S_DIR = path.join(ROOT, 'deploy/k8s');

interface Validating {
  validate(): void;
}
type ModelClass = new (data: never) => Validating;

/** The kinds deploy/k8s/ uses, each with its schema-validating model. */
const MODELS: Record<string, ModelClass> = {
  'apps/v1/Deployment': Deployment as unknown as ModelClass,
  'policy/v1/PodDisruptionBudget': PodDisruptionBudget as unknown as ModelClass,
  'v1/ConfigMap': ConfigMap as unknown as ModelClass,
  'v1/Secret': Secret as unknown as ModelClass,
  'v1/Service': Service as unknown as ModelClass,
};

interface K8sObject {
  apiVersion: string;
  kind: string;
  metadata: { name: string; labels?: Record<string, string>; annotations?: Record<string, string> };
  [key: string]: unknown;
}

interface EnvVar {
  name: string;
  value?: string;
  valueFrom?: { secretKeyRef?: { name: string; key: string } };
}
interface Probe {
  httpGet?: { path: string; port: string | number };
}
interface Container {
  name: string;
  args?: string[];
  env?: EnvVar[];
  ports?: { name?: string; containerPort: number }[];
  readinessProbe?: Probe;
  livenessProbe?: Probe;
  resources?: { requests?: Record<string, string>; limits?: Record<string, string> };
  volumeMounts?: { name: string; mountPath: string; readOnly?: boolean }[];
}
interface PodSpec {
  terminationGracePeriodSeconds?: number;
  containers: Container[];
  volumes?: { name: string; secret?: { secretName: string }; configMap?: { name: string } }[];
}
interface DeploymentSpec {
  replicas: number;
  selector: { matchLabels: Record<string, string> };
  strategy?: { rollingUpdate?: { maxSurge?: number | string; maxUnavailable?: number | string } };
  template: {
    metadata: { labels: Record<string, string>; annotations?: Record<string, string> };
    spec: PodSpec;
  };
}

function loadObjects(): { file: string; obj: K8sObject }[] {
  return readdirSync(K8S_DIR)
    .filter((f) => f.endsWith('.yaml') || f.endsWith('.yml'))
    .sort()
    .flatMap((file) =>
      parseAllDocuments(readFileSync(path.join(K8S_DIR, file), 'utf8')).map((doc) => {
        if (doc.errors.length) throw new Error(`${file}: ${doc.errors[0].message}`);
        return { file, obj: doc.toJS() as K8sObject };
      }),
    );
}

const objects = loadObjects();

function find(kind: string, name: string): K8sObject {
  const o = objects.find((x) => x.obj.kind === kind && x.obj.metadata?.name === name);
  if (!o) throw new Error(`deploy/k8s has no ${kind} named ${name}`);
  return o.obj;
}

function schemaErrors(obj: K8sObject): string | null {
  const Model = MODELS[`${obj.apiVersion}/${obj.kind}`];
  if (!Model) return `no schema model for ${obj.apiVersion} ${obj.kind}: add it to MODELS`;
  try {
    new Model(obj as never).validate();
    return null;
  } catch (e) {
    return (e as Error).message;
  }
}

/** Kubernetes memory quantities (binary and decimal suffixes) in bytes. */
function bytesOf(quantity: string): number {
  const m = /^(\d+(?:\.\d+)?)(Ki|Mi|Gi|Ti|k|M|G|T)?$/.exec(quantity);
  if (!m) throw new Error(`unexpected memory quantity "${quantity}"`);
  const unit: Record<string, number> = {
    '': 1,
    Ki: 2 ** 10,
    Mi: 2 ** 20,
    Gi: 2 ** 30,
    Ti: 2 ** 40,
    k: 1e3,
    M: 1e6,
    G: 1e9,
    T: 1e12,
  };
  return Number(m[1]) * unit[m[2] ?? ''];
}

const monitor = find('Deployment', 'streamfence-monitor');
const monitorSpec = monitor.spec as DeploymentSpec;
const monitorPod = monitorSpec.template.spec;
const monitorContainer = monitorPod.containers[0];
const envOf = (c: Container) => new Map((c.env ?? []).map((e) => [e.name, e]));

describe('deploy/k8s manifests', () => {
  it('every object passes the Kubernetes object schema of its kind', () => {
    expect(objects.length).toBeGreaterThanOrEqual(7);
    const failures = objects
      .map(({ file, obj }) => ({ at: `${file}: ${obj.kind} ${obj.metadata?.name}`, err: schemaErrors(obj) }))
      .filter((f) => f.err !== null);
    expect(failures).toEqual([]);
  });

  it('the schema check is not vacuous: a broken copy of the monitor is refused', () => {
    const broken = structuredClone(monitor);
    (broken.spec as DeploymentSpec).template.spec.containers[0].ports = [
      { name: 'metrics', containerPort: 'nine' as unknown as number },
    ];
    expect(schemaErrors(broken)).toMatch(/containerPort must be integer/);
    const noSelector = structuredClone(monitor);
    delete (noSelector.spec as Partial<DeploymentSpec>).selector;
    expect(schemaErrors(noSelector)).toMatch(/selector/);
  });

  it('runs no more monitors than input partitions, also during a rollout', () => {
    const partitions = Number(monitor.metadata.annotations?.['streamfence/input-partitions']);
    expect(Number.isInteger(partitions) && partitions > 0).toBe(true);
    expect(monitorSpec.replicas).toBeGreaterThan(0);
    expect(monitorSpec.replicas).toBeLessThanOrEqual(partitions);
    expect(monitorSpec.strategy?.rollingUpdate?.maxSurge).toBe(0);
  });

  it('probes /readyz and /healthz on the metrics port Prometheus scrapes', () => {
    const env = envOf(monitorContainer);
    const port = Number(env.get(ENV.metricsPort)?.value ?? DEFAULT_METRICS_PORT);
    const named = monitorContainer.ports?.find((p) => p.containerPort === port);
    expect(named?.name).toBeTruthy();
    expect(monitorContainer.readinessProbe?.httpGet).toEqual({ path: '/readyz', port: named!.name });
    expect(monitorContainer.livenessProbe?.httpGet).toEqual({ path: '/healthz', port: named!.name });
    const ann = monitorSpec.template.metadata.annotations ?? {};
    expect(ann['prometheus.io/scrape']).toBe('true');
    expect(Number(ann['prometheus.io/port'])).toBe(port);
    expect(ann['prometheus.io/path']).toBe('/metrics');
  });

  it('gives the pod a grace period above the 10 s stop budget', () => {
    const grace = monitorPod.terminationGracePeriodSeconds ?? 30;
    expect(STOP_DEADLINE_MS).toBeLessThanOrEqual(10_000);
    expect(grace).toBeGreaterThan(10);
  });

  it('reads passwords from files mounted from Secrets, and sets only variables the code knows', () => {
    const env = envOf(monitorContainer);
    const unknown = [...env.keys()].filter(
      (n) => n.startsWith('STREAMFENCE_') && !(ENV_NAMES as readonly string[]).includes(n),
    );
    expect(unknown, 'not in ENV (services/config/env.ts)').toEqual([]);
    // No password as a plain value or a variable: only *_PASSWORD_FILE.
    expect(env.has(ENV.redisPassword)).toBe(false);
    expect(env.has(ENV.kafkaSaslPassword)).toBe(false);
    const secrets = objects.filter((o) => o.obj.kind === 'Secret').map((o) => o.obj);
    for (const name of [ENV.redisPasswordFile, ENV.kafkaSaslPasswordFile]) {
      const file = env.get(name)?.value;
      expect(file, name).toBeTruthy();
      const mount = monitorContainer.volumeMounts?.find((m) => path.dirname(file!) === m.mountPath);
      expect(mount, `${name}: no volume mounted at ${path.dirname(file!)}`).toBeDefined();
      expect(mount!.readOnly).toBe(true);
      const volume = monitorPod.volumes?.find((v) => v.name === mount!.name);
      const secretName = volume?.secret?.secretName;
      expect(secretName, `${name}: the volume is not a Secret`).toBeTruthy();
      const secret = secrets.find((s) => s.metadata.name === secretName);
      const keys = Object.keys({
        ...(secret?.stringData as object | undefined),
        ...(secret?.data as object | undefined),
      });
      expect(keys, `${secretName} lacks the key ${path.basename(file!)}`).toContain(path.basename(file!));
    }
  });

  it('mounts an engine config that streamfence run accepts', () => {
    const args = monitorContainer.args ?? [];
    expect(args[0]).toBe('run');
    const file = args[args.indexOf('--config') + 1];
    const mount = monitorContainer.volumeMounts?.find((m) => path.dirname(file) === m.mountPath);
    const volume = monitorPod.volumes?.find((v) => v.name === mount?.name);
    const cm = find('ConfigMap', volume!.configMap!.name);
    const text = (cm.data as Record<string, string>)[path.basename(file)];
    expect(text).toBeTruthy();
    expect(() => parseConfigText(text, 'streamfence-engine')).not.toThrow();
  });

  it('sizes memory and the heap cap from the sensor limit: processMemoryBudget, exactly', () => {
    const { requests, limits } = monitorContainer.resources ?? {};
    const maxSensors = Number(envOf(monitorContainer).get(ENV.maxSensors)?.value ?? DEFAULT_MAX_SENSORS);
    const budget = processMemoryBudget(maxSensors);
    expect(bytesOf(limits!.memory)).toBe(budget.memoryMiB * 2 ** 20);
    expect(bytesOf(requests!.memory)).toBe(budget.memoryMiB * 2 ** 20);
    // At least every place at its measured bytes on top of the process's own 256 MiB.
    expect(budget.memoryMiB * 2 ** 20).toBeGreaterThanOrEqual(
      256 * 2 ** 20 + maxSensors * HEAP_BYTES_PER_SENSOR,
    );
    const heapMb = Number(
      /--max-old-space-size=(\d+)/.exec(envOf(monitorContainer).get('NODE_OPTIONS')?.value ?? '')?.[1],
    );
    expect(heapMb).toBe(budget.heapMiB);
    expect(heapMb).toBeLessThan(budget.memoryMiB);
  });

  it('guards the monitors with a PodDisruptionBudget that selects their pods', () => {
    const pdb = find('PodDisruptionBudget', 'streamfence-monitor');
    const spec = pdb.spec as { maxUnavailable?: number; selector: { matchLabels: Record<string, string> } };
    expect(spec.maxUnavailable).toBe(1);
    for (const [k, v] of Object.entries(spec.selector.matchLabels))
      expect(monitorSpec.template.metadata.labels[k]).toBe(v);
  });

  it('serves the board off loopback only with its token from a Secret, behind a Service', () => {
    const board = find('Deployment', 'streamfence-board').spec as DeploymentSpec;
    const c = board.template.spec.containers[0];
    const args = c.args ?? [];
    expect(args[0]).toBe('board');
    const host = args[args.indexOf('--host') + 1];
    if (host !== '127.0.0.1') {
      const token = envOf(c).get(ENV.boardToken);
      expect(token?.value, 'the token must not be written in the manifest').toBeUndefined();
      const ref = token?.valueFrom?.secretKeyRef;
      const secret = find('Secret', ref!.name);
      expect(Object.keys(secret.stringData as object)).toContain(ref!.key);
    }
    const port = Number(args[args.indexOf('--port') + 1]);
    const http = c.ports?.find((p) => p.containerPort === port);
    expect(c.readinessProbe?.httpGet?.path).toBe('/healthz');
    const svc = find('Service', 'streamfence-board').spec as {
      selector: Record<string, string>;
      ports: { targetPort: string | number }[];
    };
    expect([http?.name, port]).toContain(svc.ports[0].targetPort);
    for (const [k, v] of Object.entries(svc.selector)) expect(board.template.metadata.labels[k]).toBe(v);
  });
});
