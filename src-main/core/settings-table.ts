// The one table of model settings: for each setting its key (in the engine, the API and model files of format
// version 2), its command-line option, a plain-words label, unit, default, limits and help. The command line
// (cli/learn-options.ts), the window's model form (src-renderer/lib/settings.ts), the API schema
// (api/contract.ts), the engine's check (learning/model.ts resolveSettings) and the feature check
// (descriptors/features.ts checkFeatureSettings) all read it; test/core/settings-table.test.ts holds them to it.
// Pure TypeScript, no Node or browser API: the window imports it as it is.
//
// The limits of the geometric settings are the widest any earlier front end accepted, so that every model
// trained before this table still computes its features (the feature check reads the same limits).
//
// The names are plain words for what each setting does; the maths behind them (and the usual symbols r_c, σ,
// n_max, l_max, ζ, M) is in docs/learning-engine.md. Model files of version 1 used other keys: `v1Key` keeps
// them for the reader of old files (io/model-file.ts) and nothing else.

/** The settings of a model, keyed as in the table below. */
export interface ModelSettings {
  /** Neighbours farther than this from an atom do not shape its environment (Å). */
  cutoffRadius: number;
  /** The neighbour density fades smoothly to zero over this distance below the cutoff radius (Å). */
  switchWidth: number;
  /** Each neighbour is smeared into a Gaussian of this width (Å). */
  densityWidth: number;
  /** Number of radial functions: how finely distances are resolved. */
  radialFunctions: number;
  /** Highest angular order: how finely directions are resolved. */
  angularOrder: number;
  /** Power to which environment similarities are raised (1 = linear in the features, fastest). */
  kernelExponent: number;
  /** Ridge regularisation relative to the kernel's scale; null = choose by cross-validation. */
  regularisation: number | null;
  /** Anchor environments per species of the kernel's reduced form; 0 = every environment (exact kernel ridge). */
  anchorEnvironments: number;
  /** Species that carry local contributions; empty = every species in the training data. */
  contributingSpecies: string[];
  /** Cap on the feature columns kept per order (chosen from the data); 0 = keep all. */
  maxFeatures: number;
  /** Seed of every random choice in training. */
  seed: number;
  /**
   * How the λ=0 part is shared between species where the data leave it open (one composition): relative per-atom
   * polarisabilities by species (only their ratios count), 'free-atom' for the free-atom table
   * (core/learning/species-split.ts), or null: as the fit leaves it. Absent in models written before it existed.
   */
  speciesSplit?: SpeciesSplit;
}

/** Relative per-atom polarisabilities by species, the free-atom table, or none. */
export type SpeciesSplit = 'free-atom' | Record<string, number> | null;

export type SettingKey = keyof ModelSettings;
export type NumericSettingKey = Exclude<SettingKey, 'contributingSpecies' | 'regularisation' | 'speciesSplit'>;

export interface NumericSettingSpec {
  key: NumericSettingKey | 'regularisation';
  /** Command-line option (without the leading --). */
  option: string;
  /** Plain-words label, as the window shows it. */
  label: string;
  /** Unit ('' for a pure number). */
  unit: string;
  /** One line for `--help` and the API. */
  help: string;
  /** A sentence more for the window. */
  explain: string;
  /** Whole numbers only. */
  integer: boolean;
  /** Inclusive limits. */
  min: number;
  max: number;
  /** Step of the window's number field. */
  step: number;
  /** Key in model files of format version 1. */
  v1Key: string;
}

/** Largest number of species a model can name (every element). */
export const MAX_SPECIES = 120;

/**
 * The numeric settings, in the order the help and the window show them. `regularisation` is numeric but
 * optional (null: chosen by cross-validation).
 */
export const NUMERIC_SETTINGS: readonly NumericSettingSpec[] = [
  {
    key: 'cutoffRadius', option: 'cutoff-radius', label: 'Cutoff radius', unit: 'Å', integer: false, min: 0.5, max: 20, step: 0.1, v1Key: 'cutoff',
    help: 'neighbours farther than this do not shape an atom’s environment',
    explain: 'Neighbours farther than this from an atom do not shape its environment.',
  },
  {
    key: 'switchWidth', option: 'switch-width', label: 'Switch width', unit: 'Å', integer: false, min: 0.01, max: 20, step: 0.05, v1Key: 'cutoffWidth',
    help: 'the neighbour density fades smoothly to zero over this distance below the cutoff radius',
    explain: 'The neighbour density fades smoothly to zero over this distance below the cutoff radius, so no feature jumps when an atom crosses it.',
  },
  {
    key: 'densityWidth', option: 'density-width', label: 'Density width', unit: 'Å', integer: false, min: 0.01, max: 5, step: 0.05, v1Key: 'sigma',
    help: 'each neighbour is smeared into a Gaussian of this width',
    explain: 'Each neighbour is smeared into a Gaussian of this width: wider is smoother, narrower resolves positions more sharply.',
  },
  {
    key: 'radialFunctions', option: 'radial-functions', label: 'Radial functions', unit: '', integer: true, min: 1, max: 16, step: 1, v1Key: 'nmax',
    help: 'number of radial functions: how finely distances are resolved',
    explain: 'How finely distances from the atom are resolved.',
  },
  {
    key: 'angularOrder', option: 'angular-order', label: 'Angular order', unit: '', integer: true, min: 0, max: 10, step: 1, v1Key: 'lmax',
    help: 'highest angular order: how finely directions are resolved (a tensor needs at least 1)',
    explain: 'How finely directions around the atom are resolved (the highest order of spherical harmonics). 0 suits a scalar only; a tensor needs at least 1.',
  },
  {
    key: 'kernelExponent', option: 'kernel-exponent', label: 'Kernel exponent', unit: '', integer: true, min: 1, max: 8, step: 1, v1Key: 'zeta',
    help: 'power of the similarity between environments (1 = linear in the features, fastest)',
    explain: '1: linear in the features, fastest; 2 or more: a sharper similarity between environments.',
  },
  {
    key: 'regularisation', option: 'regularisation', label: 'Regularisation', unit: '', integer: false, min: 1e-14, max: 1e6, step: 0, v1Key: 'regularisation',
    help: 'ridge regularisation relative to the kernel’s scale (default: chosen by cross-validation)',
    explain: 'Ridge strength relative to the kernel’s scale: larger is smoother, smaller follows the data closer.',
  },
  {
    key: 'anchorEnvironments', option: 'anchor-environments', label: 'Anchor environments per species', unit: '', integer: true, min: 0, max: 5000, step: 10, v1Key: 'sparsePoints',
    help: 'environments per species that the kernel is built on when the exponent is above 1, picked to cover the data evenly (0 = every environment, exact)',
    explain: '0: every training environment, exact and slow; otherwise the kernel is built on this many environments per species, picked one by one as the most unlike those already picked.',
  },
  {
    key: 'maxFeatures', option: 'max-features', label: 'Feature columns kept', unit: '', integer: true, min: 0, max: 100000, step: 10, v1Key: 'maxFeatures',
    help: 'keep at most N feature columns per order, chosen from the data (0 = all)',
    explain: '0: keep every feature column; otherwise the most informative columns of the training data.',
  },
  {
    key: 'seed', option: 'seed', label: 'Random seed', unit: '', integer: true, min: 0, max: 2 ** 31 - 1, step: 1, v1Key: 'seed',
    help: 'seed of every random choice (folds, sampling)',
    explain: 'Fixes every random choice (folds, sampling), so a run can be repeated.',
  },
];

/** The species setting (a list, not a number). */
export const SPECIES_SETTING = {
  key: 'contributingSpecies' as const,
  option: 'contributing-species',
  label: 'Contributing species',
  help: 'species that carry local contributions, comma-separated (default: all); the others still count as neighbours',
  explain: 'Species that carry a local contribution; the others still count as neighbours.',
  v1Key: 'centres',
};

/** The species-split setting (a keyword or a list of ratios, not a number). */
export const SPLIT_SETTING = {
  key: 'speciesSplit' as const,
  option: 'species-split',
  label: 'Split between species',
  help: 'where every training frame has one composition, share each frame\'s polarisability between species in these ratios: "free-atom" (free-atom polarisabilities) or a list such as O:0.80,H:0.67 (default: as the fit leaves it)',
  explain: 'With one composition the data cannot tell how much of the polarisability belongs to each species. Give ratios (e.g. O:0.80,H:0.67) or use free-atom values; the totals stay as the data say.',
};

/** The species split in the words of the command line: "free-atom", "O:0.8,H:0.667", or "" for none. */
export function speciesSplitText(split: SpeciesSplit | undefined): string {
  if (!split) return '';
  if (split === 'free-atom') return 'free-atom';
  return Object.entries(split).map(([k, v]) => `${k}:${v}`).join(',');
}

/** A species split from its text ("free-atom", "O:0.8,H:0.667" or empty for none), or the problem with it. */
export function parseSpeciesSplit(text: string): { split: SpeciesSplit } | { problem: string } {
  const t = text.trim();
  if (t === '' || t === 'none') return { split: null };
  if (t === 'free-atom') return { split: 'free-atom' };
  const out: Record<string, number> = {};
  for (const item of t.split(',').map((x) => x.trim()).filter(Boolean)) {
    const m = /^([^\s,:]{1,3})\s*:\s*(\S+)$/.exec(item);
    const v = m ? Number(m[2]) : NaN;
    if (!m || !Number.isFinite(v) || v <= 0) return { problem: `species split "${item}" is not SPECIES:VALUE with a positive value (e.g. O:0.80,H:0.67), nor "free-atom"` };
    if (m[1] in out) return { problem: `species split names ${m[1]} twice` };
    out[m[1]] = v;
  }
  if (Object.keys(out).length < 2) return { problem: 'a species split needs at least two species (e.g. O:0.80,H:0.67)' };
  return { split: out };
}

/** Defaults chosen so that training works untuned on 100–400-atom cells (reasons in docs/learning-engine.md). */
export const DEFAULT_SETTINGS: ModelSettings = {
  cutoffRadius: 4.5,
  switchWidth: 0.5,
  densityWidth: 0.4,
  radialFunctions: 6,
  angularOrder: 4,
  kernelExponent: 1,
  regularisation: null,
  anchorEnvironments: 500,
  contributingSpecies: [],
  maxFeatures: 0,
  seed: 1,
  speciesSplit: null,
};

/** The settings that may be chosen by cross-validation (`--tune-…` on the command line). */
export const TUNABLE_SETTINGS = ['cutoffRadius', 'densityWidth', 'kernelExponent'] as const;
export type TunableSetting = (typeof TUNABLE_SETTINGS)[number];

export function settingSpec(key: NumericSettingKey | 'regularisation'): NumericSettingSpec {
  const s = NUMERIC_SETTINGS.find((x) => x.key === key);
  if (!s) throw new Error(`no setting ${key}`);
  return s;
}

function show(v: number): string {
  return Number.isInteger(v) && Math.abs(v) < 1e10 ? String(v) : v !== 0 && Math.abs(v) < 1e-3 ? v.toExponential() : String(v);
}

/** The limits of a setting in words, e.g. "a whole number 1–16" or "1–12 Å". */
export function limitsText(spec: NumericSettingSpec): string {
  const range = `${show(spec.min)}–${show(spec.max)}${spec.unit ? ` ${spec.unit}` : ''}`;
  return spec.integer ? `a whole number ${range}` : range;
}

/** Why `value` is not allowed for the setting, or null when it is. */
export function valueProblem(spec: NumericSettingSpec, value: number): string | null {
  if (typeof value !== 'number' || !Number.isFinite(value) || value < spec.min || value > spec.max || (spec.integer && !Number.isInteger(value))) {
    return `${spec.label.toLowerCase()} ${String(value)}${spec.unit && Number.isFinite(value) ? ` ${spec.unit}` : ''} is not allowed: use ${limitsText(spec)}`;
  }
  return null;
}

/** A species label as structure files give it (an element symbol, at most 3 characters, no space or comma). */
export const SPECIES_LABEL = /^[^\s,]{1,3}$/;

/**
 * Every problem of a complete set of settings: each value within its limits, and the rules between them (the
 * switch width at most the cutoff radius, the density width below it). Empty when the settings are good.
 */
export function settingsProblems(s: ModelSettings): string[] {
  const out: string[] = [];
  for (const spec of NUMERIC_SETTINGS) {
    const v = s[spec.key];
    if (spec.key === 'regularisation' && v === null) continue;
    const p = valueProblem(spec, v as number);
    if (p) out.push(p);
  }
  if (out.length === 0) {
    if (s.switchWidth > s.cutoffRadius) out.push(`switch width ${s.switchWidth} Å is larger than the cutoff radius ${s.cutoffRadius} Å: use at most the cutoff radius`);
    if (s.densityWidth >= s.cutoffRadius) out.push(`density width ${s.densityWidth} Å is not below the cutoff radius ${s.cutoffRadius} Å`);
  }
  const sp = s.contributingSpecies;
  if (!Array.isArray(sp) || sp.length > MAX_SPECIES || sp.some((x) => typeof x !== 'string' || !SPECIES_LABEL.test(x))) {
    out.push(`contributing species must be species labels such as O, H (got ${JSON.stringify(sp)})`);
  } else if (new Set(sp).size !== sp.length) out.push(`contributing species ${sp.join(', ')} repeat: list each once`);
  const split = s.speciesSplit;
  if (split !== undefined && split !== null && split !== 'free-atom') {
    const entries = typeof split === 'object' && !Array.isArray(split) ? Object.entries(split) : null;
    if (!entries || entries.length < 2 || entries.length > MAX_SPECIES || entries.some(([k, v]) => !SPECIES_LABEL.test(k) || typeof v !== 'number' || !Number.isFinite(v) || v <= 0)) {
      out.push(`species split must be "free-atom" or positive values for at least two species such as O:0.80,H:0.67 (got ${JSON.stringify(split)})`);
    }
  }
  return out;
}

/** The settings that shape a model, in words (for `train`'s summary and the demo report). */
export function describeSettings(s: ModelSettings): string {
  const parts = [
    `cutoff radius ${s.cutoffRadius} Å`,
    `switch width ${s.switchWidth} Å`,
    `density width ${s.densityWidth} Å`,
    `${s.radialFunctions} radial functions`,
    `angular order ${s.angularOrder}`,
    `kernel exponent ${s.kernelExponent}${s.kernelExponent === 1 ? ' (linear)' : s.anchorEnvironments ? ` on ${s.anchorEnvironments} anchor environments per species` : ' (exact, every environment)'}`,
  ];
  if (s.maxFeatures) parts.push(`at most ${s.maxFeatures} feature columns per order`);
  if (s.contributingSpecies.length) parts.push(`contributing species ${s.contributingSpecies.join(', ')}`);
  if (s.speciesSplit) parts.push(`species split ${speciesSplitText(s.speciesSplit)}`);
  return parts.join(', ');
}
