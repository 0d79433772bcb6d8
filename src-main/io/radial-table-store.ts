// A folder of radial tables built by earlier runs (core/descriptors/density.ts, RadialTableStore), so that a short
// run (one predicted frame) reads its table in a millisecond instead of building it in 0.1–0.2 s. A cache only:
// any trouble reading or writing is ignored and the table is built as before.
//   Folder: $POLARWEAVE_CACHE_DIR, else $XDG_CACHE_HOME/polarweave, else ~/.cache/polarweave.
//   File: radial-<first 24 hex digits of SHA-256(code fingerprint, settings)>.f64 — the coefficients as
//   little-endian float64, then the 32-byte SHA-256 of those bytes. The fingerprint is the source text of the
//   functions that build a table, so tables of other code get other names; radialTable also rebuilds a few pieces
//   and compares them bit for bit before it uses a stored table.
// Written atomically (temporary file in the folder, then rename); never read above the expected length.
// Notes that a table fits: when the command runs as one pre-built script (bin/load-program.mjs), the program knows
// its identity (SHA-256 of the Node version, the architecture and the script's whole text). A table it built, or saw
// pass storedTableFits, gets a note beside it, radial-<table's 24 hex digits>.<first 24 hex digits of the identity>.fit,
// holding the SHA-256 of the table's numbers; the same program then takes that table without rebuilding its pieces
// (the same code on the same engine gives the same bits: the check would pass again, at 20–30 ms of a one-frame
// prediction). Any other program (another build, Node version or machine kind; the sources through tsx; a worker
// thread, which has no identity) checks as before. A missing or damaged note costs one check. The newest 4 notes
// of a table are kept.
// Every thread that computes features calls useRadialTableCache once at its start: the command (cli/main.ts), the
// streamed predictor's workers (app/predict/predict-worker.ts) and the window's worker (app/worker.ts); a thread
// has its own module state, so each sets its own.
import { createHash } from 'node:crypto';
import { closeSync, fstatSync, mkdirSync, openSync, readdirSync, readFileSync, readSync, renameSync, rmSync, statSync, writeFileSync } from 'node:fs';
import { endianness, homedir } from 'node:os';
import { join } from 'node:path';
import { radialIntegral, radialTable, storedTableFits, useRadialTableStore, type RadialTableStore } from '../core/descriptors/density.ts';
import { radialBasis } from '../core/descriptors/radial-basis.ts';
import { scaledSphericalBesselI } from '../core/descriptors/spherical-bessel.ts';
import { gaussLegendre } from '../core/numerics/quadrature.ts';

/** The cache folder (see the header). */
export function cacheFolder(env: NodeJS.ProcessEnv = process.env): string {
  if (env.POLARWEAVE_CACHE_DIR) return env.POLARWEAVE_CACHE_DIR;
  return join(env.XDG_CACHE_HOME || join(homedir(), '.cache'), 'polarweave');
}

/** This thread's radial tables from the cache folder (the one place that says which folder). */
export function useRadialTableCache(env: NodeJS.ProcessEnv = process.env): void {
  useRadialTableStore(radialTableFolder(cacheFolder(env)));
}

let fingerprint: string | null = null;
function codeFingerprint(): string {
  fingerprint ??= createHash('sha256')
    .update([radialTable, storedTableFits, radialIntegral, radialBasis, scaledSphericalBesselI, gaussLegendre].map(String).join('\n'))
    .digest('hex');
  return fingerprint;
}

const LITTLE_ENDIAN = endianness() === 'LE';
/** SHA-256 of `bytes` (the cache files' checksums; also io/model-cache.ts's). */
export const sha256 = (bytes: Uint8Array) => createHash('sha256').update(bytes).digest();

/**
 * The running program's identity (64 hex digits), set by bin/load-program.mjs before it runs the pre-built command;
 * null when there is none (the sources through tsx, worker threads, the window).
 */
export function programIdentity(): string | null {
  const id = (globalThis as { __polarweaveProgram?: unknown }).__polarweaveProgram;
  return typeof id === 'string' && /^[0-9a-f]{64}$/.test(id) ? id : null;
}

/** Notes kept per table (one per program that used it: builds, Node versions). */
const NOTES_KEPT = 4;

/**
 * Write `bytes` to `target` through a temporary file in its folder (a cache: any trouble is ignored, false). Also
 * the decoded-model cache's writer (io/model-cache.ts).
 */
export function writeAtomically(folder: string, target: string, bytes: Uint8Array): boolean {
  const temporary = `${target}.${process.pid}.${Math.random().toString(36).slice(2)}.tmp`;
  try {
    mkdirSync(folder, { recursive: true });
    writeFileSync(temporary, bytes);
    renameSync(temporary, target);
    return true;
  } catch {
    rmSync(temporary, { force: true });
    return false;
  }
}

/**
 * Keep `kept` − 1 files of `folder` named as `belongs` says besides `target` (the one just written): the newest by
 * modification time; the others are removed. A cache only: any trouble is ignored.
 */
export function keepNewest(folder: string, target: string, belongs: (name: string) => boolean, kept: number): void {
  try {
    const others = readdirSync(folder)
      .filter((f) => belongs(f) && join(folder, f) !== target)
      .map((f) => ({ f, t: statSync(join(folder, f)).mtimeMs }))
      .sort((a, b) => b.t - a.t);
    for (const { f } of others.slice(kept - 1)) rmSync(join(folder, f), { force: true });
  } catch {
    // a cache only
  }
}

/** The little-endian bytes of a table's numbers (the body of its file). */
function tableBytes(coefficients: Float64Array): Buffer {
  const body = Buffer.alloc(8 * coefficients.length);
  if (LITTLE_ENDIAN) body.set(new Uint8Array(coefficients.buffer, coefficients.byteOffset, coefficients.byteLength));
  else for (let i = 0; i < coefficients.length; i++) body.writeDoubleLE(coefficients[i], 8 * i);
  return body;
}

/** A RadialTableStore on `folder` (created when the first table is saved). */
export function radialTableFolder(folder: string): RadialTableStore {
  const name = (key: string) => `radial-${createHash('sha256').update(`${codeFingerprint()}\n${key}`).digest('hex').slice(0, 24)}`;
  const file = (key: string) => join(folder, `${name(key)}.f64`);
  const note = (key: string, id: string) => join(folder, `${name(key)}.${id.slice(0, 24)}.fit`);
  // the checksum of each table this store gave (its file's last 32 bytes), for the notes
  const digests = new WeakMap<Float64Array, Buffer>();
  const digestOf = (coefficients: Float64Array) => digests.get(coefficients) ?? sha256(tableBytes(coefficients));
  const writeNote = (key: string, coefficients: Float64Array) => {
    const id = programIdentity();
    if (id === null || !writeAtomically(folder, note(key, id), digestOf(coefficients))) return;
    // this note, and the newest others of the table
    const prefix = `${name(key)}.`;
    keepNewest(folder, note(key, id), (f) => f.startsWith(prefix) && /^[0-9a-f]{24}\.fit$/.test(f.slice(prefix.length)), NOTES_KEPT);
  };
  return {
    load(key, length) {
      let fd = -1;
      try {
        fd = openSync(file(key), 'r');
        const bytes = Buffer.alloc(8 * length + 32);
        if (fstatSync(fd).size !== bytes.length || readSync(fd, bytes, 0, bytes.length, 0) !== bytes.length) return null;
        const body = bytes.subarray(0, 8 * length);
        const digest = bytes.subarray(8 * length);
        if (!sha256(body).equals(digest)) return null;
        const out = new Float64Array(length);
        if (LITTLE_ENDIAN) new Uint8Array(out.buffer).set(body);
        else for (let i = 0; i < length; i++) out[i] = body.readDoubleLE(8 * i);
        digests.set(out, digest);
        return out;
      } catch {
        return null;
      } finally {
        if (fd >= 0) closeSync(fd);
      }
    },
    save(key, coefficients) {
      const body = tableBytes(coefficients);
      const digest = sha256(body);
      digests.set(coefficients, digest);
      // built here: it fits by construction, so the note goes with it
      if (writeAtomically(folder, file(key), Buffer.concat([body, digest]))) writeNote(key, coefficients);
    },
    knownToFit(key, coefficients) {
      const id = programIdentity();
      if (id === null) return false;
      try {
        return readFileSync(note(key, id)).equals(digestOf(coefficients));
      } catch {
        return false;
      }
    },
    fitted(key, coefficients) {
      writeNote(key, coefficients);
    },
  };
}
