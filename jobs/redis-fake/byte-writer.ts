/**
 * A growable byte buffer for the codec libraries (cjson, cmsgpack) of the in-memory Redis.
 *
 * Contract: appends bytes and big-endian numbers; `bytes()` returns exactly what was written.
 *
 * Not covered yet: nothing beyond what the codecs need.
 */
export class ByteWriter {
  private buf = new Uint8Array(256);
  private view = new DataView(this.buf.buffer);
  length = 0;

  private ensure(extra: number): void {
    const need = this.length + extra;
    if (need <= this.buf.length) return;
    let size = this.buf.length * 2;
    while (size < need) size *= 2;
    const next = new Uint8Array(size);
    next.set(this.buf.subarray(0, this.length));
    this.buf = next;
    this.view = new DataView(next.buffer);
  }
  byte(b: number): void {
    this.ensure(1);
    this.buf[this.length++] = b;
  }
  bytes2(a: number, b: number): void {
    this.ensure(2);
    this.buf[this.length++] = a;
    this.buf[this.length++] = b;
  }
  append(bytes: Uint8Array): void {
    this.ensure(bytes.length);
    this.buf.set(bytes, this.length);
    this.length += bytes.length;
  }
  ascii(s: string): void {
    this.ensure(s.length);
    for (let i = 0; i < s.length; i++) this.buf[this.length++] = s.charCodeAt(i);
  }
  u16(n: number): void {
    this.ensure(2);
    this.view.setUint16(this.length, n);
    this.length += 2;
  }
  u32(n: number): void {
    this.ensure(4);
    this.view.setUint32(this.length, n);
    this.length += 4;
  }
  u64(n: bigint): void {
    this.ensure(8);
    this.view.setBigUint64(this.length, n);
    this.length += 8;
  }
  i64(n: bigint): void {
    this.ensure(8);
    this.view.setBigInt64(this.length, n);
    this.length += 8;
  }
  f32(n: number): void {
    this.ensure(4);
    this.view.setFloat32(this.length, n);
    this.length += 4;
  }
  f64(n: number): void {
    this.ensure(8);
    this.view.setFloat64(this.length, n);
    this.length += 8;
  }
  bytes(): Uint8Array {
    return this.buf.subarray(0, this.length);
  }
}
