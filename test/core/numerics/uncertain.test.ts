import { describe, expect, it } from 'vitest';
import { atPlacesOf, decimalsFor, withError } from '../../../src-main/core/numerics/uncertain.ts';

// Two significant digits on the error bar and the value to the same place: common practice, no source.
describe('values with error bars', () => {
  it('gives the error bar two significant digits and the value the same decimal place', () => {
    expect(withError(1.547321, 0.00213)).toBe('1.5473 ± 0.0021');
    expect(withError(0.17534, 0.0123)).toBe('0.175 ± 0.012');
    expect(withError(2.3456, 0.31)).toBe('2.35 ± 0.31');
    expect(withError(123.456, 12)).toBe('123 ± 12');
    expect(withError(-0.000712, 0.00031)).toBe('-0.00071 ± 0.00031');
  });
  it('rounds an error bar of 10 or more to whole units', () => {
    expect(decimalsFor(42)).toBe(0);
    expect(withError(1234.5, 42)).toBe('1235 ± 42');
  });
  it('says when there is no error bar instead of inventing digits', () => {
    expect(withError(1.5473217, null)).toBe('1.5473 ± —');
    expect(withError(1.5473217, 0)).toBe('1.5473 ± —');
    expect(withError(1.5473217, NaN)).toBe('1.5473 ± —');
    expect(withError(NaN, 0.1)).toBe('—');
  });

  it('writes a value without an error bar to the places of another’s', () => {
    expect(atPlacesOf(2.214172, 0.019)).toBe('2.214');
    expect(atPlacesOf(0.15, 0.018)).toBe('0.150');
    expect(atPlacesOf(2.214172, null)).toBe('2.2142');
  });
});
