// Per-element drawing data of the structure view: a colour palette of our own (familiar hues for the common
// organic elements so a chemist reads them at once, our own tones everywhere) and single-bond covalent radii
// in Å (published table: Dalton Trans. 2008, 2832; checked against Debian's python3-ase in the tests).

/** Covalent radii (Å), elements H–Ba and Hf–Bi. */
export const covalentRadius: Readonly<Record<string, number>> = {
  H: 0.31, He: 0.28, Li: 1.28, Be: 0.96, B: 0.84, C: 0.76, N: 0.71, O: 0.66, F: 0.57, Ne: 0.58,
  Na: 1.66, Mg: 1.41, Al: 1.21, Si: 1.11, P: 1.07, S: 1.05, Cl: 1.02, Ar: 1.06, K: 2.03, Ca: 1.76,
  Sc: 1.7, Ti: 1.6, V: 1.53, Cr: 1.39, Mn: 1.39, Fe: 1.32, Co: 1.26, Ni: 1.24, Cu: 1.32, Zn: 1.22,
  Ga: 1.22, Ge: 1.2, As: 1.19, Se: 1.2, Br: 1.2, Kr: 1.16, Rb: 2.2, Sr: 1.95, Y: 1.9, Zr: 1.75,
  Nb: 1.64, Mo: 1.54, Tc: 1.47, Ru: 1.46, Rh: 1.42, Pd: 1.39, Ag: 1.45, Cd: 1.44, In: 1.42, Sn: 1.39,
  Sb: 1.39, Te: 1.38, I: 1.39, Xe: 1.4, Cs: 2.44, Ba: 2.15,
  Hf: 1.75, Ta: 1.7, W: 1.62, Re: 1.51, Os: 1.44, Ir: 1.41, Pt: 1.36, Au: 1.36, Hg: 1.32, Tl: 1.45,
  Pb: 1.46, Bi: 1.48,
};

/** Radius used for an element missing from the table (Å). */
export const fallbackRadius = 1.5;

const palette: Readonly<Record<string, string>> = {
  H: '#eeebe3', // warm white
  B: '#e7a98f', // clay
  C: '#565b63', // graphite
  N: '#4d6fd4', // periwinkle
  O: '#d9463c', // coral red
  F: '#93cf6b', // lime
  Cl: '#46a86a', // fern
  Br: '#98432e', // rust
  I: '#7b3591', // aubergine
  S: '#e2bd35', // mustard
  P: '#e3873a', // apricot
  Si: '#c9a47f', // sandstone
  Li: '#b48ade', Na: '#8a6dd6', K: '#6c4fb4', Rb: '#5a3f9c', Cs: '#4a3286',
  Be: '#9fc77f', Mg: '#6aab56', Ca: '#58998a', Sr: '#4b8a7a', Ba: '#3e7b6b',
  Al: '#a9a3ba', Ga: '#9a8fae', Ge: '#8d8a78', Sn: '#7f8a99', Pb: '#5f6470',
  Ti: '#8e99a6', Fe: '#bf6f3b', Co: '#5e72c9', Ni: '#6fa58c', Cu: '#c27d4d', Zn: '#7c8eb0',
  Ag: '#b9bec8', Au: '#d6ad3a', Pt: '#c3c6cf', Se: '#c68f3a', As: '#a578b8', Te: '#a07a3e',
  He: '#c8ebf0', Ne: '#b4e0ea', Ar: '#9fd3e2', Kr: '#89c4d8', Xe: '#73b4cc',
};

/** Colour of an element (a muted lilac for elements without their own). */
export function elementColour(symbol: string): string {
  return palette[symbol] ?? '#b3a6c8';
}

export function elementRadius(symbol: string): number {
  return covalentRadius[symbol] ?? fallbackRadius;
}

/** Whether the colour is light enough that the sphere needs a dark outline to stand out on white. */
export function isLightColour(hex: string): boolean {
  const v = parseInt(hex.slice(1), 16);
  const r = (v >> 16) & 255;
  const g = (v >> 8) & 255;
  const b = v & 255;
  return 0.2126 * r + 0.7152 * g + 0.0722 * b > 200;
}
