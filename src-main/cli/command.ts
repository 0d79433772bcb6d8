// The shape of one CLI subcommand. Each subcommand lives in its own file under commands/ and is listed once
// in commands/index.ts.
import type { OptionSpec } from './args.ts';

export interface CommandIO {
  /** Results (tables, summaries) go to stdout. */
  out: (text: string) => void;
  /** Progress, warnings and errors go to stderr. */
  err: (text: string) => void;
  /** Aborted on Ctrl-C; long work checks it and stops cleanly. */
  signal: AbortSignal;
}

export interface Command {
  name: string;
  /** One line for the command list. */
  summary: string;
  /** e.g. "IN --tensor KEY [options]" */
  usage: string;
  /** Longer help shown by `polarweave NAME --help`. */
  description?: string;
  options: OptionSpec[];
  /** Returns the process exit code. */
  run(argv: string[], io: CommandIO): Promise<number>;
}
