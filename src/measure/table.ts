/** ComponentTable: per-sweep x per-class measurements, with velocity and threshold analyses. */
import { inspect } from 'node:util';
import type { SweepSet, ConditionValue, Step } from '../sweeps/SweepSet';
import { measureComponents, componentStep, type ComponentOptions, type ComponentRow, type ResolvedComponentOptions } from './components';
import type { ResponseMeasure } from './response';
import { singleSiteVelocity, twoSiteVelocity, regressionVelocity, type VelocityRow } from '../analysis/velocity';
import { toFrame } from '../report/frame';
import { tableHtml, tableText, displayHtml } from '../notebook/html';
import { VERSION } from '../version';
import { doseResponse, type DoseResponseOptions, DoseResponseResult } from '../analysis/doseResponse';
import { recruitment, RecruitmentResult } from '../analysis/recruitment';
import { temperatureAnalysis, TemperatureResult } from '../analysis/temperature';

const PER_SWEEP = new Set(['repeat', 'acquiredS', 'fileSweep', 'label', 'file', 'sweep', 'count']);

/** Default grouping for velocity: the conditions that vary and are not per-sweep or per-distance. */
function defaultBy(set: SweepSet): string[] {
  const keys = ['preparation', 'temperatureC', 'concentration', 'drug', 'epoch'];
  return keys.filter((k) => set.conditions.some((c) => k in c));
}

export class ComponentTable {
  readonly rows: readonly ComponentRow[];
  readonly set: SweepSet;
  readonly measures: ResponseMeasure[][];
  readonly resolved: ResolvedComponentOptions;
  readonly history: readonly Step[];

  constructor(set: SweepSet, options: ComponentOptions = {}) {
    const r = measureComponents(set, options);
    this.rows = r.rows;
    this.measures = r.measures;
    this.resolved = r.resolved;
    this.set = set;
    this.history = [...set.history, componentStep(r.resolved)];
  }

  /** The class names, fastest first. */
  get classes(): string[] {
    return this.resolved.classes.map((c) => c.name);
  }

  /** Rows of one class. */
  of(className: string): ComponentRow[] {
    return this.rows.filter((r) => r.class === className);
  }

  /** The table as a danfo DataFrame (units in column names). */
  frame(): import('danfojs-node').DataFrame {
    return toFrame(this.rows as unknown as Record<string, unknown>[]);
  }

  /**
   * Conduction velocity per class by every method the data supports: single site
   * (always), two sites and regression on distance (when a group has two or more
   * distances). Groups: `by` conditions (default: preparation, temperature,
   * concentration, drug, epoch where present).
   */
  velocity(options: { by?: string[] } = {}): VelocityResult {
    const by = options.by ?? defaultBy(this.set);
    const single = singleSiteVelocity(this.rows, by);
    const two = twoSiteVelocity(this.set, this.rows, this.measures, this.resolved, by);
    const reg = regressionVelocity(this.rows, by);
    return new VelocityResult([...single, ...two, ...reg], by, [...this.history, { verb: 'velocity', options: { by, methods: ['single-site (onset, peak)', 'two-site (cross-correlation, onset, peak)', 'regression of latency on distance'] }, version: VERSION }]);
  }

  /**
   * Threshold per class: for each group (`by`, default preparation and distance), the
   * lowest stimulus intensity at which the class is detected in at least half of the sweeps.
   */
  threshold(options: { by?: string[] } = {}): Record<string, ConditionValue>[] {
    const by = options.by ?? ['preparation', 'distanceMm', 'temperatureC', 'concentration'].filter((k) => this.set.conditions.some((c) => k in c));
    const groups = new Map<string, ComponentRow[]>();
    for (const r of this.rows) {
      if (typeof r.intensity !== 'number') continue;
      const id = by.map((k) => r[k]).join('|') + '|' + r.class;
      const g = groups.get(id);
      if (g) g.push(r); else groups.set(id, [r]);
    }
    const out: Record<string, ConditionValue>[] = [];
    for (const g of groups.values()) {
      const levels = [...new Set(g.map((r) => r.intensity as number))].sort((a, b) => a - b);
      if (levels.length < 2) continue;
      let thr: number | null = null;
      for (const I of levels) {
        const at = g.filter((r) => r.intensity === I);
        if (at.filter((r) => r.detected).length * 2 >= at.length) { thr = I; break; }
      }
      const o: Record<string, ConditionValue> = {};
      for (const k of by) o[k] = g[0][k] ?? null;
      out.push({ ...o, class: g[0].class, threshold: thr, intensityUnit: (g[0].intensityUnit as string) ?? null, levels: levels.length, note: thr === null ? 'not detected at any intensity' : thr === levels[0] ? 'detected at the lowest intensity: threshold may be lower' : null });
    }
    return out;
  }

  /** Recruitment curves per class (Boltzmann fit in log10 intensity). */
  recruitment(options: { measure?: string; by?: string[]; supramaximalFactor?: number } = {}): RecruitmentResult {
    return recruitment(this.rows, this.set.units, options, this.history);
  }

  /** Blocker dose-response per class with IC50, Hill slope and class comparison. */
  doseResponse(options: DoseResponseOptions = {}): DoseResponseResult {
    return doseResponse(this.rows, this.set.units, options, this.history);
  }

  /** Q10 and activation energy per class (default: of the centroid velocity). */
  temperature(options: { measure?: string; invert?: boolean } = {}): TemperatureResult {
    return temperatureAnalysis(this.rows, options, this.history);
  }

  toHTML(): string {
    return tableHtml(this.rows as unknown as Record<string, unknown>[], { caption: `Fiber-class components: ${this.rows.length} rows (${this.classes.join(', ')})` });
  }

  toString(): string {
    return `ComponentTable: ${this.set.nSweeps} sweeps x ${this.classes.length} classes (${this.classes.join(', ')})\n` + tableText(this.rows as unknown as Record<string, unknown>[], { columns: ['sweep', 'class', 'detected', 'onset_ms', 'peak_ms', `amplitude_${this.set.units}`, 'distance_mm'], maxRows: 12 });
  }

  [inspect.custom](): string {
    return this.toString();
  }

  /** Show the table in a notebook cell (or print it). */
  show(): void {
    displayHtml(this.toHTML(), this.toString());
  }
}

export class VelocityResult {
  constructor(readonly rows: readonly VelocityRow[], readonly by: string[], readonly history: readonly Step[]) {}

  frame(): import('danfojs-node').DataFrame {
    return toFrame(this.rows as unknown as Record<string, unknown>[]);
  }

  /** Rows of one method (and basis). */
  get(method: VelocityRow['method'], basis?: VelocityRow['basis']): VelocityRow[] {
    return this.rows.filter((r) => r.method === method && (!basis || r.basis === basis));
  }

  toHTML(): string {
    return tableHtml(this.rows as unknown as Record<string, unknown>[], { caption: 'Conduction velocity per class (m/s, 95% CI)' });
  }

  toString(): string {
    return 'VelocityResult\n' + tableText(this.rows as unknown as Record<string, unknown>[], { columns: ['method', 'basis', 'class', 'group', 'velocity_m_s', 'ci95_low_m_s', 'ci95_high_m_s', 'n'] });
  }

  [inspect.custom](): string {
    return this.toString();
  }

  show(): void {
    displayHtml(this.toHTML(), this.toString());
  }
}
