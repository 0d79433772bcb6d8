// The kernel loader's background compile (core/wasm/load.ts compileAhead): a module compiled ahead is the one the
// first use instantiates; a module the engine refuses, or kernels switched off, leave the first use as it was.
import { afterEach, describe, expect, it } from 'vitest';
import { WASM_BASE64 as DESCRIPTORS } from '../../../src-main/core/wasm/generated/descriptors.ts';
import { WASM_BASE64 as NEIGHBOURS } from '../../../src-main/core/wasm/generated/neighbour-search.ts';
import { compileAhead, kernelModule, setWebAssemblyKernels } from '../../../src-main/core/wasm/load.ts';

afterEach(() => setWebAssemblyKernels(true));

describe('compileAhead', () => {
  it('the first use instantiates the module compiled ahead under that name', async () => {
    // compiled ahead from other bytes than the first use names: the first use must take the one compiled ahead
    await compileAhead('ahead-test-a', DESCRIPTORS);
    const m = kernelModule('ahead-test-a', NEIGHBOURS);
    expect(m).not.toBeNull();
    expect(typeof m!.exports.pairTerms).toBe('function');
    expect(m!.exports.pairs).toBeUndefined();
    // without a compile ahead, the first use compiles its own bytes
    expect(typeof kernelModule('ahead-test-b', NEIGHBOURS)!.exports.pairs).toBe('function');
  });

  it('bytes the engine refuses leave the first use to refuse them too (null: the JavaScript path)', async () => {
    const junk = Buffer.from('not a WebAssembly module').toString('base64');
    await compileAhead('ahead-test-c', junk);
    expect(kernelModule('ahead-test-c', junk)).toBeNull();
  });

  it('does nothing while the kernels are off', async () => {
    setWebAssemblyKernels(false);
    await compileAhead('ahead-test-d', DESCRIPTORS);
    expect(kernelModule('ahead-test-d', NEIGHBOURS)).toBeNull();
    setWebAssemblyKernels(true);
    expect(typeof kernelModule('ahead-test-d', NEIGHBOURS)!.exports.pairs).toBe('function');
  });
});
