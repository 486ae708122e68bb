/**
 * The fast path of the delimited reader, shared by the calling thread and the pool's
 * workers: rows of plain decimal numbers (optional minus sign, digits, at most one
 * decimal separator, at most 15 digits, an optional exponent of e or E, a sign and 1-3
 * digits; no quotes or spaces). Anything else makes the caller fall back to the exact,
 * slower parser (which also names the line and column of a bad cell).
 *
 * The value is m x 10^e10 with m the digits as an integer (exact: under 10^15 < 2^53)
 * and e10 the exponent less the fraction digits. For |e10| <= 22, 10^|e10| is an exact
 * double, so one multiplication or division, correctly rounded, gives the correctly
 * rounded value, the same as Number() (Clinger's fast path: W. D. Clinger, "How to read
 * floating point numbers accurately", PLDI 1990). Larger |e10| goes to the exact parser.
 */

const POW10 = Array.from({ length: 23 }, (_, i) => Number(`1e${i}`));

/** Rows are gathered in a row-major block of this many rows, then written sweep-major. */
export const PLAIN_BLOCK = 64;

/**
 * Parse bytes[start, end) as ncol plain fields separated by dcode with decimal dec:
 * field 0 into t[row], the others into block[slot * (ncol - 1) + c - 1]. Returns
 * false (storing nothing reliable) when the row is not plain.
 */
export function plainRow(
  bytes: Uint8Array,
  start: number,
  end: number,
  ncol: number,
  dec: number,
  dcode: number,
  t: Float64Array,
  row: number,
  block: Float64Array,
  slot: number,
): boolean {
  const nSweeps = ncol - 1;
  let k = start;
  for (let c = 0; c < ncol; c++) {
    let neg = false;
    if (bytes[k] === 45) {
      neg = true;
      k++;
    }
    let m = 0,
      digits = 0,
      frac = 0,
      seenDec = false;
    for (; k < end; k++) {
      const ch = bytes[k];
      const d = ch - 48;
      if (d >= 0 && d <= 9) {
        m = m * 10 + d;
        digits++;
        if (seenDec) frac++;
      } else if (ch === dec && !seenDec) seenDec = true;
      else break;
    }
    if (digits === 0 || digits > 15) return false;
    let e10 = -frac;
    if (k < end && (bytes[k] === 101 || bytes[k] === 69)) {
      k++;
      let eneg = false;
      if (bytes[k] === 45) {
        eneg = true;
        k++;
      } else if (bytes[k] === 43) k++;
      let x = 0,
        ed = 0;
      for (; k < end && ed < 4; k++) {
        const d = bytes[k] - 48;
        if (d < 0 || d > 9) break;
        x = x * 10 + d;
        ed++;
      }
      if (ed === 0 || ed > 3) return false;
      e10 += eneg ? -x : x;
      if (e10 > 22 || e10 < -22) return false;
    }
    if (k < end && bytes[k] !== dcode) return false;
    if (c < ncol - 1) {
      if (k >= end) return false;
      k++;
    } else if (k !== end) return false;
    const v = e10 === 0 ? m : e10 < 0 ? m / POW10[-e10] : m * POW10[e10];
    if (c === 0) t[row] = neg ? -v : v;
    else block[slot * nSweeps + c - 1] = neg ? -v : v;
  }
  return true;
}

/** Write `count` rows of a block (row-major) to out (sweep-major, stride rowsMax) from row `first`. */
export function flushBlock(
  block: Float64Array,
  nSweeps: number,
  out: Float64Array,
  rowsMax: number,
  first: number,
  count: number,
): void {
  for (let c = 0; c < nSweeps; c++) {
    const o = c * rowsMax + first;
    for (let q = 0; q < count; q++) out[o + q] = block[q * nSweeps + c];
  }
}
