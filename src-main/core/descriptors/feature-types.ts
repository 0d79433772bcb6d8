// The shape in which the feature code (features.ts) hands environments to the kernels and the regression
// (kernels.ts, regression.ts, model.ts). Extend, do not break.

export interface FeatureSettings {
  /** Neighbour cutoff r_c (Å). */
  cutoff: number;
  /** Width of the smooth switch below the cutoff (Å). */
  cutoffWidth: number;
  /** Gaussian width of the neighbour density (Å). */
  sigma: number;
  nmax: number;
  lmax: number;
  /** Neighbour species, in a fixed order (the density channels). */
  species: string[];
  /** Centre species: only atoms of these species get an environment. */
  centres: string[];
  /**
   * Radial and angular limits of the λ = 1, 2 (equivariant) features, at most nmax and lmax; they use the first
   * nmaxTensor radial functions and degrees l ≤ lmaxTensor of the same expansion. Omitted: see
   * `tensorLimits` in features.ts (docs/learning-engine.md gives the default and the reason).
   */
  nmaxTensor?: number;
  lmaxTensor?: number;
}

/**
 * Features of every environment of one frame (or of many, concatenated).
 * Layouts are row-major: for λ = 0, `scalar[e * n0 + f]`; for λ > 0, `tensor[λ][(e * (2λ+1) + μ) * nλ + f]`
 * with μ = 0…2λ standing for m = −λ…λ in the real-harmonic convention. Every environment's block is
 * normalised to unit norm (the λ = 0 row; the whole (2λ+1)×nλ block for λ > 0).
 */
export interface EnvironmentFeatures {
  count: number;
  /** Atom index (within its frame) of each environment's centre. */
  centre: Int32Array;
  /** Index into settings.centres of each environment's centre species. */
  centreSpecies: Int32Array;
  /** Frame index of each environment (0 for a single frame). */
  frame: Int32Array;
  n0: number;
  scalar: Float64Array;
  /** λ → size of the feature axis, and the features, for each λ > 0 computed (1 for dipoles, 2 for tensors). */
  tensor: Partial<Record<1 | 2, { n: number; data: Float64Array }>>;
  /** Per environment, the norm of its λ = 0 row before normalisation (the scale of its neighbour density), when computed. */
  norms?: Float64Array;
  /**
   * Only from computeFeatures with sumsOnly: per λ > 0 order, the sums of the environments' blocks per centre species,
   * rows[μ·(species·nλ) + s·nλ + f] (the layout of linearDesignRows, which then answers with them); tensor[λ].data is
   * then empty.
   */
  tensorSums?: Partial<Record<1 | 2, Float64Array>>;
}
