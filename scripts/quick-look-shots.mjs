// `node scripts/quick-look-shots.mjs`: the window's "Quick look" on the demo liquid as a new user does it (load
// the demo, the liquid, the Quick look preset, Train; every frame, the default folds and hold-out), timed from
// the click on Train until training and the prediction of the frames used are done. Saves the Model view
// during the run (docs/screenshots/quick-look-model.png: progress while features are computed) and the Checks
// view after it, once its "Draw the learning curve" has run (docs/screenshots/quick-look-checks.png: verdict,
// learning curve with error bars), and prints both wall times. Debian's Chromium against the browser host, as the screenshots script.
import { join } from 'node:path';
import { openBrowserSession } from './browser-session.mjs';

const { host, page, outDir, close } = await openBrowserSession('quick', { width: 1440, height: 1000 });
const shot = async (name) => {
  await page.screenshot({ path: join(outDir, name), fullPage: true });
  console.log(`saved docs/screenshots/${name}`);
};

try {
  await page.goto(host.url);
  await page.waitForSelector('[data-empty=data]');
  await page.click('[data-action=load-demo]');
  await page.waitForSelector('[data-dataset]');
  await page.click('nav [data-view=model]');
  await page.waitForSelector('main[data-current-view=model]');
  const sel = page.locator('[data-field=dataset]');
  const options = await sel.locator('option').evaluateAll((os) => os.map((o) => ({ value: o.value, text: o.textContent })));
  await sel.selectOption(options.find((o) => /^liquid\.extxyz/.test(o.text)).value);
  await page.click('[data-preset=quick]');
  const frames = await page.textContent('[data-count=train]');
  const started = Date.now();
  await page.click('[data-action=train]');
  await page.waitForSelector('[role=progressbar]');
  // the first progress the user sees, and when
  const firstStage = await page.waitForFunction(() => {
    const t = document.querySelector('[role=progressbar]')?.closest('[data-job-state]')?.textContent ?? '';
    return /features|fold|cross-validation/.test(t) ? t.replace(/\s+/g, ' ').trim() : null;
  }, null, { timeout: 600_000, polling: 200 });
  console.log(`first progress after ${((Date.now() - started) / 1000).toFixed(1)} s: ${await firstStage.jsonValue()}`);
  await shot('quick-look-model.png');
  await page.waitForSelector('[data-section=cv-results]', { timeout: 1_800_000 });
  const trained = (Date.now() - started) / 1000;
  await page.waitForSelector('[data-job-state]', { state: 'detached', timeout: 1_800_000 });
  const total = (Date.now() - started) / 1000;
  console.log(`quick look on ${frames} training frames: trained in ${trained.toFixed(0)} s, with the prediction of the frames used ${total.toFixed(0)} s (wall)`);
  await page.click('nav [data-view=checks]');
  await page.waitForSelector('[data-section=verdict]');
  // the Quick look leaves the learning curve out; Checks draws it on request
  const curveStarted = Date.now();
  await page.click('[data-action=draw-curve]');
  await page.waitForSelector('[data-section=learning-curve] [data-field=curve-trend]', { timeout: 1_800_000 });
  await page.waitForSelector('[data-job-state]', { state: 'detached', timeout: 60_000 });
  console.log(`learning curve drawn on request afterwards in ${((Date.now() - curveStarted) / 1000).toFixed(0)} s (wall)`);
  await page.waitForTimeout(800);
  await shot('quick-look-checks.png');
} finally {
  await close();
}
