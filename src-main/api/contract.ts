// The one typed contract between the window and the computation. The renderer imports only the types from
// here; the Electron IPC handler and the browser host validate every incoming payload with `apiSchemas`
// before the service (app/service.ts) sees it. Every value is plain JSON (tensors as number[9], row-major).
import { z } from 'zod';
import { DEFAULT_SETTINGS, MAX_SPECIES, NUMERIC_SETTINGS, settingSpec, settingsProblems, SPECIES_LABEL, type NumericSettingKey, type NumericSettingSpec } from '../core/settings-table.ts';
import type { DomainReason, ErrorFigures, ModelSettings, ParityPoint, Route, TensorErrorBars, TensorKind, ValidationReport } from '../core/learning/model-types.ts';
import type { SetSummary } from '../core/learning/set-summary.ts';
import { MAX_REQUEST_BYTES } from '../core/limits.ts';

// ---------------------------------------------------------------------------------------------------------
// Shared shapes

/** A 3×3 matrix as 9 numbers, row-major. */
export type Mat3J = number[];
export type TensorKindJ = TensorKind;
export type RouteJ = Route;

export interface Range {
  min: number;
  max: number;
}

/** An error as the window sees it: plain words, and where. */
export interface ApiError {
  name: string;
  message: string;
  where?: { file?: string; line?: number; frame?: number };
  hint?: string;
}

export type ApiResponse<T> = { ok: true; value: T } | { ok: false; error: ApiError };

// ---------------------------------------------------------------------------------------------------------
// Data

export interface TensorKeyInfo {
  key: string;
  /** Our guess from the key's name and values; the user confirms it in the Model view. */
  kindGuess: TensorKindJ | null;
  /** Plain-words unit (e.g. "dimensionless", "Å³"). */
  unit: string;
  /** How many frames carry it. */
  frames: number;
  /** Range over frames of the isotropic mean (trace / 3). */
  isoRange: Range;
}

export interface SpeciesCount {
  symbol: string;
  /** Atoms of this species in the first frame. */
  perFrame: number;
}

export interface DatasetSummary {
  id: string;
  name: string;
  /** Where it came from, shown in the Data view. */
  origin: 'file' | 'upload' | 'demo' | 'project';
  frames: number;
  atoms: Range;
  species: SpeciesCount[];
  /** True when every frame has a cell with pbc on all axes. */
  periodic: boolean;
  /** Frames without a periodic cell (isolated molecules or clusters: no Lattice, or pbc="F F F"). */
  isolatedFrames: number;
  volumeA3: Range | null;
  /** Cell lengths a, b, c (Å) and angles (°) of the first frame, if periodic. */
  firstCell: { a: number; b: number; c: number; alpha: number; beta: number; gamma: number } | null;
  tensorKeys: TensorKeyInfo[];
  /** Other per-frame numeric keys (e.g. energies), by name. */
  otherKeys: string[];
  warnings: string[];
}

export interface FrameView {
  datasetId: string;
  index: number;
  species: string[];
  /** 3 per atom, Å. */
  positions: number[];
  /** Lattice vectors (rows, Å); null for a frame without periodicity (an isolated molecule or cluster): no cell box is drawn. */
  cell: Mat3J | null;
  pbc: [boolean, boolean, boolean];
  volumeA3: number | null;
  /** Per-frame properties; tensors as number[]. */
  info: Record<string, number | string | boolean | number[]>;
  source: { file: string; index: number; line: number } | null;
}

// ---------------------------------------------------------------------------------------------------------
// Models, checks, predictions

// The engine's public shapes (core/learning/model-types.ts) are plain JSON already; the window uses them as they are.
export type ModelSettingsJ = ModelSettings;
export type ErrorFiguresJ = ErrorFigures;
export type ParityPointJ = ParityPoint;
/** One kind's errors in a set mixing periodic frames and clusters (as `polarweave validate` prints them). */
export interface KindErrorsJ {
  /** What was compared, e.g. "alpha-cm (Å³), periodic frames" or "alpha-mol (Å³), isolated frames". */
  target: string;
  errors: ErrorFigures;
  points: ParityPoint[];
}
/**
 * A validation report (core's), with the comparisons beside the main one (α_CM over the periodic frames, α over
 * the isolated frames of a mixed set) and the engine's notes (e.g. how the kinds are weighted).
 */
export type ValidationReportJ = ValidationReport & { alsoOn?: KindErrorsJ[]; notes?: string[] };

/** What the window asks to train (the engine's TrainRequest without the tuning grid). */
export interface TrainRequestJ {
  tensorKey: string;
  kind: TensorKindJ;
  route: RouteJ;
  /**
   * The molecules' or clusters' polarisability (Å³) in the frames without a cell, when the set mixes them with
   * periodic frames of a cell kind (the CLI's --isolated-tensor). Not needed for kind alpha-mol.
   */
  isolatedKey?: string;
  settings?: Partial<ModelSettingsJ>;
  /** Train even when the values look unlike `kind` (the kind guard, core/learning/kind-check.ts). */
  trustKind?: boolean;
}

export interface ModelSummary {
  id: string;
  name: string;
  request: TrainRequestJ;
  /** Settings as used (defaults filled in). */
  settings: ModelSettingsJ | null;
  species: string[];
  trainedOn: { datasetId: string | null; datasetName: string; frames: number };
  /** Cross-validation on the training set (null when the model was loaded from a file without one). */
  report: ValidationReportJ | null;
  /** Errors on the frames held out of training (null when none were held out). */
  test: ValidationReportJ | null;
  /** The model's own notes and warnings (e.g. a regulariser at the edge of its range), as `polarweave train` prints them. */
  notes?: string[];
}

export interface ApplicabilityJ {
  maxDistance: number;
  threshold: number;
  atomsOutside: number;
  variance: number;
  outside: boolean;
  /** Graded per-frame domain score and fraction of atoms outside (core/learning/domain.ts). */
  score?: number;
  fractionOutside?: number;
  /** Why the frame or some atoms lie outside, worst first. */
  reasons?: DomainReason[];
}

/** A periodic frame's prediction. */
export interface PeriodicPredictionJ {
  isolated?: false;
  frame: number;
  volumeA3: number;
  eps: Mat3J;
  alphaCM: Mat3J;
  alphaC: Mat3J;
  /** Principal refractive indices √λ(ε), ascending. */
  refractive: number[];
  applicability: ApplicabilityJ;
  /** Calibrated model error bars (one standard deviation), null when the model has no calibration. */
  errorBars?: TensorErrorBars | null;
  /** The frame's reference tensor as ε, if the file has it. */
  reference: Mat3J | null;
}

/**
 * An isolated molecule's or cluster's prediction (a frame without a periodic cell): its polarisability in vacuum.
 * It has no volume, and ε, n and Δn are not defined for it.
 */
export interface IsolatedPredictionJ {
  isolated: true;
  frame: number;
  /** Polarisability in vacuum (Å³). */
  alphaMol: Mat3J;
  /** Calibrated one-standard-deviation error bar of tr alphaMol / 3 (Å³), null without calibration. */
  alphaIsoSd: number | null;
  applicability: ApplicabilityJ;
  /** The frame's reference polarisability (Å³), if the file has it. */
  reference: Mat3J | null;
}

export type FramePredictionJ = PeriodicPredictionJ | IsolatedPredictionJ;

export interface PredictionSummary {
  id: string;
  modelId: string;
  datasetId: string;
  datasetName: string;
  frames: FramePredictionJ[];
  framesOutside: number;
  /** Frames without a periodic cell (molecules, clusters): predicted as α, with no ε, n or Δn. */
  isolatedFrames?: number;
  /** Mean ε, principal n and Δn of the periodic frames with model error bars, beside the references (core/learning/set-summary.ts). */
  summary?: SetSummary;
  /** The columns of this prediction's CSV export, in order (the layout of `polarweave predict`). */
  csvColumns?: string[];
}

/** One frame's prediction with per-atom detail (for the ellipsoid view). */
export interface FrameDetail {
  frame: FrameView;
  prediction: FramePredictionJ;
  /** 9 per atom: local contribution (Å³ for route cm). */
  local: number[];
  /** Per atom: distance to the nearest training environment. */
  atomDistance: number[];
  /**
   * Per atom: domain score u (0 at the training median, 1 at the training's extreme in its worst check: feature
   * distance, neighbour distances, neighbour count, density scale), or empty when not known.
   */
  atomScore: number[];
  /** Per atom: outside the training data (u > 1; the rule that counts atomsOutside). */
  atomOutside: boolean[];
  route: RouteJ;
  /** Molecule index of each atom (covalent bonds), or null when molecules cannot be found. */
  molecules: number[] | null;
}

export type ComponentJ = 'xx' | 'yy' | 'zz' | 'xy' | 'xz' | 'yz';

/**
 * Statistics of a predicted trajectory: the numbers of `polarweave analyse` (core/trajectory/trajectory-summary.ts,
 * the same functions and block-averaging settings), so the window and the command line agree.
 */
export interface TrajectoryStats {
  predictionId: string;
  frames: number[];
  /** The frames' times (ps, from their time_fs property) when every frame carries one; the charts' x axis then. */
  timesPs?: number[] | null;
  /** Per frame: εxx, εyy, εzz, εxy, εxz, εyz. */
  components: Record<ComponentJ, number[]>;
  /** Running mean of each component after each frame. */
  runningComponents: Record<ComponentJ, number[]>;
  /** Per frame: the indices along the principal axes of the mean ε, to first order (their means are meanRefractive). */
  refractive: [number[], number[], number[]];
  /** Running mean of each of those series. */
  runningRefractive: [number[], number[], number[]];
  /** Running mean of the isotropic ε after each frame. */
  runningMeanIso: number[];
  /** Mean of each component over the frames, and its block-averaged standard error. */
  mean: Record<ComponentJ | 'iso', { value: number; error: number }>;
  /** Block sizes tried and the standard error of the isotropic mean at each (plateau = the reported error). */
  blocking: { blockSize: number; error: number }[];
  /** Principal refractive indices of the mean ε (ascending), with delta-method errors. */
  meanRefractive: number[];
  refractiveError: number[];
  /** n_3 − n_1 of the mean ε, with its delta-method error. */
  birefringence: number;
  /** Per frame: flagged outside the training data (core/learning/domain.ts). */
  outside?: boolean[];
  /** Mean over frames of the per-frame model error bar of ε_iso (null without calibration): not reduced by averaging. */
  modelErrorIso?: number | null;
  birefringenceError: number;
  /** Anisotropy √(3/2)‖ε̄ − tr ε̄/3‖ of the mean ε (the CSV's eps_aniso definition), with its error (NaN when ≈ 0). */
  anisotropy: { value: number; error: number | null };
  /** Pairs of principal values the trajectory does not resolve (1-based), e.g. [[1, 2]]. */
  unresolved: [number, number][];
  /** How the errors were found, in words. */
  method: string;
}

// ---------------------------------------------------------------------------------------------------------
// Jobs

export type JobKind = 'train' | 'validate' | 'predict' | 'select';
export type JobStateJ = 'queued' | 'running' | 'done' | 'failed' | 'cancelled';

export interface JobEvent {
  seq: number;
  /** ms since the job started. */
  t: number;
  type: 'progress' | 'log' | 'state';
  stage?: string;
  done?: number;
  total?: number;
  text?: string;
  state?: JobStateJ;
}

export type JobResult =
  | { kind: 'train'; model: ModelSummary }
  | { kind: 'validate'; report: ValidationReportJ }
  | { kind: 'predict'; prediction: PredictionSummary }
  | { kind: 'select'; selection: SelectionReport };

/** What the "choose frames for DFT" job found (app/select-frames.ts, the use case of `polarweave select`). */
export interface SelectionReport {
  datasetId: string;
  datasetName: string;
  by: 'diversity' | 'error' | 'domain';
  /** The report in lines, as `polarweave select` prints it. */
  lines: string[];
  /** In frame order; scores are model estimates (null when chosen by diversity). */
  chosen: { frame: number; timeFs: number | null; score: number | null; distance: number | null; order: number }[];
  /** The chosen frames opened as a new dataset (null when none was chosen). */
  dataset: DatasetSummary | null;
  /** The extended XYZ text `polarweave select` writes. */
  file: FileOut;
  /** The filled DFT inputs, one per chosen frame, when a template was given. */
  inputs: FileOut[];
}

export interface JobStatus {
  id: string;
  kind: JobKind;
  state: JobStateJ;
  progress: { stage: string; done: number; total: number } | null;
  /** Events after the `since` sequence number asked for. */
  events: JobEvent[];
  result: JobResult | null;
  error: ApiError | null;
}

export interface AppState {
  /** The engine's default settings (core/learning/model.ts), shown in the Model view. */
  defaultSettings: ModelSettingsJ;
  datasets: DatasetSummary[];
  models: ModelSummary[];
  /** csvColumns: the header of the prediction's CSV export (empty for a prediction opened from an older project). */
  /** isolatedFrames: frames without a periodic cell (no ε: the Trajectory view leaves such predictions out). */
  predictions: { id: string; modelId: string; datasetId: string; datasetName: string; frames: number; framesOutside: number; isolatedFrames: number; csvColumns: string[] }[];
  jobs: { id: string; kind: JobKind; state: JobStateJ }[];
}

/** What `collectReferences` found: the kept runs as a new dataset, the file to save, and the runs left out. */
export interface CollectReport {
  /** The collected frames, opened as a dataset; null when no run could be used. */
  dataset: DatasetSummary | null;
  /** The same extended XYZ text `polarweave collect` writes; null when no run could be used. */
  file: FileOut | null;
  kept: string[];
  left: { file: string; status: 'unfinished' | 'unconverged' | 'unsuitable' | 'settings' | 'error'; reason: string }[];
  /** The settings every kept run shares. */
  settings: { name: string; value: string }[];
  notCompared: string[];
  /** Property holding the tensor (alpha_c_A3 or eps_inf), its kind, and the program, when a run was kept. */
  tensorKey: string | null;
  tensorKind: TensorKindJ | null;
  program: string | null;
  /** Files passed over (inputs and coordinate files of the runs). */
  skipped: number;
  /** What to know about kept runs, "FILE: text" (e.g. a molecule in a periodic box: the box's ε, not α in vacuum). */
  notes: string[];
}

/** A file to hand to the browser (download) or to a save dialog. */
export interface FileOut {
  fileName: string;
  mime: string;
  text: string;
}

// ---------------------------------------------------------------------------------------------------------
// Payload schemas (validated on the receiving side)

const id = z.string().min(1).max(200);
const finite = z.number().finite();
/** Uploaded text or base64: no longer than a request the host reads (core/limits.ts). */
const MAX_TEXT = MAX_REQUEST_BYTES;

export const tensorKindSchema = z.enum(['eps', 'alpha-c', 'alpha-cm', 'alpha-mol']);
export const routeSchema = z.enum(['cm', 'direct']);

/** One zod field per row of the settings table (core/settings-table.ts): the same limits as the CLI and the engine. */
function settingField(spec: NumericSettingSpec): z.ZodNumber {
  const n = z.number().finite().min(spec.min).max(spec.max);
  return spec.integer ? n.int() : n;
}

export const modelSettingsSchema = z
  .object({
    ...(Object.fromEntries(NUMERIC_SETTINGS.filter((s) => s.key !== 'regularisation').map((s) => [s.key, settingField(s)])) as Record<NumericSettingKey, z.ZodNumber>),
    regularisation: settingField(settingSpec('regularisation')).nullable(),
    contributingSpecies: z.array(z.string().regex(SPECIES_LABEL)).max(MAX_SPECIES),
    /** The species split (core/settings-table.ts SPLIT_SETTING): "free-atom", ratios by species, or null. */
    speciesSplit: z.union([z.literal('free-atom'), z.record(z.string().regex(SPECIES_LABEL), z.number().finite().positive())]).nullable().optional(),
  })
  .strict();

export const trainRequestSchema = z
  .object({
    tensorKey: z.string().min(1).max(200),
    kind: tensorKindSchema,
    route: routeSchema,
    isolatedKey: z.string().min(1).max(200).optional(),
    settings: modelSettingsSchema.partial().optional(),
    trustKind: z.boolean().optional(),
  })
  .strict()
  .superRefine((r, ctx) => {
    // The rules between settings (e.g. the switch width at most the cutoff radius), as the engine checks them.
    const problem = settingsProblems({ ...DEFAULT_SETTINGS, ...(r.settings ?? {}) } as ModelSettings)[0];
    if (problem) ctx.addIssue({ code: 'custom', path: ['settings'], message: problem });
  });

const frameList = z.array(z.number().int().min(0)).max(10_000_000);

export const trainParamsSchema = z
  .object({
    datasetId: id,
    /** Frames to train on (default: all not held out). */
    frames: frameList.optional(),
    /** Frames held out as a test set (their errors reported separately). */
    testFrames: frameList.optional(),
    request: trainRequestSchema,
    folds: z.number().int().min(2).max(20).default(5),
    /** Training-set sizes for the learning curve (empty: none). */
    learningCurve: z.array(z.number().int().min(1)).max(20).default([]),
    name: z.string().max(200).optional(),
  })
  .strict();

export const validateParamsSchema = trainParamsSchema.omit({ name: true, testFrames: true }).extend({
  /** A model trained on these frames with this request and folds: its report takes the learning curve drawn here. */
  modelId: id.optional(),
});

export const predictParamsSchema = z
  .object({ modelId: id, datasetId: id, frames: frameList.optional() })
  .strict();

/** Choose frames for DFT: the most diverse, or with a model the largest error bars / domain scores. */
export const selectParamsSchema = z
  .object({
    datasetId: id,
    count: z.number().int().min(1).max(10000),
    stride: z.number().int().min(1).max(1_000_000).default(1),
    minGapFs: z.number().min(0).max(1e12).default(0),
    timeStepFs: z.number().positive().max(1e9).optional(),
    modelId: id.optional(),
    by: z.enum(['error', 'domain']).default('error'),
    /** A dataset of frames already computed (e.g. the training set). */
    knownDatasetId: id.optional(),
    duplicate: z.number().min(0).max(10).optional(),
    /** A DFT input with placeholders (docs/file-formats.md), as text. */
    template: z.object({ name: z.string().min(1).max(500), text: z.string().max(1 << 20) }).strict().optional(),
  })
  .strict();

export const startJobSchema = z.discriminatedUnion('kind', [
  z.object({ kind: z.literal('train'), params: trainParamsSchema }).strict(),
  z.object({ kind: z.literal('validate'), params: validateParamsSchema }).strict(),
  z.object({ kind: z.literal('predict'), params: predictParamsSchema }).strict(),
  z.object({ kind: z.literal('select'), params: selectParamsSchema }).strict(),
]);

export const openStructuresSchema = z.union([
  z.object({ name: z.string().min(1).max(500), text: z.string().max(MAX_TEXT) }).strict(),
  z.object({ name: z.string().min(1).max(500), base64: z.string().max(MAX_TEXT) }).strict(),
  z.object({ path: z.string().min(1).max(4096) }).strict(),
]);

/** The CSV holds ε, α_CM and α_c of every predicted frame (the same columns as `polarweave predict`). */
export const exportCsvSchema = z.object({ predictionId: id }).strict();

/** Outputs of DFT runs with their inputs and coordinate files, as texts; companions are found by file name. */
export const collectReferencesSchema = z
  .object({ files: z.array(z.object({ name: z.string().min(1).max(500), text: z.string().max(MAX_TEXT) }).strict()).min(1).max(2000) })
  .strict();

export const apiSchemas = {
  loadDemo: z.object({}).strict(),
  getState: z.object({}).strict(),
  openStructures: openStructuresSchema,
  collectReferences: collectReferencesSchema,
  closeDataset: z.object({ datasetId: id }).strict(),
  getFrame: z.object({ datasetId: id, index: z.number().int().min(0) }).strict(),
  startJob: startJobSchema,
  jobStatus: z.object({ jobId: id, since: z.number().int().min(0).default(0) }).strict(),
  cancelJob: z.object({ jobId: id }).strict(),
  getModel: z.object({ modelId: id }).strict(),
  getPrediction: z.object({ predictionId: id }).strict(),
  getFrameDetail: z.object({ predictionId: id, index: z.number().int().min(0) }).strict(),
  trajectoryStats: z.object({ predictionId: id }).strict(),
  exportCsv: exportCsvSchema,
  exportModel: z.object({ modelId: id }).strict(),
  importModel: z.object({ name: z.string().min(1).max(500), text: z.string().max(MAX_TEXT) }).strict(),
  saveProject: z.object({ ui: z.record(z.string(), z.unknown()).optional() }).strict(),
  openProject: z.object({ name: z.string().min(1).max(500), text: z.string().max(MAX_TEXT) }).strict(),
} as const;

export type ApiMethod = keyof typeof apiSchemas;
/** What a caller sends (defaults may be left out). */
export type ApiInput<M extends ApiMethod> = z.input<(typeof apiSchemas)[M]>;
/** What the service receives after validation (defaults filled in). */
export type ApiParams<M extends ApiMethod> = z.output<(typeof apiSchemas)[M]>;

export interface ApiOutputs {
  loadDemo: AppState;
  getState: AppState;
  openStructures: DatasetSummary;
  collectReferences: CollectReport;
  closeDataset: AppState;
  getFrame: FrameView;
  startJob: { jobId: string };
  jobStatus: JobStatus;
  cancelJob: { jobId: string; state: JobStateJ };
  getModel: ModelSummary;
  getPrediction: PredictionSummary;
  getFrameDetail: FrameDetail;
  trajectoryStats: TrajectoryStats;
  exportCsv: FileOut;
  exportModel: FileOut;
  importModel: ModelSummary;
  saveProject: FileOut;
  openProject: AppState & { ui: Record<string, unknown> | null };
}

export type ApiOutput<M extends ApiMethod> = ApiOutputs[M];

/** The service behind the contract: one async function per method. */
export type ApiService = { [M in ApiMethod]: (params: ApiParams<M>) => Promise<ApiOutput<M>> };

export const apiMethods = Object.keys(apiSchemas) as ApiMethod[];

export function isApiMethod(name: string): name is ApiMethod {
  return Object.prototype.hasOwnProperty.call(apiSchemas, name);
}

/**
 * Validates a payload for `method`; throws ApiValidationError with a plain message naming the first bad
 * field. Used by the IPC handler and the browser host (never trust the other side of a boundary).
 */
export function parseParams<M extends ApiMethod>(method: M, payload: unknown): ApiParams<M> {
  const r = apiSchemas[method].safeParse(payload ?? {});
  if (!r.success) {
    const issue = r.error.issues[0];
    const at = issue?.path.length ? issue.path.join('.') : '(payload)';
    throw new ApiValidationError(`bad request to ${method}: ${at}: ${issue?.message ?? 'invalid'}`);
  }
  return r.data as ApiParams<M>;
}

export class ApiValidationError extends Error {
  override name = 'ApiValidationError';
}

/** Turns any thrown value into the plain ApiError the window shows. */
export function toApiError(e: unknown): ApiError {
  if (e && typeof e === 'object') {
    const o = e as { name?: unknown; message?: unknown; where?: unknown; hint?: unknown };
    const out: ApiError = { name: typeof o.name === 'string' ? o.name : 'Error', message: typeof o.message === 'string' ? o.message : String(e) };
    if (o.where && typeof o.where === 'object') {
      const w = o.where as { file?: unknown; line?: unknown; frame?: unknown };
      const where: ApiError['where'] = {};
      if (typeof w.file === 'string') where.file = w.file;
      if (typeof w.line === 'number') where.line = w.line;
      if (typeof w.frame === 'number') where.frame = w.frame;
      if (Object.keys(where).length) out.where = where;
    }
    if (typeof o.hint === 'string') out.hint = o.hint;
    return out;
  }
  return { name: 'Error', message: String(e) };
}
