// The demo data set, made from scratch: liquid frames from rigid-molecule Monte Carlo at three state points,
// crystal frames from Monte Carlo about the relaxed invented lattice at two temperatures, and a consecutive
// rigid-body dynamics trajectory; every stored frame carries reference tensors from the interacting point-dipole
// model and provenance keys. Pure computation (no files): scripts/generate-demo.ts writes the results.
import type { Frame, InfoValue } from '../core/geometry/frame.ts';
import { makeRng } from '../core/numerics/random.ts';
import { randomRotation } from '../core/descriptors/wigner.ts';
import { referenceTensors } from '../core/dielectric/dipole-model.ts';
import {
  CRYSTAL_EQUILIBRATION_SWEEPS,
  CRYSTAL_START,
  crystalStatePoints,
  demoDipoleModel,
  demoMolecule,
  LJ_CUTOFF,
  liquidStatePoints,
  MC_EQUILIBRATION_SWEEPS,
  MC_SWEEPS_BETWEEN_FRAMES,
  PROVENANCE_NOTE,
  REFERENCE_ACCURACY,
  trajectorySettings,
} from './scenario.ts';
import { allSites, pairTable, rigidBody, systemFrame, totalEnergy, type RigidSystem } from './rigid-system.ts';
import { crystalSystem, latticeStart, relaxCrystal, repeatsFor, type CrystalCell } from './crystal.ts';
import { equilibrate, makeMonteCarlo, sweep } from './monte-carlo.ts';
import { kinetic, makeDynamics, step } from './rigid-md.ts';

export interface GenerateOptions {
  /** Scale every frame count and sweep count by this factor (tests use a small one). Default 1. */
  scale?: number;
  /** Attach reference tensors to trajectory frames too (default true). */
  trajectoryReferences?: boolean;
  log?: (line: string) => void;
}

export interface DemoData {
  liquid: Frame[];
  crystal: Frame[];
  trajectory: Frame[];
  crystalCell: CrystalCell;
  crystalEnergy: number;
  /** Per state point: mean-square displacement of molecular centres over the production run (Å²). */
  diagnostics: Record<string, number>;
}

const model = demoDipoleModel;

function referenceModelText(): string {
  const p = Object.entries(model.polarisabilities).map(([e, v]) => `${e}=${v}`).join(',');
  return `interacting point dipoles, Thole exp(-a u^3) damping a=${model.thole}, polarisabilities_A3 ${p}, Ewald conducting boundary (accuracy ${REFERENCE_ACCURACY.accuracy})`;
}

/** Add eps_ref, alpha_c_ref_A3, alpha_cm_ref_A3 (row-major 3×3) from the dipole model. */
export function attachReferences(frame: Frame): void {
  const ref = referenceTensors(frame, model, REFERENCE_ACCURACY);
  frame.info.eps_ref = Array.from(ref.eps, round9);
  frame.info.alpha_c_ref_A3 = Array.from(ref.alphaC, round9);
  frame.info.alpha_cm_ref_A3 = Array.from(ref.alphaCM, round9);
  frame.info.reference_model = referenceModelText();
}

function round9(v: number): number {
  return Number(v.toPrecision(10));
}

function provenance(info: Record<string, InfoValue>, extra: Record<string, InfoValue>): void {
  info.data_origin = PROVENANCE_NOTE;
  info.generator = 'npm run demo:generate (scripts/generate-demo.ts)';
  for (const [k, v] of Object.entries(extra)) info[k] = v;
}

function meanSquareShift(a: Float64Array, b: Float64Array): number {
  let s = 0;
  for (let k = 0; k < a.length; k++) s += (a[k] - b[k]) ** 2;
  return s / (a.length / 3);
}

export function generateDemo(options: GenerateOptions = {}): DemoData {
  const scale = options.scale ?? 1;
  const log = options.log ?? (() => {});
  const count = (n: number): number => Math.max(1, Math.round(n * scale));
  const mol = rigidBody(demoMolecule);
  const table = pairTable(demoMolecule, LJ_CUTOFF);
  const diagnostics: Record<string, number> = {};

  const liquid: Frame[] = [];
  for (const sp of liquidStatePoints) {
    const rng = makeRng(sp.seed);
    const sys = latticeStart(mol, sp.molecules, sp.volumePerMolecule, () => randomRotation(rng));
    const mc = makeMonteCarlo(sys, table, sp.temperatureK, rng);
    const sites = allSites(sys);
    equilibrate(mc, sites, count(MC_EQUILIBRATION_SWEEPS));
    const start = Float64Array.from(sys.com);
    const frames = count(sp.frames);
    for (let f = 0; f < frames; f++) {
      for (let s = 0; s < MC_SWEEPS_BETWEEN_FRAMES; s++) sweep(mc, sites);
      liquid.push(storeFrame(sys, table, {
        phase: 'liquid', state_point: sp.label, temperature_K: sp.temperatureK, seed: sp.seed,
        sampler: 'rigid-molecule Metropolis Monte Carlo, NVT', mc_sweep: count(MC_EQUILIBRATION_SWEEPS) + (f + 1) * MC_SWEEPS_BETWEEN_FRAMES,
      }));
    }
    diagnostics[`${sp.label} msd_A2`] = meanSquareShift(sys.com, start);
    diagnostics[`${sp.label} acceptance`] = mc.accepted / Math.max(1, mc.tried);
    log(`${sp.label}: ${frames} frames, MSD of centres over production ${diagnostics[`${sp.label} msd_A2`].toFixed(2)} Å², energy ${(totalEnergy(table, sys) / sys.count).toFixed(2)} kJ/mol per molecule`);
  }

  const relaxed = relaxCrystal(mol, table, CRYSTAL_START, 5);
  const repeats = repeatsFor(relaxed.cell, LJ_CUTOFF);
  log(`crystal: a=${relaxed.cell.a.toFixed(3)} b=${relaxed.cell.b.toFixed(3)} c=${relaxed.cell.c.toFixed(3)} Å, θ=${relaxed.cell.theta.toFixed(3)} rad, lattice energy ${relaxed.energy.toFixed(2)} kJ/mol per molecule, supercell ${repeats.join('×')}`);
  const crystal: Frame[] = [];
  for (const cp of crystalStatePoints) {
    const rng = makeRng(cp.seed);
    const sys = crystalSystem(mol, relaxed.cell, repeats);
    const mc = makeMonteCarlo(sys, table, cp.temperatureK, rng);
    mc.maxShift = 0.05;
    mc.maxTurn = 0.05;
    const sites = allSites(sys);
    const lattice = Float64Array.from(sys.com);
    equilibrate(mc, sites, count(CRYSTAL_EQUILIBRATION_SWEEPS));
    const frames = count(cp.frames);
    for (let f = 0; f < frames; f++) {
      for (let s = 0; s < MC_SWEEPS_BETWEEN_FRAMES; s++) sweep(mc, sites);
      crystal.push(storeFrame(sys, table, {
        phase: 'crystal', state_point: cp.label, temperature_K: cp.temperatureK, seed: cp.seed,
        sampler: 'rigid-molecule Metropolis Monte Carlo, NVT, about the relaxed invented lattice',
        mc_sweep: count(CRYSTAL_EQUILIBRATION_SWEEPS) + (f + 1) * MC_SWEEPS_BETWEEN_FRAMES,
        lattice_a_b_c_A: [relaxed.cell.a, relaxed.cell.b, relaxed.cell.c].map(round9),
      }));
    }
    diagnostics[`${cp.label} msd_A2`] = meanSquareShift(sys.com, lattice);
    log(`${cp.label}: ${frames} frames, mean-square displacement from the lattice sites ${diagnostics[`${cp.label} msd_A2`].toFixed(3)} Å²`);
  }

  const ts = trajectorySettings;
  const rng = makeRng(ts.seed);
  const sys = latticeStart(mol, ts.molecules, ts.volumePerMolecule, () => randomRotation(rng));
  const mc = makeMonteCarlo(sys, table, ts.temperatureK, rng);
  equilibrate(mc, allSites(sys), count(ts.equilibrationSweeps));
  // Equilibrate with strong friction (fast approach to the target temperature), then store frames with the weak
  // production friction.
  const md = makeDynamics(sys, table, ts.temperatureK, ts.timestepFs, ts.equilibrationFrictionPerFs, rng);
  for (let s = 0; s < count(ts.equilibrationSteps); s++) step(md);
  md.frictionPerFs = ts.frictionPerFs;
  md.timeFs = 0;
  const trajectory: Frame[] = [];
  const frames = count(ts.frames);
  let tSum = 0;
  for (let f = 0; f < frames; f++) {
    for (let s = 0; s < ts.stride; s++) step(md);
    tSum += kinetic(md).temperatureK;
    const frame = storeFrame(sys, table, {
      phase: 'liquid', state_point: ts.label, temperature_K: ts.temperatureK, seed: ts.seed,
      sampler: 'rigid-body Langevin dynamics (BAOAB, symplectic rotor splitting), NVT',
      timestep_fs: ts.timestepFs, frame_interval_fs: ts.timestepFs * ts.stride, time_fs: round9(md.timeFs),
      friction_per_fs: ts.frictionPerFs,
    }, options.trajectoryReferences ?? true);
    trajectory.push(frame);
  }
  diagnostics[`${ts.label} mean_temperature_K`] = tSum / frames;
  log(`${ts.label}: ${frames} consecutive frames every ${ts.timestepFs * ts.stride} fs, mean kinetic temperature ${(tSum / frames).toFixed(1)} K`);
  return { liquid, crystal, trajectory, crystalCell: relaxed.cell, crystalEnergy: relaxed.energy, diagnostics };
}

function storeFrame(sys: RigidSystem, table: ReturnType<typeof pairTable>, extra: Record<string, InfoValue>, references = true): Frame {
  const frame = systemFrame(sys);
  provenance(frame.info, {
    molecule_model: 'BNCl2 (invented rigid planar molecule, 4 sites)',
    molecules: sys.count,
    ...extra,
    potential_energy_kJ_per_mol: round9(totalEnergy(table, sys)),
  });
  if (references) attachReferences(frame);
  return frame;
}
