// `polarweave convert`: every frame's tensor from one kind to another — ε, the conducting-boundary cell
// polarisability α_c, or the Clausius–Mossotti polarisability α_CM — with unit conversion, written as
// extended XYZ (the tensor added as a property) or as a per-frame CSV table.
import { parseArgs, UsageError } from '../args.ts';
import type { Command } from '../command.ts';
import { cellVolume } from '../../core/geometry/cell.ts';
import { convertTensor, epsWarnings, TENSOR_KINDS } from '../../core/dielectric/clausius-mossotti.ts';
import { CancelledError, InputError, type Where } from '../../core/errors.ts';
import type { Frame, Mat3 } from '../../core/geometry/frame.ts';
import type { TensorKind } from '../../core/learning/model-types.ts';
import { tensorFromValues } from '../../core/dielectric/tensor.ts';
import { parsePolarisabilityUnit, tensorFromA3, tensorToA3, type PolarisabilityUnit } from '../../core/dielectric/units.ts';
import { writeExtxyz } from '../../io/extxyz.ts';
import { readStructures } from '../../io/read-structures.ts';
import { tensorKey } from '../../io/tensor-keys.ts';
import { writeFrameTensorCsv } from '../tensor-table.ts';

const options = [
  { name: 'tensor', value: 'KEY', help: 'property holding the input tensor (9 numbers row-major or 6 Voigt)' },
  { name: 'as', value: 'KIND', help: 'what the input tensor is: eps, alpha-c or alpha-cm' },
  { name: 'to', value: 'KIND', help: 'what to convert it to: eps, alpha-c or alpha-cm' },
  { name: 'units', value: 'UNIT', help: 'units of input polarisabilities: A3 (polarisability volume), bohr3 or si (C·m²/V)', default: 'A3' },
  { name: 'out-units', value: 'UNIT', help: 'units of output polarisabilities (default: as --units)' },
  { name: 'out-key', value: 'KEY', help: 'property name for the result in extended XYZ output (default from --to and units)' },
  { name: 'output', short: 'o', value: 'OUT', help: 'output file: .extxyz/.xyz (frames with the tensor added) or .csv (one row per frame)' },
];

export function parseKind(text: string | undefined, option: string): TensorKind {
  if (text === undefined) throw new UsageError(`--${option} is required (eps, alpha-c or alpha-cm)`);
  if (!(TENSOR_KINDS as readonly string[]).includes(text)) throw new UsageError(`--${option} must be eps, alpha-c or alpha-cm, got "${text}"`);
  return text as TensorKind;
}

export function whereOf(frame: Frame): Where {
  return { file: frame.source?.file, line: frame.source?.line, frame: frame.source?.index };
}

/** The tensor `key` of a frame as a Mat3, with a clear error when it is missing. */
export function frameTensor(frame: Frame, key: string): Mat3 {
  const v = frame.info[key];
  if (v === undefined) {
    const keys = Object.entries(frame.info).filter(([, x]) => Array.isArray(x) && (x.length === 9 || x.length === 6)).map(([k]) => k);
    throw new InputError(`property "${key}" not found`, whereOf(frame), keys.length ? `tensor properties here: ${keys.join(', ')}` : 'this frame has no tensor properties (9 or 6 numbers)');
  }
  if (!Array.isArray(v)) throw new InputError(`property "${key}" is not a list of numbers`, whereOf(frame), 'a tensor is 9 numbers (row-major) or 6 (Voigt)');
  return tensorFromValues(v, whereOf(frame));
}

/** Volume of a periodic frame, or an error saying the relation needs one. */
export function frameVolume(frame: Frame): number {
  if (!frame.cell || !frame.pbc.some(Boolean)) {
    throw new InputError('the Clausius–Mossotti relation needs the cell volume, but this frame has no periodic cell', whereOf(frame), 'add a Lattice to the frame');
  }
  return cellVolume(frame.cell, whereOf(frame));
}

/** The usual name (io/tensor-keys.ts), except that a converted ε is not given the name an input ε∞ has. */
function defaultKey(kind: TensorKind, unit: PolarisabilityUnit): string {
  return kind === 'eps' ? 'eps_converted' : tensorKey(kind, unit);
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
    const args = parseArgs(argv, options);
    if (args.positionals.length !== 1) throw new UsageError('give exactly one input file');
    const key = args.options.tensor;
    if (!key) throw new UsageError('--tensor KEY is required (see `polarweave inspect IN` for the keys)');
    const from = parseKind(args.options.as, 'as');
    const to = parseKind(args.options.to, 'to');
    const inUnit = parsePolarisabilityUnit(args.options.units ?? 'A3');
    const outUnit = parsePolarisabilityUnit(args.options['out-units'] ?? args.options.units ?? 'A3');
    const out = args.options.output;
    if (!out) throw new UsageError('-o OUT is required (.extxyz, .xyz or .csv)');
    const csv = /\.csv$/i.test(out);
    if (!csv && !/\.(ext)?xyz$/i.test(out)) throw new UsageError(`cannot tell the output kind of "${out}": use .extxyz, .xyz or .csv`);
    const outKey = args.options['out-key'] ?? defaultKey(to, outUnit);
    const input = args.positionals[0];
    let warned = 0;
    let count = 0;

    const converted = async function* (): AsyncGenerator<{ frame: Frame; eps: Mat3; alphaCM: Mat3; alphaC: Mat3; result: Mat3; volume: number }> {
      for await (const frame of readStructures(input, { signal: io.signal })) {
        if (io.signal.aborted) throw new CancelledError();
        const raw = frameTensor(frame, key);
        const T = from === 'eps' ? raw : tensorToA3(raw, inUnit);
        const volume = frameVolume(frame);
        const where = whereOf(frame);
        const eps = convertTensor(T, from, 'eps', volume, where);
        for (const w of epsWarnings(eps)) {
          if (warned++ < 5) io.err(`warning: ${input}, frame ${frame.source?.index ?? count}: ${w}\n`);
        }
        const alphaCM = convertTensor(T, from, 'alpha-cm', volume, where);
        const alphaC = convertTensor(T, from, 'alpha-c', volume, where);
        const resultA3 = to === 'eps' ? eps : to === 'alpha-cm' ? alphaCM : alphaC;
        const result = to === 'eps' ? resultA3 : tensorFromA3(resultA3, outUnit);
        count++;
        yield { frame, eps, alphaCM, alphaC, result, volume };
      }
    };

    if (csv) {
      await writeFrameTensorCsv(out, converted(), {
        source: `converted from ${input} (${key}, ${from}) by polarweave convert`,
        alphaUnit: outUnit,
      });
    } else {
      await writeExtxyz(
        out,
        (async function* () {
          for await (const c of converted()) {
            c.frame.info[outKey] = Array.from(c.result);
            yield c.frame;
          }
        })(),
      );
    }
    if (warned > 5) io.err(`(${warned - 5} more warnings not shown)\n`);
    io.err(`converted ${count} frames: ${key} (${from}) → ${to}${to === 'eps' ? '' : ` in ${outUnit}`}; wrote ${out}${csv ? '' : ` (property ${outKey})`}\n`);
    return 0;
  },
};
