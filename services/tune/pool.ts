/**
 * Runs grid points on worker threads that share one copy of the readings (SharedArrayBuffer
 * columns). Points are handed out one at a time to whichever worker is free, so a slow point
 * never leaves the other workers idle. `workers: 0` evaluates in this thread (for comparison).
 */
import { createRequire } from 'node:module';
import { Worker } from 'node:worker_threads';
import { fileURLToPath, pathToFileURL } from 'node:url';
import { configToJson, type EngineConfig } from '../../libs/config/config.js';
import { StreamfenceError, type ErrorCode } from '../../libs/errors/index.js';
import type { Incident } from '../../libs/scoring/labels.js';
import type { ScoreOptions } from '../../libs/scoring/score.js';
import { applyPoint } from '../../libs/tuning/apply.js';
import type { ReadingColumns } from '../../libs/tuning/columns.js';
import { evaluateConfig, type PointEvaluation } from '../../libs/tuning/evaluate.js';
import type { GridPoint } from '../../libs/tuning/grid.js';
import type { FromWorker, ToWorker, WorkerInit } from './messages.js';

export interface PoolOptions {
  workers: number;
  /** Called after each finished point with the number done so far. */
  onPoint?: (done: number) => void;
}

/**
 * Start a tuning worker. Built code runs worker.js directly; from source (tests, tsx) the worker
 * is TypeScript, so a tiny bootstrap registers tsx's loader inside the worker before importing it.
 */
function startWorker(init: WorkerInit): Worker {
  const here = fileURLToPath(import.meta.url);
  if (!here.endsWith('.ts')) return new Worker(here.replace(/pool\.js$/, 'worker.js'), { workerData: init });
  const file = here.replace(/pool\.ts$/, 'worker.ts');
  // tsx's ESM API, resolved from this package (its CommonJS build cannot register from an eval'd worker).
  const api = pathToFileURL(
    createRequire(import.meta.url)
      .resolve('tsx/esm/api')
      .replace(/\.cjs$/, '.mjs'),
  ).href;
  const boot =
    `import(${JSON.stringify(api)}).then((tsx) => { tsx.register(); ` +
    `return import(${JSON.stringify(pathToFileURL(file).href)}); });`;
  return new Worker(boot, { eval: true, workerData: init });
}

/** Evaluate every grid point (score and health figures), results in grid order. */
export async function runGrid(
  cols: ReadingColumns,
  base: EngineConfig,
  points: readonly GridPoint[],
  incidents: readonly Incident[],
  scoreOptions: ScoreOptions,
  opts: PoolOptions,
): Promise<PointEvaluation[]> {
  const results: PointEvaluation[] = new Array(points.length);
  if (opts.workers <= 0) {
    for (let i = 0; i < points.length; i++) {
      results[i] = evaluateConfig(applyPoint(base, points[i]), cols, incidents, scoreOptions);
      opts.onPoint?.(i + 1);
    }
    return results;
  }
  const init: WorkerInit = {
    names: cols.names,
    sensor: cols.sensor,
    ts: cols.ts,
    value: cols.value,
    quality: cols.quality,
    count: cols.count,
    baseConfig: configToJson(base),
    incidents: [...incidents],
    scoreOptions,
  };
  const n = Math.min(opts.workers, points.length);
  let next = 0;
  let done = 0;
  const workers: Worker[] = [];
  try {
    await new Promise<void>((resolve, reject) => {
      let failed = false;
      const fail = (e: Error) => {
        if (failed) return;
        failed = true;
        reject(e);
      };
      const feed = (w: Worker) => {
        if (next < points.length) {
          const msg: ToWorker = { type: 'point', index: next, point: points[next] };
          next++;
          w.postMessage(msg);
        }
      };
      for (let k = 0; k < n; k++) {
        const w = startWorker(init);
        workers.push(w);
        w.on('message', (m: FromWorker) => {
          if (m.type === 'error') {
            fail(new StreamfenceError((m.code as ErrorCode) ?? 'CONFIG_INVALID', m.message));
            return;
          }
          results[m.index] = m.evaluation;
          done++;
          opts.onPoint?.(done);
          if (done === points.length) resolve();
          else feed(w);
        });
        w.on('error', (e) => fail(e));
        w.on('exit', (code) => {
          if (code !== 0 && done < points.length)
            fail(new Error(`tuning worker stopped with exit code ${code}`));
        });
        feed(w);
      }
    });
  } finally {
    await Promise.all(workers.map((w) => w.terminate()));
  }
  return results;
}
