/**
 * Generalisation test: variants of the independent development set FNPG-N07 (NEURON single-fibre models summed
 * into compound responses; /work/shared/devset, vendored under tests/fixtures/devset) whose truth is still known
 * exactly, run through the public API as a user would (files + manifest, readManifest, runPipeline; settings
 * from the README and the recording's description, never from the truth). The judging set differs from the
 * development set in populations, distances and count, polarity, monopolar/bipolar recording, hum, artifact
 * shape and sampling; each variant changes one of those. How each variant is made and where each truth comes
 * from: tests/external/variants.ts and tests/fixtures/devset-variants/make_variants.py.
 *
 * Tolerances are issue 14's (recommended velocity 3% A classes, 5% C; two-site peak velocity the same; IC50 and
 * Hill slope 15%; Q10 5%; I50 10%); structural checks: no throw, no lost rows or classes, the main phase chosen
 * right, A-delta detected in every supramaximal sweep, one-site runs flag two-site velocities.
 * A check listed in NOT_YET is not met today: it is still computed and printed, and declared as an expected
 * failure (it.fails), so that meeting it turns the run red until it is moved out of NOT_YET. Nothing here
 * weakens a tolerance. The baseline run (the set as vendored, same harness) is printed beside each variant
 * ("devset error %") and asserted in tests/external/devset.test.ts, not here.
 */
import { describe, it, expect, afterAll } from 'vitest';
import { mkdtempSync, rmSync } from 'node:fs';
import { readManifest } from '../../src';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import {
  artifactModelV,
  baseAnalysis,
  idOf,
  idOfStructural,
  intensityOf,
  lcg,
  mapSweeps,
  printVariant,
  replaceArtifact,
  temperatureOf,
  cleanAt,
  RAIL_V,
  resampled,
  runVariant,
  structuralChecks,
  variantChecks,
  vendored,
  type Recording,
  type Variant,
  type VCheck,
  type W,
} from './variants';

const ALL = ['recruitment', 'dose_response', 'temperature'] as const;
const both = (w: W) => ALL.map((s) => vendored(s, w));
const MONO = [{ mm: 15 }, { mm: 25 }];
const clip = (v: number) => Math.max(-RAIL_V, Math.min(RAIL_V, v));
/**
 * A nuisance added before the amplifier: a sample on the rail stays there (the signal before clipping lies beyond
 * the rail by far more than the nuisance), every other sample is moved and the rail applied.
 */
const onRail = (v: number) => Math.abs(v) >= RAIL_V * (1 - 1e-4);
const addBeforeRail = (v: number, d: number) => (onRail(v) ? v : clip(v + d));

/** Solve the normal equations A^T A b = A^T y (Gaussian elimination with partial pivoting); columns of A as functions. */
function leastSquares(cols: ((i: number) => number)[], y: ArrayLike<number>, use: (i: number) => boolean): number[] {
  const k = cols.length;
  const M = Array.from({ length: k }, () => new Array(k + 1).fill(0));
  for (let i = 0; i < y.length; i++) {
    if (!use(i)) continue;
    const a = cols.map((c) => c(i));
    for (let r = 0; r < k; r++) {
      for (let c = 0; c < k; c++) M[r][c] += a[r] * a[c];
      M[r][k] += a[r] * y[i];
    }
  }
  for (let c = 0; c < k; c++) {
    let p = c;
    for (let r = c + 1; r < k; r++) if (Math.abs(M[r][c]) > Math.abs(M[p][c])) p = r;
    [M[c], M[p]] = [M[p], M[c]];
    for (let r = 0; r < k; r++)
      if (r !== c) {
        const q = M[r][c] / M[c][c];
        for (let j = c; j <= k; j++) M[r][j] -= q * M[c][j];
      }
  }
  return M.map((row, r) => row[k] / row[r]);
}

/**
 * 60 Hz + 180 Hz hum (15 uV and 4.5 uV: the set's 50/150 Hz sizes), seeded phase per sweep, the same on both channels.
 * In the slow window (150 ms, where the manifest removes hum) the set's own 50/150 Hz hum is first taken out the way
 * the manifest's hum step would: least squares (with a quadratic for the drift) over the samples outside 0-90 ms,
 * the sinusoids subtracted from the whole sweep; what that leaves is what the development set's own run leaves.
 * The fast window (20 ms, one mains period; no hum step in its manifest) keeps its 50 Hz hum.
 */
function addHum60(rec: Recording): Recording {
  const rnd = lcg(6060 + rec.nSweeps);
  const ph = Array.from({ length: rec.nSweeps }, () => [2 * Math.PI * rnd(), 2 * Math.PI * rnd()]);
  return mapSweeps(rec, (x0, s, _ch, tMs) => {
    let x = x0;
    if (rec.w === 'slow') {
      const w = (f: number, fn: (a: number) => number) => (i: number) => fn((2 * Math.PI * f * tMs(i)) / 1000);
      const hum = [w(50, Math.sin), w(50, Math.cos), w(150, Math.sin), w(150, Math.cos)];
      const poly = [() => 1, (i: number) => tMs(i) / 100, (i: number) => (tMs(i) / 100) ** 2];
      const b = leastSquares([...hum, ...poly], x0, (i) => !onRail(x0[i]) && (tMs(i) < 0 || tMs(i) > 90));
      x = x0.map((v, i) => (onRail(v) ? v : v - hum.reduce((acc, h, j) => acc + b[j] * h(i), 0)));
    }
    return x.map((v, i) => {
      const t = tMs(i) / 1000;
      const hum =
        15e-6 * Math.sin(2 * Math.PI * 60 * t + ph[s][0]) + 4.5e-6 * Math.sin(2 * Math.PI * 180 * t + ph[s][1]);
      return addBeforeRail(v, hum);
    });
  });
}

/**
 * Bipolar channel: 15 mm contact minus 25 mm contact. Where either channel sits on the rail, the difference of
 * the clipped samples is not what a differential amplifier sees: there the set's artifact model (0.4 x the
 * 15 mm artifact: 1 - 0.6) is used, and the rail applied to the difference.
 */
function bipolar(rec: Recording): Recording {
  const n = rec.nSamples;
  const [a, b] = rec.channels;
  const x = new Float32Array(a.x.length);
  for (let s = 0; s < rec.nSweeps; s++) {
    const mA = intensityOf(rec, s);
    for (let i = 0; i < n; i++) {
      const k = s * n + i;
      const railed = onRail(a.x[k]) || onRail(b.x[k]);
      const t = rec.t0Ms + (i * 1000) / rec.fs;
      x[k] = clip(railed ? 0.4 * artifactModelV(t, mA) : a.x[k] - b.x[k]);
    }
  }
  return {
    ...rec,
    channels: [{ ...a, x, conditions: { ...a.conditions, site: 'ch1-ch2', referenceDistanceMm: 25 } }],
  };
}

/** A longer artifact tail of the rail's sign: -B I exp(-(t - 0.1 ms)/tau) from the end of the pulse, x0.6 at 25 mm */
function addTail(rec: Recording, bVPerMa: number, tauMs: number): Recording {
  return mapSweeps(rec, (x, s, ch, tMs) => {
    const g = (ch.conditions.distanceMm as number) === 25 ? 0.6 : 1;
    const mA = intensityOf(rec, s);
    return x.map((v, i) => {
      const t = Math.round(tMs(i) * 1e6) / 1e6;
      return t < 0.1 ? v : addBeforeRail(v, -g * bVPerMa * mA * Math.exp(-(t - 0.1) / tauMs));
    });
  });
}

/**
 * Another artifact shape (at 15 mm; x0.6 at 25 mm): a charge-balanced biphasic pulse (+150 mV/mA for 0.1 ms, then
 * -150 mV/mA for 0.1 ms), then a decay of the opposite sign to the set's (+40 mV/mA, tau 50 us: the rail is now
 * on the CAP's side) and a slower negative tail (-0.2 mV/mA, tau 0.8 ms). Invented for this test.
 */
function biphasicArtifactV(tMs0: number, mA: number): number {
  const t = Math.round(tMs0 * 1e6) / 1e6;
  if (t < 0) return 0;
  if (t < 0.1) return 0.15 * mA;
  if (t < 0.2) return -0.15 * mA;
  return mA * (0.04 * Math.exp(-(t - 0.2) / 0.05) - 0.0002 * Math.exp(-(t - 0.2) / 0.8));
}

/**
 * Other fibre populations: each class's clean class-only component (tests/fixtures/devset/clean, the temperature
 * series) added (factor - 1) times, so that the class is `factor` times as large (its trial jitter unscaled);
 * every latency definition is scale-free, so the velocity truth is unchanged.
 */
function scaleClasses(rec: Recording, factor: Record<string, number>): Recording {
  return mapSweeps(rec, (x, s, ch) => {
    const T = temperatureOf(rec, s);
    const out = Float64Array.from(x);
    for (const [cls, k] of Object.entries(factor)) {
      if ((cls === 'C') !== (rec.w === 'slow')) continue;
      const c = cleanAt(T, cls, { mm: ch.conditions.distanceMm as number });
      for (let i = 0; i < out.length; i++) out[i] = onRail(x[i]) ? x[i] : clip(out[i] + (k - 1) * c[i]);
    }
    return Float32Array.from(out);
  });
}

const VARIANTS: Variant[] = [
  {
    name: 'devset',
    describe: 'the development set as vendored (reference for the "devset error %" column; asserted elsewhere)',
    recordings: both,
    analysis: baseAnalysis,
    polarity: 1,
    sites: MONO,
  },
  {
    name: 'inverted',
    describe: 'every sample x -1 (negative-going CAP, rail and artifact inverted); truth unchanged; polarity auto',
    recordings: (w) => both(w).map((r) => mapSweeps(r, (x) => x.map((v) => -v))),
    analysis: baseAnalysis,
    polarity: -1,
    sites: MONO,
  },
  {
    name: 'hum60',
    describe: '60 + 180 Hz hum instead of 50 + 150 Hz (slow window); the manifest removes 60 Hz; truth unchanged',
    recordings: (w) => both(w).map(addHum60),
    analysis: (w) => {
      const a = baseAnalysis(w);
      if (a.hum) a.hum = { ...a.hum, frequency: 60 };
      return a;
    },
    polarity: 1,
    sites: MONO,
    // the fast window (no hum step; A classes in mV) gave the devset's numbers with 60 Hz added: not rerun
    windows: ['slow'],
  },
  {
    name: 'bipolar',
    describe:
      'one channel: 15 mm minus 25 mm (referenceDistanceMm 25); truth from the difference of the clean components',
    recordings: (w) => both(w).map(bipolar),
    analysis: baseAnalysis,
    polarity: 1,
    sites: [{ mm: 15, refMm: 25 }],
  },
  {
    name: 'bipolar-inverted',
    describe:
      'the bipolar channel with its leads the other way round (25 mm minus 15 mm, declared as 15 mm with ' +
      'referenceDistanceMm 25 and a negative main phase); temperature and dose series; truth as bipolar',
    recordings: (w) =>
      [vendored('temperature', w), vendored('dose_response', w)]
        .map(bipolar)
        .map((r) => mapSweeps(r, (x) => x.map((v) => -v))),
    analysis: baseAnalysis,
    polarity: -1,
    sites: [{ mm: 15, refMm: 25 }],
  },
  {
    name: 'one-site',
    describe: 'the 15 mm channel only; truth: single-site values of ground_truth.json',
    recordings: (w) => both(w).map((r) => ({ ...r, channels: [r.channels[0]] })),
    analysis: baseAnalysis,
    polarity: 1,
    sites: [{ mm: 15 }],
  },
  {
    name: 'tail',
    describe:
      'a longer negative artifact tail added (fast 2 mV/mA, tau 0.3 ms; slow 0.1 mV/mA, tau 3 ms; x0.6 at 25 mm), ' +
      'rail applied again; truth unchanged',
    recordings: (w) => both(w).map((r) => (w === 'fast' ? addTail(r, 2e-3, 0.3) : addTail(r, 1e-4, 3))),
    analysis: baseAnalysis,
    polarity: 1,
    sites: MONO,
  },
  {
    name: 'artifact-biphasic',
    describe:
      'the artifact replaced by a biphasic one whose decay ends on the rail of the CAP sign (+ then -150 mV/mA, ' +
      '+40 mV/mA tau 50 us, -0.2 mV/mA tau 0.8 ms); the manifests unchanged; truth unchanged',
    recordings: (w) => both(w).map((r) => replaceArtifact(r, biphasicArtifactV)),
    analysis: baseAnalysis,
    polarity: 1,
    sites: MONO,
  },
  {
    name: 'populations',
    describe:
      'other populations: A-alpha/beta x0.6, A-delta x1.8, C x1.5 (clean components added), temperature series ' +
      'only; truth unchanged (latency definitions are scale-free)',
    recordings: (w) => [scaleClasses(vendored('temperature', w), { 'A-alpha/beta': 0.6, 'A-delta': 1.8, C: 1.5 })],
    analysis: baseAnalysis,
    polarity: 1,
    sites: MONO,
  },
  {
    name: 'populations-small-delta',
    describe:
      'other populations the other way: A-alpha/beta x1.3, A-delta x0.5, C x0.6 (clean components added), ' +
      'temperature series only; truth unchanged',
    recordings: (w) => [scaleClasses(vendored('temperature', w), { 'A-alpha/beta': 1.3, 'A-delta': 0.5, C: 0.6 })],
    analysis: baseAnalysis,
    polarity: 1,
    sites: MONO,
  },
  {
    name: 'distances-x1.3',
    describe:
      'the manifest says 19.5 and 32.5 mm (the set x1.3): the recordings of a nerve conducting 1.3x faster; ' +
      'temperature series; truth: ground_truth.json velocities x1.3, Q10 unchanged',
    recordings: (w) =>
      [vendored('temperature', w)].map((r) => ({
        ...r,
        channels: r.channels.map((ch) => ({
          ...ch,
          conditions: { ...ch.conditions, distanceMm: (ch.conditions.distanceMm as number) * 1.3 },
        })),
      })),
    analysis: baseAnalysis,
    polarity: 1,
    sites: MONO,
    distanceScale: 1.3,
  },
  {
    name: 'absent-classes',
    describe:
      'temperature series with A-delta (fast) and C (slow) taken out (their clean components subtracted: ' +
      'supramaximal, every fibre fires); they must give no number; A-alpha/beta truth unchanged',
    recordings: (w) => [scaleClasses(vendored('temperature', w), w === 'fast' ? { 'A-delta': 0 } : { C: 0 })],
    analysis: baseAnalysis,
    polarity: 1,
    sites: MONO,
    absent: ['A-delta', 'C'],
  },
  {
    name: 'int16-uV',
    describe:
      'the files as int16 counts of 0.5 uV with units "uV" in the sidecar (a lab\'s acquisition format; ' +
      'the rail at +/-20000 counts), temperature and dose series; truth unchanged',
    recordings: (w) => [vendored('temperature', w), vendored('dose_response', w)],
    analysis: baseAnalysis,
    polarity: 1,
    sites: MONO,
    storage: { dtype: 'int16', gainUv: 0.5 },
  },
  {
    name: 'resampled',
    describe:
      'fast 50 -> 40 kHz, slow 20 -> 16 kHz (SciPy resample_poly, rail applied again); the slow low-pass at a ' +
      'quarter of the new rate (4 kHz) as the manifest says; temperature and dose series; truth unchanged',
    recordings: (w) => [
      resampled('temperature', w, w === 'fast' ? 40000 : 16000),
      resampled('dose_response', w, w === 'fast' ? 40000 : 16000),
    ],
    analysis: (w) => {
      const a = baseAnalysis(w);
      if (a.filter) a.filter = { ...a.filter, cutoff: 4000 };
      return a;
    },
    polarity: 1,
    sites: MONO,
  },
  {
    name: 'combined',
    describe:
      'resampled (40/16 kHz) + 60 Hz hum (slow) + inverted + distances x1.3 + int16 counts of 0.5 uV at once, ' +
      'temperature and dose series; truth: velocities x1.3, the rest unchanged',
    recordings: (w) =>
      [
        resampled('temperature', w, w === 'fast' ? 40000 : 16000),
        resampled('dose_response', w, w === 'fast' ? 40000 : 16000),
      ]
        .map((r) => (w === 'slow' ? addHum60(r) : r))
        .map((r) => mapSweeps(r, (x) => x.map((v) => -v)))
        .map((r) => ({
          ...r,
          channels: r.channels.map((ch) => ({
            ...ch,
            conditions: { ...ch.conditions, distanceMm: (ch.conditions.distanceMm as number) * 1.3 },
          })),
        })),
    analysis: (w) => {
      const a = baseAnalysis(w);
      if (a.hum) a.hum = { ...a.hum, frequency: 60 };
      if (a.filter) a.filter = { ...a.filter, cutoff: 4000 };
      return a;
    },
    polarity: -1,
    sites: MONO,
    distanceScale: 1.3,
    storage: { dtype: 'int16', gainUv: 0.5 },
  },
  {
    name: 'resampled-100k',
    describe: 'fast window 50 -> 100 kHz (SciPy resample_poly), temperature series only; truth unchanged',
    recordings: () => [resampled('temperature', 'fast', 100000)],
    analysis: baseAnalysis,
    polarity: 1,
    sites: MONO,
    windows: ['fast'],
  },
];

// FASCICLE_VARIANTS=bipolar,tail runs only those (and the devset, for the comparison column): for quick iterations
const only = process.env.FASCICLE_VARIANTS?.split(',').map((q) => q.trim());
const chosen = VARIANTS.filter((v) => !only || v.name === 'devset' || only.includes(v.name));
const ran = (name: string) => chosen.some((v) => v.name === name);
const root = mkdtempSync(join(tmpdir(), 'fascicle-variants-'));
afterAll(() => rmSync(root, { recursive: true, force: true }));
const runs = chosen.map((v) => runVariant(v, root));
const checks = runs.map(variantChecks);
const structural = runs.map(structuralChecks);
runs.forEach((r, i) => printVariant(r, checks[i], i === 0 ? undefined : checks[0], structural[i]));
console.log(
  'variants summary: ' +
    runs
      .map(
        (r, i) =>
          `${r.variant.name} ${checks[i].filter((c) => c.ok).length}/${checks[i].length} numbers, ` +
          `${structural[i].filter((s) => s.ok).length}/${structural[i].length} structural`,
      )
      .join('; '),
);

/** one line per variant: tolerances met per group of checks, and structural checks */
{
  const groups: [string, (c: VCheck) => boolean][] = [
    ['A-alpha/beta velocity', (c) => c.class === 'A-alpha/beta' && c.quantity === 'velocity m/s'],
    ['A-delta velocity', (c) => c.class === 'A-delta' && c.quantity === 'velocity m/s'],
    ['C velocity', (c) => c.class === 'C' && c.quantity === 'velocity m/s'],
    ['Q10', (c) => c.quantity === 'Q10'],
    ['IC50 + Hill', (c) => c.quantity === 'IC50 uM' || c.quantity === 'Hill slope'],
    ['I50', (c) => c.quantity === 'I50 mA'],
  ];
  const lines = ['variant | ' + groups.map((g) => g[0]).join(' | ') + ' | structural'];
  runs.forEach((r, i) => {
    const cell = (f: (c: VCheck) => boolean) => {
      const m = checks[i].filter((c) => c.asserted && f(c));
      return m.length ? `${m.filter((c) => c.ok).length}/${m.length}` : '-';
    };
    lines.push(
      `${r.variant.name} | ${groups.map((g) => cell(g[1])).join(' | ')} | ` +
        `${structural[i].filter((q) => q.ok).length}/${structural[i].length}`,
    );
  });
  console.log('Tolerances met per variant (within / checked):\n' + lines.join('\n'));
}

// ---- a wrong bipolar configuration is refused with a typed error naming the option ----
const badReference = (() => {
  if (!ran('bipolar')) return undefined;
  const set = readManifest(join(root, 'bipolar', 'fast', 'fast.manifest.json')).where({ series: 'temperature' });
  try {
    set.components({ preset: 'mammalian', referenceDistanceMm: 10 });
    return null;
  } catch (e) {
    return e as Error;
  }
})();

// ---- configuration a user may leave to the software: mains frequency 'detect' on the slow window ----
const detectRuns = (['devset', 'hum60'] as const).filter(ran).map((name) => {
  const set = readManifest(join(root, name, 'slow', 'slow.manifest.json')).where({ series: 'temperature' });
  const a = baseAnalysis('slow');
  const h = set
    .baseline(a.baseline || {})
    .removeHum({ ...(a.hum || {}), frequency: 'detect' })
    .history.find((q) => q.verb === 'removeHum');
  return { name, expected: name === 'hum60' ? 60 : 50, fitted: Number(h?.options.fittedFrequencyHz) };
});
console.log(
  "mains frequency 'detect' (slow window, temperature series): " +
    detectRuns.map((d) => `${d.name} ${d.fitted} Hz (expected ${d.expected})`).join('; '),
);

/**
 * Checks not met at the last update of this list (from the printed table): expected failures.
 * Keys: `<variant> | <quantity> | <class> | <where> | <estimator>` and `<variant> | <structural check>`.
 * The run prints "NOT_YET out of date" with the keys to add or remove when the list no longer matches.
 */
// last updated 17:15 UTC from `npx vitest run tests/external/variants.test.ts --maxWorkers=1`
const NOT_YET = new Set<string>([
  'artifact-biphasic | I50 mA | A-delta | 15 mm | Boltzmann fit',
  'artifact-biphasic | IC50 uM | A-delta | 25 mm | Hill fit',
  'artifact-biphasic | Q10 | A-delta | 20-37 C | two-site xcorr',
  'artifact-biphasic | fast|temperature: A-delta detected in every supramaximal sweep',
  'artifact-biphasic | velocity m/s | A-delta | 20 C | two-site peak',
  'artifact-biphasic | velocity m/s | A-delta | 25 C | two-site peak',
  'artifact-biphasic | velocity m/s | A-delta | 30 C | recommended (two-site xcorr)',
  'artifact-biphasic | velocity m/s | A-delta | 30 C | two-site peak',
  'artifact-biphasic | velocity m/s | A-delta | 37 C | recommended (two-site xcorr)',
  'artifact-biphasic | velocity m/s | A-delta | 37 C | two-site peak',
  'artifact-biphasic | velocity m/s | C | 37 C | two-site peak',
  'bipolar | Hill slope | A-delta | 15-25 mm bipolar | Hill fit',
  'bipolar | I50 mA | A-delta | 15-25 mm bipolar | Boltzmann fit',
  'bipolar | IC50 uM | A-delta | 15-25 mm bipolar | Hill fit',
  'bipolar | Q10 | A-delta | 20-37 C | single-site peak',
  'bipolar | fast|dose: A-delta detected in every supramaximal sweep',
  'bipolar | fast|temperature: A-delta detected in every supramaximal sweep',
  'bipolar | velocity m/s | A-delta | 20 C | recommended (single-site peak)',
  'bipolar | velocity m/s | A-delta | 25 C | recommended (single-site peak)',
  'bipolar | velocity m/s | A-delta | 30 C | recommended (single-site peak)',
  'bipolar | velocity m/s | A-delta | 37 C | recommended (single-site peak)',
  'bipolar-inverted | Hill slope | A-delta | 15-25 mm bipolar | Hill fit',
  'bipolar-inverted | IC50 uM | A-delta | 15-25 mm bipolar | Hill fit',
  'bipolar-inverted | Q10 | A-delta | 20-37 C | single-site peak',
  'bipolar-inverted | fast|dose: A-delta detected in every supramaximal sweep',
  'bipolar-inverted | fast|temperature: A-delta detected in every supramaximal sweep',
  'bipolar-inverted | velocity m/s | A-delta | 20 C | recommended (single-site peak)',
  'bipolar-inverted | velocity m/s | A-delta | 25 C | recommended (single-site peak)',
  'bipolar-inverted | velocity m/s | A-delta | 30 C | recommended (single-site peak)',
  'bipolar-inverted | velocity m/s | A-delta | 37 C | recommended (single-site peak)',
  'combined | fast|temperature: A-delta detected in every supramaximal sweep',
  'combined | velocity m/s | A-delta | 20 C | two-site peak',
  'combined | velocity m/s | A-delta | 25 C | two-site peak',
  'combined | velocity m/s | A-delta | 30 C | two-site peak',
  'combined | velocity m/s | A-delta | 37 C | recommended (two-site xcorr)',
  'combined | velocity m/s | A-delta | 37 C | two-site peak',
  'combined | velocity m/s | C | 37 C | two-site peak',
  'distances-x1.3 | velocity m/s | A-delta | 20 C | two-site peak',
  'distances-x1.3 | velocity m/s | A-delta | 25 C | two-site peak',
  'distances-x1.3 | velocity m/s | A-delta | 30 C | two-site peak',
  'distances-x1.3 | velocity m/s | A-delta | 37 C | recommended (two-site xcorr)',
  'distances-x1.3 | velocity m/s | A-delta | 37 C | two-site peak',
  'distances-x1.3 | velocity m/s | C | 37 C | two-site peak',
  'hum60 | velocity m/s | C | 37 C | two-site peak',
  'int16-uV | velocity m/s | A-delta | 20 C | recommended (two-site xcorr)',
  'int16-uV | velocity m/s | A-delta | 20 C | two-site peak',
  'int16-uV | velocity m/s | A-delta | 25 C | two-site peak',
  'int16-uV | velocity m/s | A-delta | 30 C | two-site peak',
  'int16-uV | velocity m/s | A-delta | 37 C | two-site peak',
  'int16-uV | velocity m/s | C | 37 C | two-site peak',
  'inverted | velocity m/s | A-delta | 20 C | recommended (two-site xcorr)',
  'inverted | velocity m/s | A-delta | 20 C | two-site peak',
  'inverted | velocity m/s | A-delta | 25 C | two-site peak',
  'inverted | velocity m/s | A-delta | 30 C | two-site peak',
  'inverted | velocity m/s | A-delta | 37 C | two-site peak',
  'inverted | velocity m/s | C | 37 C | two-site peak',
  'one-site | Hill slope | A-delta | 15 mm | Hill fit',
  'one-site | I50 mA | A-delta | 15 mm | Boltzmann fit',
  'one-site | IC50 uM | A-delta | 15 mm | Hill fit',
  'one-site | Q10 | A-delta | 20-37 C | single-site peak',
  'one-site | fast|dose: A-delta detected in every supramaximal sweep',
  'one-site | fast|temperature: A-delta detected in every supramaximal sweep',
  'one-site | velocity m/s | A-delta | 20 C | recommended (single-site peak)',
  'one-site | velocity m/s | A-delta | 25 C | recommended (single-site peak)',
  'one-site | velocity m/s | A-delta | 30 C | recommended (single-site peak)',
  'one-site | velocity m/s | A-delta | 37 C | recommended (single-site peak)',
  'populations | velocity m/s | A-delta | 20 C | two-site peak',
  'populations | velocity m/s | A-delta | 25 C | two-site peak',
  'populations | velocity m/s | A-delta | 30 C | two-site peak',
  'populations | velocity m/s | A-delta | 37 C | two-site peak',
  'populations-small-delta | Q10 | A-delta | 20-37 C | two-site xcorr',
  'populations-small-delta | velocity m/s | A-delta | 20 C | two-site peak',
  'populations-small-delta | velocity m/s | A-delta | 25 C | two-site peak',
  'populations-small-delta | velocity m/s | A-delta | 30 C | two-site peak',
  'populations-small-delta | velocity m/s | A-delta | 37 C | recommended (two-site xcorr)',
  'populations-small-delta | velocity m/s | A-delta | 37 C | two-site peak',
  'populations-small-delta | velocity m/s | C | 37 C | recommended (regression centroid)',
  'populations-small-delta | velocity m/s | C | 37 C | two-site peak',
  'resampled | velocity m/s | A-delta | 20 C | recommended (two-site xcorr)',
  'resampled | velocity m/s | A-delta | 20 C | two-site peak',
  'resampled | velocity m/s | A-delta | 25 C | two-site peak',
  'resampled | velocity m/s | A-delta | 30 C | two-site peak',
  'resampled | velocity m/s | A-delta | 37 C | recommended (two-site xcorr)',
  'resampled | velocity m/s | C | 37 C | two-site peak',
  'resampled-100k | velocity m/s | A-delta | 20 C | recommended (two-site xcorr)',
  'resampled-100k | velocity m/s | A-delta | 20 C | two-site peak',
  'resampled-100k | velocity m/s | A-delta | 25 C | two-site peak',
  'resampled-100k | velocity m/s | A-delta | 30 C | two-site peak',
  'resampled-100k | velocity m/s | A-delta | 37 C | recommended (two-site xcorr)',
  'resampled-100k | velocity m/s | A-delta | 37 C | two-site peak',
  'tail | Hill slope | A-delta | 15 mm | Hill fit',
  'tail | Hill slope | A-delta | 25 mm | Hill fit',
  'tail | IC50 uM | A-delta | 15 mm | Hill fit',
  'tail | Q10 | A-delta | 20-37 C | two-site xcorr',
  'tail | velocity m/s | A-delta | 20 C | recommended (two-site xcorr)',
  'tail | velocity m/s | A-delta | 20 C | two-site peak',
  'tail | velocity m/s | A-delta | 25 C | two-site peak',
  'tail | velocity m/s | A-delta | 30 C | two-site peak',
  'tail | velocity m/s | A-delta | 37 C | two-site peak',
  'tail | velocity m/s | C | 37 C | two-site peak',
]);
{
  const failing = new Set([
    ...checks.flatMap((c, i) => (i === 0 ? [] : c.filter((q) => q.asserted && !q.ok).map(idOf))),
    ...structural.flatMap((st, i) => (i === 0 ? [] : st.filter((q) => !q.ok).map(idOfStructural))),
  ]);
  const add = [...failing].filter((k) => !NOT_YET.has(k));
  const drop = [...NOT_YET].filter((k) => ran(k.split(' | ')[0]) && !failing.has(k));
  console.log(
    add.length || drop.length
      ? `NOT_YET out of date: now failing, not listed: ${JSON.stringify(add)}; listed, now met: ${JSON.stringify(drop)}`
      : `NOT_YET up to date (${NOT_YET.size} checks not met)`,
  );
}

describe('a bipolar reference contact nearer than the recording contact (10 mm vs 15 mm)', () => {
  (badReference === undefined ? it.skip : it)(
    'is refused with an OptionError naming referenceDistanceMm and the sweep',
    () => {
      expect(badReference?.name).toBe('OptionError');
      expect(badReference?.message).toMatch(/referenceDistanceMm.*sweep \d+/);
    },
  );
});

describe("configuration left to the software: hum frequency 'detect'", () => {
  for (const d of detectRuns)
    it(`${d.name}: the mains frequency found is ${d.expected} Hz within 1 Hz (found ${d.fitted})`, () => {
      expect(Math.abs(d.fitted - d.expected)).toBeLessThanOrEqual(1);
    });
});

for (let i = 1; i < runs.length; i++) {
  const v = runs[i].variant;
  describe(`devset variant "${v.name}": ${v.describe}`, () => {
    for (const s of structural[i]) {
      const known = NOT_YET.has(idOfStructural(s));
      (known ? it.fails : it)(`${idOfStructural(s)}${known ? ' [not met yet]' : ''}`, () => {
        expect(s.ok, s.detail).toBe(true);
      });
    }
    for (const q of checks[i].filter((c: VCheck) => c.asserted)) {
      const known = NOT_YET.has(idOf(q));
      const label =
        `${idOf(q)}: ${q.estimate === null ? 'none' : q.estimate.toPrecision(4)} vs ${q.truth.toPrecision(4)} ` +
        `(${q.errorPct === null ? '-' : q.errorPct.toFixed(1)}%, tolerance ${q.tolerancePct}%; truth: ${q.source})` +
        (known ? ' [not met yet]' : '');
      (known ? it.fails : it)(label, () => {
        expect(q.estimate, q.note).not.toBeNull();
        expect(Number.isFinite(q.truth), 'a truth for this estimator').toBe(true);
        expect(Math.abs(q.errorPct as number)).toBeLessThanOrEqual(q.tolerancePct);
      });
    }
  });
}
