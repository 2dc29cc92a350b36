/**
 * Practice→site flow arrays (n·m doubles — 22 MB on a national instance) handed back once a rule's
 * report has been written as text, and given out again, zeroed, for the next rule solved on the
 * same thread. Memory touched for the first time is dear on shared virtual machines (about 7 µs
 * per 4 KB page measured here: ~0.1 s per national flow array, most of it in the operating
 * system), while zeroing memory already in use costs a few milliseconds. Only the command line's
 * JSON writer hands arrays back (`result-json.ts`): its reports are text by then, so nothing reads
 * the array again. Everywhere else arrays are simply new.
 */

/** Arrays below this many entries are not worth keeping. */
const SMALLEST_KEPT = 1 << 16;
/** Arrays kept at most (a thread solves one rule at a time; the next takes one back). */
const KEPT = 2;

const spare: Float64Array[] = [];

/** A zeroed array of `length` doubles: one handed back earlier if one has that length, else new. */
export function flowArray(length: number): Float64Array {
  const index = spare.findIndex((array) => array.length === length);
  if (index < 0) return new Float64Array(length);
  const [array] = spare.splice(index, 1);
  array.fill(0);
  return array;
}

/** Hands an array back for `flowArray`: the caller must never read or write it again. */
export function recycleFlowArray(array: Float64Array): void {
  // (A browser page that is not cross-origin isolated has no SharedArrayBuffer at all.)
  const shared = typeof SharedArrayBuffer !== "undefined" && array.buffer instanceof SharedArrayBuffer;
  if (array.length < SMALLEST_KEPT || spare.includes(array) || shared) return;
  if (spare.length >= KEPT) spare.shift();
  spare.push(array);
}
