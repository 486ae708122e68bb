/** Registry entries: group statistics and the mixed model across preparations (the preparation as the unit). */
import type { Step } from '../sweeps/SweepSet';
import type { GroupTable } from '../report/pipeline';
import {
  compareGroups,
  groupFlags,
  groupStepMethods,
  GROUP_REFERENCES,
  type GroupComparison,
} from '../analysis/groups';
import { mixedModel, mixedStepMethods, MIXED_REFERENCES, type MixedModelResult } from '../analysis/mixed';
import { groupFigures } from '../plot/groups';
import { OptionError } from '../errors';
import { failed, finiteCount } from './shared';
import type { AnalysisEntry, Row, StudyContext } from './types';

/** Tables the group statistics and the mixed model may read. */
export const GROUP_TABLES: readonly GroupTable[] = ['components', 'velocity'];

/**
 * The rows a group analysis reads: the component table, or the recommended velocities with per-preparation
 * conditions.
 */
export function groupRows(
  table: GroupTable | undefined,
  components: readonly Row[],
  velocity: readonly Row[],
  need: string[],
): Row[] {
  const t = table ?? 'components';
  if (!GROUP_TABLES.includes(t))
    throw new OptionError(`invalid table: ${JSON.stringify(t)}; must be one of ${GROUP_TABLES.join(', ')}`);
  if (t === 'components') return components as Row[];
  // a velocity row carries its grouping conditions (its own label of them as velocity_group); a condition constant
  // within a preparation (e.g. the animal's group) is added from the component table
  const rows = velocity
    .filter((r) => r.recommended === true)
    .map((r) => {
      const { group, ...rest } = r;
      return { ...rest, velocity_group: group ?? null } as Row;
    });
  const perPrep = new Map<string, Row>();
  for (const k of need) {
    if (rows.some((r) => k in r)) continue;
    const vals = new Map<string, Set<string>>();
    for (const c of components) {
      if (!(k in c)) continue;
      const p = String(c.preparation ?? '');
      (vals.get(p) ?? vals.set(p, new Set()).get(p)!).add(JSON.stringify(c[k]));
    }
    for (const [p, v] of vals)
      if (v.size === 1) (perPrep.get(p) ?? perPrep.set(p, {}).get(p)!)[k] = JSON.parse([...v][0]);
  }
  return rows.map((r) => ({ ...(perPrep.get(String(r.preparation ?? '')) ?? {}), ...r }));
}

const requireObject = (name: string, v: unknown) => {
  if (v === null || typeof v !== 'object' || Array.isArray(v))
    throw new OptionError(`invalid ${name}: ${JSON.stringify(v)}; must be an object ({ value, ... })`);
};

/** The references a sentence cites (Lazic, Aarts, and their own), by the first author's name. */
const cited = (sentence: string, refs: readonly string[]) =>
  refs.filter((r) =>
    sentence.includes(
      r
        .split(/ \(\d{4}\)/)[0]
        .split(',')[0]
        .split(' ')[0],
    ),
  );

/** Group statistics of the study's rows (options.groups). */
export function runGroups(
  ctx: Pick<StudyContext, 'options' | 'components' | 'history' | 'sources' | 'flags' | 'notes'>,
  velocity: readonly Row[],
): GroupComparison | null {
  const o = ctx.options;
  if (o.groups === undefined) return null;
  requireObject('groups', o.groups);
  const { table, ...go } = o.groups;
  try {
    const need = [go.group ?? 'group', go.animal, go.condition, ...(go.by ?? [])].filter(
      (k): k is string => typeof k === 'string',
    );
    const g = compareGroups(groupRows(table, ctx.components, velocity, need), go, ctx.history, ctx.sources);
    ctx.flags.push(...groupFlags('groups', g.tests, g.options.by));
    return g;
  } catch (e) {
    failed(ctx.flags, ctx.notes, 'groups', null, e);
    return null;
  }
}

/** The mixed model of the study's rows (options.mixed). */
export function runMixed(
  ctx: Pick<StudyContext, 'options' | 'components' | 'history' | 'sources' | 'flags' | 'notes'>,
  velocity: readonly Row[],
): MixedModelResult | null {
  const o = ctx.options;
  if (o.mixed === undefined) return null;
  requireObject('mixed', o.mixed);
  const { table, ...mo } = o.mixed;
  try {
    const need = [...(Array.isArray(mo.fixed) ? mo.fixed : []), mo.random, ...(mo.by ?? [])].filter(
      (k): k is string => typeof k === 'string',
    );
    const m = mixedModel(groupRows(table, ctx.components, velocity, need), mo, ctx.history, ctx.sources);
    ctx.flags.push(...groupFlags('mixed', m.variance, m.options.by));
    return m;
  } catch (e) {
    failed(ctx.flags, ctx.notes, 'mixed', null, e);
    return null;
  }
}

const across = <R extends { tables(): Record<string, readonly object[]>; history: readonly Step[] }>(r: R | null) =>
  r ? { result: r, tables: r.tables(), steps: [r.history[r.history.length - 1] as Step] } : null;

export const groups: AnalysisEntry<unknown> = {
  id: 'groups',
  title: 'Group statistics',
  consumes: { conditions: ['preparation'], option: 'groups', optIn: true },
  acrossPreparations: (ctx) => across(runGroups(ctx, ctx.prepTable('velocity'))),
  tables: [
    { name: 'group_summary', title: 'Group statistics: summary' },
    { name: 'group_tests', title: 'Group statistics: tests' },
    { name: 'group_points', title: 'Group statistics: one value per preparation' },
  ],
  figures: [
    {
      rank: 80,
      make(study) {
        const g = study.results?.groups as GroupComparison | null | undefined;
        return g && g.points.length ? groupFigures(g) : [];
      },
    },
  ],
  methods: {
    compareGroups(step) {
      const t = groupStepMethods(step);
      return { text: t, refs: cited(t, GROUP_REFERENCES) };
    },
  },
  computed: (t) => finiteCount(t.group_tests, 'p'),
  api: ['ComponentTable.compareGroups', 'compareGroups'],
  resultKey: 'groups',
};

export const mixed: AnalysisEntry<unknown> = {
  id: 'mixed',
  title: 'Mixed model',
  consumes: { conditions: ['preparation'], option: 'mixed', optIn: true },
  acrossPreparations: (ctx) => across(runMixed(ctx, ctx.prepTable('velocity'))),
  tables: [
    { name: 'mixed_coefficients', title: 'Mixed model: coefficients' },
    { name: 'mixed_anova', title: 'Mixed model: tests of the fixed effects', columns: { F: 'f' } },
    { name: 'mixed_variance', title: 'Mixed model: variance components' },
  ],
  methods: {
    mixedModel(step) {
      const t = mixedStepMethods(step);
      return { text: t, refs: cited(t, [...GROUP_REFERENCES, ...MIXED_REFERENCES]) };
    },
  },
  computed: (t) => finiteCount(t.mixed_anova, 'p'),
  api: ['ComponentTable.mixedModel', 'mixedModel'],
  resultKey: 'mixed',
};
