// The interacting point-dipole model on demo-sized cells: wall and CPU time per frame for the conducting
// boundary (what the demo generator computes per frame), at the generator's accuracy and a tight one.
import { cellPolarisability } from '../src-main/core/dielectric/dipole-model.ts';
import { demoDipoleModel, demoMolecule, REFERENCE_ACCURACY } from '../src-main/demo/scenario.ts';
import { rigidBody, systemFrame } from '../src-main/demo/rigid-system.ts';
import { latticeStart } from '../src-main/demo/crystal.ts';
import { makeRng } from '../src-main/core/numerics/random.ts';
import { randomRotation } from '../src-main/core/descriptors/wigner.ts';

export async function run(): Promise<void> {
  const mol = rigidBody(demoMolecule);
  for (const molecules of [32, 64, 100]) {
    const rng = makeRng(molecules);
    const frame = systemFrame(latticeStart(mol, molecules, 118, () => randomRotation(rng)));
    for (const [label, opts] of [['demo accuracy', REFERENCE_ACCURACY], ['tight (1e-10, 1e-11)', { accuracy: 1e-10, tolerance: 1e-11 }]] as const) {
      const reps = 3;
      const c0 = process.cpuUsage();
      const t0 = performance.now();
      let it = 0;
      let e = null;
      for (let k = 0; k < reps; k++) { const r = cellPolarisability(frame, demoDipoleModel, opts); it = r.iterations; e = r.ewald; }
      const wall = (performance.now() - t0) / reps;
      const c = process.cpuUsage(c0);
      console.log(`${4 * molecules} atoms, ${label}: ${wall.toFixed(0)} ms wall, ${((c.user + c.system) / 1000 / reps).toFixed(0)} ms CPU per frame; ` +
        `${it} CG iterations, r_c ${e!.cutoff.toFixed(1)} Å, β ${e!.beta.toFixed(3)} Å⁻¹, k_max ${e!.kmax.toFixed(2)} Å⁻¹ (single thread)`);
    }
  }
}
