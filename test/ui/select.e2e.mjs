// The Data view's "Choose frames for DFT": the real DFT water frames (test/fixtures) opened, 3 frames chosen by
// diversity with a CP2K template made from the real fixture input; the job runs in the worker with progress, the
// report lists 3 frames, the chosen frames open as a data set, and one filled input per frame is offered.
// Leaves the session empty for the next test file.
import assert from 'node:assert/strict';
import { readFileSync } from 'node:fs';
import { fileURLToPath } from 'node:url';

const water = readFileSync(fileURLToPath(new URL('../fixtures/water-dft-sample.extxyz', import.meta.url)));
const inp = readFileSync(fileURLToPath(new URL('../fixtures/dft/cp2k/water-c.inp', import.meta.url)), 'utf8');
const coord = inp.slice(inp.indexOf('&COORD\n') + 7, inp.indexOf('    &END COORD'));
const template = inp.replace('      ABC 6.21 6.21 6.21', '      A {{cell_a}}\n      B {{cell_b}}\n      C {{cell_c}}').replace(coord, '      {{atoms}}\n');

export const tests = [
  {
    name: 'chooses frames for DFT and offers the chosen frames and the filled inputs',
    async run({ page, host }) {
      await page.goto(host.url);
      await page.waitForSelector('main[data-current-view=data]');
      const [chooser] = await Promise.all([page.waitForEvent('filechooser'), page.click('text=Open files…')]);
      await chooser.setFiles({ name: 'water.extxyz', mimeType: 'text/plain', buffer: water });
      await page.waitForSelector('[data-action=choose-frames]');
      await page.click('[data-action=choose-frames]');
      await page.waitForSelector('[data-panel=choose-frames]');
      // an emptied required field is named and the run held back; an emptied optional one takes its default
      await page.fill('[data-field=count]', '');
      assert.match(await page.textContent('[data-problem=choose-frames]'), /Frames to choose: give a whole number/);
      assert.equal(await page.isDisabled('[data-action=choose-frames-run]'), true);
      await page.fill('[data-field=count]', '3');
      await page.fill('[data-field=min-gap]', '');
      assert.equal(await page.locator('[data-problem=choose-frames]').count(), 0);
      const [tpl] = await Promise.all([page.waitForEvent('filechooser'), page.click('[data-action=pick-template]')]);
      await tpl.setFiles({ name: 'water.inp', mimeType: 'text/plain', buffer: Buffer.from(template) });
      await page.waitForSelector('[data-action=pick-template]:has-text("water.inp")');
      await page.click('[data-action=choose-frames-run]');
      await page.waitForSelector('[data-report=selection]', { timeout: 60_000 });
      const report = (await page.textContent('[data-report=selection]')).replace(/\s+/g, ' ');
      assert.match(report, /chose 3 of 3 frames asked for from water\.extxyz, by farthest-point sampling/);
      assert.equal(await page.locator('[data-table=chosen] tbody tr').count(), 3);
      assert.equal(await page.locator('[data-input]').count(), 3);
      assert.match(await page.getAttribute('[data-input]', 'data-input'), /^water-frame\d\.inp$/);
      assert.match(await page.textContent('[data-panel=choose-frames]'), /Opened as water-chosen\.extxyz/);
      // leave the session as it was
      await page.click('[aria-label="Close choosing frames"]');
      await page.click('[aria-label="Close water-chosen.extxyz"]');
      await page.click('[aria-label="Close water.extxyz"]');
      await page.waitForSelector('[data-empty=data]');
    },
  },
];
