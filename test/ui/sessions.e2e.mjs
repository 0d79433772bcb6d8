// Two tabs of the browser host do not share or overwrite each other's work: each tab has its own session on the
// host (src-main/host/sessions.ts), a reload keeps the tab's session, and a tab duplicated from another (which
// copies the other's sessionStorage) takes a session of its own.
import assert from 'node:assert/strict';

const WATER = '3\nLattice="9 0 0 0 9 0 0 0 9" Properties=species:S:1:pos:R:3\nO 1 1 1\nH 1.96 1 1\nH 0.76 1.93 1\n';

const idOf = (page) => page.evaluate(() => sessionStorage.getItem('pw-session'));
const datasetsShown = (page) => page.$$eval('[data-dataset]', (els) => els.map((e) => e.getAttribute('data-dataset')).sort());

async function openWater(page) {
  const [chooser] = await Promise.all([page.waitForEvent('filechooser'), page.click('text=Open files…')]);
  await chooser.setFiles({ name: 'tab-b-water.xyz', mimeType: 'text/plain', buffer: Buffer.from(WATER) });
  await page.waitForSelector('[data-dataset="tab-b-water.xyz"]');
}

export const tests = [
  {
    name: 'a second tab gets its own session: neither sees nor changes the first one’s data',
    async run({ page, host, state }) {
      await page.goto(host.url);
      await page.waitForSelector('[data-empty=data]');
      await page.click('[data-action=load-demo]');
      await page.waitForSelector('[data-dataset]');
      state.a = await idOf(page);
      state.aSets = await datasetsShown(page);
      assert.ok(state.a && state.aSets.length >= 2, `tab A: session ${state.a}, data sets ${state.aSets}`);

      const b = await page.context().newPage();
      state.pages = [b];
      await b.goto(host.url);
      await b.waitForSelector('[data-empty=data]'); // not A's demo
      const bId = await idOf(b);
      assert.ok(bId && bId !== state.a, `tab B has its own session id (${bId} vs ${state.a})`);
      await openWater(b);
      assert.deepEqual(await datasetsShown(b), ['tab-b-water.xyz']);

      // A, reloaded: the same session, its own data, nothing of B's
      await page.reload();
      await page.waitForSelector('[data-dataset]');
      assert.equal(await idOf(page), state.a, 'a reload keeps the tab’s session');
      assert.deepEqual(await datasetsShown(page), state.aSets);
      assert.notEqual(host.session(state.a), host.session(bId), 'two sessions on the host');
      assert.deepEqual((await host.session(bId).getState()).datasets.map((d) => d.name), ['tab-b-water.xyz']);
    },
  },
  {
    name: 'a tab duplicated from another (same sessionStorage) takes a session of its own',
    async run({ page, host, state }) {
      const copied = await page.evaluate(() => ({ session: sessionStorage.getItem('pw-session'), token: sessionStorage.getItem('pw-token') }));
      const c = await page.context().newPage();
      state.pages.push(c);
      // what a browser's "duplicate tab" does: the new tab starts with a copy of the other's sessionStorage
      await c.addInitScript((s) => {
        if (!sessionStorage.getItem('pw-session')) {
          sessionStorage.setItem('pw-session', s.session);
          sessionStorage.setItem('pw-token', s.token);
        }
      }, copied);
      await c.goto(host.origin + '/');
      await c.waitForSelector('main[data-current-view=data]');
      await c.waitForSelector('[data-empty=data]');
      const cId = await idOf(c);
      assert.ok(cId && cId !== state.a, `the duplicate took a new session (${cId}), not A's (${state.a})`);
      await openWater(c);
      assert.deepEqual((await host.session(state.a).getState()).datasets.map((d) => d.name).sort(), state.aSets, 'A’s session is untouched');
      for (const p of state.pages) await p.close();
    },
  },
];
