// Crystallographic Information Files (CIF 1.1, the core subset a structure needs): data blocks, tags, loops,
// quoted strings and ;-delimited text fields; cell lengths and angles (standard uncertainties such as 5.6402(3)
// are read as the value); atom sites in fractional coordinates; the symmetry operations, which are applied to
// the asymmetric unit to give the full cell, wrapped into [0, 1) with duplicate sites merged (periodic minimum
// image, tolerance in Å). One Frame per data block that holds atoms. Pure code, runs in a browser too.
import { clipText as clip, InputError } from '../core/errors.ts';
import type { Frame, InfoValue, Mat3 } from '../core/geometry/frame.ts';
import { cellFromParameters, checkBelievableCell, perpendicularWidths, wrapUnit } from '../core/geometry/cell.ts';
import { isElement } from '../core/geometry/elements.ts';
import { mat3Determinant } from '../core/dielectric/tensor.ts';
import { DECIMAL_SOURCE } from './decimal.ts';

interface Token {
  kind: 'data' | 'loop' | 'tag' | 'value' | 'save' | 'global' | 'stop';
  text: string;
  line: number;
  /** A quoted string or text field: never a keyword, never "unknown". */
  quoted: boolean;
}

function fail(problem: string, file: string, line: number | undefined, hint?: string, frame?: number): never {
  throw new InputError(problem, { file, line, frame }, hint);
}

function isWs(c: string | undefined): boolean {
  return c === ' ' || c === '\t' || c === '\r' || c === '\n' || c === undefined;
}

/** Split CIF text into tokens with their 1-based line numbers. */
export function tokeniseCif(text: string, file: string): Token[] {
  const tokens: Token[] = [];
  const lines = (text.charCodeAt(0) === 0xfeff ? text.slice(1) : text).split('\n'); // a byte-order mark carries nothing
  for (let ln = 0; ln < lines.length; ln++) {
    const line = lines[ln].replace(/\r$/, '');
    const lineNo = ln + 1;
    if (line.startsWith(';')) {
      // text field: runs to the next line that starts with ';'
      const body: string[] = [line.slice(1)];
      let end = ln + 1;
      while (end < lines.length && !lines[end].startsWith(';')) body.push(lines[end++].replace(/\r$/, ''));
      if (end >= lines.length) fail('a text field opened with ; is not closed', file, lineNo, "end it with a line that starts with ';'");
      tokens.push({ kind: 'value', text: body.join('\n').replace(/^\n/, ''), line: lineNo, quoted: true });
      const rest = lines[end].slice(1);
      if (rest.trim().length > 0 && !rest.trim().startsWith('#')) fail('text after the closing ; of a text field', file, end + 1, "put the closing ';' on a line of its own");
      ln = end;
      continue;
    }
    let i = 0;
    while (i < line.length) {
      const c = line[i];
      if (c === ' ' || c === '\t') {
        i++;
        continue;
      }
      if (c === '#') break;
      if (c === "'" || c === '"') {
        // a quote closes only when followed by whitespace or the end of the line (CIF 1.1)
        let j = i + 1;
        while (j < line.length && !(line[j] === c && isWs(line[j + 1]))) j++;
        if (j >= line.length) fail(`a string opened with ${c} is not closed on this line`, file, lineNo, `close it with ${c}, or use a ;-delimited text field for long text`);
        tokens.push({ kind: 'value', text: line.slice(i + 1, j), line: lineNo, quoted: true });
        i = j + 1;
        continue;
      }
      let j = i;
      while (j < line.length && line[j] !== ' ' && line[j] !== '\t') j++;
      const word = line.slice(i, j);
      i = j;
      const lower = word.toLowerCase();
      if (word.startsWith('_')) tokens.push({ kind: 'tag', text: lower, line: lineNo, quoted: false });
      else if (lower.startsWith('data_')) tokens.push({ kind: 'data', text: word.slice(5), line: lineNo, quoted: false });
      else if (lower === 'loop_') tokens.push({ kind: 'loop', text: word, line: lineNo, quoted: false });
      else if (lower.startsWith('save_')) tokens.push({ kind: 'save', text: word, line: lineNo, quoted: false });
      else if (lower === 'global_') tokens.push({ kind: 'global', text: word, line: lineNo, quoted: false });
      else if (lower === 'stop_') tokens.push({ kind: 'stop', text: word, line: lineNo, quoted: false });
      else tokens.push({ kind: 'value', text: word, line: lineNo, quoted: false });
    }
  }
  return tokens;
}

export interface CifValue {
  text: string;
  line: number;
  quoted: boolean;
}

export interface CifLoop {
  tags: string[];
  rows: CifValue[][];
  line: number;
}

export interface CifBlock {
  name: string;
  line: number;
  items: Map<string, CifValue>;
  loops: CifLoop[];
}

/** Data blocks with their single items and loops (tags lower-cased). */
export function parseCifBlocks(text: string, file: string): CifBlock[] {
  const tokens = tokeniseCif(text, file);
  const blocks: CifBlock[] = [];
  let block: CifBlock | null = null;
  let k = 0;
  const need = (t: Token): CifBlock => {
    if (block === null) fail(`'${clip(t.text)}' before the first data_ block header`, file, t.line, 'start the file with data_NAME');
    return block;
  };
  while (k < tokens.length) {
    const t = tokens[k];
    if (t.kind === 'data') {
      block = { name: t.text, line: t.line, items: new Map(), loops: [] };
      blocks.push(block);
      k++;
    } else if (t.kind === 'tag') {
      const b = need(t);
      const v = tokens[k + 1];
      if (v === undefined || v.kind !== 'value') fail(`tag ${clip(t.text)} has no value`, file, t.line, "give a value, or '?' if it is unknown");
      if (b.items.has(t.text) || b.loops.some((l) => l.tags.includes(t.text))) fail(`tag ${clip(t.text)} appears twice in block ${clip(b.name)}`, file, t.line, 'keep one value per tag');
      b.items.set(t.text, { text: v.text, line: v.line, quoted: v.quoted });
      k += 2;
    } else if (t.kind === 'loop') {
      const b = need(t);
      const tags: string[] = [];
      k++;
      while (k < tokens.length && tokens[k].kind === 'tag') tags.push(tokens[k++].text);
      if (tags.length === 0) fail('loop_ without tags', file, t.line, 'list the tags of the loop right after loop_');
      const values: CifValue[] = [];
      while (k < tokens.length && tokens[k].kind === 'value') {
        const v = tokens[k++];
        values.push({ text: v.text, line: v.line, quoted: v.quoted });
      }
      if (values.length % tags.length !== 0) {
        const lastLine = values.length > 0 ? values[values.length - 1].line : t.line;
        fail(`loop of ${tags.length} tags (${tags[0]} …) holds ${values.length} values, not a multiple of ${tags.length}`, file, lastLine, 'every row of a loop needs one value per tag; quote values that contain spaces');
      }
      const rows: CifValue[][] = [];
      for (let r = 0; r < values.length; r += tags.length) rows.push(values.slice(r, r + tags.length));
      for (const tag of tags) {
        if (b.items.has(tag) || b.loops.some((l) => l.tags.includes(tag))) fail(`tag ${tag} appears twice in block ${clip(b.name)}`, file, t.line, 'keep one value per tag');
      }
      b.loops.push({ tags, rows, line: t.line });
    } else if (t.kind === 'value') {
      fail(`value '${t.text.slice(0, 30)}' without a tag`, file, t.line, 'every value follows its _tag, or sits in a loop_ row');
    } else if (t.kind === 'save') {
      // save frames belong to dictionaries, not structures: skip to the closing save_
      k++;
      while (k < tokens.length && !(tokens[k].kind === 'save' && tokens[k].text.length === 5)) k++;
      k++;
    } else {
      // global_ and stop_ (STAR leftovers) carry nothing for a structure
      k++;
    }
  }
  return blocks;
}

const CIF_NUMBER = new RegExp(`^(${DECIMAL_SOURCE})(?:\\(\\d+\\))?$`);

/** A CIF number: 5.6402(3) → 5.6402; '?' and '.' (unknown, inapplicable) → undefined. */
export function cifNumber(v: CifValue): number | undefined {
  if (!v.quoted && (v.text === '?' || v.text === '.')) return undefined;
  const m = CIF_NUMBER.exec(v.text);
  return m ? Number(m[1]) : NaN;
}

/** A symmetry operation x' = R x + t on fractional coordinates. */
export interface SymmetryOp {
  rotation: Float64Array; // 3×3 row-major
  translation: Float64Array;
  text: string;
}

/** Parse "x,y,z", "-x+1/2,y,-z", "1/2+x", "x-y,-y,z+0.25" … into R and t. */
export function parseSymmetryOp(text: string): SymmetryOp | string {
  const parts = text.replace(/\s+/g, '').toLowerCase().split(',');
  if (parts.length !== 3) return `'${text}' does not have three comma-separated parts`;
  const rotation = new Float64Array(9);
  const translation = new Float64Array(3);
  for (let row = 0; row < 3; row++) {
    const expr = parts[row];
    if (expr.length === 0) return `part ${row + 1} of '${text}' is empty`;
    const term = /([+-]?)(\d+(?:\.\d*)?(?:\/\d+(?:\.\d*)?)?|\.\d+)?(\*?)([xyz]?)/y;
    let pos = 0;
    let any = false;
    while (pos < expr.length) {
      term.lastIndex = pos;
      const m = term.exec(expr);
      if (!m || m[0].length === 0) return `cannot read '${expr.slice(pos)}' in '${text}'`;
      if (any && m[1] === '') return `missing + or - before '${m[0]}' in '${text}'`;
      const sign = m[1] === '-' ? -1 : 1;
      let coef = 1;
      if (m[2] !== undefined) {
        const [num, den] = m[2].split('/');
        coef = den === undefined ? Number(num) : Number(num) / Number(den);
        if (!Number.isFinite(coef)) return `bad number '${m[2]}' in '${text}'`;
      } else if (m[4] === '') return `cannot read '${m[0]}' in '${text}'`;
      if (m[3] === '*' && (m[2] === undefined || m[4] === '')) return `cannot read '${m[0]}' in '${text}'`;
      if (m[4] !== '') rotation[3 * row + 'xyz'.indexOf(m[4])] += sign * coef;
      else translation[row] += sign * coef;
      pos += m[0].length;
      any = true;
    }
  }
  const det = mat3Determinant(rotation);
  if (Math.abs(Math.abs(det) - 1) > 1e-6) return `'${text}' is not a symmetry operation (determinant ${det.toFixed(3)}, not ±1)`;
  return { rotation, translation, text };
}

/** The element of a type symbol or label: "Na1" → Na, "O2-" → O, "Fe3+" → Fe, "CA1" → C, "Ow" → O. */
export function elementFromLabel(label: string): string | undefined {
  const m = /^([A-Za-z])([a-z]?)/.exec(label);
  if (!m) return undefined;
  const one = m[1].toUpperCase();
  if (m[2] && isElement(one + m[2])) return one + m[2];
  return isElement(one) ? one : undefined;
}

export interface CifOptions {
  /** Sites closer than this (Å, periodic minimum image) after applying symmetry are one site (default 0.01). */
  mergeTolerance?: number;
}

const SYMOP_TAGS = ['_space_group_symop_operation_xyz', '_symmetry_equiv_pos_as_xyz', '_space_group_symop.operation_xyz'];
const CELL_TAGS = ['_cell_length_a', '_cell_length_b', '_cell_length_c', '_cell_angle_alpha', '_cell_angle_beta', '_cell_angle_gamma'];
const SPACE_GROUP_TAGS = ['_symmetry_space_group_name_h-m', '_space_group_name_h-m_alt', '_space_group_name_h-m'];

function loopWith(block: CifBlock, tag: string): CifLoop | undefined {
  return block.loops.find((l) => l.tags.includes(tag));
}

/** All values of a tag: the loop column, or the single item. */
function column(block: CifBlock, tag: string): CifValue[] | undefined {
  const loop = loopWith(block, tag);
  if (loop) {
    const c = loop.tags.indexOf(tag);
    return loop.rows.map((r) => r[c]);
  }
  const v = block.items.get(tag);
  return v ? [v] : undefined;
}

/**
 * Sites kept so far, hashed by fractional bins at least `tol` thick (perpendicular to the cell faces), so a new
 * position is compared with the few sites in its own and the adjacent bins (periodic) instead of with every
 * site: linear time in the number of sites instead of quadratic.
 */
class SiteHash {
  private readonly bins = new Map<number, number[]>();
  private readonly nb: number[];
  private readonly tol2: number;

  constructor(
    private readonly h: Mat3,
    tol: number,
  ) {
    this.nb = perpendicularWidths(h).map((w) => Math.max(1, Math.min(100_000, Math.floor(w / Math.max(tol, 1e-9)))));
    this.tol2 = tol * tol;
  }

  private key(i: number, j: number, k: number): number {
    const [n0, n1, n2] = this.nb;
    return (((i % n0) + n0) % n0) * n1 * n2 + (((j % n1) + n1) % n1) * n2 + (((k % n2) + n2) % n2);
  }

  private binOf(p: number[]): [number, number, number] {
    const [n0, n1, n2] = this.nb;
    return [Math.min(n0 - 1, Math.floor(p[0] * n0)), Math.min(n1 - 1, Math.floor(p[1] * n1)), Math.min(n2 - 1, Math.floor(p[2] * n2))];
  }

  add(p: number[], site: number): void {
    const [i, j, k] = this.binOf(p);
    const key = this.key(i, j, k);
    const list = this.bins.get(key);
    if (list) list.push(site);
    else this.bins.set(key, [site]);
  }

  /** The lowest-numbered kept site within the tolerance of `p` (periodic), or -1. */
  find(p: number[], frac: number[]): number {
    const h = this.h;
    const [i, j, k] = this.binOf(p);
    const seen = new Set<number>();
    let best = -1;
    for (let a = -1; a <= 1; a++) {
      for (let b = -1; b <= 1; b++) {
        for (let c = -1; c <= 1; c++) {
          const key = this.key(i + a, j + b, k + c);
          if (seen.has(key)) continue;
          seen.add(key);
          for (const q of this.bins.get(key) ?? []) {
            if (best >= 0 && q >= best) continue;
            let d0 = p[0] - frac[3 * q], d1 = p[1] - frac[3 * q + 1], d2 = p[2] - frac[3 * q + 2];
            d0 -= Math.round(d0);
            d1 -= Math.round(d1);
            d2 -= Math.round(d2);
            const x = d0 * h[0] + d1 * h[3] + d2 * h[6];
            const y = d0 * h[1] + d1 * h[4] + d2 * h[7];
            const z = d0 * h[2] + d1 * h[5] + d2 * h[8];
            if (x * x + y * y + z * z < this.tol2) best = q;
          }
        }
      }
    }
    return best;
  }
}

function blockFrame(block: CifBlock, file: string, index: number, options: CifOptions): Frame {
  const tol = options.mergeTolerance ?? 0.01;
  const where = (line: number | undefined) => ({ file, line, frame: index });
  const par: number[] = [];
  for (const tag of CELL_TAGS) {
    const v = block.items.get(tag);
    if (!v) fail(`block ${clip(block.name)} has atom sites but no ${tag}`, file, block.line, 'give all six cell parameters (_cell_length_a … _cell_angle_gamma)', index);
    const x = cifNumber(v);
    if (x === undefined || !Number.isFinite(x)) fail(`${tag} is '${clip(v.text)}', not a number`, file, v.line, 'write the value in Å or degrees, e.g. 5.6402(3)', index);
    par.push(x);
  }
  let cell: Mat3;
  try {
    const at = where(block.items.get('_cell_length_a')!.line);
    cell = cellFromParameters(par[0], par[1], par[2], par[3], par[4], par[5], at);
    checkBelievableCell(cell, at);
  } catch (e) {
    if (e instanceof InputError) throw new InputError(e.problem, { ...e.where, frame: index }, e.hint);
    throw e;
  }

  // symmetry operations (identity when none are given and the space group is P1 or not named)
  const ops: SymmetryOp[] = [];
  let opsTag: string | undefined;
  for (const tag of SYMOP_TAGS) {
    const col = column(block, tag);
    if (!col) continue;
    opsTag = tag;
    for (const v of col) {
      const op = parseSymmetryOp(v.text);
      if (typeof op === 'string') fail(`symmetry operation ${clip(op)}`, file, v.line, "write operations like 'x, y, z' or '-x+1/2, y, -z'", index);
      ops.push(op);
    }
    break;
  }
  if (opsTag === undefined) {
    const sg = SPACE_GROUP_TAGS.map((t) => block.items.get(t)).find((v) => v !== undefined);
    const name = sg?.text.replace(/\s+/g, '').toUpperCase();
    if (sg && name !== 'P1' && name !== '?' && name !== '.') {
      fail(`space group '${clip(sg.text)}' is named but its symmetry operations are not listed`, file, sg.line, 'add a loop of _space_group_symop_operation_xyz (or _symmetry_equiv_pos_as_xyz), or give every atom of the cell', index);
    }
    ops.push(parseSymmetryOp('x,y,z') as SymmetryOp);
  }

  const fx = column(block, '_atom_site_fract_x');
  const fy = column(block, '_atom_site_fract_y');
  const fz = column(block, '_atom_site_fract_z');
  if (!fx || !fy || !fz) {
    const cart = column(block, '_atom_site_cartn_x');
    fail(`block ${clip(block.name)}: atom sites lack fractional coordinates`, file, block.line, cart ? 'Cartesian-only atom sites are not read; give _atom_site_fract_x/y/z' : 'give a loop with _atom_site_fract_x, _atom_site_fract_y, _atom_site_fract_z', index);
  }
  if (fx.length === 0) fail(`block ${clip(block.name)} lists no atom sites`, file, block.line, 'give at least one row of _atom_site_fract_x/y/z: a structure without atoms has nothing to compute', index);
  const siteLoop = loopWith(block, '_atom_site_fract_x');
  const sameLoop = (tag: string) => (siteLoop ? loopWith(block, tag) === siteLoop : block.items.has(tag));
  const symbols = sameLoop('_atom_site_type_symbol') ? column(block, '_atom_site_type_symbol') : undefined;
  const labels = sameLoop('_atom_site_label') ? column(block, '_atom_site_label') : undefined;
  if (!symbols && !labels) fail(`block ${clip(block.name)}: atom sites have neither _atom_site_type_symbol nor _atom_site_label`, file, siteLoop?.line ?? block.line, 'add _atom_site_type_symbol with element symbols', index);
  const occupancy = sameLoop('_atom_site_occupancy') ? column(block, '_atom_site_occupancy') : undefined;

  const species: string[] = [];
  const frac: number[] = [];
  const siteLine: number[] = [];
  for (let s = 0; s < fx.length; s++) {
    const lineOf = fx[s].line;
    const sym = symbols?.[s];
    const lab = labels?.[s];
    let el: string | undefined;
    if (sym && sym.text !== '?' && sym.text !== '.') el = elementFromLabel(sym.text);
    if (el === undefined && lab) el = elementFromLabel(lab.text);
    if (el === undefined) {
      fail(`atom site ${clip(String(lab?.text ?? s + 1))}: no element in '${clip(sym?.text ?? lab?.text ?? '')}'`, file, lineOf, 'the type symbol (or label) must start with an element symbol, e.g. Na1, O2-', index);
    }
    const occ = occupancy ? cifNumber(occupancy[s]) : undefined;
    if (occ !== undefined && Number.isFinite(occ) && occ < 0.999) {
      fail(`atom site ${clip(String(lab?.text ?? s + 1))} has occupancy ${clip(occupancy![s].text)}: partially occupied (disordered) sites are not supported`, file, lineOf, 'choose one ordered configuration and give it with full occupancies', index);
    }
    const xyz = [fx[s], fy[s], fz[s]].map((v) => {
      const x = cifNumber(v);
      if (x === undefined || !Number.isFinite(x)) fail(`atom site ${clip(String(lab?.text ?? s + 1))}: coordinate '${clip(v.text)}' is not a number`, file, v.line, 'fractional coordinates are numbers such as 0.25 or 0.2754(3)', index);
      return x;
    });
    species.push(el);
    frac.push(xyz[0], xyz[1], xyz[2]);
    siteLine.push(lineOf);
  }

  // apply every operation to every site; keep a new position unless an equal one is already there
  const outSpecies: string[] = [];
  const outFrac: number[] = [];
  const outLine: number[] = [];
  const h = cell;
  const sites = new SiteHash(cell, tol);
  for (let s = 0; s < species.length; s++) {
    for (const op of ops) {
      const r = op.rotation;
      const p = [0, 1, 2].map((row) => wrapUnit(r[3 * row] * frac[3 * s] + r[3 * row + 1] * frac[3 * s + 1] + r[3 * row + 2] * frac[3 * s + 2] + op.translation[row]));
      const dup = sites.find(p, outFrac);
      if (dup >= 0) {
        if (outSpecies[dup] !== species[s]) {
          fail(`atom sites on lines ${outLine[dup]} and ${siteLine[s]} (${outSpecies[dup]}, ${species[s]}) fall on the same position under symmetry`, file, siteLine[s], 'the structure is disordered or a coordinate is wrong; give one ordered configuration', index);
        }
        continue;
      }
      sites.add(p, outSpecies.length);
      outSpecies.push(species[s]);
      outFrac.push(p[0], p[1], p[2]);
      outLine.push(siteLine[s]);
    }
  }

  const n = outSpecies.length;
  const positions = new Float64Array(3 * n);
  for (let i = 0; i < n; i++) {
    const a = outFrac[3 * i], b = outFrac[3 * i + 1], c = outFrac[3 * i + 2];
    for (let k = 0; k < 3; k++) positions[3 * i + k] = a * h[k] + b * h[3 + k] + c * h[6 + k];
  }
  const info: Record<string, InfoValue> = { cif_block: block.name };
  for (const [tag, v] of block.items) {
    if (CELL_TAGS.includes(tag) || v.text.length > 200 || v.text.includes('\n')) continue;
    if (!v.quoted && (v.text === '?' || v.text === '.')) continue;
    const x = v.quoted ? NaN : cifNumber(v);
    info[tag.slice(1)] = x !== undefined && Number.isFinite(x) ? x : v.text;
  }
  return { species: outSpecies, positions, cell, pbc: [true, true, true], info, arrays: {}, source: { file, index, line: block.line } };
}

/** One Frame per data block that holds atom sites, symmetry expanded, duplicates merged. */
export function parseCif(text: string, fileName: string, options: CifOptions = {}): Frame[] {
  const blocks = parseCifBlocks(text, fileName);
  if (blocks.length === 0) fail('no data_ block found', fileName, 1, 'a CIF starts with a data_NAME line');
  const frames: Frame[] = [];
  for (const block of blocks) {
    if (!column(block, '_atom_site_fract_x') && !column(block, '_atom_site_label') && !column(block, '_atom_site_type_symbol')) continue;
    frames.push(blockFrame(block, fileName, frames.length, options));
  }
  if (frames.length === 0) fail('no data block holds atom sites', fileName, blocks[0].line, 'the structure needs a loop of _atom_site_label/_atom_site_type_symbol with _atom_site_fract_x/y/z');
  return frames;
}
