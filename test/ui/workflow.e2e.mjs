// The whole workflow in the window, against the browser host: load the demo, train a small model, read the
// RMSE off the parity chart, open the ellipsoid view, predict the crystal, export the CSV and compare it with
// `polarweave predict` for the same model and frames.
import assert from 'node:assert/strict';
import { spawnSync } from 'node:child_process';
import { readFileSync, writeFileSync } from 'node:fs';
import { join } from 'node:path';
import { sessionOf } from './session-of.mjs';

const demoDir = (root) => process.env.POLARWEAVE_DEMO_DIR ?? join(root, 'resources/demo');

async function go(page, view) {
  await page.click(`nav [data-view=${view}]`);
  await page.waitForSelector(`main[data-current-view=${view}]`);
}

async function optionValue(select, pattern) {
  const options = await select.locator('option').evaluateAll((os) => os.map((o) => ({ value: o.value, text: o.textContent })));
  const hit = options.find((o) => pattern.test(o.text));
  assert.ok(hit, `no option matching ${pattern} among ${options.map((o) => o.text).join(' | ')}`);
  return hit.value;
}

export const tests = [
  {
    name: 'loads the demo with one click',
    async run({ page, host }) {
      await page.goto(host.url);
      await page.waitForSelector('[data-empty=data]');
      await page.click('[data-action=load-demo]');
      await page.waitForSelector('[data-dataset]');
      const names = await page.$$eval('[data-dataset]', (els) => els.map((e) => e.getAttribute('data-dataset')));
      assert.ok(names.some((n) => /liquid/.test(n)) && names.some((n) => /crystal/.test(n)), `demo data sets: ${names.join(', ')}`);
      assert.ok(Number(await page.textContent('[data-fact=frames]')) > 0);
      const keys = await page.$$eval('[data-table=tensor-keys] tbody tr td:first-child', (tds) => tds.map((t) => t.textContent));
      assert.ok(keys.length > 0, 'the tensor table lists the file’s tensors');
      // The token came in the URL fragment and was taken out of the address bar.
      assert.ok(!page.url().includes('token='), `token left in the URL: ${page.url()}`);
    },
  },
  {
    name: 'trains a small model, with progress and cross-validation results',
    async run({ page, state }) {
      await go(page, 'model');
      const ds = page.locator('[data-field=dataset]');
      await ds.selectOption(await optionValue(ds, /^liquid/));
      await page.click('[data-preset=quick]');
      // The form names the settings in plain words, from the one settings table (no symbols of the maths).
      const names = (await page.locator('.settings .name').allTextContents()).join(' | ');
      for (const label of ['Cutoff radius (Å)', 'Switch width (Å)', 'Density width (Å)', 'Radial functions', 'Angular order', 'Kernel exponent', 'Anchor environments per species', 'Contributing species']) {
        assert.ok(names.includes(label), `no "${label}" in the form: ${names}`);
      }
      assert.doesNotMatch(names, /n_max|l_max|ζ|σ|Centres/);
      // the species split reads as the CLI's --species-split does: a malformed one is named and blocks Train
      assert.ok(names.includes('Split between species'), `no species split in the form: ${names}`);
      await page.fill('[data-setting=speciesSplit]', 'O:0.8');
      assert.match(await page.textContent('[data-field=split-problem]'), /at least two species/);
      assert.equal(await page.isDisabled('[data-action=train]'), true);
      await page.fill('[data-setting=speciesSplit]', '');
      assert.equal(await page.locator('[data-field=split-problem]').count(), 0);
      await page.fill('[data-setting=radialFunctions]', '3');
      await page.fill('[data-setting=angularOrder]', '2');
      await page.fill('[data-setting=anchorEnvironments]', '0');
      await page.fill('[data-field=folds]', '3');
      await page.selectOption('[data-field=holdout]', '0');
      await page.fill('[data-field=max-frames]', '18');
      assert.equal(await page.textContent('[data-count=train]'), '18');
      await page.click('[data-action=train]');
      await page.waitForSelector('[role=progressbar]');
      await page.waitForSelector('[data-section=cv-results]', { timeout: 300_000 });
      // Training is followed by a prediction of the training data (for the structure and trajectory views).
      await page.waitForSelector('[data-job-state]', { state: 'detached', timeout: 120_000 });
      // the table leads with the figure the verdict judges (within state points where there are several)
      state.leadIso = await page.locator('[data-section=cv-results] tbody tr').first().locator('td').nth(1).textContent();
      const pct = await page.textContent('[data-figure=cv-percent-iso]');
      assert.match(pct, /^\d+(\.\d)? %$/);
      state.percentIso = pct;
    },
  },
  {
    name: 'reads the RMSE from the parity chart',
    async run({ page, host, state }) {
      await go(page, 'checks');
      const texts = await page.$$eval('[data-chart=parity-iso] svg text', (ts) => ts.map((t) => t.textContent));
      const line = texts.find((t) => /^RMSE /.test(t));
      assert.ok(line, `no RMSE on the chart: ${texts.join(' | ')}`);
      const shown = Number(line.replace(/^RMSE /, '').split(' ')[0].replace('−', '-'));
      const models = (await (await sessionOf(page, host)).getState()).models;
      const model = models.at(-1);
      state.model = model;
      // The chart prints the engine's cross-validation figure to 3 significant digits.
      assert.equal(shown, Number(model.report.errors.rmseIso.toPrecision(3)));
      const dots = await page.$$eval('[data-chart=parity-iso] svg circle', (cs) => cs.length);
      assert.ok(dots >= model.report.points.length, `${dots} dots for ${model.report.points.length} frames`);
    },
  },
  {
    name: 'opens the ellipsoid view from a worst frame',
    async run({ page, state }) {
      const first = page.locator('[data-worst-frame]').first();
      const frame = await first.getAttribute('data-worst-frame');
      await first.click();
      await page.waitForSelector('main[data-current-view=structure]');
      await page.waitForSelector('[data-section=structure-picture] [data-item^="e:"]', { timeout: 60_000 });
      const ellipsoids = await page.locator('[data-section=structure-picture] [data-item^="e:"]').count();
      assert.ok(ellipsoids > 0);
      assert.equal(await page.inputValue('[data-field=structure-frame]'), frame);
      state.ellipsoids = ellipsoids;
    },
  },
  {
    name: 'predicts the crystal and flags frames outside the training data',
    async run({ page, state }) {
      await go(page, 'transfer');
      const ds = page.locator('[data-field=transfer-dataset]');
      await ds.selectOption(await optionValue(ds, /^crystal/));
      await page.click('[data-action=predict]');
      await page.waitForSelector('[data-section=transfer-result]', { timeout: 120_000 });
      const rows = await page.locator('[data-table=transfer] tbody tr').count();
      assert.ok(rows > 0);
      const heading = await page.textContent('[data-section=transfer-result] h3');
      assert.match(heading, /^crystal/);
      state.crystalRows = rows;
    },
  },
  {
    name: 'rings the atoms outside the training data in a flagged crystal frame, as its table marks them',
    async run({ page }) {
      await page.locator('[data-table=transfer] tbody tr.outside button.link').first().click();
      await page.waitForSelector('main[data-current-view=structure]');
      await page.waitForSelector('[data-section=structure-picture] [data-item^="e:"]', { timeout: 60_000 });
      const rings = await page.locator('[data-section=structure-picture] [data-mark^="outside:"]').count();
      const redRows = await page.locator('[data-table=local] tbody tr.flag').count();
      assert.ok(rings > 0, 'a flagged crystal frame has atoms outside the training data');
      assert.equal(rings, redRows);
      assert.match(await page.textContent('[data-field=outside-legend]'), new RegExp(`^${rings} atoms? outside the training data`));
      await go(page, 'transfer');
    },
  },
  {
    name: 'exports the CSV, the same as `polarweave predict` for the same model and frames',
    async run({ page, host, root, scratch, state }) {
      await go(page, 'export');
      const [download] = await Promise.all([page.waitForEvent('download'), page.click('[data-action=export-csv]')]);
      const ours = join(scratch, 'window.csv');
      await download.saveAs(ours);
      const modelFile = await (await sessionOf(page, host)).exportModel({ modelId: state.model.id });
      const modelPath = join(scratch, 'model.json');
      writeFileSync(modelPath, modelFile.text);
      const cliPath = join(scratch, 'cli.csv');
      const crystal = join(demoDir(root), 'crystal.extxyz.gz');
      const r = spawnSync(process.execPath, [join(root, 'bin/polarweave.mjs'), 'predict', modelPath, crystal, '-o', cliPath], { encoding: 'utf8' });
      assert.equal(r.status, 0, r.stderr);
      // The comment block differs only in its Source, Written and Identity lines (the CLI names its model file and input); header and rows must be identical.
      const body = (t) => t.split('\n').filter((l) => !l.startsWith('#'));
      const comments = (t) => t.split('\n').filter((l) => l.startsWith('#') && !/^# (Source|Written|Identity):/.test(l));
      const a = readFileSync(ours, 'utf8');
      const b = readFileSync(cliPath, 'utf8');
      assert.match(a, /model estimates/);
      assert.deepEqual(body(a), body(b));
      assert.deepEqual(comments(a), comments(b));
      assert.equal(body(a).length - 2, state.crystalRows, 'one CSV row per predicted frame');
    },
  },
  {
    name: 'gives the verdict of `polarweave validate` in Checks, with the learning curve’s caption',
    async run({ page, state }) {
      await go(page, 'checks');
      const text = await page.textContent('[data-field=verdict]');
      // the rule of core/learning/error-figures.ts: good ≤ 10 %, usable ≤ 30 %, poor above (the same function as the CLI)
      const m = text.match(/^(good|usable with care|poor)/);
      assert.ok(m, `no verdict: ${text}`);
      const worst = text.match(/worst error (\d+(\.\d)?) %/);
      if (m[1] === 'poor') assert.ok(Number(worst[1]) > 30, text);
      if (m[1] === 'usable with care') assert.ok(Number(worst[1]) > 10 && Number(worst[1]) <= 30, text);
      // the trajectory has one state point: the verdict says which figures it judged; with several, it judges the
      // error within them (core/learning/state-points.ts, tested there; the screenshot run shows the table)
      assert.match(await page.textContent('[data-section=verdict]'), /on ε (over all frames|within state points)/);
      // the Model view's leading figure is the one the verdict judges
      assert.match(await page.textContent('[data-section=verdict]'), new RegExp(`Isotropic error ${state.leadIso.replace(/[.]/g, '\\.')}`));
      // the Quick look trained without a learning curve; Checks draws it on request, on the model's own frames
      assert.match(await page.textContent('[data-section=learning-curve]'), /Not drawn while training/);
      await page.click('[data-action=draw-curve]');
      await page.waitForSelector('[data-section=learning-curve] [data-field=curve-trend]', { timeout: 300_000 });
      // the learning curve: mean of repeated random splits, and a caption that follows its slope
      assert.match(await page.textContent('[data-section=learning-curve]'), /mean of 3 random splits/);
      assert.match(await page.textContent('[data-field=curve-trend]'), /^(Still falling|Flat|Not falling|Too few)/);
    },
  },
  {
    name: 'asks before a project replaces the session, and keeps it when the answer is no',
    async run({ page, host }) {
      const before = (await (await sessionOf(page, host)).getState()).models.length;
      assert.ok(before > 0);
      let asked = '';
      page.once('dialog', (d) => {
        asked = d.message();
        void d.dismiss();
      });
      let chooserOpened = false;
      const onChooser = () => (chooserOpened = true);
      page.on('filechooser', onChooser);
      await page.click('text=Open project…');
      await page.waitForSelector('text=Nothing was opened; the session is unchanged');
      page.off('filechooser', onChooser);
      assert.match(asked, /replaces everything in this window: .*model/);
      assert.equal(chooserOpened, false, 'no file was asked for after "no"');
      assert.equal((await (await sessionOf(page, host)).getState()).models.length, before, 'the session is unchanged');
      // "yes" goes on to the file choice
      page.once('dialog', (d) => void d.accept());
      const [chooser] = await Promise.all([page.waitForEvent('filechooser'), page.click('text=Open project…')]);
      assert.ok(chooser);
    },
  },
];
