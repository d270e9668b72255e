/**
 * Writer of PostgreSQL's binary COPY format (PostgreSQL documentation, "COPY", section "Binary
 * Format"): a signature and header, then per tuple an int16 field count and, per field, an int32
 * length and the value in the type's binary send format (network byte order).
 */

const SIGNATURE = [0x50, 0x47, 0x43, 0x4f, 0x50, 0x59, 0x0a, 0xff, 0x0d, 0x0a, 0x00];
const INT2_OID = 21;
const TWO_32 = 2 ** 32;

export class BinaryCopyWriter {
  private buf: Uint8Array;
  private view: DataView;
  private pos = 0;
  rows = 0;

  constructor(initialBytes = 1 << 16) {
    this.buf = new Uint8Array(initialBytes);
    this.view = new DataView(this.buf.buffer);
    for (const b of SIGNATURE) this.buf[this.pos++] = b;
    this.view.setInt32(this.pos, 0); // flags
    this.view.setInt32(this.pos + 4, 0); // header extension length
    this.pos += 8;
  }

  private ensure(n: number): void {
    if (this.pos + n <= this.buf.length) return;
    let size = this.buf.length * 2;
    while (size < this.pos + n) size *= 2;
    const next = new Uint8Array(size);
    next.set(this.buf.subarray(0, this.pos));
    this.buf = next;
    this.view = new DataView(next.buffer);
  }

  /** Start a tuple of `fields` fields. */
  tuple(fields: number): this {
    this.ensure(2);
    this.view.setInt16(this.pos, fields);
    this.pos += 2;
    this.rows++;
    return this;
  }

  int2(v: number): this {
    this.ensure(6);
    this.view.setInt32(this.pos, 2);
    this.view.setInt16(this.pos + 4, v);
    this.pos += 6;
    return this;
  }

  int4(v: number): this {
    this.ensure(8);
    this.view.setInt32(this.pos, 4);
    this.view.setInt32(this.pos + 4, v);
    this.pos += 8;
    return this;
  }

  /** int8 from a safe integer (|v| < 2^53). */
  int8(v: number): this {
    this.ensure(12);
    this.view.setInt32(this.pos, 8);
    const hi = Math.floor(v / TWO_32);
    this.view.setInt32(this.pos + 4, hi);
    this.view.setUint32(this.pos + 8, v - hi * TWO_32);
    this.pos += 12;
    return this;
  }

  float4(v: number): this {
    this.ensure(8);
    this.view.setInt32(this.pos, 4);
    this.view.setFloat32(this.pos + 4, v);
    this.pos += 8;
    return this;
  }

  /** timestamptz: microseconds since 2000-01-01T00:00:00Z. */
  timestampUs(us: number): this {
    return this.int8(us);
  }

  null(): this {
    this.ensure(4);
    this.view.setInt32(this.pos, -1);
    this.pos += 4;
    return this;
  }

  /** text from a string (UTF-8). */
  text(s: string): this {
    const bytes = Buffer.from(s, 'utf8');
    this.ensure(4 + bytes.length);
    this.view.setInt32(this.pos, bytes.length);
    this.buf.set(bytes, this.pos + 4);
    this.pos += 4 + bytes.length;
    return this;
  }

  /** A one-dimensional smallint[] (array_send layout: ndim, has-null flag, element OID, size, lower bound, elements). */
  int2Array(values: ArrayLike<number>): this {
    const n = values.length;
    this.ensure(4 + 20 + n * 6);
    this.view.setInt32(this.pos, 20 + n * 6);
    this.view.setInt32(this.pos + 4, 1);
    this.view.setInt32(this.pos + 8, 0);
    this.view.setInt32(this.pos + 12, INT2_OID);
    this.view.setInt32(this.pos + 16, n);
    this.view.setInt32(this.pos + 20, 1);
    let p = this.pos + 24;
    for (let i = 0; i < n; i++) {
      this.view.setInt32(p, 2);
      this.view.setInt16(p + 4, values[i]!);
      p += 6;
    }
    this.pos = p;
    return this;
  }

  /** The finished COPY data, trailer included. */
  finish(): Uint8Array {
    this.ensure(2);
    this.view.setInt16(this.pos, -1);
    return this.buf.subarray(0, this.pos + 2);
  }
}
