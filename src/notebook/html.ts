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

/**
 * Click-to-sort for tables marked data-sortable (one listener per page): numbers by
 * value, text alphabetically, empty cells last; a second click reverses the order.
 */
export const TABLE_SORT_JS = `(function(){if(window.__fascicleSort)return;window.__fascicleSort=1;
document.addEventListener('click',function(ev){var th=ev.target&&ev.target.closest&&ev.target.closest('table[data-sortable] thead th');
if(!th)return;var table=th.closest('table'),i=Array.prototype.indexOf.call(th.parentNode.children,th),body=table.tBodies[0];
var dir=th.getAttribute('aria-sort')==='ascending'?-1:1;
Array.prototype.forEach.call(th.parentNode.children,function(h){h.removeAttribute('aria-sort');});
th.setAttribute('aria-sort',dir>0?'ascending':'descending');
function key(r){var t=r.cells[i]?r.cells[i].textContent.trim():'';if(t==='')return null;
var n=Number(t);return isFinite(n)?n:t.toLowerCase();}
var rows=Array.prototype.slice.call(body.rows).map(function(r,k){return{r:r,k:key(r),i:k};});
rows.sort(function(a,b){if(a.k===null||b.k===null)return a.k===b.k?a.i-b.i:a.k===null?1:-1;
if(typeof a.k!==typeof b.k)return(typeof a.k==='number'?-1:1)*dir;return((a.k<b.k?-1:a.k>b.k?1:0)*dir)||a.i-b.i;});
rows.forEach(function(x){body.appendChild(x.r);});});})();`;

/**
 * An HTML table from rows; columns default to the union of keys in first-seen order.
 * `sortable`: headers sort the rows when clicked (TABLE_SORT_JS, included once per table;
 * it installs itself once per page).
 */
export function tableHtml(
  rows: readonly object[],
  opts: { columns?: string[]; caption?: string; maxRows?: number; sortable?: boolean } = {},
): string {
  const cols = opts.columns ?? [...new Set(rows.flatMap((r) => Object.keys(r)))];
  const max = opts.maxRows ?? 200;
  const shown = rows.slice(0, max);
  const head = cols.map((c) => `<th>${escapeHtml(c)}</th>`).join('');
  const body = shown
    .map(
      (r) =>
        `<tr>${cols.map((c) => `<td>${escapeHtml(formatCell((r as Record<string, unknown>)[c]))}</td>`).join('')}</tr>`,
    )
    .join('\n');
  const more = rows.length > max ? `<p>${rows.length - max} more rows not shown (${rows.length} in all).</p>` : '';
  const cap = opts.caption ? `<caption>${escapeHtml(opts.caption)}</caption>` : '';
  const sort = opts.sortable ? ' data-sortable' : '';
  const script = opts.sortable ? `<script>${TABLE_SORT_JS}</script>` : '';
  const th = opts.sortable ? head.replace(/<th>/g, '<th style="cursor:pointer" title="sort">') : head;
  return `<div class="fascicle-table" style="max-height:420px;overflow:auto"><table${sort} style="border-collapse:collapse;font:12px sans-serif">${cap}<thead><tr>${th}</tr></thead><tbody>${body}</tbody></table>${more}</div>${script}`;
}

/** Columns whose text says which row is which (key=value labels): shown up to 80 characters, not cut at 24. */
const LABEL_COLUMNS = new Set(['group', 'condition', 'preparation']);

/**
 * Plain-text table for terminals. Cells are cut at 24 characters (`widths` per column overrides it), except the
 * label columns (`group`, `condition`, `preparation`: 80), so rows that differ only in a condition stay apart.
 */
export function tableText(
  rows: readonly object[],
  opts: { columns?: string[]; maxRows?: number; widths?: Record<string, number> } = {},
): string {
  const cols = opts.columns ?? [...new Set(rows.flatMap((r) => Object.keys(r)))];
  const shown = rows.slice(0, opts.maxRows ?? 30);
  const cells = [cols, ...shown.map((r) => cols.map((c) => formatCell((r as Record<string, unknown>)[c])))];
  const limit = cols.map((c) => opts.widths?.[c] ?? (LABEL_COLUMNS.has(c) ? 80 : 24));
  const w = cols.map((_, j) => Math.min(limit[j], Math.max(...cells.map((r) => r[j].length))));
  const line = (r: string[]) => r.map((c, j) => c.slice(0, limit[j]).padEnd(w[j])).join('  ');
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
    if (t && t.display && isKernel())
      cached = { html: (s: string) => t.display.html(s), newDisplay: () => t.newDisplay() };
  } catch {
    cached = null;
  }
  return cached ?? null;
}

function isKernel(): boolean {
  return (
    process.argv.some((a) => /tslab/.test(a)) ||
    !!process.env.JPY_PARENT_PID ||
    process.argv.some((a) => /kernel/.test(a))
  );
}
