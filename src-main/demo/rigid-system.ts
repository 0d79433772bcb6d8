// A box of identical rigid molecules: centres of mass, orientations (body → lab rotation matrices) and the
// site–site Lennard-Jones interaction with a cutoff and minimum image in an orthorhombic box. Shared by the
// Monte Carlo sampler, the rigid-body dynamics and the crystal builder of the demo scenario.
import type { Frame } from '../core/geometry/frame.ts';
import type { MoleculeDef } from './scenario.ts';

export interface RigidBody {
  /** Site positions in the principal-axis body frame (Å), 3 per site, centre of mass at the origin. */
  body: Float64Array;
  masses: Float64Array;
  totalMass: number;
  /** Principal moments of inertia (amu Å²) about the body x, y, z axes. */
  inertia: [number, number, number];
  elements: string[];
}

/** Centre the molecule on its centre of mass and check that the given frame is a principal-axis frame. */
export function rigidBody(def: MoleculeDef): RigidBody {
  const n = def.sites.length;
  const masses = Float64Array.from(def.sites, (s) => s.mass);
  const totalMass = masses.reduce((a, b) => a + b, 0);
  const com = [0, 0, 0];
  for (let i = 0; i < n; i++) for (let c = 0; c < 3; c++) com[c] += (masses[i] * def.geometry[3 * i + c]) / totalMass;
  const body = new Float64Array(3 * n);
  for (let i = 0; i < n; i++) for (let c = 0; c < 3; c++) body[3 * i + c] = def.geometry[3 * i + c] - com[c];
  const I = new Float64Array(9);
  for (let i = 0; i < n; i++) {
    const [x, y, z] = [body[3 * i], body[3 * i + 1], body[3 * i + 2]];
    const m = masses[i];
    I[0] += m * (y * y + z * z); I[4] += m * (x * x + z * z); I[8] += m * (x * x + y * y);
    I[1] -= m * x * y; I[2] -= m * x * z; I[5] -= m * y * z;
  }
  const scale = I[0] + I[4] + I[8];
  if (Math.abs(I[1]) + Math.abs(I[2]) + Math.abs(I[5]) > 1e-9 * scale) {
    throw new Error(`molecule ${def.name}: the given frame is not a principal-axis frame (give a symmetric geometry)`);
  }
  return { body, masses, totalMass, inertia: [I[0], I[4], I[8]], elements: def.sites.map((s) => s.element) };
}

export interface RigidSystem {
  mol: RigidBody;
  /** Orthorhombic box edges (Å). */
  box: [number, number, number];
  count: number;
  /** Centres of mass, 3 per molecule. */
  com: Float64Array;
  /** Rotation matrices (body → lab), 9 per molecule, row-major. */
  rot: Float64Array;
}

/** Lab-frame site positions of molecule m into out (3 per site) at offset. */
export function sitePositions(sys: RigidSystem, m: number, out: Float64Array, at = 0, com = sys.com, rot = sys.rot): void {
  const b = sys.mol.body;
  const ns = sys.mol.masses.length;
  const r = 9 * m;
  for (let s = 0; s < ns; s++) {
    const x = b[3 * s], y = b[3 * s + 1], z = b[3 * s + 2];
    out[at + 3 * s] = com[3 * m] + rot[r] * x + rot[r + 1] * y + rot[r + 2] * z;
    out[at + 3 * s + 1] = com[3 * m + 1] + rot[r + 3] * x + rot[r + 4] * y + rot[r + 5] * z;
    out[at + 3 * s + 2] = com[3 * m + 2] + rot[r + 6] * x + rot[r + 7] * y + rot[r + 8] * z;
  }
}

/** Site–site Lennard-Jones tables with Lorentz–Berthelot mixing, truncated and shifted at the cutoff. */
export interface PairTable {
  sites: number;
  sigma2: Float64Array;
  fourEps: Float64Array;
  shift: Float64Array;
  cutoff2: number;
}

export function pairTable(def: MoleculeDef, cutoff: number): PairTable {
  const n = def.sites.length;
  const sigma2 = new Float64Array(n * n), fourEps = new Float64Array(n * n), shift = new Float64Array(n * n);
  for (let a = 0; a < n; a++) {
    for (let b = 0; b < n; b++) {
      const s = 0.5 * (def.sites[a].sigma + def.sites[b].sigma);
      const e = Math.sqrt(def.sites[a].epsilon * def.sites[b].epsilon);
      sigma2[a * n + b] = s * s;
      fourEps[a * n + b] = 4 * e;
      const q = (s / cutoff) ** 6;
      shift[a * n + b] = 4 * e * (q * q - q);
    }
  }
  return { sites: n, sigma2, fourEps, shift, cutoff2: cutoff * cutoff };
}

/** Interaction energy (kJ/mol) between the sites si (of one molecule) and sj (of another), minimum image. */
export function pairEnergy(t: PairTable, box: readonly number[], si: Float64Array, ai: number, sj: Float64Array, aj: number): number {
  const n = t.sites;
  let e = 0;
  for (let a = 0; a < n; a++) {
    const xa = si[ai + 3 * a], ya = si[ai + 3 * a + 1], za = si[ai + 3 * a + 2];
    for (let b = 0; b < n; b++) {
      let dx = sj[aj + 3 * b] - xa, dy = sj[aj + 3 * b + 1] - ya, dz = sj[aj + 3 * b + 2] - za;
      dx -= box[0] * Math.round(dx / box[0]);
      dy -= box[1] * Math.round(dy / box[1]);
      dz -= box[2] * Math.round(dz / box[2]);
      const r2 = dx * dx + dy * dy + dz * dz;
      if (r2 >= t.cutoff2) continue;
      const q = t.sigma2[a * n + b] / r2;
      const q3 = q * q * q;
      e += t.fourEps[a * n + b] * (q3 * q3 - q3) - t.shift[a * n + b];
    }
  }
  return e;
}

/** All site positions of the system, 3 per site, molecule by molecule. */
export function allSites(sys: RigidSystem): Float64Array {
  const ns = sys.mol.masses.length;
  const out = new Float64Array(3 * ns * sys.count);
  for (let m = 0; m < sys.count; m++) sitePositions(sys, m, out, 3 * ns * m);
  return out;
}

/** Total energy (kJ/mol). */
export function totalEnergy(t: PairTable, sys: RigidSystem): number {
  const ns = sys.mol.masses.length;
  const sites = allSites(sys);
  let e = 0;
  for (let m = 0; m < sys.count; m++) for (let k = m + 1; k < sys.count; k++) e += pairEnergy(t, sys.box, sites, 3 * ns * m, sites, 3 * ns * k);
  return e;
}

/**
 * Site forces (kJ/mol/Å, 3 per site) and the total energy. Pairs within one molecule are skipped (rigid).
 */
export function siteForces(t: PairTable, sys: RigidSystem, sites: Float64Array, forces: Float64Array): number {
  const n = t.sites;
  const box = sys.box;
  forces.fill(0);
  let e = 0;
  for (let m = 0; m < sys.count; m++) {
    for (let k = m + 1; k < sys.count; k++) {
      for (let a = 0; a < n; a++) {
        const ia = 3 * (m * n + a);
        for (let b = 0; b < n; b++) {
          const jb = 3 * (k * n + b);
          let dx = sites[jb] - sites[ia], dy = sites[jb + 1] - sites[ia + 1], dz = sites[jb + 2] - sites[ia + 2];
          dx -= box[0] * Math.round(dx / box[0]);
          dy -= box[1] * Math.round(dy / box[1]);
          dz -= box[2] * Math.round(dz / box[2]);
          const r2 = dx * dx + dy * dy + dz * dz;
          if (r2 >= t.cutoff2) continue;
          const q = t.sigma2[a * n + b] / r2;
          const q3 = q * q * q;
          const fe = t.fourEps[a * n + b];
          e += fe * (q3 * q3 - q3) - t.shift[a * n + b];
          // F on j = −dU/dr r̂ = fe (12 q⁶ − 6 q³)/r² · d
          const f = (fe * (12 * q3 * q3 - 6 * q3)) / r2;
          forces[jb] += f * dx; forces[jb + 1] += f * dy; forces[jb + 2] += f * dz;
          forces[ia] -= f * dx; forces[ia + 1] -= f * dy; forces[ia + 2] -= f * dz;
        }
      }
    }
  }
  return e;
}

/** The system as a Frame: molecules kept whole (sites at COM + R·body, COM wrapped into the box). */
export function systemFrame(sys: RigidSystem, round = 1e-5): Frame {
  const ns = sys.mol.masses.length;
  const com = Float64Array.from(sys.com);
  for (let m = 0; m < sys.count; m++) for (let c = 0; c < 3; c++) com[3 * m + c] -= sys.box[c] * Math.floor(com[3 * m + c] / sys.box[c]);
  const pos = new Float64Array(3 * ns * sys.count);
  for (let m = 0; m < sys.count; m++) sitePositions(sys, m, pos, 3 * ns * m, com);
  for (let k = 0; k < pos.length; k++) pos[k] = Math.round(pos[k] / round) * round;
  const species: string[] = [];
  const molId = new Int32Array(ns * sys.count);
  for (let m = 0; m < sys.count; m++) for (let s = 0; s < ns; s++) { species.push(sys.mol.elements[s]); molId[m * ns + s] = m; }
  return {
    species,
    positions: pos,
    cell: Float64Array.of(sys.box[0], 0, 0, 0, sys.box[1], 0, 0, 0, sys.box[2]),
    pbc: [true, true, true],
    info: {},
    arrays: { molecule: { kind: 'int', width: 1, data: molId } },
  };
}

/** 3×3 product a·b (row-major). */
export function mul3(a: ArrayLike<number>, ai: number, b: ArrayLike<number>, bi: number, out: Float64Array, oi: number): void {
  for (let r = 0; r < 3; r++) {
    for (let c = 0; c < 3; c++) {
      out[oi + 3 * r + c] = a[ai + 3 * r] * b[bi + c] + a[ai + 3 * r + 1] * b[bi + 3 + c] + a[ai + 3 * r + 2] * b[bi + 6 + c];
    }
  }
}

/** Re-orthonormalise a rotation matrix in place (Gram–Schmidt on rows), against round-off drift. */
export function orthonormalise(r: Float64Array, at: number): void {
  const row = (k: number): number[] => [r[at + 3 * k], r[at + 3 * k + 1], r[at + 3 * k + 2]];
  const norm = (v: number[]): number[] => { const l = Math.hypot(v[0], v[1], v[2]); return v.map((x) => x / l); };
  const x = norm(row(0));
  let y = row(1);
  const d = x[0] * y[0] + x[1] * y[1] + x[2] * y[2];
  y = norm([y[0] - d * x[0], y[1] - d * x[1], y[2] - d * x[2]]);
  const z = [x[1] * y[2] - x[2] * y[1], x[2] * y[0] - x[0] * y[2], x[0] * y[1] - x[1] * y[0]];
  r.set([...x, ...y, ...z], at);
}
