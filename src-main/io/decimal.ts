// Strict decimal numbers and short texts straight from UTF-8 bytes, for the readers' hot loops: no decoding
// and no substrings in the common case. Pure code, runs in a browser too.

const utf8 = new TextDecoder('utf-8');

/** Text of bytes[s, e): ASCII directly, anything else through the UTF-8 decoder. */
export function bytesText(b: Uint8Array, s: number, e: number): string {
  if (e - s <= 16) {
    let out = '';
    for (let i = s; i < e; i++) {
      const c = b[i];
      if (c >= 128) return utf8.decode(span(b, s, e));
      out += String.fromCharCode(c);
    }
    return out;
  }
  return utf8.decode(span(b, s, e));
}

/**
 * bytes[s, e) as a plain Uint8Array view. Not b.subarray: on a Node Buffer (the readers' chunks) that makes a Buffer
 * through its species constructor, which cost more than decoding the bytes (numbers of 17 digits, as doubles
 * print, come through here: 0.31 -> 0.20 µs each with the decoding and Number(), measured on 17-digit coordinates).
 */
function span(b: Uint8Array, s: number, e: number): Uint8Array {
  return s >= 0 && s <= e && e <= b.length ? new Uint8Array(b.buffer, b.byteOffset + s, e - s) : b.subarray(s, e);
}

const POW10 = Array.from({ length: 23 }, (_, k) => Number(`1e${k}`));
/** The largest m for which m·10 + 9 is below 2⁵³: every digit taken while m is at most this keeps m an exact integer. */
const EXACT_MANTISSA = Math.floor((2 ** 53 - 1 - 9) / 10);

/**
 * Bytes [s, e) as a strict decimal number ([+-]digits[.digits][(e|E)[+-]digits]), NaN if anything else
 * (Number() alone would also take hexadecimal, binary and octal literals, "Infinity" and surrounding spaces).
 * While its significant digits as an integer m stay below 2⁵³ (every number of up to 15 digits, and most of 16:
 * m ≤ 9007199254740989) and its decimal exponent is within ±22, the value is m / 10^k or m · 10^k with m and 10^k
 * exact doubles, so one correctly rounded IEEE operation gives the correctly rounded result (the exact fast path
 * of decimal-to-binary conversion, Clinger 1990), which is what Number() gives; other numbers go to Number()
 * after the syntax check.
 */
export function decimalAtBytes(b: Uint8Array, s: number, e: number): number {
  let i = s;
  let c = i < e ? b[i] : -1;
  let negative = false;
  if (c === 45 || c === 43) {
    negative = c === 45;
    c = ++i < e ? b[i] : -1;
  }
  let m = 0;
  let digits = 0;
  let seen = 0;
  let scale = 0;
  let lost = false;
  while (c >= 48 && c <= 57) {
    seen++;
    if (digits > 0 || c !== 48) {
      if (!lost && m <= EXACT_MANTISSA) m = m * 10 + (c - 48);
      else {
        lost = true;
        scale++;
      }
      digits++;
    }
    c = ++i < e ? b[i] : -1;
  }
  if (c === 46) {
    c = ++i < e ? b[i] : -1;
    while (c >= 48 && c <= 57) {
      seen++;
      if (digits > 0 || c !== 48) {
        if (!lost && m <= EXACT_MANTISSA) {
          m = m * 10 + (c - 48);
          scale--;
        } else lost = true;
        digits++;
      } else scale--;
      c = ++i < e ? b[i] : -1;
    }
  }
  if (seen === 0) return NaN;
  let exp = 0;
  if (c === 101 || c === 69) {
    c = ++i < e ? b[i] : -1;
    let expNeg = false;
    if (c === 45 || c === 43) {
      expNeg = c === 45;
      c = ++i < e ? b[i] : -1;
    }
    let expDigits = 0;
    while (c >= 48 && c <= 57) {
      if (exp < 100000) exp = exp * 10 + (c - 48);
      expDigits++;
      c = ++i < e ? b[i] : -1;
    }
    if (expDigits === 0) return NaN;
    if (expNeg) exp = -exp;
  }
  if (i !== e) return NaN;
  if (!lost) {
    const p = exp + scale;
    let v = -1;
    if (m === 0) v = 0;
    else if (p === 0) v = m;
    else if (p < 0 && p >= -22) v = m / POW10[-p];
    else if (p > 0 && p <= 22) v = m * POW10[p];
    if (v >= 0) return negative ? -v : v;
  }
  return Number(bytesText(b, s, e));
}

/**
 * The syntax decimalAtBytes accepts, for strings, as a pattern source (CIF adds its uncertainty suffix to it).
 * Written so that no two ways of matching exist (digits, then an optional '.digits'): a long run of digits
 * that fails to match costs linear time, not quadratic backtracking.
 */
export const DECIMAL_SOURCE = '[+-]?(?:\\d+(?:\\.\\d*)?|\\.\\d+)(?:[eE][+-]?\\d+)?';
const DECIMAL = new RegExp(`^${DECIMAL_SOURCE}$`);

/** A strict decimal number from a string (1, -2.5, 3e-4, 1.5E+02), or NaN; same syntax as decimalAtBytes. */
export function strictNumber(token: string): number {
  return DECIMAL.test(token) ? Number(token) : NaN;
}
