/**
 * The shape of one analysis in the registry (src/registry/index.ts lists them). An analysis declares what it
 * consumes, its per-preparation step, its across-preparation step, the tables it writes (with column units), its
 * figures, its methods sentences and its notebook entry points; the pipeline, the study, the bundle, the report and
 * the methods text loop over the registry instead of naming each analysis.
 *
 * Layer: the registry sits above analysis/ and plot/ and below report/ (report/pipeline.ts and report/study.ts run
 * it; cli/ writes what they return). It imports the analysis functions and figure builders; nothing below imports it.
 */
import type { SweepSet, Step, Source, ConditionValue } from '../sweeps/SweepSet';
import type { ComponentTable } from '../measure/table';
import type { Figure } from '../plot/figure';
import type { PipelineOptions, Flag } from '../report/pipeline';
import type { Study } from '../report/study';
import type { Sentence } from './sentences';

/** One row of a result table: column name -> value (a number, text, true/false, or null when missing). */
export type Row = Record<string, ConditionValue>;

/** A table an analysis writes into the bundle (tables/<name>.csv and .json). */
export interface TableSpec {
  /** file name without extension (snake_case) */
  name: string;
  /** readable title (report.html) */
  title: string;
  /**
   * bundle names of result columns whose own name lacks its unit or the naming style (snake_case, unit last):
   * `{I}` is filled with the row's intensityUnit, `{C}` its concentrationUnit, `{R}` the response's unit
   * (src/registry/columns.ts; conditions such as distanceMm -> distance_mm are renamed for every table)
   */
  columns?: Record<string, string>;
  /**
   * columns whose text names conditions as "key=value, key=value" (sweep_qc's `condition`): in the bundle the keys
   * are renamed as the condition columns are (temperatureC= -> temperature_C=)
   */
  labels?: string[];
  /** long per-sweep or per-point table: shown closed on screen, left out of print */
  bulk?: boolean;
  /** written (possibly empty) whenever the study is combined, not only when the analysis produced it */
  always?: boolean;
  /** why the table can be empty though its analysis ran (report.html says it when no note of the study does) */
  empty?: string;
}

/** What an analysis needs from the data (documentation, and the registry test). */
export interface Consumes {
  /** the series it reads (the manifest's `series` condition); absent: any sweeps with the conditions below */
  series?: string[];
  /** conditions its sweeps must carry */
  conditions?: string[];
  /** the `analysis` option key that configures it (and, for opt-in analyses, asks for it) */
  option?: keyof PipelineOptions;
  /** runs only when its option is given */
  optIn?: boolean;
}

/** The per-preparation work in progress (one preparation, or a whole set for runPipeline). */
export interface PrepContext {
  /** the preparation's name; null for runPipeline on a whole set */
  prep: string | null;
  options: PipelineOptions;
  /** the sweeps as given to the pipeline */
  input: SweepSet;
  /** the sweeps entering conditioning (after any 'raw' stage entry changed them, e.g. rejected sweeps) */
  raw: SweepSet;
  /** after conditioning (set before the 'conditioned' stage) */
  conditioned: SweepSet | null;
  /** the standard component table (set before the 'components' stage) */
  table: ComponentTable | null;
  /** results of the entries run so far, by entry id */
  results: Record<string, unknown>;
  flags: Flag[];
  notes: string[];
}

/** The across-preparation work in progress. */
export interface StudyContext {
  /** 'pipeline': runPipeline on one set (result objects); 'study': combineStudy over per-preparation outputs */
  mode: 'pipeline' | 'study';
  options: PipelineOptions;
  units: string;
  /** every component row, preparations in order */
  components: readonly Row[];
  /** a per-preparation table over every preparation (in preparation order); [] when none has it */
  prepTable(name: string): Row[];
  /** a per-preparation table, preparation by preparation */
  perPreparation(name: string): { preparation: string; rows: Row[] }[];
  /** the per-preparation steps an entry recorded (study mode), preparation by preparation */
  prepSteps(id: string): Step[][];
  /** the study's history so far (across steps append to it in registry order) */
  history: Step[];
  sources: readonly Source[];
  /** results of the across steps run so far, by entry id */
  results: Record<string, unknown>;
  flags: (Flag | Row)[];
  notes: string[];
}

/** What an across-preparation step gives back. */
export interface AcrossOutput {
  /** tables it made (others of its declared tables are the per-preparation tables concatenated) */
  tables?: Record<string, readonly object[]>;
  /** steps for the study's history (their methods sentences come from `methods`) */
  steps?: Step[];
  /** the result object (Study.results[id], StudyResult.results[id]) */
  result?: unknown;
}

/** A methods sentence of one history step, and the references it cites. */
export type StepSentence = Sentence;

export interface AnalysisEntry<R = unknown> {
  /** id: also the `analysis` of its flags ('dose-response') */
  id: string;
  /** readable name */
  title: string;
  consumes: Consumes;
  /**
   * When the per-preparation step runs: 'raw' (on the sweeps as loaded, may change them), 'conditioned'
   * (after baseline, artifact, hum, filter; before repeats are averaged), 'components' (on the component table)
   */
  stage?: 'raw' | 'conditioned' | 'components';
  /** the per-preparation step: its result, or null when it did not run (a failure is a flag it pushed) */
  perPreparation?: (ctx: PrepContext) => R | null;
  /** a 'raw' stage entry's sweeps for the next steps (e.g. with flagged sweeps removed) */
  sweepsAfter?: (result: R) => SweepSet;
  /** the per-preparation tables of a result (rows as objects; the study stores them as JSON rows) */
  prepTables?: (result: R, ctx: PrepContext) => Record<string, readonly object[]>;
  /** the per-preparation steps of a result the across step (or the study's history) needs */
  prepSteps?: (result: R) => Step[];
  /** rewrite the study's starting history (the first preparation's) from every preparation's (study mode) */
  studyHistory?: (history: Step[], perPreparation: Step[][]) => Step[];
  /**
   * The across-preparation step. In runPipeline it runs only for entries without a per-preparation step (there the
   * per-preparation result is the whole set's); in combineStudy for every entry that has one.
   */
  acrossPreparations?: (ctx: StudyContext) => AcrossOutput | null;
  /** the tables it writes, in bundle order */
  tables: TableSpec[];
  /** the figures of a combined study from its tables (rank orders the figures of every analysis in the report) */
  figures?: { rank: number; make: (study: Study) => Figure[] }[];
  /** methods sentences by history verb */
  methods?: Record<string, StepSentence>;
  /** numbers it computed in a study's tables (0 for every analysis: nothing could be computed) */
  computed?: (tables: Record<string, readonly Row[] | undefined>) => number;
  /** its notebook entry points: ComponentTable methods ('ComponentTable.velocity') or package functions */
  api: string[];
  /** the StudyResult field runPipeline fills with its result (kept for existing callers) */
  resultKey?: string;
}
