// Quantum ESPRESSO: the optical dielectric tensor ε∞ of a ph.x run ("Dielectric constant in cartesian axis",
// electric-field perturbation at q = 0, clamped ions) with the structure and settings of the pw.x run it
// continues. The two outputs are paired by the save folder both name ("Writing output data file DIR" in pw.x,
// "Reading xml data from directory: DIR" in ph.x, relative to the folder of each output), and the pair is
// checked: the ph.x output reprints the structure, which must be the pw.x one.
//
// Unit trap: pw.x prints the cell ("crystal axes") and the positions ("positions (alat units)") in units of the
// lattice parameter alat, itself in Bohr ("celldm(1)", "lattice parameter (alat) = … a.u."), whether the input
// gave ibrav/celldm or CELL_PARAMETERS in Å. Cell and positions are therefore alat × BOHR_A Å per printed
// unit; the printed "unit-cell volume" in (a.u.)^3 is checked against the cell built that way.
//
// Molecules: ph.x has no isolated boundary for the electric field. For a molecule in a box (assume_isolated, or
// vacuum around it) its ε∞ is the periodic box's, and the "Polarizability (a.u.)^3 / (A^3)" block it prints for
// Γ-only runs is that box's Clausius–Mossotti polarisability (3Ω/4π)(ε−1)(ε+2)⁻¹ (checked against the committed
// outputs in test/io/dft/quantum-espresso-molecule.test.ts), not the molecule's polarisability in vacuum. Such a
// run is kept as a periodic frame with ε∞, with a note saying so and what to do (boxedMoleculeNote).
import path from 'node:path';
import { InputError } from '../../core/errors.ts';
import { makeFrame, type Frame, type Mat3 } from '../../core/geometry/frame.ts';
import { neighbourList } from '../../core/geometry/neighbours.ts';
import { tensorKey } from '../tensor-keys.ts';
import { cellVolume } from '../../core/geometry/cell.ts';
import { BOHR_A } from '../../core/dielectric/units.ts';
import { elementFromLabel } from '../cif.ts';
import { MAX_ASYMMETRY, numbersIn, splitLines, symmetricPart, unusable, diskFiles, type RunFiles, type RunReading, type RunSetting } from './dft-run.ts';

export type QeProgram = 'pw.x' | 'ph.x';

/** Which Quantum ESPRESSO program wrote this output (from its first lines), or null. */
export function qeProgramOf(head: string): QeProgram | null {
  const m = /^\s*Program (PWSCF|PHONON) v\.(\S+) starts/m.exec(head.slice(0, 4096));
  if (!m) return null;
  return m[1] === 'PWSCF' ? 'pw.x' : 'ph.x';
}

function versionOf(lines: string[]): string {
  for (const l of lines.slice(0, 20)) {
    const m = /Program (?:PWSCF|PHONON) v\.(\S+) starts/.exec(l);
    if (m) return m[1];
  }
  return '?';
}

/** The structure printed by pw.x or ph.x, still in alat units. */
interface AlatStructure {
  alatBohr: number;
  /** Lattice vectors as rows, in units of alat. */
  axes: number[];
  labels: string[];
  /** Cartesian positions in units of alat. */
  tau: number[];
  /** "unit-cell volume" as printed, (a.u.)^3. */
  volumeBohr3: number | null;
  line: number;
}

function parseStructure(lines: string[], file: string): AlatStructure {
  let alatBohr: number | null = null;
  let celldm1: number | null = null;
  let volumeBohr3: number | null = null;
  let nat: number | null = null;
  let axes: number[] | null = null;
  let tau: number[] | null = null;
  const labels: string[] = [];
  let line = 0;
  for (let i = 0; i < lines.length; i++) {
    const l = lines[i];
    let m: RegExpExecArray | null;
    if (alatBohr === null && (m = /lattice parameter \(alat\)\s*=\s*(\S+)\s*a\.u\./.exec(l))) alatBohr = Number(m[1]);
    else if (celldm1 === null && (m = /celldm\(1\)=\s*(\S+)/.exec(l))) celldm1 = Number(m[1]);
    else if (volumeBohr3 === null && (m = /unit-cell volume\s*=\s*(\S+)\s*\(a\.u\.\)\^3/.exec(l))) volumeBohr3 = Number(m[1]);
    else if (nat === null && (m = /number of atoms\/cell\s*=\s*(\d+)/.exec(l))) nat = Number(m[1]);
    else if (axes === null && /crystal axes: \(cart\. coord\. in units of alat\)/.test(l)) {
      axes = [];
      for (let k = 1; k <= 3; k++) {
        const a = /a\(\d\)\s*=\s*\(([^)]*)\)/.exec(lines[i + k] ?? '');
        const v = a ? numbersIn(a[1]) : null;
        if (!v || v.length !== 3) throw new InputError(`crystal axis ${k} cannot be read`, { file, line: i + k + 1 }, 'the output is damaged; run the calculation again');
        axes.push(...v);
      }
      line = i + 1;
    } else if (tau === null && /site n\..*positions \(alat units\)/.test(l)) {
      if (nat === null) throw new InputError('atom positions come before the number of atoms', { file, line: i + 1 }, 'the output is damaged');
      tau = [];
      for (let k = 1; k <= nat; k++) {
        const a = /^\s*\d+\s+(\S+)\s+(?:\S+\s+)?tau\(\s*\d+\)\s*=\s*\(([^)]*)\)/.exec(lines[i + k] ?? '');
        const v = a ? numbersIn(a[2]) : null;
        if (!a || !v || v.length !== 3) throw new InputError(`atom ${k} of ${nat} cannot be read`, { file, line: i + k + 1 }, 'the output is damaged or cut short');
        labels.push(a[1]);
        tau.push(...v);
      }
    }
    if (axes && tau) break;
  }
  const alat = celldm1 ?? alatBohr;
  if (alat === null || !(alat > 0) || !axes || !tau) {
    throw new InputError('no crystal structure found (lattice parameter, crystal axes, atom positions)', { file }, 'give the complete output of the run');
  }
  return { alatBohr: alat, axes, labels, tau, volumeBohr3, line };
}

/** Species label → element from the pw.x table "atomic species valence mass pseudopotential" ("Si( 1.00)"). */
function speciesElements(lines: string[]): Map<string, string> {
  const map = new Map<string, string>();
  const start = lines.findIndex((l) => /atomic species\s+valence\s+mass\s+pseudopotential/.test(l));
  if (start < 0) return map;
  for (let k = start + 1; k < lines.length; k++) {
    const m = /^\s*(\S+)\s+\S+\s+\S+\s+([A-Za-z]{1,2})\s*\(/.exec(lines[k]);
    if (!m) break;
    map.set(m[1], m[2]);
  }
  return map;
}

function settingsOf(lines: string[], text: string, file: string, files: RunFiles): RunSetting[] {
  const settings: RunSetting[] = [];
  const xc = /Exchange-correlation\s*=\s*(.+)$/m.exec(text);
  if (xc) settings.push({ name: 'functional', value: xc[1].trim().replace(/\s+/g, ' ') });
  const ecut = /kinetic-energy cutoff\s*=\s*(\S+)\s*Ry/.exec(text);
  const ecutrho = /charge density cutoff\s*=\s*(\S+)\s*Ry/.exec(text);
  if (ecut) settings.push({ name: 'cutoff', value: `${Number(ecut[1])} Ry${ecutrho ? ` (density ${Number(ecutrho[1])} Ry)` : ''}` });
  const pps: string[] = [];
  for (let i = 0; i < lines.length; i++) {
    if (/PseudoPot\. #\s*\d+ for \S+ read from file/.test(lines[i])) {
      const md5 = /MD5 check sum:\s*(\S+)/.exec(lines[i + 2] ?? '');
      pps.push(`${path.basename((lines[i + 1] ?? '').trim())}${md5 ? ` (MD5 ${md5[1]})` : ''}`);
    }
  }
  if (pps.length) settings.push({ name: 'pseudopotentials', value: pps.join(', ') });
  const mesh = kMeshFromInput(lines, file, files);
  if (mesh) settings.push({ name: 'k-points', value: mesh });
  return settings;
}

/**
 * pw.x prints the number of irreducible k-points, which depends on the symmetry of each structure and so
 * cannot be compared between runs. The mesh is in the input: when the output names its input file
 * ("Reading input from FILE") and that file sits beside the output, its K_POINTS card is read.
 */
function kMeshFromInput(lines: string[], file: string, files: RunFiles): string | null {
  const named = lines.slice(0, 40).map((l) => /Reading input from (\S+)/.exec(l)?.[1]).find((x) => x !== undefined);
  if (!named || named === 'standard') return null;
  const input = path.resolve(path.dirname(file), path.basename(named));
  const text = files.read(input, { file });
  return text === null || text.length > 1 << 20 ? null : kPointsCard(text);
}

function kPointsCard(text: string): string | null {
  const lines = splitLines(text);
  const k = lines.findIndex((l) => /^\s*K_POINTS\b/i.test(l));
  if (k < 0) return null;
  const kind = (/K_POINTS\s*[({]?\s*(\w+)/i.exec(lines[k])?.[1] ?? 'tpiba').toLowerCase();
  if (kind === 'gamma') return 'Γ only';
  if (kind === 'automatic') {
    const v = numbersIn(lines[k + 1] ?? '');
    return v && v.length === 6 ? `mesh ${v.slice(0, 3).join('×')}, offset ${v.slice(3).join(' ')}` : null;
  }
  return `${(lines[k + 1] ?? '').trim()} listed points (${kind})`;
}

function finished(text: string): boolean {
  return /^\s*JOB DONE\.\s*$/m.test(text);
}

function cellAndPositions(s: AlatStructure): { cell: Mat3; positions: Float64Array } {
  const f = s.alatBohr * BOHR_A;
  return { cell: Float64Array.from(s.axes, (v) => v * f), positions: Float64Array.from(s.tau, (v) => v * f) };
}

/** The save folder a pw.x output wrote or a ph.x output read, resolved against the output's folder. */
export function qeSaveFolder(lines: string[], file: string, program: QeProgram): string | null {
  for (let i = 0; i < lines.length; i++) {
    const l = lines[i];
    let dir: string | undefined;
    if (program === 'pw.x') dir = /Writing output data file\s+(\S+)/.exec(l)?.[1];
    else if (/Reading xml data from directory:/.test(l)) {
      dir = /directory:\s*(\S+)/.exec(l)?.[1] ?? lines.slice(i + 1, i + 4).map((x) => x.trim()).find((x) => x !== '');
    }
    if (dir) return path.resolve(path.dirname(file), dir);
  }
  return null;
}

export interface QeOutput {
  file: string;
  program: QeProgram;
  lines: string[];
  text: string;
}

/** Checks of a pw.x output on its own: finished and converged. null when fine. */
function pwProblem(pw: QeOutput): RunReading | null {
  if (/convergence NOT achieved/.test(pw.text)) {
    const n = /convergence NOT achieved after\s+(\d+)/.exec(pw.text)?.[1];
    return unusable(pw.file, 'unconverged', `pw.x: the SCF did not converge${n ? ` in ${n} iterations` : ''}`);
  }
  if (!/convergence has been achieved/.test(pw.text)) {
    return unusable(pw.file, finished(pw.text) ? 'unconverged' : 'unfinished', 'pw.x: no converged SCF in this output (cut short?)');
  }
  if (!finished(pw.text)) return unusable(pw.file, 'unfinished', 'pw.x: the run did not finish ("JOB DONE." missing)');
  if (/Begin final coordinates/.test(pw.text)) {
    return unusable(pw.file, 'unsuitable', 'pw.x: a structural relaxation; run an scf calculation at the final structure before ph.x');
  }
  return null;
}

/** The dielectric tensor printed by ph.x (the last one in the file), with its line. */
function dielectricTensor(ph: QeOutput): { tensor: Mat3; line: number } | null {
  let found: { tensor: Mat3; line: number } | null = null;
  for (let i = 0; i < ph.lines.length; i++) {
    if (!/^\s*Dielectric constant in cartesian axis\s*$/.test(ph.lines[i])) continue;
    const rows: number[] = [];
    let k = i + 1;
    while (k < ph.lines.length && k <= i + 3 && ph.lines[k].trim() === '') k++;
    for (let r = 0; r < 3; r++, k++) {
      const m = /^\s*\(([^)]*)\)\s*$/.exec(ph.lines[k] ?? '');
      const v = m ? numbersIn(m[1]) : null;
      if (!v || v.length !== 3) throw new InputError(`row ${r + 1} of the dielectric tensor cannot be read`, { file: ph.file, line: k + 1 }, 'the output is damaged or cut short');
      rows.push(...v);
    }
    found = { tensor: Float64Array.from(rows), line: i + 1 };
  }
  return found;
}

/**
 * Vacuum (Å) between the periodic copies of a cell's atoms from which the cell is taken to hold a molecule or
 * cluster in a box: liquids and crystals have neighbours across the cell boundary within 2–4 Å, while boxes
 * for molecules leave 5–10 Å or more (common practice, no source).
 */
export const BOX_VACUUM_A = 5;

/**
 * What to tell the user about a ph.x run of a molecule or cluster in a periodic box (pw.x ran with
 * assume_isolated, or no atom lies within BOX_VACUUM_A of another periodic copy); null for a condensed phase.
 */
export function boxedMoleculeNote(frame: Frame, pwLines: string[]): string | null {
  const flagged = pwLines.findIndex((l) => /Assuming isolated system/.test(l));
  const list = neighbourList(frame, BOX_VACUUM_A);
  const apart = !list.shifts.some((s) => s !== 0);
  if (flagged < 0 && !apart) return null;
  const why = flagged >= 0 ? `pw.x says "${pwLines[flagged].trim()}" (line ${flagged + 1}), which treats the ground state only` : `no atom lies within ${BOX_VACUUM_A} Å of a periodic copy`;
  return (
    `a molecule or cluster in a periodic box (${why}). Quantum ESPRESSO's ε∞ here is the dielectric tensor of the periodic box, and the "Polarizability" ph.x prints is that box's ` +
    `Clausius–Mossotti polarisability (3Ω/4π)(ε−1)(ε+2)⁻¹, not the molecule's polarisability in vacuum. Kept as a periodic frame with ${tensorKey('eps')} (train it as ε: the box is a crystal of molecules). ` +
    `For the molecule in vacuum, compute it with non-periodic boundaries (CP2K with PERIODIC NONE in &CELL and &POISSON, which collect reads as ${tensorKey('alpha-mol')}), ` +
    'or check that this frame\'s α_CM no longer changes as the box grows.'
  );
}

/** ε∞ with its structure: one ph.x output and the pw.x output it continues (null when none was given). */
export function readQePair(ph: QeOutput, pw: QeOutput | null, files: RunFiles): RunReading {
  const program = `Quantum ESPRESSO ${versionOf(ph.lines)} (pw.x, ph.x)`;
  if (/No convergence has been achieved/.test(ph.text)) return unusable(ph.file, 'unconverged', 'ph.x: the linear-response (electric field) iterations did not converge');
  const eps = dielectricTensor(ph);
  if (!eps) {
    if (!finished(ph.text)) return unusable(ph.file, 'unfinished', 'ph.x: the run did not finish and printed no dielectric tensor');
    return unusable(ph.file, 'unsuitable', 'ph.x: no "Dielectric constant in cartesian axis" in this output; run ph.x with epsil = .true. at q = 0');
  }
  if (!finished(ph.text)) return unusable(ph.file, 'unfinished', 'ph.x: the run did not finish ("JOB DONE." missing)');
  const { tensor, asymmetry } = symmetricPart(eps.tensor);
  if (asymmetry > MAX_ASYMMETRY) {
    return unusable(ph.file, 'unconverged', `ph.x: the dielectric tensor is far from symmetric (${(asymmetry * 100).toPrecision(2)} % of its largest component): an unconverged response?`);
  }
  if (!pw) {
    return unusable(ph.file, 'unsuitable', 'ph.x: the pw.x output of this run was not given (it has the structure and settings); add it to the inputs');
  }
  const bad = pwProblem(pw);
  if (bad) return bad;
  const s = parseStructure(pw.lines, pw.file);
  const phs = parseStructure(ph.lines, ph.file);
  const same =
    s.tau.length === phs.tau.length &&
    Math.abs(s.alatBohr - phs.alatBohr) <= 1e-4 * s.alatBohr &&
    s.axes.every((v, i) => Math.abs(v - phs.axes[i]) <= 1e-4) &&
    s.tau.every((v, i) => Math.abs(v - phs.tau[i]) <= 1e-4);
  if (!same) {
    return unusable(ph.file, 'unsuitable', `ph.x: its structure is not the one in ${path.basename(pw.file)} (was pw.x run again after ph.x?)`);
  }
  const elements = speciesElements(pw.lines);
  const species = s.labels.map((label, k) => {
    const el = elements.get(label) ?? elementFromLabel(label);
    if (!el) throw new InputError(`atom ${k + 1}: cannot tell the element of species "${label}"`, { file: pw.file, line: s.line }, 'name species by element symbol');
    return el;
  });
  const { cell, positions } = cellAndPositions(s);
  const volumeA3 = cellVolume(cell, { file: pw.file, line: s.line });
  if (s.volumeBohr3 !== null) {
    const printedA3 = s.volumeBohr3 * BOHR_A ** 3;
    if (Math.abs(volumeA3 - printedA3) > 1e-4 * printedA3 + 1e-3) {
      throw new InputError(
        `the cell built from alat and the crystal axes has ${volumeA3.toPrecision(8)} Å³, but the output prints ${s.volumeBohr3} (a.u.)^3 = ${printedA3.toPrecision(8)} Å³`,
        { file: pw.file, line: s.line },
        'the output is inconsistent; report this file',
      );
    }
  }
  const frame = makeFrame(species, positions, cell);
  const note = boxedMoleculeNote(frame, pw.lines);
  return {
    ok: true,
    run: {
      file: ph.file,
      files: [ph.file, pw.file],
      program,
      frame,
      tensor,
      kind: 'eps',
      printedAs: `ε∞, dimensionless (line ${eps.line}); symmetric part`,
      settings: settingsOf(pw.lines, pw.text, pw.file, files),
      ...(note ? { note } : {}),
    },
  };
}

/**
 * Every ph.x output paired with its pw.x output; pw.x outputs no ph.x run continues are reported (unusable
 * on their own: no tensor), unless they failed, which is reported as such. A damaged file is handed to
 * `onError` and the other runs go on.
 */
export function readQeRuns(outputs: QeOutput[], onError: (file: string, error: InputError) => void, files: RunFiles = diskFiles): RunReading[] {
  const pws = outputs.filter((o) => o.program === 'pw.x');
  const phs = outputs.filter((o) => o.program === 'ph.x');
  const pwByFolder = new Map<string, QeOutput[]>();
  for (const pw of pws) {
    const dir = qeSaveFolder(pw.lines, pw.file, 'pw.x') ?? `(none: ${pw.file})`;
    pwByFolder.set(dir, [...(pwByFolder.get(dir) ?? []), pw]);
  }
  const used = new Set<QeOutput>();
  const out: RunReading[] = [];
  for (const ph of phs) {
    const dir = qeSaveFolder(ph.lines, ph.file, 'ph.x');
    const candidates = dir ? (pwByFolder.get(dir) ?? []) : [];
    if (candidates.length > 1) {
      out.push(unusable(ph.file, 'unsuitable', `ph.x: ${candidates.length} pw.x outputs wrote the save folder it read (${candidates.map((c) => path.basename(c.file)).join(', ')}); give only the one it continues`));
      for (const c of candidates) used.add(c);
      continue;
    }
    const pw = candidates[0] ?? null;
    if (pw) used.add(pw);
    guarded(ph.file, onError, () => out.push(readQePair(ph, pw, files)));
  }
  for (const pw of pws) {
    if (used.has(pw)) continue;
    out.push(pwProblem(pw) ?? unusable(pw.file, 'unsuitable', 'pw.x: no ph.x output given for this run, so there is no dielectric tensor; add the ph.x output (epsil = .true.)'));
  }
  return out;
}

function guarded(file: string, onError: (file: string, error: InputError) => void, work: () => void): void {
  try {
    work();
  } catch (e) {
    if (e instanceof InputError) onError(file, e);
    else throw e;
  }
}
