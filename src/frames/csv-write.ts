import type { TextLayout } from './writer.js';

/** Quote a field when RFC 4180 §2 requires it: it holds a comma, a double quote or a line break. */
export function csvField(text: string): string {
  return /[",\r\n]/.test(text) ? `"${text.replaceAll('"', '""')}"` : text;
}

/**
 * The CSV layout of a writer (`src/files/` writes it to disk): a header row, then one line per row. Numbers are written in the shortest form that
 * reads back as the same double (ECMAScript Number::toString); missing values and labels are empty
 * fields; nominal codes are written as their category names.
 *
 * @example
 * const writer = await createTextWriter('sea.csv', { schema: gen.schema, classes: gen.classes }, csvLayout());
 */
export function csvLayout(): TextLayout {
  return {
    header: (plan) => plan.columns().map(csvField).join(','),
    row(plan, block, r) {
      const cells: string[] = [];
      if (plan.id !== null) cells.push(csvField(block.ids![r]!));
      const base = r * plan.width;
      for (let j = 0; j < plan.width; j++) {
        const v = block.values[base + j]!;
        const categories = plan.categories[j];
        cells.push(Number.isNaN(v) ? '' : categories ? csvField(categories[v]!) : String(v));
      }
      const label = block.labels === null ? null : plan.labelText(block.labels[r]!);
      cells.push(label === null ? '' : csvField(label));
      return cells.join(',');
    },
  };
}
