// Rigid-body molecular dynamics with a Langevin thermostat, for the demo's consecutive trajectory.
// Translation: velocity Verlet. Rotation: body-frame angular momenta, with the free-rotor motion split into
// exact rotations about the principal axes in the symmetric sequence x(h/2) y(h/2) z(h) y(h/2) x(h/2) (the
// symplectic splitting for rigid bodies, Dullweber, Leimkuhler & McLachlan, J. Chem. Phys. 107, 5840 (1997)).
// The thermostat is the "BAOAB" arrangement of Langevin dynamics (Leimkuhler & Matthews, 2013): kick, drift,
// Ornstein–Uhlenbeck step on momenta, drift, kick. Units: Å, fs, amu, kJ/mol.
import type { Rng } from '../core/numerics/random.ts';
import { KB_KJ_PER_MOL_K } from './monte-carlo.ts';
import { allSites, orthonormalise, siteForces, type PairTable, type RigidSystem } from './rigid-system.ts';

/** 1 kJ/mol in amu Å²/fs²: 1e3 J / N_A / (1.66053906660e−27 kg · 1e−20 m² / 1e−30 s²) (CODATA 2018). */
export const KJMOL_IN_AMU_A2_FS2 = 1e3 / 6.02214076e23 / 1.6605390666e-17;

export interface RigidDynamics {
  sys: RigidSystem;
  table: PairTable;
  temperatureK: number;
  timestepFs: number;
  frictionPerFs: number;
  rng: Rng;
  /** COM velocities (Å/fs), 3 per molecule; body-frame angular momenta (amu Å²/fs), 3 per molecule. */
  vel: Float64Array;
  angmom: Float64Array;
  forces: Float64Array;
  sites: Float64Array;
  energy: number;
  timeFs: number;
}

export function makeDynamics(sys: RigidSystem, table: PairTable, temperatureK: number, timestepFs: number, frictionPerFs: number, rng: Rng): RigidDynamics {
  const kT = KB_KJ_PER_MOL_K * temperatureK * KJMOL_IN_AMU_A2_FS2;
  const vel = new Float64Array(3 * sys.count);
  const angmom = new Float64Array(3 * sys.count);
  for (let m = 0; m < sys.count; m++) {
    for (let c = 0; c < 3; c++) {
      vel[3 * m + c] = Math.sqrt(kT / sys.mol.totalMass) * rng.normal();
      angmom[3 * m + c] = Math.sqrt(kT * sys.mol.inertia[c]) * rng.normal();
    }
  }
  const sites = allSites(sys);
  const forces = new Float64Array(sites.length);
  const md: RigidDynamics = { sys, table, temperatureK, timestepFs, frictionPerFs, rng, vel, angmom, forces, sites, energy: 0, timeFs: 0 };
  md.energy = siteForces(table, sys, sites, forces);
  return md;
}

/** Half kick: COM momenta by the net force, body angular momenta by the body-frame torque. */
function kick(md: RigidDynamics, h: number): void {
  const { sys, forces, sites } = md;
  const ns = sys.mol.masses.length;
  const conv = KJMOL_IN_AMU_A2_FS2;
  for (let m = 0; m < sys.count; m++) {
    let fx = 0, fy = 0, fz = 0, tx = 0, ty = 0, tz = 0;
    for (let s = 0; s < ns; s++) {
      const o = 3 * (m * ns + s);
      const rx = sites[o] - sys.com[3 * m], ry = sites[o + 1] - sys.com[3 * m + 1], rz = sites[o + 2] - sys.com[3 * m + 2];
      const Fx = forces[o], Fy = forces[o + 1], Fz = forces[o + 2];
      fx += Fx; fy += Fy; fz += Fz;
      tx += ry * Fz - rz * Fy; ty += rz * Fx - rx * Fz; tz += rx * Fy - ry * Fx;
    }
    const a = (h * conv) / sys.mol.totalMass;
    md.vel[3 * m] += a * fx; md.vel[3 * m + 1] += a * fy; md.vel[3 * m + 2] += a * fz;
    const R = sys.rot, r = 9 * m;
    // body torque = Rᵀ τ
    const bx = R[r] * tx + R[r + 3] * ty + R[r + 6] * tz;
    const by = R[r + 1] * tx + R[r + 4] * ty + R[r + 7] * tz;
    const bz = R[r + 2] * tx + R[r + 5] * ty + R[r + 8] * tz;
    md.angmom[3 * m] += h * conv * bx; md.angmom[3 * m + 1] += h * conv * by; md.angmom[3 * m + 2] += h * conv * bz;
  }
}

/** Exact free rotation about body axis k for time h: L turns about axis k, R ← R·R_k(φ), φ = h L_k/I_k. */
function turn(md: RigidDynamics, m: number, k: number, h: number): void {
  const L = md.angmom, R = md.sys.rot;
  const phi = (h * L[3 * m + k]) / md.sys.mol.inertia[k];
  const c = Math.cos(phi), s = Math.sin(phi);
  const i = (k + 1) % 3, j = (k + 2) % 3;
  const li = L[3 * m + i], lj = L[3 * m + j];
  L[3 * m + i] = c * li + s * lj;
  L[3 * m + j] = -s * li + c * lj;
  // Columns i and j of R rotate: R·R_k(φ) with R_k(φ) e_i = c e_i + s e_j, e_j → −s e_i + c e_j.
  for (let row = 0; row < 3; row++) {
    const a = R[9 * m + 3 * row + i], b = R[9 * m + 3 * row + j];
    R[9 * m + 3 * row + i] = c * a + s * b;
    R[9 * m + 3 * row + j] = -s * a + c * b;
  }
}

function drift(md: RigidDynamics, h: number): void {
  const { sys } = md;
  for (let m = 0; m < sys.count; m++) {
    for (let c = 0; c < 3; c++) sys.com[3 * m + c] += h * md.vel[3 * m + c];
    turn(md, m, 0, h / 2); turn(md, m, 1, h / 2); turn(md, m, 2, h); turn(md, m, 1, h / 2); turn(md, m, 0, h / 2);
  }
}

function thermostat(md: RigidDynamics, h: number): void {
  const { sys, rng } = md;
  const kT = KB_KJ_PER_MOL_K * md.temperatureK * KJMOL_IN_AMU_A2_FS2;
  const c = Math.exp(-md.frictionPerFs * h);
  const s = Math.sqrt(1 - c * c);
  for (let m = 0; m < sys.count; m++) {
    for (let k = 0; k < 3; k++) {
      md.vel[3 * m + k] = c * md.vel[3 * m + k] + s * Math.sqrt(kT / sys.mol.totalMass) * rng.normal();
      md.angmom[3 * m + k] = c * md.angmom[3 * m + k] + s * Math.sqrt(kT * sys.mol.inertia[k]) * rng.normal();
    }
  }
}

/** One BAOAB step of length timestepFs. */
export function step(md: RigidDynamics): void {
  const dt = md.timestepFs;
  kick(md, dt / 2);
  drift(md, dt / 2);
  if (md.frictionPerFs > 0) thermostat(md, dt);
  drift(md, dt / 2);
  for (let m = 0; m < md.sys.count; m++) orthonormalise(md.sys.rot, 9 * m);
  md.sites = allSites(md.sys);
  if (md.forces.length !== md.sites.length) md.forces = new Float64Array(md.sites.length);
  md.energy = siteForces(md.table, md.sys, md.sites, md.forces);
  kick(md, dt / 2);
  md.timeFs += dt;
}

/** Kinetic energy (kJ/mol) and the instantaneous temperature from 6 degrees of freedom per molecule. */
export function kinetic(md: RigidDynamics): { energy: number; temperatureK: number } {
  const { sys } = md;
  let e = 0;
  for (let m = 0; m < sys.count; m++) {
    for (let k = 0; k < 3; k++) {
      e += 0.5 * sys.mol.totalMass * md.vel[3 * m + k] ** 2;
      e += (0.5 * md.angmom[3 * m + k] ** 2) / sys.mol.inertia[k];
    }
  }
  e /= KJMOL_IN_AMU_A2_FS2;
  return { energy: e, temperatureK: (2 * e) / (6 * sys.count * KB_KJ_PER_MOL_K) };
}
