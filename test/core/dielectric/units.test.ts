import { describe, expect, it } from 'vitest';
import { InputError } from '../../../src-main/core/errors.ts';
import {
  A3_SI,
  BOHR3_A3,
  molecularVolumeA3,
  parsePolarisabilityUnit,
  polarisabilityFromA3,
  polarisabilityToA3,
  tensorFromA3,
  tensorToA3,
} from '../../../src-main/core/dielectric/units.ts';

// Source of every value: CODATA 2018 (Tiesinga et al., Rev. Mod. Phys. 93, 025010 (2021)), via checks.md.
describe('units', () => {
  it('1 bohr³ = 0.148184711472 Å³', () => {
    expect(BOHR3_A3).toBeCloseTo(0.148184711472, 12);
    expect(polarisabilityToA3(1, 'bohr3')).toBeCloseTo(0.148184711472, 12);
  });

  it('1 atomic unit of polarisability = 1.64877727436e−41 C·m²/V', () => {
    const si = polarisabilityFromA3(polarisabilityToA3(1, 'bohr3'), 'si');
    expect(Math.abs(si / 1.64877727436e-41 - 1)).toBeLessThan(1e-10);
  });

  it('1 Å³ = 1.1126500554e−40 C·m²/V', () => {
    expect(Math.abs(A3_SI / 1.1126500554e-40 - 1)).toBeLessThan(1e-10);
    expect(Math.abs(polarisabilityFromA3(1, 'si') / 1.1126500554e-40 - 1)).toBeLessThan(1e-10);
  });

  it('round-trips tensors and parses unit names', () => {
    const T = [1, 2, 3, 4, 5, 6, 7, 8, 9];
    for (const u of ['A3', 'bohr3', 'si'] as const) {
      const back = tensorToA3(tensorFromA3(T, u), u);
      T.forEach((v, i) => expect(back[i]).toBeCloseTo(v, 12));
    }
    expect(parsePolarisabilityUnit('Å^3')).toBe('A3');
    expect(parsePolarisabilityUnit(' a.u. ')).toBe('bohr3');
    expect(parsePolarisabilityUnit('C m2/V')).toBe('si');
    expect(() => parsePolarisabilityUnit('cm3', { file: 'x.xyz' })).toThrow(InputError);
  });

  it('gives the volume per molecule: 18 g/mol at 1000 kg/m³ is 18 cm³/mol = 18e24 Å³ per N_A molecules', () => {
    // Unit arithmetic (1 cm³ = 1e24 Å³), N_A exact (CODATA 2018).
    expect(molecularVolumeA3(18, 1000)).toBeCloseTo(18e24 / 6.02214076e23, 10);
    expect(() => molecularVolumeA3(18, 0)).toThrow(RangeError);
  });
});
