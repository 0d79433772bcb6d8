// `polarweave merge`: join the shard outputs of `predict --shard K/N` (CSV or extended XYZ) into one file in
// frame order, after checking that none is missing or doubled and that all come from one model and one input.
import { commandArgs, UsageError } from '../args.ts';
import type { Command } from '../command.ts';
import { mergeShards } from '../../app/predict/merge-shards.ts';

const options = [{ name: 'output', short: 'o', value: 'OUT.csv|OUT.extxyz', help: 'the joined file (same format as the shards)' }];

export const mergeCommand: Command = {
  name: 'merge',
  summary: 'join prediction shards (predict --shard K/N) into one file in frame order',
  usage: 'SHARD... -o OUT.csv|OUT.extxyz',
  description:
    'Checks before writing: every shard from the same model (sha256) and input file, shards 1…N each once,\nno frame missing or doubled. The result has the bytes of one unsharded run; it appears atomically.',
  options,
  async run(argv, io) {
    const { args, output } = commandArgs(argv, options, { inputs: 'any', missing: 'give the shard files to join', output: 'give the output file with -o OUT.csv or -o OUT.extxyz' });
    if (args.positionals.includes(output)) throw new UsageError(`the output ${output} is also one of the shards`);
    const r = await mergeShards(args.positionals, output, io.signal);
    io.out(`${r.frames} frames from ${r.shards} shard${r.shards === 1 ? '' : 's'} joined into ${r.output} (model sha256 ${r.modelSha256.slice(0, 12)}…)\n`);
    return 0;
  },
};
