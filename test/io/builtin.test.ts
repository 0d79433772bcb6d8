import * as readline from 'node:readline';
import * as zlib from 'node:zlib';
import { afterEach, describe, expect, it } from 'vitest';
import { builtin } from '../../src-main/io/builtin.ts';

describe('built-in modules loaded at their first use', () => {
  const own = Object.getOwnPropertyDescriptor(process, 'getBuiltinModule');
  afterEach(() => {
    if (own) Object.defineProperty(process, 'getBuiltinModule', own);
  });

  it('gives the module a static import gives', () => {
    expect(builtin('node:zlib').gunzipSync).toBe(zlib.gunzipSync);
    expect(builtin('node:readline').createInterface).toBe(readline.createInterface);
  });

  it('gives the same module on a Node without process.getBuiltinModule (before 20.16)', () => {
    Object.defineProperty(process, 'getBuiltinModule', { value: undefined, configurable: true, writable: true });
    expect(process.getBuiltinModule).toBeUndefined();
    expect(builtin('node:zlib').gzipSync).toBe(zlib.gzipSync);
    expect(builtin('node:readline').createInterface).toBe(readline.createInterface);
  });
});
