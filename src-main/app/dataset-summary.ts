// What the Data view shows about an opened file: frames, atoms, species, cell and volume ranges, and which
// per-frame values look like tensors (9 numbers row-major, or 6 in Voigt order) with a guess of their kind. The
// figures are the structure tally's (app/structure-tally.ts), the ones `polarweave inspect` prints.
import type { DatasetSummary, Range, TensorKeyInfo, TensorKindJ } from '../api/contract.ts';
import type { Frame } from '../core/geometry/frame.ts';
import { StructureTally, type Range as TallyRange } from './structure-tally.ts';

const range = (r: TallyRange): Range => ({ min: r.min, max: r.max });

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

export function summariseDataset(id: string, name: string, frames: Frame[], origin: DatasetSummary['origin']): DatasetSummary {
  const t = new StructureTally(name);
  for (const f of frames) t.add(f);
  const warnings: string[] = [];
  const species = [...t.species.keys()].map((symbol) => ({ symbol, perFrame: t.firstFrameSpecies.get(symbol) ?? 0 })).sort((a, b) => a.symbol.localeCompare(b.symbol));
  if (t.periodic > 0 && t.periodic < t.frames) warnings.push(`${t.frames - t.periodic} of ${t.frames} frames have no periodic cell`);
  const tensorKeys: TensorKeyInfo[] = [];
  for (const key of [...t.tensors.keys()].sort()) {
    const k = t.tensors.get(key)!;
    const kindGuess = guessTensorKind(key);
    tensorKeys.push({ key, kindGuess, unit: unitOfKind(kindGuess), frames: k.frames, isoRange: range(k.isotropic) });
    if (k.frames < t.frames) warnings.push(`tensor "${key}" is missing in ${t.frames - k.frames} of ${t.frames} frames`);
  }
  if (tensorKeys.length === 0) warnings.push('no per-frame tensor (9 or 6 numbers) found: this file can be predicted, not trained on');
  return {
    id,
    name,
    origin,
    frames: t.frames,
    atoms: range(t.atoms),
    species,
    periodic: t.frames > 0 && t.periodic === t.frames,
    isolatedFrames: t.isolated,
    volumeA3: t.periodic ? range(t.volumeA3) : null,
    firstCell: t.firstCell,
    tensorKeys,
    otherKeys: [...t.scalars.keys()].filter((k) => !t.tensors.has(k)).sort(),
    warnings,
  };
}
