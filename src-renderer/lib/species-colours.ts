// Colours for chemical elements in our sketches: a small fixed table for the common ones, then a hash.
const fixed: Record<string, string> = {
  H: '#e8e4da',
  C: '#4a4f57',
  N: '#3d6fd1',
  O: '#d2452f',
  F: '#6fbf4a',
  Si: '#c9a46b',
  P: '#e08a2b',
  S: '#d8c53a',
  Cl: '#3fa85a',
  Na: '#8060c8',
  K: '#6a4aa8',
  Li: '#a070d0',
  Mg: '#5aa06a',
  Ca: '#6a9a8a',
  Ti: '#9aa0aa',
  Zn: '#7d7fb0',
  Br: '#a0522d',
  I: '#7a3b8f',
};

export function speciesColour(symbol: string): string {
  if (fixed[symbol]) return fixed[symbol];
  let h = 0;
  for (const c of symbol) h = (h * 31 + c.charCodeAt(0)) % 360;
  return `hsl(${h} 45% 55%)`;
}
