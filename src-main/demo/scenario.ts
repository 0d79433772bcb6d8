// Every invented parameter of the demo scenario in one place: the made-up rigid molecule, its force field, its
// point polarisabilities, the state points and the seeds. Nothing here describes a real substance: the element
// symbols only label the sites so that files read naturally. resources/demo/PROVENANCE.md repeats these values.
import type { DipoleModel } from '../core/dielectric/dipole-model.ts';

export interface Site {
  element: string;
  /** Mass (amu) — the standard atomic weight of the label element, used only for the dynamics. */
  mass: number;
  /** Lennard-Jones σ (Å) and ε (kJ/mol) of the site (invented). */
  sigma: number;
  epsilon: number;
}

export interface MoleculeDef {
  name: string;
  sites: Site[];
  /** Site positions in a molecule-fixed frame (Å), 3 per site, before centring on the centre of mass. */
  geometry: number[];
}

/** A planar, Y-shaped four-site molecule "BNCl2" (invented: bond lengths, angle and all parameters made up). */
const BN = 1.32; // Å, centre to the single arm
const BCL = 1.76; // Å, centre to each of the two twin arms
const ARM_ANGLE = (121 * Math.PI) / 180; // angle between the single arm and each twin arm
export const demoMolecule: MoleculeDef = {
  name: 'BNCl2 (invented)',
  sites: [
    { element: 'B', mass: 10.81, sigma: 3.3, epsilon: 0.25 },
    { element: 'N', mass: 14.007, sigma: 3.25, epsilon: 0.45 },
    { element: 'Cl', mass: 35.45, sigma: 3.45, epsilon: 0.8 },
    { element: 'Cl', mass: 35.45, sigma: 3.45, epsilon: 0.8 },
  ],
  geometry: [
    0, 0, 0,
    BN, 0, 0,
    BCL * Math.cos(ARM_ANGLE), BCL * Math.sin(ARM_ANGLE), 0,
    BCL * Math.cos(ARM_ANGLE), -BCL * Math.sin(ARM_ANGLE), 0,
  ],
};

/** Point polarisabilities (Å³) and Thole parameter of the reference dipole model (invented). */
export const demoDipoleModel: DipoleModel = {
  polarisabilities: { B: 1.1, N: 1.05, Cl: 2.3 },
  thole: 0.45,
};

/** Lennard-Jones cutoff (Å) for every sampler; energies are shifted to zero at the cutoff. */
export const LJ_CUTOFF = 7.5;

export interface LiquidStatePoint {
  label: string;
  temperatureK: number;
  /** Volume per molecule (Å³). */
  volumePerMolecule: number;
  molecules: number;
  frames: number;
  seed: number;
}

export const liquidStatePoints: LiquidStatePoint[] = [
  { label: 'liquid-A', temperatureK: 220, volumePerMolecule: 108, molecules: 64, frames: 80, seed: 4101 },
  { label: 'liquid-B', temperatureK: 270, volumePerMolecule: 118, molecules: 64, frames: 80, seed: 4102 },
  { label: 'liquid-C', temperatureK: 330, volumePerMolecule: 130, molecules: 64, frames: 80, seed: 4103 },
];

/** Monte Carlo sweeps (one trial move per molecule each) before the first stored frame, and between frames. */
export const MC_EQUILIBRATION_SWEEPS = 1000;
export const MC_SWEEPS_BETWEEN_FRAMES = 20;
export const CRYSTAL_EQUILIBRATION_SWEEPS = 300;

export interface CrystalStatePoint {
  label: string;
  temperatureK: number;
  frames: number;
  seed: number;
}

export const crystalStatePoints: CrystalStatePoint[] = [
  { label: 'crystal-60K', temperatureK: 60, frames: 30, seed: 4201 },
  { label: 'crystal-120K', temperatureK: 120, frames: 30, seed: 4202 },
];

/** Start of the lattice-energy minimisation of the crystal (Å, rad); see crystal.ts. */
export const CRYSTAL_START = { a: 5.5, b: 10.5, c: 6.4, theta: 0.2, flip: 0 };

export const trajectorySettings = {
  label: 'liquid-B-md',
  temperatureK: 270,
  volumePerMolecule: 118,
  molecules: 32,
  /** Integration time step (fs). */
  timestepFs: 2,
  /** Steps between stored frames. */
  stride: 2,
  frames: 600,
  /** Monte Carlo sweeps, then dynamics steps, before the first stored frame. */
  equilibrationSweeps: 600,
  equilibrationSteps: 3000,
  /** Langevin friction (1/fs) while equilibrating: strong, to reach the temperature quickly. */
  equilibrationFrictionPerFs: 0.01,
  /** Langevin friction (1/fs) for the stored frames: weak, so the dynamics stays close to Newtonian. */
  frictionPerFs: 0.0005,
  seed: 4301,
};

/** Accuracy of the reference tensors: Ewald tails and conjugate-gradient residual. */
export const REFERENCE_ACCURACY = { accuracy: 1e-6, tolerance: 1e-8 };

export const PROVENANCE_NOTE = 'INVENTED demo data: invented molecule and force field, sampled by the polarweave demo generator; reference tensors from its interacting point-dipole model';
