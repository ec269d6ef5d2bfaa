/**
 * Natural order of names: runs of decimal digits compare by their numeric value, everything
 * else character by character, ignoring case. "frame2.png" < "frame10.png" < "Frame11.png".
 *
 * Digit runs are compared by length after stripping leading zeros, then digit by digit, so
 * numbers of any length work (no parsing, no overflow). Names equal under these rules
 * ("img01" and "img1", "A.png" and "a.png") are then ordered by their UTF-16 code units, so the
 * order is total and the result does not depend on the input order.
 *
 * Characters compare by their lower-case UTF-16 code units: '.' (46) before digits (48–57)
 * before letters, so "frame.png" < "frame1.png". Only ASCII digits 0–9 count as digits.
 *
 * @returns a negative number when a comes first, positive when b does, 0 only when a === b.
 */
export function naturalCompare(a: string, b: string): number {
  let i = 0;
  let j = 0;
  while (i < a.length && j < b.length) {
    const ca = a.charCodeAt(i);
    const cb = b.charCodeAt(j);
    if (isDigit(ca) && isDigit(cb)) {
      // Skip leading zeros, find the ends of both digit runs.
      let si = i;
      while (si < a.length && a.charCodeAt(si) === 48) si++;
      let sj = j;
      while (sj < b.length && b.charCodeAt(sj) === 48) sj++;
      let ei = si;
      while (ei < a.length && isDigit(a.charCodeAt(ei))) ei++;
      let ej = sj;
      while (ej < b.length && isDigit(b.charCodeAt(ej))) ej++;
      const lengthDifference = ei - si - (ej - sj);
      if (lengthDifference !== 0) return lengthDifference;
      for (let k = 0; k < ei - si; k++) {
        const d = a.charCodeAt(si + k) - b.charCodeAt(sj + k);
        if (d !== 0) return d;
      }
      i = ei;
      j = ej;
      continue;
    }
    const la = lower(ca);
    const lb = lower(cb);
    if (la !== lb) return la - lb;
    i++;
    j++;
  }
  const rest = a.length - i - (b.length - j);
  if (rest !== 0) return rest;
  return a < b ? -1 : a > b ? 1 : 0;
}

/** A new array of the names in natural order (see {@link naturalCompare}); the input is not changed. */
export function naturalSort(names: readonly string[]): string[] {
  return [...names].sort(naturalCompare);
}

function isDigit(code: number): boolean {
  return code >= 48 && code <= 57;
}

function lower(code: number): number {
  if (code >= 65 && code <= 90) return code + 32;
  if (code < 128) return code;
  return String.fromCharCode(code).toLowerCase().charCodeAt(0);
}
