// Model files of format version 2 (the variance kept as the features × features primal factor) still load and
// predict what they did, byte for byte; and the same training today, which keeps the variance in its smaller
// design form (format version 3), gives the same predictions and error bars to round-off. Fixtures and how they
// were made: test/fixtures/models/README.md.
import { mkdtempSync, readFileSync, rmSync, writeFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { afterAll, describe, expect, it } from 'vitest';
import { runCli } from '../../src-main/cli/main.ts';
import { parseCsv } from '../../src-main/io/csv.ts';
import { parseModel } from '../../src-main/io/model-file.ts';

const DATA = 'test/fixtures/water-dft-sample.extxyz';
const dir = mkdtempSync(join(tmpdir(), 'pw-model-v2-'));
afterAll(() => rmSync(dir, { recursive: true, force: true }));

const withoutIdentity = (text: string) => text.split('\n').filter((l) => !l.startsWith('# Identity:')).join('\n');
const quiet = { out: () => {}, signal: new AbortController().signal };

async function cli(args: string[]): Promise<void> {
  let err = '';
  const code = await runCli(args, { ...quiet, err: (t) => (err += t) });
  expect(code, err).toBe(0);
}

/** The first five frames of the DFT sample, the training set the fixtures were made from. */
function firstFive(): string {
  const lines = readFileSync(DATA, 'utf8').split('\n');
  const out: string[] = [];
  let at = 0;
  for (let f = 0; f < 5; f++) {
    const n = Number(lines[at]);
    out.push(...lines.slice(at, at + n + 2));
    at += n + 2;
  }
  const path = join(dir, 'first-5-frames.extxyz');
  writeFileSync(path, out.join('\n') + '\n');
  return path;
}

const KINDS = { linear: [], kernel: ['--kernel-exponent', '2', '--anchor-environments', '10'] } as const;

describe('version-2 model files', () => {
  for (const [kind, extra] of Object.entries(KINDS)) {
    it(`${kind}: predicts the recorded CSV byte for byte, and today's training gives the same numbers and error bars`, async () => {
      const model = `test/fixtures/models/water-v2-${kind}.model.json`;
      const recorded = readFileSync(`test/fixtures/models/water-v2-${kind}.predicted.csv`, 'utf8');
      expect(parseModel(readFileSync(model, 'utf8'), model).parts[0].posterior?.form).toBe('primal');
      const out = join(dir, `${kind}.csv`);
      await cli(['predict', model, DATA, '--threads', '1', '-o', out]);
      expect(withoutIdentity(readFileSync(out, 'utf8'))).toBe(withoutIdentity(recorded));

      // the same training today: version 3, the variance as the design (5 frames, many more features)
      const trained = join(dir, `${kind}.model.json`);
      await cli(['train', firstFive(), '--tensor', 'eps_inf', '--as', 'eps', '--radial-functions', '3', '--angular-order', '2', '--cutoff-radius', '4', '--seed', '7', ...extra, '-o', trained]);
      const text = readFileSync(trained, 'utf8');
      expect(JSON.parse(text).version).toBe(3);
      expect(parseModel(text, trained).parts[0].posterior?.form).toBe('design');
      expect(text.length).toBeLessThan(readFileSync(model, 'utf8').length);
      const again = join(dir, `${kind}-again.csv`);
      await cli(['predict', trained, DATA, '--threads', '1', '-o', again]);
      const a = parseCsv(withoutIdentity(recorded), 'recorded');
      const b = parseCsv(withoutIdentity(readFileSync(again, 'utf8')), 'today');
      expect(b.columns).toEqual(a.columns);
      const numeric = (t: string[]) => t.every((v) => v !== '' && Number.isFinite(Number(v)));
      for (const c of a.columns) {
        // The variance and the error bars: the design form is the more accurate (test/core/learning/regression.test.ts)
        // and moves them by about 1e-12 relative. Every other number: the blocked Cholesky of the training sums in
        // another order, so equal to 1e-12 relative (or 1e-15 absolute, for values near zero); words the same.
        const sd = c === 'variance_iso' || c.endsWith('_sd') || c.endsWith('_sd_A3');
        if (!numeric(a.text(c))) {
          expect(b.text(c), c).toEqual(a.text(c));
          continue;
        }
        const x = a.numbers(c);
        const y = b.numbers(c);
        x.forEach((v, i) => expect(Math.abs(y[i] - v), `${c} row ${i}`).toBeLessThanOrEqual((sd ? 3e-12 : 1e-12) * Math.abs(v) + 1e-15));
      }
    }, 120_000);
  }
});
