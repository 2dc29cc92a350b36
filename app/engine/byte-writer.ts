/**
 * A growing buffer of UTF-8 bytes, for writing large JSON texts piece by piece (a national
 * result's practice→site flows are tens of MB). Bytes rather than strings: joining millions of
 * short strings costs more than the text itself, and a byte buffer can be handed from a worker
 * thread to the main thread without a copy and written to stdout as it is.
 */
const encoder = new TextEncoder();

export class ByteWriter {
  private bytes: Uint8Array;
  private used = 0;

  constructor(initialBytes = 1 << 16) {
    this.bytes = new Uint8Array(initialBytes);
  }

  /** Room for `extra` more bytes (the buffer doubles as needed). */
  private reserve(extra: number): void {
    if (this.used + extra <= this.bytes.length) return;
    let size = this.bytes.length * 2;
    while (size < this.used + extra) size *= 2;
    const grown = new Uint8Array(size);
    grown.set(this.bytes.subarray(0, this.used));
    this.bytes = grown;
  }

  /** Any text, encoded as UTF-8. */
  text(value: string): void {
    // UTF-8 takes at most 3 bytes per UTF-16 code unit.
    this.reserve(value.length * 3);
    this.used += encoder.encodeInto(value, this.bytes.subarray(this.used)).written;
  }

  /** Bytes already encoded (e.g. a key written many times). */
  raw(value: Uint8Array): void {
    this.reserve(value.length);
    if (value.length < 32) {
      // A loop is cheaper than `set` for the short keys this is used for.
      for (let k = 0; k < value.length; k++) this.bytes[this.used + k] = value[k];
    } else {
      this.bytes.set(value, this.used);
    }
    this.used += value.length;
  }

  /**
   * The characters of `value` from `from` to `to` (exclusive), which must be ASCII (as JSON's
   * numbers are), one byte each; `separator` and the next of `keys` are written in place of each
   * comma. This is how a JSON array of numbers becomes the entries of an object (`keyedNumbers`).
   */
  asciiWithKeys(value: string, from: number, to: number, separator: Uint8Array, keys: readonly Uint8Array[]): void {
    let next = 0;
    this.raw(keys[next++]);
    this.reserve(to - from);
    for (let c = from; c < to; c++) {
      const code = value.charCodeAt(c);
      if (code === 44) {
        // Room for the separator, the key and every character still to come.
        this.reserve(separator.length + keys[next].length + (to - c));
        this.raw(separator);
        this.raw(keys[next++]);
      } else {
        this.bytes[this.used++] = code;
      }
    }
  }

  /** The bytes written so far (a view of the buffer: the writer must not be used afterwards). */
  finish(): Uint8Array {
    return this.bytes.subarray(0, this.used);
  }
}

/** `text` as UTF-8 bytes. */
export function utf8(text: string): Uint8Array {
  return encoder.encode(text);
}
