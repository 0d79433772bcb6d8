#!/usr/bin/env node
// The `polarweave` command. Runs the pre-built JavaScript in out/cli/ (scripts/build-cli.mjs, run by `npm ci`)
// when it is there and no source file it was built from has changed since; otherwise the TypeScript sources
// through tsx (an edited checkout, or an install that skipped its scripts): the same code, slower to start.
// The pre-built program is loaded as one script with a code cache (load-program.mjs) when it was built so, else
// as modules (main.mjs).
// node:fs as its CommonJS object when Node has process.getBuiltinModule (20.16 on): `import` would build an ES
// module view of it, which reads every export and so loads node:stream (ReadStream), 5-6 ms of each start.
const builtin = (id) => process.getBuiltinModule?.(id) ?? import(id);
const { readFileSync, statSync } = await builtin('node:fs');
const { fileURLToPath } = await builtin('node:url');

const root = new URL('../', import.meta.url);

function freshBundle() {
  try {
    const manifest = JSON.parse(readFileSync(new URL('out/cli/manifest.json', root), 'utf8'));
    for (const p of manifest.inputs) if (statSync(new URL(p, root)).mtimeMs > manifest.builtAt) return null;
    return new URL('out/cli/main.mjs', root);
  } catch {
    return null;
  }
}

/**
 * `polarweave --help` (or no command) and `polarweave COMMAND --help`: the texts the build stored from the program's
 * own help functions (out/cli/help.json), printed without loading the program. False when it is not such a call
 * or the file is missing; the program then answers as it always does (the same text, the same exit code).
 */
function printStoredHelp(dir, argv) {
  const [name, ...rest] = argv;
  const mainHelp = name === undefined || name === '--help' || name === '-h' || name === 'help';
  if (!mainHelp && !rest.includes('--help') && !rest.includes('-h')) return false;
  let help;
  try {
    help = JSON.parse(readFileSync(new URL('help.json', dir), 'utf8'));
  } catch {
    return false;
  }
  const text = mainHelp ? help.main : Object.hasOwn(help.commands ?? {}, name) ? help.commands[name] : undefined;
  if (typeof text !== 'string') return false;
  process.stdout.write(text + '\n');
  process.exitCode = name === undefined ? 2 : 0;
  return true;
}

const bundle = process.env.POLARWEAVE_FROM_SOURCE ? null : freshBundle();
if (!(bundle && printStoredHelp(new URL('.', bundle), process.argv.slice(2)))) {
  // imported here, not above: `--help` needs none of it
  const script = bundle && !process.env.POLARWEAVE_NO_CODE_CACHE ? (await import('./load-program.mjs')).loadProgram(fileURLToPath(new URL('main.cjs', bundle)), process.env, process.argv[2]) : null;
  const { main } = script ? script.exports : bundle ? await import(bundle.href) : await (await import('tsx/esm/api')).tsImport('../src-main/cli/main.ts', import.meta.url);
  await main();
  script?.afterRun();
}
