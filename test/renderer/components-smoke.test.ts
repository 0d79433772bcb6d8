// Smoke test of the Svelte components: each is compiled for the server with the same Svelte plugin setup as the
// app (through vite's SSR loader) and rendered to HTML with synthetic props. This checks that the components
// compile, that their markup carries the expected pieces (labels with units, the figures, one dot per point),
// without a browser; interaction is left to the browser tests.
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { createServer, type ViteDevServer } from 'vite';
import { svelte, vitePreprocess } from '@sveltejs/vite-plugin-svelte';
import { join } from 'node:path';
import type { ParityPoint, ErrorFigures } from '../../src-main/core/learning/model-types.ts';

const root = join(import.meta.dirname, '../..');
let server: ViteDevServer;
type Render = (component: unknown, options: { props: Record<string, unknown> }) => { body: string };
let render: Render;

/** Rendered markup without Svelte's hydration comments, so text can be matched. */
function html(component: unknown, props: Record<string, unknown>): string {
  return render(component, { props }).body.replace(/<!--.*?-->/g, '');
}

async function load(path: string): Promise<unknown> {
  const mod = (await server.ssrLoadModule(join(root, path))) as { default: unknown };
  return mod.default;
}

beforeAll(async () => {
  server = await createServer({
    root,
    configFile: false,
    logLevel: 'error',
    appType: 'custom',
    server: { middlewareMode: true, hmr: false, watch: null },
    plugins: [svelte({ configFile: false, preprocess: vitePreprocess({ script: true }) })],
  });
  render = ((await server.ssrLoadModule('svelte/server')) as { render: Render }).render;
});
afterAll(async () => {
  await server?.close();
});

const points: ParityPoint[] = Array.from({ length: 7 }, (_, i) => ({
  frame: 10 + i,
  reference: [1 + 0.1 * i, 0.01 * i, -0.02, 0.03, 0, 0.01],
  predicted: [1.02 + 0.1 * i, 0.011 * i, -0.018, 0.031, 0.002, 0.009],
}));
const errors: ErrorFigures = { rmseIso: 0.0214, rmseAniso: 0.0012, percentIso: 9.9, percentAniso: 11.2, r2Iso: 0.99, r2Aniso: 0.987, count: 7 };

describe('components render on the server', () => {
  it('ParityChart: one dot per frame for tr/3, six for the anisotropic components; figures and units printed', async () => {
    const Parity = await load('src-renderer/components/charts/ParityChart.svelte');
    const iso = html(Parity, { points, part: 'iso', units: 'Å³', errors, width: 400 });
    expect(iso.match(/<circle[^>]*fill-opacity="0.72"/g)).toHaveLength(7);
    expect(iso).toContain('RMSE 0.0214 Å³');
    expect(iso).toContain('R² 0.99');
    expect(iso).toMatch(/reference ε_iso = tr ε \/ 3\s*\(Å³\)/);
    expect(iso).not.toContain('T⁰');
    const an = html(Parity, { points, part: 'aniso', units: 'Å³', errors, width: 400 });
    expect(an.match(/<circle[^>]*fill-opacity="0.72"/g)).toHaveLength(42);
    expect(an).toContain('RMSE 0.0012 Å³');
    expect(an).toMatch(/<title>Anisotropic error: for each frame, the anisotropy/);
    // The other view of the anisotropic part prints the same figure (one measure, not two differing by √5).
    const norm = html(Parity, { points, part: 'aniso', anisoMode: 'norm', units: 'Å³', errors, width: 400 });
    expect(norm.match(/<circle[^>]*fill-opacity="0.72"/g)).toHaveLength(7);
    expect(norm).toContain('RMSE 0.0012 Å³');
    expect(norm).toMatch(/reference anisotropy of ε/);
  }, 60_000);

  it('LearningCurve and TrajectoryChart render their lines and legends', async () => {
    const Curve = await load('src-renderer/components/charts/LearningCurve.svelte');
    const lc = html(Curve, {
      curves: [{ route: 'cm', learningCurve: [10, 20, 40].map((n) => ({ trainSize: n, errors: { ...errors, percentIso: 100 / n, percentAniso: 200 / n } })) }],
      width: 500,
    });
    expect(lc.match(/<circle[^>]*r="4.2"/g)).toHaveLength(3); // isotropic markers, one per training-set size
    expect(lc).toContain('training-set size');
    expect(lc).toContain('isotropic (tr/3)');
    expect(lc).toMatch(/log–log slope −1(?!\d)/);
    const Traj = await load('src-renderer/components/charts/TrajectoryChart.svelte');
    const values = Float64Array.from({ length: 5000 }, (_, i) => 1.8 + 0.01 * Math.sin(i / 30));
    // the running mean comes from the service with the error (the chart computes no statistics)
    let sum = 0;
    const running = values.map((v, i) => (sum += v) / (i + 1));
    const tc = html(Traj, { series: [{ label: 'n₁', values, running, error: 0.001 }], xLabel: 'frame', yLabel: 'refractive index', width: 600 });
    expect(tc).toContain('5000 frames');
    expect(tc).toContain('n₁: 1.8');
    expect(tc).toContain('± 0.001');
  }, 60_000);

  it('CellView: atoms, ellipsoids, legends and the ε panel', async () => {
    const View = await load('src-renderer/components/structure/CellView.svelte');
    const out = html(View, {
        species: ['O', 'H', 'H'],
        positions: [0, 0, 0, 0.76, 0.59, 0, -0.76, 0.59, 0],
        cell: [5, 0, 0, 0, 5, 0, 0, 0, 5],
        tensors: [1, 0, 0, 0, 1.2, 0, 0, 0, 0.9, 0.3, 0, 0, 0, 0.2, 0, 0, 0, 0.2, -0.1, 0, 0, 0, 0.2, 0, 0, 0, 0.3],
        frameEps: [1.7, 0, 0, 0, 1.8, 0, 0, 0, 1.9],
        width: 700,
    });
    expect(out.match(/data-item="a:\d+"/g)).toHaveLength(3);
    expect(out.match(/data-item="e:\d+"/g)).toHaveLength(3);
    expect(out).toContain('n₁ = 1.304'); // √1.7 = 1.3038
    expect(out).toContain('1 of 3 local tensors have a negative principal value');
    expect(out).toContain('stroke-dasharray="4 3"');
    expect(out).not.toContain('data-mark=');
  }, 60_000);

  it('CellView: rings the atoms outside the training data and says how many', async () => {
    const View = await load('src-renderer/components/structure/CellView.svelte');
    const out = html(View, {
      species: ['O', 'H', 'H'],
      positions: [0, 0, 0, 0.76, 0.59, 0, -0.76, 0.59, 0],
      cell: [5, 0, 0, 0, 5, 0, 0, 0, 5],
      tensors: [1, 0, 0, 0, 1.2, 0, 0, 0, 0.9, 0.3, 0, 0, 0, 0.2, 0, 0, 0, 0.2, 0.1, 0, 0, 0, 0.2, 0, 0, 0, 0.3],
      flagged: [false, true, true],
      width: 700,
    });
    expect(out.match(/data-mark="outside:(\d+)"/g)).toEqual(['data-mark="outside:1"', 'data-mark="outside:2"']);
    expect(out).toContain('2 atoms outside the training data (ringed)');
  }, 60_000);
});
