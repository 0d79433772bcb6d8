// The pre-built command (scripts/build-cli.mjs, run by `npm ci`) is the same program as the sources: built into a
// scratch folder, its help is the sources' help, and its predictions (worker threads started from the bundled
// worker entry: the scratch folder has no TypeScript loader to fall back on) are byte for byte those of the
// sources run in process.
import { execFileSync } from 'node:child_process';
import { createHash } from 'node:crypto';
import { copyFileSync, existsSync, mkdirSync, mkdtempSync, readdirSync, readFileSync, rmSync, symlinkSync, writeFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { pathToFileURL } from 'node:url';
import { cacheFolder } from '../../src-main/io/radial-table-store.ts';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { commandHelp, mainHelp } from '../../src-main/cli/main.ts';
import { commands } from '../../src-main/cli/commands/registry.ts';
import { spawnSync } from 'node:child_process';
import { cli } from './run-cli.ts';

const MODEL = 'test/fixtures/models/water-v1.model.json';
const DATA = 'test/fixtures/water-dft-sample.extxyz';
const dir = mkdtempSync(join(tmpdir(), 'pw-bundle-'));
const bundle = join(dir, 'cli');
afterAll(() => rmSync(dir, { recursive: true, force: true }));

beforeAll(() => {
  execFileSync(process.execPath, ['scripts/build-cli.mjs', '--outdir', bundle], { encoding: 'utf8' });
  writeFileSync(join(bundle, 'run.mjs'), "const { main } = await import('./main.mjs');\nawait main();\n");
}, 60_000);

const runBundle = (...args: string[]) => execFileSync(process.execPath, [join(bundle, 'run.mjs'), ...args], { encoding: 'utf8', stdio: ['ignore', 'pipe', 'pipe'] });

describe('pre-built command', () => {
  it('is plain JavaScript with a manifest of the sources it was built from', () => {
    const files = readdirSync(bundle);
    expect(files).toEqual(expect.arrayContaining(['main.mjs', 'predict-worker.mjs', 'worker.mjs', 'manifest.json']));
    expect(files.some((f) => f.endsWith('.ts'))).toBe(false);
    const manifest = JSON.parse(readFileSync(join(bundle, 'manifest.json'), 'utf8')) as { builtAt: number; inputs: string[] };
    expect(manifest.inputs).toEqual(expect.arrayContaining(['src-main/cli/main.ts', 'src-main/app/predict/predict-worker.ts', 'src-main/core/learning/model.ts']));
    expect(manifest.builtAt).toBeGreaterThan(0);
  });

  it('prints the help of the sources', () => {
    expect(runBundle('--help')).toBe(mainHelp() + '\n');
  });

  it('predicts with bundled workers the bytes the sources give', async () => {
    const fromBundle = join(dir, 'bundle.csv');
    const fromSource = join(dir, 'source.csv');
    runBundle('predict', MODEL, DATA, '--threads', '2', '-o', fromBundle);
    const r = await cli('predict', MODEL, DATA, '--threads', '2', '-o', fromSource);
    expect(r.code).toBe(0);
    expect(readFileSync(fromBundle, 'utf8')).toBe(readFileSync(fromSource, 'utf8'));
  }, 60_000);
});

describe('polarweave --help from the stored texts', () => {
  // a checkout in a scratch folder: bin/, the sources (linked, for the freshness check) and a bundle whose program
  // cannot load — so every help printed below came from help.json, not from the program
  const root = join(dir, 'checkout');
  beforeAll(() => {
    mkdirSync(join(root, 'bin'), { recursive: true });
    for (const f of ['polarweave.mjs', 'load-program.mjs']) copyFileSync(join('bin', f), join(root, 'bin', f));
    symlinkSync(join(process.cwd(), 'src-main'), join(root, 'src-main'));
    execFileSync(process.execPath, ['scripts/build-cli.mjs', '--outdir', join(root, 'out', 'cli')], { encoding: 'utf8' });
    writeFileSync(join(root, 'out', 'cli', 'main.mjs'), "throw new Error('the program was loaded');\n");
    writeFileSync(join(root, 'out', 'cli', 'main.cjs'), "throw new Error('the program was loaded');\n");
  }, 60_000);
  const run = (...args: string[]) => spawnSync(process.execPath, [join(root, 'bin', 'polarweave.mjs'), ...args], { encoding: 'utf8', env: { ...process.env, POLARWEAVE_FROM_SOURCE: '' } });

  it('prints the program’s own help texts, with its exit codes, without loading it', () => {
    for (const [args, code] of [[['--help'], 0], [['-h'], 0], [['help'], 0], [[], 2]] as const) {
      const r = run(...args);
      expect(r.stdout, args.join(' ')).toBe(mainHelp() + '\n');
      expect(r.status).toBe(code);
    }
    for (const c of commands) {
      const r = run(c.name, 'x', '--help');
      expect(r.stdout).toBe(commandHelp(c) + '\n');
      expect(r.status).toBe(0);
    }
  });

  it('leaves everything else to the program (here one that cannot load, to show it was asked)', () => {
    expect(run('no-such-command', '--help').stderr).toMatch(/the program was loaded/);
    expect(run('inspect', 'file.extxyz').stderr).toMatch(/the program was loaded/);
  });
});

describe('the pre-built program compiled with a code cache (bin/load-program.mjs)', () => {
  // a checkout in a scratch folder as above, with a working bundle, and a cache folder of its own
  const root = join(dir, 'cached');
  const cache = join(dir, 'cache-folder');
  beforeAll(() => {
    mkdirSync(join(root, 'bin'), { recursive: true });
    for (const f of ['polarweave.mjs', 'load-program.mjs']) copyFileSync(join('bin', f), join(root, 'bin', f));
    symlinkSync(join(process.cwd(), 'src-main'), join(root, 'src-main'));
    execFileSync(process.execPath, ['scripts/build-cli.mjs', '--outdir', join(root, 'out', 'cli')], { encoding: 'utf8' });
  }, 60_000);
  const env = { ...process.env, POLARWEAVE_FROM_SOURCE: '', POLARWEAVE_CACHE_DIR: cache };
  const predict = (out: string, more: Record<string, string> = {}) =>
    execFileSync(process.execPath, [join(root, 'bin', 'polarweave.mjs'), 'predict', MODEL, DATA, '--frames', '0:2', '-o', out], { encoding: 'utf8', stdio: ['ignore', 'pipe', 'pipe'], env: { ...env, ...more } });
  const caches = () => readdirSync(cache).filter((f) => /^code-[0-9a-f]{24}(-[a-z]+)?\.v8$/.test(f));

  it('keeps its cache in the command’s cache folder, and predicts the same bytes with and without it', async () => {
    const { cacheFolder: binFolder } = (await import(pathToFileURL(join(process.cwd(), 'bin', 'load-program.mjs')).href)) as { cacheFolder: (env: NodeJS.ProcessEnv) => string };
    for (const e of [{ POLARWEAVE_CACHE_DIR: '/x/y' }, { XDG_CACHE_HOME: '/c' }, {}]) expect(binFolder(e)).toBe(cacheFolder(e));
    const plain = join(dir, 'plain.csv');
    predict(plain, { POLARWEAVE_NO_CODE_CACHE: '1' });
    expect(existsSync(cache) ? caches() : []).toEqual([]);
    // loaded as modules the program has no identity, so it leaves no notes beside the radial tables it stores
    const notes = () => readdirSync(cache).filter((f) => f.endsWith('.fit'));
    expect(readdirSync(cache).filter((f) => f.endsWith('.f64')).length).toBeGreaterThan(0);
    expect(notes()).toEqual([]);
    const outs = ['first.csv', 'second.csv'].map((f) => join(dir, f));
    predict(outs[0]); // compiles, then stores the cache
    const [file] = caches();
    expect(caches()).toHaveLength(1);
    // the script's identity (the 24 digits that name its cache) notes each radial table it checked (src-main/io/radial-table-store.ts)
    expect(notes().length).toBeGreaterThan(0);
    for (const n of notes()) expect(n).toMatch(new RegExp(`^radial-[0-9a-f]{24}\\.${file.slice(5, 29)}\\.fit$`));
    const stored = readFileSync(join(cache, file));
    predict(outs[1]); // with the cache: not written again
    expect(readFileSync(join(cache, file)).equals(stored)).toBe(true);
    // a damaged cache is refused (its checksum), the program compiled as without one, and the cache written anew
    const damaged = Buffer.from(stored);
    damaged[damaged.length >> 1] ^= 0xff;
    writeFileSync(join(cache, file), damaged);
    const third = join(dir, 'third.csv');
    predict(third);
    expect(readFileSync(join(cache, file)).equals(stored)).toBe(false);
    expect(readFileSync(join(cache, file)).equals(damaged)).toBe(false);
    for (const out of [...outs, third]) expect(readFileSync(out, 'utf8')).toBe(readFileSync(plain, 'utf8'));
    // one cache per command: another command's run leaves the predict cache as it was and stores its own
    expect(file).toMatch(/-predict\.v8$/);
    const before = readFileSync(join(cache, file));
    execFileSync(process.execPath, [join(root, 'bin', 'polarweave.mjs'), 'inspect', DATA], { encoding: 'utf8', stdio: ['ignore', 'pipe', 'pipe'], env });
    expect(caches().filter((f) => f.endsWith('-inspect.v8'))).toEqual([file.replace(/-predict\.v8$/, '-inspect.v8')]);
    expect(readFileSync(join(cache, file)).equals(before)).toBe(true);
  }, 120_000);

  it('predicts a frame in its own thread without loading zlib, readline, worker_threads, perf_hooks, nor zod once its model is cached (each is loaded where it is used)', () => {
    const preload = join(dir, 'loaded.cjs');
    const list = join(dir, 'loaded.json');
    // zod's module marks the global object when it runs
    writeFileSync(preload, `process.on('exit', () => require('node:fs').writeFileSync(${JSON.stringify(list)}, JSON.stringify({ modules: process.moduleLoadList, zod: '__zod_globalRegistry' in globalThis })));\n`);
    const out = join(dir, 'one-frame.csv');
    const own = { ...env, POLARWEAVE_CACHE_DIR: join(dir, 'cache-one-frame') };
    const run = (more: string[] = []) => {
      const err = execFileSync(process.execPath, [...more, '-r', preload, join(root, 'bin', 'polarweave.mjs'), 'predict', MODEL, DATA, '--frames', '0:1', '-o', out], { encoding: 'utf8', stdio: ['ignore', 'pipe', 'pipe'], env: own });
      expect(readFileSync(out, 'utf8')).toContain('# Identity:');
      return { err, ...(JSON.parse(readFileSync(list, 'utf8')) as { modules: string[]; zod: boolean }) };
    };
    const first = run(); // parses and checks the model (zod), then keeps it in the cache folder
    expect(first.zod).toBe(true);
    const text = readFileSync(out, 'utf8');
    const second = run();
    expect(readFileSync(out, 'utf8')).toBe(text);
    expect(second.zod).toBe(false);
    // a Node before 20.16 (no process.getBuiltinModule): bin/ and io/builtin.ts import or require them instead
    const old = join(dir, 'no-get-builtin.cjs');
    writeFileSync(old, 'process.getBuiltinModule = undefined;\n');
    run(['-r', old]);
    expect(readFileSync(out, 'utf8')).toBe(text);
    for (const r of [first, second]) {
      expect(r.modules).toContain('NativeModule fs'); // the list is the one of this run
      for (const m of ['zlib', 'readline', 'worker_threads', 'perf_hooks']) expect(r.modules, r.err).not.toContain(`NativeModule ${m}`);
    }
  }, 60_000);

  it('compiles the predict worker with a code cache of its own, stored after its first batch; damaged, it is written anew', () => {
    // 8 frames on one thread: two batches of 4, in a worker (predict-worker.mjs loads predict-worker.cjs)
    const workerScript = readFileSync(join(root, 'out', 'cli', 'predict-worker.cjs'), 'utf8');
    const name = `code-${createHash('sha256').update(`${process.version}\n${process.arch}\n`).update(workerScript).digest('hex').slice(0, 24)}.v8`;
    const run = (out: string, more: Record<string, string> = {}) =>
      execFileSync(process.execPath, [join(root, 'bin', 'polarweave.mjs'), 'predict', MODEL, DATA, '--threads', '1', '-o', out], { encoding: 'utf8', stdio: ['ignore', 'pipe', 'pipe'], env: { ...env, ...more } });
    const plain = join(dir, 'worker-plain.csv');
    run(plain, { POLARWEAVE_NO_CODE_CACHE: '1' }); // the worker's modules, no cache
    expect(caches()).not.toContain(name);
    const outs = ['worker-1.csv', 'worker-2.csv', 'worker-3.csv'].map((f) => join(dir, f));
    run(outs[0]);
    expect(caches()).toContain(name);
    const stored = readFileSync(join(cache, name));
    run(outs[1]); // taken, not written again
    expect(readFileSync(join(cache, name)).equals(stored)).toBe(true);
    const damaged = Buffer.from(stored);
    damaged[damaged.length >> 1] ^= 0xff;
    writeFileSync(join(cache, name), damaged);
    run(outs[2]);
    expect(readFileSync(join(cache, name)).equals(damaged)).toBe(false);
    expect(readdirSync(cache).some((f) => f.endsWith('.tmp'))).toBe(false);
    for (const out of outs) expect(readFileSync(out, 'utf8')).toBe(readFileSync(plain, 'utf8'));
  }, 120_000);
});
