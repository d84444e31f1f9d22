/**
 * The README's metrics table against what each command registers: `run` (createMetrics), `board`
 * (createBoardMetrics) and `demo` (createDemoMetrics). Every streamfence_ metric a command exposes
 * is a row naming that command, with the same labels and type, and every row is exposed by the
 * commands it names. Counters end in `_total` and nothing else does (the Prometheus naming
 * convention, prometheus.io "Metric and label naming"). Process metrics carry no streamfence_
 * prefix and are the same set in every command.
 */
import { readFileSync } from 'node:fs';
import path from 'node:path';
import { fileURLToPath } from 'node:url';
import type { Registry } from 'prom-client';
import { describe, expect, it } from 'vitest';
import { BoardHub } from '../../services/board/hub.js';
import { createBoardMetrics, createDemoMetrics } from '../../services/metrics/board-metrics.js';
import { createMetrics } from '../../services/metrics/metrics.js';

const ROOT = path.resolve(path.dirname(fileURLToPath(import.meta.url)), '../..');

interface Row {
  name: string;
  labels: string[];
  type: string;
  commands: string[];
}

/** The rows of the table under "## Metrics" whose metric is one name (not the process wildcard). */
function readmeRows(): Row[] {
  const readme = readFileSync(path.join(ROOT, 'README.md'), 'utf8');
  const section = readme.slice(readme.indexOf('\n## Metrics\n'), readme.indexOf('\n## Architecture\n'));
  const rows: Row[] = [];
  for (const line of section.split('\n')) {
    const match = /^\| `(streamfence_[a-z_]+)(?:\{([a-z_,]+)\})?` \| ([a-z]+) \| ([a-z, ]+) \|/.exec(line);
    if (match === null) continue;
    rows.push({
      name: match[1],
      labels: match[2] ? match[2].split(',') : [],
      type: match[3],
      commands: match[4].split(',').map((command) => command.trim()),
    });
  }
  return rows;
}

interface Exposed {
  name: string;
  labels: string[];
  type: string;
}

function exposed(registry: Registry): Exposed[] {
  return registry.getMetricsAsArray().map((metric) => {
    const fields = metric as unknown as { name: string; type: string; labelNames?: string[] };
    return { name: fields.name, labels: [...(fields.labelNames ?? [])], type: fields.type };
  });
}

const hub = () => new BoardHub({ mode: 'demo', clock: { wall: () => 0, plant: () => 0 } });
const COMMANDS: Record<string, () => Registry> = {
  run: () => createMetrics().registry,
  board: () => createBoardMetrics(hub()).registry,
  demo: () => createDemoMetrics(hub()).registry,
};

const rows = readmeRows();

describe('README metrics table', () => {
  it('has rows to check', () => {
    expect(rows.length).toBeGreaterThan(15);
  });

  for (const [command, registryOf] of Object.entries(COMMANDS)) {
    it(`lists exactly what \`${command}\` exposes, with labels and types`, () => {
      const own = exposed(registryOf()).filter((metric) => metric.name.startsWith('streamfence_'));
      const listed = rows.filter((row) => row.commands.includes(command));
      expect(own.map((metric) => metric.name).sort()).toEqual(listed.map((row) => row.name).sort());
      for (const metric of own) {
        const row = listed.find((candidate) => candidate.name === metric.name)!;
        expect({ name: metric.name, type: metric.type, labels: metric.labels.sort() }).toEqual({
          name: row.name,
          type: row.type,
          labels: [...row.labels].sort(),
        });
      }
    });
  }

  it('names counters, and only counters, with _total', () => {
    for (const registryOf of Object.values(COMMANDS)) {
      for (const metric of exposed(registryOf())) {
        if (!metric.name.startsWith('streamfence_')) continue;
        expect({ name: metric.name, total: metric.name.endsWith('_total') }).toEqual({
          name: metric.name,
          total: metric.type === 'counter',
        });
      }
    }
  });

  it('serves the same process metrics, under one prefix, in every command', () => {
    const processNames = (registry: Registry) =>
      exposed(registry)
        .map((metric) => metric.name)
        .filter((name) => !name.startsWith('streamfence_'))
        .sort();
    const run = processNames(COMMANDS.run());
    expect(run.length).toBeGreaterThan(5);
    for (const name of run) expect(name).toMatch(/^(process|nodejs)_/);
    expect(processNames(COMMANDS.board())).toEqual(run);
    expect(processNames(COMMANDS.demo())).toEqual(run);
  });
});
