/** A stray console.error in a test is a failure: it usually hides a real fault. */
import { afterEach } from "vitest";

let errors: unknown[][] = [];
const original = console.error;

console.error = (...args: unknown[]) => {
  errors.push(args);
  original(...args);
};

afterEach(() => {
  const seen = errors;
  errors = [];
  if (seen.length > 0) {
    throw new Error(`console.error was called during the test:\n${seen.map((args) => args.map(String).join(" ")).join("\n")}`);
  }
});
