// Molecules and clusters in the window: clusters of the invented demo molecule cut from the demo liquid and
// labelled by its dipole model in vacuum (demo/clusters.ts), opened as a file without cells, trained as
// isolated polarisabilities (alpha-mol), checked on α, predicted as α — no ε, n or Δn, which a lone molecule does
// not have — and drawn with their local ellipsoids and no cell. Set POLARWEAVE_UI_SHOTS to a folder to keep
// screenshots of the views. Leaves the session without data sets for the next test file.
import assert from 'node:assert/strict';
import { join } from 'node:path';
import { tsImport } from 'tsx/esm/api';
import { sessionOf } from './session-of.mjs';

const KEEP = process.env.POLARWEAVE_UI_SHOTS;

async function go(page, view) {
  await page.click(`nav [data-view=${view}]`);
  await page.waitForSelector(`main[data-current-view=${view}]`);
}

async function shot(page, name) {
  if (KEEP) await page.screenshot({ path: join(KEEP, `clusters-${name}.png`), fullPage: true });
}

async function clustersFile(root) {
  const { readAllStructures } = await tsImport('../../src-main/io/read-structures.ts', import.meta.url);
  const { formatExtxyzFrame } = await tsImport('../../src-main/io/extxyz.ts', import.meta.url);
  const { demoClusters, CLUSTER_KEY } = await tsImport('../../src-main/demo/clusters.ts', import.meta.url);
  const demoDir = process.env.POLARWEAVE_DEMO_DIR ?? join(root, 'resources/demo');
  const liquid = (await readAllStructures(join(demoDir, 'liquid.extxyz.gz'))).filter((_, i) => i % 40 === 0);
  const clusters = demoClusters(liquid.slice(0, 3), { sizes: [1, 2, 3, 4], perSize: 3, seed: 3 });
  return { text: clusters.map(formatExtxyzFrame).join(''), mixed: [...liquid.slice(3, 6), ...clusters].map(formatExtxyzFrame).join(''), key: CLUSTER_KEY };
}

export const tests = [
  {
    name: 'opens clusters without cells and trains their polarisability',
    async run({ page, host, root, state }) {
      const { text, mixed, key } = await clustersFile(root);
      state.key = key;
      state.mixed = mixed;
      await page.goto(host.url);
      await page.waitForSelector('main[data-current-view=data]');
      const [chooser] = await Promise.all([page.waitForEvent('filechooser'), page.click('text=Open files…')]);
      await chooser.setFiles({ name: 'clusters.extxyz', mimeType: 'text/plain', buffer: Buffer.from(text) });
      await page.waitForSelector('[data-dataset="clusters.extxyz"]');
      await go(page, 'model');
      await page.selectOption('[data-field=dataset]', { label: 'clusters.extxyz (12 frames)' });
      // every frame lacks a cell: the values are a molecule's polarisability, learnt through Clausius–Mossotti only
      await page.waitForSelector('[data-field=isolated-kind]');
      assert.equal(await page.isChecked('[data-kind=alpha-mol]'), true);
      assert.equal(await page.isDisabled('[data-route=direct]'), true);
      await page.fill('[data-setting=radialFunctions]', '4');
      await page.fill('[data-setting=angularOrder]', '3');
      await page.fill('[data-field=folds]', '3');
      await page.selectOption('[data-field=holdout]', '5');
      await page.click('[data-action=train]');
      await page.waitForSelector('[data-section=cv-results]', { timeout: 300_000 });
      await page.waitForSelector('[data-job-state]', { state: 'detached', timeout: 120_000 });
      const results = (await page.textContent('[data-section=cv-results]')).replace(/\s+/g, ' ');
      assert.match(results, /Compared on α of the molecules or clusters in vacuum \(Å³\)/);
      await shot(page, 'model');
    },
  },
  {
    name: 'checks the model on α, with the figures of the engine',
    async run({ page, host, state }) {
      await go(page, 'checks');
      const model = (await (await sessionOf(page, host)).getState()).models.at(-1);
      state.model = model;
      assert.equal(model.report.target, 'alpha-mol (Å³)');
      assert.match(await page.textContent('[data-section=verdict]'), /on α /);
      const texts = await page.$$eval('[data-chart=parity-iso] svg text', (ts) => ts.map((t) => t.textContent));
      const line = texts.find((t) => /^RMSE /.test(t));
      assert.ok(line, `no RMSE on the chart: ${texts.join(' | ')}`);
      assert.equal(Number(line.replace(/^RMSE /, '').split(' ')[0]), Number(model.report.errors.rmseIso.toPrecision(3)));
      assert.ok(texts.some((t) => /Å³/.test(t)), 'the chart names the unit Å³');
      await shot(page, 'checks');
    },
  },
  {
    name: 'draws a cluster with its local ellipsoids and no cell, and gives α instead of ε',
    async run({ page }) {
      await go(page, 'structure');
      await page.waitForSelector('[data-section=structure-picture] [data-item^="e:"]', { timeout: 60_000 });
      assert.ok((await page.locator('[data-section=structure-picture] [data-item^="e:"]').count()) > 0);
      assert.match(await page.textContent('[data-field=structure-alpha]'), /^α iso \d+(\.\d+)? ± \d/);
      assert.match(await page.textContent('[data-field=structure-no-eps]'), /ε, n and Δn are not defined for a lone molecule or cluster/);
      assert.equal(await page.locator('[data-field=structure-errorbars]').count(), 0, 'no ε line for a cluster');
      await shot(page, 'structure');
    },
  },
  {
    name: 'predicts the clusters in Transfer: α with error bars, ε and n marked not defined',
    async run({ page, host, state }) {
      await go(page, 'transfer');
      await page.selectOption('[data-field=transfer-dataset]', { label: 'clusters.extxyz (12 frames)' });
      await page.click('[data-action=predict]');
      await page.waitForSelector('[data-table=transfer-isolated]', { timeout: 120_000 });
      assert.equal(await page.locator('[data-table=transfer-isolated] tbody tr').count(), 12);
      assert.equal(await page.locator('[data-table=transfer]').count(), 0, 'no ε table for clusters');
      assert.match(await page.textContent('[data-field=isolated-note]'), /ε, n and Δn are not defined for a lone molecule/);
      const shown = await page.locator('[data-table=transfer-isolated] [data-figure=alpha-iso]').first().textContent();
      const service = await sessionOf(page, host);
      const pred = await service.getPrediction({ predictionId: (await service.getState()).predictions.at(-1).id });
      const f0 = pred.frames[0];
      assert.equal(f0.isolated, true);
      const iso = (f0.alphaMol[0] + f0.alphaMol[4] + f0.alphaMol[8]) / 3;
      // the table's α iso is the prediction's, to the digits its error bar justifies
      const [value] = shown.split(' ± ');
      assert.ok(Math.abs(Number(value) - iso) <= 0.5 * 10 ** -((value.split('.')[1] ?? '').length) + 1e-12, `shown ${shown}, predicted ${iso}`);
      state.model = null;
      await shot(page, 'transfer');
      // leave the session without data sets
      await go(page, 'data');
      await page.click('[aria-label="Close clusters.extxyz"]');
      await page.waitForSelector('[data-empty=data]');
    },
  },
  {
    name: 'a set mixing periodic frames and clusters asks for the clusters\' key',
    async run({ page, state }) {
      const [chooser] = await Promise.all([page.waitForEvent('filechooser'), page.click('text=Open files…')]);
      await chooser.setFiles({ name: 'mixed.extxyz', mimeType: 'text/plain', buffer: Buffer.from(state.mixed) });
      await page.waitForSelector('[data-dataset="mixed.extxyz"]');
      await go(page, 'model');
      await page.selectOption('[data-field=dataset]', { label: 'mixed.extxyz (15 frames)' });
      await page.waitForSelector('[data-field=mixed-note]');
      assert.match(await page.textContent('[data-field=mixed-note]'), /^12 of the 15 frames have no periodic cell/);
      assert.equal(await page.inputValue('[data-field=tensor]'), 'eps_ref');
      assert.equal(await page.inputValue('[data-field=isolated-tensor]'), state.key);
      assert.equal(await page.isDisabled('[data-route=direct]'), true);
      await shot(page, 'model-mixed');
      await go(page, 'data');
      await page.click('[aria-label="Close mixed.extxyz"]');
      await page.waitForSelector('[data-empty=data]');
    },
  },
];
