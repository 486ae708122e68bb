/**
 * Names and methods wording of the latency definitions (kept apart from components.ts so that the methods
 * text can use them without loading the measurement layer: no runtime imports).
 */
import type { ResolvedComponentOptions } from './components';

/** The latency column of the onset definition, e.g. onset10_ms for 10% of the own peak. */
export function onsetColumn(fraction: number): string {
  return `onset${Math.round(fraction * 100)}_ms`;
}

/**
 * What each latency column means, in methods-text wording (for src/report/methods.ts and the README); with
 * `columns` (default true, as in the provenance) each definition names its column (onset10_ms, halfrise_ms,
 * peak_ms, centroid_ms with bounds centroid_from_ms and centroid_to_ms), without it reads as prose for a methods
 * section.
 * @example componentLatencyText(0.1, 0.1).onset // 'onset latency (onset10_ms): ...'
 */
export function componentLatencyText(
  onsetFraction = 0.1,
  centroidFraction = 0.1,
  columns = true,
): Record<'onset' | 'halfrise' | 'peak' | 'centroid', string> {
  const pc = (f: number) => `${+(f * 100).toFixed(1)}%`;
  const c = (name: string) => (columns ? ` (${name})` : '');
  return {
    onset:
      `onset latency${c(onsetColumn(onsetFraction))}: the time at which the class's own component first reaches ` +
      `${pc(onsetFraction)} of its own peak, found by searching backwards from the peak and interpolating linearly ` +
      'between samples',
    halfrise:
      `half-rise latency${c('halfrise_ms')}: the time at which the rising phase of the class's own component ` +
      'crosses 50% of its own peak, interpolated linearly between samples',
    peak:
      `peak latency${c('peak_ms')}: the time of the maximum of the class's own component on its main phase, ` +
      'refined by a parabola through the three samples around it (for the fastest class of a velocity ' +
      'decomposition, a least-squares parabola through the samples within 2% of the maximum or 3 noise SDs)',
    centroid:
      `centroid latency${c('centroid_ms')}: the centre of mass of the class's own component over the contiguous ` +
      `span around its peak where it exceeds ${pc(centroidFraction)} of its own peak` +
      (columns ? ' (bounds centroid_from_ms, centroid_to_ms)' : ''),
  };
}

/** One paragraph of methods text for the latency definitions and the separation of classes. */
export function latencyMethodsText(
  r: Pick<ResolvedComponentOptions, 'onsetFraction' | 'centroidFraction' | 'separation' | 'k'>,
): string {
  const d = componentLatencyText(r.onsetFraction, r.centroidFraction, false);
  const sep =
    r.separation === 'trough'
      ? 'Overlapping classes were split at the trough between their peaks; a class without a peak of its own was reported as not resolved.'
      : 'Overlapping classes recorded at two or more conduction distances were separated by decomposing the' +
        ' responses into a conduction-velocity distribution (non-negative weights) and one single-fibre waveform' +
        ' shared by every distance of a preparation and temperature, fitted by alternating least squares; classes' +
        ' were split at the deepest valley of the velocity distribution between their ranges, and then, where' +
        ' every class had a mode, the distribution was refitted as one log-normal bump in velocity per class' +
        " (smooth class membership: a class's fibres overlapping a neighbour's velocities stay with their own" +
        ' class; kept when its residual was within 1.25 times that of the free distribution or 1% of the largest' +
        " deflection); each class was measured on the recording minus the other classes' modelled components." +
        ' A class without a separate mode was reported as not resolved. With a single distance, classes were' +
        ' split at the trough between their peaks.';
  const own =
    ' A class whose window overlapped no other class was measured above its own local baseline (the mean of a' +
    ' quiet flank before it, half as long as its span above the centroid level, kept only when its spread was' +
    ' within twice the noise), and a class split by its window was smoothed with a zero-phase Gaussian just wide' +
    ' enough to bring white noise to 2% of its peak (at most a twentieth of that span) before its latencies were' +
    ' read; its noise level for detection was that of the quiet window smoothed alike.';
  const fit =
    " Besides the peak amplitude, each component was fitted by least squares as a multiple of its class's reference" +
    ' waveform at the same site (the mean component of the unblocked sweeps at the highest intensity) plus an offset' +
    " and a slope, over the span above 10% of that waveform's peak widened by half its length on each side (the" +
    ' least-squares amplitude: unlike a picked peak it is not inflated by noise when the response is small, nor' +
    ' moved by a slow drift).';
  const artifact =
    " Where the amplifier clipped on the stimulus artifact, the artifact's decay after the rail was fitted as one or" +
    ' two exponentials (the second kept when it lowered the Bayesian information criterion) shared by every sweep of' +
    ' a preparation, on the samples between the end of clipping and the earliest possible arrival of the fastest' +
    ' class, each sweep scaled on its own samples or, with too few, by its stimulus intensity times the scale per unit' +
    ' of intensity at that site; it was subtracted, no peak was read before the end of clipping and no onset,' +
    ' half-rise or centroid before two fast time constants after it. A class' +
    ' detected at one distance but not at a nearer one recorded with the same stimulus (or, when its peak was under' +
    ' twice the detection level, not at a farther one) was reported as not detected.';
  return `${sep} Latencies were measured on each class's own component with the same definitions at every distance: ${d.onset}; ${d.halfrise}; ${d.peak}; ${d.centroid}.${own} A class counted as present when its component's peak exceeded max(${r.k}, z) times the noise (z the normal quantile at 1 - 0.01/N for N samples searched); this test decided detection only.${fit}${artifact}`;
}
