// Entry point of the `polarweave` command: dispatches to a subcommand, prints help, turns errors into
// plain messages on stderr and a non-zero exit code.
import { formatOptions, parseArgs, UsageError } from './args.ts';
import type { Command, CommandIO } from './command.ts';
import { commands } from './commands/registry.ts';
import { useRadialTableCache } from '../io/radial-table-store.ts';
import { CancelledError, InputError, ModelError, PhysicsError } from '../core/errors.ts';

const helpOption = { name: 'help', short: 'h', flag: true, help: 'show this help' } as const;

export function commandHelp(cmd: Command): string {
  const lines = [`Usage: polarweave ${cmd.name} ${cmd.usage}`, '', cmd.summary];
  if (cmd.description) lines.push('', cmd.description);
  lines.push('', 'Options:', formatOptions([...cmd.options, helpOption]));
  return lines.join('\n');
}

export function mainHelp(): string {
  const width = Math.max(...commands.map((c) => c.name.length)) + 2;
  return [
    'polarweave — learn and predict polarisability and optical dielectric tensors of condensed phases',
    '',
    'Usage: polarweave COMMAND [options]   (polarweave COMMAND --help for each command)',
    '',
    'Commands:',
    ...commands.map((c) => `  ${c.name.padEnd(width)}${c.summary}`),
    '',
    'Predictions are model estimates; check them against measured data before relying on them.',
  ].join('\n');
}

/**
 * Every help text the command prints: the main help and each command's `--help`. scripts/build-cli.mjs stores them
 * beside the bundle (help.json), so that bin/polarweave.mjs answers `--help` without loading the program.
 */
export function helpTexts(): { main: string; commands: Record<string, string> } {
  return { main: mainHelp(), commands: Object.fromEntries(commands.map((c) => [c.name, commandHelp(c)])) };
}

export async function runCli(argv: string[], io: CommandIO): Promise<number> {
  const [name, ...rest] = argv;
  if (name === undefined || name === '--help' || name === '-h' || name === 'help') {
    io.out(mainHelp() + '\n');
    return name === undefined ? 2 : 0;
  }
  if (name === '--version' || name === '-V') {
    io.out('polarweave 0.1.0\n');
    return 0;
  }
  const cmd = commands.find((c) => c.name === name);
  if (!cmd) {
    io.err(`polarweave: unknown command "${name}". Commands: ${commands.map((c) => c.name).join(', ')}\n`);
    return 2;
  }
  if (rest.includes('--help') || rest.includes('-h')) {
    io.out(commandHelp(cmd) + '\n');
    return 0;
  }
  try {
    return await cmd.run(rest, io);
  } catch (e) {
    if (e instanceof UsageError) {
      io.err(`polarweave ${cmd.name}: ${e.message}\nUsage: polarweave ${cmd.name} ${cmd.usage}  (see --help)\n`);
      return 2;
    }
    if (e instanceof CancelledError) {
      io.err(`polarweave ${cmd.name}: stopped on request; no partial output was left behind.\n`);
      return 130;
    }
    if (e instanceof InputError || e instanceof PhysicsError || e instanceof ModelError) {
      io.err(`polarweave ${cmd.name}: error: ${e.message}\n`);
      return 1;
    }
    const err = e as Error;
    io.err(`polarweave ${cmd.name}: internal error: ${err?.stack ?? String(e)}\n`);
    return 70;
  }
}

/** Called by bin/polarweave.mjs. */
export async function main(): Promise<void> {
  // radial tables built by earlier runs (a short run, one predicted frame, would spend a good share building it)
  useRadialTableCache();
  const controller = new AbortController();
  let interrupts = 0;
  process.on('SIGINT', () => {
    interrupts++;
    if (interrupts > 1) process.exit(130);
    process.stderr.write('\nstopping… (Ctrl-C again to quit at once)\n');
    controller.abort();
  });
  const code = await runCli(process.argv.slice(2), {
    out: (t) => process.stdout.write(t),
    err: (t) => process.stderr.write(t),
    signal: controller.signal,
  });
  process.exitCode = code;
}
