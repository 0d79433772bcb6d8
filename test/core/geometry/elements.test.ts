// The periodic table: symbols, atomic numbers, weights and covalent radii against the published tables.
import { describe, expect, it } from 'vitest';
import { ATOMIC_MASSES, COVALENT_RADII, ELEMENT_SYMBOLS, atomicMass, atomicNumber, covalentRadius, elementSymbol, isElement, symbolIgnoringCase } from '../../../src-main/core/geometry/elements.ts';

describe('elements', () => {
  it('has the 118 elements in order of Z', () => {
    expect(ELEMENT_SYMBOLS.length).toBe(118);
    expect(ATOMIC_MASSES.length).toBe(118);
    expect(COVALENT_RADII.length).toBe(118);
    // symbols and numbers from the IUPAC periodic table (common knowledge)
    expect([atomicNumber('H'), atomicNumber('C'), atomicNumber('O'), atomicNumber('Na'), atomicNumber('Cl'), atomicNumber('Fe'), atomicNumber('U'), atomicNumber('Og')]).toEqual([1, 6, 8, 11, 17, 26, 92, 118]);
    expect(elementSymbol(79)).toBe('Au');
    expect(elementSymbol(0)).toBeUndefined();
    expect(elementSymbol(119)).toBeUndefined();
    expect(isElement('Xx')).toBe(false);
    expect(isElement('na')).toBe(false);
    expect(symbolIgnoringCase('NA')).toBe('Na');
    expect(new Set(ELEMENT_SYMBOLS).size).toBe(118);
  });

  it('standard atomic weights (IUPAC abridged values, from memory: H 1.008, C 12.011, N 14.007, O 15.999, Na 22.990, Cl 35.45, Fe 55.845, Au 196.97)', () => {
    expect(atomicMass('H')).toBeCloseTo(1.008, 3);
    expect(atomicMass('C')).toBeCloseTo(12.011, 3);
    expect(atomicMass('N')).toBeCloseTo(14.007, 3);
    expect(atomicMass('O')).toBeCloseTo(15.999, 3);
    expect(atomicMass('Na')).toBeCloseTo(22.99, 2);
    expect(atomicMass('Cl')).toBeCloseTo(35.45, 2);
    expect(atomicMass('Fe')).toBeCloseTo(55.845, 3);
    expect(atomicMass('Au')).toBeCloseTo(196.97, 2);
    // masses grow with Z except the known inversions (Ar/K, Co/Ni, Te/I, Th/Pa, U/Np …): most steps go up
    let up = 0;
    for (let z = 1; z < 118; z++) if (ATOMIC_MASSES[z] > ATOMIC_MASSES[z - 1]) up++;
    expect(up).toBeGreaterThan(105);
    expect(() => atomicMass('Qq')).toThrow(RangeError);
  });

  it('covalent radii ("Covalent radii revisited", Dalton Trans. 2008, 2832, Table 2, from memory: H 0.31, C sp3 0.76, N 0.71, O 0.66, Na 1.66, Si 1.11, Cl 1.02, Fe l.s. 1.32)', () => {
    expect(covalentRadius('H')).toBe(0.31);
    expect(covalentRadius('C')).toBe(0.76);
    expect(covalentRadius('N')).toBe(0.71);
    expect(covalentRadius('O')).toBe(0.66);
    expect(covalentRadius('Na')).toBe(1.66);
    expect(covalentRadius('Si')).toBe(1.11);
    expect(covalentRadius('Cl')).toBe(1.02);
    expect(covalentRadius('Fe')).toBe(1.32);
    expect(covalentRadius('Cm')).toBe(1.69); // last element of the table
    expect(covalentRadius('Bk')).toBeNull();
    for (let z = 1; z <= 96; z++) {
      const r = COVALENT_RADII[z - 1];
      expect(r).not.toBeNull();
      expect(r!).toBeGreaterThan(0.2);
      expect(r!).toBeLessThan(2.7); // largest: Fr 2.60
    }
  });
});
