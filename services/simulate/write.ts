/**
 * Writing a simulated data set: readings to NDJSON or CSV (streamed, with backpressure), labels
 * to CSV, the scenario's suggested config to YAML or JSON, or readings to a Kafka topic.
 */
import { createWriteStream } from 'node:fs';
import { writeFile } from 'node:fs/promises';
import { once } from 'node:events';
import YAML from 'yaml';
import { buildKafka, createTopicsWithLeaders, kafkaFailure, type KafkaSettings } from '../connect/index.js';
import { StreamfenceError } from '../../libs/errors/index.js';
import type { PlantSimulator, SimReading } from '../../libs/sim/plant.js';
import { fileProblem } from '../fs-errors.js';

export type SimFormat = 'ndjson' | 'csv';

export function formatFromPath(path: string, explicit?: string): SimFormat {
  const f =
    explicit ?? (/\.csv$/i.test(path) ? 'csv' : /\.(ndjson|jsonl)$/i.test(path) ? 'ndjson' : undefined);
  if (f === 'csv' || f === 'ndjson') return f;
  throw new StreamfenceError(
    'ARGS_INVALID',
    explicit
      ? `--format must be ndjson or csv, got "${explicit}"`
      : `cannot tell the format of "${path}" from its extension; name it .ndjson or .csv, or pass --format`,
  );
}

const csvField = (s: string): string => (/[",\n\r]/.test(s) ? `"${s.replace(/"/g, '""')}"` : s);

/** One reading as a line of the chosen format (ISO-8601 UTC times, so files are readable and exact). */
export function readingLine(r: SimReading, format: SimFormat): string {
  const ts = new Date(r.ts).toISOString();
  return format === 'csv'
    ? `${csvField(r.sensor)},${ts},${r.value}\n`
    : `${JSON.stringify({ sensor: r.sensor, ts, value: r.value })}\n`;
}

function unwritable(path: string, e: unknown): StreamfenceError {
  return new StreamfenceError(
    'OUTPUT_UNWRITABLE',
    `cannot write "${path}": ${fileProblem(e)}; choose another path`,
  );
}

export async function writeReadings(
  sim: PlantSimulator,
  path: string,
  format: SimFormat,
  onProgress?: (n: number) => void,
): Promise<number> {
  const out = createWriteStream(path);
  let n = 0;
  try {
    await once(out, 'open');
    let chunk = format === 'csv' ? 'sensor,ts,value\n' : '';
    for (let r = sim.next(); r !== null; r = sim.next()) {
      chunk += readingLine(r, format);
      n++;
      if (chunk.length > 1 << 16) {
        // events.once rejects when the stream emits 'error' while waiting.
        if (!out.write(chunk)) await once(out, 'drain');
        chunk = '';
        onProgress?.(n);
      }
    }
    out.end(chunk);
    await once(out, 'finish');
  } catch (e) {
    out.destroy();
    throw unwritable(path, e);
  }
  return n;
}

export async function writeText(path: string, text: string): Promise<void> {
  try {
    await writeFile(path, text);
  } catch (e) {
    throw unwritable(path, e);
  }
}

/** The config as YAML, or as JSON when the file name ends in .json. */
export function configText(path: string, config: unknown): string {
  return /\.json$/i.test(path) ? `${JSON.stringify(config, null, 2)}\n` : YAML.stringify(config);
}

/** Produce the readings to a Kafka topic (created when missing), keyed by sensor, in batches. */
export async function produceReadings(
  sim: PlantSimulator,
  topic: string,
  connection: KafkaSettings,
  onProgress?: (n: number) => void,
): Promise<number> {
  const kafka = buildKafka(connection, { clientId: 'streamfence-simulate', retries: 3 });
  const admin = kafka.admin();
  const producer = kafka.producer({ allowAutoTopicCreation: false });
  try {
    await admin.connect();
    const topics = await admin.listTopics();
    if (!topics.includes(topic)) await createTopicsWithLeaders(admin, [{ topic }]);
    await producer.connect();
  } catch (e) {
    await Promise.allSettled([admin.disconnect(), producer.disconnect()]);
    throw kafkaFailure(e, connection, `create or write topic ${topic}`);
  }
  let n = 0;
  try {
    let batch: { key: string; value: string; timestamp: string }[] = [];
    const flush = async () => {
      if (batch.length === 0) return;
      await producer.send({ topic, messages: batch });
      batch = [];
      onProgress?.(n);
    };
    for (let r = sim.next(); r !== null; r = sim.next()) {
      batch.push({
        key: r.sensor,
        value: JSON.stringify({ sensor: r.sensor, ts: new Date(r.ts).toISOString(), value: r.value }),
        timestamp: String(r.ts),
      });
      n++;
      if (batch.length >= 2000) await flush();
    }
    await flush();
  } finally {
    await Promise.allSettled([admin.disconnect(), producer.disconnect()]);
  }
  return n;
}
