// Frames as the window sees them (app/frame-json.ts): an isolated molecule or cluster reaches the 3D view without
// a cell, so the scene draws no cell box and finds no bonds through periodic images.
import { describe, expect, it } from 'vitest';
import { frameView } from '../../src-main/app/frame-json.ts';
import { makeFrame, type Frame } from '../../src-main/core/geometry/frame.ts';
import { buildScene } from '../../src-renderer/components/structure/structure-scene.ts';

describe('frameView of frames without periodicity', () => {
  // two C atoms 1.5 Å apart across a 4 Å box edge would be bonded through the periodic image, but not in a cluster
  const positions = [0.2, 2, 2, 3.7, 2, 2];
  it('a cluster with a Lattice but pbc="F F F" has no cell, no volume, no box edges and no bond across the box', () => {
    const boxed: Frame = { ...makeFrame(['C', 'C'], positions, [4, 0, 0, 0, 4, 0, 0, 0, 4]), pbc: [false, false, false] };
    const v = frameView('d', 0, boxed);
    expect(v.cell).toBeNull();
    expect(v.volumeA3).toBeNull();
    const scene = buildScene({ species: v.species, positions: v.positions, cell: v.cell }, 'none');
    expect(scene.edges).toHaveLength(0);
    expect(scene.bonds).toHaveLength(0);
  });

  it('the same atoms in a periodic cell keep the cell: 12 box edges and the bond through the image', () => {
    const v = frameView('d', 0, makeFrame(['C', 'C'], positions, [4, 0, 0, 0, 4, 0, 0, 0, 4]));
    expect(v.cell).toHaveLength(9);
    const scene = buildScene({ species: v.species, positions: v.positions, cell: v.cell }, 'none');
    expect(scene.edges).toHaveLength(12);
    expect(scene.bonds.length).toBeGreaterThan(0);
  });
});
