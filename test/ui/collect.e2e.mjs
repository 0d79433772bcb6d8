// The Data view's "collect DFT runs": real Quantum ESPRESSO outputs (test/fixtures/dft/qe) picked together with
// their inputs become one data set with ε∞ per run, and the run with another k-point mesh is listed as left out.
// Leaves the session empty for the next test file.
import assert from 'node:assert/strict';
import { readFileSync } from 'node:fs';
import { fileURLToPath } from 'node:url';

const qe = fileURLToPath(new URL('../fixtures/dft/qe/', import.meta.url));
const names = ['si-alat.pw.out', 'si-alat.ph.out', 'si-alat.pw.in', 'si-angstrom.pw.out', 'si-angstrom.ph.out', 'si-angstrom.pw.in', 'si-kmesh-2.pw.out', 'si-kmesh-2.ph.out', 'si-kmesh-2.pw.in'];

export const tests = [
  {
    name: 'collects DFT runs into a data set and lists the one left out',
    async run({ page, host }) {
      await page.goto(host.url);
      await page.waitForSelector('main[data-current-view=data]');
      const [chooser] = await Promise.all([page.waitForEvent('filechooser'), page.click('[data-action=collect-dft]')]);
      await chooser.setFiles(names.map((n) => ({ name: n, mimeType: 'text/plain', buffer: readFileSync(qe + n) })));
      await page.waitForSelector('[data-report=collect]');
      const report = await page.textContent('[data-report=collect]');
      assert.match(report.replace(/\s+/g, " "), /2 runs kept as dft-references\.extxyz: eps_inf, ε∞ \(dimensionless\), Quantum ESPRESSO 6\.7MaX/);
      assert.match(report, /k-points: mesh 4×4×4, offset 1 1 1/);
      assert.match(await page.textContent('[data-table=left-out]'), /si-kmesh-2\.ph\.out\s*different settings: k-points mesh 2×2×2/);
      assert.match(await page.textContent('[data-table=tensor-keys]'), /eps_inf/);
      assert.equal(await page.textContent('[data-fact=frames]'), '2');
      // leave the session as it was
      await page.click('[aria-label="Close the report"]');
      await page.click('[aria-label="Close dft-references.extxyz"]');
      await page.waitForSelector('[data-empty=data]');
    },
  },
];
