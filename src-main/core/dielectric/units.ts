// Physical constants (CODATA 2018: E. Tiesinga, P. J. Mohr, D. B. Newell, B. N. Taylor, Rev. Mod. Phys. 93,
// 025010 (2021)) and conversions of polarisabilities. Internally a polarisability is a polarisability VOLUME
// α' = α/(4πε0) in Å³ (Gaussian convention); files may also carry atomic units (bohr³; the atomic unit of
// polarisability e²a0²/E_h equals 4πε0 a0³) or SI (C·m²/V, α_SI = 4πε0 α' with α' in m³).
import { InputError, type Where } from '../errors.ts';

/** Bohr radius a0 in Å (CODATA 2018). */
export const BOHR_A = 0.529177210903;
/** Vacuum electric permittivity ε0 in F/m (CODATA 2018). */
export const EPSILON0_SI = 8.8541878128e-12;
/** Avogadro constant in mol⁻¹ (exact since 2019). */
export const AVOGADRO = 6.02214076e23;
/** 1 bohr³ in Å³. */
export const BOHR3_A3 = BOHR_A * BOHR_A * BOHR_A;
/** 1 Å³ of polarisability volume in C·m²/V: 4πε0 × 1e−30 m³. */
export const A3_SI = 4 * Math.PI * EPSILON0_SI * 1e-30;

export type PolarisabilityUnit = 'A3' | 'bohr3' | 'si';

export const POLARISABILITY_UNITS: readonly PolarisabilityUnit[] = ['A3', 'bohr3', 'si'];

/** How many Å³ one unit is. */
export function polarisabilityUnitInA3(unit: PolarisabilityUnit): number {
  switch (unit) {
    case 'A3':
      return 1;
    case 'bohr3':
      return BOHR3_A3;
    case 'si':
      return 1 / A3_SI;
    default:
      throw new RangeError(`unknown polarisability unit '${String(unit)}' (use A3, bohr3 or si)`);
  }
}

/** A polarisability given in `unit` as a polarisability volume in Å³. */
export function polarisabilityToA3(value: number, unit: PolarisabilityUnit): number {
  return value * polarisabilityUnitInA3(unit);
}

/** A polarisability volume in Å³ expressed in `unit`. */
export function polarisabilityFromA3(valueA3: number, unit: PolarisabilityUnit): number {
  return valueA3 / polarisabilityUnitInA3(unit);
}

/** Every entry of a tensor converted (a new array). */
export function tensorToA3(T: ArrayLike<number>, unit: PolarisabilityUnit): Float64Array {
  const f = polarisabilityUnitInA3(unit);
  return Float64Array.from(T, (v) => v * f);
}

export function tensorFromA3(T: ArrayLike<number>, unit: PolarisabilityUnit): Float64Array {
  const f = polarisabilityUnitInA3(unit);
  return Float64Array.from(T, (v) => v / f);
}

/** Reads a unit name as users write it: A3, Å3, Å^3, ang3; bohr3, au, a.u.; si, C m2/V. */
export function parsePolarisabilityUnit(text: string, where: Where = {}): PolarisabilityUnit {
  const t = text.trim().toLowerCase().replace(/\s+/g, '').replace('^', '').replace('³', '3').replace('·', '');
  if (['a3', 'å3', 'ang3', 'angstrom3'].includes(t)) return 'A3';
  if (['bohr3', 'au', 'a.u.', 'atomic'].includes(t)) return 'bohr3';
  if (['si', 'cm2/v', 'c*m2/v', 'cm^2/v'].includes(t)) return 'si';
  throw new InputError(`unknown polarisability unit '${text}'`, where, 'use A3 (polarisability volume, Å³), bohr3 (atomic units) or si (C·m²/V)');
}

/** Volume per molecule (Å³) of a substance of molar mass M (g/mol) and mass density ρ (kg/m³). */
export function molecularVolumeA3(molarMassGPerMol: number, densityKgPerM3: number): number {
  if (!(molarMassGPerMol > 0 && densityKgPerM3 > 0)) throw new RangeError('molecularVolumeA3: molar mass and density must be positive');
  return ((molarMassGPerMol * 1e-3) / (densityKgPerM3 * AVOGADRO)) * 1e30;
}
