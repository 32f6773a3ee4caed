import type { FrameDecoder } from '../frames/index.js';
import { count } from './terminal.js';

/**
 * The schema a run uses, as printed to stderr before the first row is scored: one line per feature
 * with its kind (and, for a nominal feature, how many codes its vocabulary has), then the label.
 *
 * @example
 * schema of legs.csv (inferred from the first rows; missing: "", "NA"):
 *   box_temp_mean  numeric
 *   product        nominal, 32 codes
 *   label          rejected, classes named by the column's values
 */
export function describeSchema(file: string, decoder: FrameDecoder, declared: boolean): string {
  const schema = decoder.schema!;
  const { label, missing } = decoder.options;
  const shown = missing.map((m) => JSON.stringify(m)).join(', ');
  const origin = declared ? 'declared' : 'inferred from the first rows';
  const rows: [string, string][] = schema.features.map((f) => [
    f.name,
    f.kind === 'numeric'
      ? 'numeric'
      : `nominal, ${f.values} codes${f.categories === undefined ? '' : ` (${f.categories.length} named)`}`,
  ]);
  const binding = decoder.binding;
  if (binding !== null && binding.names[0] === '' && !binding.features.includes(0))
    rows.unshift(['(unnamed)', 'row index (the first column has no name): not a feature']);
  const mode = decoder.labelMode;
  if (label !== null && binding !== null && binding.label >= 0) {
    const reading =
      mode === 'value'
        ? 'regression target (numbers)'
        : mode === 'name'
          ? 'classes named by its values'
          : 'class codes 0, 1, …';
    rows.push([label, `label, ${reading}`]);
  }
  const wide = Math.max(...rows.map((r) => r[0].length));
  return `schema of ${file} (${origin}; missing: ${shown}):\n${rows.map(([k, v]) => `  ${k.padEnd(wide)}  ${v}`).join('\n')}\n`;
}

/** One warning per nominal feature whose vocabulary overflowed, with the count; empty when none did. */
export function overflowWarnings(decoder: FrameDecoder): string {
  return decoder
    .overflows()
    .map(
      (o) =>
        `warning: column ${JSON.stringify(o.feature)} has more categories than its ${o.codes} codes: ${count(o.values)} values after the first ${o.codes - 1} categories shared one overflow code (raise inputs.vocabulary or declare the categories)\n`,
    )
    .join('');
}
