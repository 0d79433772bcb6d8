// The one structure type every module speaks: a periodic (or open) snapshot of atoms with per-frame
// properties (scalars, strings, tensors) and per-atom arrays. Positions and cell are in ångström.

/** 3×3 matrix, row-major, length 9. For a cell, rows are the lattice vectors a, b, c (Å). */
export type Mat3 = Float64Array;

/** A per-frame property value as read from a file: number, string, boolean or a flat numeric array. */
export type InfoValue = number | string | boolean | number[];

/** An extra per-atom column block: `width` values per atom, numeric or string. */
export type AtomArray =
  | { kind: 'real'; width: number; data: Float64Array }
  | { kind: 'int'; width: number; data: Int32Array }
  | { kind: 'bool'; width: number; data: Uint8Array }
  | { kind: 'string'; width: number; data: string[] };

/** Where a frame came from, so errors and warnings can say file, line and frame. */
export interface FrameSource {
  file: string;
  /** 0-based frame index within the file. */
  index: number;
  /** 1-based line of the frame's first line (the atom count line for extended XYZ). */
  line: number;
}

export interface Frame {
  /** Element symbols, one per atom (e.g. "O", "H"). */
  species: string[];
  /** Cartesian positions, 3 per atom, Å. */
  positions: Float64Array;
  /** Lattice vectors as rows (Å), or null for an open structure. */
  cell: Mat3 | null;
  pbc: [boolean, boolean, boolean];
  /** Per-frame properties (key=value pairs of extended XYZ, CIF data items kept). */
  info: Record<string, InfoValue>;
  /** Extra per-atom arrays (not species or positions). */
  arrays: Record<string, AtomArray>;
  source?: FrameSource;
}

export function atomCount(frame: Frame): number {
  return frame.species.length;
}

/** A frame with the given atoms and cell; pbc is true on all axes when a cell is given. */
export function makeFrame(species: string[], positions: ArrayLike<number>, cell: ArrayLike<number> | null): Frame {
  if (positions.length !== 3 * species.length) {
    throw new RangeError(`makeFrame: ${species.length} atoms need ${3 * species.length} coordinates, got ${positions.length}`);
  }
  const periodic = cell !== null;
  return {
    species: [...species],
    positions: Float64Array.from(positions),
    cell: cell === null ? null : Float64Array.from(cell),
    pbc: [periodic, periodic, periodic],
    info: {},
    arrays: {},
  };
}
