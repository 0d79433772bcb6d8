// Synthetic EnvironmentFeatures (random, unit-normalised blocks) for testing the regression without the
// feature code: the regression only needs the layout of core/descriptors/feature-types.ts.
import type { EnvironmentFeatures } from '../../src-main/core/descriptors/feature-types.ts';
import { makeRng, type Rng } from '../../src-main/core/numerics/random.ts';

export interface SyntheticOptions {
  count: number;
  n0: number;
  /** Sizes of the λ>0 feature axes to generate. */
  tensor?: Partial<Record<1 | 2, number>>;
  /** Centre species index of each environment (default: alternate over `species`). */
  centreSpecies?: number[];
  species?: number;
  frame?: number;
  /** A shared offset added before normalising, so that environments resemble each other (like real ones). */
  common?: Float64Array;
}

function normaliseRows(data: Float64Array, rows: number, len: number): void {
  for (let r = 0; r < rows; r++) {
    let s = 0;
    for (let f = 0; f < len; f++) s += data[r * len + f] ** 2;
    const k = 1 / Math.sqrt(s);
    for (let f = 0; f < len; f++) data[r * len + f] *= k;
  }
}

export function syntheticFeatures(rng: Rng, o: SyntheticOptions): EnvironmentFeatures {
  const species = o.species ?? 2;
  const centreSpecies = Int32Array.from(o.centreSpecies ?? Array.from({ length: o.count }, (_, e) => e % species));
  const scalar = new Float64Array(o.count * o.n0);
  for (let i = 0; i < scalar.length; i++) scalar[i] = rng.normal() + (o.common ? o.common[i % o.n0] : 0);
  normaliseRows(scalar, o.count, o.n0);
  const tensor: EnvironmentFeatures['tensor'] = {};
  for (const [key, n] of Object.entries(o.tensor ?? {})) {
    const lam = Number(key) as 1 | 2;
    const w = 2 * lam + 1;
    const data = new Float64Array(o.count * w * (n as number));
    for (let i = 0; i < data.length; i++) data[i] = rng.normal();
    normaliseRows(data, o.count, w * (n as number));
    tensor[lam] = { n: n as number, data };
  }
  return {
    count: o.count,
    centre: Int32Array.from({ length: o.count }, (_, e) => e),
    centreSpecies,
    frame: new Int32Array(o.count).fill(o.frame ?? 0),
    n0: o.n0,
    scalar,
    tensor,
  };
}

export { makeRng };
