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
  readonly slots: number;
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
    const p = this.slotFor(ts);
    this.addAt(p, value);
  }

  private addAt(p: number, value: number): void {
    if (this.count[p] === 0) {
      this.min[p] = value;
      this.max[p] = value;
    } else {
      if (value < this.min[p]) this.min[p] = value;
      if (value > this.max[p]) this.max[p] = value;
    }
    this.count[p]++;
  }

  /** Sample a "last" channel at ts (does not count as a value). NaN samples are ignored. */
  sample(ts: number, channel: number, value: number): void {
    if (Number.isNaN(value)) return;
    const p = this.slotFor(ts);
    const t = this.lastTs[channel];
    if (Number.isNaN(this.lastVal[channel][p]) || ts >= t[p]) {
      this.lastVal[channel][p] = value;
      t[p] = ts;
    }
  }

  /**
   * Add a value and sample every "last" channel at once (one slot lookup: the hot path of a
   * replay). `samples[c]` goes to channel c; NaN samples are skipped.
   */
  addSampled(ts: number, value: number, samples: ArrayLike<number>): void {
    const p = this.slotFor(ts);
    this.addAt(p, value);
    for (let c = 0; c < this.lastVal.length; c++) {
      const v = samples[c];
      if (Number.isNaN(v) || ts < this.lastTs[c][p]) continue;
      this.lastVal[c][p] = v;
      this.lastTs[c][p] = ts;
    }
  }

  /** Add to a "sum" channel at ts. */
  addSum(ts: number, channel: number, amount = 1): void {
    const p = this.slotFor(ts);
    this.sums[channel][p] += amount;
  }

  /** Index of a named channel, for the hot path. */
  lastChannel(name: string): number {
    const i = this.lastNames.indexOf(name);
    if (i < 0) throw new RangeError(`no last channel ${name}`);
    return i;
  }

  sumChannel(name: string): number {
    const i = this.sumNames.indexOf(name);
    if (i < 0) throw new RangeError(`no sum channel ${name}`);
    return i;
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
    for (let a = this.lo; a <= this.hi; a++) {
      const p = a - this.base;
      const last: Record<string, number> = {};
      let any = this.count[p] > 0;
      this.lastNames.forEach((n, c) => {
        last[n] = this.lastVal[c][p];
        if (!Number.isNaN(last[n])) any = true;
      });
      const sum: Record<string, number> = {};
      this.sumNames.forEach((n, c) => {
        sum[n] = this.sums[c][p];
        if (sum[n] !== 0) any = true;
      });
      if (!any) continue;
      const has = this.count[p] > 0;
      out.push({
        start: a * this.widthMs,
        count: this.count[p],
        min: has ? this.min[p] : NaN,
        max: has ? this.max[p] : NaN,
        last,
        sum,
      });
    }
    return out;
  }

  /** Array position for ts, coarsening and re-basing when ts is outside the slots. */
  private slotFor(ts: number): number {
    let a = Math.floor(ts / this.widthMs);
    if (this.empty) {
      this.base = a;
      this.lo = a;
      this.hi = a;
      this.clear(0, this.slots);
      return 0;
    }
    if (a >= this.base && a < this.base + this.slots) {
      if (a < this.lo) this.lo = a;
      if (a > this.hi) this.hi = a;
      return a - this.base;
    }
    let lo = Math.min(this.lo, a);
    let hi = Math.max(this.hi, a);
    while (hi - lo >= this.slots) {
      this.coarsen();
      a = Math.floor(ts / this.widthMs);
      lo = Math.min(this.lo, a);
      hi = Math.max(this.hi, a);
    }
    // Growing backwards puts the data at the end so the next earlier readings fit without moving.
    const newBase = a < this.lo ? hi - this.slots + 1 : lo;
    this.rebase(newBase);
    if (a < this.lo) this.lo = a;
    if (a > this.hi) this.hi = a;
    return a - this.base;
  }

  private clear(from: number, to: number): void {
    this.count.fill(0, from, to);
    for (const v of this.lastVal) v.fill(NaN, from, to);
    for (const t of this.lastTs) t.fill(-Infinity, from, to);
    for (const s of this.sums) s.fill(0, from, to);
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
    for (let a = oldLo; a <= oldHi; a++) {
      const from = a - oldBase;
      const to = Math.floor(a / 2) - this.base;
      const n = this.count[from];
      const mn = this.min[from];
      const mx = this.max[from];
      this.count[from] = 0;
      this.mergeInto(to, n, mn, mx);
      for (let c = 0; c < nLast; c++) {
        const vals = this.lastVal[c];
        const tss = this.lastTs[c];
        const v = vals[from];
        const t = tss[from];
        vals[from] = NaN;
        tss[from] = -Infinity;
        if (!Number.isNaN(v) && (Number.isNaN(vals[to]) || t >= tss[to])) {
          vals[to] = v;
          tss[to] = t;
        }
      }
      for (let c = 0; c < nSum; c++) {
        const sums = this.sums[c];
        const v = sums[from];
        sums[from] = 0;
        sums[to] += v;
      }
    }
  }

  private mergeInto(p: number, n: number, mn: number, mx: number): void {
    if (n === 0) return;
    if (this.count[p] === 0) {
      this.min[p] = mn;
      this.max[p] = mx;
    } else {
      if (mn < this.min[p]) this.min[p] = mn;
      if (mx > this.max[p]) this.max[p] = mx;
    }
    this.count[p] += n;
  }

  /** Move the data so array position 0 holds absolute slot newBase. */
  private rebase(newBase: number): void {
    if (newBase === this.base) return;
    const move = (arr: Float64Array): void => {
      const copy = arr.slice();
      for (let a = this.lo; a <= this.hi; a++) arr[a - newBase] = copy[a - this.base];
    };
    const keepLo = this.lo - newBase;
    const keepHi = this.hi - newBase;
    move(this.count);
    move(this.min);
    move(this.max);
    for (const v of this.lastVal) move(v);
    for (const t of this.lastTs) move(t);
    for (const s of this.sums) move(s);
    this.base = newBase;
    // Clear everything outside the moved range.
    this.clear(0, Math.max(0, keepLo));
    this.clear(Math.min(this.slots, keepHi + 1), this.slots);
  }
}
