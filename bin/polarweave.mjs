#!/usr/bin/env node
// The `polarweave` command. Runs the pre-built JavaScript in out/cli/ (scripts/build-cli.mjs, run by `npm ci`)
// when it is there and no source file it was built from has changed since; otherwise the TypeScript sources
// through tsx (an edited checkout, or an install that skipped its scripts): the same code, slower to start.
import { readFileSync, statSync } from 'node:fs';

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

const bundle = process.env.POLARWEAVE_FROM_SOURCE ? null : freshBundle();
const { main } = bundle ? await import(bundle.href) : await (await import('tsx/esm/api')).tsImport('../src-main/cli/main.ts', import.meta.url);
await main();
