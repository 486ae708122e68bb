/**
 * The study's main results in words: the lines the command line prints after a run and the "Main results" list of
 * report.html. One wording for both: a recording channel is named as recorded (a bipolar channel by its two contacts,
 * from the reference-contact distance of the manifest or the components option), and a confidence interval with a
 * missing bound says which bound is missing instead of printing a placeholder as if it were a number.
 */
import type { Study } from './study';

type Row = Record<string, unknown>;

/** A number as the summary prints it (3 significant digits); a missing value is "not available". */
export function summaryNumber(v: unknown): string {
  if (v === null || v === undefined || (typeof v === 'number' && !Number.isFinite(v))) return 'not available';
  return typeof v === 'number' ? String(Number(v.toPrecision(3))) : String(v);
}

/**
 * A 95% confidence interval in words: "95% CI 62.6-77" (" to " when a bound is negative, so no bound reads as a
 * minus sign), "95% CI from 1.2, not bounded above", "95% CI up to 7.7, not bounded below", or "95% CI not
 * available" when neither bound could be computed. A bound is missing when it is not a finite number.
 */
export function intervalText(lo: unknown, hi: unknown, fmt: (v: number) => string = summaryNumber): string {
  const has = (v: unknown): v is number => typeof v === 'number' && Number.isFinite(v);
  if (!has(lo) && !has(hi)) return '95% CI not available';
  if (!has(hi)) return `95% CI from ${fmt(lo as number)}, not bounded above`;
  if (!has(lo)) return `95% CI up to ${fmt(hi)}, not bounded below`;
  return `95% CI ${fmt(lo)}${lo < 0 || hi < 0 ? ' to ' : '-'}${fmt(hi)}`;
}

/**
 * The reference-contact distance (mm) of the channel a result row was recorded on, or null (monopolar).
 * Looked up in the component rows of the same preparation and conduction distance (each sweep carries the
 * manifest's `referenceDistanceMm` condition), else the components option `referenceDistanceMm` (every channel).
 */
export function referenceLookup(components: readonly Row[], fixedMm?: number): (row: Row) => number | null {
  const byPrepSite = new Map<string, number>();
  const bySite = new Map<string, number>();
  for (const c of components) {
    const ref = c.referenceDistanceMm ?? c.reference_distance_mm;
    const d = c.distanceMm ?? c.distance_mm;
    if (typeof ref !== 'number' || typeof d !== 'number') continue;
    byPrepSite.set(`${String(c.preparation ?? '')}\u0000${d}`, ref);
    bySite.set(String(d), ref);
  }
  return (row) => {
    if (typeof row.referenceDistanceMm === 'number') return row.referenceDistanceMm;
    const d = row.distanceMm ?? row.distance_mm;
    if (typeof d !== 'number') return null;
    const ref =
      row.preparation !== undefined
        ? byPrepSite.get(`${String(row.preparation)}\u0000${d}`)
        : (bySite.get(String(d)) ?? undefined);
    return ref ?? (typeof fixedMm === 'number' ? fixedMm : null);
  };
}

/**
 * Where a result was recorded, as a phrase to follow its name: " at 20 mm" (a monopolar site), " at bipolar
 * 15-25 mm" (a bipolar channel: recording contact and reference contact), "" when the row names no site
 * (sites pooled, as a regression over distances is).
 */
export function siteText(row: Row, referenceOf: (row: Row) => number | null): string {
  const d = row.distanceMm ?? row.distance_mm;
  if (typeof d !== 'number') return '';
  const ref = referenceOf(row);
  return ref === null ? ` at ${d} mm` : ` at bipolar ${d}-${ref} mm`;
}

/**
 * The recommended conduction velocity of each class in words, classes in the component table's order (fastest
 * first): "conduction velocity A-delta at 37 °C: 19.1-21.9 m/s (range over 4 preparations, 4 estimates; two-site
 * xcorr)". Only rows with status ok; none when the study has no velocity table.
 */
export function velocityLines(s: Study, fmt: (v: number) => string = summaryNumber): string[] {
  const t = s.tables;
  const rec = (t.velocity ?? []).filter((r) => r.recommended === true && r.preparation !== undefined);
  const classes = [...new Set((t.components ?? []).map((r) => String(r.class ?? '')))].filter((c) => c);
  for (const r of rec) if (!classes.includes(String(r.class))) classes.push(String(r.class));
  const out: string[] = [];
  for (const c of classes) {
    const ok = rec.filter((r) => String(r.class) === c && typeof r.velocity_m_s === 'number' && r.status === 'ok');
    if (!ok.length) continue;
    const v = ok.map((r) => r.velocity_m_s as number);
    const lo = Math.min(...v),
      hi = Math.max(...v);
    const how = [...new Set(ok.map((r) => `${r.method} ${r.basis}`))].join(', ');
    const temps = [...new Set(ok.map((r) => r.temperatureC).filter((x) => typeof x === 'number'))];
    const at = temps.length ? ` at ${temps.join(', ')} °C` : '';
    const nPreps = new Set(ok.map((r) => String(r.preparation))).size;
    const range = hi > lo ? `${fmt(lo)}-${fmt(hi)} m/s (range over` : `${fmt(lo)} m/s (over`;
    const plural = (n: number, w: string) => `${n} ${w}${n === 1 ? '' : 's'}`;
    out.push(
      `conduction velocity ${c}${at}: ${range} ${plural(nPreps, 'preparation')}, ${plural(v.length, 'estimate')}; ` +
        `${how})`,
    );
  }
  return out;
}

/** Options of summaryLines. */
export interface SummaryOptions {
  /**
   * the components option `referenceDistanceMm` of the run (a bipolar recording's reference contact, mm); default:
   * the one the study recorded (`study.recording.referenceDistanceMm`)
   */
  referenceDistanceMm?: number;
}

/**
 * The study's main results, one plain-text line each (no indent): IC50s, chronaxies, recovery R50s and Q10s with
 * their 95% confidence intervals and where they were recorded. Rows without an estimate are left out (they are
 * in the flags).
 */
export function summaryLines(s: Study, options: SummaryOptions = {}): string[] {
  const t = s.tables;
  const ref = referenceLookup(t.components ?? [], options.referenceDistanceMm ?? s.recording?.referenceDistanceMm);
  const at = (r: Row) => siteText(r, ref);
  const n = summaryNumber;
  const out: string[] = velocityLines(s);
  for (const row of t.dose_response_summary ?? []) {
    if (typeof row.ic50 !== 'number') continue;
    const hill = typeof row.hill === 'number' ? `, Hill slope ${n(row.hill)}` : '';
    out.push(
      `IC50 ${row.class}${at(row)}: ${n(row.ic50)} ${row.concentrationUnit ?? ''}`.trimEnd() +
        ` (${intervalText(row.ic50_ci95_low, row.ic50_ci95_high)})${hill}`,
    );
  }
  for (const row of t.strength_duration ?? []) {
    if (typeof row.chronaxie_ms !== 'number') continue;
    const unit = row.intensityUnit ? ` ${row.intensityUnit}` : '';
    const rheobase = typeof row.rheobase === 'number' ? `, rheobase ${n(row.rheobase)}${unit}` : '';
    out.push(
      `chronaxie ${row.class} (${row.preparation}${at(row)}): ${n(row.chronaxie_ms)} ms ` +
        `(${intervalText(row.chronaxie_ci95_low_ms, row.chronaxie_ci95_high_ms)})${rheobase}`,
    );
  }
  for (const row of t.paired_pulse_summary ?? []) {
    if (typeof row.r50_ms !== 'number') continue;
    out.push(
      `recovery R50 ${row.class} (${row.preparation}${at(row)}): ${n(row.r50_ms)} ms ` +
        `(${intervalText(row.r50_ci95_low, row.r50_ci95_high)})`,
    );
  }
  for (const row of t.temperature ?? []) {
    if (typeof row.q10 !== 'number') continue;
    out.push(`Q10 ${row.class}${at(row)}: ${n(row.q10)} (${intervalText(row.q10_ci95_low, row.q10_ci95_high)})`);
  }
  return out;
}
