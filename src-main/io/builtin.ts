// Node built-in modules that only some runs use (gzip, reading lines), loaded at their first use rather than at
// every start of the command: each costs a few milliseconds to load, which one predicted frame would pay for nothing.
import { createRequire } from 'node:module';

/** The built-in modules loaded so. */
interface LazyBuiltins {
  'node:zlib': typeof import('node:zlib');
  'node:readline': typeof import('node:readline');
}

/** The built-in module `id`, loaded now if no one has loaded it yet (process.getBuiltinModule from Node 20.16). */
export function builtin<ID extends keyof LazyBuiltins>(id: ID): LazyBuiltins[ID] {
  return (process.getBuiltinModule?.(id) ?? createRequire(import.meta.url)(id)) as LazyBuiltins[ID];
}
