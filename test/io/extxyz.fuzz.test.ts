// Property tests of the extended XYZ layer: random valid frames round-trip exactly; random corruption of a
// valid file never gives anything but an InputError, and never a frame with NaN positions.
import { describe, expect, it } from 'vitest';
import fc from 'fast-check';
import { mkdtempSync, rmSync, writeFileSync } from 'node:fs';
import os from 'node:os';
import path from 'node:path';
import { InputError } from '../../src-main/core/errors.ts';
import { ELEMENT_SYMBOLS } from '../../src-main/core/geometry/elements.ts';
import type { AtomArray, Frame, InfoValue } from '../../src-main/core/geometry/frame.ts';
import { formatExtxyzFrame, parseExtxyz, readExtxyz } from '../../src-main/io/extxyz.ts';
import { MAX_COORDINATE_A } from '../../src-main/core/limits.ts';
import { mutate } from '../helpers/mutate.ts';

const finite = fc.double({ noNaN: true, noDefaultInfinity: true });
// positions beyond ±MAX_COORDINATE_A are refused by the reader (tested in robustness.test.ts)
const coordinate = fc.oneof(fc.double({ min: -MAX_COORDINATE_A, max: MAX_COORDINATE_A, noNaN: true }), fc.double({ min: -50, max: 50, noNaN: true }));

const infoValue: fc.Arbitrary<InfoValue> = fc.oneof(
  finite,
  fc.integer(),
  fc.boolean(),
  fc.string({ unit: 'binary', maxLength: 12 }),
  fc.constantFrom('1 2', 'T F', 'nan', '1.5', ' spaced ', '{1 2}', 'a=b', '"q"', '', 'x\\y', '_JSON 5', '_JSON [1, 2]'),
  fc.array(finite, { maxLength: 10 }),
);

const infoKey = fc
  .oneof(fc.stringMatching(/^[A-Za-z_][A-Za-z0-9_]{0,8}$/), fc.string({ unit: 'binary', maxLength: 6 }))
  .filter((k) => k !== 'Lattice' && k !== 'Properties' && k !== 'pbc');

/**
 * A right-handed cell: diagonal 1.2–40 Å plus shears small enough to keep the determinant positive and, with the
 * diagonal's lower end, above the smallest believable volume of 1 Å³ (shears of ±0.3 can take it down to about 0.68
 * of the diagonal's product; with 1 Å a sheared cell fell just below 1 Å³ and was rightly refused).
 */
const cell = fc
  .tuple(fc.array(fc.double({ min: 1.2, max: 40, noNaN: true }), { minLength: 3, maxLength: 3 }), fc.array(fc.double({ min: -0.3, max: 0.3, noNaN: true }), { minLength: 6, maxLength: 6 }))
  .map(([d, s]) => Float64Array.from([d[0], s[0] * d[0], s[1] * d[0], s[2] * d[1], d[1], s[3] * d[1], s[4] * d[2], s[5] * d[2], d[2]]));

const columnName = fc.stringMatching(/^[a-z][a-z0-9_]{0,6}$/).filter((n) => n !== 'species' && n !== 'pos' && n !== 'z');

function arrayOf(kind: AtomArray['kind'], n: number, width: number): fc.Arbitrary<AtomArray> {
  const len = n * width;
  switch (kind) {
    case 'real':
      return fc.array(finite, { minLength: len, maxLength: len }).map((v) => ({ kind, width, data: Float64Array.from(v) }));
    case 'int':
      return fc.array(fc.integer(), { minLength: len, maxLength: len }).map((v) => ({ kind, width, data: Int32Array.from(v) }));
    case 'bool':
      return fc.array(fc.boolean(), { minLength: len, maxLength: len }).map((v) => ({ kind, width, data: Uint8Array.from(v.map(Number)) }));
    case 'string':
      return fc.array(fc.stringMatching(/^[A-Za-z0-9_.+-]{1,6}$/), { minLength: len, maxLength: len }).map((v) => ({ kind, width, data: v }));
  }
}

// a frame without atoms is refused (robustness.test.ts)
const frameArb: fc.Arbitrary<Frame> = fc.integer({ min: 1, max: 6 }).chain((n) =>
  fc
    .record({
      species: fc.array(fc.constantFrom(...ELEMENT_SYMBOLS), { minLength: n, maxLength: n }),
      positions: fc.array(coordinate, { minLength: 3 * n, maxLength: 3 * n }).map((p) => Float64Array.from(p)),
      cell: fc.option(cell, { nil: null }),
      pbcBits: fc.tuple(fc.boolean(), fc.boolean(), fc.boolean()),
      info: fc.dictionary(infoKey, infoValue, { maxKeys: 5 }),
      arrays: fc.uniqueArray(fc.tuple(columnName, fc.constantFrom<AtomArray['kind']>('real', 'int', 'bool', 'string'), fc.integer({ min: 1, max: 3 })), {
        maxLength: 3,
        selector: (t) => t[0],
      }),
    })
    .chain((r) =>
      fc.tuple(...r.arrays.map(([, kind, w]) => arrayOf(kind, n, w))).map((data) => {
        const arrays: Record<string, AtomArray> = {};
        r.arrays.forEach(([name], i) => (arrays[name] = data[i]));
        const frame: Frame = {
          species: r.species,
          positions: r.positions,
          cell: r.cell,
          pbc: r.cell === null ? [false, false, false] : r.pbcBits,
          info: { ...r.info },
          arrays,
        };
        return frame;
      }),
    ),
);

function withoutSource(f: Frame): Omit<Frame, 'source'> {
  const { source: _s, ...rest } = f;
  return rest;
}

describe('extended XYZ properties', () => {
  it('random valid frames round-trip exactly through format → parse', () => {
    fc.assert(
      fc.property(fc.array(frameArb, { minLength: 1, maxLength: 3 }), (frames) => {
        const text = frames.map(formatExtxyzFrame).join('');
        const back = parseExtxyz(text, 'fuzz.xyz');
        expect(back.map(withoutSource)).toEqual(frames);
        back.forEach((f, k) => expect(f.source!.index).toBe(k));
      }),
      { numRuns: 300 },
    );
  });

  // Mutations of a valid text: overwrite, insert or delete characters, or truncate.
  const noise = fc.constantFrom(...'0123456789.-+eE xyzHOT F=":\n\r\t{}[],\\#'.split(''), 'nan', 'inf', '\u00e9', '\ufffd', '0x1');
  const mutation = fc.oneof(
    fc.record({ op: fc.constant('set' as const), at: fc.nat(), text: noise }),
    fc.record({ op: fc.constant('insert' as const), at: fc.nat(), text: noise }),
    fc.record({ op: fc.constant('delete' as const), at: fc.nat(), len: fc.integer({ min: 1, max: 8 }) }),
    fc.record({ op: fc.constant('truncate' as const), at: fc.nat() }),
  );
  function checkFrames(frames: Frame[]): void {
    for (const f of frames) {
      expect(f.positions.length).toBe(3 * f.species.length);
      for (const x of f.positions) expect(Number.isFinite(x)).toBe(true);
      if (f.cell) for (const x of f.cell) expect(Number.isFinite(x)).toBe(true);
    }
  }

  it('corrupted or truncated text gives valid frames or an InputError, nothing else', () => {
    let refused = 0;
    let read = 0;
    fc.assert(
      fc.property(fc.array(frameArb, { minLength: 1, maxLength: 3 }), fc.array(mutation, { minLength: 1, maxLength: 4 }), (frames, ms) => {
        const text = mutate(frames.map(formatExtxyzFrame).join(''), ms);
        try {
          checkFrames(parseExtxyz(text, 'broken.xyz'));
          read++;
        } catch (e) {
          if (!(e instanceof InputError)) throw e;
          refused++;
          expect(e.where.file).toBe('broken.xyz');
          expect(e.where.line).toBeGreaterThanOrEqual(1);
        }
      }),
      { numRuns: 700 },
    );
    // both outcomes must really occur, or the property tested nothing
    expect(refused).toBeGreaterThan(70);
    expect(read).toBeGreaterThan(10);
  });

  it('the streaming reader agrees on corrupted files (same frames, or an InputError)', async () => {
    const dir = mkdtempSync(path.join(os.tmpdir(), 'pw-fuzz-'));
    const file = path.join(dir, 'broken.xyz');
    try {
      await fc.assert(
        fc.asyncProperty(fc.array(frameArb, { minLength: 1, maxLength: 3 }), fc.array(mutation, { minLength: 1, maxLength: 4 }), async (frames, ms) => {
          const text = mutate(frames.map(formatExtxyzFrame).join(''), ms);
          writeFileSync(file, text);
          let memory: Frame[] | InputError;
          try {
            memory = parseExtxyz(text, file);
          } catch (e) {
            if (!(e instanceof InputError)) throw e;
            memory = e;
          }
          const streamed: Frame[] = [];
          try {
            for await (const f of readExtxyz(file)) streamed.push(f);
          } catch (e) {
            if (!(e instanceof InputError)) throw e;
            expect(memory).toBeInstanceOf(InputError);
            expect(e.message).toBe((memory as InputError).message);
            return;
          }
          expect(memory).not.toBeInstanceOf(InputError);
          checkFrames(streamed);
          expect(streamed.length).toBe((memory as Frame[]).length);
        }),
        { numRuns: 150 },
      );
    } finally {
      rmSync(dir, { recursive: true, force: true });
    }
  });
});
