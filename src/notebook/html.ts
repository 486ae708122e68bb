/** HTML rendering of tables; every user-provided string is escaped. */

const ESC: Record<string, string> = { '&': '&amp;', '<': '&lt;', '>': '&gt;', '"': '&quot;', "'": '&#39;' };
export function escapeHtml(s: unknown): string {
  return String(s).replace(/[&<>"']/g, (c) => ESC[c]);
}

/** Format a cell for display: numbers to 4 significant digits, null as an empty cell. */
export function formatCell(v: unknown): string {
  if (v === null || v === undefined) return '';
  if (typeof v === 'number') {
    if (!Number.isFinite(v)) return String(v);
    if (Number.isInteger(v)) return String(v);
    const a = Math.abs(v);
    return a !== 0 && (a < 1e-3 || a >= 1e6) ? v.toExponential(3) : String(Number(v.toPrecision(4)));
  }
  if (Array.isArray(v)) return v.map(formatCell).join(', ');
  return String(v);
}

/** An HTML table from rows; columns default to the union of keys in first-seen order. */
export function tableHtml(rows: readonly object[], opts: { columns?: string[]; caption?: string; maxRows?: number } = {}): string {
  const cols = opts.columns ?? [...new Set(rows.flatMap((r) => Object.keys(r)))];
  const max = opts.maxRows ?? 200;
  const shown = rows.slice(0, max);
  const head = cols.map((c) => `<th>${escapeHtml(c)}</th>`).join('');
  const body = shown.map((r) => `<tr>${cols.map((c) => `<td>${escapeHtml(formatCell((r as Record<string, unknown>)[c]))}</td>`).join('')}</tr>`).join('\n');
  const more = rows.length > max ? `<p>${rows.length - max} more rows not shown (${rows.length} in all).</p>` : '';
  const cap = opts.caption ? `<caption>${escapeHtml(opts.caption)}</caption>` : '';
  return `<div class="fascicle-table" style="max-height:420px;overflow:auto"><table style="border-collapse:collapse;font:12px sans-serif">${cap}<thead><tr>${head}</tr></thead><tbody>${body}</tbody></table>${more}</div>`;
}

/** Plain-text table for terminals. */
export function tableText(rows: readonly object[], opts: { columns?: string[]; maxRows?: number } = {}): string {
  const cols = opts.columns ?? [...new Set(rows.flatMap((r) => Object.keys(r)))];
  const shown = rows.slice(0, opts.maxRows ?? 30);
  const cells = [cols, ...shown.map((r) => cols.map((c) => formatCell((r as Record<string, unknown>)[c])))];
  const w = cols.map((_, j) => Math.min(24, Math.max(...cells.map((r) => r[j].length))));
  const line = (r: string[]) => r.map((c, j) => c.slice(0, 24).padEnd(w[j])).join('  ');
  const more = rows.length > shown.length ? `\n... ${rows.length - shown.length} more rows` : '';
  return cells.map(line).join('\n') + more;
}

/** Display HTML in a tslab notebook cell; outside a kernel, print the text form. */
export function displayHtml(html: string, text: string): void {
  const tslab = tslabDisplay();
  if (tslab) tslab.html(html);
  else console.log(text);
}

let cached: { html(s: string): void; newDisplay?: () => unknown } | null | undefined;
/** tslab's display when running inside a tslab kernel, else null. */
export function tslabDisplay(): { html(s: string): void; newDisplay?: () => unknown } | null {
  if (cached !== undefined) return cached;
  cached = null as unknown as typeof cached;
  if (process.env.TSLAB_KERNEL === '0') return null;
  try {
    // tslab's display only works inside its kernel; it throws or no-ops elsewhere
    // eslint-disable-next-line @typescript-eslint/no-var-requires
    const t = require('tslab');
    if (t && t.display && isKernel()) cached = { html: (s: string) => t.display.html(s), newDisplay: () => t.newDisplay() };
  } catch {
    cached = null;
  }
  return cached ?? null;
}

function isKernel(): boolean {
  return process.argv.some((a) => /tslab/.test(a)) || !!process.env.JPY_PARENT_PID || process.argv.some((a) => /kernel/.test(a));
}
