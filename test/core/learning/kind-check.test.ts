// The kind guard: a reference tensor that contradicts its declared kind is refused by every training path,
// through one function (core/learning/kind-check.ts), with the file, the frame and the override named.
import { mkdtempSync, rmSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { afterAll, describe, expect, it } from 'vitest';
import { kindProblem } from '../../../src-main/core/learning/kind-check.ts';
import { readTensor } from '../../../src-main/core/learning/targets.ts';
import { parseExtxyz } from '../../../src-main/io/extxyz.ts';
import { readFileSync } from 'node:fs';
import { runCli } from '../../../src-main/cli/main.ts';
import { appTasks } from '../../../src-main/app/tasks.ts';
import type { TrainTaskInput } from '../../../src-main/app/task-types.ts';

// Real DFT frames (test/fixtures/water-dft-sample.README.md): 16 water molecules, 48 atoms per cell, with the
// periodic polarisability in Å³ (about 21 Å³ per cell) and ε∞ (about 1.55) of the same frames.
const FILE = new URL('../../fixtures/water-dft-sample.extxyz', import.meta.url);
const frames = parseExtxyz(readFileSync(FILE, 'utf8'), 'water-dft-sample.extxyz');
const FAST = ['--radial-functions', '4', '--angular-order', '3'];
const dirs: string[] = [];
afterAll(() => dirs.forEach((d) => rmSync(d, { recursive: true, force: true })));

async function cli(argv: string[]): Promise<{ code: number; out: string; err: string }> {
  let out = '';
  let err = '';
  const code = await runCli(argv, { out: (t) => (out += t), err: (t) => (err += t), signal: new AbortController().signal });
  return { code, out, err };
}

describe('kindProblem', () => {
  it('accepts each tensor of the DFT sample as the kind it is', () => {
    for (const [i, f] of frames.entries()) {
      expect(kindProblem(readTensor(f, 'eps_inf', i), 'eps', f.species.length)).toBeNull();
      expect(kindProblem(readTensor(f, 'alpha_periodic_A3', i), 'alpha-c', f.species.length)).toBeNull();
    }
  });
  it('refuses a polarisability in Å³ declared as ε, and ε declared as a polarisability', () => {
    const f = frames[0];
    expect(kindProblem(readTensor(f, 'alpha_periodic_A3', 0), 'eps', 48)).toMatch(/declared as ε∞ but its isotropic value is 21\.\d+, outside 1–20/);
    expect(kindProblem(readTensor(f, 'eps_inf', 0), 'alpha-c', 48)).toMatch(/declared as α_c \(Å³\) but it is 0\.032\d Å³ per atom.*looks like an ε∞/);
    expect(kindProblem(readTensor(f, 'eps_inf', 0), 'alpha-cm', 48)).toMatch(/α_CM/);
  });
  it('refuses ε with a principal value below 1 (no refractive index ≥ 1)', () => {
    const t = Float64Array.of(1.5, 0, 0, 0, 1.5, 0, 0, 0, 0.9);
    expect(kindProblem(t, 'eps', 3)).toMatch(/principal value 1 of ε∞ is 0\.9/);
  });
});

describe('the kind guard in every training path', () => {
  it('the CLI train and validate and the window train task refuse α declared as ε with the same message; --trust-kind goes on', async () => {
    const dir = mkdtempSync(join(tmpdir(), 'pw-kind-'));
    dirs.push(dir);
    const file = FILE.pathname;
    const t = await cli(['train', file, '--tensor', 'alpha_periodic_A3', '--as', 'eps', ...FAST, '-o', join(dir, 'm.json')]);
    expect(t.code).toBe(1);
    expect(t.err).toMatch(/water-dft-sample\.extxyz, line 1, frame 0: reference tensor "alpha_periodic_A3" declared as ε∞/);
    expect(t.err).toMatch(/--trust-kind/);
    const v = await cli(['validate', file, '--tensor', 'alpha_periodic_A3', '--as', 'eps', '--route', 'cm', ...FAST]);
    expect(v.code).toBe(1);
    expect(v.err).toMatch(/declared as ε∞/);

    const input: TrainTaskInput = {
      request: { tensorKey: 'alpha_periodic_A3', kind: 'eps', route: 'cm', settings: { radialFunctions: 4, angularOrder: 3 } },
      folds: 2,
      learningCurve: [],
      frames,
      frameIndices: frames.map((_, i) => i),
      testFrames: [],
      testIndices: [],
    };
    const ctx = { progress: () => {}, log: () => {}, signal: new AbortController().signal };
    const windowError = await Promise.resolve(appTasks.train(input, ctx)).then(
      () => '',
      (e: Error) => e.message,
    );
    // the same words as the CLI's message (the CLI prefixes "error: " and may add a newline)
    expect(windowError).toMatch(/declared as ε∞/);
    expect(t.err).toContain(windowError.replace(/^.*?: reference/, 'reference'));
    expect(windowError).toMatch(/Model view/);

    const ok = await cli(['train', file, '--tensor', 'alpha_periodic_A3', '--as', 'eps', '--trust-kind', ...FAST, '-o', join(dir, 'm.json')]);
    expect(ok.code).toBe(0);
  }, 120_000);
});
