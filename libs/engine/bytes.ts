/** Minimal binary writer/reader for the compact state encoding (varints, doubles, strings). */
const enc = new TextEncoder();
const dec = new TextDecoder('utf-8', { fatal: true });

/**
 * Appends varints, doubles, floats and strings to a growing buffer; `bytes()` copies out what was
 * written.
 */
export class ByteWriter {
  private buf = new Uint8Array(1024);
  private view = new DataView(this.buf.buffer);
  private pos = 0;

  private ensure(n: number): void {
    if (this.pos + n <= this.buf.length) return;
    let size = this.buf.length * 2;
    while (size < this.pos + n) size *= 2;
    const next = new Uint8Array(size);
    next.set(this.buf.subarray(0, this.pos));
    this.buf = next;
    this.view = new DataView(next.buffer);
  }

  /** Start a new message, keeping the grown buffer (one writer serves many encodes). */
  reset(): void {
    this.pos = 0;
  }

  u8(v: number): void {
    this.ensure(1);
    this.buf[this.pos++] = v;
  }

  /** Unsigned integer up to 2^53, 7 bits per byte. */
  uvar(v: number): void {
    if (!Number.isSafeInteger(v) || v < 0) throw new RangeError(`uvar out of range: ${v}`);
    this.ensure(8);
    while (v >= 0x80) {
      this.buf[this.pos++] = (v % 0x80) | 0x80;
      v = Math.floor(v / 0x80);
    }
    this.buf[this.pos++] = v;
  }

  f64(v: number): void {
    this.ensure(8);
    this.view.setFloat64(this.pos, v, true);
    this.pos += 8;
  }

  f32(v: number): void {
    this.ensure(4);
    this.view.setFloat32(this.pos, v, true);
    this.pos += 4;
  }

  str(s: string): void {
    const b = enc.encode(s);
    this.uvar(b.length);
    this.ensure(b.length);
    this.buf.set(b, this.pos);
    this.pos += b.length;
  }

  bytes(): Uint8Array {
    return this.buf.slice(0, this.pos);
  }
}

/** Reads what ByteWriter wrote, in the same order; throws on a read past the end. */
export class ByteReader {
  private pos = 0;
  private readonly view: DataView;
  constructor(private readonly buf: Uint8Array) {
    this.view = new DataView(buf.buffer, buf.byteOffset, buf.byteLength);
  }

  private need(n: number): void {
    if (this.pos + n > this.buf.length) throw new RangeError('state ends early');
  }

  u8(): number {
    this.need(1);
    return this.buf[this.pos++];
  }

  uvar(): number {
    let v = 0;
    let mul = 1;
    for (;;) {
      const b = this.u8();
      v += (b & 0x7f) * mul;
      if (b < 0x80) return v;
      mul *= 0x80;
      if (mul > 2 ** 56) throw new RangeError('varint too long');
    }
  }

  f64(): number {
    this.need(8);
    const v = this.view.getFloat64(this.pos, true);
    this.pos += 8;
    return v;
  }

  f32(): number {
    this.need(4);
    const v = this.view.getFloat32(this.pos, true);
    this.pos += 4;
    return v;
  }

  str(): string {
    const n = this.uvar();
    this.need(n);
    const s = dec.decode(this.buf.subarray(this.pos, this.pos + n));
    this.pos += n;
    return s;
  }

  get done(): boolean {
    return this.pos === this.buf.length;
  }
}
