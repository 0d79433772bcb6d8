// What a decoded model file must hold before it may predict anything: the schema of core/model.ts's Model
// (types and shapes) and the physical ranges of its contents. The checksum only proves the file is as it was
// written; a file edited with a recomputed checksum, or written by a faulty program, is caught here, so no
// swapped species, cutoff beyond the settings table's limits or negative threshold ever turns into a confident number.
import { createRequire } from 'node:module';
import type * as Zod from 'zod';
import { ModelError } from '../core/errors.ts';
import { isElement } from '../core/geometry/elements.ts';
import type { Model } from '../core/learning/model.ts';
import { settingsProblems } from '../core/settings-table.ts';
import { learntQuantity, type TargetShape } from '../core/learning/targets.ts';
import { TENSOR_KINDS } from '../core/dielectric/clausius-mossotti.ts';
import type { TensorKind } from '../core/learning/model-types.ts';

/**
 * The schema of a model, built at its first use and kept: a run that takes its model from the decoded-model cache
 * (io/model-cache.ts) checks none, and building it cost 15–20 ms of zod calls at every start of the command.
 */
function modelSchema() {
  return (schema ??= buildModelSchema());
}
let schema: ReturnType<typeof buildModelSchema> | undefined;

/**
 * zod, loaded when the schema is first built: a run whose model comes from the decoded-model cache never loads it
 * (10–14 ms of every start of the pre-built command). Written as `require('zod')` so that the pre-built bundles
 * (esbuild) hold zod and run its module at this call; from the sources, Node's require loads it.
 */
function zod(): typeof Zod {
  return (typeof require === 'function' ? require('zod') : createRequire(import.meta.url)('zod')) as typeof Zod;
}

function buildModelSchema() {
  const { z } = zod();
  const finite = z.number().finite();
  const f64 = z.instanceof(Float64Array);
  const i32 = z.instanceof(Int32Array);
  const count = z.number().int().min(0);

  const kernelSchema = z.object({ zeta: z.number().int().min(1), n0: count, n: count, species: i32, p: f64, v: f64 });

  const partSchema = z.object({
    order: z.union([z.literal(0), z.literal(1), z.literal(2)]),
    offset: count,
    form: z.enum(['linear', 'kernel']),
    method: z.string(),
    n: z.number().int().min(1),
    weights: f64.optional(),
    kernel: kernelSchema.optional(),
    regularisation: z.object({ relative: finite, lambda: finite.min(0), cvError: z.number() }).loose(),
    posterior: z
      .object({ form: z.enum(['primal', 'dual', 'design']), size: count, factor: f64, noise: finite.min(0), lambda: finite.min(0), nystrom: f64.optional(), repFrame: i32.optional(), counts: f64.optional(), design: f64.optional(), rows: count.optional() })
      .loose()
      .optional(),
  });

  return z.object({
    createdAt: z.string(),
    target: z.object({
      key: z.string().min(1),
      shape: z.enum(['tensor', 'vector', 'scalar']),
      kind: z.enum(TENSOR_KINDS as [TensorKind, ...TensorKind[]]).nullable(),
      route: z.enum(['cm', 'direct']),
      learnt: z.enum(['alpha-cm', 'alpha-c', 'vector', 'scalar']),
      units: z.string(),
    }),
    settings: z.object({ contributingSpecies: z.array(z.string()) }).loose(),
    species: z.array(z.string()).min(1),
    centres: z.array(z.string()).min(1),
    featureSizes: z.object({ n0: z.number().int().min(1), n: count.optional() }),
    tensorLimits: z.object({ nmax: z.number().int().min(0).max(16), lmax: z.number().int().min(0).max(10) }),
    featureSelection: z.record(z.string(), z.array(count)).optional(),
    baseline: z.array(finite),
    parts: z.array(partSchema.loose()).min(1),
    applicability: z.object({ n0: count, species: i32, p: f64, threshold: finite.min(0), perSpecies: z.array(finite.min(0)), rule: z.string() }),
    training: z
      .object({ frames: z.number().int().min(1), atoms: z.number().int().min(1), volumeA3: z.object({ min: finite.min(0), max: finite.min(0) }) })
      .loose(),
    notes: z.array(z.string()),
  });
}

/** The parts (order, first component) a target of this shape is learnt in (core/model.ts trainModel). */
const PARTS_OF: Record<TargetShape, [number, number][]> = {
  tensor: [[0, 0], [2, 1]],
  vector: [[1, 0]],
  scalar: [[0, 0]],
};

function allFinite(a: Float64Array): boolean {
  for (let i = 0; i < a.length; i++) if (!Number.isFinite(a[i])) return false;
  return true;
}

function inRange(a: Int32Array, n: number): boolean {
  for (let i = 0; i < a.length; i++) if (a[i] < 0 || a[i] >= n) return false;
  return true;
}

/** Throws ModelError (naming the file and the first defect) unless `m` is a model fit to predict with. */
export function checkModelContents(m: unknown, file: string): asserts m is Model {
  const bad: (what: string) => never = (what) => {
    throw new ModelError(`${file}: corrupt model file (${what}); retrain, or restore the file as it was saved`);
  };
  // jitless: a model is checked once per process, and zod's generated fast path (code built for each object schema
  // at its first use, which no code cache keeps) cost 10–20 ms of a one-frame prediction. Asked here, per call:
  // zod reads its global setting when a schema is built, which may be before any main() sets it.
  const parsed = modelSchema().safeParse(m, { jitless: true });
  if (!parsed.success) {
    const issue = parsed.error.issues[0];
    bad(`${issue.path.join('.') || 'the model'}: ${issue.message}`);
  }
  const model = m as Model;
  const { target, settings, species, centres } = model;
  // the limits of the settings table: the widest any version of the program trained with
  const problems = settingsProblems(settings);
  if (problems.length) bad(`settings: ${problems[0]}`);
  if (target.learnt !== learntQuantity(target.shape, target.route)) bad(`target ${target.shape} by route ${target.route} cannot be learnt as ${target.learnt}`);
  if ((target.shape === 'tensor') !== (target.kind !== null)) bad('the target kind does not match its shape');
  // species: distinct element symbols in the order training writes them (sorted); centres among them
  if (!species.every(isElement)) bad('species are not element symbols');
  const sorted = [...species].sort();
  if (new Set(species).size !== species.length || sorted.some((s, k) => s !== species[k])) bad('species are not distinct and in order');
  if (new Set(centres).size !== centres.length || !centres.every((c) => species.includes(c))) bad('centre species');
  const expectCentres = settings.contributingSpecies.length ? settings.contributingSpecies : species;
  if (expectCentres.length !== centres.length || expectCentres.some((c, k) => c !== centres[k])) bad('centre species do not match the settings');
  const nS = centres.length;
  const n0 = model.featureSizes.n0;
  if (model.baseline.length !== nS) bad('baseline');
  if (model.featureSelection !== undefined) {
    const sel0 = model.featureSelection[0];
    if (!sel0 || sel0.length !== n0) bad('feature selection size');
  }
  // parts: the orders of the target's shape, with weights of the right sizes and finite values
  const want = PARTS_OF[target.shape];
  if (model.parts.length !== want.length || model.parts.some((p, k) => p.order !== want[k][0] || p.offset !== want[k][1])) bad(`model parts do not fit a ${target.shape} target`);
  for (const p of model.parts) {
    const at = `part λ=${p.order}`;
    if (p.order === 0 && p.n !== n0) bad(`${at} size`);
    if (p.form === 'linear') {
      if (!p.weights || p.weights.length !== nS * p.n || !allFinite(p.weights)) bad(`${at} weights`);
    } else {
      const k = p.kernel;
      if (!k || k.zeta !== settings.kernelExponent || k.n0 !== n0 || k.n !== p.n) bad(`${at} kernel`);
      if (k.p.length !== k.species.length * n0 || k.v.length !== k.species.length * k.n || !inRange(k.species, nS)) bad(`${at} kernel sizes`);
      if (!allFinite(k.p) || !allFinite(k.v)) bad(`${at} kernel values`);
    }
    if (p.posterior && !posteriorFits(p.posterior)) bad(`${at} posterior`);
  }
  const a = model.applicability;
  if (a.n0 !== n0 || a.p.length !== a.species.length * n0 || !inRange(a.species, nS) || !allFinite(a.p)) bad('applicability');
  if (a.perSpecies.length !== nS) bad('applicability thresholds');
  checkTrustContents(model, bad);
}

/** A posterior's arrays have the sizes its form needs, and finite numbers (regression.ts Posterior). */
function posteriorFits(post: NonNullable<Model['parts'][number]['posterior']>): boolean {
  if (post.nystrom && !allFinite(post.nystrom)) return false;
  if (post.form === 'design') {
    const rows = post.rows;
    if (rows === undefined || rows < 1 || !(post.design instanceof Float64Array) || post.design.length !== rows * post.size || !allFinite(post.design)) return false;
    if (!(post.lambda > 0)) return false;
    return post.factor.length === rows * rows && allFinite(post.factor);
  }
  return post.factor.length === post.size ** 2 && allFinite(post.factor);
}

/** Error-bar calibration, leverage part and domain ranges: optional (older files lack them and predict without). */
function checkTrustContents(m: Model, bad: (what: string) => never): void {
  if (m.calibration !== undefined) {
    const parts = m.calibration?.parts;
    const fits = (c: (typeof parts)[number] | null) => c !== null && typeof c === 'object' && m.parts.some((p) => p.order === c.order) && Number.isFinite(c.varianceScale) && c.varianceScale > 0;
    if (!Array.isArray(parts) || !parts.every(fits)) bad('error-bar calibration');
  }
  if (m.leverage !== undefined) {
    const post = m.leverage?.posterior;
    if (m.leverage?.order !== 0 || !(post?.factor instanceof Float64Array) || !posteriorFits(post)) bad('leverage part');
  }
  if (m.domain !== undefined) {
    const d = m.domain;
    const S = m.species.length;
    const len = (r: { min: unknown[]; median: unknown[]; max: unknown[] } | undefined, n: number) => !!r && [r.min, r.median, r.max].every((x) => Array.isArray(x) && x.length === n);
    if (!d || !len(d.nearest, S * S) || !len(d.count, S) || !len(d.scale, m.centres.length) || !Array.isArray(d.atomRate) || d.atomRate.length !== S || !(d.density?.tolerance >= 0)) bad('domain ranges');
    const numOrNull = (x: unknown) => x === null || (typeof x === 'number' && Number.isFinite(x));
    const values = (r: { min: unknown[]; median: unknown[]; max: unknown[] }) => [r.min, r.median, r.max].every((x) => x.every(numOrNull));
    if (!Array.isArray(d.species) || d.species.length !== S || d.species.some((x, k) => x !== m.species[k])) bad('domain ranges: species');
    if (d.cutoffRadius !== m.settings.cutoffRadius) bad('domain ranges: cutoff radius');
    if (!values(d.nearest) || !values(d.count) || !values(d.scale) || !d.atomRate.every((x) => typeof x === 'number' && x >= 0 && x <= 1)) bad('domain ranges: values');
    if (!numOrNull(d.density.min) || !numOrNull(d.density.max) || !Number.isFinite(d.density.tolerance)) bad('domain ranges: density');
  }
}
