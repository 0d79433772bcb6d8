// A user's own DFT input file with placeholders, filled with one frame's cell and atoms: one input per chosen
// frame (app/select-frames.ts). Everything outside the placeholders is copied as written, byte for byte, so the
// functional, basis, cutoffs, k-points and the code's own syntax stay the user's. The placeholders (ours, listed in
// docs/file-formats.md "DFT input templates"):
//   {{cell_a}} {{cell_b}} {{cell_c}}   one lattice vector each, "x y z" in Å
//   {{atoms}}                          one line per atom, "Symbol x y z" (Cartesian, Å); whatever precedes the
//                                      placeholder on its line (indent, a keyword) starts every atom line
//   {{atom_count}}                     the number of atoms
//   {{frame}}                          the frame's number in its trajectory (0-based), e.g. for a run's name
// Units: the template must declare Å where the code asks (CP2K's &CELL and &COORD default to Å; Quantum
// ESPRESSO needs CELL_PARAMETERS angstrom and ATOMIC_POSITIONS angstrom).
import { InputError, type Where } from '../../core/errors.ts';
import type { Frame } from '../../core/geometry/frame.ts';

export const TEMPLATE_PLACEHOLDERS = ['cell_a', 'cell_b', 'cell_c', 'atoms', 'atom_count', 'frame'] as const;
export type Placeholder = (typeof TEMPLATE_PLACEHOLDERS)[number];

/** Longest template accepted: inputs are a few kB; this only stops a wrong file from being read whole. */
export const MAX_TEMPLATE_CHARS = 1 << 20;

interface Piece {
  text: string;
  /** The placeholder that follows the text (none after the last piece). */
  slot: Placeholder | null;
  /** For {{atoms}}: the text before it on its line, repeated at the start of every atom line. */
  prefix: string;
}

export interface InputTemplate {
  file: string;
  pieces: Piece[];
  uses: Set<Placeholder>;
}

const SLOT = /\{\{\s*([^{}\s]*)\s*\}\}/g;

/** Reads the placeholders of a template text; an InputError naming file and line for an unknown one. */
export function parseTemplate(text: string, file: string): InputTemplate {
  if (text.length > MAX_TEMPLATE_CHARS) throw new InputError(`the template is longer than ${MAX_TEMPLATE_CHARS} characters`, { file }, 'give the DFT input file itself');
  if (text.includes('\0')) throw new InputError('the template is a binary file', { file }, 'give the text of a DFT input file');
  const pieces: Piece[] = [];
  const uses = new Set<Placeholder>();
  let at = 0;
  for (const m of text.matchAll(SLOT)) {
    const name = m[1] as Placeholder;
    const line = text.slice(0, m.index).split('\n').length;
    if (!TEMPLATE_PLACEHOLDERS.includes(name)) {
      throw new InputError(`unknown placeholder "{{${m[1]}}}"`, { file, line }, `the placeholders are ${TEMPLATE_PLACEHOLDERS.map((p) => `{{${p}}}`).join(', ')}`);
    }
    const before = text.slice(at, m.index);
    const lineStart = text.lastIndexOf('\n', m.index - 1) + 1;
    const prefix = name === 'atoms' ? text.slice(Math.max(lineStart, at), m.index) : '';
    if (name === 'atoms' && text.slice(lineStart, m.index).length !== prefix.length) {
      throw new InputError('{{atoms}} shares its line with another placeholder', { file, line }, 'put {{atoms}} on a line of its own (after an indent or keyword)');
    }
    if (name === 'atoms' && !/^[ \t]*$/.test(text.slice(m.index + m[0].length, text.indexOf('\n', m.index) < 0 ? undefined : text.indexOf('\n', m.index)))) {
      throw new InputError('{{atoms}} must end its line', { file, line }, 'put nothing after {{atoms}} on its line');
    }
    pieces.push({ text: name === 'atoms' ? before.slice(0, before.length - prefix.length) : before, slot: name, prefix });
    uses.add(name);
    at = m.index + m[0].length;
  }
  pieces.push({ text: text.slice(at), slot: null, prefix: '' });
  if (!uses.has('atoms')) throw new InputError('the template has no {{atoms}} placeholder', { file }, 'write {{atoms}} where the atom positions go (e.g. in &COORD or ATOMIC_POSITIONS angstrom)');
  if (!uses.has('cell_a') || !uses.has('cell_b') || !uses.has('cell_c')) {
    throw new InputError('the template lacks one of {{cell_a}}, {{cell_b}}, {{cell_c}}', { file }, 'write the three lattice vectors as placeholders (e.g. "A {{cell_a}}" in CP2K\'s &CELL, or three lines under CELL_PARAMETERS angstrom)');
  }
  return { file, pieces, uses };
}

function num(x: number): string {
  return x.toFixed(10);
}

/** The template filled with one frame; an InputError naming the frame when it lacks what the template needs. */
export function fillTemplate(t: InputTemplate, frame: Frame, frameNumber: number, where: Where = {}): string {
  const cell = frame.cell;
  if (!cell) throw new InputError('the frame has no cell, but the template asks for one', where, 'choose among periodic frames (a Lattice in the extended XYZ comment line)');
  const n = frame.species.length;
  for (let i = 0; i < 3 * n; i++) {
    if (!Number.isFinite(frame.positions[i])) throw new InputError(`atom ${Math.floor(i / 3) + 1} has a non-finite coordinate`, where, 'check the trajectory');
  }
  const value = (p: Piece): string => {
    switch (p.slot) {
      case 'cell_a':
      case 'cell_b':
      case 'cell_c': {
        const r = { cell_a: 0, cell_b: 1, cell_c: 2 }[p.slot];
        return `${num(cell[3 * r])} ${num(cell[3 * r + 1])} ${num(cell[3 * r + 2])}`;
      }
      case 'atoms': {
        const lines: string[] = [];
        const width = Math.max(...frame.species.map((s) => s.length));
        for (let i = 0; i < n; i++) {
          const x = frame.positions;
          lines.push(`${p.prefix}${frame.species[i].padEnd(width)} ${num(x[3 * i])} ${num(x[3 * i + 1])} ${num(x[3 * i + 2])}`);
        }
        return lines.join('\n');
      }
      case 'atom_count':
        return String(n);
      case 'frame':
        return String(frameNumber);
      default:
        return '';
    }
  };
  return t.pieces.map((p) => p.text + value(p)).join('');
}
