// The layering of src-main and src-renderer, as a test: which room may import which, where Electron and Node
// may be used, what the window may see of the main side, no import cycles, and one file name per concept.
// The import graph is read from the source text (test/architecture/import-graph.ts). DEVELOPERS.md draws the
// same table; change both together.
import { builtinModules } from 'node:module';
import { existsSync, readFileSync } from 'node:fs';
import { basename, join } from 'node:path';
import { describe, expect, it } from 'vitest';
import { findCycles, importsInCode, readImportGraph, sourceFiles, type ImportEdge } from './import-graph.ts';

const root = join(import.meta.dirname, '../..');

type Room = 'core' | 'io' | 'jobs' | 'api' | 'app' | 'demo' | 'cli' | 'host' | 'shell' | 'renderer';

/**
 * Which rooms each room may import (besides itself). `typesFrom`: rooms it may import types from only.
 * `packages`: the npm packages it may import (prefix match; undefined = any); `node`: whether it may import
 * Node built-ins. Electron is allowed in the shell only (checked separately).
 */
const ROOMS: Record<Room, { dir: string; may: Room[]; typesFrom?: Room[]; packages?: string[]; node: boolean }> = {
  core: { dir: 'src-main/core/', may: [], packages: ['ml-matrix'], node: false },
  io: { dir: 'src-main/io/', may: ['core'], node: true },
  jobs: { dir: 'src-main/jobs/', may: ['core'], node: true },
  // The contract: types of core, and values of the shared browser-safe core files only.
  api: { dir: 'src-main/api/', may: [], typesFrom: ['core'], packages: ['zod'], node: false },
  app: { dir: 'src-main/app/', may: ['api', 'core', 'io', 'jobs'], node: true },
  demo: { dir: 'src-main/demo/', may: ['app', 'core', 'io', 'jobs'], node: true },
  cli: { dir: 'src-main/cli/', may: ['app', 'core', 'demo', 'io', 'jobs'], node: true },
  // The browser host serves the window over loopback HTTP.
  host: { dir: 'src-main/host/', may: ['api', 'app', 'core', 'io', 'jobs'], node: true },
  // The shell reuses host/csp.ts, so that both ways of showing the window send one content security policy.
  shell: { dir: 'src-main/shell/', may: ['api', 'app', 'core', 'host', 'io', 'jobs'], node: true },
  // The window: the contract's types and the shared browser-safe core files (RENDERER_MAY_SEE).
  renderer: { dir: 'src-renderer/', may: [], typesFrom: ['api'], packages: ['svelte', 'd3'], node: false },
};

/**
 * The shared, browser-safe part of core: files whose values the window and the API contract may import (everything
 * else of core only as types, through the contract). Their run-time imports must stay inside core and use no
 * package or built-in (checked below), so they run in the browser as they are.
 */
const BROWSER_SAFE_CORE = [
  // 3×3 tensor algebra and the symmetric eigensolver: the drawn ellipsoid axes and the tables' principal values
  // come from one solver.
  'src-main/core/dielectric/tensor.ts',
  // The one table of model settings (names, units, defaults, limits): the window's form and the API schema derive
  // from it.
  'src-main/core/settings-table.ts',
  // Size limits on input, shared by the readers and the API schema.
  'src-main/core/limits.ts',
  // Error figures of predicted against reference tensors: the parity chart's figures for a group of dots come
  // from the engine's own function.
  'src-main/core/learning/error-figures.ts',
  // State points and the headline figure the verdict judges: the Checks view leads with the same figure as validate.
  'src-main/core/learning/state-points.ts',
  // Learning curves: the caption that follows the slope, the same words as validate.
  'src-main/core/learning/curve-splits.ts',
  // The caveat shown beside local and per-species contributions (CLI and window, the same words).
  'src-main/core/learning/contributions.ts',
  // A value with its error bar, rounded to the digits the error bar justifies: the CLI and the window print alike.
  'src-main/core/numerics/uncertain.ts',
];

/** What the renderer may import from src-main, and how. */
const RENDERER_MAY_SEE: Record<string, 'types' | 'values'> = {
  // The one typed contract between the window and the app.
  'src-main/api/contract.ts': 'types',
  ...Object.fromEntries(BROWSER_SAFE_CORE.map((f) => [f, 'values' as const])),
};

/**
 * Breaks that another lane of issue 12 is removing; each is an exact edge, allowed until its fix lands.
 * Delete the entry when it does.
 */
const PENDING: { from: string; to: string; why: string }[] = [];
const PENDING_CYCLES: string[][] = [];

const files = sourceFiles(root, ['src-main', 'src-renderer']);
const edges = readImportGraph(root, files);

function roomOf(file: string): Room | undefined {
  return (Object.keys(ROOMS) as Room[]).find((r) => file.startsWith(ROOMS[r].dir));
}

const where = (e: ImportEdge): string => `${e.from}:${e.line} imports '${e.specifier}'`;
const isNode = (spec: string): boolean => spec.startsWith('node:') || builtinModules.includes(spec.split('/')[0]);
const packageOf = (spec: string): string => (spec.startsWith('@') ? spec.split('/').slice(0, 2).join('/') : spec.split('/')[0]);

/** Every broken rule, as one line each: `file:line imports 'x': reason`. */
function layerViolations(all: ImportEdge[]): string[] {
  const out: string[] = [];
  for (const e of all) {
    const from = roomOf(e.from);
    if (!from) continue; // reported by the "every file has a room" test
    const rule = ROOMS[from];
    if (!e.to) {
      const spec = e.specifier;
      if (packageOf(spec) === 'electron' && from !== 'shell') out.push(`${where(e)}: only src-main/shell/ imports electron`);
      else if (isNode(spec)) {
        if (!rule.node) out.push(`${where(e)}: ${from} must not use Node built-ins (it has to run in a browser)`);
      } else if (rule.packages && packageOf(spec) !== 'electron' && !rule.packages.some((p) => packageOf(spec) === p || packageOf(spec).startsWith(`${p}-`))) {
        out.push(`${where(e)}: ${from} may import only the packages ${rule.packages.join(', ')}`);
      }
      continue;
    }
    if (PENDING.some((p) => p.from === e.from && p.to === e.to)) continue;
    const to = roomOf(e.to);
    if (!to) {
      out.push(`${where(e)}: '${e.to}' lies outside every room (src-main/<room>/ or src-renderer/)`);
      continue;
    }
    if (to === from) continue;
    if (from === 'renderer') {
      const seen = RENDERER_MAY_SEE[e.to];
      if (!seen) out.push(`${where(e)}: the window may import only ${Object.keys(RENDERER_MAY_SEE).join(', ')}`);
      else if (seen === 'types' && !e.typeOnly) out.push(`${where(e)}: the window may import only types from ${e.to} (use \`import type\`)`);
      continue;
    }
    if (rule.may.includes(to)) continue;
    if (rule.typesFrom?.includes(to)) {
      if (!e.typeOnly && !(to === 'core' && BROWSER_SAFE_CORE.includes(e.to))) {
        out.push(`${where(e)}: ${from} may import only types from ${to} (use \`import type\`), or the shared browser-safe core files`);
      }
      continue;
    }
    out.push(`${where(e)}: ${from} must not import ${to} (${from} may import ${[...rule.may, ...(rule.typesFrom ?? []).map((r) => `types of ${r}`)].join(', ') || 'nothing outside itself'})`);
  }
  return out;
}

describe('the import graph reader', () => {
  it('finds every kind of import, ignores comments and strings, and tells type-only imports apart', () => {
    const code = [
      "import { a } from './a.ts';",
      "import type { B } from './b.ts';",
      "import { type C, type D } from './c.ts';",
      "import { type E, f } from './e.ts';",
      "export { g } from './g.ts';",
      "export type { H } from './h.ts';",
      "import w from './w.ts?nodeWorker';",
      "const u = new URL('./worker.ts', import.meta.url);",
      "const dataDir = new URL('../../resources/demo', import.meta.url);",
      "const m = await import('./lazy.ts');",
      "type T = import('./t.ts').T;",
      "// import { x } from './comment.ts';",
      "const s = \"import { y } from './string.ts'\";",
    ].join('\n');
    const found = importsInCode(code).map((i) => `${i.specifier}${i.typeOnly ? ' (type)' : ''} ${i.kind}:${i.line}`);
    expect(found).toEqual([
      './a.ts import:1',
      './b.ts (type) import:2',
      './c.ts (type) import:3',
      './e.ts import:4',
      './g.ts export:5',
      './h.ts (type) export:6',
      './w.ts?nodeWorker import:7',
      './worker.ts url:8',
      './lazy.ts dynamic:10',
      './t.ts (type) dynamic:11',
    ]);
  });

  it('reads the real tree, including .svelte scripts and worker entries', () => {
    expect(files.length).toBeGreaterThan(100);
    expect(files.filter((f) => f.endsWith('.svelte')).length).toBeGreaterThan(10);
    const has = (from: string, to: string): boolean => edges.some((e) => e.from === from && e.to === to);
    expect(has('src-renderer/App.svelte', 'src-renderer/lib/store.svelte.ts')).toBe(true);
    expect(edges.some((e) => e.kind === 'url' && e.to === 'src-main/app/worker.ts')).toBe(true);
    expect(edges.some((e) => e.specifier.endsWith('?nodeWorker') && e.to === 'src-main/app/worker.ts')).toBe(true);
  });
});

describe('layers', () => {
  it('every source file lies in a room', () => {
    expect(files.filter((f) => !roomOf(f))).toEqual([]);
  });

  it('the table of rooms has no cycle of its own', () => {
    const order: Room[] = [];
    const visiting = new Set<Room>();
    const visit = (r: Room, path: Room[]): void => {
      if (order.includes(r)) return;
      if (visiting.has(r)) throw new Error(`the room table loops: ${[...path, r].join(' -> ')}`);
      visiting.add(r);
      for (const s of [...ROOMS[r].may, ...(ROOMS[r].typesFrom ?? [])]) visit(s, [...path, r]);
      visiting.delete(r);
      order.push(r);
    };
    for (const r of Object.keys(ROOMS) as Room[]) visit(r, []);
    expect(order.length).toBe(Object.keys(ROOMS).length);
  });

  it('every relative import names a file that exists (worker entries included)', () => {
    const missing = edges.filter((e) => e.to && !existsSync(join(root, e.to))).map(where);
    expect(missing).toEqual([]);
  });

  it('imports point only in the allowed directions; electron only in the shell; Node not in core, api or the window', () => {
    const violations = layerViolations(edges);
    expect(violations, `Layer rules broken (the table is in test/architecture/layers.test.ts and DEVELOPERS.md):\n${violations.join('\n')}`).toEqual([]);
  });

  it('the shared browser-safe core files import, at run time, only browser-safe core files', () => {
    const closure = new Set(BROWSER_SAFE_CORE);
    const problems: string[] = [];
    for (const file of closure) {
      for (const e of edges.filter((x) => x.from === file && !x.typeOnly)) {
        if (!e.to) problems.push(`${where(e)}: shared with the window, so it may import no package or built-in`);
        else if (roomOf(e.to) !== 'core') problems.push(`${where(e)}: shared with the window, so it may import only core`);
        else closure.add(e.to);
      }
    }
    expect(problems).toEqual([]);
  });

  it('no import cycles', () => {
    const pending = (c: string[]): boolean => PENDING_CYCLES.some((p) => p.every((f) => c.includes(f)) && new Set(c).size === p.length);
    const cycles = findCycles(edges).filter((c) => !pending(c));
    expect(cycles.map((c) => c.join(' -> ')), `Import cycles (type-only imports count too):\n${cycles.map((c) => c.join(' -> ')).join('\n')}`).toEqual([]);
  });
});

describe('names', () => {
  it('one concept, one file name: no two source files share a base name', () => {
    // A WebAssembly kernel module is one concept in three files: its source (core/wasm/assembly/NAME.ts), the binary
    // compiled from it (core/wasm/generated/NAME.ts) and its typed wrapper (core/wasm/NAME.ts); the wrapper stands
    // for all three.
    const kernelForms = /^src-main\/core\/wasm\/(assembly|generated)\//;
    const all = sourceFiles(root, ['src-main', 'src-renderer']).filter((f) => !kernelForms.test(f));
    // StructureView.svelte and structure-view.ts count as the same name.
    const key = (f: string): string => basename(f).replace(/\..*$/, '').replace(/[-_]/g, '').toLowerCase();
    const byName = new Map<string, string[]>();
    for (const f of all) byName.set(key(f), [...(byName.get(key(f)) ?? []), f]);
    const shared = [...byName.values()].filter((list) => list.length > 1).map((list) => list.join(' and '));
    expect(shared).toEqual([]);
  });
});

describe('the map in DEVELOPERS.md', () => {
  const guide = readFileSync(join(root, 'DEVELOPERS.md'), 'utf8');

  it('shows the same table of rooms as this test', () => {
    const rows = new Map([...guide.matchAll(/^\| `(\w+)` \| ([^|]*) \|/gm)].map((m) => [m[1], m[2]]));
    const rooms = Object.keys(ROOMS) as Room[];
    const sorted = (xs: readonly string[] = []): string[] => [...xs].sort();
    const documented = rooms.map((room) => {
      const cell = rows.get(room) ?? '(no row)';
      const typesFrom = [...cell.matchAll(/types of (\w+)/g)].map((m) => m[1]);
      const may = cell.replace(/types of \w+/g, '').split(/[^\w]+/).filter((w) => w in ROOMS);
      return { room, may: sorted(may), typesFrom: sorted(typesFrom) };
    });
    expect(documented).toEqual(rooms.map((room) => ({ room, may: sorted(ROOMS[room].may), typesFrom: sorted(ROOMS[room].typesFrom) })));
  });

  it('names the shared browser-safe core files, and every room has a README', () => {
    expect(BROWSER_SAFE_CORE.filter((f) => !guide.includes(`\`${f.replace('src-main/', '')}\``))).toEqual([]);
    expect(Object.values(ROOMS).map((r) => `${r.dir}README.md`).filter((f) => !existsSync(join(root, f)))).toEqual([]);
  });
});
