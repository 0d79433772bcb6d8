// Property test of the CIF reader: random corruption of valid files gives frames with finite positions or an
// InputError with a line, never another kind of exception.
import { describe, expect, it } from 'vitest';
import fc from 'fast-check';
import { readFileSync } from 'node:fs';
import path from 'node:path';
import { InputError } from '../../src-main/core/errors.ts';
import { parseCif } from '../../src-main/io/cif.ts';

const FIX = path.join(import.meta.dirname, '../fixtures/io');
const texts = ['zro2-monoclinic.cif', 'nacl-fm3m.cif'].map((n) => readFileSync(path.join(FIX, n), 'utf8'));

describe('CIF corruption', () => {
  it('never throws anything but InputError, never yields non-finite positions', () => {
    const noise = fc.constantFrom(...'0123456789.-+/,() xyzXYZ_;\'"#\n\t?'.split(''), 'loop_', 'data_x', '_cell_length_a', 'nan', '1e999');
    const mutation = fc.record({ at: fc.nat(), del: fc.integer({ min: 0, max: 6 }), text: fc.oneof(noise, fc.constant('')) });
    let refused = 0;
    let read = 0;
    fc.assert(
      fc.property(fc.integer({ min: 0, max: 1 }), fc.array(mutation, { minLength: 1, maxLength: 4 }), (which, ms) => {
        let t = texts[which];
        for (const m of ms) {
          // the rock-salt file is long (operations); aim the mutations at its header and atom sites too
          const at = m.at % t.length;
          t = t.slice(0, at) + m.text + t.slice(at + m.del);
        }
        try {
          const frames = parseCif(t, 'x.cif');
          for (const f of frames) {
            expect(f.positions.length).toBe(3 * f.species.length);
            for (const x of f.positions) expect(Number.isFinite(x)).toBe(true);
            for (const x of f.cell!) expect(Number.isFinite(x)).toBe(true);
          }
          read++;
        } catch (e) {
          if (!(e instanceof InputError)) throw e;
          expect(e.where.file).toBe('x.cif');
          refused++;
        }
      }),
      { numRuns: 250 },
    );
    expect(refused).toBeGreaterThan(15);
    expect(read).toBeGreaterThan(15);
  });
});
