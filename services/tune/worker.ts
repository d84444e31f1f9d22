/**
 * Tuning worker: holds the shared reading columns and evaluates grid points sent by the pool,
 * one at a time, replying with each point's score and health figures.
 */
import { parentPort, workerData } from 'node:worker_threads';
import { validateConfig } from '../../libs/config/config.js';
import { isStreamfenceError } from '../../libs/errors/index.js';
import { applyPoint } from '../../libs/tuning/apply.js';
import { evaluateConfig } from '../../libs/tuning/evaluate.js';
import type { FromWorker, ToWorker, WorkerInit } from './messages.js';

const init = workerData as WorkerInit;
const base = validateConfig(init.baseConfig, 'base config');
const columns = {
  names: init.names,
  sensor: init.sensor,
  ts: init.ts,
  value: init.value,
  quality: init.quality,
  count: init.count,
};

parentPort!.on('message', (msg: ToWorker) => {
  if (msg.type === 'stop') {
    parentPort!.close();
    return;
  }
  let reply: FromWorker;
  try {
    const evaluation = evaluateConfig(
      applyPoint(base, msg.point),
      columns,
      init.incidents,
      init.scoreOptions,
    );
    reply = { type: 'result', index: msg.index, evaluation };
  } catch (e) {
    reply = {
      type: 'error',
      index: msg.index,
      message: e instanceof Error ? e.message : String(e),
      code: isStreamfenceError(e) ? e.code : undefined,
    };
  }
  parentPort!.postMessage(reply);
});
