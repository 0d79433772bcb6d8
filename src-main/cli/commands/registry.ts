// Every subcommand, in the order `polarweave --help` lists them. Add one line per new command.
import type { Command } from '../command.ts';
import { analyseCommand } from './analyse.ts';
import { collectCommand } from './collect.ts';
import { selectCommand } from './select.ts';
import { convertCommand } from './convert.ts';
import { demoCommand } from './demo.ts';
import { inspectCommand } from './inspect.ts';
import { mergeCommand } from './merge.ts';
import { predictCommand } from './predict.ts';
import { referenceCommand } from './reference.ts';
import { trainCommand } from './train.ts';
import { validateCommand } from './validate.ts';

export const commands: Command[] = [
  inspectCommand,
  convertCommand,
  trainCommand,
  validateCommand,
  predictCommand,
  analyseCommand,
  mergeCommand,
  referenceCommand,
  collectCommand,
  selectCommand,
  demoCommand,
];
