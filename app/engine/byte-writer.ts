/**
 * UTF-8 bytes written piece by piece into a list of chunks, for large JSON texts (a national
 * result's practice→site flows are tens of MB). Bytes rather than strings: joining millions of
 * short strings costs more than the text itself, and byte chunks can be handed from a worker
 * thread to the main thread without a copy and written to stdout as they are.
 *
 * Why chunks rather than one growing buffer: on a national report a doubling buffer ends at
 * 64 MB, and every growth copies all that was written into fresh memory — about twice the
 * text's size touched for the first time, and first touches (page faults) are what writing
 * costs most. Chunks are never copied and never much larger than what they hold. Each write
 * reserves room for its whole text in one chunk, so no character or key is ever split between
 * two chunks (writes larger than a chunk get a chunk of their own).
 */
const encoder = new TextEncoder();

/** The first chunk's size; each next chunk doubles, up to MAX_CHUNK_BYTES (small texts stay small). */
const FIRST_CHUNK_BYTES = 1 << 16;
const MAX_CHUNK_BYTES = 1 << 20;

export class ByteWriter {
  private readonly full: Uint8Array[] = [];
  private bytes: Uint8Array;
  private used = 0;
  private readonly maxChunkBytes: number;

  constructor(firstChunkBytes = FIRST_CHUNK_BYTES, maxChunkBytes = MAX_CHUNK_BYTES) {
    this.bytes = new Uint8Array(firstChunkBytes);
    this.maxChunkBytes = Math.max(firstChunkBytes, maxChunkBytes);
  }

  /** Room for `extra` more bytes in the current chunk: a new chunk when they do not fit. */
  private reserve(extra: number): void {
    if (this.used + extra <= this.bytes.length) return;
    if (this.used > 0) this.full.push(this.bytes.subarray(0, this.used));
    this.bytes = new Uint8Array(Math.max(extra, Math.min(this.bytes.length * 2, this.maxChunkBytes)));
    this.used = 0;
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
    let keyBytes = 0;
    for (const key of keys) keyBytes += key.length;
    this.reserve(to - from + keyBytes + keys.length * separator.length);
    // Locals, not fields, and no helper calls in the loop: it runs once per character of tens of MB.
    const bytes = this.bytes;
    const separatorLength = separator.length;
    let used = this.used;
    let key = keys[0];
    for (let k = 0; k < key.length; k++) bytes[used++] = key[k];
    let next = 1;
    for (let c = from; c < to; c++) {
      const code = value.charCodeAt(c);
      if (code !== 44) {
        bytes[used++] = code;
        continue;
      }
      for (let k = 0; k < separatorLength; k++) bytes[used++] = separator[k];
      key = keys[next++];
      for (let k = 0; k < key.length; k++) bytes[used++] = key[k];
    }
    this.used = used;
  }

  /**
   * A compact JSON object from `JSON.stringify` of an array of alternating keys and values
   * (`["k1",v1,"k2",v2]`): the same text with the brackets made braces and the comma after each
   * key made a colon — `{"k1":v1,"k2":v2}`. Written natively in one piece and patched in place,
   * which is several times faster than copying it character by character. The values must be
   * numbers (ASCII, no commas). `keys` locates the keys' commas: null when no key holds a comma or
   * a non-ASCII character (then the commas alternate: key, value, key, …); otherwise `lengths[e]`
   * is entry e's key as JSON text (UTF-16 units) and `extraBytes[e]` how many more bytes than
   * that it takes in UTF-8.
   */
  compactObjectFromPairs(pairsText: string, keys: { lengths: readonly number[]; extraBytes: readonly number[] } | null): void {
    this.reserve(pairsText.length * 3);
    const base = this.used;
    const written = encoder.encodeInto(pairsText, this.bytes.subarray(base)).written;
    const bytes = this.bytes;
    bytes[base] = 123; // {
    bytes[base + written - 1] = 125; // }
    if (!keys) {
      // Text and bytes line up, and every other comma ends a key.
      let comma = pairsText.indexOf(",");
      while (comma >= 0) {
        bytes[base + comma] = 58; // : after a key
        const afterValue = pairsText.indexOf(",", comma + 1);
        if (afterValue < 0) break;
        comma = pairsText.indexOf(",", afterValue + 1);
      }
    } else {
      let position = 1;
      let extra = 0;
      for (let entry = 0; entry < keys.lengths.length; entry++) {
        const comma = position + keys.lengths[entry];
        // Bytes beyond one per UTF-16 unit, up to this comma: earlier keys' and this key's.
        extra += keys.extraBytes[entry];
        bytes[base + comma + extra] = 58; // :
        position = pairsText.indexOf(",", comma + 1) + 1;
      }
    }
    this.used = base + written;
  }

  /** The bytes written, as chunks in order (views of the writer's memory: the writer must not be used afterwards). */
  finish(): Uint8Array[] {
    return this.used > 0 ? [...this.full, this.bytes.subarray(0, this.used)] : [...this.full];
  }
}

/** `text` as UTF-8 bytes. */
export function utf8(text: string): Uint8Array {
  return encoder.encode(text);
}
