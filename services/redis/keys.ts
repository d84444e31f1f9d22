/**
 * Redis key layout. Everything one input partition needs for an exact restart lives under one hash
 * tag, `{<prefix>:<group>:<topic>:<partition>}`, so the keys share a Redis Cluster slot and one Lua
 * script can update them together:
 *   {...}:state   HASH  sensor id -> encoded sensor state (binary)
 *   {...}:offset  STRING next input offset to read: the state holds exactly the readings before it
 *   {...}:owner   STRING token of the monitor process that owns the partition (fences stale owners)
 * Plus one informational key per group and topic: <prefix>:<group>:<topic>:config (the engine config
 * the monitor runs with, as JSON) so `inspect` decodes states with the same settings.
 */
export interface PartitionKeys {
  state: string;
  offset: string;
  owner: string;
}

export function partitionTag(prefix: string, group: string, topic: string, partition: number): string {
  return `{${prefix}:${group}:${topic}:${partition}}`;
}

export function partitionKeys(
  prefix: string,
  group: string,
  topic: string,
  partition: number,
): PartitionKeys {
  const tag = partitionTag(prefix, group, topic, partition);
  return { state: `${tag}:state`, offset: `${tag}:offset`, owner: `${tag}:owner` };
}

export function configKey(prefix: string, group: string, topic: string): string {
  return `${prefix}:${group}:${topic}:config`;
}

/** Escape Redis glob characters so a name is matched literally in SCAN MATCH. */
export function globEscape(s: string): string {
  return s.replace(/[*?[\]\\]/g, '\\$&');
}

/** SCAN pattern for every partition's state hash; group and topic may be undefined (= any). */
export function stateKeyPattern(prefix: string, group?: string, topic?: string): string {
  const g = group === undefined ? '*' : globEscape(group);
  const t = topic === undefined ? '*' : globEscape(topic);
  return `{${globEscape(prefix)}:${g}:${t}:*}:state`;
}

/** Parse a state key back into its parts (group and topic names never contain ':' in Kafka). */
export function parseStateKey(
  key: string,
  prefix: string,
): { group: string; topic: string; partition: number } | null {
  const head = `{${prefix}:`;
  if (!key.startsWith(head) || !key.endsWith('}:state')) return null;
  const parts = key.slice(head.length, -'}:state'.length).split(':');
  if (parts.length !== 3 || !/^\d+$/.test(parts[2])) return null;
  return { group: parts[0], topic: parts[1], partition: Number(parts[2]) };
}
