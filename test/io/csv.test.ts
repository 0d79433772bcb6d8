// Tensor CSV: columns and units, principal values and indices against outside values, RFC 4180 quoting,
// atomic and streamed writing, reading our own tables back.
import { describe, expect, it, beforeAll, afterAll } from 'vitest';
import { existsSync, mkdtempSync, readdirSync, readFileSync, rmSync } from 'node:fs';
import os from 'node:os';
import path from 'node:path';
import { InputError, PhysicsError } from '../../src-main/core/errors.ts';
import { csvField, parseCsv } from '../../src-main/io/csv.ts';
import { tensorCsv, tensorCsvColumns, tensorCsvWriter, writeTensorCsv, type TensorRow } from '../../src-main/io/prediction/prediction-format.ts';

let dir: string;
beforeAll(() => {
  dir = mkdtempSync(path.join(os.tmpdir(), 'pw-csv-'));
});
afterAll(() => rmSync(dir, { recursive: true, force: true }));

// Tensor test vector of /work/shared/checks.md (computed with numpy): ε from α_CM = R diag(10,11,12) Rᵀ Å³, V = 150 Å³.
const EPS_CHECK = Float64Array.from([2.295246, 0.013041, 0.163863, 0.013041, 2.339572, 0.046432, 0.163863, 0.046432, 2.369624]);
const EPS_CHECK_EIGEN = [2.162346, 2.330116, 2.511979];
// Calcite at 589 nm: n_o = 1.65834, n_e = 1.48613 (Opt. Commun. 163, 95 (1999), as listed in checks.md).
const NO = 1.65834, NE = 1.48613;
const CALCITE = Float64Array.from([NO * NO, 0, 0, 0, NO * NO, 0, 0, 0, NE * NE]);

const OPTS = { source: 'test model', tagColumns: ['file', 'tag'], extraColumns: ['nearest_distance'], extraDescriptions: { nearest_distance: 'feature-space distance to the training set' } };

describe('tensorCsv', () => {
  it('names the columns, with units where they could be doubted', () => {
    expect(tensorCsvColumns({ source: 's' })).toEqual([
      'frame', 'volume_A3', 'eps_xx', 'eps_yy', 'eps_zz', 'eps_xy', 'eps_xz', 'eps_yz', 'eps_iso', 'eps_aniso',
      'eps_1', 'eps_2', 'eps_3', 'n_1', 'n_2', 'n_3', 'dn',
    ]);
    const c = tensorCsvColumns({ source: 's', alpha: { kind: 'alpha-cm', unit: 'A3' }, tagColumns: ['tag'], extraColumns: ['x'] });
    expect(c.slice(0, 3)).toEqual(['frame', 'tag', 'volume_A3']);
    expect(c).toContain('alpha_cm_xx_A3');
    expect(c).toContain('alpha_cm_iso_A3');
    expect(c[c.length - 1]).toBe('x');
    expect(tensorCsvColumns({ source: 's', alpha: { kind: 'alpha-c', unit: 'bohr3' } })).toContain('alpha_c_yz_bohr3');
  });

  it('principal values, indices and birefringence match outside values', () => {
    const rows: TensorRow[] = [
      { frame: 0, tags: { file: 'a.xyz', tag: 'check' }, volumeA3: 150, eps: EPS_CHECK, extra: { nearest_distance: 0.25 } },
      { frame: 1, tags: { file: 'a.xyz', tag: 'calcite' }, volumeA3: 367.8, eps: CALCITE, extra: { nearest_distance: 0.5 } },
    ];
    const t = parseCsv(tensorCsv(rows, OPTS), 'x.csv');
    const e1 = t.numbers('eps_1'), e2 = t.numbers('eps_2'), e3 = t.numbers('eps_3');
    [e1[0], e2[0], e3[0]].forEach((v, k) => expect(v).toBeCloseTo(EPS_CHECK_EIGEN[k], 5)); // numpy values to 6 decimals
    expect(t.numbers('eps_iso')[0]).toBeCloseTo((2.295246 + 2.339572 + 2.369624) / 3, 12);
    expect(t.numbers('n_1')[1]).toBeCloseTo(NE, 12);
    expect(t.numbers('n_3')[1]).toBeCloseTo(NO, 12);
    expect(t.numbers('dn')[1]).toBeCloseTo(NO - NE, 12); // calcite birefringence 0.17221
    // anisotropy of the axial tensor diag(a, a, b) is |b − a| (definition in the header)
    expect(t.numbers('eps_aniso')[1]).toBeCloseTo(NO * NO - NE * NE, 12);
    expect(t.numbers('eps_xy')[0]).toBe(0.013041);
    expect(t.text('tag')).toEqual(['check', 'calcite']);
    expect(t.numbers('nearest_distance')).toEqual(Float64Array.from([0.25, 0.5]));
  });

  it('writes the polarisability in the unit asked (CODATA 2018: 1 bohr³ = 0.148184711472 Å³)', () => {
    const a = Float64Array.from([0.148184711472, 0, 0, 0, 0.148184711472, 0, 0, 0, 0.148184711472]);
    const t = parseCsv(tensorCsv([{ frame: 3, volumeA3: 100, eps: CALCITE, alpha: a }], { source: 's', alpha: { kind: 'alpha-cm', unit: 'bohr3' } }), 'x');
    expect(t.numbers('alpha_cm_xx_bohr3')[0]).toBeCloseTo(1, 11);
    expect(t.numbers('alpha_cm_iso_bohr3')[0]).toBeCloseTo(1, 11);
    expect(t.numbers('frame')[0]).toBe(3);
  });

  it('opens with a comment block: what, units, source and the model-estimate note', () => {
    const text = tensorCsv([], OPTS);
    const t = parseCsv(text, 'x');
    expect(t.records.length).toBe(0);
    const all = t.comments.join('\n');
    expect(all).toMatch(/Units: volume_A3 in Å³/);
    expect(all).toMatch(/Source: test model/);
    expect(all).toMatch(/model estimates/);
    expect(all).toMatch(/nearest_distance: feature-space distance/);
    expect(tensorCsv([], { source: 'reference DFT', predicted: false })).not.toMatch(/model estimates/);
  });

  it('quotes strings as RFC 4180 says and reads them back', () => {
    expect(csvField('plain')).toBe('plain');
    expect(csvField('a,b')).toBe('"a,b"');
    expect(csvField('say "hi"')).toBe('"say ""hi"""');
    expect(csvField('two\nlines')).toBe('"two\nlines"');
    const tags = ['a,b', 'say "hi"', 'two\r\nlines', ' padded ', ''];
    const rows = tags.map((tag, k) => ({ frame: k, tags: { file: 'f', tag }, volumeA3: 1, eps: CALCITE, extra: { nearest_distance: 0 } }));
    const t = parseCsv(tensorCsv(rows, OPTS), 'x');
    expect(t.text('tag')).toEqual(tags);
    expect(t.lines[3]).toBe(t.lines[2] + 2); // the CRLF inside a quoted field counts as a line
  });

  it('refuses tensors without real indices and missing columns', () => {
    const bad = Float64Array.from([-1, 0, 0, 0, 2, 0, 0, 0, 2]);
    expect(() => tensorCsv([{ frame: 7, volumeA3: 1, eps: bad }], { source: 's' })).toThrow(PhysicsError);
    expect(() => tensorCsv([{ frame: 0, volumeA3: NaN, eps: CALCITE }], { source: 's' })).toThrow(/volume is NaN/);
    expect(() => tensorCsv([{ frame: 0, volumeA3: 1, eps: CALCITE }], { source: 's', tagColumns: ['t'] })).toThrow(/tag column 't'/);
    expect(() => tensorCsv([{ frame: 0, volumeA3: 1, eps: CALCITE }], { source: 's', alpha: { kind: 'alpha-c', unit: 'A3' } })).toThrow(/no alpha/);
  });
});

describe('writing files', () => {
  it('writeTensorCsv writes atomically', async () => {
    const p = path.join(dir, 'one.csv');
    await writeTensorCsv(p, [{ frame: 0, volumeA3: 2, eps: CALCITE }], { source: 's' });
    expect(parseCsv(readFileSync(p, 'utf8'), p).records.length).toBe(1);
  });

  it('the streamed writer shows nothing until commit, and nothing after abort', async () => {
    const p = path.join(dir, 'stream.csv');
    const w = tensorCsvWriter(p, { source: 's' });
    for (let k = 0; k < 2000; k++) await w.writeRow({ frame: k, volumeA3: 2, eps: CALCITE });
    expect(existsSync(p)).toBe(false);
    await w.commit();
    const t = parseCsv(readFileSync(p, 'utf8'), p);
    expect(t.numbers('frame')[1999]).toBe(1999);
    const q = path.join(dir, 'aborted.csv');
    const w2 = tensorCsvWriter(q, { source: 's' });
    await w2.writeRow({ frame: 0, volumeA3: 2, eps: CALCITE });
    await expect(w2.writeRow({ frame: 1, volumeA3: 2, eps: Float64Array.from([-1, 0, 0, 0, 1, 0, 0, 0, 1]) })).rejects.toThrow(PhysicsError);
    expect(existsSync(q)).toBe(false);
    expect(readdirSync(dir).filter((n) => n.endsWith('.tmp'))).toEqual([]);
  });
});

describe('parseCsv errors', () => {
  function err(text: string): InputError {
    try {
      const t = parseCsv(text, 'in.csv');
      t.numbers('b');
    } catch (e) {
      expect(e).toBeInstanceOf(InputError);
      return e as InputError;
    }
    throw new Error('no error');
  }
  it('names the line', () => {
    expect(err('# c\na,b\n1,2\n3\n').where.line).toBe(4);
    expect(err('a,b\n1,"open\n').where.line).toBe(2);
    expect(err('a,b\n1,x"y\n').where.line).toBe(2);
    expect(err('a,b\n1,2\n1,nan\n').where.line).toBe(3);
    expect(err('a,a\n').problem).toMatch(/twice/);
    expect(err('# only comments\n').problem).toMatch(/no header/);
    expect(err('a,c\n1,2\n').problem).toMatch(/no column 'b'/);
  });
  it('reads CRLF files and a last line without newline', () => {
    const t = parseCsv('# x\r\na,b\r\n1,2\r\n3,4', 'f');
    expect(t.numbers('b')).toEqual(Float64Array.from([2, 4]));
    expect(t.lines).toEqual([3, 4]);
  });
});
