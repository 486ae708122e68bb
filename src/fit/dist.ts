/**
 * Distribution functions for confidence intervals and tests: Student t, F,
 * standard normal. Built on the regularised incomplete beta function (continued
 * fraction, modified Lentz) and the log-gamma function (Lanczos, g = 7, n = 9).
 * Checked against SciPy 1.17 (scipy.stats) in tests/fit/dist.test.ts.
 * References: W. H. Press et al., Numerical Recipes, 3rd ed., sec. 6.1 and 6.4;
 * C. Lanczos, SIAM J. Numer. Anal. B 1 (1964) 86-96.
 */
const LANCZOS = [
  0.99999999999980993, 676.5203681218851, -1259.1392167224028, 771.32342877765313, -176.61502916214059,
  12.507343278686905, -0.13857109526572012, 9.9843695780195716e-6, 1.5056327351493116e-7,
];

/** ln Gamma(x), x > 0. */
export function logGamma(x: number): number {
  if (x < 0.5) return Math.log(Math.PI / Math.abs(Math.sin(Math.PI * x))) - logGamma(1 - x);
  x -= 1;
  let a = LANCZOS[0];
  const t = x + 7.5;
  for (let i = 1; i < 9; i++) a += LANCZOS[i] / (x + i);
  return 0.5 * Math.log(2 * Math.PI) + (x + 0.5) * Math.log(t) - t + Math.log(a);
}

function betacf(a: number, b: number, x: number): number {
  const FPMIN = 1e-300;
  let c = 1,
    d = 1 - ((a + b) * x) / (a + 1);
  if (Math.abs(d) < FPMIN) d = FPMIN;
  d = 1 / d;
  let h = d;
  for (let m = 1; m <= 10000; m++) {
    const m2 = 2 * m;
    let aa = (m * (b - m) * x) / ((a + m2 - 1) * (a + m2));
    d = 1 + aa * d;
    if (Math.abs(d) < FPMIN) d = FPMIN;
    c = 1 + aa / c;
    if (Math.abs(c) < FPMIN) c = FPMIN;
    d = 1 / d;
    h *= d * c;
    aa = (-(a + m) * (a + b + m) * x) / ((a + m2) * (a + m2 + 1));
    d = 1 + aa * d;
    if (Math.abs(d) < FPMIN) d = FPMIN;
    c = 1 + aa / c;
    if (Math.abs(c) < FPMIN) c = FPMIN;
    d = 1 / d;
    const del = d * c;
    h *= del;
    if (Math.abs(del - 1) < 1e-15) break;
  }
  return h;
}

/** Regularised incomplete beta I_x(a, b). */
export function betaInc(x: number, a: number, b: number): number {
  if (x <= 0) return 0;
  if (x >= 1) return 1;
  const lbt = logGamma(a + b) - logGamma(a) - logGamma(b) + a * Math.log(x) + b * Math.log(1 - x);
  if (x < (a + 1) / (a + b + 2)) return (Math.exp(lbt) * betacf(a, b, x)) / a;
  return 1 - (Math.exp(lbt) * betacf(b, a, 1 - x)) / b;
}

/** Student t CDF with df degrees of freedom. */
export function tCdf(t: number, df: number): number {
  const x = df / (df + t * t);
  const tail = 0.5 * betaInc(x, df / 2, 0.5);
  return t >= 0 ? 1 - tail : tail;
}

/** Student t quantile (inverse CDF), by bisection then Newton polishing. */
export function tQuantile(p: number, df: number): number {
  if (!(p > 0 && p < 1) || !(df > 0)) return NaN;
  if (p === 0.5) return 0;
  let lo = -1e3,
    hi = 1e3;
  while (tCdf(lo, df) > p) lo *= 2;
  while (tCdf(hi, df) < p) hi *= 2;
  for (let i = 0; i < 200 && hi - lo > 1e-15 * Math.max(1, Math.abs(lo)); i++) {
    const mid = (lo + hi) / 2;
    if (tCdf(mid, df) < p) lo = mid;
    else hi = mid;
  }
  return (lo + hi) / 2;
}

/** Upper tail of the F distribution, P(F > f) with (d1, d2) degrees of freedom. */
export function fSurvival(f: number, d1: number, d2: number): number {
  if (!(f > 0)) return 1;
  return betaInc(d2 / (d2 + d1 * f), d2 / 2, d1 / 2);
}

/** Upper tail of chi-square with k degrees of freedom (via the F relation for large d2 is avoided: regularised gamma). */
export function chi2Survival(x: number, k: number): number {
  if (!(x > 0)) return 1;
  return 1 - gammaIncLower(k / 2, x / 2);
}

/**
 * Q(a, x) for x >= a + 1 by the continued fraction (modified Lentz), gln = logGamma(a).
 * Reference: W. H. Press et al., Numerical Recipes, 3rd ed., Cambridge 2007, section 6.2.
 */
function gammaTailCf(a: number, x: number, gln: number): number {
  let b = x + 1 - a,
    c = 1 / 1e-300,
    d = 1 / b,
    h = d;
  for (let i = 1; i < 10000; i++) {
    const an = -i * (i - a);
    b += 2;
    d = an * d + b;
    if (Math.abs(d) < 1e-300) d = 1e-300;
    c = b + an / c;
    if (Math.abs(c) < 1e-300) c = 1e-300;
    d = 1 / d;
    const del = d * c;
    h *= del;
    if (Math.abs(del - 1) < 1e-16) break;
  }
  return Math.exp(-x + a * Math.log(x) - gln) * h;
}

/** Upper regularised incomplete gamma Q(a, x), directly in the tail (series below a + 1, continued fraction above). */
export function gammaQ(a: number, x: number): number {
  if (!(x > 0)) return 1;
  const gln = logGamma(a);
  if (x < a + 1) {
    let sum = 1 / a,
      del = sum,
      ap = a;
    for (let n = 0; n < 10000; n++) {
      ap++;
      del *= x / ap;
      sum += del;
      if (Math.abs(del) < Math.abs(sum) * 1e-17) break;
    }
    return 1 - sum * Math.exp(-x + a * Math.log(x) - gln);
  }
  return gammaTailCf(a, x, gln);
}

function gammaIncLower(a: number, x: number): number {
  const gln = logGamma(a);
  if (x < a + 1) {
    let sum = 1 / a,
      del = sum,
      ap = a;
    for (let n = 0; n < 10000; n++) {
      ap++;
      del *= x / ap;
      sum += del;
      if (Math.abs(del) < Math.abs(sum) * 1e-16) break;
    }
    return sum * Math.exp(-x + a * Math.log(x) - gln);
  }
  return 1 - gammaTailCf(a, x, gln);
}

/** Standard normal CDF. */
export function normCdf(z: number): number {
  return 0.5 * (1 + erf(z / Math.SQRT2));
}

function erf(x: number): number {
  // via the regularised incomplete gamma: erf(x) = P(1/2, x^2)
  const s = x < 0 ? -1 : 1;
  return s * gammaIncLower(0.5, x * x);
}

/** Standard normal quantile (bisection on normCdf). */
const quantiles = new Map<number, number>();
export function normQuantile(p: number): number {
  if (!(p > 0 && p < 1)) return NaN;
  // the same few probabilities are asked for in every preparation: a memo returns the same bits
  const known = quantiles.get(p);
  if (known !== undefined) return known;
  let lo = -40,
    hi = 40;
  for (let i = 0; i < 200; i++) {
    const mid = (lo + hi) / 2;
    if (normCdf(mid) < p) lo = mid;
    else hi = mid;
  }
  const q = (lo + hi) / 2;
  if (quantiles.size < 4096) quantiles.set(p, q);
  return q;
}
