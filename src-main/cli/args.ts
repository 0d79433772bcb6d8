// A small, strict command-line option parser: `--name value`, `--name=value`, `--flag`, `-o value`,
// positionals. Unknown options are errors (a typo must not silently fall back to a default).

export interface OptionSpec {
  /** Long name without dashes, e.g. "tensor". */
  name: string;
  /** One-letter alias without dash, e.g. "o". */
  short?: string;
  /** true: takes no value. */
  flag?: boolean;
  /** Shown in --help. */
  help: string;
  /** Shown in --help as the name of the value, e.g. KEY. */
  value?: string;
  default?: string;
}

export interface ParsedArgs {
  positionals: string[];
  options: Record<string, string | undefined>;
  flags: Record<string, boolean>;
}

export class UsageError extends Error {
  override name = 'UsageError';
}

export function parseArgs(argv: string[], specs: OptionSpec[]): ParsedArgs {
  const byLong = new Map(specs.map((s) => [s.name, s]));
  const byShort = new Map(specs.filter((s) => s.short).map((s) => [s.short as string, s]));
  const out: ParsedArgs = { positionals: [], options: {}, flags: {} };
  for (const s of specs) {
    if (s.flag) out.flags[s.name] = false;
    else out.options[s.name] = s.default;
  }
  for (let i = 0; i < argv.length; i++) {
    const arg = argv[i];
    if (arg === '--') {
      out.positionals.push(...argv.slice(i + 1));
      break;
    }
    let spec: OptionSpec | undefined;
    let inline: string | undefined;
    if (arg.startsWith('--')) {
      const eq = arg.indexOf('=');
      const name = eq >= 0 ? arg.slice(2, eq) : arg.slice(2);
      inline = eq >= 0 ? arg.slice(eq + 1) : undefined;
      spec = byLong.get(name);
      if (!spec) throw new UsageError(`unknown option --${name}`);
    } else if (arg.startsWith('-') && arg.length === 2 && !/^-\d$/.test(arg)) {
      spec = byShort.get(arg.slice(1));
      if (!spec) throw new UsageError(`unknown option ${arg}`);
    } else {
      out.positionals.push(arg);
      continue;
    }
    if (spec.flag) {
      if (inline !== undefined) throw new UsageError(`option --${spec.name} takes no value`);
      out.flags[spec.name] = true;
    } else {
      const value = inline ?? argv[++i];
      if (value === undefined) throw new UsageError(`option --${spec.name} needs a value (${spec.value ?? 'VALUE'})`);
      out.options[spec.name] = value;
    }
  }
  return out;
}

export function formatOptions(specs: OptionSpec[]): string {
  const rows = specs.map((s) => {
    const left = `${s.short ? `-${s.short}, ` : '    '}--${s.name}${s.flag ? '' : ` ${s.value ?? 'VALUE'}`}`;
    const def = s.default !== undefined ? ` (default ${s.default})` : '';
    return [left, s.help + def] as const;
  });
  const width = Math.max(0, ...rows.map((r) => r[0].length)) + 2;
  return rows.map(([l, r]) => `  ${l.padEnd(width)}${r}`).join('\n');
}

/** A number option, with a clear message when it is not one. */
export function numberOption(args: ParsedArgs, name: string, opts: { min?: number; max?: number; integer?: boolean } = {}): number | undefined {
  const raw = args.options[name];
  if (raw === undefined) return undefined;
  const v = Number(raw);
  if (!Number.isFinite(v)) throw new UsageError(`--${name} must be a number, got "${raw}"`);
  if (opts.integer && !Number.isInteger(v)) throw new UsageError(`--${name} must be a whole number, got "${raw}"`);
  if (opts.min !== undefined && v < opts.min) throw new UsageError(`--${name} must be at least ${opts.min}, got ${v}`);
  if (opts.max !== undefined && v > opts.max) throw new UsageError(`--${name} must be at most ${opts.max}, got ${v}`);
  return v;
}

/**
 * The arguments of a command with its input and output checked: `inputs` positionals exactly ('any': one or
 * more; 0: none), and -o when `output` says what to write. Usage errors say what to give.
 */
export function commandArgs(
  argv: string[],
  specs: OptionSpec[],
  want: { inputs: number | 'any'; missing: string; output?: string },
): { args: ParsedArgs; inputs: string[]; output: string } {
  const args = parseArgs(argv, specs);
  const n = args.positionals.length;
  if (want.inputs === 'any' ? n === 0 : n !== want.inputs) throw new UsageError(want.missing.replace('{got}', args.positionals[0] ?? ''));
  const output = args.options.output;
  if (want.output && !output) throw new UsageError(want.output);
  return { args, inputs: args.positionals, output: output ?? '' };
}

/** The worker-thread count option of the commands that use threads (predict, train). */
export const threadsOption: OptionSpec = { name: 'threads', value: 'N', help: 'worker threads (default: the number of cores)' };

/** --threads N (a whole number ≥ 1), or undefined when not given. */
export function parseThreads(args: ParsedArgs): number | undefined {
  const threads = args.options.threads === undefined ? undefined : Number(args.options.threads);
  if (threads !== undefined && (!Number.isInteger(threads) || threads < 1)) throw new UsageError(`--threads must be a whole number ≥ 1, got "${args.options.threads}"`);
  return threads;
}
