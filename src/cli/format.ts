/** Number formatting for people: 4 significant digits, exponent only when it must. */
export function num(value: number | null | undefined, digits = 4): string {
  if (value === null || value === undefined || Number.isNaN(value)) return '–';
  if (value === Infinity) return '∞';
  if (value === -Infinity) return '−∞';
  if (value === 0) return '0';
  const abs = Math.abs(value);
  if (abs >= 1e-3 && abs < 1e6) {
    const s = value.toPrecision(digits);
    return s.includes('.') && !s.includes('e') ? s.replace(/\.?0+$/, '') : s;
  }
  return value.toExponential(digits - 1).replace(/\.?0+e/, 'e');
}

/** Seconds as a readable duration: `12.5 s`, `4 min 05.0 s`, `1 h 02 min`. */
export function duration(seconds: number): string {
  if (!Number.isFinite(seconds)) return '–';
  if (seconds < 60) return `${num(seconds)} s`;
  if (seconds < 3600) {
    const m = Math.floor(seconds / 60);
    return `${m} min ${(seconds - m * 60).toFixed(1).padStart(4, '0')} s`;
  }
  const h = Math.floor(seconds / 3600);
  const m = Math.round((seconds - h * 3600) / 60);
  return `${h} h ${String(m).padStart(2, '0')} min`;
}

/** Left-aligned text columns, right-aligned numbers; rows are arrays of cells. */
export function table(header: string[], rows: string[][], numeric: boolean[]): string {
  const widths = header.map((h, c) => Math.max(len(h), ...rows.map((r) => len(r[c] ?? ''))));
  const cell = (text: string, c: number) => (numeric[c] ? pad(text, widths[c], true) : pad(text, widths[c], false));
  const lines = [header.map(cell).join('  ').trimEnd(), ...rows.map((r) => r.map(cell).join('  ').trimEnd())];
  return lines.join('\n') + '\n';
}

const len = (s: string) => [...s].length;
const pad = (s: string, w: number, right: boolean) => {
  const fill = ' '.repeat(Math.max(0, w - len(s)));
  return right ? fill + s : s + fill;
};
