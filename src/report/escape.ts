/**
 * Escape a string for HTML text and for a double- or single-quoted attribute value, in both the HTML
 * body and inline SVG (HTML Living Standard, "Writing HTML documents", from memory: `&` opens a
 * character reference, `<` a tag, a quote ends an attribute value). Every string read from a journal goes through here.
 *
 * @example
 * escapeHtml('<b class="x">'); // '&lt;b class=&quot;x&quot;&gt;'
 */
export function escapeHtml(text: string): string {
  return text.replace(/[&<>"']/g, (c) => ENTITIES[c]!);
}

const ENTITIES: Readonly<Record<string, string>> = {
  '&': '&amp;',
  '<': '&lt;',
  '>': '&gt;',
  '"': '&quot;',
  "'": '&#39;',
};
