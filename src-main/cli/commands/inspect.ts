// `polarweave inspect IN`: prints what the inspect use case (app/file-summary.ts) finds in a structure file.
import { commandArgs } from '../args.ts';
import type { Command } from '../command.ts';
import { summariseFile, type FileSummary, type Range } from '../../app/file-summary.ts';
import { guessTensorKind } from '../../app/dataset-summary.ts';

const options = [{ name: 'json', flag: true, help: 'print the summary as JSON' }];

const fmt = (v: number) => (Number.isFinite(v) ? Number(v.toPrecision(6)).toString() : '—');
const range = (r: Range) => (r.min === r.max ? fmt(r.min) : `${fmt(r.min)} … ${fmt(r.max)}`);

/** A guess, from the key's name, of what a tensor is, so the user knows which --as to give. */
export function guessKind(key: string): string {
  const kind = guessTensorKind(key);
  if (kind === 'eps') return 'looks like ε (use --as eps)';
  if (kind === 'alpha-cm') return 'looks like α_CM (use --as alpha-cm)';
  if (kind === 'alpha-mol') return 'looks like the polarisability of an isolated molecule or cluster (frames without a cell: --as alpha-mol)';
  if (kind === 'alpha-c') return 'looks like a cell polarisability (α_c from periodic linear response: --as alpha-c)';
  return 'kind unknown (give --as eps|alpha-c|alpha-cm|alpha-mol)';
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
    const { args } = commandArgs(argv, options, { inputs: 1, missing: 'give exactly one input file' });
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
