// Collect references from DFT output: finished linear-response runs of periodic DFT codes (CP2K, Quantum
// ESPRESSO) → one extended XYZ file with a structure and a reference tensor per run, its kind and units stated.
// Runs that did not finish or converge, computed something else, or disagree with the others in settings are
// reported and left out; a bad or foreign file is reported with its name and never stops the other runs.
// The readers live in io/dft/ (one file per code); this file finds the outputs, pairs, compares and writes.
import { readdir, stat } from 'node:fs/promises';
import path from 'node:path';
import { CancelledError, InputError } from '../core/errors.ts';
import type { Frame } from '../core/geometry/frame.ts';
import { writeExtxyz } from '../io/extxyz.ts';
import { tensorKey } from '../io/tensor-keys.ts';
import { diskFiles, filesByName, readRunHead, readRunText, splitLines, type RunFiles, type DftRun, type RunReading, type RunSetting, type RunStatus } from '../io/dft/dft-run.ts';
import { isCp2kOutput, readCp2kRun } from '../io/dft/cp2k.ts';
import { qeProgramOf, readQeRuns, type QeOutput } from '../io/dft/quantum-espresso.ts';

/** Folders are searched this deep and for at most this many files, so a wrong folder cannot hang the run. */
const MAX_FOLDER_DEPTH = 4;
const MAX_FILES = 20000;
/** Outputs are recognised by this many bytes at their start; a folder's other files are not read further. */
const HEAD_BYTES = 16384;

export type LeftOutStatus = RunStatus | 'settings' | 'error';

export interface LeftOut {
  file: string;
  status: LeftOutStatus;
  reason: string;
}

export interface CollectResult {
  /** Kept runs, in the order written (by file name, natural order). */
  runs: DftRun[];
  left: LeftOut[];
  /** The settings every kept run shares (the ones compared). */
  settings: RunSetting[];
  /** Settings printed for only some runs, so not compared. */
  notCompared: string[];
  /** Files passed over: inputs of the codes, and files in the folders given that are not outputs. */
  skipped: number;
  /** What to know about kept runs (DftRun.note), by run. */
  notes: { file: string; text: string }[];
}

const STATUS_WORDS: Record<LeftOutStatus, string> = {
  unfinished: 'did not finish',
  unconverged: 'did not converge',
  unsuitable: 'not usable',
  settings: 'different settings',
  error: 'cannot be read',
};

export function describeStatus(status: LeftOutStatus): string {
  return STATUS_WORDS[status];
}

/** Natural order of file paths: run-2 before run-10. */
export function naturalCompare(a: string, b: string): number {
  const split = (s: string) => s.split(/(\d+)/);
  const x = split(a);
  const y = split(b);
  for (let i = 0; i < Math.min(x.length, y.length); i++) {
    if (x[i] === y[i]) continue;
    if (i % 2 === 1) {
      const d = Number(x[i]) - Number(y[i]);
      if (d !== 0) return d;
    }
    return x[i] < y[i] ? -1 : 1;
  }
  return x.length - y.length;
}

/** Inputs of the supported codes: named among the runs, they are passed over (the outputs lead to them). */
function isCompanionInput(head: string): boolean {
  return /^\s*&(GLOBAL|FORCE_EVAL)\b/im.test(head) || /^\s*&(control|system|electrons|inputph)\b/im.test(head);
}

type Identified = { file: string; text: string; code: 'cp2k' } | { file: string; text: string; code: 'qe'; output: QeOutput };

function identify(file: string, text: string): Identified | null {
  const head = text.slice(0, HEAD_BYTES);
  if (isCp2kOutput(head)) return { file, text, code: 'cp2k' };
  const program = qeProgramOf(head);
  if (program) return { file, text, code: 'qe', output: { file, program, text, lines: splitLines(text) } };
  return null;
}

async function filesUnder(dir: string, depth: number, out: string[], signal?: AbortSignal): Promise<void> {
  if (depth > MAX_FOLDER_DEPTH) return;
  const entries = (await readdir(dir, { withFileTypes: true })).sort((a, b) => naturalCompare(a.name, b.name));
  for (const e of entries) {
    if (signal?.aborted) throw new CancelledError();
    if (out.length >= MAX_FILES) {
      throw new InputError(`more than ${MAX_FILES} files under this folder`, { file: dir }, 'give the folder of the runs, or the output files themselves');
    }
    if (e.name.startsWith('.')) continue;
    const p = path.join(dir, e.name);
    if (e.isDirectory()) await filesUnder(p, depth + 1, out, signal);
    else if (e.isFile()) out.push(p);
  }
}

/** Reads every input; runs of all codes, the unusable ones with their reasons. Order of inputs does not matter. */
export async function gatherRuns(inputs: string[], options: { signal?: AbortSignal } = {}): Promise<{ readings: RunReading[]; errors: LeftOut[]; skipped: number }> {
  const errors: LeftOut[] = [];
  const explicit = new Set<string>();
  const candidates = new Set<string>();
  for (const input of inputs) {
    const p = path.resolve(input);
    let isDir = false;
    try {
      isDir = (await stat(p)).isDirectory();
    } catch {
      /* reported by readRunText below */
    }
    if (isDir) {
      const found: string[] = [];
      try {
        await filesUnder(p, 0, found, options.signal);
      } catch (e) {
        if (e instanceof InputError) {
          errors.push({ file: input, status: 'error', reason: e.message });
          continue;
        }
        throw e;
      }
      for (const f of found) candidates.add(f);
    } else {
      explicit.add(p);
      candidates.add(p);
    }
  }
  let skipped = 0;
  const outputs: Identified[] = [];
  for (const file of [...candidates].sort(naturalCompare)) {
    if (options.signal?.aborted) throw new CancelledError();
    const named = explicit.has(file);
    try {
      const head = await readRunHead(file, HEAD_BYTES);
      const kind = identify(file, head);
      const id = kind ? identify(file, await readRunText(file)) : null;
      if (id) outputs.push(id);
      else if (isCompanionInput(head)) skipped++;
      else if (named) {
        throw new InputError('not an output of a supported DFT code', { file }, 'give the text output of a CP2K run, or of Quantum ESPRESSO pw.x and ph.x (inputs and coordinate files are found from the output)');
      } else skipped++;
    } catch (e) {
      if (!(e instanceof InputError)) throw e;
      if (named) errors.push({ file, status: 'error', reason: e.message });
      else skipped++;
    }
  }
  const read = readOutputs(outputs, diskFiles);
  return { readings: read.readings, errors: [...errors, ...read.errors], skipped };
}

type Gathered = { readings: RunReading[]; errors: LeftOut[]; skipped: number };

/** The runs of recognised outputs; companions (inputs, coordinate files) come from `files`. */
function readOutputs(outputs: Identified[], files: RunFiles): { readings: RunReading[]; errors: LeftOut[] } {
  const errors: LeftOut[] = [];
  const readings: RunReading[] = [];
  const guard = (file: string, read: () => RunReading[]): void => {
    try {
      readings.push(...read());
    } catch (e) {
      if (e instanceof InputError) errors.push({ file, status: 'error', reason: e.message });
      else throw e;
    }
  };
  for (const o of outputs) if (o.code === 'cp2k') guard(o.file, () => [readCp2kRun(o.file, o.text, files)]);
  const qe = outputs.flatMap((o) => (o.code === 'qe' ? [o.output] : []));
  // Pairing reads every pw.x output once; a broken one must not stop the others, so each ph.x pair is guarded.
  if (qe.length) guard(qe[0].file, () => readQeRuns(qe, (file, e) => errors.push({ file, status: 'error', reason: e.message }), files));
  return { readings, errors };
}

/**
 * The same for files handed over as texts (the window's uploads): outputs are recognised by their first lines,
 * companions found among the same files by name; anything else is reported as not an output.
 */
export function gatherTexts(texts: readonly { name: string; text: string }[]): Gathered {
  const errors: LeftOut[] = [];
  let skipped = 0;
  const outputs: Identified[] = [];
  const seen = new Set<string>();
  for (const t of [...texts].sort((a, b) => naturalCompare(a.name, b.name))) {
    if (seen.has(t.name)) {
      errors.push({ file: t.name, status: 'error', reason: `${t.name}: given twice` });
      continue;
    }
    seen.add(t.name);
    const head = t.text.slice(0, HEAD_BYTES);
    if (head.includes('\0')) errors.push({ file: t.name, status: 'error', reason: `${t.name}: this is a binary file, not the text output of a DFT code` });
    else {
      const id = identify(t.name, t.text);
      if (id) outputs.push(id);
      else if (isCompanionInput(head) || /\.xyz$/i.test(t.name)) skipped++;
      else errors.push({ file: t.name, status: 'error', reason: `${t.name}: not an output of a supported DFT code` });
    }
  }
  const read = readOutputs(outputs, filesByName(texts));
  return { readings: read.readings, errors: [...errors, ...read.errors], skipped };
}

function settingsMap(run: DftRun): Map<string, string> {
  return new Map([['program', run.program], ...run.settings.map((s) => [s.name, s.value] as [string, string])]);
}

/** Keeps the largest group of runs that agree in every setting all of them print; reports the others. */
export function agreeingRuns(runs: DftRun[]): { kept: DftRun[]; left: LeftOut[]; settings: RunSetting[]; notCompared: string[] } {
  if (runs.length === 0) return { kept: [], left: [], settings: [], notCompared: [] };
  const maps = runs.map(settingsMap);
  const all = new Set(maps.flatMap((m) => [...m.keys()]));
  const shared = [...all].filter((k) => maps.every((m) => m.has(k)));
  const notCompared = [...all].filter((k) => !shared.includes(k));
  const family = (r: DftRun) => `${r.kind}|${r.program.split(' ')[0]}`;
  const groups = new Map<string, number[]>();
  runs.forEach((r, i) => {
    const sig = JSON.stringify([family(r), ...shared.map((k) => maps[i].get(k))]);
    groups.set(sig, [...(groups.get(sig) ?? []), i]);
  });
  // The largest group; on a tie the one whose first run comes first in file order (inputs are sorted).
  const best = [...groups.values()].sort((a, b) => b.length - a.length || a[0] - b[0])[0];
  const keep = new Set(best);
  const ref = maps[best[0]];
  const left: LeftOut[] = [];
  runs.forEach((r, i) => {
    if (keep.has(i)) return;
    const diffs = shared.filter((k) => maps[i].get(k) !== ref.get(k)).map((k) => `${k} ${maps[i].get(k)} here, ${ref.get(k)} in the ${best.length} run${best.length > 1 ? 's' : ''} kept`);
    const reason = diffs.length ? diffs.join('; ') : `a different code or tensor (${r.program}, ${r.kind}) from the ${best.length} run(s) kept (${runs[best[0]].program})`;
    left.push({ file: r.file, status: 'settings', reason });
  });
  return { kept: best.map((i) => runs[i]), left, settings: shared.map((name) => ({ name, value: ref.get(name)! })), notCompared };
}

export async function collectRuns(inputs: string[], options: { signal?: AbortSignal } = {}): Promise<CollectResult> {
  return choose(await gatherRuns(inputs, options));
}

/** collectRuns for files handed over as texts (names without folders; companions among them by name). */
export function collectTexts(texts: readonly { name: string; text: string }[]): CollectResult {
  return choose(gatherTexts(texts));
}

function choose({ readings, errors, skipped }: Gathered): CollectResult {
  const usable = readings.flatMap((r) => (r.ok ? [r.run] : [])).sort((a, b) => naturalCompare(a.file, b.file));
  const unusableRuns: LeftOut[] = readings.flatMap((r) => (r.ok ? [] : [r.unusable]));
  const { kept, left, settings, notCompared } = agreeingRuns(usable);
  const allLeft = [...errors, ...unusableRuns, ...left].sort((a, b) => naturalCompare(a.file, b.file));
  const notes = kept.flatMap((r) => (r.note ? [{ file: r.file, text: r.note }] : []));
  return { runs: kept, left: allLeft, settings, notCompared, skipped, notes };
}

/** The name of a setting as a frame property: "k-points" → dft_k_points. */
function settingKey(name: string): string {
  return `dft_${name.toLowerCase().replace(/[^a-z0-9]+/g, '_')}`;
}

/** The folder every kept run's files lie under, so frames can name their run by a short relative path. */
function commonFolder(files: string[]): string {
  if (files.length === 0) return '';
  let parts = path.dirname(files[0]).split(path.sep);
  for (const f of files.slice(1)) {
    const q = path.dirname(f).split(path.sep);
    let k = 0;
    while (k < parts.length && k < q.length && parts[k] === q[k]) k++;
    parts = parts.slice(0, k);
  }
  return parts.join(path.sep) || path.sep;
}

/** One extended XYZ frame per kept run: the structure, the tensor under its usual name, kind, units, settings. */
export function collectedFrames(result: CollectResult): Frame[] {
  const base = commonFolder(result.runs.map((r) => r.file));
  return result.runs.map((run) => {
    const key = tensorKey(run.kind, 'A3');
    const frame: Frame = { ...run.frame, info: { ...run.frame.info }, arrays: { ...run.frame.arrays } };
    frame.info[key] = Array.from(run.tensor);
    frame.info.reference_kind = run.kind;
    frame.info.reference_units = run.kind === 'eps' ? 'dimensionless' : 'A3';
    frame.info.dft_run = path.relative(base, run.file);
    frame.info.dft_program = run.program;
    for (const s of run.settings) frame.info[settingKey(s.name)] = s.value;
    return frame;
  });
}

/** Collects and writes OUT (atomically). Throws InputError when no run can be used, and writes nothing then. */
export async function collectToFile(inputs: string[], out: string, options: { signal?: AbortSignal } = {}): Promise<CollectResult> {
  const target = path.resolve(out);
  if (inputs.some((i) => path.resolve(i) === target)) throw new InputError('the output file is also one of the inputs', { file: out }, 'write the collected file somewhere else');
  const result = await collectRuns(inputs, options);
  if (result.runs.length === 0) {
    const why = result.left.length ? result.left.map((l) => `\n  ${l.file}: ${describeStatus(l.status)}: ${l.reason}`).join('') : ' (no output of a supported code was found)';
    throw new InputError(`no run could be collected${why}`, {}, 'give finished linear-response outputs of CP2K, or Quantum ESPRESSO pw.x with its ph.x run');
  }
  await writeExtxyz(out, collectedFrames(result));
  return result;
}
