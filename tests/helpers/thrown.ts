import { expect, it } from "vitest";

/** The error of class `cls` that `fn` throws; fails the test if it throws nothing or something else. */
export function thrown<E>(fn: () => unknown, cls: abstract new (...args: never[]) => E): E {
  try {
    fn();
  } catch (e) {
    if (e instanceof cls) return e;
    throw e;
  }
  throw new Error(`expected a ${cls.name}`);
}

/** One test per refused text: the error `errorOf` gives names its line (and column), with the message. */
export function itRefuses(
  refused: readonly (readonly [name: string, text: string, line: number, column: string, message: RegExp])[],
  errorOf: (text: string) => { line: number; column?: string | null; message: string },
): void {
  for (const [name, text, line, column, message] of refused) {
    it(`refuses ${name}, naming line ${line}${column ? ` and column ${column}` : ""}`, () => {
      const e = errorOf(text);
      expect(e.line).toBe(line);
      if (column) expect(e.column).toBe(column);
      expect(e.message).toMatch(message);
    });
  }
}
