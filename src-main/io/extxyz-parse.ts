// Extended XYZ frames from lines of text. A frame is: the atom count; a comment line of key=value pairs
// (Lattice, Properties, pbc and any per-frame property); one line per atom with the columns Properties names.
// The assembler is fed one line at a time, so the same code serves in-memory text (parseExtxyz) and the
// streaming file reader (extxyz.ts). Every problem is an InputError with file, 1-based line and 0-based frame.
// Pure code, no Node APIs: runs in a browser too.
import { clipText as clip, InputError } from '../core/errors.ts';
import type { AtomArray, Frame, InfoValue, Mat3 } from '../core/geometry/frame.ts';
import { cellDeterminant, checkBelievableCell } from '../core/geometry/cell.ts';
import { MAX_ATOMS_PER_FRAME, MAX_COORDINATE_A, MAX_FIELDS_PER_ATOM } from '../core/limits.ts';
import { elementSymbol, isElement, symbolIgnoringCase } from '../core/geometry/elements.ts';
import { bytesText, decimalAtBytes } from './decimal.ts';
import { CommentSyntaxError, ValueError, interpretValue, parseBoolean, tokeniseComment } from './extxyz-comment.ts';

export type ColumnKind = 'S' | 'R' | 'I' | 'L';

/** One column block of the Properties key: name, kind (string, real, integer, logical), values per atom. */
export interface ColumnSpec {
  name: string;
  kind: ColumnKind;
  width: number;
}

export const DEFAULT_PROPERTIES = 'species:S:1:pos:R:3';

/** Keys with a meaning of their own; never stored in Frame.info. */
export const RESERVED_KEYS = new Set(['Lattice', 'Properties', 'pbc']);

/** Atoms allocated up front for a frame; more room is made as atom lines arrive. */
const INITIAL_CAPACITY = 4096;

interface Where {
  file: string;
  line: number;
  frame: number;
}

function fail(problem: string, where: Where, hint?: string): never {
  throw new InputError(problem, { file: where.file, line: where.line, frame: where.frame }, hint);
}

/** Parse a Properties value such as `species:S:1:pos:R:3:forces:R:3`. */
export function parseProperties(value: string, where: Where): ColumnSpec[] {
  const parts = value.split(':');
  const hint = 'Properties must be name:kind:width triples, kind one of S, R, I, L (e.g. species:S:1:pos:R:3)';
  if (parts.length % 3 !== 0 || parts.length === 0) fail(`Properties '${clip(value)}' is not a list of name:kind:width triples`, where, hint);
  const cols: ColumnSpec[] = [];
  const seen = new Set<string>();
  let total = 0;
  for (let i = 0; i < parts.length; i += 3) {
    const name = parts[i];
    const kind = parts[i + 1];
    const widthText = parts[i + 2];
    if (name.length === 0) fail(`Properties has an empty column name`, where, hint);
    if (kind !== 'S' && kind !== 'R' && kind !== 'I' && kind !== 'L') fail(`Properties column '${clip(name)}' has unknown kind '${clip(kind)}'`, where, hint);
    if (!/^[1-9]\d{0,5}$/.test(widthText)) fail(`Properties column '${clip(name)}' has width '${clip(widthText)}', not a positive integer`, where, hint);
    total += Number(widthText);
    if (total > MAX_FIELDS_PER_ATOM) fail(`Properties asks for more than ${MAX_FIELDS_PER_ATOM} values per atom line`, where, 'this is not a structure file, or its Properties value is damaged');
    if (seen.has(name)) fail(`Properties names column '${clip(name)}' twice`, where, 'give every column its own name');
    seen.add(name);
    cols.push({ name, kind, width: Number(widthText) });
  }
  return cols;
}

/** Check a cell for finite entries, a believable volume (core/cell.ts) and right-handedness. */
export function checkCell(cell: Mat3, where: Where, what = 'Lattice'): void {
  checkBelievableCell(cell, where);
  const v = cellDeterminant(cell);
  if (v < 0) {
    fail(`${what} has a negative volume (${v.toPrecision(6)} Å³: a left-handed set of vectors)`, where, 'swap two lattice vectors (or negate one) to make a right-handed cell');
  }
}

interface Header {
  nAtoms: number;
  cell: Mat3 | null;
  pbc: [boolean, boolean, boolean];
  info: Record<string, InfoValue>;
  columns: ColumnSpec[];
  /** Total number of whitespace-separated fields per atom line. */
  fieldCount: number;
  countLine: number;
}

/** Interpret the comment line of a frame. */
export function parseCommentLine(line: string, where: Where): Omit<Header, 'nAtoms' | 'countLine'> {
  const info: Record<string, InfoValue> = {};
  let cell: Mat3 | null = null;
  let pbcGiven: boolean[] | null = null;
  let properties = DEFAULT_PROPERTIES;
  const trimmed = line.trim();
  if (trimmed.length > 0 && trimmed.indexOf('=') < 0) {
    // a plain XYZ title line, not key=value pairs: keep it whole
    info.comment = trimmed;
  } else if (trimmed.length > 0) {
    let items;
    try {
      items = tokeniseComment(line);
    } catch (e) {
      if (e instanceof CommentSyntaxError) fail(`comment line, column ${e.column + 1}: ${e.message}`, where, 'quote values that contain spaces: key="a b"');
      throw e;
    }
    const seen = new Set<string>();
    for (const item of items) {
      if (seen.has(item.key)) fail(`key '${item.key}' appears twice on the comment line`, where, 'keep one value per key');
      seen.add(item.key);
      if (item.key === 'Lattice') {
        let v: InfoValue;
        try {
          v = interpretValue(item);
        } catch {
          v = '';
        }
        if (!Array.isArray(v) || v.length !== 9) {
          const got = Array.isArray(v) ? `${v.length} numbers` : `'${clip(item.value ?? '')}'`;
          fail(`Lattice must be 9 numbers (3 lattice vectors), got ${got}`, where, 'write Lattice="ax ay az bx by bz cx cy cz" in Å');
        }
        cell = Float64Array.from(v);
        checkCell(cell, where);
      } else if (item.key === 'Properties') {
        if (item.value === null) fail('Properties has no value', where, `e.g. Properties=${DEFAULT_PROPERTIES}`);
        properties = item.value;
      } else if (item.key === 'pbc') {
        const words = (item.value ?? 'T').split(/[\s,]+/).filter(Boolean);
        const flags = words.map(parseBoolean);
        if ((flags.length !== 3 && flags.length !== 1) || flags.some((f) => f === undefined)) {
          fail(`pbc must be one or three of T/F, got '${item.value ?? ''}'`, where, 'write pbc="T T T" for a fully periodic cell');
        }
        pbcGiven = flags.length === 1 ? [flags[0]!, flags[0]!, flags[0]!] : (flags as boolean[]);
      } else {
        try {
          info[item.key] = interpretValue(item);
        } catch (e) {
          if (e instanceof ValueError) fail(e.message, where, 'write finite numbers; leave out values that were not computed');
          throw e;
        }
      }
    }
  }
  let pbc: [boolean, boolean, boolean];
  if (cell === null) {
    if (pbcGiven !== null && pbcGiven.some(Boolean)) {
      fail('pbc says periodic but the frame has no Lattice', where, 'add Lattice="ax ay az bx by bz cx cy cz", or write pbc="F F F"');
    }
    pbc = [false, false, false];
  } else {
    pbc = pbcGiven === null ? [true, true, true] : [pbcGiven[0], pbcGiven[1], pbcGiven[2]];
  }
  const columns = checkedColumns(properties, where);
  return { cell, pbc, info, columns, fieldCount: columns.reduce((s, c) => s + c.width, 0) };
}

// Consecutive frames nearly always share one Properties value: remember the last one checked.
let lastProperties = '';
let lastColumns: ColumnSpec[] = [];

/** Columns of a Properties value, with species (or Z) and pos present and of the right shape. */
function checkedColumns(properties: string, where: Where): ColumnSpec[] {
  if (properties === lastProperties) return lastColumns;
  const columns = parseProperties(properties, where);
  const z = columns.find((c) => c.name === 'Z');
  const species = columns.find((c) => c.name === 'species');
  if (species && (species.kind !== 'S' || species.width !== 1)) fail(`Properties column 'species' must be S:1, got ${species.kind}:${species.width}`, where);
  if (!species && !(z && z.kind === 'I' && z.width === 1)) {
    fail("Properties has no 'species' column (nor an atomic-number column Z:I:1)", where, `start Properties with species:S:1, e.g. Properties=${DEFAULT_PROPERTIES}`);
  }
  const pos = columns.find((c) => c.name === 'pos');
  if (!pos) fail("Properties has no 'pos' column", where, `add pos:R:3, e.g. Properties=${DEFAULT_PROPERTIES}`);
  if (pos.kind !== 'R' || pos.width !== 3) fail(`Properties column 'pos' must be R:3, got ${pos.kind}:${pos.width}`, where);
  lastProperties = properties;
  lastColumns = columns;
  return columns;
}

// Atom lines are parsed as bytes (ASCII in every real file) straight from the read buffer: no text decoding,
// no substrings, monomorphic array reads. Count and comment lines, which may hold any UTF-8 text, are decoded.
// Field boundaries of the current atom line are reused between lines (no allocation per line).
const MAX_FIELDS = MAX_FIELDS_PER_ATOM;
const fieldStart = new Int32Array(MAX_FIELDS);
const fieldEnd = new Int32Array(MAX_FIELDS);
const encoder = new TextEncoder();

/**
 * Split bytes[start, end) on spaces, tabs and CR; returns the number of fields. Boundaries of the first
 * MAX_FIELDS fields go to fieldStart/fieldEnd (a line with more is never a valid atom line, only counted).
 */
function splitFields(b: Uint8Array, start: number, end: number): number {
  let n = 0;
  let i = start;
  while (i < end) {
    let c = b[i];
    while (c === 32 || c === 9 || c === 13) {
      if (++i >= end) return n;
      c = b[i];
    }
    const s = i;
    while (++i < end) {
      c = b[i];
      if (c === 32 || c === 9 || c === 13) break;
    }
    if (n < MAX_FIELDS) {
      fieldStart[n] = s;
      fieldEnd[n] = i;
    }
    n++;
  }
  return n;
}

function fieldText(b: Uint8Array, k: number): string {
  return bytesText(b, fieldStart[k], fieldEnd[k]);
}

/** Field k of the current line as a strict decimal number, NaN if it is not one. */
function numberField(b: Uint8Array, k: number): number {
  return decimalAtBytes(b, fieldStart[k], fieldEnd[k]);
}

/** Field k as a strict 32-bit integer, or NaN. */
function integerField(b: Uint8Array, k: number): number {
  let i = fieldStart[k];
  const e = fieldEnd[k];
  let negative = false;
  if (b[i] === 45 || b[i] === 43) negative = b[i++] === 45;
  if (i >= e || e - i > 10) return NaN;
  let v = 0;
  for (; i < e; i++) {
    const c = b[i];
    if (c < 48 || c > 57) return NaN;
    v = v * 10 + (c - 48);
  }
  v = negative ? -v : v;
  return v > 2147483647 || v < -2147483648 ? NaN : v;
}

const INTEGER = /^[+-]?\d+$/;
const COUNT = /^\d+$/;

interface Building {
  header: Header;
  species: string[];
  positions: Float64Array;
  arrays: Record<string, AtomArray>;
  /** Per column: where its data goes. */
  sinks: (Float64Array | Int32Array | Uint8Array | string[] | null)[];
  speciesFromZ: Int32Array | null;
  /** Field index of the species column (-1 when species come from Z) and of the first pos field. */
  speciesField: number;
  posField: number;
  /** The other columns: first field index, spec and destination. */
  others: { field: number; spec: ColumnSpec; sink: Float64Array | Int32Array | Uint8Array | string[] }[];
  /** Species strings already checked against the periodic table in this frame. */
  lastSpecies: string;
  atom: number;
  /** Atoms the arrays have room for (≤ the count line's number). */
  capacity: number;
}

export type FrameDecision = 'parse' | 'skip' | 'stop';

export interface AssemblerOptions {
  /** 1-based number of the first line that will be pushed (default 1). */
  firstLine?: number;
  /** 0-based index of the first frame that will be met (default 0). */
  firstFrame?: number;
  /** Which frames to build; 'skip' reads past a frame without parsing its atoms, 'stop' ends the input. */
  decide?: (frameIndex: number) => FrameDecision;
}

/**
 * Line-by-line extended XYZ frame builder. push() each line (without its newline); it returns a Frame when
 * one is complete (or 'stop' once decide() says so), else null. Call finish() at the end of input.
 */
export class ExtxyzAssembler {
  private line: number;
  private frame: number;
  private state: 'count' | 'comment' | 'atoms' = 'count';
  private pendingCount = 0;
  private countLine = 0;
  private building: Building | null = null;
  private skipRemaining = 0;
  private readonly decide: (k: number) => FrameDecision;
  private stopped = false;

  constructor(
    readonly fileName: string,
    options: AssemblerOptions = {},
  ) {
    this.line = (options.firstLine ?? 1) - 1;
    this.frame = options.firstFrame ?? 0;
    this.decide = options.decide ?? (() => 'parse');
  }

  /** Frames completed or skipped so far, counting from firstFrame. */
  get frameIndex(): number {
    return this.frame;
  }

  get lineNumber(): number {
    return this.line;
  }

  private where(): Where {
    return { file: this.fileName, line: this.line, frame: this.frame };
  }

  /** Feed one line given as text (without its newline). */
  pushLine(text: string): Frame | null | 'stop' {
    const b = encoder.encode(text);
    return this.push(b, 0, b.length);
  }

  /** Feed the line bytes[start, end) (UTF-8, without its newline). */
  push(bytes: Uint8Array, start: number, end: number): Frame | null | 'stop' {
    if (this.stopped) return 'stop';
    this.line++;
    if (this.skipRemaining > 0) {
      // a skipped frame: count its lines, do not look at them
      if (--this.skipRemaining === 0) this.frame++;
      return null;
    }
    switch (this.state) {
      case 'count':
        return this.onCount(bytesText(bytes, start, end));
      case 'comment':
        this.onComment(bytesText(bytes, start, end));
        return this.pendingCount === 0 && this.building !== null ? this.complete() : null;
      case 'atoms':
        return this.onAtom(bytes, start, end);
    }
  }

  private onCount(text: string): null | 'stop' {
    const t = text.trim();
    if (t.length === 0) return null; // blank lines between frames (and at the end) carry nothing
    if (!COUNT.test(t)) {
      const prev = this.frame > 0 ? ` — if this is an atom line, frame ${this.frame - 1} has more atom lines than its count says` : '';
      fail(`expected the atom count of a frame, found '${clip(t)}'${prev}`, this.where(), 'each frame starts with a line holding only its number of atoms');
    }
    const n = Number(t);
    if (n > MAX_ATOMS_PER_FRAME) fail(`atom count ${clip(t)} is implausibly large`, this.where(), 'check the atom count line');
    if (n === 0) fail('the frame has no atoms (its count line says 0)', this.where(), 'remove the empty frame: there is nothing to compute for it');
    const decision = this.decide(this.frame);
    if (decision === 'stop') {
      this.stopped = true;
      return 'stop';
    }
    this.pendingCount = n;
    this.countLine = this.line;
    if (decision === 'skip') {
      this.skipRemaining = n + 1;
      return null;
    }
    this.state = 'comment';
    return null;
  }

  private onComment(text: string): void {
    const h = parseCommentLine(text, this.where());
    const n = this.pendingCount;
    const header: Header = { ...h, nAtoms: n, countLine: this.countLine };
    const sinks: Building['sinks'] = [];
    const arrays: Record<string, AtomArray> = {};
    // Room for the first atoms only; grown as lines arrive, so a corrupt count line cannot make us allocate
    // gigabytes before the file runs out.
    const cap = Math.min(n, INITIAL_CAPACITY);
    const positions = new Float64Array(3 * cap);
    let speciesFromZ: Int32Array | null = null;
    const hasSpecies = h.columns.some((c) => c.name === 'species');
    for (const c of h.columns) {
      if (c.name === 'species') sinks.push(null);
      else if (c.name === 'pos') sinks.push(positions);
      else {
        let data: Float64Array | Int32Array | Uint8Array | string[];
        if (c.kind === 'R') {
          data = new Float64Array(cap * c.width);
          arrays[c.name] = { kind: 'real', width: c.width, data };
        } else if (c.kind === 'I') {
          data = new Int32Array(cap * c.width);
          arrays[c.name] = { kind: 'int', width: c.width, data };
          if (c.name === 'Z' && !hasSpecies) speciesFromZ = data;
        } else if (c.kind === 'L') {
          data = new Uint8Array(cap * c.width);
          arrays[c.name] = { kind: 'bool', width: c.width, data };
        } else {
          data = new Array<string>(cap * c.width);
          arrays[c.name] = { kind: 'string', width: c.width, data };
        }
        sinks.push(data);
      }
    }
    if (speciesFromZ) delete arrays.Z; // species carries the same information
    let field = 0;
    let speciesField = -1;
    let posField = -1;
    const others: Building['others'] = [];
    h.columns.forEach((c, ci) => {
      if (c.name === 'species') speciesField = field;
      else if (c.name === 'pos') posField = field;
      else others.push({ field, spec: c, sink: sinks[ci]! });
      field += c.width;
    });
    this.building = { header, species: new Array<string>(cap), positions, arrays, sinks, speciesFromZ, speciesField, posField, others, lastSpecies: '', atom: 0, capacity: cap };
    this.state = 'atoms';
  }

  private onAtom(text: Uint8Array, start: number, end: number): Frame | null {
    const b = this.building!;
    const h = b.header;
    const nf = splitFields(text, start, end);
    if (nf !== h.fieldCount) {
      const where = this.where();
      if (nf === 0) fail(`blank line inside frame: atom ${b.atom + 1} of ${h.nAtoms} expected`, where, `the frame's count line says ${h.nAtoms} atoms; fix the count or remove the blank line`);
      if (nf === 1 && INTEGER.test(bytesText(text, start, end).trim())) {
        fail(`frame declares ${h.nAtoms} atoms but only ${b.atom} atom lines come before the next frame's count line`, where, 'correct the atom count line of this frame');
      }
      fail(`atom line has ${nf} fields but Properties needs ${h.fieldCount} (${describeColumns(h.columns)})`, where, 'make Properties match the columns, or fix this line');
    }
    const a = b.atom;
    if (a === b.capacity) this.grow(b);
    // the two columns every frame has, with their field positions fixed: the hot path
    if (b.speciesField >= 0) {
      // most lines repeat a recent symbol: compare bytes with the last one before making a string
      const fs = fieldStart[b.speciesField];
      const len = fieldEnd[b.speciesField] - fs;
      const last = b.lastSpecies;
      let same = len === last.length;
      for (let k = 0; same && k < len; k++) same = text[fs + k] === last.charCodeAt(k);
      if (same) b.species[a] = last;
      else {
        const sp = fieldText(text, b.speciesField);
        if (!isElement(sp)) this.badSpecies(sp);
        b.lastSpecies = sp;
        b.species[a] = sp;
      }
    }
    const pf = b.posField;
    const pos = b.positions;
    for (let d = 0; d < 3; d++) {
      const x = decimalAtBytes(text, fieldStart[pf + d], fieldEnd[pf + d]);
      if (!(x - x === 0)) this.badNumber(text, pf + d, 'pos', 'a finite real number');
      if (x > MAX_COORDINATE_A || x < -MAX_COORDINATE_A) this.farAtom(text, pf + d);
      pos[3 * a + d] = x;
    }
    if (b.others.length > 0) this.otherColumns(text, b, a);
    if (b.speciesFromZ) {
      const z = b.speciesFromZ[a];
      const s = elementSymbol(z);
      if (s === undefined) fail(`atomic number Z = ${z} is not an element`, this.where(), 'Z must be 1…118');
      b.species[a] = s;
    }
    b.atom++;
    return b.atom === h.nAtoms ? this.complete() : null;
  }

  /** Double the room of every array (up to the declared atom count). */
  private grow(b: Building): void {
    const cap = Math.min(b.header.nAtoms, 2 * b.capacity);
    const bigger = <T extends Float64Array | Int32Array | Uint8Array>(old: T, width: number): T => {
      const t = new (old.constructor as new (n: number) => T)(cap * width);
      t.set(old);
      return t;
    };
    b.positions = bigger(b.positions, 3);
    for (const o of b.others) {
      if (!Array.isArray(o.sink)) {
        o.sink = bigger(o.sink, o.spec.width);
        if (b.arrays[o.spec.name]) b.arrays[o.spec.name].data = o.sink;
        if (b.speciesFromZ && o.spec.name === 'Z') b.speciesFromZ = o.sink as Int32Array;
      }
    }
    b.capacity = cap;
  }

  private otherColumns(text: Uint8Array, b: Building, a: number): void {
    for (const { field, spec: c, sink } of b.others) {
      const base = a * c.width;
      for (let w = 0; w < c.width; w++) {
        const f = field + w;
        if (c.kind === 'R') {
          const x = numberField(text, f);
          if (!Number.isFinite(x)) this.badNumber(text, f, c.name, 'a finite real number');
          (sink as Float64Array)[base + w] = x;
        } else if (c.kind === 'I') {
          const x = integerField(text, f);
          if (x !== x) this.badNumber(text, f, c.name, 'a 32-bit integer');
          (sink as Int32Array)[base + w] = x;
        } else if (c.kind === 'L') {
          const v = parseBoolean(fieldText(text, f));
          if (v === undefined) this.badNumber(text, f, c.name, 'T or F');
          (sink as Uint8Array)[base + w] = v ? 1 : 0;
        } else {
          (sink as string[])[base + w] = fieldText(text, f);
        }
      }
    }
  }

  private complete(): Frame {
    const b = this.building!;
    const h = b.header;
    const frame: Frame = {
      species: b.species,
      positions: b.positions,
      cell: h.cell,
      pbc: h.pbc,
      info: h.info,
      arrays: b.arrays,
      source: { file: this.fileName, index: this.frame, line: h.countLine },
    };
    this.building = null;
    this.state = 'count';
    this.frame++;
    return frame;
  }

  private badSpecies(s: string): never {
    const fix = symbolIgnoringCase(s);
    fail(
      `unknown species '${clip(s)}': not an element symbol`,
      this.where(),
      fix !== undefined ? `did you mean '${fix}'? symbols are case-sensitive` : 'the first column must hold element symbols such as H, C, O, Na',
    );
  }

  private farAtom(text: Uint8Array, f: number): never {
    fail(`atom coordinate ${clip(fieldText(text, f))} Å is beyond ±${MAX_COORDINATE_A} Å`, this.where(), 'positions are in Å: check the units, or wrap the atoms into the cell');
  }

  private badNumber(text: Uint8Array, f: number, column: string, wanted: string): never {
    const t = fieldText(text, f);
    fail(`column '${column}' needs ${wanted}, found '${clip(t)}'`, this.where(), /nan|inf/i.test(t) ? 'the file holds NaN or infinite values; regenerate or drop this frame' : 'check this atom line');
  }

  /** End of input: complain about a frame left incomplete. */
  finish(): void {
    if (this.stopped) return;
    const where = { file: this.fileName, line: this.line, frame: this.frame };
    if (this.skipRemaining > 0) {
      fail(`file ends inside frame ${this.frame}: ${this.skipRemaining} more line(s) expected`, where, 'the file is truncated; copy it again or remove the incomplete last frame');
    }
    if (this.state === 'comment') {
      fail(`file ends after the atom count of frame ${this.frame}: the comment line and ${this.pendingCount} atom lines are missing`, where, 'the file is truncated; copy it again or remove the incomplete last frame');
    }
    if (this.state === 'atoms') {
      const b = this.building!;
      fail(`file ends inside frame ${this.frame}: ${b.atom} of ${b.header.nAtoms} atom lines present`, where, 'the file is truncated; copy it again or remove the incomplete last frame');
    }
  }
}

function describeColumns(cols: ColumnSpec[]): string {
  return cols.map((c) => `${c.name}:${c.kind}:${c.width}`).join(':');
}


/** Every frame of an extended XYZ text held in memory (uploads, tests). */
export function parseExtxyz(text: string | Uint8Array, fileName: string): Frame[] {
  const bytes = typeof text === 'string' ? encoder.encode(text) : text;
  const asm = new ExtxyzAssembler(fileName);
  const frames: Frame[] = [];
  let start = 0;
  const n = bytes.length;
  while (start < n) {
    let end = bytes.indexOf(10, start);
    if (end < 0) end = n;
    const r = asm.push(bytes, start, end);
    if (r !== null && r !== 'stop') frames.push(r);
    start = end + 1;
  }
  asm.finish();
  if (frames.length === 0) fail('no frames found', { file: fileName, line: 1, frame: 0 }, 'an extended XYZ file starts with a line holding the number of atoms');
  return frames;
}
