import { afterEach, beforeEach, vi } from 'vitest';

/**
 * A test that writes to the console fails: stray output hides real failures. Tests that must show a
 * figure (a false-alarm rate, a recovery time) call `note()` from `test/support/note.ts` instead.
 */
const methods = ['log', 'info', 'warn', 'error', 'debug'] as const;
let calls: string[] = [];

beforeEach(() => {
  calls = [];
  for (const m of methods) {
    vi.spyOn(console, m).mockImplementation((...args: unknown[]) => {
      calls.push(`console.${m}: ${args.map(String).join(' ')}`);
    });
  }
});

afterEach(() => {
  vi.restoreAllMocks();
  if (calls.length > 0) throw new Error(`the test wrote to the console:\n${calls.join('\n')}`);
});
