// Every subcommand, in the order `polarweave --help` lists them. Add one line per new command.
import type { Command } from '../command.ts';
import { convertCommand } from './convert.ts';
import { inspectCommand } from './inspect.ts';
import { trainCommand } from './train.ts';
import { predictCommand } from './predict.ts';
import { validateCommand } from './validate.ts';
import { referenceCommand } from './reference.ts';
import { demoCommand } from './demo.ts';

export const commands: Command[] = [inspectCommand, convertCommand, trainCommand, predictCommand, validateCommand, referenceCommand, demoCommand];
