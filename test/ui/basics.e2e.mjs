// The frame of the window: keyboard navigation, a broken file's error in plain words (file, line, frame),
// large text and the dark theme. Leaves the session empty for the workflow test.
import assert from 'node:assert/strict';

export const tests = [
  {
    name: 'switches views from the keyboard',
    async run({ page, host }) {
      await page.goto(host.url);
      await page.waitForSelector('main[data-current-view=data]');
      await page.keyboard.press('Alt+3');
      await page.waitForSelector('main[data-current-view=checks]');
      await page.keyboard.press('Alt+7');
      await page.waitForSelector('main[data-current-view=export]');
      // The rail is reachable with Tab and Enter.
      await page.focus('nav [data-view=model]');
      await page.keyboard.press('Enter');
      await page.waitForSelector('main[data-current-view=model]');
      await page.keyboard.press('Alt+1');
      await page.waitForSelector('main[data-current-view=data]');
    },
  },
  {
    name: 'shows a broken file’s error with its file, line and frame',
    async run({ page }) {
      // Frame 1 (0-based) says 2 atoms but its second atom line has only two coordinates: line 7 of the file.
      const text = ['1', 'Lattice="5 0 0 0 5 0 0 0 5"', 'O 0 0 0', '2', 'Lattice="5 0 0 0 5 0 0 0 5"', 'O 0 0 0', 'H 1 0', ''].join('\n');
      const [chooser] = await Promise.all([page.waitForEvent('filechooser'), page.click('text=Open files…')]);
      await chooser.setFiles({ name: 'broken.xyz', mimeType: 'text/plain', buffer: Buffer.from(text) });
      await page.waitForSelector('[data-error]');
      const shown = await page.textContent('[data-error]');
      assert.match(shown, /Could not open the file/);
      assert.match(shown, /Where: broken\.xyz, line 7, frame 1/);
      await page.click('[data-error] button');
      assert.equal(await page.locator('[data-error]').count(), 0);
      assert.equal(await page.locator('[data-dataset]').count(), 0, 'nothing was opened');
    },
  },
  {
    name: 'large text and the dark theme apply to the whole window',
    async run({ page }) {
      const size = () => page.evaluate(() => getComputedStyle(document.documentElement).fontSize);
      assert.equal(await size(), '15px');
      await page.click('text=Large text');
      assert.equal(await size(), '21px');
      await page.click('text=Dark');
      assert.equal(await page.getAttribute('html', 'data-theme'), 'dark');
      const bg = await page.evaluate(() => getComputedStyle(document.body).backgroundColor);
      assert.equal(bg, 'rgb(18, 23, 30)');
      await page.click('text=Large text');
      await page.click('text=Dark');
      assert.equal(await size(), '15px');
    },
  },
];
