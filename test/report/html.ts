/** Small readers of the report's markup for tests: elements by class, attributes, path points. */

/** The opening tags of `tag` elements whose class list holds `className`. */
export function openTags(html: string, tag: string, className: string): string[] {
  const pattern = new RegExp(`<${tag}\\b[^>]*\\bclass="([^"]*)"[^>]*>`, 'g');
  return [...html.matchAll(pattern)].filter((m) => m[1]!.split(' ').includes(className)).map((m) => m[0]);
}

/** The value of attribute `name` in an opening tag. */
export function attribute(tag: string, name: string): string {
  const m = new RegExp(`\\s${name}="([^"]*)"`).exec(tag);
  if (m === null) throw new Error(`no ${name} in ${tag}`);
  return m[1]!;
}

/** The (x, y) points of an SVG path made of M and L commands. */
export function pathPoints(d: string): { x: number; y: number; move: boolean }[] {
  return [...d.matchAll(/([ML])(-?[\d.]+) (-?[\d.]+)/g)].map((m) => ({
    x: Number(m[2]),
    y: Number(m[3]),
    move: m[1] === 'M',
  }));
}

/** The markup of the report section headed `heading`. */
export function section(html: string, heading: string): string {
  const start = html.indexOf(`<h2>${heading}`);
  if (start < 0) throw new Error(`no section ${heading}`);
  return html.slice(start, html.indexOf('</section>', start));
}
