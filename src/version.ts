import { readFileSync } from 'node:fs';

/** vibgate's name and version, from package.json (one level above both src/ and dist/). */
export const tool: { name: string; version: string } = (() => {
  const pkg = JSON.parse(readFileSync(new URL('../package.json', import.meta.url), 'utf8')) as { name: string; version: string };
  return { name: pkg.name, version: pkg.version };
})();
