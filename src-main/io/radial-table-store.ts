// A folder of radial tables built by earlier runs (core/descriptors/density.ts, RadialTableStore), so that a short
// run (one predicted frame) reads its table in a millisecond instead of building it in 0.1–0.2 s. A cache only:
// any trouble reading or writing is ignored and the table is built as before.
//   Folder: $POLARWEAVE_CACHE_DIR, else $XDG_CACHE_HOME/polarweave, else ~/.cache/polarweave.
//   File: radial-<first 24 hex digits of SHA-256(code fingerprint, settings)>.f64 — the coefficients as
//   little-endian float64, then the 32-byte SHA-256 of those bytes. The fingerprint is the source text of the
//   functions that build a table, so tables of other code get other names; radialTable also rebuilds a few pieces
//   and compares them bit for bit before it uses a stored table.
// Written atomically (temporary file in the folder, then rename); never read above the expected length.
// Every thread that computes features calls useRadialTableCache once at its start: the command (cli/main.ts), the
// streamed predictor's workers (app/predict/predict-worker.ts) and the window's worker (app/worker.ts); a thread
// has its own module state, so each sets its own.
import { createHash } from 'node:crypto';
import { closeSync, mkdirSync, openSync, readSync, renameSync, rmSync, writeFileSync, fstatSync } from 'node:fs';
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
const sha256 = (bytes: Uint8Array) => createHash('sha256').update(bytes).digest();

/** A RadialTableStore on `folder` (created when the first table is saved). */
export function radialTableFolder(folder: string): RadialTableStore {
  const file = (key: string) => join(folder, `radial-${createHash('sha256').update(`${codeFingerprint()}\n${key}`).digest('hex').slice(0, 24)}.f64`);
  return {
    load(key, length) {
      let fd = -1;
      try {
        fd = openSync(file(key), 'r');
        const bytes = Buffer.alloc(8 * length + 32);
        if (fstatSync(fd).size !== bytes.length || readSync(fd, bytes, 0, bytes.length, 0) !== bytes.length) return null;
        const body = bytes.subarray(0, 8 * length);
        if (!sha256(body).equals(bytes.subarray(8 * length))) return null;
        const out = new Float64Array(length);
        if (LITTLE_ENDIAN) new Uint8Array(out.buffer).set(body);
        else for (let i = 0; i < length; i++) out[i] = body.readDoubleLE(8 * i);
        return out;
      } catch {
        return null;
      } finally {
        if (fd >= 0) closeSync(fd);
      }
    },
    save(key, coefficients) {
      const target = file(key);
      const temporary = `${target}.${process.pid}.${Math.random().toString(36).slice(2)}.tmp`;
      try {
        const body = Buffer.alloc(8 * coefficients.length);
        if (LITTLE_ENDIAN) body.set(new Uint8Array(coefficients.buffer, coefficients.byteOffset, coefficients.byteLength));
        else for (let i = 0; i < coefficients.length; i++) body.writeDoubleLE(coefficients[i], 8 * i);
        mkdirSync(folder, { recursive: true });
        writeFileSync(temporary, Buffer.concat([body, sha256(body)]));
        renameSync(temporary, target);
      } catch {
        rmSync(temporary, { force: true });
      }
    },
  };
}
