// What a reader of a DFT code's output hands to `collect`: one finished linear-response run (structure in Å,
// the reference tensor with its kind and units, the settings that must agree between runs), or the reason the
// run cannot be used (it did not finish, did not converge, or computed something else). A file that is not an
// output of a known code, or is damaged, is an InputError naming it. Shared by the readers in this folder.
import { readFileSync, statSync } from 'node:fs';
import { basename } from 'node:path';
import { open, readFile, stat } from 'node:fs/promises';
import { InputError, type Where } from '../../core/errors.ts';
import { MAX_WHOLE_FILE_BYTES } from '../../core/limits.ts';
import type { Frame, Mat3 } from '../../core/geometry/frame.ts';
import type { TensorKind } from '../../core/learning/model-types.ts';

/** Output files larger than this are refused (a linear-response single point prints well under 10 MB). */
const MAX_OUTPUT_BYTES = MAX_WHOLE_FILE_BYTES;

/** One setting that must agree between the runs collected together, e.g. the cutoff. */
export interface RunSetting {
  /** Plain name shown in reports: "functional", "cutoff", "basis", "k-points". */
  name: string;
  /** The value as compared (exact text after normalising spaces), e.g. "250 Ry". */
  value: string;
}

/** A usable run: everything collect writes for it. */
export interface DftRun {
  /** The output file the tensor was read from (the run's name in reports). */
  file: string;
  /** Every file read for this run (output, input, coordinate file, the pw.x output of a ph.x run). */
  files: string[];
  /** Program and version, e.g. "CP2K 2023.1", "Quantum ESPRESSO 6.7MaX". */
  program: string;
  /** Species, positions and cell in Å; periodic, or without a cell for an isolated molecule (kind alpha-mol). */
  frame: Frame;
  /** The reference tensor, row-major: α_c or an isolated molecule's α as a polarisability volume in Å³, or ε∞ (dimensionless). */
  tensor: Mat3;
  kind: Extract<TensorKind, 'alpha-c' | 'eps' | 'alpha-mol'>;
  /** How the code printed it, for the report: "a.u. (bohr³), converted to Å³", "dimensionless". */
  printedAs: string;
  settings: RunSetting[];
  /** What the user must know about this run's tensor (e.g. a molecule in a periodic box: the box's ε, not α in vacuum). */
  note?: string;
}

export type RunStatus = 'unfinished' | 'unconverged' | 'unsuitable';

/** A recognised output of a run that cannot be used, and why. */
export interface UnusableRun {
  file: string;
  status: RunStatus;
  reason: string;
}

export type RunReading = { ok: true; run: DftRun } | { ok: false; unusable: UnusableRun };

export const unusable = (file: string, status: RunStatus, reason: string): RunReading => ({ ok: false, unusable: { file, status, reason } });

/** The first `bytes` bytes of a file as text (to recognise an output), with the same errors as readRunText. */
export async function readRunHead(file: string, bytes: number): Promise<string> {
  await checkRunFile(file);
  const fh = await open(file, 'r');
  try {
    const buf = Buffer.alloc(bytes);
    const { bytesRead } = await fh.read(buf, 0, bytes, 0);
    if (buf.subarray(0, bytesRead).includes(0)) throw new InputError('this is a binary file, not the text output of a DFT code', { file }, 'give the text output (the log) of the run');
    return buf.subarray(0, bytesRead).toString('utf8');
  } finally {
    await fh.close();
  }
}

async function checkRunFile(file: string): Promise<number> {
  let size: number;
  try {
    const s = await stat(file);
    if (s.isDirectory()) throw new InputError('this is a folder, not a file', { file }, 'give the output file of the run, or the folder to search');
    size = s.size;
  } catch (err) {
    if (err instanceof InputError) throw err;
    const code = (err as NodeJS.ErrnoException).code;
    if (code === 'ENOENT') throw new InputError('file not found', { file }, 'check the path');
    if (code === 'EACCES' || code === 'EPERM') throw new InputError('cannot read the file: permission denied', { file });
    throw err;
  }
  return size;
}

/** The text of an output or input file, with clear errors for a missing, huge or binary file. */
export async function readRunText(file: string): Promise<string> {
  const size = await checkRunFile(file);
  if (size > MAX_OUTPUT_BYTES) {
    throw new InputError(`the file is ${(size / 2 ** 20).toFixed(0)} MiB, more than a linear-response output (limit ${MAX_OUTPUT_BYTES / 2 ** 20} MiB)`, { file }, 'give the output of a single-point linear-response run');
  }
  const bytes = await readFile(file);
  const probe = bytes.subarray(0, 65536);
  if (probe.includes(0)) throw new InputError('this is a binary file, not the text output of a DFT code', { file }, 'give the text output (the log) of the run');
  return bytes.toString('utf8');
}

/**
 * Where a run's companion files (its input, the coordinate file the input names, the pw.x input) are read from:
 * the disk beside the output, or the set of files a user handed over together (matched by file name).
 */
export interface RunFiles {
  /** The text of `file`, or null when it is not there; InputError (naming `namedAt`) when it cannot be read. */
  read(file: string, namedAt: Where): string | null;
}

export const diskFiles: RunFiles = {
  read(file, namedAt) {
    try {
      const size = statSync(file).size;
      if (size > MAX_OUTPUT_BYTES) throw new InputError(`${file} is too large (${size} bytes)`, namedAt);
      return readFileSync(file, 'utf8');
    } catch (err) {
      if (err instanceof InputError) throw err;
      const code = (err as NodeJS.ErrnoException).code;
      if (code === 'ENOENT' || code === 'ENOTDIR') return null;
      throw new InputError(`cannot read ${file} (${code ?? String(err)})`, namedAt);
    }
  },
};

/** Files handed over as texts (e.g. uploaded in the window): a companion is found by its file name alone. */
export function filesByName(files: readonly { name: string; text: string }[]): RunFiles {
  const byName = new Map(files.map((f) => [basename(f.name), f.text]));
  return { read: (file) => byName.get(basename(file)) ?? null };
}

/** A companion file that must be there; the error says who named it. */
export function readCompanion(files: RunFiles, file: string, namedAt: Where, hint: string): string {
  const text = files.read(file, namedAt);
  if (text === null) throw new InputError(`${file} is not there`, namedAt, hint);
  return text;
}

/** The lines of a text, CRLF or LF. */
export function splitLines(text: string): string[] {
  return text.split(/\r?\n/);
}

/** The numbers on a line (Fortran D exponents allowed); null when a field is not a number. */
export function numbersIn(text: string): number[] | null {
  const fields = text.trim().split(/\s+/).filter((f) => f.length > 0);
  const out: number[] = [];
  for (const f of fields) {
    const v = Number(f.replace(/[dD]/, 'e'));
    if (!Number.isFinite(v)) return null;
    out.push(v);
  }
  return out;
}

/** Largest asymmetry |T_ij − T_ji| of a printed response tensor accepted, relative to its largest component. */
export const MAX_ASYMMETRY = 0.01;

/**
 * The symmetric part ½(T + Tᵀ) of a printed row-major tensor (a response tensor is symmetric; codes print it
 * with the small asymmetry of their linear solvers), and the largest relative asymmetry. −0 is written as 0.
 */
export function symmetricPart(T: ArrayLike<number>): { tensor: Mat3; asymmetry: number } {
  const big = Math.max(...Array.from(T, Math.abs));
  const out = Float64Array.from(T, (v) => (v === 0 ? 0 : v));
  let asymmetry = 0;
  for (const [i, j] of [[1, 3], [2, 6], [5, 7]]) {
    asymmetry = Math.max(asymmetry, big > 0 ? Math.abs(T[i] - T[j]) / big : 0);
    const m = (T[i] + T[j]) / 2;
    out[i] = out[j] = m === 0 ? 0 : m;
  }
  return { tensor: out, asymmetry };
}
