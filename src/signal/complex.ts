/** Minimal complex arithmetic for filter design (objects; not used in hot loops). */
export interface C {
  re: number;
  im: number;
}
export const c = (re: number, im = 0): C => ({ re, im });
export const add = (a: C, b: C): C => ({ re: a.re + b.re, im: a.im + b.im });
export const sub = (a: C, b: C): C => ({ re: a.re - b.re, im: a.im - b.im });
export const mul = (a: C, b: C): C => ({ re: a.re * b.re - a.im * b.im, im: a.re * b.im + a.im * b.re });
export const scale = (a: C, s: number): C => ({ re: a.re * s, im: a.im * s });
export const conj = (a: C): C => ({ re: a.re, im: -a.im });
export const abs = (a: C): number => Math.hypot(a.re, a.im);
export function div(a: C, b: C): C {
  // Smith's algorithm, as in C99/NumPy complex division
  if (Math.abs(b.re) >= Math.abs(b.im)) {
    const r = b.im / b.re,
      d = b.re + b.im * r;
    return { re: (a.re + a.im * r) / d, im: (a.im - a.re * r) / d };
  }
  const r = b.re / b.im,
    d = b.re * r + b.im;
  return { re: (a.re * r + a.im) / d, im: (a.im * r - a.re) / d };
}
/** Principal square root. */
export function sqrt(a: C): C {
  const m = abs(a);
  if (m === 0) return c(0, 0);
  if (a.re >= 0) {
    const t = Math.sqrt(0.5 * (m + a.re));
    return { re: t, im: a.im / (2 * t) };
  }
  const t = Math.sqrt(0.5 * (m - a.re));
  return { re: Math.abs(a.im) / (2 * t), im: a.im >= 0 ? t : -t };
}
export const prod = (xs: C[]): C => xs.reduce((p, x) => mul(p, x), c(1, 0));
