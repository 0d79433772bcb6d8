// Development gallery: mounts each visual component with SYNTHETIC data (gallery-data.ts) so it can be looked
// at and screenshotted (scripts/gallery-screenshot.mjs) without a trained model. Not part of the app.
import { mount, type Component } from 'svelte';
import ParityChart from './components/charts/ParityChart.svelte';
import { syntheticParity, figuresOf } from './gallery-data.ts';

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
