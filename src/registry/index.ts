/**
 * The analysis registry: every analysis the pipeline runs, in order. The pipeline (report/pipeline.ts), the study
 * (report/study.ts), the bundle and the command line (cli/engine.ts), the report (report/reportHtml.ts), the methods
 * text (report/methods.ts) and the figures loop over this list instead of naming each analysis.
 *
 * Order matters: per-preparation steps run by stage ('raw', 'conditioned', 'components'), in this order within a
 * stage; across-preparation steps, tables, history steps (hence the methods text) follow this order.
 *
 * Adding an analysis: one file in src/registry/ exporting an AnalysisEntry (see types.ts), one line in ANALYSES
 * below, and its tests (DEVELOPERS.md, "How to add an analysis").
 */
import type { Figure } from '../plot/figure';
import type { Study } from '../report/study';
import type { AnalysisEntry, Row, TableSpec } from './types';
import { registerSentence } from './sentences';
import { velocity } from './velocity';
import { recruitment } from './recruitment';
import { strengthDuration } from './strengthDuration';
import { doseResponse } from './doseResponse';
import { temperature } from './temperature';
import { sweepQc } from './sweepQc';
import { pairedPulse, trains } from './recovery';
import { velocityDistribution } from './velocityDistribution';
import { groups, mixed } from './groups';
import { blindingSentence } from '../analysis/blinding';

export type { AnalysisEntry, TableSpec, PrepContext, StudyContext, Consumes, AcrossOutput, Row } from './types';

/** Every registered analysis, in pipeline order. */
export const ANALYSES: readonly AnalysisEntry<any>[] = [
  // eslint-disable-line @typescript-eslint/no-explicit-any
  velocity,
  recruitment,
  strengthDuration,
  doseResponse,
  temperature,
  sweepQc,
  pairedPulse,
  trains,
  velocityDistribution,
  groups,
  mixed,
];

for (const a of ANALYSES) for (const [verb, f] of Object.entries(a.methods ?? {})) registerSentence(verb, f);
// blinding and unblinding are history steps of the study, not analyses: their sentence is registered here too
for (const verb of ['blinding', 'unblind']) registerSentence(verb, blindingSentence);

/** The stage of an entry's per-preparation step. */
export const stageOf = (a: AnalysisEntry<unknown>) => a.stage ?? 'components';

/** The component table: written by the pipeline itself (every analysis reads it). */
export const COMPONENTS_TABLE: TableSpec = {
  name: 'components',
  title: 'Components (one row per sweep and class)',
  bulk: true,
  always: true,
};
/** The flags table: every estimate that could not be made or cannot be right. */
export const FLAGS_TABLE: TableSpec = { name: 'flags', title: 'Flags', always: true };

/** Every table of a bundle, in order: components, each analysis's, flags. */
export function tableSpecs(): TableSpec[] {
  return [COMPONENTS_TABLE, ...ANALYSES.flatMap((a) => a.tables), FLAGS_TABLE];
}

/** The spec of a table by name, and the analysis that writes it (undefined for components and flags). */
export function tableSpec(name: string): { spec: TableSpec; analysis?: AnalysisEntry<unknown> } | undefined {
  if (name === COMPONENTS_TABLE.name) return { spec: COMPONENTS_TABLE };
  if (name === FLAGS_TABLE.name) return { spec: FLAGS_TABLE };
  for (const a of ANALYSES) {
    const spec = a.tables.find((t) => t.name === name);
    if (spec) return { spec, analysis: a };
  }
  return undefined;
}

/** How many numbers a set of tables holds (velocities, fits): 0 means nothing at all could be computed. */
export function computedCount(t: Record<string, readonly Row[] | undefined>): number {
  return ANALYSES.reduce((n, a) => n + (a.computed ? a.computed(t) : 0), 0);
}

/** Every figure of a combined study, from its tables, in the analyses' figure order. */
export function studyFigureList(study: Study): Figure[] {
  const makers = ANALYSES.flatMap((a) => a.figures ?? []).sort((x, y) => x.rank - y.rank);
  return makers.flatMap((m) => m.make(study));
}
