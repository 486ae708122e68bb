/** Helpers the registry's analyses share: flags from rows, failures as flags, series selection, JSON rows. */
import type { SweepSet, ConditionValue, Step } from '../sweeps/SweepSet';
import { OptionError } from '../errors';
import type { ComponentTable } from '../measure/table';
import type { Flag, PipelineOptions } from '../report/pipeline';
import type { Row } from './types';

/**
 * Flags from rows with a status other than ok. Rows that share preparation, class, status and
 * reason (e.g. every latency definition of a class not detected) give one flag, with `rows` counting them.
 */
export function flagsFrom(
  analysis: Flag['analysis'],
  rows: readonly Row[],
  preparation: string | null,
  where: (r: Row) => string | null,
): Flag[] {
  const out = new Map<string, Flag>();
  for (const r of rows) {
    const st = r.status;
    if (st === undefined || st === null || st === 'ok') continue;
    const s = String(st);
    const severity: Flag['severity'] =
      s === 'implausible' || s === 'failed' ? 'rejected' : s === 'not detected' ? 'not measured' : 'warning';
    const f: Flag = {
      preparation: (r.preparation as string | undefined) ?? preparation,
      analysis,
      class: (r.class as string | undefined) ?? null,
      where: where(r),
      severity,
      status: s,
      reason: String(r.reason ?? s),
      rows: 1,
    };
    const k = JSON.stringify([f.preparation, f.class, f.where, r.group ?? null, r.distanceMm ?? null, s, f.reason]);
    const seen = out.get(k);
    if (seen) seen.rows = (seen.rows as number) + 1;
    else out.set(k, f);
  }
  return [...out.values()];
}

/** An analysis that failed: a note and a 'rejected' flag with the error's message. */
export function failed(
  flags: (Flag | Row)[],
  notes: string[],
  analysis: Flag['analysis'],
  prep: string | null,
  e: unknown,
): void {
  const msg = (e as Error).message;
  notes.push(`${prep ? `${prep} ` : ''}${analysis}: ${msg}`);
  flags.push({
    preparation: prep,
    analysis,
    class: null,
    where: null,
    severity: 'rejected',
    status: 'failed',
    reason: msg,
  });
}

/** "R1 " before a note of a preparation, "" for a whole set. */
export const say = (prep: string | null) => (prep ? `${prep} ` : '');

export const hasSeries = (t: ComponentTable, name: string) => t.rows.some((r) => r.series === name);

/** The sweeps of one series, or null when there are none. */
export const seriesOf = (set: SweepSet, name: string): SweepSet | null => {
  const idx: number[] = [];
  set.conditions.forEach((c, i) => {
    if (c.series === name) idx.push(i);
  });
  return idx.length ? set.select(idx) : null;
};

/** Whether a sweep belongs to a paired-pulse or train protocol other than a single test pulse. */
function multiPulse(c: Record<string, ConditionValue>, o: PipelineOptions): boolean {
  const role = (o.pairedPulse && o.pairedPulse.roleKey) || 'pulsePair';
  return c.series === 'train' || (c.series === 'paired-pulse' && c[role] !== 'test-alone');
}

/**
 * The sweeps of the standard component table: all but train sweeps and paired-pulse sweeps with two stimuli
 * (their test-alone sweeps are ordinary single responses).
 */
export function standardSweeps(set: SweepSet, o: PipelineOptions): SweepSet {
  const idx: number[] = [];
  set.conditions.forEach((c, i) => {
    if (!multiPulse(c, o)) idx.push(i);
  });
  return idx.length === set.nSweeps ? set : set.select(idx);
}

/** A row as JSON keeps it (NaN -> null, +-Infinity -> "Infinity" / "-Infinity"): what a bundle and a shard hold. */
export const strip = (r: object): Row =>
  JSON.parse(
    JSON.stringify(r, (_k, v) =>
      typeof v === 'number' && !Number.isFinite(v) ? (Number.isNaN(v) ? null : v > 0 ? 'Infinity' : '-Infinity') : v,
    ),
  );

/** How many rows hold a finite number in `col`. */
export const finiteCount = (rows: readonly Row[] | undefined, col: string) =>
  (rows ?? []).filter((r) => typeof r[col] === 'number' && Number.isFinite(r[col] as number)).length;

/** The last step of a history, as JSON. */
export const lastStep = (h: readonly Step[]) => strip(h[h.length - 1]) as unknown as Step;

/** An option that must be an object of options ({} for the defaults). */
export function requireObject(name: string, v: unknown, what: string): void {
  if (v === null || typeof v !== 'object' || Array.isArray(v))
    throw new OptionError(`invalid ${name}: ${JSON.stringify(v)}; must be ${what}`);
}

/**
 * A response column in words for a methods sentence: `amplitude_fit_uV` the least-squares amplitude, `amplitude_uV`
 * the peak amplitude, `area_uV_ms` the area, `peak_to_peak_uV` the peak-to-peak amplitude; any other column by name.
 */
export function measureWords(measure: unknown): string {
  const m = String(measure ?? '');
  if (/^amplitude_fit_/.test(m))
    return "the least-squares amplitude of each class's component (its projection on the class's reference waveform)";
  if (/^amplitude_/.test(m)) return "the peak amplitude of each class's component";
  if (/^rectified_area_/.test(m)) return "the rectified area of each class's component";
  if (/^area_/.test(m)) return "the area of each class's component";
  if (/^peak_to_peak_/.test(m)) return "the peak-to-peak amplitude of each class's component";
  return `the column ${m}`;
}
