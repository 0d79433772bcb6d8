// Tests of the demo scenario's samplers: the rigid-body dynamics conserves energy without the thermostat
// (a symplectic integrator must), the thermostat holds the temperature, Monte Carlo keeps molecules rigid, the
// site forces are the gradient of the energy, and a small generated set carries consistent reference tensors.
import { describe, expect, it } from 'vitest';
import { demoMolecule, LJ_CUTOFF } from '../../src-main/demo/scenario.ts';
import { allSites, pairTable, rigidBody, siteForces, systemFrame, totalEnergy } from '../../src-main/demo/rigid-system.ts';
import { latticeStart } from '../../src-main/demo/crystal.ts';
import { equilibrate, makeMonteCarlo } from '../../src-main/demo/monte-carlo.ts';
import { kinetic, makeDynamics, step } from '../../src-main/demo/rigid-md.ts';
import { generateDemo } from '../../src-main/demo/generate.ts';
import { makeRng } from '../../src-main/core/numerics/random.ts';
import { randomRotation } from '../../src-main/core/descriptors/wigner.ts';
import { cellVolume } from '../../src-main/core/geometry/cell.ts';

const mol = rigidBody(demoMolecule);
const table = pairTable(demoMolecule, LJ_CUTOFF);

function liquidBox(seed: number) {
  const rng = makeRng(seed);
  const sys = latticeStart(mol, 32, 118, () => randomRotation(rng));
  const mc = makeMonteCarlo(sys, table, 270, rng);
  equilibrate(mc, allSites(sys), 60);
  return { sys, rng };
}

describe('demo samplers', () => {
  it('site forces are minus the gradient of the energy (central differences)', () => {
    const { sys } = liquidBox(1);
    const sites = allSites(sys);
    const forces = new Float64Array(sites.length);
    siteForces(table, sys, sites, forces);
    // Move molecule 3 rigidly along x: dE/dx = −(net force on its sites along x).
    const h = 1e-5;
    const shifted = (d: number) => { const s = { ...sys, com: Float64Array.from(sys.com) }; s.com[9] += d; return totalEnergy(table, s); };
    const numeric = -(shifted(h) - shifted(-h)) / (2 * h);
    let net = 0;
    for (let s = 0; s < 4; s++) net += forces[3 * (3 * 4 + s)];
    expect(Math.abs(numeric - net)).toBeLessThan(1e-5 * Math.max(1, Math.abs(net)));
  });

  it('rigid-body dynamics without friction conserves the total energy (symplectic splitting)', () => {
    const { sys } = liquidBox(2);
    const md = makeDynamics(sys, table, 270, 1, 0, makeRng(3));
    const total = () => md.energy + kinetic(md).energy;
    const e0 = total();
    const k0 = kinetic(md).energy;
    let worst = 0;
    for (let k = 0; k < 200; k++) { step(md); worst = Math.max(worst, Math.abs(total() - e0)); }
    // Energy error of a second-order symplectic scheme stays bounded and small; 1e-3 of the kinetic energy
    // at 1 fs (common practice, no source).
    expect(worst).toBeLessThan(1e-3 * k0);
    // and the molecules really moved (the test is not trivially passed)
    expect(Math.abs(md.energy - (e0 - k0))).toBeGreaterThan(1e-3);
  });

  it('keeps molecules rigid through Monte Carlo and dynamics', () => {
    const { sys } = liquidBox(4);
    const md = makeDynamics(sys, table, 270, 2, 0.01, makeRng(5));
    for (let k = 0; k < 50; k++) step(md);
    const f = systemFrame(sys, 1e-9);
    for (let m = 0; m < sys.count; m++) {
      const p = (s: number) => [0, 1, 2].map((c) => f.positions[3 * (4 * m + s) + c]);
      const d = (a: number[], b: number[]) => Math.hypot(a[0] - b[0], a[1] - b[1], a[2] - b[2]);
      expect(d(p(0), p(1))).toBeCloseTo(1.32, 8);
      expect(d(p(0), p(2))).toBeCloseTo(1.76, 8);
      expect(d(p(0), p(3))).toBeCloseTo(1.76, 8);
    }
  });

  it('the Langevin thermostat holds the kinetic temperature near its target', () => {
    const { sys } = liquidBox(6);
    const md = makeDynamics(sys, table, 270, 2, 0.02, makeRng(7));
    for (let k = 0; k < 300; k++) step(md);
    let t = 0;
    const n = 400;
    for (let k = 0; k < n; k++) { step(md); t += kinetic(md).temperatureK; }
    // 32 molecules, 192 degrees of freedom: the mean over 400 correlated steps is within ~10 % (common practice).
    expect(t / n).toBeGreaterThan(240);
    expect(t / n).toBeLessThan(300);
  });

  it('a reduced generated set carries provenance and consistent reference tensors', () => {
    const d = generateDemo({ scale: 0.015, trajectoryReferences: false });
    expect(d.liquid.length).toBe(3);
    expect(d.crystal.length).toBe(2);
    expect(d.trajectory.length).toBeGreaterThanOrEqual(9);
    for (const f of [...d.liquid, ...d.crystal]) {
      expect(String(f.info.data_origin)).toMatch(/INVENTED/);
      const eps = f.info.eps_ref as number[];
      const ac = f.info.alpha_c_ref_A3 as number[];
      const V = cellVolume(f.cell!);
      // ε = I + 4π α_c / V (science notes §2), to the 10 digits stored
      for (let k = 0; k < 9; k++) expect(eps[k]).toBeCloseTo((k % 4 === 0 ? 1 : 0) + (4 * Math.PI * ac[k]) / V, 7);
      expect(eps[0]).toBeGreaterThan(1.3);
    }
    const times = d.trajectory.map((f) => f.info.time_fs as number);
    for (let k = 1; k < times.length; k++) expect(times[k] - times[k - 1]).toBeCloseTo(4, 9);
    expect(d.trajectory[0].info.timestep_fs).toBe(2);
    // The crystal is optically anisotropic: ε differs along the axes by more than the liquid's noise.
    const c = d.crystal[0].info.eps_ref as number[];
    expect(Math.max(c[0], c[4], c[8]) - Math.min(c[0], c[4], c[8])).toBeGreaterThan(0.1);
  });
});
