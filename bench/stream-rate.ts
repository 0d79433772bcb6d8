// Child process of bench/prediction.bench.ts (section 3, with PW_BENCH_BASELINE): one streamed prediction
// (extended XYZ in, CSV out, worker threads) by the source tree at argv[2] (this tree, or a baseline extracted
// from git), so that the current code and a previous one run on the very same model and input, each in a fresh
// process with fresh workers. Prints one JSON line: the run's seconds (as streamPredict counts them, model
// reading included), the CPU seconds of the whole process from just before the run (every thread: the main
// thread, the workers and V8's own), and the first 16 hex digits of the SHA-256 of the CSV written (equal: the
// same bytes).
import { createHash } from 'node:crypto';
import { readFileSync } from 'node:fs';
import { pathToFileURL } from 'node:url';

const [root, modelPath, input, output, threads] = process.argv.slice(2);
const url = pathToFileURL(`${root}/src-main/app/predict/stream-predict.ts`).href;
const { streamPredict } = (await import(url)) as typeof import('../src-main/app/predict/stream-predict.ts');
const before = process.cpuUsage();
const r = await streamPredict({ modelPath, input, output, threads: Number(threads), mode: 'restart' });
const cpu = process.cpuUsage(before);
const hash = createHash('sha256').update(readFileSync(output)).digest('hex').slice(0, 16);
console.log(JSON.stringify({ seconds: r.seconds, cpuSeconds: (cpu.user + cpu.system) / 1e6, hash }));
