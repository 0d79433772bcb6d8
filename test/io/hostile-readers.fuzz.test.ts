// Seeded fuzzing of every reader of untrusted files — extended XYZ (in memory and streamed), CIF, CSV and model
// files — with valid files mutated by hostile pieces: overflowing and huge numbers, long digit runs, deep JSON,
// absurd column widths and atom counts, byte-order marks, empty frames, random cuts. Each input must be either
// accepted with finite, sane values (atoms present, coordinates and cells within core/limits.ts, a model that
// predicts finite numbers or refuses with a typed error) or refused with the project's typed error naming the
// file (and line for text formats), within a time bound per input. The whole run is bounded: each reader stops
// generating after its time budget. The counts are printed for the record.
import { createHash } from 'node:crypto';
import { mkdtempSync, rmSync, writeFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import fc from 'fast-check';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { InputError, ModelError, PhysicsError } from '../../src-main/core/errors.ts';
import { cellDeterminant } from '../../src-main/core/geometry/cell.ts';
import { isElement } from '../../src-main/core/geometry/elements.ts';
import { makeFrame, type Frame } from '../../src-main/core/geometry/frame.ts';
import { predictFrame, trainModel, type Model } from '../../src-main/core/learning/model.ts';
import { MAX_CELL_VOLUME_A3, MAX_COORDINATE_A, MIN_CELL_VOLUME_A3 } from '../../src-main/core/limits.ts';
import { parseCif } from '../../src-main/io/cif.ts';
import { parseCsv } from '../../src-main/io/csv.ts';
import { formatExtxyzFrame, parseExtxyz, readExtxyz } from '../../src-main/io/extxyz.ts';
import { canonicalJson, parseModel, serialiseModel } from '../../src-main/io/model-file.ts';
import { mutate, type Mutation } from '../helpers/mutate.ts';
import { waterFrames } from '../helpers/trajectory.ts';

const SEED = 20261202;
/** Longest time one input may take (ms) before it counts as hung; real inputs here take milliseconds. */
const PER_INPUT_MS = 5000;
/** Time budget of each reader's run (ms; model files get half as much again): the whole test stays inside a minute. */
const BUDGET_MS = 8000;

interface Counts {
  tried: number;
  accepted: number;
  refused: number;
  crashed: number;
  hung: number;
}
const counts: Record<string, Counts> = {};
const crashes: string[] = [];

/** Run one input: classify it, and hold accepted values and refusals to the rules. */
async function classify(reader: string, file: string, run: () => unknown | Promise<unknown>, checkAccepted: (value: any) => void, inputOf: () => string = () => ''): Promise<void> {
  const c = (counts[reader] ??= { tried: 0, accepted: 0, refused: 0, crashed: 0, hung: 0 });
  // counted when done: an input cut off by the time budget (fast-check abandons the last run) is not counted
  const t0 = performance.now();
  try {
    checkAccepted(await run());
    c.accepted++;
  } catch (e) {
    if (e instanceof InputError) {
      expect(e.where.file).toBe(file);
      c.refused++;
    } else if (e instanceof ModelError || e instanceof PhysicsError) {
      expect(e.message).toContain(file);
      c.refused++;
    } else {
      c.crashed++;
      if (crashes.length < 5) crashes.push(`${reader}: ${(e as Error)?.stack ?? String(e)}\ninput: ${inputOf()}`);
    }
  }
  c.tried++;
  if (performance.now() - t0 > PER_INPUT_MS) c.hung++;
}

function checkFrames(frames: Frame[], file: string): void {
  expect(frames.length).toBeGreaterThan(0);
  for (const f of frames) {
    const n = f.species.length;
    expect(n).toBeGreaterThan(0);
    expect(f.positions.length).toBe(3 * n);
    for (const s of f.species) expect(isElement(s)).toBe(true);
    for (const x of f.positions) expect(Math.abs(x) <= MAX_COORDINATE_A).toBe(true);
    if (f.cell) {
      const v = Math.abs(cellDeterminant(f.cell));
      expect(v >= MIN_CELL_VOLUME_A3 && v <= MAX_CELL_VOLUME_A3).toBe(true);
    }
    for (const v of Object.values(f.info)) if (typeof v === 'number') expect(Number.isFinite(v)).toBe(true);
    expect(f.source?.file).toBe(file);
  }
}

// ---- hostile pieces and mutations shared by the text formats ----
const deep = (n: number) => '['.repeat(n) + ']'.repeat(n);
const hostile = fc.oneof(
  fc.constantFrom('1e308', '-1e308', '1e-320', 'nan', 'inf', '-0', '0', '99999999999', '1e6', '0.01', '\ufeff', '\r', '\t', ' ', '\n', '"', "'", '=', ':', ',', '{', '}', '[', ']', '(', ')', '#', ';', '?', '.', 'x'),
  fc.constantFrom('Properties=species:S:1:pos:R:3:w:R:999999', 'Lattice="1e308 0 0 0 7 0 0 0 7"', 'Lattice="0.1 0 0 0 0.1 0 0 0 0.1"', 'Lattice="3000 0 0 0 3000 0 0 0 3000"', `j="_JSON ${deep(5000)}"`, 'pbc="T T"', '_cell_length_a 1e308', 'loop_', 'data_y', '_atom_site_fract_x'),
  fc.integer({ min: 1000, max: 60000 }).map((n) => '7'.repeat(n) + 'x'),
  fc.integer({ min: 1, max: 3 }).map((k) => 'O 0.1 0.1 0.1\n'.repeat(k)),
);
const mutation: fc.Arbitrary<Mutation> = fc.oneof(
  fc.record({ op: fc.constantFrom('set' as const, 'insert' as const, 'line' as const), at: fc.nat(), text: hostile }),
  fc.record({ op: fc.constant('delete' as const), at: fc.nat(), len: fc.integer({ min: 1, max: 12 }) }),
  fc.record({ op: fc.constant('truncate' as const), at: fc.nat() }),
);

async function budgeted(property: fc.IAsyncPropertyWithHooks<any> | fc.IAsyncProperty<any>, budget = BUDGET_MS): Promise<void> {
  await fc.assert(property, { seed: SEED, numRuns: 100_000, interruptAfterTimeLimit: budget, markInterruptAsFailure: false });
}

let dir: string;
let model: Model;
let modelText: string;
let water: string;

beforeAll(async () => {
  dir = mkdtempSync(join(tmpdir(), 'pw-fuzz-'));
  const frames = waterFrames();
  water = frames.slice(0, 2).map(formatExtxyzFrame).join('');
  // a deliberately small model (few features, three frames), so that many files are tried in the time budget
  model = await trainModel(frames.slice(0, 3), { tensorKey: 'alpha_periodic_A3', kind: 'alpha-c', route: 'cm', settings: { radialFunctions: 2, angularOrder: 2 } });
  modelText = serialiseModel(model);
}, 120_000);

afterAll(() => {
  rmSync(dir, { recursive: true, force: true });
  const total: Counts = { tried: 0, accepted: 0, refused: 0, crashed: 0, hung: 0 };
  for (const c of Object.values(counts)) for (const k of Object.keys(total) as (keyof Counts)[]) total[k] += c[k];
  console.log(`hostile-input fuzz (seed ${SEED}):\n${Object.entries({ ...counts, total }).map(([r, c]) => `  ${r.padEnd(16)} tried ${c.tried}, accepted ${c.accepted}, refused ${c.refused}, crashed ${c.crashed}, hung ${c.hung}`).join('\n')}`);
});

function expectClean(reader: string): void {
  const c = counts[reader];
  expect(crashes, crashes.join('\n\n')).toEqual([]);
  expect(c.crashed).toBe(0);
  expect(c.hung).toBe(0);
  // both outcomes occur, or the run tested nothing
  expect(c.tried).toBeGreaterThan(100);
  expect(c.accepted).toBeGreaterThan(3);
  expect(c.refused).toBeGreaterThan(50);
}

describe('hostile input fuzzing (seeded, time-bounded)', () => {
  it('extended XYZ, in memory and streamed from disk', async () => {
    const file = join(dir, 'f.extxyz');
    await budgeted(
      fc.asyncProperty(fc.array(mutation, { minLength: 1, maxLength: 3 }), fc.boolean(), async (ms, streamed) => {
        const text = mutate(water, ms);
        if (!streamed) return classify('extxyz', 'f.extxyz', () => parseExtxyz(text, 'f.extxyz'), (fr) => checkFrames(fr, 'f.extxyz'));
        writeFileSync(file, text);
        await classify(
          'extxyz-streamed',
          file,
          async () => {
            const out: Frame[] = [];
            for await (const f of readExtxyz(file)) out.push(f);
            return out;
          },
          (fr) => checkFrames(fr, file),
        );
      }),
    );
    expectClean('extxyz');
    expectClean('extxyz-streamed');
  }, 60_000);

  it('CIF', async () => {
    const cif = `data_rocksalt\n_cell_length_a 5.6402(3)\n_cell_length_b 5.6402\n_cell_length_c 5.6402\n_cell_angle_alpha 90\n_cell_angle_beta 90\n_cell_angle_gamma 90\nloop_\n_space_group_symop_operation_xyz\n'x, y, z'\n'-x, -y, z'\n'x+1/2, y+1/2, z'\n'-y, x, z+1/2'\nloop_\n_atom_site_label\n_atom_site_type_symbol\n_atom_site_fract_x\n_atom_site_fract_y\n_atom_site_fract_z\nNa1 Na 0 0 0\nCl1 Cl 0.5 0.5 0.5\n`;
    await budgeted(
      fc.asyncProperty(fc.array(mutation, { minLength: 1, maxLength: 3 }), async (ms) => {
        await classify('cif', 'f.cif', () => parseCif(mutate(cif, ms), 'f.cif'), (fr) => checkFrames(fr, 'f.cif'));
      }),
    );
    expectClean('cif');
  }, 60_000);

  it('CSV tables', async () => {
    const csv = '# Polarweave per-frame dielectric tensors\n# predictions are model estimates\nframe,tag,volume_A3,eps_xx,eps_yy\n0,"a,b",100.5,1.78,1.79\n1,c,101,1.8,1.81\n';
    await budgeted(
      fc.asyncProperty(fc.array(mutation, { minLength: 1, maxLength: 3 }), async (ms) => {
        await classify(
          'csv',
          'f.csv',
          () => {
            const t = parseCsv(mutate(csv, ms), 'f.csv');
            return t.columns.filter((c) => c !== 'tag').map((c) => t.numbers(c));
          },
          (cols: Float64Array[]) => {
            for (const col of cols) for (const x of col) expect(Number.isFinite(x)).toBe(true);
          },
        );
      }),
    );
    expectClean('csv');
  }, 60_000);

  it('model files: text damage, and content edits with a recomputed checksum', async () => {
    const frame = makeFrame(['O', 'H', 'H'], [1, 1, 1, 1.96, 1, 1, 0.76, 1.93, 1], [9, 0, 0, 0, 9, 0, 0, 0, 9]);
    // a path into the payload and a hostile replacement value
    const edit = fc.record({
      path: fc.array(fc.nat(), { minLength: 1, maxLength: 4 }),
      value: fc.constantFrom<unknown>(-1, 0, 60, 1e308, -1e308, 0.5, 3, 'O', 'Xx', '', null, true, [], {}, ['O', 'H'], ['H', 'H'], [1, 2, 3], 'DELETE', 'REVERSE', 'DEEP'),
    });
    const applyEdit = (payload: any, e: { path: number[]; value: unknown }): void => {
      let node = payload;
      for (let k = 0; k < e.path.length; k++) {
        const keys = Array.isArray(node) ? node.map((_: unknown, i: number) => i) : Object.keys(node);
        if (keys.length === 0) return;
        const key = keys[e.path[k] % keys.length];
        const child = node[key];
        const last = k === e.path.length - 1 || child === null || typeof child !== 'object';
        if (!last) {
          node = child;
          continue;
        }
        if (e.value === 'DELETE') {
          if (Array.isArray(node)) node.splice(Number(key), 1);
          else delete node[key];
        } else if (e.value === 'REVERSE') node[key] = Array.isArray(child) ? [...child].reverse() : child;
        else if (e.value === 'DEEP') node[key] = JSON.parse(deep(200));
        else node[key] = e.value;
        return;
      }
    };
    await budgeted(
      fc.asyncProperty(fc.boolean(), fc.array(edit, { minLength: 1, maxLength: 2 }), fc.array(mutation, { minLength: 1, maxLength: 2 }), async (resign, edits, ms) => {
        let text: string;
        if (resign) {
          const doc = JSON.parse(modelText);
          for (const e of edits) applyEdit(doc.payload, e);
          doc.checksum.value = createHash('sha256').update(canonicalJson(doc.payload)).digest('hex');
          text = JSON.stringify(doc);
        } else text = mutate(modelText, ms);
        await classify(
          resign ? 'model-resigned' : 'model-damaged',
          'm.json',
          () => {
            const m = parseModel(text, 'm.json');
            // an accepted model predicts finite numbers, or refuses the frame with a typed error
            try {
              return predictFrame(m, frame);
            } catch (e) {
              if (e instanceof InputError || e instanceof ModelError || e instanceof PhysicsError) throw new ModelError(`m.json: ${e.message}`);
              throw e;
            }
          },
          (p) => {
            for (const x of p.eps) expect(Number.isFinite(x)).toBe(true);
            expect(p.applicability.threshold).toBeGreaterThanOrEqual(0);
          },
          () => (resign ? JSON.stringify(edits) : JSON.stringify(ms).slice(0, 300)),
        );
      }),
      1.5 * BUDGET_MS,
    );
    const all = ['model-resigned', 'model-damaged'].map((r) => counts[r]);
    expect(crashes, crashes.join('\n\n')).toEqual([]);
    for (const c of all) {
      expect(c.crashed).toBe(0);
      expect(c.hung).toBe(0);
    }
    expect(crashes, crashes.join('\n\n')).toEqual([]);
    expect(all[0].refused).toBeGreaterThan(20);
    expect(all[0].accepted).toBeGreaterThan(0);
    expect(all[1].refused).toBeGreaterThan(20);
  }, 60_000);
});
