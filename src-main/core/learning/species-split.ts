// The species split: how a model's λ=0 part (the isotropic polarisability) is shared between species where the
// training data leave it open. The data fix each frame's total only; with one composition any transfer between
// species that keeps every frame's total fits equally well (contributions.ts). Given relative per-atom
// polarisabilities p_s (the user's ratios, or the free-atom table below), the per-species offsets are moved along
// exactly those transfers — the null space of the training frames' species counts — until the species' mean
// per-atom contributions m_s are as close to c·p_s as the data allow (c free). Every training frame's total, and
// with it every prediction of a frame of a training composition, is unchanged; other compositions follow the prior.
// With compositions that span every species the data fix the split and nothing moves.
import { InputError } from '../errors.ts';
import type { SpeciesSplit } from '../settings-table.ts';

/** Bohr radius in Å (CODATA 2018: 0.529177210903 Å). */
const BOHR_A = 0.529177210903;

/**
 * Static dipole polarisabilities of free (ground-state, neutral) atoms, Å³. H is exact for the hydrogen atom
 * (α = 9/2 a₀³, non-relativistic, infinite nuclear mass). The others are from memory of the CRC Handbook of
 * Chemistry and Physics table "Atomic and molecular polarizabilities" (T. M. Miller); values are a few per cent
 * uncertain, which matters little for a split, since only ratios count.
 */
export const FREE_ATOM_POLARISABILITY_A3: Readonly<Record<string, { value: number; source: string }>> = {
  H: { value: 4.5 * BOHR_A ** 3, source: 'exact for the hydrogen atom, 9/2 a₀³ (a₀ from CODATA 2018)' },
  He: { value: 0.205, source: 'CRC Handbook, from memory' },
  Li: { value: 24.3, source: 'CRC Handbook, from memory' },
  C: { value: 1.76, source: 'CRC Handbook, from memory' },
  N: { value: 1.1, source: 'CRC Handbook, from memory' },
  O: { value: 0.802, source: 'CRC Handbook, from memory' },
  F: { value: 0.557, source: 'CRC Handbook, from memory' },
  Ne: { value: 0.396, source: 'CRC Handbook, from memory' },
  Na: { value: 24.1, source: 'CRC Handbook, from memory' },
  Mg: { value: 10.6, source: 'CRC Handbook, from memory' },
  Al: { value: 6.8, source: 'CRC Handbook, from memory' },
  Si: { value: 5.38, source: 'CRC Handbook, from memory' },
  P: { value: 3.63, source: 'CRC Handbook, from memory' },
  S: { value: 2.9, source: 'CRC Handbook, from memory' },
  Cl: { value: 2.18, source: 'CRC Handbook, from memory' },
  Ar: { value: 1.64, source: 'CRC Handbook, from memory' },
  K: { value: 43.4, source: 'CRC Handbook, from memory' },
  Ca: { value: 22.8, source: 'CRC Handbook, from memory' },
  Br: { value: 3.05, source: 'CRC Handbook, from memory' },
  I: { value: 5.35, source: 'CRC Handbook, from memory' },
};

/** The split's relative value for each centre species, in the order of `centres`; InputError when one is missing. */
export function splitValues(split: Exclude<SpeciesSplit, null>, centres: readonly string[]): number[] {
  return centres.map((s) => {
    const v = split === 'free-atom' ? FREE_ATOM_POLARISABILITY_A3[s]?.value : split[s];
    if (v === undefined) {
      throw new InputError(
        split === 'free-atom' ? `the free-atom table has no value for ${s}` : `the species split gives no value for ${s}`,
        {},
        split === 'free-atom' ? `give the split yourself, e.g. --species-split ${centres.map((c) => `${c}:1`).join(',')}` : `name every contributing species (${centres.join(', ')})`,
      );
    }
    return v;
  });
}

/**
 * The shift of the per-species offsets that brings the species' mean per-atom contributions `means` as close to
 * c·`prior` as the compositions allow. `counts`: species counts per frame. The shift lies in the null space of
 * the counts (every frame's total is kept): δ = Q Qᵀ (c p − m), Q an orthonormal basis of that null space and c
 * the least-squares scale of p against m on the row space of the counts. `free`: the dimension of the null space
 * (0: the data fix the split; the shift is then zero).
 */
export function splitShift(means: readonly number[], counts: readonly (readonly number[])[], prior: readonly number[]): { shift: Float64Array; free: number; scale: number } {
  const n = means.length;
  const dot = (a: ArrayLike<number>, b: ArrayLike<number>) => {
    let s = 0;
    for (let i = 0; i < n; i++) s += a[i] * b[i];
    return s;
  };
  // orthonormal basis R of the row space of the counts, then Q of its complement (Gram–Schmidt; n is small)
  const orthonormal = (vectors: Float64Array[], basis: Float64Array[]): Float64Array[] => {
    const out = [...basis];
    for (const v0 of vectors) {
      const v = Float64Array.from(v0);
      const size = Math.sqrt(dot(v, v));
      for (let pass = 0; pass < 2; pass++) for (const b of out) {
        const d = dot(v, b);
        for (let i = 0; i < n; i++) v[i] -= d * b[i];
      }
      const left = Math.sqrt(dot(v, v));
      if (size > 0 && left > 1e-9 * size) out.push(v.map((x) => x / left));
    }
    return out.slice(basis.length);
  };
  const rows = orthonormal(counts.map((c) => Float64Array.from(c)), []);
  const nulls = orthonormal(Array.from({ length: n }, (_, k) => Float64Array.from({ length: n }, (_, i) => (i === k ? 1 : 0))), rows);
  const shift = new Float64Array(n);
  if (nulls.length === 0) return { shift, free: 0, scale: NaN };
  let pp = 0;
  let pm = 0;
  for (const r of rows) {
    const rp = dot(r, prior);
    pp += rp * rp;
    pm += rp * dot(r, means);
  }
  const scale = pp > 0 ? pm / pp : 0;
  const target = Float64Array.from(prior, (p, i) => scale * p - means[i]);
  for (const q of nulls) {
    const d = dot(q, target);
    for (let i = 0; i < n; i++) shift[i] += d * q[i];
  }
  return { shift, free: nulls.length, scale };
}
