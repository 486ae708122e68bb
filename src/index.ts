/**
 * The public surface of fascicle. Importing it loads every layer, and with them the methods that a higher layer
 * installs on a lower class (declared by declaration merging in the installing module): SweepSet.components,
 * qc and rejectFlagged (src/measure/table.ts), SweepSet.toNwb (src/io/nwbWrite.ts), Figure.save
 * (src/plot/export.ts), and the report layer's part of Result (src/report/result.ts). See .dependency-cruiser.cjs.
 */
export * from './errors';
export { SweepSet, GroupedSweeps } from './sweeps/SweepSet';
// the verbs as functions of a set (each the same as the SweepSet method of that name)
export {
  baseline,
  removeArtifact,
  alignStimulus,
  filter,
  notch,
  removeHum,
  decimate,
  resample,
} from './sweeps/SweepSet';
export type { Conditions, ConditionValue, Step, Source, SweepSetInit } from './sweeps/SweepSet';
export * from './sweeps/units';
export { readDelimited, parseDelimited, delimitedDefaults } from './io/delimited';
export type { DelimitedOptions } from './io/delimited';
export { readBinary } from './io/binary';
export type { BinarySidecar } from './io/binary';
export { readManifest, readManifestJson, MANIFEST_SCHEMA_PATH } from './io/manifest';
export type { Manifest, ManifestFile } from './io/manifest';
export { butter, butterNormalized, iirnotch, sosGain } from './signal/butter';
export type { Sos, BType, ButterOptions } from './signal/butter';
export { sosfilt, sosfiltfilt, sosfiltZi, defaultPadlen } from './signal/sosfilt';
export { toFrame } from './report/frame';
export { VERSION } from './version';
export { threads, setThreads, workerJobs, stopThreads } from './parallel/pool';
export { baselineDefaults } from './verbs/baseline';
export type { BaselineOptions } from './verbs/baseline';
export { artifactDefaults, detectStimulus, bridgeGap, fitExpTail } from './verbs/artifact';
export type { ArtifactOptions, ArtifactMethod, StimulusDetection } from './verbs/artifact';
export { filterDefaults, notchDefaults } from './verbs/filter';
export type { FilterOptions, NotchOptions } from './verbs/filter';
export { humDefaults } from './verbs/hum';
export type { HumOptions } from './verbs/hum';
export { decimateDefaults } from './verbs/decimate';
export type { DecimateOptions } from './verbs/decimate';
export { resampleDefaults } from './verbs/resample';
export type { ResampleOptions } from './verbs/resample';
export { resamplePolyInto, polyphaseDesign, rationalRatio, firwinKaiser, kaiser, besselI0 } from './signal/resample';
export { PRESETS, resolvePreset, scaledRange, latencyWindow } from './measure/classes';
export type { FiberClass, ClassPreset } from './measure/classes';
export { noiseMad, parabolicPeak, measureResponse, xcorrDelay } from './measure/response';
export type { ResponseMeasure } from './measure/response';
export { measureComponents, componentDefaults } from './measure/components';
export type { ComponentOptions, ComponentRow } from './measure/components';
export { ComponentTable, VelocityResult } from './measure/table';
export { singleSiteVelocity, twoSiteVelocity, regressionVelocity } from './analysis/velocity';
export type { VelocityRow } from './analysis/velocity';
export { summarize, linearFit, pairedCompare } from './analysis/stats';
export { tQuantile, tCdf, fSurvival, chi2Survival, normCdf, normQuantile } from './fit/dist';
export * as model from './model/index';
export { escapeHtml, tableHtml } from './notebook/html';
export { fitCurve, profileCI, extraSumOfSquaresF, trusted } from './fit/lm';
export type { FitOptions, FitResult, ModelFn } from './fit/lm';
export * from './fit/models';
export { doseResponse, fitHill, DoseResponseResult, doseResponseDefaults } from './analysis/doseResponse';
export type { DoseResponseOptions, DosePoint } from './analysis/doseResponse';
export { recruitment, RecruitmentResult, recruitmentDefaults } from './analysis/recruitment';
export { strengthDuration, StrengthDurationResult, strengthDurationDefaults } from './analysis/strengthDuration';
export type { StrengthDurationOptions } from './analysis/strengthDuration';
export { fitTemperature, temperatureAnalysis, TemperatureResult } from './analysis/temperature';
export type { TemperatureFit } from './analysis/temperature';
export { Figure, PALETTE, baseLayout, plotlyJs } from './plot/figure';
export type { PlotlySpec } from './plot/figure';
export {
  sweepsFigure,
  recruitmentFigure,
  velocityFigure,
  doseResponseFigure,
  temperatureFigure,
  summaryFigure,
  strengthDurationFigure,
} from './plot/builders';
export { saveFigures, findBrowser } from './plot/export';
export { methodsText } from './report/methods';
export { writeBundle, toCsv, csvCell, makeProvenance, verifyInputs } from './report/bundle';
export type { Provenance, BundleContent } from './report/bundle';
export { runPipeline, condition } from './report/pipeline';
export type { PipelineOptions, StudyResult } from './report/pipeline';
export { runPreparation, combineStudy, byPreparation } from './report/study';
export type { Study, StudyTables, PrepOutput } from './report/study';
export { runStudy, mergeShards } from './cli/engine';
export { writeWide, writeBinary } from './io/write';
export { makeDemo } from './model/makeDemo';
export { progress } from './notebook/progress';
export { showAll } from './notebook/show';
export { Result } from './report/result';
export { humLimits } from './verbs/hum';
export { MARKERS, SEQUENTIAL, sequentialColour, layoutFor } from './plot/figure';
export { openExporter, FigureExporter, COLUMN_WIDTHS_MM, PRINT_PT, printSpec } from './plot/export';
export type { SaveJob, SaveOptions, SizeOptions, Column } from './plot/export';
export { plotlyText, unitText, measureLabel, logTicks } from './plot/labels';
export { averageRepeats, velocityOf, velocityBy, computedCount, PIPELINE_OPTION_KEYS } from './report/pipeline';
export type { Flag } from './report/pipeline';
export {
  latencyDefinitions,
  markRecommended,
  recommendedEstimator,
  RECOMMENDED_VELOCITY,
  FIBRE_RANGE_M_S,
} from './analysis/velocity';
export type { LatencyDefinition, LatencyBasis, VelocityStatus, Estimator } from './analysis/velocity';
export { velocityTemperature, temperatureRow } from './analysis/temperature';
export type { RecruitmentOptions } from './analysis/recruitment';
export {
  sweepQc,
  rejectFlagged,
  rejectedSweeps,
  sweepQcDefaults,
  sweepQcMethods,
  qcStepMethods,
  QC_REFERENCES,
} from './analysis/sweepQc';
export { SweepQcResult, QC_FLAGS, detrendedMadNoise, differenceNoise, railSamples } from './analysis/sweepQc';
export type { SweepQcOptions, QcFlag } from './analysis/sweepQc';
export {
  welchTTest,
  mannWhitneyU,
  mannWhitneyExactSf,
  rankAverage,
  oneWayAnova,
  repeatedMeasuresAnova,
  holm,
  benjaminiHochberg,
  compareGroups,
  animalMeans,
  rowsOf,
  groupMethods,
  groupStepMethods,
  GROUP_REFERENCES,
  GroupComparison,
  groupDefaults,
  tTwoSided,
  normSf,
} from './analysis/groups';
export type {
  GroupOptions,
  RowInput,
  AnimalPoint,
  WelchResult,
  MannWhitneyResult,
  AnovaResult,
  RmAnovaResult,
  TestStatus,
} from './analysis/groups';
export {
  mixedModel,
  mixedMethods,
  mixedStepMethods,
  MIXED_REFERENCES,
  fitRandomIntercept,
  satterthwaiteDf,
  contrastF,
  MixedModelResult,
  mixedDefaults,
} from './analysis/mixed';
export type { MixedOptions, RandomInterceptFit } from './analysis/mixed';
export { groupFigure, groupFigures } from './plot/groups';
export { readNwb, readNwbSync, readNwbTables, describeNwb, nwbReady, nwbLoaded, NwbNotReadyError } from './io/nwb';
export type { NwbReadOptions, NwbContents } from './io/nwb';
export { writeNwb, writeNwbSync, writtenByFascicle } from './io/nwbWrite';
export type { NwbWriteOptions, NwbWriteResult } from './io/nwbWrite';
export { NWB_CONDITIONS } from './io/nwbColumns';
export { classViews } from './plot/builders';
export { sweepViewer } from './plot/viewer';
export { sweepSetHtml, showSweepSet } from './notebook/sweepSet';
export { latencyMethodsText, componentLatencyText, onsetColumn, clipEndMs, artifactDecay } from './measure/components';
export type { Polarity, ResolvedComponentOptions } from './measure/components';
export { fitSharedShape, decomposeTrace, valleyBin, nnlsGram } from './measure/decompose';
export { ownLatencies } from './measure/response';
export { nnls, nnlsGram as nnlsNormalEquations } from './signal/nnls';
export type { NnlsResult } from './signal/nnls';
export {
  velocityDistribution,
  velocityDistributionDefaults,
  VelocityDistributionResult,
  velocityGrid,
  compareVelocityDistributions,
} from './analysis/velocityDistribution';
export type { VelocityDistributionOptions, VelocityDistributionFit } from './analysis/velocityDistribution';
export { velocityDistributionFigure, velocityReconstructionFigure } from './plot/velocityDistribution';
export {
  pairedPulse,
  pairedPulseDefaults,
  PairedPulseResult,
  fitRecovery,
  recoveryLogistic,
  recoveryLogistic90,
} from './analysis/pairedPulse';
export type { PairedPulseOptions, RecoveryFit } from './analysis/pairedPulse';
export { trains, trainDefaults, TrainResult } from './analysis/trains';
export type { TrainOptions } from './analysis/trains';
export { recoveryFigure, trainFigure } from './plot/recovery';
export { simulatePairedPulse, simulateTrain, pairedPulseTruth, trainTruth, trainTimes } from './model/pulses';
export { reportHtml, writeReportHtml, reportFragment, showReport } from './report/reportHtml';
export type { ReportInput } from './report/reportHtml';
export type { GroupTable, VelocityDistributionEntry } from './report/pipeline';
export {
  unblind,
  unblindOutputs,
  unblindPipelineOptions,
  checkBlindingKey,
  toBlindingKey,
  blindingStep,
  unblindStep,
  blindingDefaults,
  readBlindingKey,
  parseBlindingKey,
  looksLikeBlindingKey,
  blindingKeysInStudy,
} from './analysis/blinding';
export type { BlindingKey, KeyInput, UnblindOptions, Unblindable } from './analysis/blinding';
// types the public API refers to (TypeDoc's notExported validation: every referenced type is documented)
export type { Row } from './registry/types';
export type { RunOptions } from './cli/engine';
export type { MethodsContext } from './report/methods';
export type { Recording } from './report/study';
export type { LinearFit, PairedComparison, Summary } from './analysis/stats';
export type { ResolvedGroupOptions } from './analysis/groups';
export type { ResolvedSweepQcOptions, Removed } from './analysis/sweepQc';
export type { ResultTables } from './io/nwbWrite';
export type { ConditionSpec, ColumnKind, ResultRows } from './io/nwbColumns';
export type { DeferredSamples, SampleView } from './verbs/types';
export type { ClipOptions } from './measure/components';
export { fitArtifactShape, artifactScale, artifactShapeValue } from './measure/components';
export type { ArtifactShape, ArtifactStretch } from './measure/components';
export type { OwnLatencies } from './measure/response';
export type {
  DecomposeGrid,
  DecomposeOptions,
  DecomposeTrace,
  SharedShape,
  TraceDecomposition,
} from './measure/decompose';
export type { FiltfiltWork } from './signal/sosfilt';
export type { Samples, Correction } from './parallel/kernels';
export type { LogTicks } from './plot/labels';
export type { GroupFigureOptions } from './plot/groups';
export type { VelocityDistributionFigureOptions } from './plot/velocityDistribution';
export type { Progress } from './notebook/progress';
export type { SweepSetView } from './notebook/sweepSet';
export { sweepQcFigure } from './plot/qc';
export { latencyPrecision } from './measure/response';
export { componentCancellation, MAX_CANCELLATION } from './measure/decompose';
