// Loads the pre-built command as one script (out/cli/main.cjs, scripts/build-cli.mjs) with a V8 code cache, so
// that a run skips most of compiling the program (Node 20 keeps no code cache for modules, so bin/polarweave.mjs
// would otherwise compile main.mjs and its chunks at every start). The cache is a file in the command's cache
// folder (the folder of the radial tables, src-main/io/radial-table-store.ts):
//   code-<first 24 hex digits of SHA-256(Node version, architecture, the script's text)>[-<command>].v8 — the bytes
//   createCachedData gave after a run (so they hold the functions that run compiled), then their 32-byte SHA-256.
//   One per command (bin/polarweave.mjs names it): a cache made by `inspect` lacks what `predict` runs, and a
//   cache V8 takes is never written again.
// A cache only: a missing, damaged or refused cache (V8 checks its own version and flags too) costs one compile
// and is written again after the run; any trouble reading or writing it is ignored. Written atomically
// (temporary file, then rename); the newest few are kept. The same SHA-256 (all 64 digits) is the program's
// identity, globalThis.__polarweaveProgram, by which it recognises notes it left in the cache folder.
// The built-in modules as CommonJS objects (process.getBuiltinModule, Node 20.16 on), not through `import`: an ES
// module view of node:fs reads every export, and one of them (ReadStream) loads node:stream, 5-6 ms of each start.
const builtin = (id) => process.getBuiltinModule?.(id) ?? import(id);
const { createHash } = await builtin('node:crypto');
const { mkdirSync, readdirSync, readFileSync, renameSync, rmSync, statSync, writeFileSync } = await builtin('node:fs');
const { createRequire } = await builtin('node:module');
const { homedir } = await builtin('node:os');
const { dirname, join } = await builtin('node:path');
const { Script } = await builtin('node:vm');

/** Code caches kept in the folder (one per build of the command, Node version and command, and per worker script). */
const KEEP = 12;
const CACHE_NAME = /^code-[0-9a-f]{24}(-[a-z]+)?\.v8$/;

/**
 * The command's cache folder. The same rule as cacheFolder() of src-main/io/radial-table-store.ts, which the
 * program uses once loaded (this runs before it is); test/cli/bundle.test.ts holds the two equal.
 */
export function cacheFolder(env = process.env) {
  if (env.POLARWEAVE_CACHE_DIR) return env.POLARWEAVE_CACHE_DIR;
  return join(env.XDG_CACHE_HOME || join(homedir(), '.cache'), 'polarweave');
}

const sha256 = (bytes) => createHash('sha256').update(bytes).digest();

function readCache(file) {
  try {
    const bytes = readFileSync(file);
    if (bytes.length <= 32) return undefined;
    const body = bytes.subarray(0, bytes.length - 32);
    return sha256(body).equals(bytes.subarray(bytes.length - 32)) ? body : undefined;
  } catch {
    return undefined;
  }
}

function writeCache(file, data) {
  const folder = dirname(file);
  const temporary = `${file}.${process.pid}.${Math.random().toString(36).slice(2)}.tmp`;
  try {
    mkdirSync(folder, { recursive: true });
    writeFileSync(temporary, Buffer.concat([data, sha256(data)]));
    renameSync(temporary, file);
    const caches = readdirSync(folder)
      .filter((f) => CACHE_NAME.test(f))
      .map((f) => ({ f, t: statSync(join(folder, f)).mtimeMs }))
      .sort((a, b) => b.t - a.t);
    for (const { f } of caches.slice(KEEP)) rmSync(join(folder, f), { force: true });
  } catch {
    rmSync(temporary, { force: true });
  }
}

/**
 * The exports of the script at `file` (a CommonJS bundle), compiled with the code cache (of the command `use`, a
 * lower-case word, when given); `afterRun()` stores a new cache when there was none or V8 refused it. Null when the
 * script cannot be read or run: the caller then loads the program its usual way (nothing of the script has run
 * but its definitions).
 */
export function loadProgram(file, env = process.env, use = '') {
  let source;
  try {
    source = readFileSync(file, 'utf8');
  } catch {
    return null;
  }
  const identity = createHash('sha256').update(`${process.version}\n${process.arch}\n`).update(source).digest('hex');
  const cacheFile = join(cacheFolder(env), `code-${identity.slice(0, 24)}${typeof use === 'string' && /^[a-z]{1,20}$/.test(use) ? `-${use}` : ''}.v8`);
  const cachedData = readCache(cacheFile);
  const module = { exports: {} };
  let script;
  // who is running: the program's notes in the cache folder name it (src-main/io/radial-table-store.ts)
  globalThis.__polarweaveProgram = identity;
  try {
    script = new Script(`(function (exports, require, module, __filename, __dirname) {${source}\n})`, { filename: file, cachedData });
    script.runInThisContext()(module.exports, createRequire(file), module, file, dirname(file));
  } catch {
    delete globalThis.__polarweaveProgram; // another program (main.mjs) runs instead
    return null;
  }
  const fresh = cachedData === undefined || script.cachedDataRejected === true;
  return {
    exports: module.exports,
    afterRun() {
      if (!fresh) return;
      try {
        writeCache(cacheFile, script.createCachedData());
      } catch {
        // a cache only
      }
    },
  };
}
