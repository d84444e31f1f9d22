/**
 * Adaptive time bins: a fixed number of slots over event time whose width doubles (merging
 * neighbouring slots pairwise) whenever the data outgrow them. A replay is a stream whose time
 * range is unknown up front, so this keeps memory per series fixed however many readings arrive
 * and however long they span.
 *
 * Each slot keeps count, min and max of the values added ("keep extremes": a one-reading spike
 * survives every merge as the slot's max or min) plus any number of "last" channels: values
 * sampled in that slot where the latest sample wins (used for baseline median and fences, which
 * change only when a window bucket closes). "sum" channels add up (used for event counts).
 * Slots are aligned to multiples of the width from the epoch, so the same readings always land
 * in the same slots whatever their order.
 */
export interface BinsOptions {
  /** Number of slots (the most points a chart of this series draws). */
  slots: number;
  /** Starting slot width in ms; it only ever doubles. */
  initialWidthMs: number;
  /** Names of channels where the sample with the latest ts in a slot wins. */
  lastChannels?: readonly string[];
  /** Names of channels that add up. */
  sumChannels?: readonly string[];
}

/** One non-empty slot, as read back for drawing. */
export interface Bin {
  /** Start of the slot (epoch ms); the slot covers [start, start + width). */
  start: number;
  count: number;
  min: number;
  max: number;
  last: Record<string, number>;
  sum: Record<string, number>;
}

/** A fixed number of time bins (min/max per bin) whose width doubles in place as time runs on. */
export class AdaptiveBins {
  /** Most bins kept. */
  readonly slots: number;
  /** Current bin width; doubles whenever the span outgrows the slots. */
  widthMs: number;
  /** Absolute slot index (floor(ts / width)) held in array position 0. */
  private base = 0;
  private lo = Infinity;
  private hi = -Infinity;
  private count: Float64Array;
  private min: Float64Array;
  private max: Float64Array;
  private lastVal: Float64Array[];
  private lastTs: Float64Array[];
  private sums: Float64Array[];
  private readonly lastNames: readonly string[];
  private readonly sumNames: readonly string[];

  constructor(opts: BinsOptions) {
    if (!(opts.slots >= 2 && Number.isInteger(opts.slots)))
      throw new RangeError('slots must be an integer >= 2');
    if (!(opts.initialWidthMs > 0)) throw new RangeError('initialWidthMs must be > 0');
    this.slots = opts.slots;
    this.widthMs = opts.initialWidthMs;
    this.lastNames = opts.lastChannels ?? [];
    this.sumNames = opts.sumChannels ?? [];
    this.count = new Float64Array(this.slots);
    this.min = new Float64Array(this.slots);
    this.max = new Float64Array(this.slots);
    this.lastVal = this.lastNames.map(() => new Float64Array(this.slots));
    this.lastTs = this.lastNames.map(() => new Float64Array(this.slots));
    this.sums = this.sumNames.map(() => new Float64Array(this.slots));
  }

  /** True when nothing was added yet. */
  get empty(): boolean {
    return this.lo > this.hi;
  }

  /** Add a value at ts (counts toward count/min/max). */
  add(ts: number, value: number): void {
    const position = this.slotFor(ts);
    this.addAt(position, value);
  }

  private addAt(position: number, value: number): void {
    if (this.count[position] === 0) {
      this.min[position] = value;
      this.max[position] = value;
    } else {
      if (value < this.min[position]) this.min[position] = value;
      if (value > this.max[position]) this.max[position] = value;
    }
    this.count[position]++;
  }

  /** Sample a "last" channel at ts (does not count as a value). NaN samples are ignored. */
  sample(ts: number, channel: number, value: number): void {
    if (Number.isNaN(value)) return;
    const position = this.slotFor(ts);
    const channelTimes = this.lastTs[channel];
    if (Number.isNaN(this.lastVal[channel][position]) || ts >= channelTimes[position]) {
      this.lastVal[channel][position] = value;
      channelTimes[position] = ts;
    }
  }

  /**
   * Add a value and sample every "last" channel at once (one slot lookup: the hot path of a
   * replay). `samples[c]` goes to channel c; NaN samples are skipped.
   */
  addSampled(ts: number, value: number, samples: ArrayLike<number>): void {
    const position = this.slotFor(ts);
    this.addAt(position, value);
    for (let channel = 0; channel < this.lastVal.length; channel++) {
      const sampled = samples[channel];
      if (Number.isNaN(sampled) || ts < this.lastTs[channel][position]) continue;
      this.lastVal[channel][position] = sampled;
      this.lastTs[channel][position] = ts;
    }
  }

  /** Add to a "sum" channel at ts. */
  addSum(ts: number, channel: number, amount = 1): void {
    const position = this.slotFor(ts);
    this.sums[channel][position] += amount;
  }

  /** Index of a named channel, for the hot path. */
  lastChannel(name: string): number {
    const channel = this.lastNames.indexOf(name);
    if (channel < 0) throw new RangeError(`no last channel ${name}`);
    return channel;
  }

  /** Position of a named sum channel; throws RangeError for an unknown name. */
  sumChannel(name: string): number {
    const channel = this.sumNames.indexOf(name);
    if (channel < 0) throw new RangeError(`no sum channel ${name}`);
    return channel;
  }

  /** Time covered by the slots in use: [from, to). */
  range(): { from: number; to: number } | null {
    if (this.empty) return null;
    return { from: this.lo * this.widthMs, to: (this.hi + 1) * this.widthMs };
  }

  /** Slots in use, oldest first, including slots that only hold channel samples (count 0). */
  bins(): Bin[] {
    const out: Bin[] = [];
    if (this.empty) return out;
    for (let slot = this.lo; slot <= this.hi; slot++) {
      const position = slot - this.base;
      const last: Record<string, number> = {};
      let any = this.count[position] > 0;
      this.lastNames.forEach((name, channel) => {
        last[name] = this.lastVal[channel][position];
        if (!Number.isNaN(last[name])) any = true;
      });
      const sum: Record<string, number> = {};
      this.sumNames.forEach((name, channel) => {
        sum[name] = this.sums[channel][position];
        if (sum[name] !== 0) any = true;
      });
      if (!any) continue;
      const has = this.count[position] > 0;
      out.push({
        start: slot * this.widthMs,
        count: this.count[position],
        min: has ? this.min[position] : NaN,
        max: has ? this.max[position] : NaN,
        last,
        sum,
      });
    }
    return out;
  }

  /** Array position for ts, coarsening and re-basing when ts is outside the slots. */
  private slotFor(ts: number): number {
    let slot = Math.floor(ts / this.widthMs);
    if (this.empty) {
      this.base = slot;
      this.lo = slot;
      this.hi = slot;
      this.clear(0, this.slots);
      return 0;
    }
    if (slot >= this.base && slot < this.base + this.slots) {
      if (slot < this.lo) this.lo = slot;
      if (slot > this.hi) this.hi = slot;
      return slot - this.base;
    }
    let lowSlot = Math.min(this.lo, slot);
    let highSlot = Math.max(this.hi, slot);
    while (highSlot - lowSlot >= this.slots) {
      this.coarsen();
      slot = Math.floor(ts / this.widthMs);
      lowSlot = Math.min(this.lo, slot);
      highSlot = Math.max(this.hi, slot);
    }
    // Growing backwards puts the data at the end so the next earlier readings fit without moving.
    const newBase = slot < this.lo ? highSlot - this.slots + 1 : lowSlot;
    this.rebase(newBase);
    if (slot < this.lo) this.lo = slot;
    if (slot > this.hi) this.hi = slot;
    return slot - this.base;
  }

  private clear(from: number, to: number): void {
    this.count.fill(0, from, to);
    for (const column of this.lastVal) column.fill(NaN, from, to);
    for (const column of this.lastTs) column.fill(-Infinity, from, to);
    for (const column of this.sums) column.fill(0, from, to);
  }

  /**
   * Double the width: slot a merges into slot floor(a / 2), in place (no allocation: this runs a
   * few times per series and per doubling of the span). Writing goes to position
   * floor(a/2) - floor(lo/2) <= a - base, which has always been read already when walking upwards,
   * and positions outside [lo, hi] are kept empty, so nothing is overwritten before it is read.
   */
  private coarsen(): void {
    const oldBase = this.base;
    const oldLo = this.lo;
    const oldHi = this.hi;
    this.widthMs *= 2;
    this.lo = Math.floor(oldLo / 2);
    this.hi = Math.floor(oldHi / 2);
    this.base = this.lo;
    const nLast = this.lastVal.length;
    const nSum = this.sums.length;
    for (let slot = oldLo; slot <= oldHi; slot++) {
      const from = slot - oldBase;
      const to = Math.floor(slot / 2) - this.base;
      const binCount = this.count[from];
      const binMin = this.min[from];
      const binMax = this.max[from];
      this.count[from] = 0;
      this.mergeInto(to, binCount, binMin, binMax);
      for (let channel = 0; channel < nLast; channel++) {
        const vals = this.lastVal[channel];
        const tss = this.lastTs[channel];
        const lastValue = vals[from];
        const lastTime = tss[from];
        vals[from] = NaN;
        tss[from] = -Infinity;
        if (!Number.isNaN(lastValue) && (Number.isNaN(vals[to]) || lastTime >= tss[to])) {
          vals[to] = lastValue;
          tss[to] = lastTime;
        }
      }
      for (let channel = 0; channel < nSum; channel++) {
        const sums = this.sums[channel];
        const sum = sums[from];
        sums[from] = 0;
        sums[to] += sum;
      }
    }
  }

  private mergeInto(position: number, binCount: number, binMin: number, binMax: number): void {
    if (binCount === 0) return;
    if (this.count[position] === 0) {
      this.min[position] = binMin;
      this.max[position] = binMax;
    } else {
      if (binMin < this.min[position]) this.min[position] = binMin;
      if (binMax > this.max[position]) this.max[position] = binMax;
    }
    this.count[position] += binCount;
  }

  /** Move the data so array position 0 holds absolute slot newBase. */
  private rebase(newBase: number): void {
    if (newBase === this.base) return;
    const move = (arr: Float64Array): void => {
      const copy = arr.slice();
      for (let slot = this.lo; slot <= this.hi; slot++) arr[slot - newBase] = copy[slot - this.base];
    };
    const keepLo = this.lo - newBase;
    const keepHi = this.hi - newBase;
    move(this.count);
    move(this.min);
    move(this.max);
    for (const column of this.lastVal) move(column);
    for (const column of this.lastTs) move(column);
    for (const column of this.sums) move(column);
    this.base = newBase;
    // Clear everything outside the moved range.
    this.clear(0, Math.max(0, keepLo));
    this.clear(Math.min(this.slots, keepHi + 1), this.slots);
  }
}
