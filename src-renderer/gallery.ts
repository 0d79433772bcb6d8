// Development gallery: mounts each visual component with SYNTHETIC data (gallery-data.ts) so it can be looked
// at and screenshotted (scripts/gallery-screenshot.mjs) without a trained model. Not part of the app.
import { mount, type Component } from 'svelte';
import { svgToString, svgToPng } from './components/charts/export-figure.ts';
import ParityChart from './components/charts/ParityChart.svelte';
import CellView from './components/structure/CellView.svelte';
import LearningCurve from './components/charts/LearningCurve.svelte';
import TrajectoryChart from './components/charts/TrajectoryChart.svelte';
import { syntheticParity, figuresOf, syntheticWaterBox, syntheticLearningCurves, syntheticTrajectory } from './gallery-data.ts';

const root = document.getElementById('gallery');
if (!root) throw new Error('gallery.html has no #gallery element');

function section(id: string, heading: string): HTMLElement {
  const s = document.createElement('section');
  s.id = id;
  s.dataset.gallery = id;
  const h = document.createElement('h2');
  h.textContent = `${heading} — synthetic data`;
  s.appendChild(h);
  const body = document.createElement('div');
  s.appendChild(body);
  root!.appendChild(s);
  return body;
}

function show<P extends Record<string, any>>(id: string, heading: string, component: Component<P>, props: NoInfer<P>, dark = false): void {
  const target = section(id, heading);
  if (dark) {
    // the theme variables the components read (the app's dark theme sets its own values)
    const s = target.parentElement as HTMLElement;
    const vars: Record<string, string> = {
      '--pw-fg': '#e3e8ef',
      '--pw-muted': '#9aa5b4',
      '--pw-grid': '#39424f',
      '--pw-bg': '#1a1f27',
      '--pw-panel': '#232a34',
      '--pw-accent': '#4fb0c6',
      '--pw-warn': '#ff6fa8',
      '--pw-group-0': '#5cc0d6',
      '--pw-group-1': '#f0a04b',
      '--pw-group-2': '#b48ade',
    };
    for (const [k, v] of Object.entries(vars)) s.style.setProperty(k, v);
    s.style.background = '#1a1f27';
    s.style.color = '#e3e8ef';
  }
  mount(component, { target, props });
}

const parity = syntheticParity();
const errors = figuresOf(parity.points);
const log = (frame: number) => {
  document.title = `selected frame ${frame}`;
};
show('parity-iso', 'ParityChart, λ=0', ParityChart, {
  points: parity.points,
  groups: parity.groups,
  part: 'iso',
  units: 'Å³',
  errors,
  width: 460,
  figuresPerGroup: true,
  onselect: log,
});
show('parity-aniso', 'ParityChart, λ=2 components', ParityChart, {
  points: parity.points,
  groups: parity.groups,
  part: 'aniso',
  units: 'Å³',
  errors,
  width: 460,
  onselect: log,
});
show('parity-norm', 'ParityChart, λ=2 invariant', ParityChart, {
  points: parity.points,
  groups: parity.groups,
  part: 'aniso',
  anisoMode: 'norm',
  units: 'Å³',
  errors,
  width: 460,
});

const water = syntheticWaterBox();
show('structure-atoms', 'CellView, per atom', CellView, {
  ...water,
  groups: water.groups,
  options: { ellipsoids: 'atom', tensorUnits: 'Å³', tensorLabel: 'local α_CM', epsLabel: 'synthetic values' },
  width: 900,
  height: 560,
});
show('structure-molecules', 'CellView, per molecule, periodic images', CellView, {
  ...water,
  options: { ellipsoids: 'molecule', images: true, tensorUnits: 'Å³', tensorLabel: 'local α_CM', epsLabel: 'synthetic values' },
  width: 900,
  height: 560,
});

show('learning-curve', 'LearningCurve, both routes', LearningCurve, {
  curves: syntheticLearningCurves(),
  units: 'Å³',
  width: 620,
});
show('learning-curve-one', 'LearningCurve, one route, RMSE', LearningCurve, {
  curves: syntheticLearningCurves().slice(0, 1),
  metric: 'rmse',
  units: 'Å³',
  width: 460,
});

show('structure-plain', 'CellView, structure only (no tensors, no ε), skewed cell', CellView, {
  species: water.species,
  positions: water.positions,
  cell: Float64Array.of(9.3, 0, 0, 1.8, 6.1, 0, 0.9, 1.2, 5.9),
  width: 640,
  height: 420,
});
show(
  'parity-dark',
  'ParityChart, dark theme variables',
  ParityChart,
  { points: parity.points, groups: parity.groups, part: 'aniso', units: 'Å³', errors, width: 460 },
  true,
);
show(
  'structure-dark',
  'CellView, dark theme variables',
  CellView,
  { ...water, options: { ellipsoids: 'molecule', tensorUnits: 'Å³', tensorLabel: 'local α_CM', epsLabel: 'synthetic values' }, width: 900, height: 520 },
  true,
);

const traj = syntheticTrajectory();
show('trajectory', 'TrajectoryChart, 20 000 frames', TrajectoryChart, {
  series: traj.labels.map((label, k) => ({ label, values: traj.values[k] })),
  x: traj.time,
  xLabel: 'time (ps)',
  yLabel: 'ε (optical, principal-frame components)',
  title: 'Optical dielectric tensor along the run',
  current: 12000,
  width: 900,
});

// Hook for scripts/gallery-screenshot.mjs: export a section's figure as SVG text and PNG (base64).
async function exportFigure(id: string): Promise<{ svg: string; png: string }> {
  const svg = document.querySelector(`#${id} svg`);
  if (!(svg instanceof SVGSVGElement)) throw new Error(`gallery: no SVG in #${id}`);
  const text = svgToString(svg, '#ffffff');
  const bytes = new Uint8Array(await (await svgToPng(svg, 1.5)).arrayBuffer());
  let bin = '';
  for (let i = 0; i < bytes.length; i += 0x8000) bin += String.fromCharCode(...bytes.subarray(i, i + 0x8000));
  return { svg: text, png: btoa(bin) };
}
(window as unknown as { pwGallery: unknown }).pwGallery = { exportFigure };

// ?large: a 3×3×3 supercell of the synthetic box (972 atoms) for timing redraws (scripts/gallery-screenshot.mjs --perf).
if (location.search.includes('large')) {
  root.replaceChildren();
  const reps = 3;
  const species: string[] = [];
  const pos: number[] = [];
  const tens: number[] = [];
  const groups: number[] = [];
  const c = water.cell;
  const ng = Math.max(...water.groups) + 1;
  let block = 0;
  for (let i = 0; i < reps; i++)
    for (let j = 0; j < reps; j++)
      for (let k = 0; k < reps; k++, block++) {
        water.species.forEach((s, a) => {
          species.push(s);
          for (let m = 0; m < 3; m++) pos.push(water.positions[3 * a + m] + i * c[m] + j * c[3 + m] + k * c[6 + m]);
          for (let m = 0; m < 9; m++) tens.push(water.tensors[9 * a + m]);
          groups.push(water.groups[a] + block * ng);
        });
      }
  const big = Float64Array.from(c, (v) => v * reps);
  show('structure-large', `CellView, ${species.length} atoms`, CellView, {
    species,
    positions: Float64Array.from(pos),
    cell: big,
    tensors: Float64Array.from(tens),
    groups: Int32Array.from(groups),
    frameEps: water.frameEps,
    options: { ellipsoids: 'atom', tensorUnits: 'Å³' },
    width: 900,
    height: 600,
  });
}
