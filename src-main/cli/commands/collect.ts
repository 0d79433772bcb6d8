// `polarweave collect`: finished linear-response DFT runs (CP2K, Quantum ESPRESSO pw.x + ph.x) into one
// extended XYZ file of reference frames. The work is app/collect.ts; this prints its report.
import { parseArgs, UsageError } from '../args.ts';
import type { Command } from '../command.ts';
import { collectToFile, describeStatus } from '../../app/collect-references.ts';
import { tensorKey } from '../../io/tensor-keys.ts';

const options = [{ name: 'output', short: 'o', value: 'OUT.extxyz', help: 'the collected frames (extended XYZ; .gz compresses)' }];

export const collectCommand: Command = {
  name: 'collect',
  summary: 'gather finished DFT linear-response runs (CP2K, Quantum ESPRESSO) into one extended XYZ file of references',
  usage: 'RUN... -o OUT.extxyz',
  description: [
    'RUN is an output file of a run, or a folder searched for them (4 levels deep). In any order:',
    '  CP2K        the output of a run with &PROPERTIES &LINRES &POLAR and PERIODIC_DIPOLE_OPERATOR T (Berry phase).',
    `              Writes ${tensorKey('alpha-c')}: the conducting-boundary cell polarisability α_c in Å³ (CP2K prints a.u. = bohr³).`,
    '              Its input (named in the output) must sit beside it: the cell and settings come from the input, and',
    '              the atoms too (&COORD or the coordinate file it names) when the output does not print them.',
    `              An isolated molecule (PERIODIC_DIPOLE_OPERATOR F with PERIODIC NONE in &CELL and &POISSON) gives`,
    `              ${tensorKey('alpha-mol')}: its polarisability in vacuum (Å³), on a frame without a cell (train with --as alpha-mol).`,
    `  Quantum ESPRESSO  the ph.x output (epsil = .true. at q = 0) and the pw.x output it continues. Writes ${tensorKey('eps')}:`,
    '              the optical dielectric tensor ε∞ (dimensionless). Cells printed in alat units are converted from Bohr.',
    '              It prints no polarisability of an isolated molecule: for a molecule in a box (assume_isolated, or',
    '              vacuum all round) ε∞ is the periodic box\'s; such runs are kept as periodic frames, with a note.',
    'Each frame also says reference_kind, reference_units, dft_run, dft_program and the settings compared.',
    'Runs that did not finish or converge, computed something else, or differ from the others in settings',
    '(program, functional, cutoff, basis or pseudopotentials, k-points where known) are listed and left out.',
    'Convert between ε and α with `polarweave convert` (ε = I + 4πα_c/V).',
  ].join('\n'),
  options,
  async run(argv, io) {
    const args = parseArgs(argv, options);
    if (args.positionals.length === 0) throw new UsageError('give the output files of the runs (or their folders)');
    const out = args.options.output;
    if (!out) throw new UsageError('-o OUT.extxyz is required');
    if (!/\.(ext)?xyz(\.gz)?$/i.test(out)) throw new UsageError(`the output must be extended XYZ (.extxyz or .xyz, optionally .gz), got "${out}"`);
    const r = await collectToFile(args.positionals, out, { signal: io.signal });
    const first = r.runs[0];
    const key = tensorKey(first.kind);
    io.out(`collected ${r.runs.length} run${r.runs.length === 1 ? '' : 's'} into ${out}: ${key} (${first.kind === 'eps' ? 'ε∞, dimensionless' : first.kind === 'alpha-mol' ? 'α of an isolated molecule, Å³' : 'α_c, conducting boundary, Å³'}), ${first.program}\n`);
    for (const s of r.settings) io.out(`  ${s.name}: ${s.value}\n`);
    if (r.notCompared.length) io.out(`  not compared (known for only some runs): ${r.notCompared.join(', ')}\n`);
    for (const n of r.notes) io.out(`note: ${n.file}: ${n.text}\n`);
    if (r.left.length) {
      io.err(`left out ${r.left.length} run${r.left.length === 1 ? '' : 's'}:\n`);
      for (const l of r.left) io.err(`  ${l.file}: ${describeStatus(l.status)}: ${l.reason}\n`);
    }
    if (r.skipped) io.err(`(${r.skipped} other file${r.skipped === 1 ? '' : 's'} passed over: DFT inputs, and files in the folders given that are not DFT outputs)\n`);
    return 0;
  },
};
