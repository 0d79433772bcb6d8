// `npm run screenshots`: one PNG of each view of the window under docs/screenshots/app-<view>.png, taken in
// Debian's Chromium against the browser host after the demo workflow (load demo, train a small model, predict
// a trajectory and the crystal). Also the Checks view in the dark theme and the Data view in large text.
import { join } from 'node:path';
import { openBrowserSession } from './browser-session.mjs';

const { host, page, outDir, close } = await openBrowserSession('shots', { width: 1440, height: 900 });

async function view(name) {
  await page.click(`nav [data-view=${name}]`);
  await page.waitForSelector(`main[data-current-view=${name}]`);
  await page.waitForTimeout(600);
}
async function shot(name) {
  await page.locator('[role=status] .x').click().catch(() => {}); // dismiss notices
  await page.waitForTimeout(200);
  const path = join(outDir, `app-${name}.png`);
  await page.screenshot({ path });
  console.log(`saved ${path}`);
}
async function idle() {
  await page.waitForSelector('[data-job-state]', { state: 'detached', timeout: 600_000 });
}
async function pick(selector, pattern) {
  const sel = page.locator(selector);
  const options = await sel.locator('option').evaluateAll((os) => os.map((o) => ({ value: o.value, text: o.textContent })));
  const hit = options.find((o) => pattern.test(o.text));
  if (hit) await sel.selectOption(hit.value);
}

try {
  await page.goto(host.url);
  await page.waitForSelector('[data-empty=data]');
  await page.click('[data-action=load-demo]');
  await page.waitForSelector('[data-dataset]');
  await page.click('[data-dataset^=liquid]:not([data-dataset*=trajectory])').catch(() => {});
  await page.waitForTimeout(800);
  await shot('data');

  await view('model');
  await pick('[data-field=dataset]', /^liquid\.extxyz/);
  await page.click('[data-preset=quick]');
  await page.fill('[data-field=max-frames]', '40');
  // the Quick look leaves the learning curve for later; the Checks picture shows it, so draw it while training
  await page.check('[data-field=draw-curve]');
  await page.click('[data-action=train]');
  await page.waitForSelector('[role=progressbar]');
  await page.waitForTimeout(1500);
  await shot('model-training');
  await page.waitForSelector('[data-section=cv-results]', { timeout: 600_000 });
  await idle();
  await shot('model');

  await view('checks');
  await shot('checks');

  await page.locator('[data-worst-frame]').first().click();
  await page.waitForSelector('[data-section=structure-picture] [data-item^="e:"]', { timeout: 60_000 });
  await page.waitForTimeout(600);
  await shot('structure');

  await view('trajectory');
  if (await page.locator('[data-action=predict-trajectory]').count()) {
    await pick('[data-field=trajectory-dataset]', /trajectory/);
    await page.click('[data-action=predict-trajectory]');
    await idle();
    await page.waitForTimeout(800);
  }
  await shot('trajectory');

  await view('transfer');
  await pick('[data-field=transfer-dataset]', /^crystal/);
  await page.click('[data-action=predict]');
  await page.waitForSelector('[data-section=transfer-result]', { timeout: 300_000 });
  await idle();
  await shot('transfer');

  // a crystal frame the liquid model flags: the atoms outside the training data ringed in the picture
  await page.locator('[data-table=transfer] tbody tr.outside button.link').first().click();
  await page.waitForSelector('[data-section=structure-picture] [data-mark^="outside:"]', { timeout: 60_000 });
  await page.waitForTimeout(600);
  await shot('structure-outside');

  await view('export');
  await shot('export');

  await page.click('text=Dark');
  await view('checks');
  await shot('checks-dark');
  await page.click('text=Dark');
  await page.click('text=Large text');
  await view('data');
  await shot('data-large-text');
  await page.click('text=Large text');
} finally {
  await close();
}
