// Rigid-molecule Metropolis Monte Carlo in the canonical ensemble (fixed N, V, T): one trial move displaces a
// random molecule's centre of mass and turns it about a random axis; accepted with probability
// min(1, e^(−ΔU/kT)). Step sizes adapt towards ~40 % acceptance during equilibration only (so the sampled
// chain stays a proper Markov chain afterwards).
import type { Rng } from '../core/numerics/random.ts';
import { rotationAboutAxis } from '../core/descriptors/wigner.ts';
import { mul3, orthonormalise, pairEnergy, sitePositions, type PairTable, type RigidSystem } from './rigid-system.ts';

/** Boltzmann constant in kJ/mol/K (CODATA 2018: k_B·N_A = 8.314462618 J/mol/K). */
export const KB_KJ_PER_MOL_K = 0.008314462618;

export interface MonteCarlo {
  sys: RigidSystem;
  table: PairTable;
  temperatureK: number;
  rng: Rng;
  /** Largest displacement per Cartesian axis (Å) and largest turn (rad) of a trial move. */
  maxShift: number;
  maxTurn: number;
  accepted: number;
  tried: number;
}

export function makeMonteCarlo(sys: RigidSystem, table: PairTable, temperatureK: number, rng: Rng): MonteCarlo {
  return { sys, table, temperatureK, rng, maxShift: 0.3, maxTurn: 0.3, accepted: 0, tried: 0 };
}

function energyOf(mc: MonteCarlo, m: number, sites: Float64Array, all: Float64Array): number {
  const { sys, table } = mc;
  const ns = sys.mol.masses.length;
  let e = 0;
  for (let k = 0; k < sys.count; k++) if (k !== m) e += pairEnergy(table, sys.box, sites, 0, all, 3 * ns * k);
  return e;
}

/** One sweep: as many trial moves as molecules. `all` holds the current site positions and is kept current. */
export function sweep(mc: MonteCarlo, all: Float64Array): void {
  const { sys, rng } = mc;
  const ns = sys.mol.masses.length;
  const beta = 1 / (KB_KJ_PER_MOL_K * mc.temperatureK);
  const oldSites = new Float64Array(3 * ns);
  const newSites = new Float64Array(3 * ns);
  const newCom = new Float64Array(3);
  const newRot = new Float64Array(9);
  for (let t = 0; t < sys.count; t++) {
    const m = rng.int(sys.count);
    oldSites.set(all.subarray(3 * ns * m, 3 * ns * (m + 1)));
    for (let c = 0; c < 3; c++) newCom[c] = sys.com[3 * m + c] + mc.maxShift * (2 * rng.uniform() - 1);
    const ax = rng.normal(), ay = rng.normal(), az = rng.normal();
    const turn = rotationAboutAxis(ax, ay, az, mc.maxTurn * (2 * rng.uniform() - 1));
    mul3(turn, 0, sys.rot, 9 * m, newRot, 0);
    sitePositions(sys, 0, newSites, 0, newCom, newRot);
    const eOld = energyOf(mc, m, oldSites, all);
    const eNew = energyOf(mc, m, newSites, all);
    mc.tried++;
    const d = eNew - eOld;
    if (d <= 0 || rng.uniform() < Math.exp(-beta * d)) {
      mc.accepted++;
      sys.com.set(newCom, 3 * m);
      orthonormalise(newRot, 0);
      sys.rot.set(newRot, 9 * m);
      sitePositions(sys, m, all, 3 * ns * m);
    }
  }
}

/** Equilibration sweeps with step-size adaptation every 10 sweeps. */
export function equilibrate(mc: MonteCarlo, all: Float64Array, sweeps: number): void {
  for (let s = 0; s < sweeps; s++) {
    sweep(mc, all);
    if ((s + 1) % 10 === 0) {
      const rate = mc.accepted / Math.max(1, mc.tried);
      const f = rate > 0.4 ? 1.1 : 0.9;
      mc.maxShift = Math.min(1.5, Math.max(0.01, mc.maxShift * f));
      mc.maxTurn = Math.min(1.5, Math.max(0.01, mc.maxTurn * f));
      mc.accepted = 0;
      mc.tried = 0;
    }
  }
  mc.accepted = 0;
  mc.tried = 0;
}
