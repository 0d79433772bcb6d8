// A model file of format version 1 (written before the settings got their version-2 names) still loads and
// predicts the same numbers: the CSV of `polarweave predict` equals the one recorded with the code of that time,
// byte for byte apart from the identity line. Fixtures and how they were made: test/fixtures/models/README.md.
import { mkdtempSync, readFileSync, rmSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { afterAll, describe, expect, it } from 'vitest';
import { runCli } from '../../src-main/cli/main.ts';

const MODEL = 'test/fixtures/models/water-v1.model.json';
const DATA = 'test/fixtures/water-dft-sample.extxyz';
const dir = mkdtempSync(join(tmpdir(), 'pw-model-v1-'));
afterAll(() => rmSync(dir, { recursive: true, force: true }));

const withoutIdentity = (text: string) => text.split('\n').filter((l) => !l.startsWith('# Identity:')).join('\n');

describe('version-1 model files', () => {
  it('predict the recorded CSV byte for byte, apart from the identity line', async () => {
    const out = join(dir, 'p.csv');
    let err = '';
    const code = await runCli(['predict', MODEL, DATA, '--threads', '1', '-o', out], { out: () => {}, err: (t) => (err += t), signal: new AbortController().signal });
    expect(err).not.toMatch(/error/i);
    expect(code).toBe(0);
    const before = readFileSync(new URL('../fixtures/models/water-v1.predicted.csv', import.meta.url), 'utf8');
    const after = readFileSync(out, 'utf8');
    expect(after.split('\n').filter((l) => l.startsWith('# Identity:'))).toHaveLength(1);
    expect(withoutIdentity(after)).toBe(withoutIdentity(before));
  });
});

describe('fromVersion1', () => {
  it('gives the settings under the table’s keys, with the values of the old keys', async () => {
    const { loadModel } = await import('../../src-main/io/model-file.ts');
    const { DEFAULT_SETTINGS } = await import('../../src-main/core/settings-table.ts');
    const raw = JSON.parse(readFileSync(MODEL, 'utf8'));
    expect(raw.version).toBe(1);
    const m = await loadModel(MODEL);
    expect(Object.keys(m.settings).sort()).toEqual(Object.keys(DEFAULT_SETTINGS).sort());
    // The options the fixture was trained with (test/fixtures/models/README.md), in the old keys of the file.
    expect(raw.payload.settings).toMatchObject({ cutoff: 4, cutoffWidth: 0.6, sigma: 0.45, nmax: 3, lmax: 2, zeta: 2, sparsePoints: 10, centres: ['O', 'H'], seed: 7 });
    expect(m.settings).toMatchObject({ cutoffRadius: 4, switchWidth: 0.6, densityWidth: 0.45, radialFunctions: 3, angularOrder: 2, kernelExponent: 2, anchorEnvironments: 10, contributingSpecies: ['O', 'H'], seed: 7 });
  });
});
