import { escapeHtml } from './escape.js';

/** A coordinate or length for SVG markup: one decimal is below a pixel and keeps documents small. */
export function px(value: number): string {
  return String(Math.round(value * 10) / 10);
}

/** An SVG element with attributes (values escaped) and inner markup (already escaped by its maker). */
export function svgElement(
  tag: string,
  attributes: Readonly<Record<string, string | number>>,
  inner = '',
): string {
  let open = `<${tag}`;
  for (const [name, value] of Object.entries(attributes)) {
    open += ` ${name}="${typeof value === 'number' ? px(value) : escapeHtml(value)}"`;
  }
  return inner === '' ? `${open}/>` : `${open}>${inner}</${tag}>`;
}

/** A hover text: an SVG `<title>` child, escaped. */
export function svgTitle(text: string): string {
  return `<title>${escapeHtml(text)}</title>`;
}

/** A text label at (x, y). */
export function svgText(x: number, y: number, text: string, className: string, anchor = 'start'): string {
  return svgElement('text', { x, y, class: className, 'text-anchor': anchor }, escapeHtml(text));
}
