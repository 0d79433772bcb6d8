// The predict use case behind every front end: the one-pass path (CIF) writes the identity line and frame
// stamps of the streamed path, and `.exyz` is streamed like `.extxyz` (same bytes but the input's name).
import { mkdtempSync, readFileSync, rmSync, writeFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { createHash } from 'node:crypto';
import type { Frame } from '../../../src-main/core/geometry/frame.ts';
import { parseCsv } from '../../../src-main/io/csv.ts';
import { parseExtxyz } from '../../../src-main/io/extxyz.ts';
import { saveModel } from '../../../src-main/io/model-file.ts';
import { parseIdentityLine, PRED_KEYS } from '../../../src-main/io/prediction/prediction-format.ts';
import { cli } from '../../cli/run-cli.ts';
import { smallModel, trajectoryText, waterFrames } from '../../helpers/trajectory.ts';

let dir: string;
const p = (n: string) => join(dir, n);
let sha: string;

/** A P1 CIF of a frame with a cubic cell (fractional coordinates). */
function cifOf(f: Frame): string {
  const L = f.cell![0];
  const lines = ['data_water_frame', `_cell_length_a ${L}`, `_cell_length_b ${L}`, `_cell_length_c ${L}`, '_cell_angle_alpha 90', '_cell_angle_beta 90', '_cell_angle_gamma 90', "_symmetry_space_group_name_H-M 'P 1'", 'loop_', '_atom_site_label', '_atom_site_type_symbol', '_atom_site_fract_x', '_atom_site_fract_y', '_atom_site_fract_z'];
  f.species.forEach((s, i) => lines.push(`${s}${i + 1} ${s} ${[0, 1, 2].map((k) => f.positions[3 * i + k] / L).join(' ')}`));
  return lines.join('\n') + '\n';
}

beforeAll(async () => {
  dir = mkdtempSync(join(tmpdir(), 'pw-sinks-'));
  await saveModel(p('m.json'), await smallModel());
  sha = createHash('sha256').update(readFileSync(p('m.json'))).digest('hex');
  const w = waterFrames();
  expect(w[0].cell!.filter((x) => x !== 0).length).toBe(3); // cubic, as cifOf assumes
  writeFileSync(p('w.cif'), cifOf(w[0]));
  writeFileSync(p('t.extxyz'), trajectoryText(w.slice(0, 3)));
  writeFileSync(p('t.exyz'), trajectoryText(w.slice(0, 3)));
}, 60_000);
afterAll(() => rmSync(dir, { recursive: true, force: true }));

describe('predict sinks', () => {
  it('the CIF path writes the identity line and the per-frame stamp keys', async () => {
    expect((await cli('predict', p('m.json'), p('w.cif'), '-o', p('c.extxyz'))).code).toBe(0);
    const [f] = parseExtxyz(readFileSync(p('c.extxyz'), 'utf8'), 'c.extxyz');
    expect(f.info[PRED_KEYS.frame]).toBe(0);
    expect(f.info[PRED_KEYS.modelSha256]).toBe(sha);
    expect(f.info[PRED_KEYS.input]).toMatch(/^w\.cif:\d+$/);
    expect((f.info[PRED_KEYS.eps] as number[]).length).toBe(9);

    expect((await cli('predict', p('m.json'), p('w.cif'), '-o', p('c.csv'))).code).toBe(0);
    const t = parseCsv(readFileSync(p('c.csv'), 'utf8'), 'c.csv');
    const id = t.comments.map((c) => parseIdentityLine(`# ${c}\n`)).find((x) => x);
    expect(id?.modelSha256).toBe(sha);
    expect(id?.inputName).toBe('w.cif');
    expect(t.comments.join('\n')).not.toMatch(/Written:/);
  }, 60_000);

  it('.exyz and .extxyz take the same (streamed) path and give the same rows', async () => {
    for (const n of ['t.extxyz', 't.exyz']) expect((await cli('predict', p('m.json'), p(n), '--threads', '1', '-o', p(`${n}.csv`))).code).toBe(0);
    const a = readFileSync(p('t.extxyz.csv'), 'utf8');
    const b = readFileSync(p('t.exyz.csv'), 'utf8');
    expect(b).toBe(a.replace('input t.extxyz,', 'input t.exyz,'));
    // the streamed path is the only one that accepts --threads
    expect((await cli('predict', p('m.json'), p('w.cif'), '--threads', '1', '-o', p('x.csv'))).code).toBe(2);
  }, 60_000);
});
