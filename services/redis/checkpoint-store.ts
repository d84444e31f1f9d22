/**
 * Partition checkpoints in Redis. Two Lua scripts, each atomic on one hash-tagged slot:
 *  - claim: make this process the partition's owner and read its state and offset in one step;
 *  - save:  write dirty sensor states and the new offset, only if this process is still the owner
 *           and the stored offset is the one this process wrote last.
 * The owner check fences a monitor that lost a partition in a rebalance but has not noticed yet:
 * its late write would otherwise mix its sensors with the new owner's newer ones. The offset check
 * catches a Redis that went back in time under a running monitor (a restart that replayed an
 * append-only file missing its last second, a replica promoted before it received the last
 * writes): writing only the sensors changed since would leave the others at their older state
 * beside a newer offset, so the caller writes everything again instead.
 */
import type { RedisClient } from '../connect/index.js';
import { partitionKeys, type PartitionKeys } from './keys.js';

const CLAIM_LUA = `
redis.call('SET', KEYS[3], ARGV[1])
local off = redis.call('GET', KEYS[2])
local st = redis.call('HGETALL', KEYS[1])
return {off or false, st}
`;

// ARGV: token, offset, the offset expected in Redis (see EXPECT_*), count of evicted sensors, their
// ids, then sensor/bytes pairs. The stored offset may also equal the new one: a retried save whose
// first attempt was applied although its answer was lost. Returns 1 when written, 0 when fenced
// (another owner), 2 when the owner record is gone (state loss), 3 when the stored offset is neither
// (Redis went back to an older checkpoint). EXPECT_REPLACE deletes the state hash first, so sensors
// evicted in the lost writes do not come back.
const SAVE_LUA = `
local owner = redis.call('GET', KEYS[3])
if owner == false then return 2 end
if owner ~= ARGV[1] then return 0 end
local stored = redis.call('GET', KEYS[2])
if ARGV[3] == '*' then
  redis.call('DEL', KEYS[1])
elseif ARGV[3] == '' then
  if stored ~= false and stored ~= ARGV[2] then return 3 end
elseif stored ~= ARGV[3] and stored ~= ARGV[2] then
  return 3
end
local evicted = tonumber(ARGV[4])
for i = 5, 4 + evicted do
  redis.call('HDEL', KEYS[1], ARGV[i])
end
for i = 5 + evicted, #ARGV, 2 do
  redis.call('HSET', KEYS[1], ARGV[i], ARGV[i + 1])
end
redis.call('SET', KEYS[2], ARGV[2])
return 1
`;

/** What a save expects to find stored: nothing yet, this offset, or anything (replace in full). */
export type ExpectedOffset = { kind: 'none' } | { kind: 'offset'; offset: string } | { kind: 'replace' };

// Take ownership back only if nobody holds it (after a state loss). Returns 1 when taken.
const RETAKE_LUA = `
if redis.call('SET', KEYS[3], ARGV[1], 'NX') then return 1 end
return 0
`;

// Release ownership only if still ours (graceful hand-over; the next owner claims without waiting).
const RELEASE_LUA = `
if redis.call('GET', KEYS[3]) == ARGV[1] then redis.call('DEL', KEYS[3]) return 1 end
return 0
`;

type ScriptedRedis = RedisClient & {
  sfClaimBuffer(
    state: string,
    offset: string,
    owner: string,
    token: string,
  ): Promise<[Buffer | null, Buffer[]]>;
  sfSave(state: string, offset: string, owner: string, ...args: (string | Buffer)[]): Promise<number>;
  sfRelease(state: string, offset: string, owner: string, token: string): Promise<number>;
  sfRetake(state: string, offset: string, owner: string, token: string): Promise<number>;
};

/** What a save did (see CheckpointStore.save). */
export type SaveResult = 'written' | 'fenced' | 'owner_gone' | 'rolled_back';
const SAVE_RESULTS: Record<number, SaveResult> = {
  0: 'fenced',
  1: 'written',
  2: 'owner_gone',
  3: 'rolled_back',
};

export interface PartitionCheckpoint {
  /** Next offset to read; null when the partition has never been checkpointed. */
  offset: string | null;
  states: Map<string, Buffer>;
}

export class CheckpointStore {
  private readonly r: ScriptedRedis;

  constructor(
    redis: RedisClient,
    readonly prefix: string,
    readonly group: string,
    readonly topic: string,
    /** Identifies this process as a partition owner. */
    readonly token: string,
  ) {
    redis.defineCommand('sfClaim', { numberOfKeys: 3, lua: CLAIM_LUA });
    redis.defineCommand('sfSave', { numberOfKeys: 3, lua: SAVE_LUA });
    redis.defineCommand('sfRelease', { numberOfKeys: 3, lua: RELEASE_LUA });
    redis.defineCommand('sfRetake', { numberOfKeys: 3, lua: RETAKE_LUA });
    this.r = redis as ScriptedRedis;
  }

  keys(partition: number): PartitionKeys {
    return partitionKeys(this.prefix, this.group, this.topic, partition);
  }

  async claim(partition: number): Promise<PartitionCheckpoint> {
    const k = this.keys(partition);
    const [off, flat] = await this.r.sfClaimBuffer(k.state, k.offset, k.owner, this.token);
    const states = new Map<string, Buffer>();
    for (let i = 0; i + 1 < flat.length; i += 2) states.set(flat[i].toString('utf8'), flat[i + 1]);
    return { offset: off === null ? null : off.toString('utf8'), states };
  }

  /**
   * Write dirty states, delete evicted sensors and move the offset, in one step. `fenced`: another
   * process owns the partition now; `owner_gone`: the owner record itself is gone (Redis lost the
   * partition's keys); `rolled_back`: the stored offset is not `expected` (Redis lost recent
   * writes). Nothing is written in those cases. With `{kind: 'replace'}` the stored states are
   * replaced by `dirty` (which must then hold every sensor).
   */
  async save(
    partition: number,
    offset: string,
    expected: ExpectedOffset,
    dirty: Iterable<[string, Uint8Array]>,
    evicted: readonly string[] = [],
  ): Promise<SaveResult> {
    const k = this.keys(partition);
    const expect = expected.kind === 'none' ? '' : expected.kind === 'replace' ? '*' : expected.offset;
    const args: (string | Buffer)[] = [this.token, offset, expect, String(evicted.length), ...evicted];
    for (const [sensor, bytes] of dirty)
      args.push(sensor, Buffer.from(bytes.buffer, bytes.byteOffset, bytes.byteLength));
    const res = await this.r.sfSave(k.state, k.offset, k.owner, ...args);
    return SAVE_RESULTS[res] ?? 'fenced';
  }

  /** Become the owner again after a state loss, only if no other process has claimed it. */
  async retake(partition: number): Promise<boolean> {
    const k = this.keys(partition);
    return (await this.r.sfRetake(k.state, k.offset, k.owner, this.token)) === 1;
  }

  async release(partition: number): Promise<void> {
    const k = this.keys(partition);
    await this.r.sfRelease(k.state, k.offset, k.owner, this.token);
  }
}
