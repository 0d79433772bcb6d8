// `npm run bench`: runs every bench/*.bench.ts in turn (or those named on the command line, e.g.
// `npm run bench -- features`) and prints their figures. Benchmarks report; they never fail a build.
import { readdirSync } from 'node:fs';
import { cpus, totalmem } from 'node:os';
import { dirname, join } from 'node:path';
import { fileURLToPath, pathToFileURL } from 'node:url';

const here = dirname(fileURLToPath(import.meta.url));
const wanted = process.argv.slice(2);
const files = readdirSync(here)
  .filter((f) => f.endsWith('.bench.ts'))
  .filter((f) => wanted.length === 0 || wanted.some((w) => f.includes(w)))
  .sort();

console.log(`polarweave benchmarks — node ${process.version}, ${cpus().length} cores (${cpus()[0]?.model ?? 'unknown'}), ` +
  `${(totalmem() / 2 ** 30).toFixed(0)} GiB, ${new Date().toISOString()}`);
for (const f of files) {
  console.log(`\n== ${f} ==`);
  const mod = (await import(pathToFileURL(join(here, f)).href)) as { run?: () => Promise<void> };
  if (typeof mod.run !== 'function') {
    console.log(`(skipped: ${f} exports no run())`);
    continue;
  }
  const t0 = performance.now();
  await mod.run();
  console.log(`(${f} took ${((performance.now() - t0) / 1000).toFixed(1)} s)`);
}
