// The prediction output format, in one place: the per-frame tensor table (CSV columns, comment block, rows;
// `convert` writes reference tables in the same layout), the columns every prediction carries beside its
// tensors (one table, PREDICTION_COLUMNS: add an entry there to add a column), the extended XYZ info keys and
// per-atom arrays of an annotated frame, the CSV identity line and the per-frame stamp that merge checks. The
// writers (predict's sinks, the window's export, the demo) and the readers (io/trajectory-series.ts, merge)
// take their names from here.
import type { Frame } from '../../core/geometry/frame.ts';
import { PhysicsError } from '../../core/errors.ts';
import type { IsolatedPrediction, TensorErrorBars, TensorPrediction } from '../../core/learning/model-types.ts';
import { reasonText } from '../../core/learning/domain.ts';
import type { TargetShape } from '../../core/learning/targets.ts';
import type { Model, TargetPrediction } from '../../core/learning/model.ts';
import { predictedVector } from '../../core/learning/model.ts';
import { anisotropy, anisotropyOfParts, isotropicMean, symmetricEigen, toIrreducible } from '../../core/dielectric/tensor.ts';
import { polarisabilityFromA3, type PolarisabilityUnit } from '../../core/dielectric/units.ts';
import { atomicWriteStream, writeFileAtomic } from '../atomic.ts';
import { csvField, csvRecord, csvValue, type CsvValue } from '../csv.ts';
import type { Mat3 } from '../../core/geometry/frame.ts';

// ---------------------------------------------------------------------------------------------------------
// The per-frame tensor table

/** One frame's results. Tensors are symmetric 3×3, row-major; `alpha` in Å³ (polarisability volume). */
export interface TensorRow {
  /** 0-based frame index in its source file. */
  frame: number;
  /** Values of the tag columns named in the options (file name, frame tag, phase, …). */
  tags?: Record<string, string | number>;
  /** Cell volume in Å³; null for an isolated molecule or cluster (written as an empty field). */
  volumeA3: number | null;
  /** Optical dielectric tensor ε∞ (dimensionless); null for an isolated molecule or cluster, which has none:
   * its ε, n and Δn fields are written empty, never as a number. */
  eps: Mat3 | null;
  /** Cell polarisability in Å³ of the kind options.alpha.kind (needed when options.alpha is set). */
  alpha?: Mat3;
  /** Values of the extra columns named in the options (e.g. applicability figures). */
  extra?: Record<string, CsvValue>;
}

export interface TensorCsvOptions {
  /** Tag columns after `frame`, in this order. */
  tagColumns?: string[];
  /** Also write the polarisability: which one (conducting-boundary or Clausius–Mossotti) and in which unit. */
  alpha?: { kind: 'alpha-c' | 'alpha-cm'; unit: PolarisabilityUnit };
  /** Extra numeric columns at the end, in this order (the engine's applicability figures, …). */
  extraColumns?: string[];
  /** Units or meaning of the extra columns, printed in the header block. */
  extraDescriptions?: Record<string, string>;
  /** What produced the values, e.g. "model water-v1.pwm (kernel ridge, λ=0+2)" or "reference data". */
  source: string;
  /** True when the values are a model's predictions (adds the note that they are estimates). Default true. */
  predicted?: boolean;
  /** First comment line (default: "Polarweave per-frame dielectric tensors"). */
  title?: string;
  /** Say in the comment block how rows of isolated molecules or clusters are written (prediction tables of route cm). */
  isolatedRows?: boolean;
}

/** The comment line on rows of frames without a cell (written when the table may hold them). */
export const ISOLATED_ROWS_NOTE =
  'Frames without a periodic cell (isolated molecules or clusters): volume_A3, eps_*, n_* and dn are empty because ε, n and Δn are not defined for a lone molecule; alpha_cm_* then holds the polarisability of the molecule or cluster in vacuum.';

/** Tensor components in the order of the columns, and their row-major indices. */
export const TENSOR_COMPONENTS = ['xx', 'yy', 'zz', 'xy', 'xz', 'yz'] as const;
export type TensorComponent = (typeof TENSOR_COMPONENTS)[number];
/** Row-major indices of xx yy zz xy xz yz. */
export const COMPONENT_SLOTS: Record<TensorComponent, [number, number]> = { xx: [0, 0], yy: [4, 4], zz: [8, 8], xy: [1, 3], xz: [2, 6], yz: [5, 7] };
const INDEX = TENSOR_COMPONENTS.map((c) => COMPONENT_SLOTS[c][0]);

const UNIT_SUFFIX: Record<PolarisabilityUnit, string> = { A3: 'A3', bohr3: 'bohr3', si: 'Cm2perV' };
const UNIT_TEXT: Record<PolarisabilityUnit, string> = {
  A3: 'Å³ (polarisability volume α/(4πε0))',
  bohr3: 'bohr³ (atomic units, CODATA 2018 bohr)',
  si: 'C·m²/V (SI)',
};

function alphaPrefix(kind: 'alpha-c' | 'alpha-cm'): string {
  return kind === 'alpha-c' ? 'alpha_c' : 'alpha_cm';
}

/** Column name of an ε component: eps_xx … */
export function epsColumn(c: TensorComponent): string {
  return `eps_${c}`;
}

/** Column name of a polarisability component: alpha_cm_xx_A3 … (the readers look for exactly this). */
export function alphaColumn(kind: 'alpha-c' | 'alpha-cm', c: TensorComponent | 'iso' | 'aniso', unit: PolarisabilityUnit = 'A3'): string {
  return `${alphaPrefix(kind)}_${c}_${UNIT_SUFFIX[unit]}`;
}

/** The header row's column names for these options. */
export function tensorCsvColumns(options: TensorCsvOptions): string[] {
  const cols = ['frame', ...(options.tagColumns ?? []), 'volume_A3'];
  for (const c of TENSOR_COMPONENTS) cols.push(epsColumn(c));
  cols.push('eps_iso', 'eps_aniso', 'eps_1', 'eps_2', 'eps_3', 'n_1', 'n_2', 'n_3', 'dn');
  if (options.alpha) {
    const { kind, unit } = options.alpha;
    for (const c of TENSOR_COMPONENTS) cols.push(alphaColumn(kind, c, unit));
    cols.push(alphaColumn(kind, 'iso', unit), alphaColumn(kind, 'aniso', unit));
  }
  cols.push(...(options.extraColumns ?? []));
  const seen = new Set<string>();
  for (const c of cols) {
    if (seen.has(c)) throw new RangeError(`tensorCsv: column '${c}' would appear twice`);
    seen.add(c);
  }
  return cols;
}

/** The `# ` comment block that opens the file. */
export function tensorCsvPreamble(options: TensorCsvOptions, created = new Date()): string {
  const lines = [
    options.title ?? 'Polarweave per-frame dielectric tensors',
    'One row per frame: the optical (electronic, high-frequency) dielectric tensor eps_inf and quantities derived from it.',
    'Units: volume_A3 in Å³; eps_* dimensionless; n_1..n_3 refractive indices (dimensionless); dn = n_3 - n_1.',
    'Tensor components xx yy zz xy xz yz of the symmetric tensor, in the Cartesian axes of the input structure.',
    'eps_iso = trace/3; eps_aniso = sqrt(((l1-l2)^2 + (l2-l3)^2 + (l3-l1)^2)/2) of the principal values;',
    'eps_1 <= eps_2 <= eps_3 principal values (Jacobi eigenvalues); n_k = sqrt(eps_k).',
  ];
  if (options.alpha) {
    const p = alphaPrefix(options.alpha.kind);
    const what = options.alpha.kind === 'alpha-c' ? 'conducting-boundary cell polarisability (eps = I + 4 pi alpha_c / V)' : 'Clausius-Mossotti cell polarisability';
    lines.push(`${p}_*: ${what}, in ${UNIT_TEXT[options.alpha.unit]}.`);
  }
  if (options.isolatedRows) lines.push(ISOLATED_ROWS_NOTE);
  for (const c of options.extraColumns ?? []) {
    const d = options.extraDescriptions?.[c];
    if (d) lines.push(`${c}: ${d}`);
  }
  lines.push(`Source: ${options.source}`);
  if (options.predicted ?? true) lines.push('Note: these values are model estimates (predictions), not measurements or reference calculations.');
  lines.push(`Written: ${created.toISOString()}`);
  return lines.map((l) => `# ${l.replace(/[\r\n]+/g, ' ')}\n`).join('');
}

function num(x: CsvValue, what: string, frame: number): string {
  return csvValue(x, what, { frame });
}

/** One data row (with its newline). */
export function tensorCsvRow(row: TensorRow, options: TensorCsvOptions): string {
  const f = row.frame;
  const out: string[] = [String(f)];
  for (const t of options.tagColumns ?? []) {
    const v = row.tags?.[t];
    if (v === undefined) throw new RangeError(`tensorCsv: frame ${f} has no value for tag column '${t}'`);
    out.push(num(v, t, f));
  }
  const e = row.eps;
  if (e === null) {
    // an isolated molecule or cluster: no volume, ε, n or Δn (ISOLATED_ROWS_NOTE) — empty fields, not numbers
    if (row.volumeA3 !== null) throw new RangeError(`tensorCsv: frame ${f} has a volume but no eps tensor`);
    out.push(NOT_DEFINED);
    for (let k = 0; k < INDEX.length + 9; k++) out.push(NOT_DEFINED);
  } else {
    if (row.volumeA3 === null) throw new RangeError(`tensorCsv: frame ${f} has an eps tensor but no volume`);
    out.push(num(row.volumeA3, 'volume', f));
    if (e.length !== 9) throw new RangeError(`tensorCsv: frame ${f} has no 3×3 eps tensor`);
    for (const i of INDEX) out.push(num(e[i], 'eps', f));
    const { values } = symmetricEigen(e);
    if (values[0] < 0) {
      throw new PhysicsError(`eps has a negative principal value (${values[0].toPrecision(6)}): no real refractive index`, { frame: f });
    }
    const n = Array.from(values, Math.sqrt);
    out.push(num(isotropicMean(e), 'eps_iso', f), num(anisotropy(e), 'eps_aniso', f));
    for (const v of values) out.push(num(v, 'eps principal value', f));
    for (const v of n) out.push(num(v, 'refractive index', f));
    out.push(num(n[2] - n[0], 'birefringence', f));
  }
  if (options.alpha) {
    const a = row.alpha;
    if (!a || a.length !== 9) throw new RangeError(`tensorCsv: frame ${f} has no alpha tensor, but the options ask for one`);
    const u = options.alpha.unit;
    for (const i of INDEX) out.push(num(polarisabilityFromA3(a[i], u), 'alpha', f));
    out.push(num(polarisabilityFromA3(isotropicMean(a), u), 'alpha_iso', f), num(polarisabilityFromA3(anisotropy(a), u), 'alpha_aniso', f));
  }
  for (const c of options.extraColumns ?? []) {
    const v = row.extra?.[c];
    if (v === undefined) throw new RangeError(`tensorCsv: frame ${f} has no value for column '${c}'`);
    out.push(num(v, c, f));
  }
  return out.join(',') + '\n';
}

/** The whole table as text. */
export function tensorCsv(rows: Iterable<TensorRow>, options: TensorCsvOptions): string {
  const parts = [tensorCsvPreamble(options), tensorCsvColumns(options).map(csvField).join(',') + '\n'];
  for (const r of rows) parts.push(tensorCsvRow(r, options));
  return parts.join('');
}

/** Write the table atomically. */
export async function writeTensorCsv(path: string, rows: Iterable<TensorRow>, options: TensorCsvOptions): Promise<void> {
  await writeFileAtomic(path, tensorCsv(rows, options));
}

export interface TensorCsvWriter {
  writeRow(row: TensorRow): Promise<void>;
  /** Make the file appear (atomic rename). */
  commit(): Promise<void>;
  /** Drop it: nothing appears at the path. */
  abort(): Promise<void>;
}

/** Streamed table for long trajectories: rows go to a temporary file, committed atomically at the end. */
export function tensorCsvWriter(path: string, options: TensorCsvOptions): TensorCsvWriter {
  const stream = atomicWriteStream(path);
  const columns = tensorCsvColumns(options);
  let started = false;
  const start = async () => {
    if (!started) {
      started = true;
      await stream.write(tensorCsvPreamble(options) + columns.map(csvField).join(',') + '\n');
    }
  };
  return {
    async writeRow(row) {
      await start();
      let line: string;
      try {
        line = tensorCsvRow(row, options);
      } catch (e) {
        await stream.abort();
        throw e;
      }
      await stream.write(line);
    },
    async commit() {
      await start();
      await stream.commit();
    },
    abort: () => stream.abort(),
  };
}


// ---------------------------------------------------------------------------------------------------------
// The columns every prediction carries (tensor, vector and scalar models)

/** What a prediction column reads: the prediction of any target shape (tensor models: also its tensors). */
export type PredictionOf<S extends 'any' | 'tensor'> = S extends 'tensor' ? TensorPrediction : Pick<TargetPrediction, 'applicability'>;

export type PredictionColumn =
  | { name: string; description: string; for: 'any'; value(p: PredictionOf<'any'>): CsvValue }
  | { name: string; description: string; for: 'tensor'; value(p: PredictionOf<'tensor'>): CsvValue }
  | { name: string; description: string; for: 'value'; value(p: Pick<TargetPrediction, 'uncertainty'>): CsvValue };

/** Text written where a model has no error-bar calibration (saved before it existed, or < 3 training frames). */
export const NO_ERROR_BAR = '';
/** Text written where a quantity is not defined for the frame (ε, n, Δn of an isolated molecule or cluster). */
export const NOT_DEFINED = '';

/**
 * The calibrated model error bars of a tensor prediction (one standard deviation; core/dielectric/clausius-mossotti.ts
 * propagateErrorBars), in column order: the CSV columns and, prefixed with pred_, the extended XYZ info keys.
 */
export const ERROR_BAR_COLUMNS: readonly { name: string; description: string; value(e: TensorErrorBars): number; isolated?: (p: IsolatedPrediction) => number | null }[] = [
  { name: 'eps_iso_sd', description: 'model error bar (1 standard deviation, calibrated on held-out training folds) of eps_iso', value: (e) => e.epsIso },
  ...([0, 1, 2] as const).map((k) => ({ name: `eps_${k + 1}_sd`, description: `error bar of eps_${k + 1}`, value: (e: TensorErrorBars) => e.epsPrincipal[k] })),
  ...([0, 1, 2] as const).map((k) => ({ name: `n_${k + 1}_sd`, description: `error bar of n_${k + 1} (= eps_${k + 1}_sd / (2 n_${k + 1}))`, value: (e: TensorErrorBars) => e.n[k] })),
  { name: 'dn_sd', description: 'error bar of dn (correlation of n_3 and n_1 kept)', value: (e) => e.dn },
  { name: 'alpha_cm_iso_sd_A3', description: 'error bar of the isotropic Clausius-Mossotti cell polarisability (Å³; of the molecule or cluster for a frame without a cell)', value: (e) => e.alphaCmIso, isolated: (p) => p.alphaIsoSd },
];

/**
 * The figures written beside every prediction, in column order, with their meaning (printed in the CSV's
 * comment block). `for: 'tensor'` columns appear only for tensor models. Add an entry to add a column.
 */
export const PREDICTION_COLUMNS: readonly PredictionColumn[] = [
  { name: 'max_distance', for: 'any', description: 'largest per-atom distance in normalised λ=0 feature space to the nearest training representative of its species (0…2)', value: (p) => p.applicability.maxDistance },
  { name: 'threshold', for: 'any', description: "the model's applicability threshold on that distance", value: (p) => p.applicability.threshold },
  { name: 'atoms_outside', for: 'any', description: 'number of atoms outside the training ranges (feature distance, nearest-neighbour distance per species pair, neighbours within the cutoff, neighbour-density scale)', value: (p) => p.applicability.atomsOutside },
  { name: 'outside', for: 'any', description: '1 when the frame is at risk (number density outside the training range, an atom far outside, or more atoms outside than chance allows): treat the prediction as an extrapolation; else 0', value: (p) => (p.applicability.outside ? 1 : 0) },
  { name: 'variance_iso', for: 'any', description: 'raw posterior variance of the λ=0 part of the learnt tensor (model units squared; not an error bar: see eps_iso_sd)', value: (p) => p.applicability.variance },
  { name: 'ood_score', for: 'any', description: 'graded out-of-domain score of the frame (about 0.3-0.8 inside the training data; larger is farther out)', value: (p) => p.applicability.score },
  { name: 'fraction_outside', for: 'any', description: 'fraction of atoms outside the training ranges', value: (p) => p.applicability.fractionOutside },
  { name: 'ood_reason', for: 'any', description: 'why atoms or the frame lie outside, in words (worst first; empty when nothing is)', value: (p) => reasonText(p.applicability.reasons) },
  ...ERROR_BAR_COLUMNS.map((c) => ({
    name: c.name,
    for: 'tensor' as const,
    description: `${c.description}; empty when the model carries no calibration`,
    value: (p: TensorPrediction) => errorBarValue(c, p) ?? NO_ERROR_BAR,
  })),
  { name: 'value_sd', for: 'value', description: 'model error bar (1 standard deviation, calibrated on held-out training folds) of each value component; empty when the model carries no calibration', value: (p) => (p.uncertainty ? p.uncertainty.sd[0] : NO_ERROR_BAR) },
];

/** An error-bar column's value for a prediction: null where the model has no calibration or ε is not defined. */
function errorBarValue(c: (typeof ERROR_BAR_COLUMNS)[number], p: TensorPrediction): number | null {
  if (p.isolated) return c.isolated ? c.isolated(p) : null;
  return p.errorBars ? c.value(p.errorBars) : null;
}

/** The PREDICTION_COLUMNS entries a model of this target shape writes, in order. */
export function columnsFor(shape: TargetShape): PredictionColumn[] {
  return PREDICTION_COLUMNS.filter((c) => c.for === 'any' || (c.for === 'tensor') === (shape === 'tensor'));
}

function columnValues(shape: TargetShape, p: TensorPrediction | TargetPrediction): Record<string, CsvValue> {
  const out: Record<string, CsvValue> = {};
  for (const c of columnsFor(shape)) out[c.name] = c.for === 'tensor' ? c.value(p as TensorPrediction) : c.for === 'value' ? c.value(p as TargetPrediction) : c.value(p);
  return out;
}

/** The tag column of a prediction row: the frame's `tag` info value, or empty. */
export const TAG_COLUMN = 'tag';

/** The tag of a frame: its info value `key` (default `tag`) when that is text, else empty. */
function tagOf(frame: Frame, key: string = TAG_COLUMN): string {
  const t = frame.info[key];
  return typeof t === 'string' ? t : '';
}

/**
 * The reference columns written beside a prediction when the input frames carry the model's reference tensor
 * (predict, the window's export, the demo): the reference as ε (eps_ref_*, in the order of the eps_* columns),
 * its isotropic value, and the differences predicted − reference of the isotropic value and the anisotropy of
 * the difference tensor (the figures of core/learning/error-figures.ts, per frame). Empty cells in a frame
 * without a reference.
 */
export const REFERENCE_COLUMNS: readonly { name: string; description: string; value(ref: Mat3, eps: Mat3): number }[] = [
  ...TENSOR_COMPONENTS.map((c, k) => ({
    name: `eps_ref_${c}`,
    description: k === 0 ? 'eps_ref_xx … eps_ref_yz: the reference tensor the input file carries for this frame (as eps), for comparison' : '',
    value: (ref: Mat3) => ref[COMPONENT_SLOTS[c][0]],
  })),
  { name: 'eps_ref_iso', description: 'trace/3 of the reference eps', value: (ref) => isotropicMean(ref) },
  { name: 'eps_iso_diff', description: 'eps_iso − eps_ref_iso (predicted minus reference)', value: (ref, eps) => isotropicMean(eps) - isotropicMean(ref) },
  {
    name: 'eps_aniso_diff',
    description: 'anisotropy of the difference tensor eps − eps_ref (the anisotropic error of validate, for this frame; ≥ 0)',
    value: (ref, eps) => anisotropyOfParts(toIrreducible(Float64Array.from(eps, (v, i) => v - ref[i]))),
  },
];

/** True when a table's layout has the reference columns. */
export function hasReferenceColumns(options: TensorCsvOptions | undefined): boolean {
  return !!options?.extraColumns?.includes(REFERENCE_COLUMNS[0].name);
}

function referenceValues(ref: Mat3 | null, eps: Mat3 | null): Record<string, CsvValue> {
  return Object.fromEntries(REFERENCE_COLUMNS.map((c) => [c.name, ref && eps ? c.value(ref, eps) : NO_REFERENCE]));
}

/** Text written in the reference columns of a frame that carries no reference. */
export const NO_REFERENCE = '';

export interface PredictionTableOptions {
  /** What the predictions came from, for the comment block (a model path, or a name). */
  source: string;
  /** The first comment line (default: "Polarweave predicted dielectric tensors"). */
  title?: string;
  /** Add the reference columns (REFERENCE_COLUMNS, before the prediction columns) from `reference` in each row. */
  reference?: boolean;
}

/** io/csv tensor-table options for the predictions of `model`. */
export function predictionCsvOptions(model: Model, modelPath: string, options: Partial<PredictionTableOptions> = {}): TensorCsvOptions {
  const columns = columnsFor(model.target.shape);
  const ref = options.reference ? REFERENCE_COLUMNS : [];
  const descriptions: Record<string, string> = Object.fromEntries([...ref, ...columns].filter((c) => c.description).map((c) => [c.name, c.description]));
  return {
    title: options.title ?? 'Polarweave predicted dielectric tensors',
    tagColumns: [TAG_COLUMN],
    alpha: { kind: model.target.route === 'cm' ? 'alpha-cm' : 'alpha-c', unit: 'A3' },
    extraColumns: [...ref.map((c) => c.name), ...columns.map((c) => c.name)],
    extraDescriptions: descriptions,
    source: options.source ?? `model ${modelPath} (route ${model.target.route}, trained on ${model.training.frames} frames)`,
    predicted: true,
    isolatedRows: model.target.route === 'cm',
  };
}

/**
 * A tensor prediction as a per-frame table row: ε, the learnt cell polarisability of the route (α_CM for cm,
 * α_c for direct), the tag column and the prediction columns, and the reference columns when `reference` is
 * given (a tensor as ε, or null for a frame without one: empty cells). An isolated frame's row has no volume or
 * ε (nor reference ε) and carries the molecule's polarisability in the α_CM columns.
 */
export function tensorPredictionRow(index: number, frame: Frame, p: TensorPrediction, model: Model, more: { reference?: Mat3 | null; tagKey?: string } = {}): TensorRow {
  const reference = more.reference;
  return {
    frame: index,
    tags: { [TAG_COLUMN]: tagOf(frame, more.tagKey) },
    volumeA3: p.isolated ? null : p.volumeA3,
    eps: p.isolated ? null : p.eps,
    alpha: p.isolated ? p.alphaMol : model.target.route === 'cm' ? p.alphaCM : p.alphaC,
    extra: { ...(reference !== undefined ? referenceValues(p.isolated ? null : reference, p.isolated ? null : p.eps) : {}), ...columnValues('tensor', p) },
  };
}

export type RowValue = CsvValue;
export type PredictionRow = Record<string, RowValue>;

/** Value columns of a vector or scalar model. */
export const VALUE_COLUMNS = { vector: ['value_x', 'value_y', 'value_z'], scalar: ['value'] } as const;

/** Column names of a vector or scalar model's rows. */
export function valueRowColumns(model: Model): string[] {
  const v = model.target.shape === 'vector' ? VALUE_COLUMNS.vector : VALUE_COLUMNS.scalar;
  return ['frame', TAG_COLUMN, ...v, ...columnsFor(model.target.shape).map((c) => c.name)];
}

export function valuePredictionRow(model: Model, index: number, frame: Frame, p: TargetPrediction): PredictionRow {
  const row: PredictionRow = { frame: index, [TAG_COLUMN]: tagOf(frame) };
  if (model.target.shape === 'vector') {
    const v = predictedVector(p);
    VALUE_COLUMNS.vector.forEach((c, k) => (row[c] = v[k]));
  } else row[VALUE_COLUMNS.scalar[0]] = p.irreducible[0];
  Object.assign(row, columnValues(model.target.shape, p));
  return row;
}

/** A value row as one CSV record (the strict writer: a non-finite value is an error naming the frame). */
export function valueRowText(model: Model, row: PredictionRow): string {
  const cols = valueRowColumns(model);
  return csvRecord(cols.map((c) => row[c] ?? ''), cols, { frame: typeof row.frame === 'number' ? row.frame : undefined });
}

// ---------------------------------------------------------------------------------------------------------
// Extended XYZ: info keys and per-atom arrays of an annotated frame

/** Info keys of an annotated frame (the prediction's own, then the stamp that merge reads). */
export const PRED_KEYS = {
  eps: 'pred_eps',
  alphaCM: 'pred_alpha_cm_A3',
  /** An isolated frame's polarisability in vacuum (Å³); such a frame has no pred_eps, pred_alpha_cm_A3 or pred_alpha_c_A3. */
  alphaMol: 'pred_alpha_mol_A3',
  alphaC: 'pred_alpha_c_A3',
  outside: 'pred_outside',
  maxDistance: 'pred_max_distance',
  score: 'pred_ood_score',
  fractionOutside: 'pred_fraction_outside',
  reason: 'pred_ood_reason',
  route: 'pred_route',
  frame: 'pred_frame',
  modelSha256: 'pred_model_sha256',
  input: 'pred_input',
  shard: 'pred_shard',
} as const;

/** Per-atom arrays of an annotated frame. */
export const PRED_ARRAYS = {
  /** Local contributions, 9 per atom: α_CM in Å³ (route cm) or to ε − 1 (route direct). */
  localCM: 'local_alpha_cm_A3',
  localDirect: 'local_eps_minus_1',
  distance: 'feature_distance',
  /** Per-atom domain score u (core/learning/domain.ts): above 1 outside the training ranges. */
  domainScore: 'domain_score',
  molecule: 'molecule',
} as const;

/** The per-atom local-tensor array of a route. */
export function localArrayName(route: Model['target']['route']): string {
  return route === 'cm' ? PRED_ARRAYS.localCM : PRED_ARRAYS.localDirect;
}

/** Info keys of an annotated frame from its prediction, in the order written. */
export const PREDICTION_INFO: readonly { key: string; value(p: TensorPrediction, model: Model): number[] | number | string | boolean | undefined }[] = [
  { key: PRED_KEYS.eps, value: (p) => (p.isolated ? undefined : [...p.eps]) },
  { key: PRED_KEYS.alphaCM, value: (p) => (p.isolated ? undefined : [...p.alphaCM]) },
  { key: PRED_KEYS.alphaC, value: (p) => (p.isolated ? undefined : [...p.alphaC]) },
  { key: PRED_KEYS.alphaMol, value: (p) => (p.isolated ? [...p.alphaMol] : undefined) },
  { key: PRED_KEYS.outside, value: (p) => p.applicability.outside },
  { key: PRED_KEYS.maxDistance, value: (p) => p.applicability.maxDistance },
  { key: PRED_KEYS.route, value: (_p, m) => m.target.route },
  { key: PRED_KEYS.score, value: (p) => p.applicability.score },
  { key: PRED_KEYS.fractionOutside, value: (p) => p.applicability.fractionOutside },
  { key: PRED_KEYS.reason, value: (p) => reasonText(p.applicability.reasons) || undefined },
  // error bars: absent (not invented) when the model carries no calibration
  ...ERROR_BAR_COLUMNS.map((c) => ({ key: `pred_${c.name}`, value: (p: TensorPrediction) => errorBarValue(c, p) ?? undefined })),
];

/** Per-atom arrays of an annotated frame from its prediction, in the order written. */
export const PREDICTION_ARRAYS: readonly { name(model: Model): string; width: number; value(p: TensorPrediction): Float64Array }[] = [
  { name: (m) => localArrayName(m.target.route), width: 9, value: (p) => Float64Array.from(p.local) },
  { name: () => PRED_ARRAYS.distance, width: 1, value: (p) => Float64Array.from(p.applicability.atomDistance) },
  { name: () => PRED_ARRAYS.domainScore, width: 1, value: (p) => Float64Array.from(p.applicability.atomScore) },
];

/** A copy of the frame with the prediction attached (PREDICTION_INFO keys, PREDICTION_ARRAYS arrays). */
export function annotateFrame(frame: Frame, p: TensorPrediction, model: Model): Frame {
  const out: Frame = { ...frame, info: { ...frame.info }, arrays: { ...frame.arrays } };
  for (const k of PREDICTION_INFO) {
    const v = k.value(p, model);
    if (v !== undefined) out.info[k.key] = v;
  }
  for (const a of PREDICTION_ARRAYS) out.arrays[a.name(model)] = { kind: 'real', width: a.width, data: a.value(p) };
  return out;
}

/** The per-frame info keys extended XYZ output carries for merge (after the prediction's own keys). */
export interface FrameStamp {
  modelSha256: string;
  /** "NAME:BYTES" of the input file. */
  input: string;
  /** "k/N frames a:b step s of A:B step s" for a shard; merge removes it. */
  shard?: string;
}

/** Stamp an annotated frame with its index, the model checksum, the input and (for a shard) the shard. */
export function stampFrame(out: Frame, index: number, stamp: FrameStamp): Frame {
  out.info[PRED_KEYS.frame] = index;
  out.info[PRED_KEYS.modelSha256] = stamp.modelSha256;
  out.info[PRED_KEYS.input] = stamp.input;
  if (stamp.shard) out.info[PRED_KEYS.shard] = stamp.shard;
  return out;
}

/** The stamp at the end of an annotated frame's comment line (null when the line has none). */
export function parseFrameStamp(commentLine: string): { frame: number; modelSha256: string; input: string; shardText: string | null; shardField: string | null } | null {
  const m = STAMP.exec(commentLine);
  if (!m) return null;
  return { frame: Number(m[1]), modelSha256: m[2], input: m[3], shardField: m[4] ?? null, shardText: m[5] ?? null };
}

const STAMP = new RegExp(` ${PRED_KEYS.frame}=(\\d+) ${PRED_KEYS.modelSha256}=([0-9a-f]{64}) ${PRED_KEYS.input}=(\\S+)( ${PRED_KEYS.shard}="([^"]*)")?$`);
const SHARD_TEXT = /^(\d+)\/(\d+) frames (\d+):(\d*) step (\d+) of (\d+):(\d*) step (\d+)$/;

/** The shard stamp's text "k/N frames a:b step s of A:B step s". */
export function shardStampText(k: number, n: number, frames: SelectionText, of: SelectionText): string {
  return `${k}/${n} frames ${selectionText(frames)} of ${selectionText(of)}`;
}

/** Read back a shard stamp's text (null when it is not one). */
export function parseShardStampText(text: string): { k: number; n: number; frames: SelectionText; of: SelectionText } | null {
  const m = SHARD_TEXT.exec(text);
  if (!m) return null;
  const sel = (a: string, b: string, s: string): SelectionText => ({ start: Number(a), stop: b === '' ? null : Number(b), step: Number(s) });
  return { k: Number(m[1]), n: Number(m[2]), frames: sel(m[3], m[4], m[5]), of: sel(m[6], m[7], m[8]) };
}

// ---------------------------------------------------------------------------------------------------------
// The identity line and the CSV header of a prediction file

/** A frame selection as text, "A:B step S" (B empty when open-ended). */
export interface SelectionText {
  start: number;
  stop: number | null;
  step: number;
}

export function selectionText(s: SelectionText): string {
  return `${s.start}:${s.stop ?? ''} step ${s.step}`;
}

export interface Identity {
  /** As given on the command line (shown, not checked). */
  modelPath: string;
  modelSha256: string;
  inputName: string;
  inputBytes: number;
  /** The frames this file holds, when not the whole input. */
  frames?: SelectionText;
  /** Part k of N of the selection `of`. */
  shard?: { k: number; n: number; of: SelectionText };
}

const TITLE = '# Identity: model ';

/** The comment line of a prediction CSV that says where it came from: model, its checksum, input, selection. */
export function identityLine(id: Identity): string {
  let line = TITLE + id.modelPath.replace(/[\r\n;]/g, ' ');
  line += `; model sha256 ${id.modelSha256}; input ${id.inputName.replace(/[\r\n;,]/g, ' ')}, ${id.inputBytes} bytes`;
  if (id.frames) line += `; frames ${selectionText(id.frames)}`;
  if (id.shard) line += `; shard ${id.shard.k}/${id.shard.n} of frames ${selectionText(id.shard.of)}`;
  return line + '\n';
}

function parseSelection(text: string): SelectionText | null {
  const m = /^(\d+):(\d*) step (\d+)$/.exec(text.trim());
  if (!m) return null;
  return { start: Number(m[1]), stop: m[2] === '' ? null : Number(m[2]), step: Number(m[3]) };
}

/** Read back an identity line (null when the line is not one). */
export function parseIdentityLine(line: string): Identity | null {
  if (!line.startsWith(TITLE)) return null;
  const fields = line.slice(TITLE.length).replace(/\r?\n$/, '').split('; ');
  const id: Partial<Identity> = { modelPath: fields[0] };
  for (const f of fields.slice(1)) {
    let m: RegExpExecArray | null;
    if ((m = /^model sha256 ([0-9a-f]{64})$/.exec(f))) id.modelSha256 = m[1];
    else if ((m = /^input (.*), (\d+) bytes$/.exec(f))) {
      id.inputName = m[1];
      id.inputBytes = Number(m[2]);
    } else if ((m = /^frames (.*)$/.exec(f))) id.frames = parseSelection(m[1]) ?? undefined;
    else if ((m = /^shard (\d+)\/(\d+) of frames (.*)$/.exec(f))) {
      const of = parseSelection(m[3]);
      if (of) id.shard = { k: Number(m[1]), n: Number(m[2]), of };
    }
  }
  if (!id.modelSha256 || id.inputName === undefined || id.inputBytes === undefined) return null;
  return id as Identity;
}

/** The column names of the CSV a model's predictions go to. */
export function predictionColumns(model: Model, csvOptions?: TensorCsvOptions): string[] {
  if (model.target.shape !== 'tensor') return valueRowColumns(model);
  if (!csvOptions) throw new RangeError('predictionColumns: a tensor model needs the CSV layout (csvOptions)');
  return tensorCsvColumns(csvOptions);
}

/** The title line of a vector or scalar model's prediction CSV. */
export function valueCsvTitle(modelPath: string): string {
  return `# Polarweave predictions (model estimates) from ${modelPath.replace(/\n/g, ' ')}\n`;
}

/**
 * The comment block and header row of a prediction CSV. Tensor models: the tensor table's preamble with its
 * "Written" time replaced by the identity line (so that resumed and merged runs give the same bytes); value
 * models: a title line, the identity line and the header.
 */
export function predictionCsvHeader(model: Model, id: Identity, csvOptions?: TensorCsvOptions): string {
  const columns = predictionColumns(model, csvOptions).map(csvField).join(',') + '\n';
  if (model.target.shape !== 'tensor') return `${valueCsvTitle(id.modelPath)}${identityLine(id)}${columns}`;
  const pre = tensorCsvPreamble(csvOptions as TensorCsvOptions, new Date(0)).replace(/^# Written: .*\n/m, identityLine(id));
  return pre + columns;
}
