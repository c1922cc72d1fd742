/**
 * docs/bad-input.md promises that every row of its catalogue is backed by a test: each
 * row must name at least one `file › test name`, and each name must be a test (or a
 * describe block) in that file.
 */
import { describe, expect, it } from 'vitest';
import { existsSync, readFileSync } from 'node:fs';
import { fileURLToPath } from 'node:url';

const root = fileURLToPath(new URL('../../', import.meta.url));
const doc = readFileSync(`${root}docs/bad-input.md`, 'utf8');

/** Table rows (not the header or the separator) with the references in their last cell. */
function rows(): Array<{ row: string; refs: Array<{ file: string; name: string }> }> {
  const out: Array<{ row: string; refs: Array<{ file: string; name: string }> }> = [];
  const lines = doc.split('\n').filter((l) => l.startsWith('|'));
  for (let i = 0; i < lines.length; i++) {
    const line = lines[i];
    if (/^\|[-| ]+\|$/.test(line) || lines[i + 1]?.match(/^\|[-| ]+\|$/)) continue;
    const cells = line.split(' | ');
    const last = cells[cells.length - 1];
    const refs: Array<{ file: string; name: string }> = [];
    let file = '';
    for (const m of last.matchAll(/`(?:(test\/[^` ]+\.test\.ts) )?› ([^`]+)`/g)) {
      if (m[1]) file = m[1];
      refs.push({ file, name: m[2] });
    }
    out.push({ row: cells[0].replace(/^\| /, ''), refs });
  }
  return out;
}

describe('docs/bad-input.md', () => {
  const table = rows();

  it('has a catalogue of at least 40 rows', () => {
    expect(table.length).toBeGreaterThanOrEqual(40);
  });

  it.each(table.map((r) => [r.row, r] as const))('row "%s" is backed by tests that exist', (_row, { refs }) => {
    expect(refs.length).toBeGreaterThan(0);
    for (const { file, name } of refs) {
      expect(existsSync(`${root}${file}`), file).toBe(true);
      const source = readFileSync(`${root}${file}`, 'utf8').replace(/\\'/g, "'");
      const quoted = [`'${name}'`, `"${name}"`, `\`${name}\``, `what: '${name}'`];
      expect(quoted.some((q) => source.includes(q)), `${file} › ${name}`).toBe(true);
    }
  });
});
