// The service behind api/contract.ts: holds the open datasets, trained models and predictions of one session, runs
// long work (train, validate, predict) through the job runner, and answers the window's questions. The
// Electron shell and the browser host both wrap one instance; neither adds behaviour of its own.
import { setSummary } from '../core/learning/set-summary.ts';
import { readdir } from 'node:fs/promises';
import { basename, join } from 'node:path';
import type {
  ApiOutput,
  ApiParams,
  ApiService,
  AppState,
  CollectReport,
  DatasetSummary,
  FileOut,
  FramePredictionJ,
  FrameView,
  JobEvent,
  JobKind,
  JobResult,
  JobStatus,
  ModelSummary,
  PredictionSummary,
  TrajectoryStats,
  TrainRequestJ,
  ValidationReportJ,
} from '../api/contract.ts';
import type { SelectionReport } from '../api/contract.ts';
import { toApiError, ApiValidationError } from '../api/contract.ts';
import type { Frame } from '../core/geometry/frame.ts';
import { DEFAULT_SETTINGS, type Model } from '../core/learning/model.ts';
import { InputError, ModelError } from '../core/errors.ts';
import { findMolecules } from '../core/geometry/molecules.ts';
import { atomOutside } from '../core/learning/domain.ts';
import type { JobHandle, JobRunner } from '../jobs/runner.ts';
import type { PredictTaskInput, PredictTaskOutput, TrainTaskInput, TrainTaskOutput, ValidateTaskInput } from './task-types.ts';
import type { SelectTaskInput, SelectTaskOutput } from './select-task.ts';
import { summariseDataset } from './dataset-summary.ts';
import { PathAccess } from './path-access.ts';
import { frameView, predictionFromJ, predictionJ, trajectoryStatsJ } from './frame-json.ts';
import type { FramePrediction, TensorPrediction } from '../core/learning/model-types.ts';
import { frameTarget, isIsolated } from '../core/learning/targets.ts';
import { predictionsCsv, predictionsCsvColumns } from './export-csv.ts';
import { sharedModel } from './predict/shared-model.ts';
import { PROJECT_FORMAT, PROJECT_VERSION, parseProject, type ProjectFile, type ProjectDataset } from './project-file.ts';
import { collectedFrames, collectTexts } from './collect-references.ts';
import { formatExtxyzFrame } from '../io/extxyz.ts';
import { tensorKey } from '../io/tensor-keys.ts';

/** How a model file is written and read (io/model-file.ts), injected so the service stays testable. */
export interface ModelCodec {
  serialise(model: unknown): string;
  parse(text: string, fileName: string): unknown;
}

/** Structure readers by file kind (io/read-structures.ts and friends). */
export interface StructureReaders {
  /** Frames from file text; `fileName` picks the reader (the registry's kinds) and names errors. */
  parseText(text: string, fileName: string): Frame[];
  /** An uploaded file (text, or base64 bytes that may be gzip): its name without .gz, its text and frames. */
  upload(name: string, payload: { text: string } | { base64: string }): { name: string; text: string; frames: Frame[] };
  /** Frames from a file on disk (streaming, gzip allowed). */
  readPath(path: string): Promise<Frame[]>;
  /** Whether the registry knows the kind of a file by its name. */
  isStructureFile(name: string): boolean;
  /** A file's name without its kind's extension (and .gz). */
  stem(name: string): string;
  /** A file's name without .gz. */
  plainName(name: string): string;
}

export interface ServiceOptions {
  runner: JobRunner;
  codec: ModelCodec;
  readers: StructureReaders;
  /** Folder with the demo's *.extxyz.gz files. */
  demoDir: string;
  /** Files and folders the service may read by path (default: none; the shell grants what the user chooses). */
  paths?: PathAccess;
}

type DatasetOrigin = ProjectDataset['origin'];

interface DatasetRecord {
  summary: DatasetSummary;
  frames: Frame[];
  origin: DatasetOrigin;
}

interface ModelRecord {
  summary: ModelSummary;
  model: unknown;
}

interface PredictionRecord {
  /** The JSON the window gets (made once, at the boundary). */
  summary: PredictionSummary;
  route: 'cm' | 'direct';
  /** The predictions as the use case gave them, typed (periodic or isolated); frame k of the dataset is frameIndices[k]. */
  typed: TensorPrediction[];
  frameIndices: number[];
}

interface JobRecord {
  id: string;
  kind: JobKind;
  handle: JobHandle<unknown>;
  started: number;
  events: JobEvent[];
  result: JobResult | null;
  error: ReturnType<typeof toApiError> | null;
  settled: boolean;
}

const MAX_EVENTS_PER_POLL = 500;

type SelectParams = Extract<ApiParams<'startJob'>, { kind: 'select' }>['params'];
type JobHooks = { onProgress: (p: { stage: string; done: number; total: number }) => void; onLog: (text: string) => void };

export class AppService implements ApiService {
  private readonly datasets = new Map<string, DatasetRecord>();
  private readonly models = new Map<string, ModelRecord>();
  private readonly predictions = new Map<string, PredictionRecord>();
  private readonly jobs = new Map<string, JobRecord>();
  private counter = 0;

  /** What may be read by path; the shell grants the files the user chooses. */
  readonly paths: PathAccess;

  constructor(private readonly options: ServiceOptions) {
    this.paths = options.paths ?? new PathAccess();
  }

  private nextId(prefix: string): string {
    return `${prefix}${++this.counter}`;
  }

  private dataset(id: string): DatasetRecord {
    const d = this.datasets.get(id);
    if (!d) throw new ApiValidationError(`no open dataset "${id}" (it may have been closed)`);
    return d;
  }

  private modelRecord(id: string): ModelRecord {
    const m = this.models.get(id);
    if (!m) throw new ApiValidationError(`no model "${id}" in this session`);
    return m;
  }

  private predictionRecord(id: string): PredictionRecord {
    const p = this.predictions.get(id);
    if (!p) throw new ApiValidationError(`no prediction "${id}" in this session`);
    return p;
  }

  private addDataset(name: string, frames: Frame[], origin: DatasetOrigin, kind: DatasetSummary['origin']): DatasetSummary {
    if (frames.length === 0) throw new InputError('the file holds no frames', { file: name }, 'check that it is an extended XYZ or CIF file');
    const id = this.nextId('d');
    const summary = summariseDataset(id, name, frames, kind);
    this.datasets.set(id, { summary, frames, origin });
    return summary;
  }

  // ------------------------------------------------------------------------------------------------------
  // Data

  async openStructures(params: ApiParams<'openStructures'>): Promise<DatasetSummary> {
    if ('path' in params) {
      const frames = await this.options.readers.readPath(await this.paths.check(params.path));
      return this.addDataset(basename(params.path), frames, { kind: 'path', path: params.path }, 'file');
    }
    const { name, text, frames } = this.options.readers.upload(params.name, params);
    return this.addDataset(params.name, frames, { kind: 'embedded', name, text }, 'upload');
  }

  /** The window's "collect DFT runs": the same use case as `polarweave collect`, on files handed over as texts. */
  async collectReferences(params: ApiParams<'collectReferences'>): Promise<CollectReport> {
    const result = collectTexts(params.files);
    const first = result.runs[0];
    const report: CollectReport = {
      dataset: null,
      file: null,
      kept: result.runs.map((r) => r.file),
      left: result.left,
      settings: result.settings,
      notCompared: result.notCompared,
      tensorKey: first ? tensorKey(first.kind) : null,
      tensorKind: first ? first.kind : null,
      program: first ? first.program : null,
      skipped: result.skipped,
      notes: result.notes.map((n) => `${n.file}: ${n.text}`),
    };
    if (!first) return report;
    const frames = collectedFrames(result);
    const text = frames.map((f) => formatExtxyzFrame(f)).join('');
    const name = 'dft-references.extxyz';
    report.dataset = this.addDataset(name, frames, { kind: 'embedded', name, text }, 'upload');
    report.file = { fileName: name, mime: 'chemical/x-extxyz', text };
    return report;
  }

  async loadDemo(): Promise<AppState> {
    const dir = this.options.demoDir;
    const files = (await readdir(dir).catch(() => [] as string[])).filter((f) => this.options.readers.isStructureFile(f)).sort();
    if (files.length === 0) {
      throw new InputError('the demo data is missing', { file: dir }, 'reinstall the app, or run `npm run demo:generate` in a source checkout');
    }
    for (const f of files) {
      if ([...this.datasets.values()].some((d) => d.origin.kind === 'demo' && d.origin.file === f)) continue;
      const frames = await this.options.readers.readPath(join(dir, f));
      this.addDataset(this.options.readers.plainName(f), frames, { kind: 'demo', file: f }, 'demo');
    }
    return this.getState();
  }

  async closeDataset(params: ApiParams<'closeDataset'>): Promise<AppState> {
    this.dataset(params.datasetId);
    this.datasets.delete(params.datasetId);
    return this.getState();
  }

  async getFrame(params: ApiParams<'getFrame'>): Promise<FrameView> {
    const d = this.dataset(params.datasetId);
    const frame = d.frames[params.index];
    if (!frame) throw new ApiValidationError(`${d.summary.name} has ${d.frames.length} frames; there is no frame ${params.index}`);
    return frameView(params.datasetId, params.index, frame);
  }

  async getState(): Promise<AppState> {
    return {
      defaultSettings: { ...DEFAULT_SETTINGS, contributingSpecies: [...DEFAULT_SETTINGS.contributingSpecies] },
      datasets: [...this.datasets.values()].map((d) => d.summary),
      models: [...this.models.values()].map((m) => m.summary),
      predictions: [...this.predictions.values()].map((p) => ({
        id: p.summary.id,
        modelId: p.summary.modelId,
        datasetId: p.summary.datasetId,
        datasetName: p.summary.datasetName,
        frames: p.summary.frames.length,
        framesOutside: p.summary.framesOutside,
        isolatedFrames: p.summary.isolatedFrames ?? 0,
        csvColumns: p.summary.csvColumns ?? [],
      })),
      jobs: [...this.jobs.values()].map((j) => ({ id: j.id, kind: j.kind, state: j.handle.state() })),
    };
  }

  // ------------------------------------------------------------------------------------------------------
  // Jobs

  private selectFrames(d: DatasetRecord, indices: number[] | undefined, exclude: number[] = []): number[] {
    const skip = new Set(exclude);
    const all = indices ?? d.frames.map((_, i) => i);
    for (const i of all) {
      if (i >= d.frames.length) throw new ApiValidationError(`${d.summary.name} has ${d.frames.length} frames; there is no frame ${i}`);
    }
    return all.filter((i) => !skip.has(i));
  }

  /**
   * Every chosen frame carries the tensor it is trained on: `tensorKey` on periodic frames (and on every frame of
   * kind alpha-mol), the clusters' `isolatedKey` on frames without a cell in a mixed set (core's frameTarget).
   */
  private checkTensorKey(d: DatasetRecord, request: TrainRequestJ, indices: number[]): void {
    const isolated = indices.filter((i) => isIsolated(d.frames[i]));
    const periodic = indices.length - isolated.length;
    const where = (i: number) => ({ file: d.frames[i].source?.file ?? d.summary.name, line: d.frames[i].source?.line, frame: i });
    if (request.kind === 'alpha-mol' && periodic > 0) {
      const i = indices.find((k) => !isIsolated(d.frames[k])) as number;
      throw new InputError(`${periodic} of the chosen frames have a periodic cell, but the values are set to be an isolated molecule's or cluster's polarisability`, where(i),
        'for a set mixing periodic frames and clusters, choose the periodic frames\' kind (ε∞, α or α_CM) and name the clusters\' polarisability under "Clusters\' polarisability"');
    }
    if (request.kind !== 'alpha-mol' && isolated.length > 0 && request.isolatedKey === undefined) {
      throw new InputError(`${isolated.length} of the chosen frames have no periodic cell (molecules or clusters), so "${request.tensorKey}" cannot be their ${request.kind === 'eps' ? 'ε' : 'cell polarisability'}`, where(isolated[0]),
        periodic > 0 ? 'name the clusters\' polarisability (Å³) under "Clusters\' polarisability"' : 'choose "the polarisability of an isolated molecule or cluster" as what the values are');
    }
    for (const i of indices) {
      const key = frameTarget(d.frames[i], request, i).key;
      const v = d.frames[i].info[key];
      if (!Array.isArray(v) || (v.length !== 9 && v.length !== 6)) {
        const src = d.frames[i].source;
        throw new InputError(
          `frame has no tensor "${key}" (9 or 6 numbers)`,
          { file: src?.file ?? d.summary.name, line: src?.line, frame: i },
          `choose a tensor key the file has: ${d.summary.tensorKeys.map((t) => t.key).join(', ') || 'none found'}`,
        );
      }
    }
  }

  async startJob(params: ApiParams<'startJob'>): Promise<{ jobId: string }> {
    const id = this.nextId('job');
    const record: Omit<JobRecord, 'handle'> & { handle?: JobHandle<unknown> } = {
      id,
      kind: params.kind,
      started: Date.now(),
      events: [],
      result: null,
      error: null,
      settled: false,
    };
    const push = (e: Omit<JobEvent, 'seq' | 't'>) => record.events.push({ seq: record.events.length + 1, t: Date.now() - record.started, ...e });
    const hooks = {
      onProgress: (p: { stage: string; done: number; total: number }) => push({ type: 'progress', ...p }),
      onLog: (text: string) => push({ type: 'log', text }),
    };
    let finish: (value: unknown) => JobResult;
    if (params.kind === 'train' || params.kind === 'validate') {
      const p = params.params;
      const d = this.dataset(p.datasetId);
      const test = params.kind === 'train' && params.params.testFrames ? this.selectFrames(d, params.params.testFrames) : [];
      const train = this.selectFrames(d, p.frames, test);
      if (train.length < p.folds) throw new ApiValidationError(`${train.length} training frames cannot be split into ${p.folds} folds; use fewer folds or more frames`);
      this.checkTensorKey(d, p.request, [...train, ...test]);
      const base = { request: p.request, folds: p.folds, learningCurve: p.learningCurve, frameIndices: train, frames: train.map((i) => d.frames[i]) };
      if (params.kind === 'train') {
        const input: TrainTaskInput = { ...base, testIndices: test, testFrames: test.map((i) => d.frames[i]) };
        record.handle = this.options.runner.start('train', input, hooks);
        const name = params.params.name;
        finish = (value) => {
          const out = value as TrainTaskOutput;
          const summary = this.registerModel(out.model, {
            name: name ?? `${p.request.route === 'cm' ? 'CM' : 'direct'} model of ${d.summary.name}`,
            request: p.request,
            trainedOn: { datasetId: d.summary.id, datasetName: d.summary.name, frames: train.length },
            report: out.report,
            test: out.test,
          });
          return { kind: 'train', model: summary };
        };
      } else {
        const input: ValidateTaskInput = base;
        const owner = params.kind === 'validate' && params.params.modelId ? this.modelRecord(params.params.modelId) : null;
        if (owner && (owner.summary.trainedOn.datasetId !== d.summary.id || owner.summary.report?.folds !== p.folds)) {
          throw new ApiValidationError(`model ${owner.summary.name} was not trained on ${d.summary.name} with ${p.folds} folds; its learning curve must come from its own frames and folds`);
        }
        record.handle = this.options.runner.start('validate', input, hooks);
        finish = (value) => {
          const report = value as ValidationReportJ;
          // a curve drawn after training (the window's Quick look trains without one): the model's report takes it
          if (owner?.summary.report) owner.summary.report = { ...owner.summary.report, learningCurve: report.learningCurve, curveTrend: report.curveTrend };
          return { kind: 'validate', report };
        };
      }
    } else if (params.kind === 'select') {
      const started = this.startSelect(params.params, hooks);
      record.handle = started.handle;
      finish = started.finish;
    } else {
      const p = params.params;
      const m = this.modelRecord(p.modelId);
      const d = this.dataset(p.datasetId);
      const indices = this.selectFrames(d, p.frames);
      const input: PredictTaskInput = {
        // shared memory: the worker reads the session's model, no copy per job (as the CLI's predict workers do)
        model: sharedModel(m.model as Model),
        frames: indices.map((i) => d.frames[i]),
        frameIndices: indices,
        reference: { tensorKey: m.summary.request.tensorKey, kind: m.summary.request.kind, isolatedKey: m.summary.request.isolatedKey },
      };
      record.handle = this.options.runner.start('predict', input, hooks);
      finish = (value) => {
        const out = value as PredictTaskOutput;
        const pid = this.nextId('p');
        const frames: FramePredictionJ[] = out.predictions.map((fp, k) => predictionJ(fp, out.frameIndices[k], out.reference[k]));
        const summary: PredictionSummary = {
          id: pid,
          modelId: m.summary.id,
          datasetId: d.summary.id,
          datasetName: d.summary.name,
          frames,
          framesOutside: frames.filter((f) => f.applicability.outside).length,
          isolatedFrames: frames.filter((f) => f.isolated).length,
          // the mean ε, n and Δn are of the periodic frames: a lone molecule or cluster has none
          summary: periodicSetSummary(frames),
          csvColumns: predictionsCsvColumns(out.frameIndices, d.frames, m.model as Model),
        };
        this.predictions.set(pid, { summary, route: m.summary.request.route, typed: out.predictions, frameIndices: out.frameIndices });
        return { kind: 'predict', prediction: summary };
      };
    }
    const job = record as JobRecord;
    this.jobs.set(id, job);
    push({ type: 'state', state: 'running' });
    job.handle.result.then(
      (value) => {
        try {
          job.result = finish(value);
          push({ type: 'state', state: 'done' });
        } catch (e) {
          job.error = toApiError(e);
          push({ type: 'state', state: 'failed' });
        }
        job.settled = true;
      },
      (e) => {
        job.error = toApiError(e);
        push({ type: 'state', state: job.handle.state() === 'cancelled' ? 'cancelled' : 'failed' });
        job.settled = true;
      },
    );
    return { jobId: id };
  }

  /** "Choose frames for DFT": the select use case in a worker (select-task.ts), as `polarweave select` runs it. */
  private startSelect(p: SelectParams, hooks: JobHooks): { handle: JobHandle<unknown>; finish: (value: unknown) => JobResult } {
    const d = this.dataset(p.datasetId);
    const m = p.modelId ? this.modelRecord(p.modelId) : null;
    const known = p.knownDatasetId ? this.dataset(p.knownDatasetId).frames : [];
    const input: SelectTaskInput = {
      name: d.summary.name,
      frames: d.frames,
      request: { count: p.count, stride: p.stride, minGapFs: p.minGapFs, timeStepFs: p.timeStepFs, by: p.by, duplicate: p.duplicate },
      model: m ? m.model : null,
      modelName: m ? m.summary.name : '',
      known,
      template: p.template ?? null,
    };
    const handle = this.options.runner.start('select', input, hooks);
    const finish = (value: unknown): JobResult => {
      const out = value as SelectTaskOutput;
      const name = `${this.options.readers.stem(d.summary.name)}-chosen.extxyz`;
      const frames = out.text ? this.options.readers.parseText(out.text, name) : [];
      const dataset = frames.length ? this.addDataset(name, frames, { kind: 'embedded', name, text: out.text }, 'upload') : null;
      const selection: SelectionReport = {
        datasetId: d.summary.id,
        datasetName: d.summary.name,
        by: out.result.by,
        lines: out.lines,
        chosen: out.result.chosen.map((c) => ({ ...c })),
        dataset,
        file: { fileName: name, mime: 'chemical/x-extxyz', text: out.text },
        inputs: out.inputs.map((i) => ({ fileName: i.name, mime: 'text/plain', text: i.text })),
      };
      return { kind: 'select', selection };
    };
    return { handle, finish };
  }

  async jobStatus(params: ApiParams<'jobStatus'>): Promise<JobStatus> {
    const j = this.jobs.get(params.jobId);
    if (!j) throw new ApiValidationError(`no job "${params.jobId}"`);
    // The handle may say 'done' a moment before the result is registered; report 'running' until then.
    const raw = j.handle.state();
    const state = (raw === 'done' || raw === 'failed' || raw === 'cancelled') && !j.settled ? 'running' : raw === 'done' && j.error ? 'failed' : raw;
    return {
      id: j.id,
      kind: j.kind,
      state,
      progress: j.handle.progress(),
      events: j.events.filter((e) => e.seq > params.since).slice(0, MAX_EVENTS_PER_POLL),
      result: j.settled ? j.result : null,
      error: j.settled ? j.error : null,
    };
  }

  async cancelJob(params: ApiParams<'cancelJob'>): Promise<ApiOutput<'cancelJob'>> {
    const j = this.jobs.get(params.jobId);
    if (!j) throw new ApiValidationError(`no job "${params.jobId}"`);
    j.handle.cancel();
    return { jobId: j.id, state: j.handle.state() };
  }

  /** Waits for a job to settle (tests and scripts). */
  async waitForJob(jobId: string): Promise<JobStatus> {
    const j = this.jobs.get(jobId);
    if (!j) throw new ApiValidationError(`no job "${jobId}"`);
    await j.handle.result.catch(() => undefined);
    while (!j.settled) await new Promise((r) => setTimeout(r, 5));
    return this.jobStatus({ jobId, since: 0 });
  }

  // ------------------------------------------------------------------------------------------------------
  // Models and predictions

  private registerModel(
    model: unknown,
    info: Pick<ModelSummary, 'name' | 'request' | 'trainedOn' | 'report' | 'test'>,
  ): ModelSummary {
    const id = this.nextId('m');
    const m = model as { settings?: ModelSummary['settings']; species?: string[]; notes?: unknown } | null;
    const summary: ModelSummary = {
      id,
      ...info,
      settings: m?.settings && typeof m.settings === 'object' ? { ...m.settings } : null,
      species: Array.isArray(m?.species) ? [...m.species] : [],
      notes: Array.isArray(m?.notes) ? m.notes.filter((n): n is string => typeof n === 'string') : [],
    };
    this.models.set(id, { summary, model });
    return summary;
  }

  async getModel(params: ApiParams<'getModel'>): Promise<ModelSummary> {
    return this.modelRecord(params.modelId).summary;
  }

  async getPrediction(params: ApiParams<'getPrediction'>): Promise<PredictionSummary> {
    return this.predictionRecord(params.predictionId).summary;
  }

  async getFrameDetail(params: ApiParams<'getFrameDetail'>): Promise<ApiOutput<'getFrameDetail'>> {
    const p = this.predictionRecord(params.predictionId);
    const k = p.summary.frames.findIndex((f) => f.frame === params.index);
    if (k < 0) throw new ApiValidationError(`prediction ${p.summary.id} has no frame ${params.index}`);
    const d = this.dataset(p.summary.datasetId);
    let molecules: number[] | null = null;
    try {
      molecules = Array.from(findMolecules(d.frames[params.index]).molecule);
    } catch {
      molecules = null; // an element without a covalent radius: per-atom view only
    }
    return {
      molecules,
      frame: frameView(d.summary.id, params.index, d.frames[params.index]),
      prediction: p.summary.frames[k],
      local: Array.from(p.typed[k].local),
      atomDistance: Array.from(p.typed[k].applicability.atomDistance),
      atomScore: Array.from(p.typed[k].applicability.atomScore),
      // projects saved before per-atom scores were kept: the feature distance over its threshold is that score's first check
      atomOutside: p.typed[k].applicability.atomScore.length
        ? Array.from(p.typed[k].applicability.atomScore, atomOutside)
        : Array.from(p.typed[k].applicability.atomDistance, (d) => atomOutside(d / p.typed[k].applicability.threshold)),
      route: p.route,
    };
  }

  async trajectoryStats(params: ApiParams<'trajectoryStats'>): Promise<TrajectoryStats> {
    // the charts' x axis: the frames' time (ps) when every frame carries one (time_fs), else the frame number
    const p = this.predictionRecord(params.predictionId);
    if (p.typed.length < 2) throw new ApiValidationError('a trajectory needs at least two predicted frames');
    const isolated = p.typed.filter((t) => t.isolated).length;
    if (isolated > 0) {
      throw new ApiValidationError(`${isolated} of the ${p.typed.length} predicted frames have no periodic cell (molecules or clusters): trajectory statistics are of ε, n and Δn, which a lone molecule or cluster does not have; their polarisabilities are in Transfer and Structure, and in the CSV export (\`polarweave analyse\` reads a table of isolated frames on its α)`);
    }
    return {
      ...trajectoryStatsJ(p.summary.id, p.frameIndices, p.typed as FramePrediction[]),
      timesPs: framesTimePs(p.frameIndices.map((i) => this.dataset(p.summary.datasetId).frames[i])),
      outside: p.typed.map((f) => f.applicability.outside),
      modelErrorIso: p.summary.summary?.errorBars?.epsIso ?? null,
    };
  }

  // ------------------------------------------------------------------------------------------------------
  // Export and projects

  async exportCsv(params: ApiParams<'exportCsv'>): Promise<FileOut> {
    const p = this.predictionRecord(params.predictionId);
    const d = this.dataset(p.summary.datasetId);
    const m = this.modelRecord(p.summary.modelId);
    const text = predictionsCsv(p.typed, p.frameIndices, d.frames, m.model as Model, m.summary.name);
    const stem = this.options.readers.stem(d.summary.name);
    return { fileName: `${stem}-predicted.csv`, mime: 'text/csv', text };
  }

  async exportModel(params: ApiParams<'exportModel'>): Promise<FileOut> {
    const m = this.modelRecord(params.modelId);
    const stem = m.summary.name.replace(/[^A-Za-z0-9._-]+/g, '-').replace(/^-+|-+$/g, '') || 'model';
    return { fileName: `${stem}.pwmodel.json`, mime: 'application/json', text: this.options.codec.serialise(m.model) };
  }

  async importModel(params: ApiParams<'importModel'>): Promise<ModelSummary> {
    const model = this.options.codec.parse(params.text, params.name);
    const target = (model as { target?: { key?: unknown; kind?: unknown; route?: unknown; shape?: unknown } } | null)?.target;
    if (!target || typeof target.key !== 'string' || (target.route !== 'cm' && target.route !== 'direct')) {
      throw new ModelError(`${params.name}: the model file does not say what it was trained on (no target)`);
    }
    if (target.shape !== undefined && target.shape !== 'tensor') {
      throw new ModelError(`${params.name}: this model predicts a ${String(target.shape)}, not a cell tensor; use it with \`polarweave predict\``);
    }
    const kind = target.kind === 'eps' || target.kind === 'alpha-c' || target.kind === 'alpha-cm' || target.kind === 'alpha-mol' ? target.kind : 'eps';
    return this.registerModel(model, {
      name: params.name.replace(/\.pwmodel\.json$|\.json$/i, ''),
      request: { tensorKey: target.key, kind, route: target.route },
      trainedOn: { datasetId: null, datasetName: params.name, frames: 0 },
      report: null,
      test: null,
    });
  }

  async saveProject(params: ApiParams<'saveProject'>): Promise<FileOut> {
    const project: ProjectFile = {
      format: PROJECT_FORMAT,
      version: PROJECT_VERSION,
      savedAt: new Date().toISOString(),
      datasets: [...this.datasets.values()].map((d) => ({ id: d.summary.id, name: d.summary.name, origin: d.origin })),
      models: [...this.models.values()].map((m) => ({ summary: m.summary, model: this.options.codec.serialise(m.model) })),
      predictions: [...this.predictions.values()].map((p) => ({
        summary: p.summary,
        route: p.route,
        local: p.typed.map((t) => Array.from(t.local)),
        atomDistance: p.typed.map((t) => Array.from(t.applicability.atomDistance)),
        atomScore: p.typed.map((t) => Array.from(t.applicability.atomScore)),
      })),
      ui: params.ui ?? {},
    };
    return { fileName: 'polarweave-project.pwproj.json', mime: 'application/json', text: JSON.stringify(project) };
  }

  /**
   * `trusted`: the project file was chosen by the user in a dialog (the shell), so the files it names are
   * granted; from the window (an API call) they must have been opened in this session, like any path.
   */
  async openProject(params: ApiParams<'openProject'>, trusted = false): Promise<ApiOutput<'openProject'>> {
    const project = parseProject(params.text, params.name);
    if (trusted) for (const ds of project.datasets) if (ds.origin.kind === 'path') this.paths.grantFile(ds.origin.path);
    // Read everything first; replace the session only when the whole project loaded.
    const datasets = new Map<string, DatasetRecord>();
    const idMap = new Map<string, string>();
    for (const ds of project.datasets) {
      let frames: Frame[];
      if (ds.origin.kind === 'demo') frames = await this.options.readers.readPath(join(this.options.demoDir, ds.origin.file));
      else if (ds.origin.kind === 'path') frames = await this.options.readers.readPath(await this.paths.check(ds.origin.path));
      else frames = this.options.readers.parseText(ds.origin.text, ds.origin.name);
      const id = this.nextId('d');
      idMap.set(ds.id, id);
      datasets.set(id, { summary: summariseDataset(id, ds.name, frames, ds.origin.kind === 'demo' ? 'demo' : 'project'), frames, origin: ds.origin });
    }
    const models = new Map<string, ModelRecord>();
    const modelIds = new Map<string, string>();
    for (const m of project.models) {
      const model = this.options.codec.parse(m.model, `${params.name} (model ${m.summary.name})`);
      const id = this.nextId('m');
      modelIds.set(m.summary.id, id);
      const trainedOn = { ...m.summary.trainedOn, datasetId: m.summary.trainedOn.datasetId ? idMap.get(m.summary.trainedOn.datasetId) ?? null : null };
      models.set(id, { summary: { ...m.summary, id, trainedOn }, model });
    }
    const predictions = new Map<string, PredictionRecord>();
    for (const p of project.predictions) {
      const modelId = modelIds.get(p.summary.modelId);
      const datasetId = idMap.get(p.summary.datasetId);
      if (!modelId || !datasetId) continue; // its model or data did not come along
      const id = this.nextId('p');
      const typed = p.summary.frames.map((f, k) => predictionFromJ(f, p.local[k], p.atomDistance[k], p.atomScore?.[k]));
      predictions.set(id, { summary: { ...p.summary, id, modelId, datasetId }, route: p.route, typed, frameIndices: p.summary.frames.map((f) => f.frame) });
    }
    this.datasets.clear();
    this.models.clear();
    this.predictions.clear();
    for (const [k, v] of datasets) this.datasets.set(k, v);
    for (const [k, v] of models) this.models.set(k, v);
    for (const [k, v] of predictions) this.predictions.set(k, v);
    return { ...(await this.getState()), ui: project.ui ?? null };
  }

  /** Whether a job of this session is still running or queued. */
  busy(): boolean {
    return [...this.jobs.values()].some((j) => !j.settled);
  }

  /** Stops this session's running jobs (window or tab closed, host stopped); other sessions on the same runner go on. */
  dispose(): void {
    for (const j of this.jobs.values()) if (!j.settled) j.handle.cancel();
  }
}

/** Mean ε, n and Δn of a prediction's periodic frames (core/learning/set-summary.ts); undefined when it has none. */
function periodicSetSummary(frames: FramePredictionJ[]): PredictionSummary['summary'] {
  const periodic = frames.flatMap((f) => (f.isolated ? [] : [f]));
  return periodic.length ? setSummary(periodic.map((f) => ({ eps: f.eps, errorBars: f.errorBars, reference: f.reference, outside: f.applicability.outside }))) : undefined;
}

/** The frames' times in ps (their time_fs property), or null when one of them carries none. */
export function framesTimePs(frames: readonly { info: Record<string, unknown> }[]): number[] | null {
  const t = frames.map((f) => f.info.time_fs);
  return t.length && t.every((v) => typeof v === 'number' && Number.isFinite(v)) ? (t as number[]).map((v) => v / 1000) : null;
}
