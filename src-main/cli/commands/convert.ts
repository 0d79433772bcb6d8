// `polarweave convert`: every frame's tensor from one kind to another — ε, the conducting-boundary cell
// polarisability α_c, or the Clausius–Mossotti polarisability α_CM — with unit conversion, written as
// extended XYZ (the tensor added as a property) or as a per-frame CSV table.
import { commandArgs, UsageError } from '../args.ts';
import type { Command } from '../command.ts';
import { CELL_TENSOR_KINDS } from '../../core/dielectric/clausius-mossotti.ts';
import type { CellTensorKind } from '../../core/learning/model-types.ts';
import { parsePolarisabilityUnit } from '../../core/dielectric/units.ts';
import { fileKind } from '../../io/read-structures.ts';
import { convertTensors } from '../../app/tensor-conversion.ts';

const options = [
  { name: 'tensor', value: 'KEY', help: 'property holding the input tensor (9 numbers row-major or 6 Voigt)' },
  { name: 'as', value: 'KIND', help: 'what the input tensor is: eps, alpha-c or alpha-cm' },
  { name: 'to', value: 'KIND', help: 'what to convert it to: eps, alpha-c or alpha-cm' },
  { name: 'units', value: 'UNIT', help: 'units of input polarisabilities: A3 (polarisability volume), bohr3 or si (C·m²/V)', default: 'A3' },
  { name: 'out-units', value: 'UNIT', help: 'units of output polarisabilities (default: as --units)' },
  { name: 'out-key', value: 'KEY', help: 'property name for the result in extended XYZ output (default from --to and units)' },
  { name: 'output', short: 'o', value: 'OUT', help: 'output file: .extxyz/.xyz (frames with the tensor added) or .csv (one row per frame)' },
];

export function parseKind(text: string | undefined, option: string): CellTensorKind {
  if (text === undefined) throw new UsageError(`--${option} is required (eps, alpha-c or alpha-cm)`);
  if (text === 'alpha-mol') throw new UsageError(`--${option} alpha-mol: an isolated molecule's polarisability has no cell volume, so it converts to nothing (ε, n and Δn are not defined for a lone molecule)`);
  if (!(CELL_TENSOR_KINDS as readonly string[]).includes(text)) throw new UsageError(`--${option} must be eps, alpha-c or alpha-cm, got "${text}"`);
  return text as CellTensorKind;
}

export const convertCommand: Command = {
  name: 'convert',
  summary: 'convert every frame\'s tensor between ε, α_c and α_CM (Clausius–Mossotti relation) and units',
  usage: 'IN --tensor KEY --as eps|alpha-c|alpha-cm --to eps|alpha-c|alpha-cm [--units A3|bohr3|si] -o OUT(.extxyz|.csv)',
  description:
    'Relations (exact for tensors): ε = I + (4π/V) α_c;  α_CM = (3V/4π)(ε − I)(ε + 2I)⁻¹;  ε = (I + 2X)(I − X)⁻¹ with X = (4π/3V) α_CM.\n' +
    'Polarisabilities are polarisability volumes (Å³) unless --units says otherwise. V is the cell volume of each frame.',
  options,
  async run(argv, io) {
    const { args } = commandArgs(argv, options, { inputs: 1, missing: 'give exactly one input file' });
    const key = args.options.tensor;
    if (!key) throw new UsageError('--tensor KEY is required (see `polarweave inspect IN` for the keys)');
    const from = parseKind(args.options.as, 'as');
    const to = parseKind(args.options.to, 'to');
    const inUnit = parsePolarisabilityUnit(args.options.units ?? 'A3');
    const outUnit = parsePolarisabilityUnit(args.options['out-units'] ?? args.options.units ?? 'A3');
    const out = args.options.output;
    if (!out) throw new UsageError('-o OUT is required (.extxyz, .xyz or .csv)');
    const outKind = fileKind(out);
    const csv = outKind?.kind === 'csv' && !outKind.gzip;
    if (!csv && outKind?.kind !== 'extxyz') throw new UsageError(`cannot tell the output kind of "${out}": use .extxyz, .xyz or .csv`);
    const input = args.positionals[0];
    let shown = 0;
    const r = await convertTensors({
      input, output: out, key, from, to, inUnit, outUnit, outKey: args.options['out-key'], signal: io.signal,
      onWarning: (w) => {
        if (shown++ < 5) io.err(`warning: ${w}\n`);
      },
    });
    const warned = r.warnings;
    const count = r.frames;
    const outKey = r.outKey;
    if (warned > 5) io.err(`(${warned - 5} more warnings not shown)\n`);
    io.err(`converted ${count} frames: ${key} (${from}) → ${to}${to === 'eps' ? '' : ` in ${outUnit}`}; wrote ${out}${csv ? '' : ` (property ${outKey})`}\n`);
    return 0;
  },
};
