import { mkdtemp } from 'node:fs/promises';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { main } from '../../src/cli/main.js';
import type { Terminal } from '../../src/cli/terminal.js';

/** What a command printed and returned, run in-process. */
export interface Ran {
  readonly code: number;
  readonly out: string;
  readonly err: string;
}

/** Run `shoal ARGS` in-process with a captured, non-interactive terminal. */
export function shoal(...args: string[]): Promise<Ran> {
  return shoalOn({ interactive: false }, ...args);
}

/** Run `shoal ARGS` in-process with a captured terminal of the given kind (interactive, width). */
export async function shoalOn(
  kind: Pick<Terminal, 'interactive' | 'columns'>,
  ...args: string[]
): Promise<Ran> {
  let out = '';
  let err = '';
  const terminal: Terminal = {
    out: (t) => {
      out += t;
    },
    err: (t) => {
      err += t;
    },
    ...kind,
    now: () => performance.now(),
  };
  const code = await main(args, terminal);
  return { code, out, err };
}

/** A fresh temporary directory for one test's files. */
export function scratch(): Promise<string> {
  return mkdtemp(join(tmpdir(), 'shoal-test-'));
}
