// Pre-builds the `polarweave` command and its worker entries as plain JavaScript (esbuild), so that neither the
// command nor a worker thread transpiles TypeScript at start. Run by `npm ci`/`npm install` (the `prepare`
// script) and by `npm run build`; takes about a second. Output in out/cli/:
//   main.mjs            the command (src-main/cli/main.ts), loaded by bin/polarweave.mjs
//   predict-worker.mjs  the streaming predictor's worker (src-main/app/predict/predict-worker.ts): a few lines that
//                       compile predict-worker.cjs (the worker as one classic script) with a V8 code cache, as
//                       bin/polarweave.mjs does main.cjs (bin/load-program.mjs), else import the worker's modules,
//                       predict-worker-modules.mjs
//   worker.mjs          the app's worker (src-main/app/worker.ts)
//   training-worker.mjs the worker of a training's first pass on several threads (src-main/app/training-worker.ts)
//   chunk-*.mjs         code the three share (loaded once per thread, not three times)
//   main.cjs            the command again as one script (no modules), which bin/polarweave.mjs compiles with a
//                       V8 code cache kept in the cache folder: a run then skips most of compiling the program
//   help.json           every help text (helpTexts of src-main/cli/main.ts), printed by bin/polarweave.mjs for --help
//   manifest.json       the source files it was built from and when: bin/polarweave.mjs runs the sources through
//                       tsx instead when any of them is newer, so an edited checkout never runs stale code.
// When it cannot build (no esbuild, an error), it says so and exits 0: installation goes on, and the command runs
// from the sources. Only the files of an earlier build are removed from the output folder.
// The bundles say where they live (globalThis.__polarweaveBundle); jobs/spawn-ts.ts then starts a worker from
// the bundled entry of the same name instead of loading the .ts entry through tsx.
import { mkdirSync, readdirSync, rmSync, writeFileSync } from 'node:fs';
import { dirname, join, relative, resolve } from 'node:path';
import { fileURLToPath, pathToFileURL } from 'node:url';

const root = resolve(dirname(fileURLToPath(import.meta.url)), '..');
// `--outdir DIR` builds elsewhere (the bundle test); the command itself looks in out/cli/
const at = process.argv.indexOf('--outdir');
const outdir = at > 0 ? resolve(process.argv[at + 1]) : join(root, 'out', 'cli');

let esbuild;
try {
  esbuild = await import('esbuild');
} catch {
  // installation must not fail for it: the command then runs from the sources through tsx, only slower to start
  console.warn('polarweave: esbuild is not installed; the command will run from the TypeScript sources (slower start)');
  process.exit(0);
}

const ENTRIES = {
  main: 'src-main/cli/main.ts',
  'predict-worker-modules': 'src-main/app/predict/predict-worker.ts',
  worker: 'src-main/app/worker.ts',
  'training-worker': 'src-main/app/training-worker.ts',
};

/**
 * Entries also built as one classic script (name.cjs) for a code cache (bin/load-program.mjs; Node 20 keeps none
 * for modules): the command, loaded by bin/polarweave.mjs, and the predict worker, loaded by predict-worker.mjs.
 */
const SCRIPTS = { main: ENTRIES.main, 'predict-worker': ENTRIES['predict-worker-modules'] };

/**
 * The predict worker's entry (jobs/spawn-ts.ts starts predict-worker.mjs): its script with the code cache, stored
 * after its first batch (the functions that ran, compiled; app/predict/predict-worker.ts calls the hook), or its
 * modules when the script or bin/load-program.mjs cannot be had. POLARWEAVE_NO_CODE_CACHE=1 takes the modules.
 */
const PREDICT_WORKER = `// The streamed predictor's worker, written by scripts/build-cli.mjs: predict-worker.cjs with a code cache, else the modules.
import { fileURLToPath } from 'node:url';
let script = null;
if (!process.env.POLARWEAVE_NO_CODE_CACHE) {
  try {
    const { loadProgram } = await import('../../bin/load-program.mjs');
    script = loadProgram(fileURLToPath(new URL('predict-worker.cjs', import.meta.url)));
  } catch {
    script = null;
  }
}
if (script) globalThis.__polarweaveAfterFirstTask = () => script.afterRun(); // app/predict/predict-worker.ts
else await import('./predict-worker-modules.mjs');
`;

/**
 * zod's entries (classic and core) re-export every message locale (about 370 kB, a third of the bundle, compiled at every
 * start); Polarweave uses English messages only (zod's default, set by the same entry), so the bundle gets a
 * locale index holding just that one.
 */
const zodEnglishOnly = {
  name: 'zod-english-only',
  setup(build) {
    // io/model-check.ts loads zod with require() at its first use: the same ES module as every import of it (one
    // copy, English only), not zod's CommonJS build with every locale
    build.onResolve({ filter: /^zod$/ }, (args) => (args.kind === 'require-call' ? { path: join(root, 'node_modules', 'zod', 'index.js') } : undefined));
    build.onResolve({ filter: /^\.\.\/locales\/index\.js$/ }, (args) =>
      /zod[\\/]v4[\\/](classic|core)[\\/]/.test(args.importer) ? { path: 'zod-locales-en', namespace: 'zod-locales' } : undefined,
    );
    build.onLoad({ filter: /.*/, namespace: 'zod-locales' }, () => ({
      contents: "export { default as en } from 'zod/v4/locales/en.js';",
      resolveDir: root,
    }));
  },
};

mkdirSync(outdir, { recursive: true });
// only what an earlier build wrote: the manifest first, so that a failed build leaves the sources in charge
const ours = (f) =>
  f === 'manifest.json' || f === 'help.json' || f === 'predict-worker.mjs' || /^chunk-[A-Z0-9]+\.mjs$/.test(f) || Object.keys(ENTRIES).some((e) => f === `${e}.mjs`) || Object.keys(SCRIPTS).some((e) => f === `${e}.cjs`);
rmSync(join(outdir, 'manifest.json'), { force: true });
for (const f of readdirSync(outdir)) if (ours(f)) rmSync(join(outdir, f));

const builtAt = Date.now();
let result;
try {
  result = await esbuild.build({
    absWorkingDir: root,
    entryPoints: Object.fromEntries(Object.entries(ENTRIES).map(([k, v]) => [k, join(root, v)])),
    outdir,
    bundle: true,
    splitting: true,
    format: 'esm',
    platform: 'node',
    target: 'node20',
    outExtension: { '.js': '.mjs' },
    chunkNames: 'chunk-[hash]',
    // tsx stays outside (only the sources' fallback path uses it); CommonJS packages inside need `require`
    external: ['tsx', 'tsx/*'],
    banner: {
      js: [
        "import { createRequire as __pwRequire } from 'node:module';",
        'const require = __pwRequire(import.meta.url);',
        "globalThis.__polarweaveBundle ??= new URL('.', import.meta.url).href;",
      ].join('\n'),
    },
    plugins: [zodEnglishOnly],
    metafile: true,
    logLevel: 'warning',
    minifyWhitespace: true,
    minifySyntax: true,
  });
} catch (e) {
  // installation must not fail for it: the command then runs from the sources through tsx, only slower to start
  console.warn(`polarweave: could not pre-build the command (${e instanceof Error ? e.message.split('\n')[0] : e}); it will run from the TypeScript sources`);
  process.exit(0);
}

// The command and the predict worker as classic scripts, for bin/load-program.mjs to compile with a code cache
// (node:vm's cachedData; Node 20 keeps no code cache for modules). import.meta.url becomes the script's own URL: it
// sits beside the modules, so paths relative to it (the demo data, the worker entries) resolve alike. Without it,
// bin/polarweave.mjs loads main.mjs and predict-worker.mjs the worker's modules.
for (const [name, entry] of Object.entries(SCRIPTS)) {
  try {
    await esbuild.build({
      absWorkingDir: root,
      entryPoints: [join(root, entry)],
      outfile: join(outdir, `${name}.cjs`),
      bundle: true,
      format: 'cjs',
      platform: 'node',
      target: 'node20',
      external: ['tsx', 'tsx/*'],
      define: { 'import.meta.url': '__pwScriptUrl' },
      banner: {
        // strict, as the modules it was written as: the directive must come first (esbuild's own "use strict" comes
        // after the banner, where it is no directive, and the whole script would run in sloppy mode)
        js: [
          '"use strict";',
          "var __pwScriptUrl = require('node:url').pathToFileURL(__filename).href;",
          "globalThis.__polarweaveBundle ??= new URL('.', __pwScriptUrl).href;",
        ].join('\n'),
      },
      plugins: [zodEnglishOnly],
      logLevel: 'warning',
      minifyWhitespace: true,
      minifySyntax: true,
    });
  } catch (e) {
    rmSync(join(outdir, `${name}.cjs`), { force: true });
    console.warn(`polarweave: could not build ${name} as a single script (${e instanceof Error ? e.message.split('\n')[0] : e}); its modules are used`);
  }
}
writeFileSync(join(outdir, 'predict-worker.mjs'), PREDICT_WORKER);

// The help texts, from the bundle's own functions (helpTexts in src-main/cli/main.ts): bin/polarweave.mjs prints
// them for `--help` without loading the program (a fifth of a second less on a busy machine). Without the file it
// loads the program as for any other command.
try {
  const cli = await import(pathToFileURL(join(outdir, 'main.mjs')).href);
  writeFileSync(join(outdir, 'help.json'), JSON.stringify(cli.helpTexts()) + '\n');
} catch (e) {
  console.warn(`polarweave: could not store the help texts (${e instanceof Error ? e.message.split('\n')[0] : e}); --help will load the program`);
}

const inputs = Object.keys(result.metafile.inputs)
  .map((p) => relative(root, resolve(root, p)).split('\\').join('/'))
  .filter((p) => p.startsWith('src-main/'))
  .sort();
writeFileSync(join(outdir, 'manifest.json'), JSON.stringify({ builtAt, entries: ENTRIES, inputs }, null, 1) + '\n');
console.log(`polarweave: built ${Object.keys(ENTRIES).length} bundles from ${inputs.length} source files in ${relative(root, outdir) || '.'}/`);
