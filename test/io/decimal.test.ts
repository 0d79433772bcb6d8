// decimalAtBytes / strictNumber: the strict decimal reader used for every number in extended XYZ must give exactly what the
// engine's own Number() gives (correct rounding, IEEE 754) for every decimal spelling, and NaN otherwise.
import { describe, expect, it } from 'vitest';
import fc from 'fast-check';
import { decimalAtBytes, strictNumber } from '../../src-main/io/decimal.ts';
import { makeRng } from '../../src-main/core/numerics/random.ts';

const bytes = (t: string) => new TextEncoder().encode(t);

const same = (a: number, b: number) => Object.is(a, b);

describe('decimalAtBytes', () => {
  it('equals Number() on the texts doubles print as (shortest, fixed, exponential, precision)', () => {
    fc.assert(
      fc.property(fc.double({ noNaN: true, noDefaultInfinity: true }), fc.integer({ min: 0, max: 20 }), fc.integer({ min: 1, max: 21 }), (x, d, p) => {
        for (const t of [String(x), x.toExponential(d), x.toPrecision(p), Math.abs(x) < 1e21 ? x.toFixed(d) : String(x)]) {
          expect(same(strictNumber(t), Number(t)), t).toBe(true);
          expect(same(decimalAtBytes(bytes(t), 0, t.length), Number(t)), t).toBe(true);
        }
      }),
      { numRuns: 3000 },
    );
  });

  it('equals Number() on random decimal spellings (leading zeros, many digits, exponents)', () => {
    const digits = fc.stringMatching(/^[0-9]{0,25}$/);
    fc.assert(
      fc.property(fc.constantFrom('', '-', '+'), digits, fc.option(digits), fc.option(fc.tuple(fc.constantFrom('e', 'E'), fc.constantFrom('', '-', '+'), fc.stringMatching(/^[0-9]{1,3}$/))), (sign, int, frac, exp) => {
        const t = sign + int + (frac === null ? '' : '.' + frac) + (exp === null ? '' : exp.join(''));
        const want = int.length + (frac ?? '').length === 0 ? NaN : Number(t);
        expect(same(strictNumber(t), want), t).toBe(true);
        expect(same(decimalAtBytes(bytes(t), 0, t.length), want), t).toBe(true);
      }),
      { numRuns: 3000 },
    );
  });

  it('equals Number() at the edge of its exact path (significant digits as an integer near 2⁵³)', () => {
    const edge = ['9007199254740989', '9007199254740990', '9007199254740991', '9007199254740992', '9007199254740993', '9007199254740999', '90071992547409', '900719925474098', '900719925474099'];
    for (const m of edge) {
      for (const t of [m, `-${m}`, `${m.slice(0, 1)}.${m.slice(1)}`, `0.${m}`, `${m}e-22`, `${m}e22`, `${m}e-23`, `${m}0`, `${m.slice(0, 5)}.${m.slice(5)}e-7`, `0.000${m}`]) {
        expect(same(decimalAtBytes(bytes(t), 0, t.length), Number(t)), t).toBe(true);
      }
    }
  });

  it('gives back the double of 20,000 coordinates as String() prints them (shortest round trip: 16 and 17 digits)', () => {
    const rng = makeRng(3);
    for (let k = 0; k < 20000; k++) {
      const x = (rng.uniform() - 0.3) * 30;
      const t = String(x);
      expect(same(decimalAtBytes(bytes(t), 0, t.length), x), t).toBe(true);
    }
  });

  it('refuses what is not a decimal number', () => {
    for (const t of ['', '-', '+', '.', 'e5', '1e', '1e+', '0x10', '0b1', '0o7', 'Infinity', '-inf', 'nan', ' 1', '1 ', '1_000', '1.2.3', '--1', '1d5', '١']) {
      expect(strictNumber(t), JSON.stringify(t)).toBeNaN();
      const b = bytes(t);
      expect(decimalAtBytes(b, 0, b.length), JSON.stringify(t)).toBeNaN();
    }
    // offsets inside a longer text
    expect(decimalAtBytes(bytes('O 12.5 -3'), 2, 6)).toBe(12.5);
    expect(decimalAtBytes(bytes('O 12.5 -3'), 7, 9)).toBe(-3);
    expect(decimalAtBytes(bytes('1.5'), 0, 0)).toBeNaN();
    expect(Object.is(strictNumber('-0.0'), -0)).toBe(true);
  });
});
