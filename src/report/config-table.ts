import type { FeatureSchema } from '../core/index.js';
import { escapeHtml } from './escape.js';
import { grouped } from './format.js';

/** Categories of a nominal feature listed before the rest is counted. */
const MOST_CATEGORIES = 12;

/**
 * A configuration as nested key–value tables: an object is a table of its keys, a list of plain
 * values reads as one comma-separated line, a list of objects as a table keyed [0], [1], …
 *
 * @example
 * configTable({ ensemble: { kind: 'bagging', members: 10 } });
 */
export function configTable(value: unknown): string {
  if (Array.isArray(value)) {
    if (value.every((v) => !isNested(v))) return `<code>${value.map(plain).join(', ') || '[ ]'}</code>`;
    return table(value.map((v, i) => [`[${i}]`, v]));
  }
  if (typeof value === 'object' && value !== null) return table(Object.entries(value));
  return `<code>${plain(value)}</code>`;
}

function isNested(value: unknown): boolean {
  return typeof value === 'object' && value !== null;
}

function table(entries: readonly (readonly [string, unknown])[]): string {
  if (entries.length === 0) return '<code>{ }</code>';
  const rows = entries.map(([k, v]) => `<tr><th>${escapeHtml(k)}</th><td>${configTable(v)}</td></tr>`);
  return `<table class="kv"><tbody>${rows.join('')}</tbody></table>`;
}

function plain(value: unknown): string {
  return escapeHtml(typeof value === 'string' ? value : String(value));
}

/** The features of a schema: position, name, kind and, for a nominal feature, its categories. */
export function schemaTable(schema: FeatureSchema): string {
  const rows = schema.features.map((f, i) => {
    let values = '';
    if (f.kind === 'nominal') {
      const names = f.categories ?? [];
      const shown = names.slice(0, MOST_CATEGORIES).map(escapeHtml).join(', ');
      const more =
        names.length > MOST_CATEGORIES ? `, … ${grouped(names.length - MOST_CATEGORIES)} more` : '';
      values = `${grouped(f.values)} codes${shown === '' ? '' : `: ${shown}${more}`}`;
    }
    return `<tr><td class="num">${i}</td><td><code>${escapeHtml(f.name)}</code></td><td>${escapeHtml(f.kind)}</td><td>${values}</td></tr>`;
  });
  return (
    '<table class="schema"><thead><tr><th class="num">#</th><th>feature</th><th>kind</th><th>values</th></tr></thead>' +
    `<tbody>${rows.join('')}</tbody></table>`
  );
}
