/**
 * Fast, exact parsing of decimal numbers from bytes.
 *
 * Method: digits are accumulated as an integer mantissa; when the mantissa has at
 * most 15 significant digits and the decimal exponent is within [-22, 22], the
 * value m * 10^e (or m / 10^-e) is correctly rounded because both operands are
 * exact doubles (Clinger's fast path: W. D. Clinger, "How to read floating point
 * numbers accurately", PLDI 1990). Other inputs fall back to Number(), which is
 * correctly rounded. Returns NaN for anything that is not a plain number; the
 * caller then decides which error to raise.
 */
const POW10 = Array.from({ length: 23 }, (_, i) => Number(`1e${i}`));

/** Parse bytes [start, end) of buf as a number; `dec` is the decimal separator code (46 '.' or 44 ','). */
export function parseNumber(buf: Uint8Array, start: number, end: number, dec: number): number {
  while (start < end && (buf[start] === 32 || buf[start] === 9)) start++;
  while (end > start && (buf[end - 1] === 32 || buf[end - 1] === 9)) end--;
  if (start >= end) return NaN;
  let i = start;
  let neg = false;
  const c0 = buf[i];
  if (c0 === 45) {
    neg = true;
    i++;
  } else if (c0 === 43) i++;
  let m = 0;
  let digits = 0;
  let sig = 0;
  let exp = 0;
  let any = false;
  for (; i < end; i++) {
    const c = buf[i] - 48;
    if (c < 0 || c > 9) break;
    any = true;
    if (sig > 0 || c !== 0) sig++;
    m = m * 10 + c;
    digits++;
  }
  if (i < end && buf[i] === dec) {
    i++;
    for (; i < end; i++) {
      const c = buf[i] - 48;
      if (c < 0 || c > 9) break;
      any = true;
      if (sig > 0 || c !== 0) sig++;
      m = m * 10 + c;
      exp--;
    }
  }
  if (!any) return NaN;
  if (i < end && (buf[i] === 101 || buf[i] === 69)) {
    i++;
    let eneg = false;
    if (buf[i] === 45) {
      eneg = true;
      i++;
    } else if (buf[i] === 43) i++;
    let e = 0;
    let ed = 0;
    for (; i < end; i++) {
      const c = buf[i] - 48;
      if (c < 0 || c > 9) break;
      e = e * 10 + c;
      ed++;
    }
    if (ed === 0) return NaN;
    exp += eneg ? -e : e;
  }
  if (i !== end) return NaN;
  if (sig <= 15 && exp >= -22 && exp <= 22) {
    const v = exp >= 0 ? m * POW10[exp] : m / POW10[-exp];
    return neg ? -v : v;
  }
  void digits;
  let s = '';
  for (let k = start; k < end; k++) s += buf[k] === dec ? '.' : String.fromCharCode(buf[k]);
  return Number(s);
}

/** Text of bytes [start, end), for messages. */
export function fieldText(buf: Uint8Array, start: number, end: number): string {
  return Buffer.from(buf.buffer, buf.byteOffset + start, end - start)
    .toString('utf8')
    .trim();
}
