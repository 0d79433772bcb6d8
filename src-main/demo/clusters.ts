// Cluster-to-bulk on the invented demo scenario: clusters of 1–8 molecules cut from liquid frames and labelled
// by the demo's interacting point-dipole model in vacuum (no Ewald sum: the open boundary), a model trained on
// them alone, and its predictions for bulk liquid frames and the crystal through the forward Clausius–Mossotti
// relation — beside a model trained on the periodic liquid frames the clusters were cut from, on the same bulk
// frames. Teaching notes: docs/demo.md, "Clusters teach the bulk".
import type { Frame, Mat3 } from '../core/geometry/frame.ts';
import { makeFrame } from '../core/geometry/frame.ts';
import { minimumImage } from '../core/geometry/cell.ts';
import { findMolecules } from '../core/geometry/molecules.ts';
import { cellPolarisability } from '../core/dielectric/dipole-model.ts';
import { birefringence } from '../core/dielectric/clausius-mossotti.ts';
import { isotropicMean, mat3Mean, tensorFromValues, toIrreducible } from '../core/dielectric/tensor.ts';
import { makeRng } from '../core/numerics/random.ts';
import { predictFrame, trainModel, type Model } from '../core/learning/model.ts';
import type { ErrorFigures, FramePrediction, ModelSettings, TrainRequest } from '../core/learning/model-types.ts';
import { errorFigures } from '../core/learning/validation.ts';
import { CancelledError } from '../core/errors.ts';
import { demoDipoleModel, PROVENANCE_NOTE } from './scenario.ts';
import { readAllStructures } from '../io/read-structures.ts';
import { join } from 'node:path';
import { writeFileAtomic } from '../io/atomic.ts';
import { formatExtxyzFrame } from '../io/extxyz.ts';

/** The property the clusters' reference polarisability goes under (io/tensor-keys.ts naming, `_ref` as the demo's other references). */
export const CLUSTER_KEY = 'alpha_mol_ref_A3';

/** Tolerance of the conjugate-gradient solve of the clusters' induced dipoles (relative residual). */
const CLUSTER_TOLERANCE = 1e-10;

export interface ClusterOptions {
  /** Cluster sizes in molecules (default 1…8). */
  sizes?: number[];
  /** Clusters of each size (default 8), centred on molecules drawn at random from the source frames. */
  perSize?: number;
  seed?: number;
}

/** Molecule index of every atom: the frame's `molecule` array when it has one, else covalent bonds. */
function moleculesOf(frame: Frame): number[][] {
  const m = frame.arrays.molecule;
  if (m && m.kind === 'int' && m.width === 1) {
    const members: number[][] = [];
    m.data.forEach((id, atom) => (members[id] ??= []).push(atom));
    return members.filter(Boolean);
  }
  return findMolecules(frame).members;
}

function centreOf(frame: Frame, atoms: number[]): Float64Array {
  const c = new Float64Array(3);
  for (const a of atoms) for (let k = 0; k < 3; k++) c[k] += frame.positions[3 * a + k] / atoms.length;
  return c;
}

/**
 * The cluster of the `size` molecules nearest (by centre, through the periodic images) to molecule `centre` of a
 * periodic frame, whole and unwrapped about it, as a frame without a cell. Molecules must be whole in the frame
 * (the demo writes them so); each is moved rigidly by the lattice translation that brings it nearest the centre.
 */
export function cutCluster(frame: Frame, centre: number, size: number): Frame {
  if (!frame.cell) throw new RangeError('cutCluster: the source frame must be periodic');
  const cell = frame.cell;
  const members = moleculesOf(frame);
  const centres = members.map((atoms) => centreOf(frame, atoms));
  const c0 = centres[centre];
  const near = members.map((_, m) => {
    const d = minimumImage(cell, [centres[m][0] - c0[0], centres[m][1] - c0[1], centres[m][2] - c0[2]]);
    return { m, d, r: Math.hypot(d[0], d[1], d[2]) };
  });
  near.sort((a, b) => a.r - b.r || a.m - b.m);
  const species: string[] = [];
  const positions: number[] = [];
  for (const { m, d } of near.slice(0, size)) {
    for (const a of members[m]) {
      species.push(frame.species[a]);
      // the molecule's own atoms relative to its centre, placed at the nearest image of that centre
      for (let k = 0; k < 3; k++) positions.push(c0[k] + d[k] + frame.positions[3 * a + k] - centres[m][k]);
    }
  }
  return makeFrame(species, positions, null);
}

/** The clusters' reference: the dipole model's polarisability of the cluster in vacuum (Å³), row-major. */
export function labelCluster(cluster: Frame): void {
  const alpha = cellPolarisability(cluster, demoDipoleModel, { boundary: 'open', tolerance: CLUSTER_TOLERANCE }).alpha;
  cluster.info[CLUSTER_KEY] = Array.from(alpha, (v) => Number(v.toPrecision(10)));
  cluster.info.data_origin = PROVENANCE_NOTE;
  cluster.info.reference_model = 'interacting point dipoles of the demo scenario, open boundary (isolated cluster in vacuum, no Ewald sum)';
}

/** Labelled clusters of every size cut from the given periodic frames (seeded). */
export function demoClusters(sources: Frame[], options: ClusterOptions = {}): Frame[] {
  const sizes = options.sizes ?? [1, 2, 3, 4, 5, 6, 7, 8];
  const perSize = options.perSize ?? 8;
  const rng = makeRng(options.seed ?? 4401);
  const out: Frame[] = [];
  for (const size of sizes) {
    for (let k = 0; k < perSize; k++) {
      const f = rng.int(sources.length);
      const source = sources[f];
      const centre = rng.int(moleculesOf(source).length);
      const cluster = cutCluster(source, centre, size);
      labelCluster(cluster);
      cluster.info.cluster_molecules = size;
      cluster.info.tag = `cluster-${size}`;
      out.push(cluster);
    }
  }
  return out;
}

/** One model's figures on the bulk frames. */
export interface BulkFigures {
  /** Liquid: RMSE of ε_iso = tr ε / 3 over the test frames, and the mean signed error (predicted − reference). */
  liquidEpsIsoRmse: number;
  liquidEpsIsoBias: number;
  liquidErrors: ErrorFigures;
  /** Liquid test frames flagged outside the model's training data. */
  liquidOutside: number;
  /** Crystal: Δn of the mean predicted ε, and the frames flagged outside. */
  crystalDn: number;
  crystalOutside: number;
  /** Most frequent out-of-domain reason on the liquid frames (empty when none). */
  topReason: string;
}

export interface ClusterToBulk {
  clusters: number;
  clusterAtoms: number;
  periodicFrames: number;
  periodicAtoms: number;
  testFrames: number;
  crystalFrames: number;
  /** Reference: mean ε_iso of the test liquid frames, and Δn of the crystal's mean reference ε. */
  reference: { liquidEpsIso: number; crystalDn: number };
  fromClusters: BulkFigures;
  fromPeriodic: BulkFigures;
}

function figuresOf(model: Model, liquid: Frame[], liquidRef: Mat3[], crystal: Frame[]): BulkFigures {
  const pl: FramePrediction[] = liquid.map((f) => predictFrame(model, f));
  const pc: FramePrediction[] = crystal.map((f) => predictFrame(model, f));
  const err = pl.map((p, i) => isotropicMean(p.eps) - isotropicMean(liquidRef[i]));
  const reasons = new Map<string, number>();
  for (const p of pl) for (const r of p.applicability.reasons) reasons.set(r.key, (reasons.get(r.key) ?? 0) + 1);
  const top = [...reasons.entries()].sort((a, b) => b[1] - a[1])[0];
  return {
    liquidEpsIsoRmse: Math.sqrt(err.reduce((s, e) => s + e * e, 0) / err.length),
    liquidEpsIsoBias: err.reduce((s, e) => s + e, 0) / err.length,
    liquidErrors: errorFigures(liquidRef.map((t) => toIrreducible(t)), pl.map((p) => toIrreducible(p.eps))),
    liquidOutside: pl.filter((p) => p.applicability.outside).length,
    crystalDn: birefringence(mat3Mean(pc.map((p) => p.eps))).delta,
    crystalOutside: pc.filter((p) => p.applicability.outside).length,
    topReason: top ? `${top[0]} (${top[1]} of ${pl.length} frames)` : '',
  };
}

export interface ClusterToBulkInput {
  /** Periodic liquid frames with `eps_ref`: the clusters are cut from these, and the periodic model learns them. */
  trainLiquid: Frame[];
  /** Bulk liquid frames never trained on, with `eps_ref`. */
  testLiquid: Frame[];
  /** Crystal frames with `eps_ref`. */
  crystal: Frame[];
  settings: Partial<ModelSettings>;
  /** The model trained on `trainLiquid` (eps_ref, route cm) when the caller has one already (the demo does). */
  periodicModel?: Model;
  clusters?: ClusterOptions;
  /** Where to write the clusters (extended XYZ, no cells), so the exercise can be repeated in the window. */
  clustersFile?: string;
  signal?: AbortSignal;
  log?: (line: string) => void;
}

/** Train on clusters alone and on the periodic frames they came from; predict the same bulk frames with both. */
export async function clusterToBulk(input: ClusterToBulkInput): Promise<ClusterToBulk> {
  const log = input.log ?? (() => {});
  const check = () => { if (input.signal?.aborted) throw new CancelledError(); };
  const clusters = demoClusters(input.trainLiquid, input.clusters);
  log(`clusters: ${clusters.length} clusters of ${[...new Set(clusters.map((c) => c.info.cluster_molecules))].join(', ')} molecules labelled in vacuum`);
  if (input.clustersFile) await writeFileAtomic(input.clustersFile, clusters.map(formatExtxyzFrame).join(''));
  check();
  const clusterRequest: TrainRequest = { tensorKey: CLUSTER_KEY, kind: 'alpha-mol', route: 'cm', settings: input.settings };
  const periodicRequest: TrainRequest = { tensorKey: 'eps_ref', kind: 'eps', route: 'cm', settings: input.settings };
  const fromClusters = await trainModel(clusters, clusterRequest, { signal: input.signal });
  check();
  const fromPeriodic = input.periodicModel ?? (await trainModel(input.trainLiquid, periodicRequest, { signal: input.signal }));
  check();
  const ref = (f: Frame, i: number) => tensorFromValues(f.info.eps_ref as number[], { frame: f.source?.index ?? i });
  const liquidRef = input.testLiquid.map(ref);
  const crystalRef = input.crystal.map(ref);
  log(`clusters: predicting ${input.testLiquid.length} bulk liquid and ${input.crystal.length} crystal frames with both models`);
  return {
    clusters: clusters.length,
    clusterAtoms: clusters.reduce((s, c) => s + c.species.length, 0),
    periodicFrames: input.trainLiquid.length,
    periodicAtoms: input.trainLiquid.reduce((s, f) => s + f.species.length, 0),
    testFrames: input.testLiquid.length,
    crystalFrames: input.crystal.length,
    reference: { liquidEpsIso: liquidRef.reduce((s, t) => s + isotropicMean(t), 0) / liquidRef.length, crystalDn: birefringence(mat3Mean(crystalRef)).delta },
    fromClusters: figuresOf(fromClusters, input.testLiquid, liquidRef, input.crystal),
    fromPeriodic: figuresOf(fromPeriodic, input.testLiquid, liquidRef, input.crystal),
  };
}

/** The bundled trajectory: bulk liquid frames (MD, 32 molecules) the demo never trains on. */
export const DEMO_TRAJECTORY = 'liquid-trajectory.extxyz.gz';

/**
 * Cluster-to-bulk within the demo run: clusters cut from the demo's training liquid frames, the demo's own
 * liquid-trained model as the periodic comparison, every TRAJECTORY_STRIDE-th trajectory frame as unseen bulk.
 */
export async function demoClusterToBulk(input: { dataDir: string; liquid: Frame[]; crystal: Frame[]; model: Model; quick: boolean; clustersFile?: string; signal?: AbortSignal; log?: (line: string) => void }): Promise<ClusterToBulk> {
  const stride = input.quick ? 100 : 25;
  const trajectory = (await readAllStructures(join(input.dataDir, DEMO_TRAJECTORY), { signal: input.signal })).filter((_, i) => i % stride === 0);
  return clusterToBulk({ trainLiquid: input.liquid, testLiquid: trajectory, crystal: input.crystal, settings: input.model.settings, periodicModel: input.model, clustersFile: input.clustersFile, signal: input.signal, log: input.log });
}

/** The cluster-to-bulk figures as a Markdown section of the demo summary. */
export function clusterToBulkText(r: ClusterToBulk): string {
  const f = (x: number, d = 4) => x.toFixed(d);
  const row = (name: string, b: BulkFigures) =>
    `| ${name} | ${f(b.liquidEpsIsoRmse)} | ${b.liquidEpsIsoBias >= 0 ? '+' : ''}${f(b.liquidEpsIsoBias)} | ${f(b.crystalDn)} (error ${b.crystalDn - r.reference.crystalDn >= 0 ? '+' : ''}${f(b.crystalDn - r.reference.crystalDn)}) | ${b.liquidOutside} of ${r.testFrames} | ${b.topReason || '—'} |`;
  return [
    '## Clusters teach the bulk',
    `A model trained only on ${r.clusters} clusters of 1–8 molecules (${r.clusterAtoms} atoms) cut from ${r.periodicFrames} liquid frames and labelled by the`,
    `dipole model in vacuum, beside a model trained on those ${r.periodicFrames} periodic frames (${r.periodicAtoms} atoms); both predict the same`,
    `${r.testFrames} unseen bulk liquid frames (reference mean ε_iso ${f(r.reference.liquidEpsIso)}) and ${r.crystalFrames} crystal frames (reference Δn of the mean ε ${f(r.reference.crystalDn)}).`,
    '',
    '| trained on | liquid ε_iso RMSE | liquid ε_iso mean error | crystal Δn | liquid frames flagged | most frequent reason |',
    '|---|---|---|---|---|---|',
    row('clusters (vacuum)', r.fromClusters),
    row('periodic liquid', r.fromPeriodic),
    '',
    'Predictions are model estimates of an invented system.',
    '',
  ].join('\n');
}
