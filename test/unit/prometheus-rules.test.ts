/**
 * deploy/prometheus/alerts.yml: every expression is parsed with Prometheus' own PromQL grammar
 * (`@prometheus-io/lezer-promql`, the parser behind the Prometheus web UI), and every metric and
 * label it selects must be one the monitor registers (services/metrics/metrics.ts), so a renamed
 * metric cannot leave a rule that silently never fires.
 */
import { readFileSync } from 'node:fs';
import path from 'node:path';
import { fileURLToPath } from 'node:url';
import { parser } from '@prometheus-io/lezer-promql';
import { describe, expect, it } from 'vitest';
import { parse } from 'yaml';
import { parseDuration } from '../../libs/config/duration.js';
import { createMetrics } from '../../services/metrics/metrics.js';

const ROOT = path.resolve(path.dirname(fileURLToPath(import.meta.url)), '../..');

interface Rule {
  alert?: string;
  record?: string;
  expr: string;
  for?: string;
  labels?: Record<string, string>;
  annotations?: Record<string, string>;
}
const file = parse(readFileSync(path.join(ROOT, 'deploy/prometheus/alerts.yml'), 'utf8')) as {
  groups: { name: string; rules: Rule[] }[];
};
const rules = file.groups.flatMap((g) => g.rules);

/** Series Prometheus adds itself: `up` per target, and the target labels on every series. */
const SCRAPE_SERIES: Record<string, string[]> = { up: [] };
const TARGET_LABELS = ['job', 'instance', 'pod', 'namespace'];

/** Metric name -> label names, for every series the monitor's registry exposes. */
function exposedSeries(): Map<string, string[]> {
  const metrics = createMetrics();
  const out = new Map<string, string[]>(Object.entries(SCRAPE_SERIES));
  for (const m of metrics.registry.getMetricsAsArray()) {
    const labels = [...((m as unknown as { labelNames?: string[] }).labelNames ?? [])];
    const type = (m as unknown as { type: string }).type;
    if (type === 'histogram') {
      out.set(`${m.name}_bucket`, [...labels, 'le']);
      out.set(`${m.name}_sum`, labels);
      out.set(`${m.name}_count`, labels);
    } else out.set(m.name, labels);
  }
  return out;
}

interface Selector {
  metric: string;
  labels: string[];
}

/** Parse one expression; returns the syntax errors and the selectors it uses. */
function analyse(expr: string): { errors: string[]; selectors: Selector[] } {
  const tree = parser.parse(expr);
  const errors: string[] = [];
  const selectors: Selector[] = [];
  tree.iterate({
    enter: (node) => {
      if (node.type.isError)
        errors.push(`syntax error at ${node.from}: "${expr.slice(node.from, node.from + 20)}"`);
      if (node.name !== 'VectorSelector') return;
      const id = node.node.getChild('Identifier');
      const labels: string[] = [];
      const matchers = node.node.getChild('LabelMatchers');
      matchers?.toTree().iterate({
        enter: (inner) => {
          if (inner.name === 'LabelName') {
            const from = matchers.from + inner.from;
            labels.push(expr.slice(from, matchers.from + inner.to));
          }
        },
      });
      selectors.push({ metric: id ? expr.slice(id.from, id.to) : '', labels });
    },
  });
  return { errors, selectors };
}

describe('deploy/prometheus/alerts.yml', () => {
  const series = exposedSeries();

  it('is a rule file with named alerts, a severity and a summary each', () => {
    expect(rules.length).toBeGreaterThanOrEqual(6);
    const names = new Set<string>();
    for (const r of rules) {
      expect(r.alert, JSON.stringify(r)).toMatch(/^Streamfence[A-Za-z]+$/);
      expect(names.has(r.alert!), `duplicate alert ${r.alert}`).toBe(false);
      names.add(r.alert!);
      expect(['warning', 'critical']).toContain(r.labels?.severity);
      expect(r.annotations?.summary).toBeTruthy();
      expect(r.annotations?.description).toBeTruthy();
      if (r.for !== undefined) expect(() => parseDuration(r.for!)).not.toThrow();
    }
  });

  it('covers what an SRE watches: down, not ready, lag, backoff, checkpoints', () => {
    const all = rules.map((r) => r.expr).join('\n');
    for (const metric of [
      'up',
      'streamfence_ready',
      'streamfence_partition_lag',
      'streamfence_backoff_total',
      'streamfence_checkpoints_total',
    ])
      expect(all).toMatch(new RegExp(`\\b${metric}\\b`));
  });

  it('the parser is not vacuous: broken PromQL is reported', () => {
    expect(analyse('rate(streamfence_backoff_total[5m').errors.length).toBeGreaterThan(0);
    expect(analyse('sum by (instance (streamfence_ready)').errors.length).toBeGreaterThan(0);
    expect(analyse('streamfence_ready == 0').errors).toEqual([]);
    expect(analyse('rate(streamfence_checkpoints_total{result="fenced", job!="x"}[5m])').selectors).toEqual([
      { metric: 'streamfence_checkpoints_total', labels: ['result', 'job'] },
    ]);
  });

  for (const r of rules) {
    it(`${r.alert}: parses, and selects only series the monitor exposes`, () => {
      const { errors, selectors } = analyse(r.expr);
      expect(errors).toEqual([]);
      expect(selectors.length).toBeGreaterThan(0);
      for (const s of selectors) {
        expect(series.has(s.metric), `unknown metric "${s.metric}"`).toBe(true);
        for (const label of s.labels) {
          expect(
            [...series.get(s.metric)!, ...TARGET_LABELS],
            `"${s.metric}" has no label "${label}"`,
          ).toContain(label);
        }
      }
    });
  }
});
