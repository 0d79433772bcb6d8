// Bonds for drawing: pairs closer than factor × (r_i + r_j) (covalent radii), found with a grid of bins so the
// cost grows with the atom count, not its square. With a cell, positions are binned by fractional coordinate
// (wrapped), neighbouring bins wrap around, and each pair's vector is its minimum image (rounding the
// fractional difference: exact for the short bond lengths in any cell at least ~2 bond lengths wide).

export interface Bond {
  i: number;
  j: number;
  /** Vector from atom i to (the nearest image of) atom j, Å. */
  d: [number, number, number];
}

/** Minimum-image vector by rounding the fractional difference (inv = H⁻¹, cell rows = lattice vectors). */
export function roundedImage(dx: number, dy: number, dz: number, cell: ArrayLike<number>, inv: ArrayLike<number>): [number, number, number] {
  let fa = dx * inv[0] + dy * inv[3] + dz * inv[6];
  let fb = dx * inv[1] + dy * inv[4] + dz * inv[7];
  let fc = dx * inv[2] + dy * inv[5] + dz * inv[8];
  fa -= Math.round(fa);
  fb -= Math.round(fb);
  fc -= Math.round(fc);
  return [fa * cell[0] + fb * cell[3] + fc * cell[6], fa * cell[1] + fb * cell[4] + fc * cell[7], fa * cell[2] + fb * cell[5] + fc * cell[8]];
}

export function findBonds(
  positions: ArrayLike<number>,
  radii: ArrayLike<number>,
  cell: ArrayLike<number> | null,
  inv: ArrayLike<number> | null,
  factor = 1.2,
): Bond[] {
  const n = radii.length;
  if (n < 2) return [];
  let rmax = 0;
  for (let i = 0; i < n; i++) rmax = Math.max(rmax, radii[i]);
  const reach = 2 * factor * rmax; // no bond is longer
  // bin coordinates: fractional (cell) or Cartesian over the bounding box
  const coord = new Float64Array(3 * n);
  const bins = [1, 1, 1];
  if (cell && inv) {
    for (let i = 0; i < n; i++) {
      const x = positions[3 * i];
      const y = positions[3 * i + 1];
      const z = positions[3 * i + 2];
      for (let k = 0; k < 3; k++) {
        const f = x * inv[k] + y * inv[3 + k] + z * inv[6 + k];
        coord[3 * i + k] = f - Math.floor(f);
      }
    }
    // perpendicular width of the cell along each axis = 1 / |row k of H⁻¹ᵀ| = 1 / |column k of H⁻¹|
    for (let k = 0; k < 3; k++) {
      const width = 1 / Math.hypot(inv[k], inv[3 + k], inv[6 + k]);
      bins[k] = Math.max(1, Math.floor(width / reach));
    }
  } else {
    const lo = [Infinity, Infinity, Infinity];
    const hi = [-Infinity, -Infinity, -Infinity];
    for (let i = 0; i < n; i++)
      for (let k = 0; k < 3; k++) {
        lo[k] = Math.min(lo[k], positions[3 * i + k]);
        hi[k] = Math.max(hi[k], positions[3 * i + k]);
      }
    for (let k = 0; k < 3; k++) {
      const span = hi[k] - lo[k];
      bins[k] = Math.max(1, Math.min(1024, Math.floor(span / reach)));
      for (let i = 0; i < n; i++) coord[3 * i + k] = span > 0 ? Math.min(1 - 1e-12, (positions[3 * i + k] - lo[k]) / span) : 0;
    }
  }
  const periodic = cell !== null && inv !== null;
  const [na, nb, nc] = bins;
  const cellOf = new Int32Array(n);
  const counts = new Int32Array(na * nb * nc + 1);
  for (let i = 0; i < n; i++) {
    const a = Math.min(na - 1, Math.floor(coord[3 * i] * na));
    const b = Math.min(nb - 1, Math.floor(coord[3 * i + 1] * nb));
    const c = Math.min(nc - 1, Math.floor(coord[3 * i + 2] * nc));
    cellOf[i] = (a * nb + b) * nc + c;
    counts[cellOf[i] + 1]++;
  }
  for (let k = 1; k < counts.length; k++) counts[k] += counts[k - 1];
  const order = new Int32Array(n);
  const fill = counts.slice(0, -1);
  for (let i = 0; i < n; i++) order[fill[cellOf[i]]++] = i;

  const out: Bond[] = [];
  const neighbourBins = new Set<number>();
  const range = (m: number) => (m >= 3 ? [-1, 0, 1] : m === 2 ? [0, 1] : [0]);
  for (let i = 0; i < n; i++) {
    const c0 = cellOf[i];
    const a0 = Math.floor(c0 / (nb * nc));
    const b0 = Math.floor(c0 / nc) % nb;
    const cc0 = c0 % nc;
    neighbourBins.clear();
    for (const da of range(na))
      for (const db of range(nb))
        for (const dc of range(nc)) {
          let a = a0 + da;
          let b = b0 + db;
          let c = cc0 + dc;
          if (periodic) {
            a = (a + na) % na;
            b = (b + nb) % nb;
            c = (c + nc) % nc;
          } else if (a < 0 || b < 0 || c < 0 || a >= na || b >= nb || c >= nc) continue;
          neighbourBins.add((a * nb + b) * nc + c);
        }
    const xi = positions[3 * i];
    const yi = positions[3 * i + 1];
    const zi = positions[3 * i + 2];
    for (const bin of neighbourBins) {
      for (let p = counts[bin]; p < counts[bin + 1]; p++) {
        const j = order[p];
        if (j <= i) continue;
        let d: [number, number, number] = [positions[3 * j] - xi, positions[3 * j + 1] - yi, positions[3 * j + 2] - zi];
        if (periodic) d = roundedImage(d[0], d[1], d[2], cell!, inv!);
        const r2 = d[0] * d[0] + d[1] * d[1] + d[2] * d[2];
        const lim = factor * (radii[i] + radii[j]);
        if (r2 > 0.01 && r2 < lim * lim) out.push({ i, j, d });
      }
    }
  }
  return out;
}
