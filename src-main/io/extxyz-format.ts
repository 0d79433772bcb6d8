// Writing one Frame as extended XYZ text. Numbers use the shortest decimal that reads back to the same double,
// so formatExtxyzFrame → parseExtxyz gives an equal frame. Pure code, runs in a browser too.
import type { AtomArray, Frame } from '../core/geometry/frame.ts';
import { formatItem, formatNumber } from './extxyz-comment.ts';
import { RESERVED_KEYS } from './extxyz-parse.ts';

const COLUMN_NAME = /^[A-Za-z_][A-Za-z0-9_.\-]*$/;

function kindLetter(a: AtomArray): string {
  return a.kind === 'real' ? 'R' : a.kind === 'int' ? 'I' : a.kind === 'bool' ? 'L' : 'S';
}

function checkStringField(s: string, name: string): void {
  if (s.length === 0 || /\s/.test(s)) {
    throw new RangeError(`extended XYZ: per-atom string '${name}' value ${JSON.stringify(s)} is empty or holds whitespace`);
  }
}

/** The text of one frame (count line, comment line, atom lines), ending with a newline. */
export function formatExtxyzFrame(frame: Frame): string {
  const n = frame.species.length;
  if (frame.positions.length !== 3 * n) throw new RangeError(`extended XYZ: ${n} atoms need ${3 * n} coordinates, got ${frame.positions.length}`);
  const items: string[] = [];
  if (frame.cell !== null) {
    items.push(`Lattice="${Array.from(frame.cell, formatNumber).join(' ')}"`);
  } else if (frame.pbc.some(Boolean)) {
    throw new RangeError('extended XYZ: a periodic frame needs a cell');
  }
  const extra = Object.entries(frame.arrays).filter(([name]) => name !== 'species' && name !== 'pos');
  let props = 'species:S:1:pos:R:3';
  for (const [name, a] of extra) {
    if (!COLUMN_NAME.test(name)) throw new RangeError(`extended XYZ: per-atom array name '${name}' cannot be a Properties column`);
    if (a.data.length !== n * a.width) throw new RangeError(`extended XYZ: per-atom array '${name}' has ${a.data.length} values for ${n} atoms × ${a.width}`);
    if (a.kind === 'string') for (const s of a.data) checkStringField(s, name);
    props += `:${name}:${kindLetter(a)}:${a.width}`;
  }
  items.push(`Properties=${props}`);
  if (frame.cell !== null) items.push(`pbc="${frame.pbc.map((p) => (p ? 'T' : 'F')).join(' ')}"`);
  for (const [key, value] of Object.entries(frame.info)) {
    if (RESERVED_KEYS.has(key)) throw new RangeError(`extended XYZ: info key '${key}' is reserved for the frame's own ${key}`);
    items.push(formatItem(key, value));
  }
  const lines: string[] = [String(n), items.join(' ')];
  const p = frame.positions;
  for (let i = 0; i < n; i++) {
    const s = frame.species[i];
    checkStringField(s, 'species');
    let line = s.length < 2 ? s + ' ' : s;
    line += ' ' + formatNumber(p[3 * i]) + ' ' + formatNumber(p[3 * i + 1]) + ' ' + formatNumber(p[3 * i + 2]);
    for (const [, a] of extra) {
      for (let w = 0; w < a.width; w++) {
        const v = a.data[i * a.width + w];
        if (a.kind === 'real') line += ' ' + formatNumber(v as number);
        else if (a.kind === 'int') line += ' ' + String(v);
        else if (a.kind === 'bool') line += v ? ' T' : ' F';
        else line += ' ' + (v as string);
      }
    }
    lines.push(line);
  }
  return lines.join('\n') + '\n';
}
