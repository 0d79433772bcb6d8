// `npm run demo:generate`: regenerate the invented demo data in resources/demo (fixed seeds, so the files come
// out the same on every run) and its PROVENANCE.md, and print what was made. Takes a few minutes on 2 cores.
import { mkdirSync, statSync } from 'node:fs';
import { join, resolve } from 'node:path';
import { writeExtxyz } from '../src-main/io/extxyz.ts';
import { writeFileAtomic } from '../src-main/io/atomic.ts';
import { generateDemo } from '../src-main/demo/generate.ts';
import {
  CRYSTAL_EQUILIBRATION_SWEEPS, CRYSTAL_START, crystalStatePoints, demoDipoleModel, demoMolecule, LJ_CUTOFF,
  liquidStatePoints, MC_EQUILIBRATION_SWEEPS, MC_SWEEPS_BETWEEN_FRAMES, REFERENCE_ACCURACY, trajectorySettings,
} from '../src-main/demo/scenario.ts';
import { birefringence, refractiveIndices } from '../src-main/core/dielectric/clausius-mossotti.ts';
import type { Frame } from '../src-main/core/geometry/frame.ts';

const outDir = resolve(process.argv[2] ?? 'resources/demo');
const DEMO_FILES = { liquid: 'liquid.extxyz.gz', crystal: 'crystal.extxyz.gz', trajectory: 'liquid-trajectory.extxyz.gz' };

function epsStats(frames: Frame[]): { min: number; max: number; meanIso: number } {
  let min = Infinity, max = -Infinity, iso = 0, n = 0;
  for (const f of frames) {
    const e = f.info.eps_ref as number[] | undefined;
    if (!e) continue;
    for (const k of [0, 4, 8]) { min = Math.min(min, e[k]); max = Math.max(max, e[k]); }
    iso += (e[0] + e[4] + e[8]) / 3;
    n++;
  }
  return { min, max, meanIso: iso / n };
}

function meanTensor(frames: Frame[], key: string): Float64Array {
  const m = new Float64Array(9);
  for (const f of frames) { const v = f.info[key] as number[]; for (let k = 0; k < 9; k++) m[k] += v[k] / frames.length; }
  return m;
}

const t0 = Date.now();
const cpu0 = process.cpuUsage();
const data = generateDemo({ log: (line) => process.stdout.write(line + '\n') });
const seconds = (Date.now() - t0) / 1000;
const cpu = process.cpuUsage(cpu0);

mkdirSync(outDir, { recursive: true });
const sizes: Record<string, number> = {};
for (const [kind, name] of Object.entries(DEMO_FILES)) {
  const path = join(outDir, name);
  await writeExtxyz(path, data[kind as keyof typeof DEMO_FILES]);
  sizes[name] = statSync(path).size;
}

const crystalMean = meanTensor(data.crystal, 'eps_ref');
const bire = birefringence(crystalMean);
const idx = refractiveIndices(crystalMean);
const stats = { liquid: epsStats(data.liquid), crystal: epsStats(data.crystal), trajectory: epsStats(data.trajectory) };
const report = [
  `frames: liquid ${data.liquid.length} (${data.liquid[0].species.length} atoms), crystal ${data.crystal.length} (${data.crystal[0].species.length} atoms), trajectory ${data.trajectory.length} (${data.trajectory[0].species.length} atoms)`,
  `eps diagonal range: liquid ${stats.liquid.min.toFixed(4)}–${stats.liquid.max.toFixed(4)} (mean isotropic ${stats.liquid.meanIso.toFixed(4)}), crystal ${stats.crystal.min.toFixed(4)}–${stats.crystal.max.toFixed(4)} (mean isotropic ${stats.crystal.meanIso.toFixed(4)})`,
  `crystal mean eps: principal refractive indices ${Array.from(idx.indices, (v) => v.toFixed(4)).join(', ')}; birefringence n_max − n_min = ${bire.delta.toFixed(4)} (${bire.kind})`,
  `sizes: ${Object.entries(sizes).map(([k, v]) => `${k} ${(v / 1e6).toFixed(2)} MB`).join(', ')}`,
  `time: ${seconds.toFixed(0)} s wall, ${((cpu.user + cpu.system) / 1e6).toFixed(0)} s CPU`,
];
process.stdout.write(report.join('\n') + '\n');

const sites = demoMolecule.sites.map((s, i) => `| ${i + 1} | ${s.element} | ${demoMolecule.geometry.slice(3 * i, 3 * i + 3).map((v) => v.toFixed(4)).join(', ')} | ${s.mass} | ${s.sigma} | ${s.epsilon} | ${demoDipoleModel.polarisabilities[s.element]} |`);
const provenance = `# Provenance of the demo data

**The data in this folder is INVENTED.** The molecule, its geometry, its force field, its point polarisabilities
and the Thole parameter are made up for teaching and testing; they do not describe any real substance, and nothing
here comes from a published data set. The element symbols only label the sites so that files read naturally.
Every frame repeats this in its \`data_origin\` key. Predictions made from this data are model estimates of an
invented system.

Made by \`npm run demo:generate\` (scripts/generate-demo.ts → src-main/demo/), with fixed seeds: running it again
gives the same files. This file is written by the same script.

## The molecule "${demoMolecule.name}"
Rigid and planar (C2v); site positions in the molecule's own frame (Å), mass (amu, standard atomic weight of the
label element), Lennard-Jones σ (Å) and ε (kJ/mol), point polarisability (Å³):

| site | element | position | mass | σ | ε | α |
|---|---|---|---|---|---|---|
${sites.join('\n')}

Force field: site–site Lennard-Jones only (Lorentz–Berthelot mixing), truncated and shifted at ${LJ_CUTOFF} Å, minimum
image in orthorhombic boxes; no charges.

## Reference tensors
\`eps_ref\` (optical dielectric tensor, dimensionless), \`alpha_c_ref_A3\` (conducting-boundary cell polarisability,
Å³) and \`alpha_cm_ref_A3\` (Clausius–Mossotti cell polarisability, Å³), each 9 numbers row-major, from the
project's interacting point-dipole model (src-main/core/dielectric/dipole-model.ts): point polarisabilities above, Thole damping
ρ(u) = (3a/4π) e^(−a u³) with a = ${demoDipoleModel.thole}, Ewald sum with the conducting boundary (tail accuracy
${REFERENCE_ACCURACY.accuracy}, induced dipoles converged to a relative residual of ${REFERENCE_ACCURACY.tolerance});
α_CM and ε follow from α_c through the exact Clausius–Mossotti relations. Positions are rounded to 1e−5 Å before the
tensors are computed, so the tensors belong to the stored coordinates.

## Files
| file | what | frames | atoms |
|---|---|---|---|
| ${DEMO_FILES.liquid} | liquid, rigid-molecule Metropolis Monte Carlo (NVT), three state points | ${data.liquid.length} | ${data.liquid[0].species.length} |
| ${DEMO_FILES.crystal} | crystal, Monte Carlo about the relaxed invented lattice, two temperatures | ${data.crystal.length} | ${data.crystal[0].species.length} |
| ${DEMO_FILES.trajectory} | liquid, consecutive rigid-body Langevin dynamics frames | ${data.trajectory.length} | ${data.trajectory[0].species.length} |

Per-atom column \`molecule\`: the molecule each atom belongs to. Per-frame keys: \`phase\`, \`state_point\`,
\`temperature_K\`, \`seed\`, \`sampler\`, \`mc_sweep\` or \`time_fs\`/\`timestep_fs\`/\`frame_interval_fs\`,
\`potential_energy_kJ_per_mol\` (whole cell), \`reference_model\`.

## Liquid state points (Monte Carlo)
${liquidStatePoints.map((p) => `- ${p.label}: T = ${p.temperatureK} K, ${p.volumePerMolecule} Å³ per molecule, ${p.molecules} molecules, seed ${p.seed}; ${MC_EQUILIBRATION_SWEEPS} equilibration sweeps (step sizes tuned to ~40 % acceptance), then a frame every ${MC_SWEEPS_BETWEEN_FRAMES} sweeps`).join('\n')}

## Crystal
Four molecules per orthorhombic cell in flat layers normal to c, AB stacked (the second layer, at height c/2, shifted by a/2),
molecules turned by ±θ about c. Edges and θ from minimising the lattice energy from a = ${CRYSTAL_START.a}, b = ${CRYSTAL_START.b},
c = ${CRYSTAL_START.c} Å, θ = ${CRYSTAL_START.theta}: a = ${data.crystalCell.a.toFixed(4)}, b = ${data.crystalCell.b.toFixed(4)},
c = ${data.crystalCell.c.toFixed(4)} Å, θ = ${data.crystalCell.theta.toFixed(4)} rad (lattice energy ${data.crystalEnergy.toFixed(2)} kJ/mol per molecule;
the molecules end up parallel within each layer). The cell is kept fixed (no thermal expansion).
${crystalStatePoints.map((p) => `- ${p.label}: T = ${p.temperatureK} K, seed ${p.seed}; ${CRYSTAL_EQUILIBRATION_SWEEPS} equilibration sweeps, then a frame every ${MC_SWEEPS_BETWEEN_FRAMES} sweeps`).join('\n')}

## Trajectory
${trajectorySettings.molecules} molecules at T = ${trajectorySettings.temperatureK} K and ${trajectorySettings.volumePerMolecule} Å³ per molecule, seed ${trajectorySettings.seed}:
${trajectorySettings.equilibrationSweeps} Monte Carlo sweeps, ${trajectorySettings.equilibrationSteps} dynamics steps with friction ${trajectorySettings.equilibrationFrictionPerFs} fs⁻¹,
then ${trajectorySettings.frames} frames every ${trajectorySettings.stride} steps of ${trajectorySettings.timestepFs} fs (${trajectorySettings.stride * trajectorySettings.timestepFs} fs apart) with friction
${trajectorySettings.frictionPerFs} fs⁻¹. Integrator: velocity Verlet for the centres, symplectic splitting of the free rotor,
Langevin thermostat in the BAOAB arrangement.

## Observed when generated
${report.filter((l) => !l.startsWith('time:')).map((l) => `- ${l}`).join('\n')}
`;
await writeFileAtomic(join(outDir, 'PROVENANCE.md'), provenance);
process.stdout.write(`wrote ${Object.keys(DEMO_FILES).length} data files and PROVENANCE.md to ${outDir}\n`);
