/**
 * ComponentTable: per-sweep x per-class measurements, and the notebook's entry point to every analysis
 * (`table.velocity()`, `table.doseResponse()`, ...).
 *
 * Layer: this module sits above analysis/ (it calls the analyses; none of them imports it at run time) and
 * below plot/ and report/. It installs the SweepSet methods that lead here, `set.components()`, `set.qc()` and
 * `set.rejectFlagged()`, on SweepSet's prototype (declared below by declaration merging), because SweepSet's
 * own layer may not import measurement or analysis; src/index.ts loads this module, so they are always there
 * for users of the package.
 */
import { SweepSet, type ConditionValue, type Step } from '../sweeps/SweepSet';
import {
  measureComponents,
  componentStep,
  type ComponentOptions,
  type ComponentRow,
  type ResolvedComponentOptions,
} from './components';
import type { ResponseMeasure } from './response';
import {
  singleSiteVelocity,
  twoSiteVelocity,
  regressionVelocity,
  markRecommended,
  type VelocityRow,
} from '../analysis/velocity';
import { toFrame } from '../report/frame';
import { tableHtml, tableText } from '../notebook/html';
import { VERSION } from '../version';
import { Result } from '../notebook/result';
import { doseResponse, type DoseResponseOptions, DoseResponseResult } from '../analysis/doseResponse';
import { recruitment, RecruitmentResult } from '../analysis/recruitment';
import { strengthDuration, StrengthDurationResult, type StrengthDurationOptions } from '../analysis/strengthDuration';
import { temperatureAnalysis, velocityTemperature, TemperatureResult } from '../analysis/temperature';
import { compareGroups, type GroupOptions, type GroupComparison } from '../analysis/groups';
import { mixedModel, type MixedOptions, type MixedModelResult } from '../analysis/mixed';
import { sweepQc, rejectFlagged, type SweepQcOptions, type SweepQcResult, type QcFlag } from '../analysis/sweepQc';

declare module '../sweeps/SweepSet' {
  interface SweepSet {
    /**
     * Measure the fiber-class components of every sweep (latency windows from the
     * class velocity ranges, the distance and the temperature).
     * @example set.components({ preset: 'mammalian' }).velocity()
     */
    components(options?: ComponentOptions): ComponentTable;
    /**
     * Quality control of every sweep (run it on raw sweeps): noise, drift, amplifier rails, artifact size and a
     * robust outlier score against the sweep's condition; a flag and reasons per sweep. Nothing is removed.
     * @example set.qc().show()
     */
    qc(options?: SweepQcOptions): SweepQcResult;
    /**
     * Remove the sweeps a quality control flagged (every flag, or only `flags`); each removed sweep is recorded
     * with its reasons in the history (and so in the methods text).
     * @example set.rejectFlagged(set.qc(), { flags: ['saturated', 'flat'] })
     */
    rejectFlagged(qc?: SweepQcResult, options?: { flags?: QcFlag[] }): SweepSet;
  }
}

/** Default grouping for velocity: the conditions that vary and are not per-sweep or per-distance. */
function defaultBy(set: SweepSet): string[] {
  const keys = ['preparation', 'temperatureC', 'concentration', 'drug', 'epoch'];
  return keys.filter((k) => set.conditions.some((c) => k in c));
}

export class ComponentTable extends Result {
  readonly rows: readonly ComponentRow[];
  readonly set: SweepSet;
  readonly measures: ResponseMeasure[][];
  readonly resolved: ResolvedComponentOptions;
  readonly history: readonly Step[];

  constructor(
    set: SweepSet,
    options: ComponentOptions = {},
    precomputed?: {
      rows: readonly ComponentRow[];
      measures: ResponseMeasure[][];
      resolved: ResolvedComponentOptions;
      history: readonly Step[];
    },
  ) {
    super();
    const r = precomputed ?? measureComponents(set, options);
    this.rows = r.rows;
    this.measures = r.measures;
    this.resolved = r.resolved;
    this.set = set;
    this.history = precomputed ? precomputed.history : [...set.history, componentStep(r.resolved)];
  }

  /** The rows matching a predicate (or condition values), as a table over the same sweeps. */
  subset(match: ((r: ComponentRow) => boolean) | Record<string, ConditionValue>): ComponentTable {
    const pred =
      typeof match === 'function' ? match : (r: ComponentRow) => Object.entries(match).every(([k, v]) => r[k] === v);
    return new ComponentTable(
      this.set,
      {},
      { rows: this.rows.filter(pred), measures: this.measures, resolved: this.resolved, history: this.history },
    );
  }

  /** Input files (with SHA-256) of the sweeps. */
  get sources() {
    return this.set.sources;
  }

  tables(): Record<string, readonly object[]> {
    return { components: this.rows };
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
    const single = singleSiteVelocity(this.rows, by, this.resolved);
    const two = twoSiteVelocity(this.set, this.rows, this.measures, this.resolved, by);
    const reg = regressionVelocity(this.rows, by, this.resolved, { set: this.set, measures: this.measures });
    return new VelocityResult(
      markRecommended([...single, ...two, ...reg], this.resolved.classes),
      by,
      this.set.sources,
      [
        ...this.history,
        {
          verb: 'velocity',
          options: {
            by,
            methods: [
              'single-site (onset, peak)',
              'two-site (cross-correlation, onset, peak)',
              'regression of latency on distance',
            ],
          },
          version: VERSION,
        },
      ],
    );
  }

  /**
   * Threshold per class: for each group (`by`, default preparation and distance), the lowest stimulus intensity
   * from which the class stays detected (in at least half of the sweeps at that intensity and at every higher one).
   */
  threshold(options: { by?: string[] } = {}): Record<string, ConditionValue>[] {
    const by =
      options.by ??
      ['preparation', 'distanceMm', 'temperatureC', 'concentration', 'pulseWidthMs'].filter((k) =>
        k === 'pulseWidthMs' ? new Set(this.rows.map((r) => r[k])).size > 1 : this.set.conditions.some((c) => k in c),
      );
    const groups = new Map<string, ComponentRow[]>();
    for (const r of this.rows) {
      if (typeof r.intensity !== 'number') continue;
      const id = by.map((k) => r[k]).join('|') + '|' + r.class;
      const g = groups.get(id);
      if (g) g.push(r);
      else groups.set(id, [r]);
    }
    const out: Record<string, ConditionValue>[] = [];
    for (const g of groups.values()) {
      const levels = [...new Set(g.map((r) => r.intensity as number))].sort((a, b) => a - b);
      if (levels.length < 2) continue;
      // the lowest level from which the class stays detected (in at least half the sweeps at it and at every higher
      // level): a detection that vanishes at the next intensity is noise, not a threshold (recruitment only grows
      // with intensity; common practice, no source)
      const ok = levels.map((I) => {
        const at = g.filter((r) => r.intensity === I);
        return at.filter((r) => r.detected).length * 2 >= at.length;
      });
      let thr: number | null = null;
      for (let i = ok.length - 1; i >= 0 && ok[i]; i--) thr = levels[i];
      const anyDetected = ok.some((v) => v);
      const o: Record<string, ConditionValue> = {};
      for (const k of by) o[k] = g[0][k] ?? null;
      out.push({
        ...o,
        class: g[0].class,
        threshold: thr,
        intensityUnit: (g[0].intensityUnit as string) ?? null,
        levels: levels.length,
        note:
          thr === null
            ? anyDetected
              ? 'not detected at the highest intensity: no level from which the class stays detected'
              : 'not detected at any intensity'
            : thr === levels[0]
              ? 'detected at the lowest intensity: threshold may be lower'
              : null,
      });
    }
    return out;
  }

  /** Recruitment curves per class (Boltzmann fit in log10 intensity). */
  recruitment(options: { measure?: string; by?: string[]; supramaximalFactor?: number } = {}): RecruitmentResult {
    return recruitment(this.rows, this.set.units, options, this.history, this.set.sources);
  }

  /**
   * Strength-duration per class from a pulse-width series: rheobase and chronaxie
   * (Weiss and Lapicque) from the intensity reaching half the maximum response at each width.
   * @example table.strengthDuration({ fraction: 0.5 })
   */
  strengthDuration(options: StrengthDurationOptions = {}): StrengthDurationResult {
    return strengthDuration(this.rows, this.set.units, options, this.history, this.set.sources);
  }

  /** Blocker dose-response per class with IC50, Hill slope and class comparison. */
  doseResponse(options: DoseResponseOptions = {}): DoseResponseResult {
    return doseResponse(this.rows, this.set.units, options, this.history, this.set.sources);
  }

  /**
   * Q10 and activation energy per class. Default: of the conduction velocity from the
   * regression of centroid latency on distance at each temperature when every
   * temperature has two or more distances (free of the single-fiber waveform's own
   * temperature dependence); otherwise of the single-site centroid velocity. Give
   * `measure` (a column) to analyse amplitude, latency or duration instead.
   */
  temperature(options: { measure?: string; invert?: boolean } = {}): TemperatureResult {
    if (!options.measure) {
      const keyOf = (r: ComponentRow) => `${r.preparation ?? ''}|${r.temperatureC}`;
      const dists = new Map<string, Set<unknown>>();
      for (const r of this.rows)
        (dists.get(keyOf(r)) ?? dists.set(keyOf(r), new Set()).get(keyOf(r))!).add(r.distance_mm);
      if (dists.size > 0 && [...dists.values()].every((s) => s.size >= 2)) {
        const by = ['preparation', 'temperatureC'].filter((k) => this.set.conditions.some((c) => k in c));
        return velocityTemperature(this.velocity({ by }).rows, this.history, this.set.sources);
      }
    }
    return temperatureAnalysis(this.rows, options, this.history, this.set.sources);
  }

  /**
   * Compare groups (or conditions within preparations) with the preparation as the unit: values are averaged
   * within each preparation first; Welch t / Mann-Whitney U / ANOVA between groups, paired t / repeated-measures
   * ANOVA within, Holm and Benjamini-Hochberg adjusted p values.
   * @example table.compareGroups({ value: 'amplitude_uV', group: 'group', by: ['class'] }).show()
   */
  compareGroups(options: GroupOptions): GroupComparison {
    return compareGroups(this, options);
  }

  /**
   * Linear mixed-effects model of a per-class measure against conditions with a random intercept per
   * preparation (REML, Satterthwaite degrees of freedom).
   * @example table.mixedModel({ value: 'amplitude_uV', fixed: ['group'], by: ['class'] }).show()
   */
  mixedModel(options: MixedOptions): MixedModelResult {
    return mixedModel(this, options);
  }

  toHTML(): string {
    return tableHtml(this.rows as unknown as Record<string, unknown>[], {
      caption: `Fiber-class components: ${this.rows.length} rows (${this.classes.join(', ')})`,
    });
  }

  toString(): string {
    return (
      `ComponentTable: ${this.set.nSweeps} sweeps x ${this.classes.length} classes (${this.classes.join(', ')})\n` +
      tableText(this.rows as unknown as Record<string, unknown>[], {
        columns: ['sweep', 'class', 'detected', 'onset_ms', 'peak_ms', `amplitude_${this.set.units}`, 'distance_mm'],
        maxRows: 12,
      })
    );
  }
}

export class VelocityResult extends Result {
  constructor(
    readonly rows: readonly VelocityRow[],
    readonly by: string[],
    readonly sources: readonly import('../sweeps/SweepSet').Source[],
    readonly history: readonly Step[],
  ) {
    super();
  }

  tables(): Record<string, readonly object[]> {
    return { velocity: this.rows };
  }

  frame(): import('danfojs-node').DataFrame {
    return toFrame(this.rows as unknown as Record<string, unknown>[]);
  }

  /** Rows of one method (and basis). */
  get(method: VelocityRow['method'], basis?: VelocityRow['basis']): VelocityRow[] {
    return this.rows.filter((r) => r.method === method && (!basis || r.basis === basis));
  }

  toHTML(): string {
    return tableHtml(this.rows as unknown as Record<string, unknown>[], {
      caption: 'Conduction velocity per class (m/s, 95% CI)',
    });
  }

  toString(): string {
    return (
      'VelocityResult\n' +
      tableText(this.rows as unknown as Record<string, unknown>[], {
        // distance_mm tells a single-site row's sites apart (empty for two-site and regression rows); status says
        // why a row has no velocity or what to make of it
        columns: [
          'method',
          'basis',
          'class',
          'group',
          'distance_mm',
          'velocity_m_s',
          'ci95_low_m_s',
          'ci95_high_m_s',
          'n',
          'status',
        ],
      })
    );
  }
}

SweepSet.prototype.components = function components(this: SweepSet, options: ComponentOptions = {}): ComponentTable {
  return new ComponentTable(this, options);
};

SweepSet.prototype.qc = function qc(this: SweepSet, options: SweepQcOptions = {}): SweepQcResult {
  return sweepQc(this, options);
};

SweepSet.prototype.rejectFlagged = function (
  this: SweepSet,
  qc: SweepQcResult = this.qc(),
  options: { flags?: QcFlag[] } = {},
): SweepSet {
  return rejectFlagged(this, qc, options);
};
