import type { TextLayout } from './writer.js';

/**
 * The NDJSON layout of a writer (`src/files/` writes it to disk): one JSON object per line, keys in column order. A missing value or label is null
 * (JSON has no NaN; ±Infinity are written as null too); nominal codes are written as their category
 * names; labels as class names, or as numbers with `labels: 'code'`.
 *
 * @example
 * const writer = await createTextWriter('sea.ndjson', { schema: gen.schema, classes: gen.classes }, ndjsonLayout());
 */
export function ndjsonLayout(): TextLayout {
  let keys: string[] = [];
  return {
    header(plan) {
      keys = plan.columns().map((n) => `${JSON.stringify(n)}:`);
      return null;
    },
    row(plan, block, r) {
      const parts: string[] = [];
      let k = 0;
      if (plan.id !== null) parts.push(keys[k++]! + JSON.stringify(block.ids![r]!));
      const base = r * plan.width;
      for (let j = 0; j < plan.width; j++) {
        const v = block.values[base + j]!;
        const categories = plan.categories[j];
        const text = !Number.isFinite(v) ? 'null' : categories ? JSON.stringify(categories[v]!) : String(v);
        parts.push(keys[k++]! + text);
      }
      const label = block.labels === null ? Number.NaN : block.labels[r]!;
      const labelText = plan.labelText(label);
      const shown = labelText === null ? 'null' : plan.labelsAsCodes ? labelText : JSON.stringify(labelText);
      parts.push(keys[k]! + shown);
      return `{${parts.join(',')}}`;
    },
  };
}
