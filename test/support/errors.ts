import { expect } from 'vitest';
import { ShoalError } from '../../src/core/index.js';

/** Expect `fn` to throw a ShoalError with the given code and a message matching `pattern`. */
export function expectShoalError(fn: () => unknown, code: string, pattern: RegExp): void {
  let thrown: unknown;
  try {
    fn();
  } catch (e) {
    thrown = e;
  }
  expect(thrown).toBeInstanceOf(ShoalError);
  expect((thrown as ShoalError).code).toBe(code);
  expect((thrown as ShoalError).message).toMatch(pattern);
}
