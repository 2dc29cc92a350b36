/**
 * The report writer's byte chunks (`byte-writer.ts`): whatever the chunk sizes, the chunks joined
 * in order are the text's UTF-8 encoding (RFC 3629) — no character, key or number is split or
 * lost where one chunk ends and the next begins. Tiny chunks put a boundary next to nearly every
 * write, including multi-byte characters and keys.
 */
import { describe, expect, it } from "vitest";
import { ByteWriter, utf8 } from "~/engine/byte-writer";

const joined = (chunks: Uint8Array[]) => Buffer.concat(chunks).toString("utf8");

describe("a ByteWriter's chunks joined are the text written", () => {
  it("texts with multi-byte characters, written into 4- to 16-byte chunks", () => {
    const writer = new ByteWriter(4, 16);
    const pieces = ["ab", "✓é", "x".repeat(20), "", "Skåne — “quoted” 🙂", "z", "ü".repeat(9)];
    for (const piece of pieces) writer.text(piece);
    const chunks = writer.finish();
    expect(chunks.length).toBeGreaterThan(2);
    expect(joined(chunks)).toBe(pieces.join(""));
    // No chunk is larger than its limit unless one write alone needed more (3 bytes per UTF-16 unit at most).
    for (const chunk of chunks) expect(chunk.length).toBeLessThanOrEqual(Math.max(16, 3 * 20));
  });

  it("raw bytes and numbers with keys in place of commas, across chunk boundaries", () => {
    const writer = new ByteWriter(8, 8);
    const keys = ['"Ünal":', '"b":', '"✓ c":'].map(utf8);
    writer.raw(utf8("{"));
    writer.asciiWithKeys("[1.5,2e-7,3]", 1, 11, utf8(","), keys);
    writer.raw(utf8("}"));
    writer.raw(utf8("x".repeat(40)));
    expect(joined(writer.finish())).toBe(`{"Ünal":1.5,"b":2e-7,"✓ c":3}${"x".repeat(40)}`);
  });

  it("objects from key–value pairs, plain keys and keys with commas or non-ASCII letters", () => {
    const writer = new ByteWriter(16, 32);
    writer.compactObjectFromPairs(JSON.stringify(["S1", 0.25, "S2", 1e-9]), null);
    const pairs = ["a,b", 1, "Ünal ✓", 2.5, "c", 3];
    const keys = pairs.filter((_, k) => k % 2 === 0).map((key) => JSON.stringify(key));
    writer.compactObjectFromPairs(JSON.stringify(pairs), {
      lengths: keys.map((key) => key.length),
      extraBytes: keys.map((key) => utf8(key).length - key.length),
    });
    const chunks = writer.finish();
    expect(chunks.length).toBeGreaterThan(1);
    expect(joined(chunks)).toBe('{"S1":0.25,"S2":1e-9}{"a,b":1,"Ünal ✓":2.5,"c":3}');
  });

  it("nothing written gives no chunks", () => {
    expect(new ByteWriter().finish()).toEqual([]);
  });
});
