// Every subcommand, in the order `polarweave --help` lists them. Add one line per new command.
import type { Command } from '../command.ts';

export const commands: Command[] = [];
