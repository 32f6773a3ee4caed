import { describe, expect, it } from 'vitest';
import { isDriftSignal, type JournalRecord, type SummaryRecord } from '../../src/journal/index.js';
import { CAUTION, classScores, escapeHtml, MOST_POINTS, renderReport } from '../../src/report/index.js';
import { note } from '../support/note.js';
import { attribute, openTags, pathPoints, section } from './html.js';
import { journalRun, tiled } from './journal-run.js';

const run = journalRun();
const html = renderReport(run.records, { title: 'STAGGER a → c → b' });
const summary = run.records[run.records.length - 1] as SummaryRecord;
const windows = run.records.filter((r) => r.type === 'window');

/** Every distinct tag name the document opens. */
function tagNames(doc: string): Set<string> {
  return new Set([...doc.matchAll(/<([a-zA-Z][\w-]*)/g)].map((m) => m[1]!.toLowerCase()));
}

/** The rows listed by marks (elements with `data-rows`) of one class, in order. */
function markedRows(doc: string, tag: string, className: string): number[] {
  return openTags(doc, tag, className)
    .flatMap((t) => attribute(t, 'data-rows').split(' ').map(Number))
    .sort((a, b) => a - b);
}

/** Asserts that pixel coordinates are an affine image of data values (to the 0.1 px the document keeps). */
function expectAffine(values: readonly number[], pixels: readonly number[]): void {
  const i = values.indexOf(Math.min(...values));
  const j = values.indexOf(Math.max(...values));
  expect(values[j]).toBeGreaterThan(values[i]!);
  const k = (pixels[j]! - pixels[i]!) / (values[j]! - values[i]!);
  values.forEach((v, n) => {
    expect(Math.abs(pixels[i]! + (v - values[i]!) * k - pixels[n]!)).toBeLessThan(0.11);
  });
}

describe('renderReport on a real journal (bagging over STAGGER a → c → b)', () => {
  it('is one self-contained document: no script, no link, no external resource', () => {
    expect(html.startsWith('<!DOCTYPE html>')).toBe(true);
    for (const outside of [
      'http:',
      'https:',
      'src=',
      'href=',
      'url(',
      '@import',
      '<script',
      '<link',
      '<iframe',
    ]) {
      expect(html).not.toContain(outside);
    }
    note(
      `report of a 9,000-row journal (${run.records.length} records): ${html.length.toLocaleString('en-US')} characters`,
    );
  });

  it('draws one chart with one path per series, through every window record, value for value', () => {
    expect(openTags(html, 'svg', 'metrics')).toHaveLength(1);
    for (const [name, pick] of [
      ['accuracy', (r: (typeof windows)[number]) => r.window.accuracy],
      ['kappa', (r: (typeof windows)[number]) => r.window.kappa],
    ] as const) {
      const paths = openTags(html, 'path', `s-${name}`);
      expect(paths).toHaveLength(1);
      const points = pathPoints(attribute(paths[0]!, 'd'));
      const drawn = windows.filter((w) => pick(w) !== null);
      expect(points).toHaveLength(drawn.length);
      // Rows map onto x and figures onto y by one affine map each (y grows downwards).
      expectAffine(
        drawn.map((w) => w.trained),
        points.map((p) => p.x),
      );
      expectAffine(
        drawn.map((w) => pick(w)!),
        points.map((p) => p.y),
      );
    }
  });

  it('zooms the y axis to the figures drawn, not to 0 … 1', () => {
    const values = windows.flatMap((w) => [w.window.accuracy, w.window.kappa]).filter((v) => v !== null);
    const chart = section(html, 'Accuracy');
    const ticks = [...chart.matchAll(/<text[^>]*class="tick"[^>]*text-anchor="end"[^>]*>(-?[\d.]+)</g)].map(
      (m) => Number(m[1]),
    );
    expect(ticks.length).toBeGreaterThan(2);
    // The lowest tick sits within a step of 0.05 plus a tenth of the span below the lowest figure.
    const low = Math.min(...(values as number[]));
    const high = Math.max(...(values as number[]));
    expect(Math.min(...ticks)).toBeGreaterThanOrEqual(low - (high - low) / 10 - 0.1);
    expect(Math.min(...ticks)).toBeLessThanOrEqual(low);
  });

  it('marks every replacement at its row, under the chart and in its seat’s lane', () => {
    const retired = run.lifecycle.filter((r) => r.to === 'retired');
    expect(retired.length).toBeGreaterThan(0);
    expect(markedRows(html, 'g', 'replacement')).toEqual(retired.map((r) => r.trained).sort((a, b) => a - b));
    const signals = run.lifecycle.filter((r) => isDriftSignal(r.cause)).map((r) => r.trained);
    expect(markedRows(html, 'g', 'drift')).toEqual(signals.sort((a, b) => a - b));
    // Warnings (a member put under watch) have a rug row of their own.
    const warnings = run.lifecycle.filter((r) => r.cause === 'watched').map((r) => r.trained);
    expect(markedRows(html, 'g', 'warning')).toEqual(warnings.sort((a, b) => a - b));
    const lanes = html.split('<g class="lane" ').slice(1);
    lanes.forEach((lane, seat) => {
      const own = retired.filter((r) => r.seat === seat).map((r) => r.trained);
      expect(markedRows(lane, 'g', 'lane-mark')).toEqual(own);
    });
    note(`replacements at rows ${retired.map((r) => `${r.trained} (seat ${r.seat})`).join(', ')}`);
  });

  it('draws one lane per seat, for 1, 10 and 30 seats, with every member id and its learner on hover', () => {
    for (const members of [1, 10, 30]) {
      const r = members === 10 ? run : journalRun({ members, rows: 3000 });
      const doc = members === 10 ? html : renderReport(r.records);
      expect(openTags(doc, 'g', 'lane')).toHaveLength(members);
      const ids = new Set(r.lifecycle.filter((x) => x.to !== 'retired').map((x) => x.member));
      for (const id of ids)
        expect(doc).toMatch(new RegExp(`<title>member ${id} \\(hoeffding-tree\\) (warming|active|watched)`));
    }
  });

  it('shows the confusion matrix with the counts tallied apart from the evaluator', () => {
    const cells = openTags(html, 'td', 'cell');
    expect(cells).toHaveLength(4);
    for (const cell of cells) {
      const a = Number(attribute(cell, 'data-actual'));
      const p = Number(attribute(cell, 'data-predicted'));
      const text = html.slice(html.indexOf(cell) + cell.length).split('<')[0]!;
      expect(Number(text.replace(/,/g, ''))).toBe(run.counted[a]![p]);
    }
    expect(run.counted.flat().reduce((s, c) => s + c, 0)).toBe(summary.rows);
  });

  it('puts the headline figures, the configuration, the schema and the caution on the page', () => {
    const header = html.slice(0, html.indexOf('<section>'));
    expect(header).toContain(`${(100 * summary.accuracy!).toFixed(2)}%`);
    expect(header).toContain(summary.kappa!.toFixed(3));
    expect(header).toContain(summary.kappaNoChange!.toFixed(3));
    expect(section(html, 'Configuration')).toContain('<th>lifecycle</th>');
    expect(section(html, 'Configuration')).toContain('<code>hoeffding-tree</code>');
    for (const f of ['size', 'color', 'shape'])
      expect(section(html, 'Schema')).toContain(`<code>${f}</code>`);
    expect(html).toContain(`<footer>${CAUTION}</footer>`);
  });
});

describe('classScores', () => {
  it('reads precision, recall and F1 from a confusion matrix by their definitions', () => {
    // Matrix from Witten & Frank, Data Mining, 2nd ed., §5.7 (from memory; PUBLISHED.md): rows = actual.
    // Precision = diagonal / column total, recall = diagonal / row total, F1 = 2·d/(row + column)
    // (van Rijsbergen 1979, β = 1, from memory); the expected fractions are worked out by hand here.
    const scores = classScores(
      [
        [88, 10, 2],
        [14, 40, 6],
        [18, 10, 12],
      ],
      ['a', 'b'],
    );
    expect(scores.map((s) => s.name)).toEqual(['a', 'b', 'class 2']);
    expect(scores.map((s) => s.support)).toEqual([100, 60, 40]);
    expect(scores.map((s) => s.predicted)).toEqual([120, 60, 20]);
    const expected = [
      [88 / 120, 88 / 100, 176 / 220],
      [40 / 60, 40 / 60, 80 / 120],
      [12 / 20, 12 / 40, 24 / 60],
    ];
    scores.forEach((s, k) => {
      expect(s.precision).toBeCloseTo(expected[k]![0]!, 12);
      expect(s.recall).toBeCloseTo(expected[k]![1]!, 12);
      expect(s.f1).toBeCloseTo(expected[k]![2]!, 12);
    });
    const none = classScores(
      [
        [0, 0],
        [0, 5],
      ],
      ['x', 'y'],
    )[0]!;
    expect([none.precision, none.recall, none.f1]).toEqual([null, null, null]);
  });

  it('agrees with the evaluator on the real run, and the report shows it', () => {
    const scores = classScores(summary.confusion, summary.classes);
    const perClass = section(html, 'Confusion matrix');
    for (const s of scores) {
      expect(perClass).toContain(
        `<td class="num">${s.precision!.toFixed(3)}</td><td class="num">${s.recall!.toFixed(3)}</td>`,
      );
    }
  });
});

describe('renderReport against hostile journals', () => {
  const evil = '</title></code><script>alert(1)</script><img src=x onerror=alert(1)>';
  const quote = `"><svg onload=alert(2)>'`;
  const run0 = run.records[0]!;
  if (run0.type !== 'run') throw new Error('a journal starts with its run record');
  const hostile: JournalRecord[] = [
    {
      ...run0,
      source: evil,
      startedAt: quote,
      shoal: evil,
      seed: quote,
      config: { [evil]: { [quote]: [evil, 1, null] }, list: [{ name: quote }], plain: evil },
      schema: {
        features: [
          { name: evil, kind: 'numeric', values: 0 },
          { name: quote, kind: 'nominal', values: 2, categories: [evil, quote] },
        ],
      },
    },
    {
      type: 'lifecycle',
      scored: 0,
      trained: 0,
      cause: 'created',
      seat: 0,
      member: 0,
      learner: evil,
      from: null,
      to: 'warming',
      detector: evil,
      estimate: 0,
      reason: evil,
    },
    {
      type: 'lifecycle',
      scored: 10,
      trained: 10,
      cause: 'drift',
      seat: 0,
      member: 0,
      learner: evil,
      from: 'warming',
      to: 'retired',
      detector: evil,
      estimate: 0.5,
      reason: `drift ${quote}`,
    },
    {
      type: 'lifecycle',
      scored: 10,
      trained: 10,
      cause: 'fresh',
      seat: 0,
      member: 1,
      learner: evil,
      from: null,
      to: 'active',
      detector: evil,
      estimate: 0,
      reason: quote,
    },
    { type: 'input-drift', scored: 20, trained: 20, feature: evil, kind: 'numeric', cause: 'missing-share' },
    { ...summary, classes: [evil, quote] },
  ];
  const doc = renderReport(hostile, { title: evil });

  it('escapes every string it reads: no tag, attribute or entity comes from the journal', () => {
    expect(tagNames(doc)).toEqual(
      new Set([
        'html',
        'head',
        'meta',
        'title',
        'style',
        'body',
        'main',
        'header',
        'h1',
        'p',
        'b',
        'div',
        'span',
        'section',
        'h2',
        'svg',
        'line',
        'text',
        'path',
        'g',
        'rect',
        'i',
        'table',
        'thead',
        'tr',
        'th',
        'tbody',
        'td',
        'code',
        'footer',
      ]),
    );
    expect(doc).not.toMatch(/<script|<img|<svg onload/i);
    expect(doc).toContain(escapeHtml(evil));
    expect(doc).toContain(escapeHtml(quote));
    // Every attribute value is one quoted string: no quote from the journal ends one early.
    for (const tag of doc.match(/<[a-z][^>]*>/g)!)
      expect(tag).toMatch(/^<[a-z][\w-]*(\s[\w-]+="[^"<]*")*\/?>$/);
  });

  it('escapeHtml replaces the five characters HTML gives meaning to, and nothing else', () => {
    // HTML Living Standard, "Writing HTML documents" (from memory): & < > " ' .
    expect(escapeHtml(`a&b<c>d"e'f`)).toBe('a&amp;b&lt;c&gt;d&quot;e&#39;f');
    expect(escapeHtml('κ → 0.5 ✓')).toBe('κ → 0.5 ✓');
  });
});

describe('renderReport at scale and on partial journals', () => {
  it('a 5,000,000-row journal: at most MOST_POINTS points per series, and lanes bounded by the plot width', () => {
    const long = tiled(run, 556);
    const rows = (long[long.length - 1] as SummaryRecord).rows;
    expect(rows).toBeGreaterThanOrEqual(5_000_000);
    const doc = renderReport(long);
    for (const name of ['accuracy', 'kappa']) {
      const d = attribute(openTags(doc, 'path', `s-${name}`)[0]!, 'd');
      const points = pathPoints(d);
      expect(points.length).toBeLessThanOrEqual(MOST_POINTS);
      expect(points.length).toBeGreaterThan(MOST_POINTS / 2);
    }
    // The lowest accuracy of the run survives the thinning: the path reaches as low as it does.
    const accuracies = run.records.flatMap((r) =>
      r.type === 'window' && r.window.accuracy !== null ? [r.window.accuracy] : [],
    );
    const short = pathPoints(attribute(openTags(html, 'path', 's-accuracy')[0]!, 'd'));
    const thinned = pathPoints(attribute(openTags(doc, 'path', 's-accuracy')[0]!, 'd'));
    expect(Math.max(...thinned.map((p) => p.y))).toBeCloseTo(Math.max(...short.map((p) => p.y)), 0);
    expect(Math.min(...accuracies)).toBeLessThan(0.9);
    const blocks = openTags(doc, 'rect', 'st-active').length + openTags(doc, 'rect', 'st-warming').length;
    expect(blocks / 10).toBeLessThanOrEqual(458);
    note(
      `5,004,000-row journal (${long.length.toLocaleString('en-US')} records): ` +
        `${doc.length.toLocaleString('en-US')} characters, ${blocks} lane blocks`,
    );
  });

  it('a journal that stopped early (no summary) or holds nothing still renders and says what is missing', () => {
    const early = renderReport(run.records.slice(0, -1));
    expect(early).toContain('no summary record');
    expect(openTags(early, 'path', 's-accuracy')).toHaveLength(1);
    const empty = renderReport([]);
    expect(empty).toContain('No run record.');
    expect(empty).toContain('no window records');
    expect(empty).toContain('no lifecycle records');
    expect(empty).toContain(`<footer>${CAUTION}</footer>`);
  });
});
