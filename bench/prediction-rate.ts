// Child process of bench/prediction.bench.ts: the in-process prediction rate of the source tree at argv[2] (this
// tree, or a baseline extracted from git) on a model given as a structured-clone file (argv[3]), so that the
// current code and a previous one are timed on the very same model. Prints one JSON line: environments per
// CPU-second (best of the passes) and a hash of the full-precision predictions (equal hashes: identical output).
// 12 passes by default: in a fresh process the WebAssembly kernels start on V8's baseline tier and are compiled
// optimised in the background, which on a loaded machine can take several passes (a pass then runs 2k → 10k env/s).
import { createHash } from 'node:crypto';
import { readFileSync } from 'node:fs';
import { deserialize } from 'node:v8';
import { pathToFileURL } from 'node:url';

const [root, modelFile, passes = '12'] = process.argv.slice(2);
const url = (p: string) => pathToFileURL(`${root}/${p}`).href;
const { modelPredictor } = (await import(url('src-main/core/learning/model.ts'))) as typeof import('../src-main/core/learning/model.ts');
const { waterLikeFrames } = (await import(url('bench/water-like.ts'))) as typeof import('./water-like.ts');
const model = deserialize(readFileSync(modelFile));
const frames = waterLikeFrames(8, 99);
const predict = modelPredictor(model);
predict(frames[0], 0); // warm-up (tables, JIT, the search's preparation)
const cpuMs = () => {
  const c = process.cpuUsage();
  return (c.user + c.system) / 1000;
};
const envs = frames.reduce((s, f) => s + f.species.length, 0);
const hash = createHash('sha256');
let best = 0;
for (let r = 0; r < Number(passes); r++) {
  const c0 = cpuMs();
  const out = frames.map((f, i) => predict(f, i));
  best = Math.max(best, (envs / (cpuMs() - c0)) * 1000);
  if (r === 0) {
    for (const p of out) {
      const a = p.applicability;
      hash.update(JSON.stringify([Array.from(p.irreducible), Array.from(p.localIrreducible), Array.from(a.atomDistance), Array.from(a.atomScore), a.score, a.variance, a.outside, p.uncertainty ? Array.from(p.uncertainty.sd) : null]));
    }
  }
}
console.log(JSON.stringify({ rate: best, hash: hash.digest('hex').slice(0, 16) }));
