// Reading per-frame predictions back as time series for analysis: a prediction CSV (from `predict`, or a
// tensor table from `convert`), or an extended XYZ file with pred_* info keys and per-atom local tensors.
// Only the numbers are kept (9 per tensor per frame, 3 per dipole), never the frames, so long files fit.
import { readFile } from 'node:fs/promises';
import { cellVolume } from '../core/geometry/cell.ts';
import { InputError } from '../core/errors.ts';
import type { Frame } from '../core/geometry/frame.ts';
import { parseCsv, type CsvTable } from './csv.ts';
import { readExtxyz } from './extxyz.ts';
import { fileKind } from './read-structures.ts';
import { alphaColumn, COMPONENT_SLOTS, epsColumn, PRED_ARRAYS, PRED_KEYS, PREDICTION_COLUMNS, TENSOR_COMPONENTS, VALUE_COLUMNS, type TensorComponent } from './prediction/prediction-format.ts';

export interface SpeciesSeries {
  species: string;
  /** Atoms of this species per frame (from the first frame; checked constant). */
  atoms: number;
  /** Sum over its atoms of the local tensors, 9 per frame. */
  sum: number[];
}

export interface FarAtom {
  frame: number;
  atom: number;
  species: string;
  distance: number;
}

export interface TrajectorySeries {
  file: string;
  kind: 'csv' | 'extxyz';
  frames: number[];
  /** Cell volume per frame (Å³), when known. */
  volume: number[] | null;
  eps: Float64Array | null;
  alphaCM: Float64Array | null;
  alphaC: Float64Array | null;
  /**
   * Frames without a periodic cell (molecules, clusters): their polarisability in vacuum (Å³), 9 per frame — not a
   * cell's α_CM, though it is learnt as one; such a file has no ε, α_CM or α_c series.
   */
  alphaMol: Float64Array | null;
  /** Cell dipole per frame (3 numbers), when the file has one. */
  dipole: Float64Array | null;
  dipoleSource: string | null;
  outside: boolean[] | null;
  atomsOutside: number[] | null;
  maxDistance: number[] | null;
  threshold: number | null;
  /** Per frame: the graded out-of-domain score, and its reasons in words ('' when none), when the file has them. */
  score: number[] | null;
  reasons: string[] | null;
  /** Per-species sums of per-atom local tensors (extended XYZ with local_* arrays). */
  species: SpeciesSeries[] | null;
  /** What the local tensors are ("local_alpha_cm_A3": α_CM contributions in Å³; "local_eps_minus_1": to ε − 1). */
  localKind: string | null;
  /** The atoms farthest from the training data (largest per-atom distance), at most 10. */
  farthest: FarAtom[];
}

function tensorColumns(t: CsvTable, names: (c: TensorComponent) => string): Float64Array | null {
  const cols = TENSOR_COMPONENTS.map(names);
  if (!cols.every((c) => t.columns.includes(c))) return null;
  const n = t.records.length;
  const out = new Float64Array(9 * n);
  TENSOR_COMPONENTS.forEach((c, k) => {
    const v = t.numbers(cols[k]);
    const [a, b] = COMPONENT_SLOTS[c];
    for (let f = 0; f < n; f++) {
      out[9 * f + a] = v[f];
      out[9 * f + b] = v[f];
    }
  });
  return out;
}

function fromCsv(t: CsvTable): TrajectorySeries {
  const has = (c: string) => t.columns.includes(c);
  if (!has('frame')) throw new InputError("no 'frame' column", { file: t.file }, 'analyse reads the CSV that `predict` writes');
  // frames without a periodic cell (isolated molecules) have empty ε fields (ISOLATED_ROWS_NOTE): a table of them
  // only is analysed on its α series; a table mixing them with periodic frames has no one ε series
  const isolatedRows = has('volume_A3') ? t.text('volume_A3').flatMap((v, f) => (v === '' ? [f] : [])) : [];
  if (isolatedRows.length && isolatedRows.length < t.records.length) {
    throw new InputError(`${isolatedRows.length} of ${t.records.length} rows are frames without a periodic cell (empty volume and ε), the others periodic (first isolated row on line ${t.lines[isolatedRows[0]]})`, { file: t.file }, 'analyse a trajectory of one kind: isolated molecules (their α) or periodic frames (ε)');
  }
  const eps = isolatedRows.length ? null : tensorColumns(t, epsColumn);
  // an isolated row's alpha_cm_* columns hold the molecule's polarisability in vacuum (ISOLATED_ROWS_NOTE)
  const alphaColumns = tensorColumns(t, (c) => alphaColumn('alpha-cm', c));
  const alphaCM = isolatedRows.length ? null : alphaColumns;
  const alphaMol = isolatedRows.length ? alphaColumns : null;
  const alphaC = tensorColumns(t, (c) => alphaColumn('alpha-c', c));
  let dipole: Float64Array | null = null;
  let dipoleSource: string | null = null;
  // a vector model's predictions (the columns `predict` writes), else a dipole table of the user's
  for (const names of [VALUE_COLUMNS.vector, ['dipole_x', 'dipole_y', 'dipole_z']]) {
    if (names.every(has)) {
      const xs = names.map((c) => t.numbers(c));
      dipole = new Float64Array(3 * t.records.length);
      for (let f = 0; f < t.records.length; f++) for (let a = 0; a < 3; a++) dipole[3 * f + a] = xs[a][f];
      dipoleSource = `columns ${names.join(', ')}`;
      break;
    }
  }
  if (!eps && !alphaCM && !alphaMol && !alphaC && !dipole) {
    throw new InputError(`no tensor columns (${epsColumn('xx')} …, ${alphaColumn('alpha-cm', 'xx')} …) and no dipole columns`, { file: t.file }, 'analyse reads the CSV that `predict` writes');
  }
  const col = (name: string) => {
    if (!PREDICTION_COLUMNS.some((c) => c.name === name)) throw new RangeError(`trajectory-series: '${name}' is not a prediction column`);
    return has(name) ? t.numbers(name) : null;
  };
  const threshold = col('threshold');
  const outsideCol = col('outside');
  const atomsOutsideCol = col('atoms_outside');
  const maxDistanceCol = col('max_distance');
  const scoreCol = col('ood_score');
  const reasonOk = has('ood_reason') && PREDICTION_COLUMNS.some((c) => c.name === 'ood_reason');
  return {
    file: t.file,
    kind: 'csv',
    frames: Array.from(t.numbers('frame')),
    volume: has('volume_A3') && !isolatedRows.length ? Array.from(t.numbers('volume_A3')) : null,
    eps,
    alphaCM,
    alphaC,
    alphaMol,
    dipole,
    dipoleSource,
    outside: outsideCol ? Array.from(outsideCol, (x) => x !== 0) : null,
    atomsOutside: atomsOutsideCol ? Array.from(atomsOutsideCol) : null,
    maxDistance: maxDistanceCol ? Array.from(maxDistanceCol) : null,
    threshold: threshold && threshold.length > 0 ? threshold[0] : null,
    score: scoreCol ? Array.from(scoreCol) : null,
    reasons: reasonOk ? t.text('ood_reason') : null,
    species: null,
    localKind: null,
    farthest: [],
  };
}

function infoTensor(frame: Frame, key: string, index: number, file: string): number[] | null {
  const v = frame.info[key];
  if (v === undefined) return null;
  if (!Array.isArray(v) || (v.length !== 9 && v.length !== 3)) throw new InputError(`info key ${key} is not a 3×3 tensor or a vector`, { file, frame: index }, 'analyse reads what `predict` writes');
  return v as number[];
}

async function fromExtxyz(file: string, signal?: AbortSignal): Promise<TrajectorySeries> {
  const frames: number[] = [];
  const volume: number[] = [];
  const eps: number[] = [];
  const alphaCM: number[] = [];
  const alphaC: number[] = [];
  const alphaMol: number[] = [];
  let firstIsolated: number | null = null;
  let firstPeriodic: number | null = null;
  const dipole: number[] = [];
  let dipoleKey: string | null = null;
  const outside: boolean[] = [];
  const maxDistance: number[] = [];
  const score: number[] = [];
  const reasons: string[] = [];
  let species: SpeciesSeries[] | null = null;
  let speciesOf: number[] = [];
  let localKind: string | null = null;
  let farthest: FarAtom[] = [];
  let k = 0;
  for await (const fr of readExtxyz(file, { signal })) {
    const index = typeof fr.info[PRED_KEYS.frame] === 'number' ? (fr.info[PRED_KEYS.frame] as number) : (fr.source?.index ?? k);
    const e = infoTensor(fr, PRED_KEYS.eps, index, file) ?? infoTensor(fr, 'eps_inf', index, file);
    const acm = infoTensor(fr, PRED_KEYS.alphaCM, index, file);
    const ac = infoTensor(fr, PRED_KEYS.alphaC, index, file);
    // a frame without a cell carries its polarisability in vacuum (pred_alpha_mol_A3) and no ε: one kind per file
    const amol = infoTensor(fr, PRED_KEYS.alphaMol, index, file);
    if (amol) firstIsolated ??= index;
    else if (e || acm) firstPeriodic ??= index;
    if (firstIsolated !== null && firstPeriodic !== null) {
      throw new InputError(`frame ${firstIsolated} has no periodic cell (${PRED_KEYS.alphaMol}, no ε) but frame ${firstPeriodic} is periodic`, { file, frame: index }, 'analyse a trajectory of one kind: isolated molecules (their α) or periodic frames (ε)');
    }
    if (amol) alphaMol.push(...amol);
    if (k === 0) dipoleKey = ['dipole'].find((d) => Array.isArray(fr.info[d]) && (fr.info[d] as number[]).length === 3) ?? null;
    const need = (ok: boolean, what: string) => {
      if (!ok) throw new InputError(`frame has no ${what} but the first frame has`, { file, frame: index }, 'every frame must carry the same keys');
    };
    if (k === 0 || eps.length > 0) {
      if (e) eps.push(...e);
      else need(k === 0, PRED_KEYS.eps);
    }
    if (k === 0 || alphaCM.length > 0) {
      if (acm) alphaCM.push(...acm);
      else need(k === 0, PRED_KEYS.alphaCM);
    }
    if (k === 0 || alphaC.length > 0) {
      if (ac) alphaC.push(...ac);
      else need(k === 0, PRED_KEYS.alphaC);
    }
    if (dipoleKey) {
      const d = fr.info[dipoleKey];
      need(Array.isArray(d) && d.length === 3, dipoleKey);
      dipole.push(...(d as number[]));
    }
    frames.push(index);
    if (fr.cell) volume.push(Math.abs(cellVolume(fr.cell)));
    const out = fr.info[PRED_KEYS.outside];
    if (typeof out === 'boolean') outside.push(out);
    const md = fr.info[PRED_KEYS.maxDistance];
    if (typeof md === 'number') maxDistance.push(md);
    const sc = fr.info[PRED_KEYS.score];
    if (typeof sc === 'number') {
      score.push(sc);
      const r = fr.info[PRED_KEYS.reason];
      reasons.push(typeof r === 'string' ? r : '');
    }
    // per-species contributions from the per-atom local tensors
    const localName: string | null = k === 0 ? (([PRED_ARRAYS.localCM, PRED_ARRAYS.localDirect] as string[]).find((n) => fr.arrays[n]?.width === 9) ?? null) : localKind;
    if (k === 0 && localName) {
      localKind = localName;
      const names = [...new Set(fr.species)].sort();
      species = names.map((s) => ({ species: s, atoms: fr.species.filter((x) => x === s).length, sum: [] }));
      speciesOf = fr.species.map((s) => names.indexOf(s));
    }
    if (species && localName) {
      const arr = fr.arrays[localName];
      if (!arr || arr.width !== 9 || fr.species.length !== speciesOf.length || fr.species.some((s, i) => species![speciesOf[i]].species !== s)) {
        throw new InputError('the atoms (count, order or species) or the local tensors differ from the first frame', { file, frame: index }, 'per-species contributions need the same atoms in every frame');
      }
      const sums = species.map(() => new Float64Array(9));
      const data = arr.data as Float64Array;
      for (let i = 0; i < speciesOf.length; i++) for (let c = 0; c < 9; c++) sums[speciesOf[i]][c] += data[9 * i + c];
      species.forEach((s, j) => s.sum.push(...sums[j]));
    }
    const dist = fr.arrays[PRED_ARRAYS.distance];
    if (dist && dist.width === 1) {
      const d = dist.data as Float64Array;
      for (let i = 0; i < d.length; i++) {
        if (farthest.length < 10 || d[i] > farthest[farthest.length - 1].distance) {
          farthest.push({ frame: index, atom: i, species: fr.species[i], distance: d[i] });
          farthest.sort((a, b) => b.distance - a.distance);
          if (farthest.length > 10) farthest = farthest.slice(0, 10);
        }
      }
    }
    k++;
  }
  if (alphaMol.length > 0 && alphaMol.length !== 9 * frames.length) throw new InputError(`some frames have no ${PRED_KEYS.alphaMol} but the first has`, { file }, 'every frame must carry the same keys');
  if (eps.length === 0 && alphaCM.length === 0 && alphaC.length === 0 && alphaMol.length === 0 && dipole.length === 0) {
    throw new InputError(`the frames carry no ${PRED_KEYS.eps} / ${PRED_KEYS.alphaCM} / ${PRED_KEYS.alphaC} (or eps_inf) keys`, { file }, 'analyse reads what `predict … -o OUT.extxyz` writes');
  }
  const arr = (xs: number[]) => (xs.length > 0 ? Float64Array.from(xs) : null);
  return {
    file,
    kind: 'extxyz',
    frames,
    volume: volume.length === frames.length ? volume : null,
    eps: arr(eps),
    alphaCM: arr(alphaCM),
    alphaC: arr(alphaC),
    alphaMol: arr(alphaMol),
    dipole: arr(dipole),
    dipoleSource: dipoleKey ? `info key ${dipoleKey}` : null,
    outside: outside.length === frames.length ? outside : null,
    atomsOutside: null,
    maxDistance: maxDistance.length === frames.length ? maxDistance : null,
    threshold: null,
    score: score.length === frames.length ? score : null,
    reasons: score.length === frames.length ? reasons : null,
    species,
    localKind,
    farthest,
  };
}

/** Read a prediction file (by extension: .csv, or extended XYZ). */
export async function readTrajectorySeries(file: string, signal?: AbortSignal): Promise<TrajectorySeries> {
  const kind = fileKind(file);
  if (kind?.kind === 'csv' && !kind.gzip) {
    let text: string;
    try {
      text = await readFile(file, 'utf8');
    } catch {
      throw new InputError('file not found', { file }, 'check the path');
    }
    return fromCsv(parseCsv(text, file));
  }
  if (kind?.kind === 'extxyz') return fromExtxyz(file, signal);
  throw new InputError('cannot tell the file kind from its name', { file }, 'give a .csv or .extxyz file written by `predict`');
}
