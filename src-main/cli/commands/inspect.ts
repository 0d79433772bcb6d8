// `polarweave inspect IN`: what is in a structure file — frames, atoms, species, cell and volume range, the
// tensor-valued properties found and the range of their values — read frame by frame (any file size).
import { parseArgs, UsageError } from '../args.ts';
import type { Command } from '../command.ts';
import { cellVolume } from '../../core/geometry/cell.ts';
import { CancelledError } from '../../core/errors.ts';
import type { Frame } from '../../core/geometry/frame.ts';
import { anisotropy, isotropicMean, symmetricEigen, tensorFromValues } from '../../core/dielectric/tensor.ts';
import { readStructures } from '../../io/read-structures.ts';

const options = [{ name: 'json', flag: true, help: 'print the summary as JSON' }];

/** Running range of one number. */
class Range {
  min = Infinity;
  max = -Infinity;
  add(v: number): void {
    if (v < this.min) this.min = v;
    if (v > this.max) this.max = v;
  }
  toJSON() {
    return { min: this.min, max: this.max };
  }
}

interface TensorSummary {
  frames: number;
  /** How the values were written: 9 (row-major) or 6 (Voigt). */
  components: Set<number>;
  isotropic: Range;
  anisotropy: Range;
  principal: Range;
}

export interface FileSummary {
  file: string;
  frames: number;
  atoms: Range;
  species: Map<string, number>;
  periodic: number;
  volumeA3: Range;
  tensors: Map<string, TensorSummary>;
  scalars: Map<string, Range>;
  strings: Map<string, Set<string>>;
  atomArrays: Set<string>;
}


export async function summariseFile(file: string, signal?: AbortSignal): Promise<FileSummary> {
  const s: FileSummary = {
    file,
    frames: 0,
    atoms: new Range(),
    species: new Map(),
    periodic: 0,
    volumeA3: new Range(),
    tensors: new Map(),
    scalars: new Map(),
    strings: new Map(),
    atomArrays: new Set(),
  };
  for await (const frame of readStructures(file, { signal })) {
    if (signal?.aborted) throw new CancelledError();
    s.frames++;
    s.atoms.add(frame.species.length);
    for (const sp of frame.species) s.species.set(sp, (s.species.get(sp) ?? 0) + 1);
    if (frame.cell && frame.pbc.some(Boolean)) {
      s.periodic++;
      s.volumeA3.add(cellVolume(frame.cell, { file, frame: frame.source?.index, line: frame.source?.line }));
    }
    for (const key of Object.keys(frame.arrays)) s.atomArrays.add(key);
    for (const [key, value] of Object.entries(frame.info)) {
      if (Array.isArray(value) && (value.length === 9 || value.length === 6)) {
        const T = tensorFromValues(value, { file, line: frame.source?.line, frame: frame.source?.index });
        let t = s.tensors.get(key);
        if (!t) {
          t = { frames: 0, components: new Set(), isotropic: new Range(), anisotropy: new Range(), principal: new Range() };
          s.tensors.set(key, t);
        }
        t.frames++;
        t.components.add(value.length);
        t.isotropic.add(isotropicMean(T));
        t.anisotropy.add(anisotropy(T));
        for (const v of symmetricEigen(T).values) t.principal.add(v);
      } else if (typeof value === 'number') {
        let r = s.scalars.get(key);
        if (!r) s.scalars.set(key, (r = new Range()));
        r.add(value);
      } else if (typeof value === 'string') {
        let set = s.strings.get(key);
        if (!set) s.strings.set(key, (set = new Set()));
        if (set.size < 20) set.add(value);
      }
    }
  }
  return s;
}

const fmt = (v: number) => (Number.isFinite(v) ? Number(v.toPrecision(6)).toString() : '—');
const range = (r: Range) => (r.min === r.max ? fmt(r.min) : `${fmt(r.min)} … ${fmt(r.max)}`);

/** A guess, from the key's name, of what a tensor is, so the user knows which --as to give. */
export function guessKind(key: string): string {
  const k = key.toLowerCase();
  if (/eps|dielectric|epsilon/.test(k)) return 'looks like ε (use --as eps)';
  if (/cm|clausius/.test(k) && /alpha|polar/.test(k)) return 'looks like α_CM (use --as alpha-cm)';
  if (/alpha|polar/.test(k)) return 'looks like a cell polarisability (α_c from periodic linear response: --as alpha-c)';
  return 'kind unknown (give --as eps|alpha-c|alpha-cm)';
}

export function formatSummary(s: FileSummary): string {
  const lines = [
    `file      ${s.file}`,
    `frames    ${s.frames}`,
    `atoms     ${range(s.atoms)} per frame`,
    `species   ${[...s.species].map(([k, n]) => `${k} ${(n / s.frames).toFixed(n % s.frames === 0 ? 0 : 1)}`).join(', ')} (per frame, mean)`,
    `cell      ${s.periodic === s.frames ? 'periodic in every frame' : `${s.periodic} of ${s.frames} frames periodic`}` +
      (s.periodic ? `, volume ${range(s.volumeA3)} Å³` : ''),
  ];
  if (s.tensors.size === 0) lines.push('tensors   none found (a tensor is a property of 9 or 6 numbers)');
  for (const [key, t] of s.tensors) {
    lines.push(
      `tensor    ${key}: ${t.frames} frames, ${[...t.components].join('/')} numbers; isotropic mean ${range(t.isotropic)}, ` +
        `anisotropy ${range(t.anisotropy)}, principal values ${range(t.principal)} — ${guessKind(key)}`,
    );
  }
  for (const [key, r] of s.scalars) lines.push(`number    ${key}: ${range(r)}`);
  for (const [key, set] of s.strings) lines.push(`text      ${key}: ${[...set].slice(0, 6).join(', ')}${set.size > 6 ? ', …' : ''}`);
  if (s.atomArrays.size) lines.push(`per atom  ${[...s.atomArrays].join(', ')}`);
  return lines.join('\n') + '\n';
}

export const inspectCommand: Command = {
  name: 'inspect',
  summary: 'summarise a structure file: frames, species, cells, tensor properties and their ranges',
  usage: 'IN [--json]',
  description: 'Reads extended XYZ (.xyz, .extxyz, also gzip-compressed) or CIF, one frame at a time.',
  options,
  async run(argv, io) {
    const args = parseArgs(argv, options);
    if (args.positionals.length !== 1) throw new UsageError('give exactly one input file');
    const s = await summariseFile(args.positionals[0], io.signal);
    if (args.flags.json) {
      io.out(
        JSON.stringify(
          {
            ...s,
            species: Object.fromEntries(s.species),
            tensors: Object.fromEntries([...s.tensors].map(([k, t]) => [k, { ...t, components: [...t.components], kindGuess: guessKind(k) }])),
            scalars: Object.fromEntries(s.scalars),
            strings: Object.fromEntries([...s.strings].map(([k, v]) => [k, [...v]])),
            atomArrays: [...s.atomArrays],
          },
          null,
          2,
        ) + '\n',
      );
    } else {
      io.out(formatSummary(s));
    }
    return 0;
  },
};
