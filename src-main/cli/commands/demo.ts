// `polarweave demo`: the whole job on the bundled invented demo data (demo/run-demo.ts), printing where the
// outputs went.
import { commandArgs } from '../args.ts';
import type { Command } from '../command.ts';
import { join } from 'node:path';
import { runDemo } from '../../demo/run-demo.ts';
import { referenceLoopNote, runReferenceLoop } from '../../demo/reference-loop.ts';
import { writeFileAtomic } from '../../io/atomic.ts';
import { headlineErrors } from '../../core/learning/state-points.ts';

const options = [
  { name: 'output', short: 'o', value: 'DIR', help: 'folder for the outputs', default: 'polarweave-demo' },
  { name: 'data', value: 'DIR', help: 'folder holding liquid.extxyz.gz and crystal.extxyz.gz (default: the bundled demo data)' },
  { name: 'quick', flag: true, help: 'a reduced run (fewer frames and folds), for a first look and for tests' },
  { name: 'reference-loop', flag: true, help: 'also run the reference loop: choose frames by diversity and error bar against random choices (several minutes)' },
];

export const demoCommand: Command = {
  name: 'demo',
  summary: 'run the whole job on the bundled invented demo data (train on the liquid, predict the crystal)',
  usage: '[-o DIR] [--quick] [--reference-loop]',
  description:
    'Cross-validates with a learning curve on the invented liquid (Clausius–Mossotti route), trains on all of it,\n' +
    'predicts the invented crystal with applicability flags, and writes crystal-eps.csv, liquid-model.json,\n' +
    'liquid-validation.json and summary.md. With --reference-loop, also reference-loop.md: 20 liquid frames chosen by\n' +
    'diversity, then 10 by error bar, against random choices at the same cost (10 seeds; docs/demo.md).\n' +
    'The data is invented; predictions are model estimates.',
  options,
  async run(argv, io) {
    const { args } = commandArgs(argv, options, { inputs: 0, missing: 'demo takes no input files, got "{got}"' });
    const result = await runDemo({
      outDir: args.options.output as string,
      dataDir: args.options.data,
      quick: args.flags.quick,
      signal: io.signal,
      log: (line) => io.err(line + '\n'),
    });
    let loopFile: string | null = null;
    if (args.flags['reference-loop']) {
      const loop = await runReferenceLoop({ dataDir: args.options.data, signal: io.signal, log: (line) => io.err(line + '\n') });
      loopFile = join(args.options.output as string, 'reference-loop.md');
      await writeFileAtomic(loopFile, referenceLoopNote(loop));
    }
    // the headline figure, as validate and summary.md give it: within state points when the liquid has several
    const head = headlineErrors(result.validation);
    const e = head.errors;
    const c = result.crystalErrors;
    io.out(
      [
        `liquid cross-validation (${result.liquidFrames} frames), error of ε ${head.what}: isotropic ${e.percentIso.toFixed(1)} % of the spread, anisotropic ${e.percentAniso.toFixed(1)} % (summary.md gives each state point and all frames)`,
        `crystal (${result.crystalFrames} frames): RMSE of ε, isotropic ${c.rmseIso.toExponential(2)}, anisotropic ${c.rmseAniso.toExponential(2)}; ${result.crystalOutsideFrames} frames flagged outside the training data`,
        `outputs in ${result.files.summary.replace(/[/\\][^/\\]*$/, '')}:`,
        `  ${result.files.summary}`,
        `  ${result.files.csv}`,
        `  ${result.files.model}`,
        `  ${result.files.validation}`,
        `  ${result.files.clusters}`,
        ...(loopFile ? [`  ${loopFile}`] : []),
        `finished in ${result.seconds.toFixed(0)} s. The demo data is invented; predictions are model estimates.`,
      ].join('\n') + '\n',
    );
    return 0;
  },
};
