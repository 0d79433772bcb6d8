// What the Data view shows about an opened file: frames, atoms, species, cell and volume ranges, and which
// per-frame values look like tensors (9 numbers row-major, or 6 in Voigt order) with a guess of their kind.
import type { DatasetSummary, Range, TensorKeyInfo, TensorKindJ } from '../api/contract.ts';
import { cellParameters } from '../core/geometry/cell.ts';
import type { Frame } from '../core/geometry/frame.ts';
import { frameVolume } from './frame-json.ts';

function range(values: number[]): Range {
  let min = Infinity;
  let max = -Infinity;
  for (const v of values) {
    if (v < min) min = v;
    if (v > max) max = v;
  }
  return { min, max };
}

/** A guess from the key's name only; the user confirms it in the Model view. */
export function guessTensorKind(key: string): TensorKindJ | null {
  const k = key.toLowerCase();
  if (/eps|epsilon|dielectric/.test(k)) return 'eps';
  if (/(alpha|polari[sz]ability).*(cm|clausius|lorentz)|(cm|clausius)[_-]?(alpha|polar)/.test(k)) return 'alpha-cm';
  if (/(alpha|polari[sz]ability).*(mol|cluster|isolated)/.test(k)) return 'alpha-mol';
  if (/alpha|polari[sz]ability/.test(k)) return 'alpha-c';
  return null;
}

export function unitOfKind(kind: TensorKindJ | null): string {
  if (kind === 'eps') return 'dimensionless';
  if (kind === 'alpha-c' || kind === 'alpha-cm' || kind === 'alpha-mol') return 'Å³ (polarisability volume)';
  return 'unknown';
}

function isoMean(v: number[]): number {
  return v.length === 9 ? (v[0] + v[4] + v[8]) / 3 : (v[0] + v[1] + v[2]) / 3;
}

export function summariseDataset(id: string, name: string, frames: Frame[], origin: DatasetSummary['origin']): DatasetSummary {
  const warnings: string[] = [];
  const atoms = range(frames.map((f) => f.species.length));
  const first = frames[0];
  const perFrame = new Map<string, number>();
  for (const s of first.species) perFrame.set(s, (perFrame.get(s) ?? 0) + 1);
  const allSpecies = new Set<string>();
  for (const f of frames) for (const s of f.species) allSpecies.add(s);
  for (const s of allSpecies) if (!perFrame.has(s)) perFrame.set(s, 0);
  const species = [...perFrame.entries()].map(([symbol, n]) => ({ symbol, perFrame: n })).sort((a, b) => a.symbol.localeCompare(b.symbol));

  const volumes: number[] = [];
  let periodic = true;
  for (const f of frames) {
    const v = frameVolume(f);
    if (v === null) periodic = false;
    else volumes.push(v);
  }
  if (!periodic && volumes.length > 0) warnings.push(`${frames.length - volumes.length} of ${frames.length} frames have no periodic cell`);
  let firstCell: DatasetSummary['firstCell'] = null;
  if (first.cell && first.pbc.every(Boolean)) {
    const p = cellParameters(first.cell);
    firstCell = { a: p.a, b: p.b, c: p.c, alpha: p.alpha, beta: p.beta, gamma: p.gamma };
  }

  const tensorKeys: TensorKeyInfo[] = [];
  const otherKeys = new Set<string>();
  const keys = new Set<string>();
  for (const f of frames) for (const k of Object.keys(f.info)) keys.add(k);
  for (const key of [...keys].sort()) {
    const isos: number[] = [];
    let present = 0;
    for (const f of frames) {
      const v = f.info[key];
      if (Array.isArray(v) && (v.length === 9 || v.length === 6)) {
        present++;
        isos.push(isoMean(v));
      } else if (typeof v === 'number') otherKeys.add(key);
    }
    if (present > 0) {
      const kindGuess = guessTensorKind(key);
      tensorKeys.push({ key, kindGuess, unit: unitOfKind(kindGuess), frames: present, isoRange: range(isos) });
      if (present < frames.length) warnings.push(`tensor "${key}" is missing in ${frames.length - present} of ${frames.length} frames`);
    }
  }
  if (tensorKeys.length === 0) warnings.push('no per-frame tensor (9 or 6 numbers) found: this file can be predicted, not trained on');
  return {
    id,
    name,
    origin,
    frames: frames.length,
    atoms,
    species,
    periodic: periodic && volumes.length === frames.length,
    volumeA3: volumes.length ? range(volumes) : null,
    firstCell,
    tensorKeys,
    otherKeys: [...otherKeys].filter((k) => !tensorKeys.some((t) => t.key === k)).sort(),
    warnings,
  };
}
