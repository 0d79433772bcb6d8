// `polarweave reference`: a physics baseline without any training — the interacting point-dipole model
// (core/dielectric/dipole-model.ts) applied to every frame of a file, writing the frames back with its tensors added as
// info keys, so a trained model can be compared with it. The point polarisabilities and damping are the user's.
import { commandArgs, numberOption, UsageError } from '../args.ts';
import type { Command } from '../command.ts';
import { CancelledError } from '../../core/errors.ts';
import type { Frame } from '../../core/geometry/frame.ts';
import { cellPolarisability, referenceTensors, type DipoleModel } from '../../core/dielectric/dipole-model.ts';
import { fileKind, readStructures } from '../../io/read-structures.ts';
import { writeExtxyz } from '../../io/extxyz.ts';

const DEFAULT_THOLE = '0.45';

const options = [
  { name: 'polarisabilities', short: 'p', value: 'EL=Å³,…', help: 'point polarisability volume of each element, e.g. O=1.2,H=0.4' },
  { name: 'thole', value: 'a|none', help: 'Thole damping parameter a of the e^(−a u³) form; "none" for bare point dipoles', default: DEFAULT_THOLE },
  { name: 'key-prefix', value: 'NAME', help: 'prefix of the keys written (NAME_eps, NAME_alpha_c_A3, NAME_alpha_cm_A3; NAME_alpha_A3 for open frames)', default: 'dipole' },
  { name: 'accuracy', value: 'δ', help: 'relative size of the neglected Ewald tails', default: '1e-8' },
  { name: 'per-atom', flag: true, help: 'also write each atom\'s share of α_CM (9 columns NAME_atom_alpha_cm_A3; one more solve per frame)' },
  { name: 'output', short: 'o', value: 'OUT.extxyz', help: 'output file (extended XYZ; .gz compresses)' },
];

/** "O=1.2,H=0.4" → { O: 1.2, H: 0.4 }, with a clear message for anything else. */
export function parsePolarisabilities(text: string): Record<string, number> {
  const out: Record<string, number> = {};
  for (const part of text.split(',').map((s) => s.trim()).filter(Boolean)) {
    const m = /^([A-Z][a-z]?[a-z]?)\s*=\s*(\S+)$/.exec(part);
    if (!m) throw new UsageError(`--polarisabilities: "${part}" is not ELEMENT=VALUE (e.g. O=1.2)`);
    const v = Number(m[2]);
    if (!Number.isFinite(v) || v <= 0) throw new UsageError(`--polarisabilities: ${m[1]} must be a positive number of Å³, got "${m[2]}"`);
    if (m[1] in out) throw new UsageError(`--polarisabilities: ${m[1]} is given twice`);
    out[m[1]] = v;
  }
  if (Object.keys(out).length === 0) throw new UsageError('--polarisabilities is empty');
  return out;
}

function parseThole(text: string): number | null {
  if (text === 'none') return null;
  const v = Number(text);
  if (!Number.isFinite(v) || v <= 0) throw new UsageError(`--thole must be a positive number or "none", got "${text}"`);
  return v;
}

/** The frame with the dipole model's tensors added (row-major 3×3 lists). */
export function annotateWithDipoleModel(frame: Frame, model: DipoleModel, prefix: string, accuracy: number, perAtom: boolean): Frame {
  const where = frame.source ? { file: frame.source.file, line: frame.source.line, frame: frame.source.index } : {};
  const out: Frame = { ...frame, info: { ...frame.info }, arrays: { ...frame.arrays } };
  const periodic = frame.pbc.every(Boolean);
  if (periodic) {
    const ref = referenceTensors(frame, model, { accuracy, where });
    out.info[`${prefix}_eps`] = Array.from(ref.eps);
    out.info[`${prefix}_alpha_c_A3`] = Array.from(ref.alphaC);
    out.info[`${prefix}_alpha_cm_A3`] = Array.from(ref.alphaCM);
    if (perAtom) {
      const sph = cellPolarisability(frame, model, { accuracy, where, boundary: 'sphere' });
      out.arrays[`${prefix}_atom_alpha_cm_A3`] = { kind: 'real', width: 9, data: sph.atomAlpha };
    }
  } else {
    const res = cellPolarisability(frame, model, { where });
    out.info[`${prefix}_alpha_A3`] = Array.from(res.alpha);
    if (perAtom) out.arrays[`${prefix}_atom_alpha_A3`] = { kind: 'real', width: 9, data: res.atomAlpha };
  }
  const p = Object.entries(model.polarisabilities).map(([e, v]) => `${e}=${v}`).join(',');
  out.info[`${prefix}_model`] = `interacting point dipoles (${p} A^3; Thole a=${model.thole ?? 'none'}); a physics baseline, not a measurement`;
  return out;
}

export const referenceCommand: Command = {
  name: 'reference',
  summary: 'add ε and cell polarisabilities from the interacting point-dipole model (a baseline, no training)',
  usage: 'IN --polarisabilities EL=Å³,… [--thole a|none] -o OUT.extxyz',
  description:
    'Each atom gets the given isotropic point polarisability; the atoms polarise each other through the dipole\n' +
    'field (Thole-damped at short range; Ewald sums in periodic cells). Periodic frames get NAME_eps,\n' +
    'NAME_alpha_c_A3 (conducting boundary) and NAME_alpha_cm_A3 (Clausius–Mossotti); open frames NAME_alpha_A3.\n' +
    'The polarisabilities are yours to choose: the result is a model baseline, not a measurement.',
  options,
  async run(argv, io) {
    const { args, output } = commandArgs(argv, options, { inputs: 1, missing: 'give exactly one input file', output: 'give the output file with -o OUT.extxyz' });
    if (fileKind(output)?.kind !== 'extxyz') throw new UsageError(`the output is extended XYZ: name it .extxyz or .extxyz.gz, got "${output}"`);
    const spec = args.options.polarisabilities;
    if (!spec) throw new UsageError('give the point polarisabilities, e.g. --polarisabilities O=1.2,H=0.4');
    const model: DipoleModel = { polarisabilities: parsePolarisabilities(spec), thole: parseThole(args.options.thole ?? DEFAULT_THOLE) };
    const accuracy = numberOption(args, 'accuracy', { min: 1e-15, max: 0.1 }) as number;
    const prefix = args.options['key-prefix'] as string;
    if (!/^[A-Za-z_][A-Za-z0-9_]*$/.test(prefix)) throw new UsageError(`--key-prefix must be letters, digits and _, got "${prefix}"`);
    const input = args.positionals[0];
    const started = Date.now();
    let count = 0;
    let last = started;
    async function* annotated(): AsyncGenerator<Frame> {
      for await (const frame of readStructures(input, { signal: io.signal })) {
        if (io.signal.aborted) throw new CancelledError();
        yield annotateWithDipoleModel(frame, model, prefix, accuracy, args.flags['per-atom']);
        count++;
        if (Date.now() - last > 1000) {
          last = Date.now();
          io.err(`reference: ${count} frames\n`);
        }
        await new Promise((r) => setTimeout(r, 0)); // let Ctrl-C through
      }
    }
    await writeExtxyz(output, annotated(), { signal: io.signal });
    io.err(`reference: ${count} frames in ${((Date.now() - started) / 1000).toFixed(1)} s\n`);
    io.out(`${count} frames with dipole-model tensors (keys ${prefix}_*) written to ${output}\n`);
    io.out('These are values of a simple physical model with the polarisabilities you gave, not measurements.\n');
    return 0;
  },
};
