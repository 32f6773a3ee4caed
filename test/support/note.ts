/**
 * Print a figure a test measured (a rate, a delay, an accuracy) so that it shows in the test output.
 * Written straight to stdout: the console is reserved for mistakes (see setup.ts).
 */
export function note(line: string): void {
  process.stdout.write(`  · ${line}\n`);
}
