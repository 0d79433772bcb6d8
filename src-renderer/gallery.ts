// Development gallery: mounts each visual component with SYNTHETIC data (gallery-data.ts) so it can be looked
// at and screenshotted (scripts/gallery-screenshot.mjs) without a trained model. Not part of the app.
import { mount, type Component } from 'svelte';
import { svgToString, svgToPng } from './components/charts/export-figure.ts';
import ParityChart from './components/charts/ParityChart.svelte';
import StructureView from './components/structure/StructureView.svelte';
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

function show<P extends Record<string, unknown>>(id: string, heading: string, component: Component<P>, props: P): void {
  mount(component, { target: section(id, heading), props });
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
show('structure-atoms', 'StructureView, per atom', StructureView, {
  ...water,
  groups: water.groups,
  options: { ellipsoids: 'atom', tensorUnits: 'Å³', tensorLabel: 'local α_CM', epsLabel: 'synthetic values' },
  width: 900,
  height: 560,
});
show('structure-molecules', 'StructureView, per molecule, periodic images', StructureView, {
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
  const bytes = new Uint8Array(await (await svgToPng(svg, 1)).arrayBuffer());
  let bin = '';
  for (let i = 0; i < bytes.length; i += 0x8000) bin += String.fromCharCode(...bytes.subarray(i, i + 0x8000));
  return { svg: text, png: btoa(bin) };
}
(window as unknown as { pwGallery: unknown }).pwGallery = { exportFigure };
