/** Plain-text two-column tables for the terminal summaries. */
export function table(rows: readonly (readonly [string, string])[]): string {
  const w = Math.max(...rows.map((r) => [...r[0]].length));
  return rows.map(([k, v]) => `  ${k}${' '.repeat(w - [...k].length)}  ${v}`).join('\n');
}

/** a number with a fixed count of significant digits, or "—" when it is not finite */
export function num(v: number | null | undefined, digits = 4): string {
  if (v === null || v === undefined || !Number.isFinite(v)) return '—';
  if (v !== 0 && (Math.abs(v) < 1e-3 || Math.abs(v) >= 1e5)) return v.toExponential(digits - 1);
  return Number(v.toPrecision(digits)).toString();
}
