// The periodic table as the readers need it: element symbols (Z = 1…118), standard atomic weights and
// covalent radii. The engine groups atoms into molecules with the covalent radii; the readers check species.
//
// Atomic weights: IUPAC standard atomic weights, 2013 release ("Atomic weights of the elements 2013",
// Pure Appl. Chem. 88, 265 (2016)), one conventional value per element; for elements without a standard
// weight, the mass number of the longest-lived isotope. Covalent radii: "Covalent radii revisited", Dalton
// Trans. 2008, 2832–2838 (single-bond radii, Å; C is the sp3 value, Mn, Fe and Co the low-spin values); the
// table stops at Cm (Z = 96), later elements have none (null). The numbers were transcribed through Debian's
// python3-ase (ase.data, which reproduces both tables) and spot-checked in test/core/geometry/elements.test.ts.

/** Element symbols, index Z − 1. */
export const ELEMENT_SYMBOLS: readonly string[] = [
  'H', 'He', 'Li', 'Be', 'B', 'C', 'N', 'O', 'F', 'Ne', 'Na', 'Mg', 'Al', 'Si', 'P', 'S', 'Cl', 'Ar',
  'K', 'Ca', 'Sc', 'Ti', 'V', 'Cr', 'Mn', 'Fe', 'Co', 'Ni', 'Cu', 'Zn', 'Ga', 'Ge', 'As', 'Se', 'Br', 'Kr',
  'Rb', 'Sr', 'Y', 'Zr', 'Nb', 'Mo', 'Tc', 'Ru', 'Rh', 'Pd', 'Ag', 'Cd', 'In', 'Sn', 'Sb', 'Te', 'I', 'Xe',
  'Cs', 'Ba', 'La', 'Ce', 'Pr', 'Nd', 'Pm', 'Sm', 'Eu', 'Gd', 'Tb', 'Dy', 'Ho', 'Er', 'Tm', 'Yb', 'Lu', 'Hf',
  'Ta', 'W', 'Re', 'Os', 'Ir', 'Pt', 'Au', 'Hg', 'Tl', 'Pb', 'Bi', 'Po', 'At', 'Rn', 'Fr', 'Ra', 'Ac', 'Th',
  'Pa', 'U', 'Np', 'Pu', 'Am', 'Cm', 'Bk', 'Cf', 'Es', 'Fm', 'Md', 'No', 'Lr', 'Rf', 'Db', 'Sg', 'Bh', 'Hs',
  'Mt', 'Ds', 'Rg', 'Cn', 'Nh', 'Fl', 'Mc', 'Lv', 'Ts', 'Og',
];

/** Standard atomic weights (g/mol, i.e. u per atom), index Z − 1. */
export const ATOMIC_MASSES: readonly number[] = [
  1.008, 4.002602, 6.94, 9.0121831, 10.81, 12.011, 14.007, 15.999,
  18.998403163, 20.1797, 22.98976928, 24.305, 26.9815385, 28.085, 30.973761998, 32.06,
  35.45, 39.948, 39.0983, 40.078, 44.955908, 47.867, 50.9415, 51.9961,
  54.938044, 55.845, 58.933194, 58.6934, 63.546, 65.38, 69.723, 72.63,
  74.921595, 78.971, 79.904, 83.798, 85.4678, 87.62, 88.90584, 91.224,
  92.90637, 95.95, 97.90721, 101.07, 102.9055, 106.42, 107.8682, 112.414,
  114.818, 118.71, 121.76, 127.6, 126.90447, 131.293, 132.90545196, 137.327,
  138.90547, 140.116, 140.90766, 144.242, 144.91276, 150.36, 151.964, 157.25,
  158.92535, 162.5, 164.93033, 167.259, 168.93422, 173.054, 174.9668, 178.49,
  180.94788, 183.84, 186.207, 190.23, 192.217, 195.084, 196.966569, 200.592,
  204.38, 207.2, 208.9804, 208.98243, 209.98715, 222.01758, 223.01974, 226.02541,
  227.02775, 232.0377, 231.03588, 238.02891, 237.04817, 244.06421, 243.06138, 247.07035,
  247.07031, 251.07959, 252.083, 257.09511, 258.09843, 259.101, 262.11, 267.122,
  268.126, 271.134, 270.133, 269.1338, 278.156, 281.165, 281.166, 285.177,
  286.182, 289.19, 289.194, 293.204, 293.208, 294.214,
];

/** Single-bond covalent radii in Å, index Z − 1; null where the source gives none. */
export const COVALENT_RADII: readonly (number | null)[] = [
  0.31, 0.28, 1.28, 0.96, 0.84, 0.76, 0.71, 0.66, 0.57, 0.58, 1.66, 1.41,
  1.21, 1.11, 1.07, 1.05, 1.02, 1.06, 2.03, 1.76, 1.7, 1.6, 1.53, 1.39,
  1.39, 1.32, 1.26, 1.24, 1.32, 1.22, 1.22, 1.2, 1.19, 1.2, 1.2, 1.16,
  2.2, 1.95, 1.9, 1.75, 1.64, 1.54, 1.47, 1.46, 1.42, 1.39, 1.45, 1.44,
  1.42, 1.39, 1.39, 1.38, 1.39, 1.4, 2.44, 2.15, 2.07, 2.04, 2.03, 2.01,
  1.99, 1.98, 1.98, 1.96, 1.94, 1.92, 1.92, 1.89, 1.9, 1.87, 1.87, 1.75,
  1.7, 1.62, 1.51, 1.44, 1.41, 1.36, 1.36, 1.32, 1.45, 1.46, 1.48, 1.4,
  1.5, 1.5, 2.6, 2.21, 2.15, 2.06, 2.0, 1.96, 1.9, 1.87, 1.8, 1.69,
  null, null, null, null, null, null, null, null, null, null, null, null,
  null, null, null, null, null, null, null, null, null, null,
];

const BY_SYMBOL = new Map<string, number>(ELEMENT_SYMBOLS.map((s, i) => [s, i + 1]));
const BY_LOWER = new Map<string, string>(ELEMENT_SYMBOLS.map((s) => [s.toLowerCase(), s]));

/** Atomic number of an element symbol (exact spelling, e.g. "Na"), or 0 if it is not an element. */
export function atomicNumber(symbol: string): number {
  return BY_SYMBOL.get(symbol) ?? 0;
}

export function isElement(symbol: string): boolean {
  return BY_SYMBOL.has(symbol);
}

/** Symbol of atomic number z (1…118), or undefined. */
export function elementSymbol(z: number): string | undefined {
  return Number.isInteger(z) && z >= 1 && z <= ELEMENT_SYMBOLS.length ? ELEMENT_SYMBOLS[z - 1] : undefined;
}

/** The properly capitalised symbol when only the case is wrong ("NA" → "Na"), for error hints. */
export function symbolIgnoringCase(text: string): string | undefined {
  return BY_LOWER.get(text.toLowerCase());
}

/** Standard atomic weight in g/mol; throws RangeError for a non-element. */
export function atomicMass(symbol: string): number {
  const z = atomicNumber(symbol);
  if (z === 0) throw new RangeError(`atomicMass: '${symbol}' is not an element symbol`);
  return ATOMIC_MASSES[z - 1];
}

/** Covalent radius in Å, or null when the published table has none (Z > 96); throws for a non-element. */
export function covalentRadius(symbol: string): number | null {
  const z = atomicNumber(symbol);
  if (z === 0) throw new RangeError(`covalentRadius: '${symbol}' is not an element symbol`);
  return COVALENT_RADII[z - 1];
}
