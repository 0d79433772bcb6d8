// CP2K: the cell polarisability of a linear-response run (&PROPERTIES &LINRES &POLAR). With the Berry-phase
// dipole operator (PERIODIC_DIPOLE_OPERATOR T; the output names the perturbation "Berry phase_x/y/z") the
// response is to a macroscopic field at fixed (conducting, "tin-foil") boundary: the conducting-boundary cell
// polarisability α_c, with ε∞ = I + 4πα_c/V. With the position operator it is not a periodic quantity: the run
// is refused, unless the input makes it an isolated molecule — &CELL PERIODIC NONE and &POISSON PERIODIC NONE (a
// non-periodic Poisson solver) — when it is the polarisability of the molecule or cluster in vacuum (alpha-mol),
// and the frame has no cell. CP2K prints the tensor in atomic units (bohr³) and in ang^3; we read the a.u. one (more
// significant digits for small values) and convert with CODATA's Bohr radius, and check it against the other.
//
// The printed tensor is not exactly symmetric (each column comes from its own linear solve, converged to the
// solver's tolerance); the symmetric part ½(α + αᵀ) is kept, and an asymmetry above 1 % of the largest
// component is refused as a sign of an unconverged response.
//
// At PRINT_LEVEL LOW the output prints neither the cell nor the atoms nor the settings; they come from the input
// the output names ("CP2K| Input file name"), which must sit beside the output, and from the coordinate file
// that input names (&TOPOLOGY COORD_FILE_NAME, XYZ). Where the output prints atom coordinates (MEDIUM and
// above) those are used and checked against the input's count.
import path from 'node:path';
import { InputError, type Where } from '../../core/errors.ts';
import { makeFrame, type Mat3 } from '../../core/geometry/frame.ts';
import { cellFromParameters, cellVolume, toCartesian } from '../../core/geometry/cell.ts';
import { BOHR_A, BOHR3_A3 } from '../../core/dielectric/units.ts';
import { elementFromLabel } from '../cif.ts';
import { parseExtxyz } from '../extxyz-parse.ts';
import { cp2kLogical, keyword, parseCp2kInput, section, type Cp2kSection } from './cp2k-input.ts';
import { diskFiles, MAX_ASYMMETRY, numbersIn, readCompanion, splitLines, symmetricPart, unusable, type RunFiles, type RunReading, type RunSetting } from './dft-run.ts';

export function isCp2kOutput(head: string): boolean {
  return /^\s*CP2K\|\s+version string:\s+CP2K version/m.test(head);
}

/** A length unit of CP2K input ("[angstrom]", "UNIT bohr") as Å per unit. */
function lengthUnit(text: string | undefined, where: Where): number {
  const u = (text ?? 'angstrom').trim().toLowerCase().replace(/^\[|\]$/g, '');
  if (u === 'angstrom' || u === 'ang' || u === 'a') return 1;
  if (u === 'bohr' || u === 'au' || u === 'a.u.') return BOHR_A;
  if (u === 'nm') return 10;
  if (u === 'pm') return 0.01;
  throw new InputError(`length unit "${text}" is not one this reader knows (angstrom, bohr, nm, pm)`, where);
}

/** A keyword value with an optional leading [unit]: the numbers in Å. */
function lengths(value: string, defaultUnit: number, count: number, where: Where): number[] {
  const m = /^\[([^\]]+)\]\s*(.*)$/.exec(value.trim());
  const factor = m ? lengthUnit(m[1], where) : defaultUnit;
  const v = numbersIn(m ? m[2] : value);
  if (!v || v.length !== count) throw new InputError(`expected ${count} numbers, got "${value}"`, where, 'write the cell as in the CP2K manual');
  return v.map((x) => x * factor);
}

/** True when the input treats the system as isolated: no periodicity in &CELL nor in the Poisson solver. */
function isolatedInput(forceEval: Cp2kSection, subsys: Cp2kSection): boolean {
  const none = (v: string | undefined) => (v ?? '').trim().toUpperCase() === 'NONE';
  return none(keyword(section(subsys, 'CELL'), 'PERIODIC')?.value) && none(keyword(section(forceEval, 'DFT', 'POISSON'), 'PERIODIC')?.value);
}

function cellFromInput(subsys: Cp2kSection, inputFile: string, isolated = false): Mat3 {
  const cell = section(subsys, 'CELL');
  if (!cell) throw new InputError('the input has no &CELL section', { file: inputFile, line: subsys.line }, 'a periodic polarisability needs the cell');
  const at = (line: number): Where => ({ file: cell.file, line });
  const fileKw = keyword(cell, 'CELL_FILE_NAME');
  if (fileKw) throw new InputError('the cell is read from a file (CELL_FILE_NAME), which this reader does not follow', at(fileKw.line), 'write the cell in &CELL (ABC or A, B, C)');
  const periodic = keyword(cell, 'PERIODIC');
  if (periodic && periodic.value.toUpperCase() !== 'XYZ' && !(isolated && periodic.value.toUpperCase() === 'NONE')) {
    throw new InputError(`the cell is periodic only along ${periodic.value}`, at(periodic.line), 'a bulk polarisability needs PERIODIC XYZ');
  }
  const unitKw = keyword(cell, 'UNIT');
  const unit = lengthUnit(unitKw?.value, at(unitKw?.line ?? cell.line));
  const abc = keyword(cell, 'ABC');
  const vectors = ['A', 'B', 'C'].map((n) => keyword(cell, n));
  if (abc) {
    const [a, b, c] = lengths(abc.value, unit, 3, at(abc.line));
    const angKw = keyword(cell, 'ALPHA_BETA_GAMMA');
    let angles = [90, 90, 90];
    if (angKw) {
      const m = /^\[([^\]]+)\]\s*(.*)$/.exec(angKw.value.trim());
      const v = numbersIn(m ? m[2] : angKw.value);
      if (!v || v.length !== 3) throw new InputError(`ALPHA_BETA_GAMMA needs 3 angles, got "${angKw.value}"`, at(angKw.line));
      if (m && !/^deg/i.test(m[1])) throw new InputError(`angles in [${m[1]}] are not read; give degrees`, at(angKw.line));
      angles = v;
    }
    return cellFromParameters(a, b, c, angles[0], angles[1], angles[2], at(abc.line));
  }
  if (vectors.every((v) => v !== undefined)) {
    return Float64Array.from(vectors.flatMap((v) => lengths(v!.value, unit, 3, at(v!.line))));
  }
  throw new InputError('&CELL gives neither ABC nor all of A, B and C', at(cell.line), 'write the cell in &CELL');
}

interface InputAtoms {
  labels: string[];
  /** Å, Cartesian. */
  positions: number[];
  /** Where they came from, for reports. */
  source: string;
  where: Where;
}

function atomsFromInput(subsys: Cp2kSection, cell: Mat3, inputFile: string, outputCoordName: string | null, files: RunFiles): InputAtoms {
  const coord = section(subsys, 'COORD');
  const topo = section(subsys, 'TOPOLOGY');
  const coordFile = keyword(topo, 'COORD_FILE_NAME');
  if (coord && coordFile) {
    throw new InputError('the input has both &COORD and COORD_FILE_NAME', { file: coordFile.file, line: coordFile.line }, 'keep one source of atom positions');
  }
  if (coord) {
    const where = { file: coord.file, line: coord.line };
    const unitKw = keyword(coord, 'UNIT');
    const unit = lengthUnit(unitKw?.value, where);
    const scaled = cp2kLogical(keyword(coord, 'SCALED')?.value) ?? false;
    const labels: string[] = [];
    const positions: number[] = [];
    for (const row of coord.rows) {
      if (/^(UNIT|SCALED)$/i.test(row.name)) continue;
      const f = row.value.split(/\s+/);
      const xyz = numbersIn(f.slice(1, 4).join(' '));
      if (!xyz || xyz.length !== 3) throw new InputError(`atom line "${row.value}" is not KIND X Y Z`, { file: row.file, line: row.line });
      labels.push(f[0]);
      if (scaled) positions.push(...toCartesian(cell, xyz));
      else positions.push(...xyz.map((v) => v * unit));
    }
    return { labels, positions, source: `&COORD of ${path.basename(inputFile)}`, where };
  }
  if (coordFile) {
    const format = (keyword(topo, 'COORD_FILE_FORMAT')?.value ?? '').toUpperCase();
    const name = coordFile.value.replace(/^["']|["']$/g, '');
    const where = { file: coordFile.file, line: coordFile.line };
    if (format !== 'XYZ' && !(format === '' && /\.xyz$/i.test(name))) {
      throw new InputError(`the coordinate file is in format ${format || 'unknown'}; this reader follows XYZ files only`, where, 'use COORD_FILE_FORMAT XYZ, or &COORD');
    }
    if (outputCoordName && path.basename(outputCoordName) !== path.basename(name)) {
      throw new InputError(`the output read coordinates from ${outputCoordName}, the input names ${name}`, where, 'give the input that made this output');
    }
    const file = path.resolve(path.dirname(coordFile.file), name);
    const text = readCompanion(files, file, where, 'the coordinate file the input names must sit where the input says');
    const frames = parseExtxyz(text, file);
    if (frames.length !== 1) throw new InputError(`the coordinate file holds ${frames.length} frames; a single point needs one`, { file });
    const f = frames[0];
    return { labels: f.species, positions: Array.from(f.positions), source: path.basename(file), where: { file } };
  }
  throw new InputError('the input gives no atom positions (&COORD or &TOPOLOGY COORD_FILE_NAME)', { file: inputFile, line: subsys.line });
}

/** Kind label → element, from &KIND … ELEMENT, else from the label itself. */
function elementOfKind(label: string, subsys: Cp2kSection, where: Where): string {
  const kind = subsys.sections.find((s) => s.name === 'KIND' && s.param.toUpperCase() === label.toUpperCase());
  const explicit = keyword(kind, 'ELEMENT')?.value;
  const el = explicit ? elementFromLabel(explicit) : elementFromLabel(label);
  if (!el) throw new InputError(`cannot tell the element of kind "${label}"`, where, 'give ELEMENT in its &KIND section');
  return el;
}

function settingsFromInput(forceEval: Cp2kSection, subsys: Cp2kSection): RunSetting[] {
  const dft = section(forceEval, 'DFT');
  const out: RunSetting[] = [];
  const xc = section(dft, 'XC', 'XC_FUNCTIONAL');
  if (xc) {
    const parts = [xc.param.toUpperCase(), ...xc.sections.map((s) => s.name)].filter(Boolean);
    out.push({ name: 'functional', value: parts.join(' + ') || 'none' });
  }
  const mgrid = section(dft, 'MGRID');
  const cutoff = keyword(mgrid, 'CUTOFF')?.value;
  const rel = keyword(mgrid, 'REL_CUTOFF')?.value;
  out.push({ name: 'cutoff', value: `${cutoff ? Number(cutoff) : 'default'} Ry (relative ${rel ? Number(rel) : 'default'} Ry)` });
  const kinds = subsys.sections
    .filter((s) => s.name === 'KIND')
    .map((k) => {
      const basis = k.keywords.filter((w) => w.name === 'BASIS_SET').map((w) => w.value.replace(/\s+/g, ' '));
      const pot = keyword(k, 'POTENTIAL')?.value;
      return `${k.param}: ${basis.join(', ') || '?'}${pot ? ` / ${pot}` : ''}`;
    })
    .sort();
  out.push({ name: 'basis', value: kinds.join('; ') });
  const kp = section(dft, 'KPOINTS');
  out.push({ name: 'k-points', value: kp ? (keyword(kp, 'SCHEME')?.value.replace(/\s+/g, ' ') ?? 'listed') : 'Γ only' });
  return out;
}

/** The polarisability printed in `unit` ('a.u.' or 'ang^3'), row-major, unsymmetrised; null when absent. */
function printedTensor(lines: string[], unit: string, file: string): { T: number[]; line: number } | null {
  let found: { T: number[]; line: number } | null = null;
  const head = new RegExp(`POLAR\\|\\s+Polarizability tensor \\[${unit.replace(/[.^]/g, '\\$&')}\\]`);
  for (let i = 0; i < lines.length; i++) {
    if (!head.test(lines[i])) continue;
    const rows: Record<string, number[]> = {};
    for (let k = 1; k <= 3; k++) {
      const m = /POLAR\|\s+(\w\w,\w\w,\w\w)\s+(.*)$/.exec(lines[i + k] ?? '');
      const v = m ? numbersIn(m[2]) : null;
      if (!m || !v || v.length !== 3) throw new InputError(`line ${k} of the polarizability tensor [${unit}] cannot be read`, { file, line: i + k + 1 }, 'the output is damaged or cut short');
      rows[m[1]] = v;
    }
    const d = rows['xx,yy,zz'];
    const u = rows['xy,xz,yz'];
    const l = rows['yx,zx,zy'];
    if (!d || !u || !l) throw new InputError('the polarizability tensor lines are not xx,yy,zz / xy,xz,yz / yx,zx,zy', { file, line: i + 1 });
    found = { T: [d[0], u[0], u[1], l[0], d[1], u[2], l[1], l[2], d[2]], line: i + 1 };
  }
  return found;
}

/** Coordinates printed by the output (PRINT_LEVEL MEDIUM and above), in Å; null when not printed. */
function printedAtoms(lines: string[], file: string): { elements: string[]; positions: number[]; line: number } | null {
  const start = lines.findIndex((l) => /^\s*MODULE QUICKSTEP:\s+ATOMIC COORDINATES IN (angstrom|ANGSTROM)/.test(l));
  if (start < 0) return null;
  const elements: string[] = [];
  const positions: number[] = [];
  let k = start + 1;
  while (k < lines.length && !/^\s*Atom\s+Kind\s+Element/.test(lines[k])) k++;
  for (k++; k < lines.length; k++) {
    const l = lines[k];
    if (l.trim() === '') {
      if (elements.length) break;
      continue;
    }
    const f = l.trim().split(/\s+/);
    const xyz = numbersIn(f.slice(4, 7).join(' '));
    if (f.length < 7 || !xyz) throw new InputError(`printed atom line "${l.trim()}" cannot be read`, { file, line: k + 1 }, 'the output is damaged');
    elements.push(f[2]);
    positions.push(...xyz);
  }
  return { elements, positions, line: start + 1 };
}

function outputValue(lines: string[], re: RegExp): string | null {
  for (const l of lines) {
    const m = re.exec(l);
    if (m) return m[1].trim();
  }
  return null;
}

export function readCp2kRun(file: string, text: string, files: RunFiles = diskFiles): RunReading {
  const lines = splitLines(text);
  const version = outputValue(lines.slice(0, 400), /CP2K\|\s+version string:\s+CP2K version\s+(\S+)/) ?? '?';
  const program = `CP2K ${version}`;
  const runType = outputValue(lines.slice(0, 400), /GLOBAL\|\s+Run type\s+(\S+)/);
  if (runType && !/^(ENERGY|ENERGY_FORCE)$/.test(runType)) {
    return unusable(file, 'unsuitable', `CP2K run type ${runType}: collect reads single-point (ENERGY) runs, one structure and one tensor per output`);
  }
  if (/SCF run NOT converged/.test(text)) return unusable(file, 'unconverged', 'CP2K: the SCF did not converge ("SCF run NOT converged")');
  const au = printedTensor(lines, 'a.u.', file);
  const ended = /PROGRAM ENDED AT/.test(text);
  if (!au) {
    if (!ended) return unusable(file, 'unfinished', 'CP2K: the run stopped before printing the polarizability tensor (cut short or still running)');
    return unusable(file, 'unsuitable', 'CP2K: no polarizability tensor in this output; run &PROPERTIES &LINRES &POLAR');
  }
  if (!ended) return unusable(file, 'unfinished', 'CP2K: the run did not finish ("PROGRAM ENDED AT" missing)');
  if (!/SCF run converged in/.test(text)) return unusable(file, 'unconverged', 'CP2K: no converged SCF in this output');
  const operators = lines.map((l) => /POLAR\|\s+Response to the perturbation operator\s+(.+?)\s*$/.exec(l)?.[1]).filter((x): x is string => x !== undefined);
  if (operators.length === 0) return unusable(file, 'unsuitable', 'CP2K: the output does not say which dipole operator the response used');
  const berry = operators.every((o) => /^Berry phase_[xyz]$/i.test(o));
  const position = operators.every((o) => /^R_[xyz]$/i.test(o));
  const notPeriodic = () =>
    unusable(
      file,
      'unsuitable',
      `CP2K: the response used the operator "${operators[0]}", not the Berry-phase periodic dipole; that is not the periodic (conducting-boundary) polarisability — run again with PERIODIC_DIPOLE_OPERATOR T (or, for an isolated molecule, set PERIODIC NONE in &CELL and in &POISSON)`,
    );
  if (!berry && !position) return notPeriodic();
  const solved = lines.filter((l) => /The linear solver converged in/.test(l)).length;
  if (solved < operators.length) return unusable(file, 'unconverged', `CP2K: the linear-response solver converged for ${solved} of ${operators.length} field directions`);

  // the tensor: a.u. (bohr³) → Å³, checked against the ang^3 print
  const T = au.T.map((v) => v * BOHR3_A3);
  const ang = printedTensor(lines, 'ang^3', file);
  if (ang) {
    const big = Math.max(...ang.T.map(Math.abs));
    ang.T.forEach((v, i) => {
      if (Math.abs(v - T[i]) > 1e-6 * big + 1e-9) {
        throw new InputError(`the tensor in a.u. (${au.T[i]} bohr³ = ${T[i]} Å³) disagrees with the one in ang^3 (${v})`, { file, line: ang.line }, 'the output is inconsistent; report this file');
      }
    });
  }
  const { tensor: sym, asymmetry } = symmetricPart(T);
  if (asymmetry > MAX_ASYMMETRY) {
    return unusable(file, 'unconverged', `CP2K: the polarizability tensor is far from symmetric (${(asymmetry * 100).toPrecision(2)} % of its largest component): an unconverged response?`);
  }

  // the structure: the input beside the output; atoms from the output when it prints them
  const inputName = outputValue(lines.slice(0, 400), /CP2K\|\s+Input file name\s+(\S+)/);
  if (!inputName) throw new InputError('the output does not name its input file', { file }, 'give the complete output of the run');
  const candidates = [path.resolve(path.dirname(file), inputName), path.resolve(path.dirname(file), path.basename(inputName))];
  const inputFile = candidates.find((c) => files.read(c, { file }) !== null) ?? candidates[0];
  const root = parseCp2kInput(inputFile, { file }, files);
  const forceEval = section(root, 'FORCE_EVAL');
  const subsys = section(forceEval, 'SUBSYS');
  if (!forceEval || !subsys) throw new InputError('the input has no &FORCE_EVAL &SUBSYS', { file: inputFile }, 'is this the input of the run?');
  const periodicKw = keyword(section(forceEval, 'PROPERTIES', 'LINRES', 'POLAR'), 'PERIODIC_DIPOLE_OPERATOR');
  const isolated = position && isolatedInput(forceEval, subsys);
  if (position && !isolated) return notPeriodic();
  if (cp2kLogical(periodicKw?.value, true) !== berry) {
    throw new InputError(`the output used the ${berry ? 'Berry-phase' : 'position'} operator but its input ${berry ? 'does not set' : 'sets'} PERIODIC_DIPOLE_OPERATOR T`, { file: inputFile }, 'is this the input of the run?');
  }
  const cell = cellFromInput(subsys, inputFile, isolated);
  const outputCoordName = outputValue(lines.slice(0, 400), /GLOBAL\|\s+Coordinate file name\s+(\S+)/);
  const atoms = atomsFromInput(subsys, cell, inputFile, outputCoordName === '__STD_INPUT__' ? null : outputCoordName, files);
  const species = atoms.labels.map((l) => elementOfKind(l, subsys, atoms.where));
  let positions = atoms.positions;
  const printed = printedAtoms(lines, file);
  if (printed) {
    if (printed.elements.length !== species.length || printed.elements.some((e, i) => e !== species[i])) {
      throw new InputError(`the output prints ${printed.elements.length} atoms that are not the ${species.length} of its input`, { file, line: printed.line }, 'give the input that made this output');
    }
    positions = printed.positions;
  }
  const count = outputValue(lines.slice(0, 2000), /^\s*-\s+Atoms:\s+(\d+)/);
  if (count !== null && Number(count) !== species.length) {
    throw new InputError(`the output has ${count} atoms, its input (${atoms.source}) ${species.length}`, { file }, 'give the input (and coordinate file) that made this output');
  }
  // an isolated molecule keeps no cell: its box only bounds the grid (targets.ts isIsolated)
  const frame = makeFrame(species, positions, isolated ? null : cell);
  const volume = cellVolume(cell, { file: inputFile });
  const printedVolume = outputValue(lines.slice(0, 2000), /CELL\|\s+Volume \[angstrom\^3\]:\s+(\S+)/);
  if (printedVolume !== null && Math.abs(Number(printedVolume) - volume) > 1e-5 * volume) {
    throw new InputError(`the output's cell has ${printedVolume} Å³, the cell of its input ${volume.toPrecision(9)} Å³`, { file }, 'give the input that made this output');
  }
  return {
    ok: true,
    run: {
      file,
      files: [file, inputFile, ...(atoms.where.file && atoms.where.file !== inputFile ? [atoms.where.file] : [])],
      program,
      frame,
      tensor: sym,
      kind: isolated ? 'alpha-mol' : 'alpha-c',
      printedAs: `a.u. (bohr³) on line ${au.line}, converted to Å³; symmetric part${isolated ? '; an isolated molecule (position operator, non-periodic cell and Poisson solver)' : ''}`,
      settings: settingsFromInput(forceEval, subsys),
    },
  };
}
