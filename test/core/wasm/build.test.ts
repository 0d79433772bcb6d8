// The committed WebAssembly binaries are what their AssemblyScript sources compile to (pinned compiler), and every
// source has its generated module and its typed wrapper.
import { execFileSync } from 'node:child_process';
import { createHash } from 'node:crypto';
import { existsSync, readdirSync, readFileSync } from 'node:fs';
import { join } from 'node:path';
import { describe, expect, it } from 'vitest';

const root = join(import.meta.dirname, '../../..');
const wasmDir = join(root, 'src-main/core/wasm');

describe('WebAssembly kernels build', () => {
  const sources = readdirSync(join(wasmDir, 'assembly')).filter((f) => f.endsWith('.ts') && !f.startsWith('_'));

  it('each kernel source has its generated binary (with the source hash) and its wrapper', async () => {
    expect(sources.length).toBeGreaterThan(0);
    for (const f of sources) {
      const gen = join(wasmDir, 'generated', f);
      expect(existsSync(gen), `${f}: run npm run build:wasm`).toBe(true);
      expect(existsSync(join(wasmDir, f)), `${f}: a typed wrapper core/wasm/${f}`).toBe(true);
      const sha = createHash('sha256').update(readFileSync(join(wasmDir, 'assembly', f))).digest('hex');
      const mod = (await import(gen)) as { SOURCE_SHA256: string; WASM_BASE64: string };
      expect(mod.SOURCE_SHA256, `${f} changed since its binary was built: run npm run build:wasm`).toBe(sha);
      expect(WebAssembly.validate(Buffer.from(mod.WASM_BASE64, 'base64'))).toBe(true);
    }
  });

  it('the committed binaries are byte for byte what the sources compile to', () => {
    // exits 1 and names the module when any differs
    execFileSync(process.execPath, [join(root, 'scripts/build-wasm.mjs'), '--check'], { cwd: root, stdio: 'pipe' });
  }, 120_000);
});
