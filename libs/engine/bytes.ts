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

  private ensure(extra: number): void {
    if (this.pos + extra <= this.buf.length) return;
    let size = this.buf.length * 2;
    while (size < this.pos + extra) size *= 2;
    const next = new Uint8Array(size);
    next.set(this.buf.subarray(0, this.pos));
    this.buf = next;
    this.view = new DataView(next.buffer);
  }

  /** Start a new message, keeping the grown buffer (one writer serves many encodes). */
  reset(): void {
    this.pos = 0;
  }

  /** Writes one byte. */
  u8(value: number): void {
    this.ensure(1);
    this.buf[this.pos++] = value;
  }

  /** Unsigned integer up to 2^53, 7 bits per byte. */
  uvar(value: number): void {
    if (!Number.isSafeInteger(value) || value < 0) throw new RangeError(`uvar out of range: ${value}`);
    this.ensure(8);
    while (value >= 0x80) {
      this.buf[this.pos++] = (value % 0x80) | 0x80;
      value = Math.floor(value / 0x80);
    }
    this.buf[this.pos++] = value;
  }

  /** Writes a little-endian 64-bit float. */
  f64(value: number): void {
    this.ensure(8);
    this.view.setFloat64(this.pos, value, true);
    this.pos += 8;
  }

  /** Writes a little-endian 32-bit float. */
  f32(value: number): void {
    this.ensure(4);
    this.view.setFloat32(this.pos, value, true);
    this.pos += 4;
  }

  /** Writes UTF-8 text, its byte length first. */
  str(text: string): void {
    const encoded = enc.encode(text);
    this.uvar(encoded.length);
    this.ensure(encoded.length);
    this.buf.set(encoded, this.pos);
    this.pos += encoded.length;
  }

  /** Writes bytes as they are (no length: the reader must know where they end). */
  raw(bytes: Uint8Array): void {
    this.ensure(bytes.length);
    this.buf.set(bytes, this.pos);
    this.pos += bytes.length;
  }

  /** A copy of what has been written. */
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

  private need(byteCount: number): void {
    if (this.pos + byteCount > this.buf.length) throw new RangeError('state ends early');
  }

  /** Reads one byte. */
  u8(): number {
    this.need(1);
    return this.buf[this.pos++];
  }

  /** Reads an unsigned varint (as written by `ByteWriter.uvar`). */
  uvar(): number {
    let value = 0;
    let mul = 1;
    for (;;) {
      const byte = this.u8();
      value += (byte & 0x7f) * mul;
      if (byte < 0x80) return value;
      mul *= 0x80;
      if (mul > 2 ** 56) throw new RangeError('varint too long');
    }
  }

  /** Reads a little-endian 64-bit float. */
  f64(): number {
    this.need(8);
    const value = this.view.getFloat64(this.pos, true);
    this.pos += 8;
    return value;
  }

  /** Reads a little-endian 32-bit float. */
  f32(): number {
    this.need(4);
    const value = this.view.getFloat32(this.pos, true);
    this.pos += 4;
    return value;
  }

  /** Reads length-prefixed UTF-8 text. */
  str(): string {
    const length = this.uvar();
    this.need(length);
    const text = dec.decode(this.buf.subarray(this.pos, this.pos + length));
    this.pos += length;
    return text;
  }

  /** Bytes read so far (where the next read starts). */
  get offset(): number {
    return this.pos;
  }

  /** A copy of the bytes from `start` to `end` (offsets as `offset` gives them). */
  copy(start: number, end: number): Uint8Array {
    if (start < 0 || end > this.buf.length || start > end) throw new RangeError('state ends early');
    return this.buf.slice(start, end);
  }

  /** True when every byte has been read. */
  get done(): boolean {
    return this.pos === this.buf.length;
  }
}
