import { resolve } from 'node:path';
import { defineConfig } from 'electron-vite';
import { svelte, vitePreprocess } from '@sveltejs/vite-plugin-svelte';

// Three bundles: the main process (computation + window), the sandboxed preload (CommonJS, since a sandboxed
// preload cannot be an ES module), and the Svelte renderer, which the browser host also serves.
export default defineConfig({
  main: {
    build: {
      outDir: 'out/main',
      rollupOptions: { input: { index: resolve(__dirname, 'src-main/shell/index.ts') } },
    },
  },
  preload: {
    build: {
      outDir: 'out/preload',
      rollupOptions: {
        input: { preload: resolve(__dirname, 'src-main/shell/preload.ts') },
        output: { format: 'cjs', entryFileNames: '[name].cjs' },
      },
    },
  },
  renderer: {
    root: resolve(__dirname, 'src-renderer'),
    build: {
      outDir: resolve(__dirname, 'out/renderer'),
      rollupOptions: { input: { index: resolve(__dirname, 'src-renderer/index.html') } },
    },
    plugins: [svelte({ configFile: false, preprocess: vitePreprocess({ script: true }) })],
  },
});
