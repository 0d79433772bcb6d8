import { readFileSync } from 'node:fs';
import { describe, expect, it } from 'vitest';
import { makeFrame } from '../../../src-main/core/geometry/frame.ts';
import { findMolecules, sumByMolecule } from '../../../src-main/core/geometry/molecules.ts';
import { parseExtxyz } from '../../../src-main/io/extxyz.ts';

describe('molecules by covalent bonds', () => {
  it('joins a water molecule across the periodic boundary and keeps separate molecules apart', () => {
    // O near x = 0, one H through the boundary at x ≈ 4.44 in a 5 Å cell (O–H 0.957 Å, H–O–H 104.5°:
    // the usual rigid water geometry, from memory); a second molecule in the middle of the cell.
    const c = Math.cos((52.25 * Math.PI) / 180) * 0.957;
    const s = Math.sin((52.25 * Math.PI) / 180) * 0.957;
    const pos = [0.2, 2.5, 1.0, 5 + 0.2 - s, 2.5 + c, 1.0, 0.2 + s, 2.5 + c, 1.0 - 0]; // H1 wrapped into the cell
    pos.push(2.5, 1.0, 3.5, 2.5 - s, 1.0 + c, 3.5, 2.5 + s, 1.0 + c, 3.5);
    const frame = makeFrame(['O', 'H', 'H', 'O', 'H', 'H'], pos, [5, 0, 0, 0, 5, 0, 0, 0, 5]);
    const m = findMolecules(frame);
    expect(m.count).toBe(2);
    expect(m.members).toEqual([[0, 1, 2], [3, 4, 5]]);
    // without periodicity the wrapped H is a molecule of its own
    const open = { ...frame, cell: null, pbc: [false, false, false] as [boolean, boolean, boolean] };
    expect(findMolecules(open).count).toBe(3);
    const local = Float64Array.from({ length: 6 }, (_, i) => i + 1);
    expect([...sumByMolecule(local, 1, m)]).toEqual([6, 15]);
  });

  it('finds the 16 molecules of each real water frame (H-bonds are not bonds)', () => {
    const frames = parseExtxyz(readFileSync(new URL('../../fixtures/water-dft-sample.extxyz', import.meta.url), 'utf8'), 'water');
    for (const f of frames) {
      const m = findMolecules(f);
      expect(m.count).toBe(16);
      for (const g of m.members) expect(g.map((i) => f.species[i]).sort()).toEqual(['H', 'H', 'O']);
    }
  });
});
