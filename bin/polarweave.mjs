#!/usr/bin/env node
// The `polarweave` command. Runs the TypeScript sources through tsx, so no build step is needed.
import { tsImport } from 'tsx/esm/api';

const { main } = await tsImport('../src-main/cli/main.ts', import.meta.url);
await main();
