import { readFileSync } from 'node:fs';

/** Shoal's version, from its package.json (read once, when asked). */
export function shoalVersion(): string {
  const url = new URL('../../package.json', import.meta.url);
  return (JSON.parse(readFileSync(url, 'utf8')) as { version: string }).version;
}
