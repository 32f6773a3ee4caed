import { describe, expect, it } from 'vitest';
import type { SummaryRecord } from '../../src/journal/index.js';
import { confusionTables } from '../../src/report/confusion.js';

describe('the confusion matrix', () => {
  it('lists classes by name (numbers by value), whatever order the stream met them in, and keeps each count in its cell', () => {
    const classes = ['b', '10', 'a', '2'];
    // confusion[actual][predicted], in the stream's class codes.
    const confusion = [
      [5, 1, 0, 0],
      [0, 7, 2, 0],
      [1, 0, 9, 0],
      [0, 0, 3, 4],
    ];
    const html = confusionTables({ confusion, classes } as unknown as SummaryRecord);
    const header = html.slice(html.indexOf('<thead>'), html.indexOf('</thead>'));
    const names = [...header.matchAll(/<th class="num">([^<]+)<\/th>/g)].map((m) => m[1]);
    expect(names).toEqual(['2', '10', 'a', 'b', 'total']);
    for (let a = 0; a < 4; a++) {
      for (let p = 0; p < 4; p++) {
        const cell = new RegExp(`data-actual="${a}" data-predicted="${p}"[^>]*>(\\d+)<`).exec(html);
        expect(Number(cell![1])).toBe(confusion[a]![p]);
      }
    }
    const rows = [...html.matchAll(/<tr><th>([^<]+)<\/th><td class="cell/g)].map((m) => m[1]);
    expect(rows).toEqual(['2', '10', 'a', 'b']);
  });
});
