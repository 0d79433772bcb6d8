// The part of a CP2K input file that `collect` needs when the output does not print it: the section tree
// (&NAME … &END), keywords with their lines, the preprocessor's @SET variables ($X, ${X}) and @INCLUDE files.
// Bounded: at most MAX_INCLUDE_DEPTH nested includes and MAX_WHOLE_FILE_BYTES (core/limits.ts) per file.
import path from 'node:path';
import { InputError } from '../../core/errors.ts';
import { MAX_WHOLE_FILE_BYTES } from '../../core/limits.ts';
import { diskFiles, type RunFiles } from './dft-run.ts';

const MAX_INCLUDE_DEPTH = 8;

export interface Cp2kKeyword {
  /** Upper case. */
  name: string;
  /** The rest of the line, variables substituted, comments removed. */
  value: string;
  file: string;
  line: number;
}

export interface Cp2kSection {
  /** Upper case, without the ampersand. */
  name: string;
  /** The section parameter (the text after the name on the opening line), or ''. */
  param: string;
  keywords: Cp2kKeyword[];
  sections: Cp2kSection[];
  /** Lines of the section that are not keywords in the usual sense (e.g. the atom lines of &COORD). */
  rows: Cp2kKeyword[];
  file: string;
  line: number;
}

function readText(files: RunFiles, file: string, from: { file?: string; line?: number }): string {
  const text = files.read(file, from);
  if (text === null) {
    throw new InputError(
      `the CP2K input ${file} is not there`,
      from,
      'the output does not print the atom positions at this print level, so its input (and any coordinate file it names) must sit beside the output',
    );
  }
  if (text.length > MAX_WHOLE_FILE_BYTES) throw new InputError(`the CP2K input is ${text.length} characters, more than an input file`, { file });
  return text;
}

/** Strips a comment (# or ! outside quotes). */
function stripComment(line: string): string {
  let quote: string | null = null;
  for (let i = 0; i < line.length; i++) {
    const c = line[i];
    if (quote) {
      if (c === quote) quote = null;
    } else if (c === '"' || c === "'") quote = c;
    else if (c === '#' || c === '!') return line.slice(0, i);
  }
  return line;
}

/** Reads and parses a CP2K input into its root (a pseudo-section holding the top-level sections). */
export function parseCp2kInput(file: string, from: { file?: string; line?: number } = {}, files: RunFiles = diskFiles): Cp2kSection {
  const root: Cp2kSection = { name: '', param: '', keywords: [], sections: [], rows: [], file, line: 0 };
  const stack: Cp2kSection[] = [root];
  const vars = new Map<string, string>();

  const substitute = (text: string, where: { file: string; line: number }): string =>
    text.replace(/\$\{(\w+)(?:-([^}]*))?\}|\$(\w+)/g, (_m, a: string | undefined, dflt: string | undefined, b: string | undefined) => {
      const name = (a ?? b ?? '').toUpperCase();
      const v = vars.get(name) ?? dflt;
      if (v === undefined) throw new InputError(`the variable $${name} is used but never set with @SET`, where, 'set it in the input');
      return v;
    });

  const walk = (f: string, depth: number, includedFrom: { file?: string; line?: number }): void => {
    if (depth > MAX_INCLUDE_DEPTH) throw new InputError(`more than ${MAX_INCLUDE_DEPTH} nested @INCLUDE files`, includedFrom, 'an input that includes itself?');
    const lines = readText(files, f, includedFrom).split(/\r?\n/);
    for (let i = 0; i < lines.length; i++) {
      const where = { file: f, line: i + 1 };
      const raw = stripComment(lines[i]).trim();
      if (raw === '') continue;
      if (raw.startsWith('@')) {
        const m = /^@(\w+)\s*(.*)$/.exec(raw);
        const directive = m?.[1].toUpperCase();
        if (directive === 'SET') {
          const s = /^(\w+)\s+(.*)$/.exec(m![2].trim());
          if (!s) throw new InputError('@SET needs a name and a value', where);
          vars.set(s[1].toUpperCase(), substitute(s[2].trim(), where));
        } else if (directive === 'INCLUDE') {
          const target = substitute(m![2].trim(), where).replace(/^["']|["']$/g, '');
          walk(path.resolve(path.dirname(f), target), depth + 1, where);
        } else {
          throw new InputError(`the preprocessor directive @${m?.[1] ?? raw} is not followed by this reader`, where, 'give an input without @IF blocks (CP2K writes the expanded input as PROJECT-1.restart)');
        }
        continue;
      }
      const text = substitute(raw, where);
      const top = stack[stack.length - 1];
      if (text.startsWith('&')) {
        const m = /^&(\S+)\s*(.*)$/.exec(text)!;
        const name = m[1].toUpperCase();
        if (name === 'END') {
          if (stack.length === 1) throw new InputError('&END without an open section', where, 'the input is not balanced');
          const closing = m[2].trim().toUpperCase();
          if (closing && closing !== top.name) throw new InputError(`&END ${closing} closes &${top.name} (opened on line ${top.line})`, where, 'the input is not balanced');
          stack.pop();
        } else {
          const s: Cp2kSection = { name, param: m[2].trim(), keywords: [], sections: [], rows: [], file: f, line: i + 1 };
          top.sections.push(s);
          stack.push(s);
        }
        continue;
      }
      const m = /^(\S+)\s*(.*)$/.exec(text)!;
      const kw = { name: m[1].toUpperCase(), value: m[2].trim(), file: f, line: i + 1 };
      top.keywords.push(kw);
      top.rows.push({ ...kw, name: m[1], value: text });
    }
  };
  walk(file, 0, from);
  if (stack.length > 1) {
    const open = stack[stack.length - 1];
    throw new InputError(`section &${open.name} (line ${open.line}) is never closed`, { file: open.file, line: open.line }, 'the input is not balanced');
  }
  return root;
}

/** The first subsection along a path of names, e.g. section(root, 'FORCE_EVAL', 'SUBSYS', 'CELL'). */
export function section(s: Cp2kSection | undefined, ...names: string[]): Cp2kSection | undefined {
  let cur = s;
  for (const n of names) {
    cur = cur?.sections.find((x) => x.name === n);
    if (!cur) return undefined;
  }
  return cur;
}

export function keyword(s: Cp2kSection | undefined, name: string): Cp2kKeyword | undefined {
  return s?.keywords.find((k) => k.name === name);
}

/** A CP2K logical: T, TRUE, .TRUE., Y, YES, ON; or a lone keyword (empty value) as true. */
export function cp2kLogical(value: string | undefined, lone = true): boolean | undefined {
  if (value === undefined) return undefined;
  const v = value.trim().toUpperCase().replace(/^\.|\.$/g, '');
  if (v === '') return lone;
  if (['T', 'TRUE', 'Y', 'YES', 'ON'].includes(v)) return true;
  if (['F', 'FALSE', 'N', 'NO', 'OFF'].includes(v)) return false;
  return undefined;
}
