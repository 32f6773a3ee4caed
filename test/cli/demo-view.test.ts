import { describe, expect, it } from 'vitest';
import { scratch, shoalOn } from '../support/cli.js';

/** The escape that starts a terminal control sequence. */
const ESC = String.fromCharCode(27);

/**
 * The demo's terminal view (an interactive terminal, redrawn in place): its last frame agrees with the
 * summary printed after it, so a user reading both sees one count of drift signals and replacements.
 */
describe('shoal demo on an interactive terminal', () => {
  it('draws the view in place and its last frame counts what the summary counts', async () => {
    const dir = await scratch();
    const { code, out, err } = await shoalOn(
      { interactive: true, columns: 130 },
      'demo',
      '--rows',
      '20000',
      '--out',
      dir,
    );
    expect(code).toBe(0);
    // Redrawn in place: the cursor climbs back over the previous frame.
    expect(err).toMatch(new RegExp(`${ESC}\\[\\d+F`));
    // No line of the view is wider than the terminal (a wrapped line would break the redraw).
    const drawn = err.split('\n').filter((l) => l.includes(`${ESC}[2K`));
    expect(drawn.length).toBeGreaterThan(0);
    for (const line of drawn)
      expect(line.replace(new RegExp(`${ESC}\\[[0-9;]*[A-Za-z]`, 'g'), '').length).toBeLessThanOrEqual(130);
    const frames = [...err.matchAll(/drift signals (\d[\d,]*) {3}replacements (\d[\d,]*)/g)];
    const last = frames.at(-1)!;
    const summary = (name: string) => new RegExp(`^ {2}${name} +(\\d[\\d,]*)$`, 'm').exec(out)?.[1];
    expect(summary('drift signals')).toBeDefined();
    expect(last[1]).toBe(summary('drift signals'));
    expect(last[2]).toBe(summary('replacements'));
    expect(Number(last[1]!.replace(/,/g, ''))).toBeGreaterThan(0);
  });
});
