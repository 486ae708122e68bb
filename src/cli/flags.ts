/**
 * What the command line prints about a study's flags (the rows of tables/flags.csv): one summary
 * line, then one line per rejected and per not-measured estimate (capped); warnings are only counted.
 */

/** The flag fields the command line reads (the pipeline's Flag rows; other columns are ignored here). */
export interface FlagRow {
  preparation?: unknown;
  analysis?: unknown;
  class?: unknown;
  where?: unknown;
  severity?: unknown;
  reason?: unknown;
  status?: unknown;
  rows?: unknown;
}

/** Severities listed one line each; every other severity counts as a warning. */
export const LISTED_SEVERITIES = ['rejected', 'not measured'] as const;

/** Most flag lines printed after the summary line. */
export const FLAG_LINE_CAP = 30;

const text = (v: unknown): string => (v === null || v === undefined ? '' : String(v));

/** `<preparation> <analysis> <class> [<where>]: <reason>`, leaving out empty parts. */
export function flagLine(f: FlagRow): string {
  const head = [text(f.preparation), text(f.analysis), text(f.class)].filter((s) => s !== '').join(' ');
  const where = text(f.where);
  const n = typeof f.rows === 'number' && f.rows > 1 ? ` (${f.rows} rows)` : '';
  return `${head || 'study'}${where ? ` [${where}]` : ''}: ${text(f.reason) || text(f.status) || 'no reason given'}${n}`;
}

/** Counts by severity (rejected, not measured, and every other severity as warnings). */
export function flagCounts(flags: readonly FlagRow[]): { rejected: number; notMeasured: number; warnings: number } {
  const rejected = flags.filter((f) => f.severity === 'rejected').length;
  const notMeasured = flags.filter((f) => f.severity === 'not measured').length;
  return { rejected, notMeasured, warnings: flags.length - rejected - notMeasured };
}

/** The lines printed after a run: the summary, then rejected and not-measured flags (at most `cap`, then a count). */
export function flagReport(flags: readonly FlagRow[], cap = FLAG_LINE_CAP): string[] {
  const c = flagCounts(flags);
  const summary = `flags: ${c.rejected} rejected, ${c.notMeasured} not measured, ${c.warnings} warning${c.warnings === 1 ? '' : 's'}`;
  const lines = [`${summary} (tables/flags.csv)`];
  const listed = LISTED_SEVERITIES.flatMap((s) => flags.filter((f) => f.severity === s));
  for (const f of listed.slice(0, cap)) lines.push(`  ${f.severity}: ${flagLine(f)}`);
  if (listed.length > cap) lines.push(`  ... and ${listed.length - cap} more (tables/flags.csv)`);
  return lines;
}
