// The app session of a page's tab on the browser host (one per tab: src-main/host/sessions.ts), for browser tests
// that look behind the window.
import assert from 'node:assert/strict';

export async function sessionOf(page, host) {
  const id = await page.evaluate(() => sessionStorage.getItem('pw-session'));
  const service = host.session(id);
  assert.ok(service, `the host has no session for this tab (${id})`);
  return service;
}
