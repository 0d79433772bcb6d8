// Streaming, parallel, resumable prediction over an extended XYZ trajectory of any length.
//
// The main thread cuts selected frames out of the file as raw bytes (io/frame-slices.ts), groups them in
// batches and hands the batches to a JobRunner ('predict-chunk' task, at most `threads` at once, one batch read
// ahead). The runner keeps its workers between batches, so loading the code is paid once per thread, not once
// per batch, and batches can be short (about `batchSeconds`, 5 s) for frequent progress. The model is read once,
// in the main thread, and the workers read its arrays from shared memory (shared-model.ts).
// Results are appended to OUT.partial strictly in frame order. After each batch the partial file is fsynced
// and OUT.checkpoint.json is written atomically with the model checksum, the input file's size and mtime, the
// selection, the frames done, the bytes of OUT.partial that hold them and the input position (byte offset,
// frame index, line) to go on from. A restart with the same arguments truncates OUT.partial to those bytes and
// continues; when all frames are done OUT.partial is renamed to OUT (atomic) and the checkpoint removed. The
// output depends only on the model, the input and the selection, never on the batch sizes, the thread count,
// worker reuse or the interruptions, so a resumed run gives the same bytes as a clean one.
import { addToSums, emptySums, isSetSums, summaryOfSums, type SetSummary, type SetSums } from '../../core/learning/set-summary.ts';
import { promises as fsp } from 'node:fs';
import { availableParallelism } from 'node:os';
import { basename, dirname, resolve } from 'node:path';
import { CancelledError, InputError } from '../../core/errors.ts';
import { indexExtxyz, type FrameRange } from '../../io/extxyz.ts';
import { syncFolder, writeError, writeFileAtomic } from '../../io/atomic.ts';
import { isGzipFile } from '../../io/gzip.ts';
import { readError } from '../../io/whole-file.ts';
import { frameSlices, type FrameSlice, type SlicePosition } from '../../io/frame-slices.ts';
import { predictionCsvHeader, selectionText, shardStampText, type Identity, type SelectionText, type TensorCsvOptions } from '../../io/prediction/prediction-format.ts';
import type { Frame } from '../../core/geometry/frame.ts';
import type { PredictFormat } from './predict-frame.ts';
import { parseFrameBytes, predictFrames, type PredictChunkInput, type PredictChunkOutput } from './predict-tasks.ts';
import { csvLayoutOf, firstFrameOf, loadModelFile, predictOutputFormat, rangeSelection, type LoadedModel } from './prediction.ts';
import { sharedModel } from './shared-model.ts';
import { JobRunner, type WorkerFactory } from '../../jobs/runner.ts';
import { tsWorkerFactory } from '../../jobs/spawn-ts.ts';

export const CHECKPOINT_FORMAT = 'polarweave-predict-checkpoint';

/**
 * Default compute time of one batch. Workers are kept between batches, so a batch costs only its messages, an
 * fsync and a checkpoint (milliseconds): 5 s keeps that well under 1 % while progress and the first results
 * come often (see bench/trajectory.bench.ts for the measured effect of batch size and worker reuse).
 */
export const DEFAULT_BATCH_SECONDS = 5;

/**
 * A whole selection of at most this many bytes (about ten 384-atom frames, well under a second of compute) that
 * fits in the first batch is predicted in the calling thread: starting a worker, loading the code again there
 * and warming it up would cost more than the work (bench/startup.bench.ts). Same code, same bytes out.
 */
export const IN_PROCESS_BYTES = 256 << 10;

/** The least compute of a batch near the end of a run (ms), when batches shrink so that the threads end together. */
const MIN_BATCH_MS = 100;

/**
 * The most frames the batch being filled may take: `batchSize` (about batchSeconds of compute), but near the end
 * only its share of what is left, (frames in it + frames left) / (2 · threads), so that the threads finish together
 * instead of one working through a last long batch while the others wait; never fewer frames than about
 * MIN_BATCH_MS of compute at `perFrameMs`. `left`: the frames of the selection not yet read (an estimate; null:
 * unknown, then batchSize).
 */
export function shareOfWhatIsLeft(batchSize: number, inBatch: number, left: number | null, threads: number, perFrameMs: number): number {
  if (left === null) return batchSize;
  const least = Math.max(1, Math.round(MIN_BATCH_MS / Math.max(perFrameMs, 1e-3)));
  return Math.max(1, Math.min(batchSize, Math.max(least, Math.ceil((inBatch + left) / (2 * threads)))));
}

export interface StreamProgress {
  /** Frames written so far (including those of an earlier, interrupted run). */
  done: number;
  /** Frames written by this run. */
  doneThisRun: number;
  /** Frames the selection holds, when known (shards, or an index). */
  total: number | null;
  /** 0…1, from frames when the total is known, else from the bytes read of a plain file; null if unknown. */
  fraction: number | null;
  framesPerSecond: number;
  /** Estimated seconds left; null when no fraction is known yet. */
  secondsLeft: number | null;
  resumedFrom: number;
}

export interface StreamPredictOptions {
  modelPath: string;
  /** The model, already read from modelPath (read here when not given): a process reads its model once. */
  model?: LoadedModel;
  input: string;
  output: string;
  /** Frames start, start+step, … below stop. */
  range?: FrameRange;
  /** Part k (1-based) of n equal parts of the selected frames. */
  shard?: { k: number; n: number };
  /** Worker threads (default: the number of cores). */
  threads?: number;
  /** auto: continue a matching checkpoint if there is one; resume: insist on one; restart: ignore it. */
  mode?: 'auto' | 'resume' | 'restart';
  /** Fixed frames per batch (default: adapted so that a batch takes about `batchSeconds`). */
  batchFrames?: number;
  /** Target compute time of one batch in a worker (default 5 s). */
  batchSeconds?: number;
  /** Keep workers for the next batches (default true); false starts a fresh worker per batch (for comparison). */
  reuseWorkers?: boolean;
  /** Hand the workers this process's model in shared memory (default true); false: each reads the file (for comparison). */
  shareModel?: boolean;
  /** Predict a selection of at most this many bytes that fits in one batch in this thread (default IN_PROCESS_BYTES; 0: always in workers). */
  inProcessBytes?: number;
  signal?: AbortSignal;
  onProgress?: (p: StreamProgress) => void;
  /** Worker factory (default: tsx-loaded app/predict/predict-worker.ts). */
  spawn?: WorkerFactory;
  /** Model path as shown in the CSV identity line (default: modelPath). */
  modelLabel?: string;
  /** CSV layout for a tensor model (default: predictionCsvOptions of the model and its label). */
  csvOptions?: TensorCsvOptions;
}

export interface StreamPredictResult {
  output: string;
  format: PredictFormat;
  frames: number;
  /** Frames written by this run. */
  framesThisRun: number;
  resumedFrom: number;
  outside: number;
  /** Mean ε, n and Δn of all the frames written (this run and the one it continued), with error bars; null for vector and scalar models. */
  summary: SetSummary | null;
  seconds: number;
  threads: number;
  modelSha256: string;
  selection: SelectionText;
}

interface Checkpoint {
  format: typeof CHECKPOINT_FORMAT;
  version: 1;
  modelSha256: string;
  input: { path: string; size: number; mtimeMs: number };
  outputFormat: PredictFormat;
  selection: SelectionText;
  shard: { k: number; n: number } | null;
  framesDone: number;
  outside: number;
  /** Set-summary sums of the frames done (absent in checkpoints written before they were kept). */
  sums?: SetSums | null;
  partialBytes: number;
  next: SlicePosition;
}

export function checkpointPaths(output: string): { partial: string; checkpoint: string } {
  return { partial: `${output}.partial`, checkpoint: `${output}.checkpoint.json` };
}

async function readCheckpoint(path: string): Promise<Checkpoint | null> {
  let text: string;
  try {
    text = await fsp.readFile(path, 'utf8');
  } catch {
    return null;
  }
  try {
    const c = JSON.parse(text) as Checkpoint;
    if (c.format !== CHECKPOINT_FORMAT || c.version !== 1) return null;
    return c;
  } catch {
    throw new InputError('the checkpoint file is damaged', { file: path }, 'start again with --restart (the frames done so far are predicted again)');
  }
}

function sameSelection(a: SelectionText, b: SelectionText): boolean {
  return a.start === b.start && a.stop === b.stop && a.step === b.step;
}

/** Why a checkpoint does not belong to this run (null when it does). */
function mismatch(c: Checkpoint, want: Omit<Checkpoint, 'framesDone' | 'outside' | 'partialBytes' | 'next' | 'format' | 'version'>): string | null {
  if (c.modelSha256 !== want.modelSha256) return 'it was made with another model file';
  if (c.input.size !== want.input.size || c.input.mtimeMs !== want.input.mtimeMs) return 'the input file changed since (size or modification time)';
  if (basename(c.input.path) !== basename(want.input.path)) return `it is for input ${c.input.path}`;
  if (c.outputFormat !== want.outputFormat) return 'it is for another output format';
  if (!sameSelection(c.selection, want.selection)) return `it is for frames ${selectionText(c.selection)}`;
  if ((c.shard?.k ?? 0) !== (want.shard?.k ?? 0) || (c.shard?.n ?? 0) !== (want.shard?.n ?? 0)) return 'it is for another shard';
  return null;
}

/** Resolve --shard k/n into a concrete frame range, using an index of the file (frame count and offsets). */
async function resolveShard(input: string, range: FrameRange, shard: { k: number; n: number }, signal?: AbortSignal) {
  const index = await indexExtxyz(input, { signal });
  const start = range.start ?? 0;
  const step = range.step ?? 1;
  const stop = Math.min(range.stop ?? index.frames, index.frames);
  const count = stop > start ? Math.ceil((stop - start) / step) : 0;
  const j0 = Math.floor(((shard.k - 1) * count) / shard.n);
  const j1 = Math.floor((shard.k * count) / shard.n);
  const a = start + j0 * step;
  const b = j1 > j0 ? start + (j1 - 1) * step + 1 : a;
  const from: SlicePosition = a < index.frames ? { offset: index.offsets[a], index: a, line: index.lines[a] } : { offset: index.offsets[index.frames], index: index.frames, line: 1 };
  return { part: { start: a, stop: b, step }, whole: { start, stop, step }, count: j1 - j0, from, compressed: index.compressed };
}

function format1(x: number): string {
  return x.toFixed(1);
}

/** "1 h 02 min", "3 min 20 s", "12 s". */
export function formatDuration(seconds: number): string {
  const s = Math.max(0, Math.round(seconds));
  if (s >= 3600) return `${Math.floor(s / 3600)} h ${String(Math.floor((s % 3600) / 60)).padStart(2, '0')} min`;
  if (s >= 60) return `${Math.floor(s / 60)} min ${String(s % 60).padStart(2, '0')} s`;
  return `${s} s`;
}

export function progressLine(p: StreamProgress): string {
  const pct = p.fraction !== null ? ` (${format1(100 * p.fraction)} %)` : '';
  const of = p.total !== null ? ` of ${p.total}` : '';
  const left = p.secondsLeft !== null ? `, about ${formatDuration(p.secondsLeft)} left` : '';
  return `${p.done}${of} frames${pct}, ${format1(p.framesPerSecond)} frames/s${left}`;
}

export async function streamPredict(opts: StreamPredictOptions): Promise<StreamPredictResult> {
  const format = predictOutputFormat(opts.output);
  const threads = Math.max(1, opts.threads ?? availableParallelism());
  const signal = opts.signal;
  const started = Date.now();
  const { partial, checkpoint: ckPath } = checkpointPaths(opts.output);

  // model: checksum of its bytes identifies it in the checkpoint, the CSV header and every worker
  const loaded = opts.model ?? (await loadModelFile(opts.modelPath, opts.modelLabel ?? opts.modelPath));
  const { model, sha256: modelSha256 } = loaded;
  predictOutputFormat(opts.output, model);

  let stat;
  try {
    stat = await fsp.stat(opts.input);
    if (stat.isDirectory()) throw Object.assign(new Error('folder'), { code: 'EISDIR' });
  } catch (e) {
    throw readError(opts.input, e);
  }
  const range = opts.range ?? {};
  const step = range.step ?? 1;
  let selection: SelectionText = { start: range.start ?? 0, stop: range.stop ?? null, step };
  let from: SlicePosition = { offset: 0, index: 0, line: 1 };
  let total: number | null = null;
  let shardOf: SelectionText | undefined;
  if (opts.shard) {
    const { k, n } = opts.shard;
    if (!Number.isInteger(n) || n < 1 || !Number.isInteger(k) || k < 1 || k > n) throw new InputError(`bad shard ${k}/${n}`, {}, 'give --shard K/N with 1 ≤ K ≤ N');
    const r = await resolveShard(opts.input, range, opts.shard, signal);
    selection = r.part;
    shardOf = r.whole;
    total = r.count;
    from = r.from;
  }
  const identity: Identity = {
    modelPath: opts.modelLabel ?? loaded.label,
    modelSha256,
    inputName: basename(opts.input),
    inputBytes: stat.size,
    frames: opts.shard ? selection : rangeSelection(range),
    shard: opts.shard && shardOf ? { ...opts.shard, of: shardOf } : undefined,
  };
  const stamp = {
    modelSha256,
    input: `${identity.inputName}:${stat.size}`,
    shard: opts.shard && shardOf ? shardStampText(opts.shard.k, opts.shard.n, selection, shardOf) : undefined,
  };
  const want = {
    modelSha256,
    input: { path: resolve(opts.input), size: stat.size, mtimeMs: stat.mtimeMs },
    outputFormat: format,
    selection,
    shard: opts.shard ?? null,
  };

  // resume or start fresh
  const mode = opts.mode ?? 'auto';
  let ck = mode === 'restart' ? null : await readCheckpoint(ckPath);
  if (ck) {
    const why = mismatch(ck, want);
    if (why) throw new InputError(`a checkpoint of an earlier run (input ${ck.input.path}, ${ck.framesDone} frames done) is here, but ${why}`, { file: ckPath }, 'run with --restart to start again (or use another output name)');
    const size = (await fsp.stat(partial).catch(() => null))?.size ?? -1;
    if (size < ck.partialBytes) throw new InputError(`the partial output holds ${Math.max(size, 0)} bytes, the checkpoint expects ${ck.partialBytes}`, { file: partial }, 'run with --restart to start again');
  } else if (mode === 'resume') {
    throw new InputError('no checkpoint to resume from', { file: ckPath }, 'run without --resume to start');
  }
  const resumedFrom = ck?.framesDone ?? 0;
  let framesDone = resumedFrom;
  let outside = ck?.outside ?? 0;
  // a checkpoint without sums (older, or damaged there) leaves the summary out rather than giving one of part of the frames
  let sums: SetSums | null = ck ? (ck.framesDone === 0 ? null : isSetSums(ck.sums) ? ck.sums : null) : null;
  const sumsKnown = !ck || ck.framesDone === 0 || isSetSums(ck.sums);
  let partialBytes = ck?.partialBytes ?? 0;
  if (ck) from = ck.next;

  const stop = selection.stop;
  const decide = (k: number) => (stop !== null && k >= stop ? 'stop' : k < selection.start || (k - selection.start) % step !== 0 ? 'skip' : 'take') as 'take' | 'skip' | 'stop';
  const slices = frameSlices(opts.input, from, decide, signal);
  let batchSize = opts.batchFrames ?? 4 * threads;
  // The first slices, read before any file is made: a whole selection that fits in one small batch, with no run
  // to continue, is predicted here (no worker) and written at once (writeFileAtomic), without the partial file and
  // checkpoints a long run keeps; the same bytes, fewer flushes to disk.
  const head: { slices: FrameSlice[]; bytes: number; ended: boolean } = { slices: [], bytes: 0, ended: false };
  const inProcessBytes = opts.inProcessBytes ?? IN_PROCESS_BYTES;
  if (!ck && inProcessBytes > 0) {
    try {
      while (head.slices.length < batchSize && head.bytes <= inProcessBytes) {
        const n = await slices.next();
        if (n.done) {
          head.ended = true;
          break;
        }
        head.slices.push(n.value);
        head.bytes += n.value.bytes?.length ?? 0;
        if (signal?.aborted) throw new CancelledError();
      }
    } catch (e) {
      if (signal?.aborted && !(e instanceof InputError)) throw new CancelledError();
      throw e;
    }
  }
  // the CSV layout, from the selection's first frame: parsed from the slices just read when they begin with it
  // (no checkpoint, no shard: they start at the file's beginning), else read from the file. A frame parsed here is
  // predicted as it is when the selection is predicted in this thread (below), not parsed a second time.
  const first = !ck && !opts.shard ? head.slices.find((x) => x.bytes) : undefined;
  let firstParsed: Frame | undefined;
  const firstFrame = async () => {
    if (!first) return firstFrameOf(opts.input, opts.range, signal);
    try {
      return (firstParsed = parseFrameBytes(opts.input, first.index, first.line, first.bytes as Buffer));
    } catch {
      return null; // the run itself says why
    }
  };
  const csvOptions = opts.csvOptions ?? (format === 'csv' ? csvLayoutOf(loaded, await firstFrame()) : undefined);
  const headFrames = head.slices
    .filter((x) => x.bytes)
    .map((x) => ({ index: x.index, line: x.line, bytes: new Uint8Array((x.bytes as Buffer).buffer, (x.bytes as Buffer).byteOffset, (x.bytes as Buffer).byteLength), parsed: x === first ? firstParsed : undefined }));
  if (head.ended && headFrames.length > 0 && headFrames.length < batchSize && head.bytes <= inProcessBytes) {
    const r = predictFrames(model, loaded.predict, { file: opts.input, format, stamp, frames: headFrames, csvOptions }, { signal: signal ?? new AbortController().signal, progress: () => {} });
    if (signal?.aborted) throw new CancelledError();
    const text = (format === 'csv' ? predictionCsvHeader(model, identity, csvOptions) : '') + r.text;
    await writeFileAtomic(opts.output, text);
    // what an earlier, restarted run left: gone, as at the end of a run through the partial file
    await Promise.all([fsp.rm(partial, { force: true }), fsp.rm(ckPath, { force: true })]);
    let oneSums: SetSums | null = null;
    for (const f of r.set) if (f) oneSums = addToSums(oneSums ?? emptySums(), f);
    framesDone = r.index.length;
    outside = r.outside.filter(Boolean).length;
    opts.onProgress?.({ done: framesDone, doneThisRun: framesDone, total, fraction: 1, framesPerSecond: framesDone / Math.max((Date.now() - started) / 1000, 1e-9), secondsLeft: 0, resumedFrom: 0 });
    return { output: opts.output, format, frames: framesDone, framesThisRun: framesDone, resumedFrom: 0, outside, summary: oneSums ? summaryOfSums(oneSums) : null, seconds: (Date.now() - started) / 1000, threads, modelSha256, selection };
  }

  const fh = await fsp.open(partial, ck ? 'r+' : 'w').catch(async (e: unknown) => {
    await slices.return(undefined).catch(() => undefined);
    throw writeError(opts.output, e);
  });
  let runner: JobRunner | null = null;
  /** Batches submitted and not yet written out, by sequence number; `done` once the batch's result (or error) came. */
  const inFlight = new Map<number, { promise: Promise<PredictChunkOutput>; next: SlicePosition; frames: number; done: boolean }>();
  try {
    if (ck) await fh.truncate(ck.partialBytes);
    else if (format === 'csv') {
      const head = Buffer.from(predictionCsvHeader(model, identity, csvOptions), 'utf8');
      await fh.write(head, 0, head.length, 0);
      partialBytes = head.length;
    }
    const writeCheckpoint = async (next: SlicePosition) => {
      const c: Checkpoint = { format: CHECKPOINT_FORMAT, version: 1, ...want, framesDone, outside, sums: sumsKnown ? sums : null, partialBytes, next };
      await writeFileAtomic(ckPath, JSON.stringify(c, null, 1) + '\n');
    };
    if (!ck) {
      await fh.sync();
      await writeCheckpoint(from);
    }

    // the workers predict with this process's model (read once), its arrays shared, not with copies of their own
    const shared = opts.shareModel === false ? undefined : sharedModel(model);
    // 'predict-chunk' leaves only its model cache behind, keyed on path and checksum: safe to reuse workers
    runner = new JobRunner({
      spawn: opts.spawn ?? tsWorkerFactory(new URL('./predict-worker.ts', import.meta.url)),
      concurrency: threads,
      graceMs: 500,
      reuseWorkers: opts.reuseWorkers ?? true,
    });
    const targetMs = 1000 * (opts.batchSeconds ?? DEFAULT_BATCH_SECONDS);
    let seq = 0;
    let written = 0;
    let lastOffset = from.offset;
    const fileBytes = stat.size;
    const compressed = !!(await isGzipFile(opts.input));
    const report = () => {
      if (!opts.onProgress) return;
      const secs = (Date.now() - started) / 1000;
      const doneThisRun = framesDone - resumedFrom;
      let fraction: number | null = null;
      let startFraction = 0;
      if (total !== null) {
        fraction = total === 0 ? 1 : framesDone / total;
        startFraction = total === 0 ? 0 : resumedFrom / total;
      } else if (!compressed && fileBytes > 0) {
        fraction = Math.min(1, lastOffset / fileBytes);
        startFraction = Math.min(1, (ck?.next.offset ?? 0) / fileBytes);
      }
      const gained = fraction !== null ? fraction - startFraction : 0;
      const secondsLeft = fraction !== null && gained > 0 ? (secs * (1 - fraction)) / gained : null;
      opts.onProgress({ done: framesDone, doneThisRun, total, fraction, framesPerSecond: secs > 0 ? doneThisRun / secs : 0, secondsLeft, resumedFrom });
    };

    const drainOne = async () => {
      const entry = inFlight.get(written);
      if (!entry) return;
      const r = await entry.promise;
      inFlight.delete(written);
      written++;
      const buf = Buffer.from(r.text, 'utf8');
      let off = 0;
      while (off < buf.length) {
        const { bytesWritten } = await fh.write(buf, off, buf.length - off, partialBytes + off);
        off += bytesWritten;
      }
      partialBytes += buf.length;
      framesDone += r.index.length;
      for (const o of r.outside) if (o) outside++;
      // frame by frame, in order: the same sums, bit for bit, whatever the batches, threads or interruptions
      for (const f of r.set) if (f) sums = addToSums(sums ?? emptySums(), f);
      await fh.sync();
      lastOffset = entry.next.offset;
      await writeCheckpoint(entry.next);
      if (opts.batchFrames === undefined && entry.frames > 0) {
        // size batches by the workers' own compute time per frame (worker start-up excluded), so that one batch
        // takes about batchSeconds: the per-batch cost (messages, fsync, checkpoint) is then a small share
        perFrameMs = Math.max(r.computeMs / entry.frames, 0.01);
        batchSize = Math.max(1, Math.min(5000, Math.round(targetMs / perFrameMs)));
      }
      report();
    };

    // batches running or waiting for a thread, and the wake-up of the reading loop when one of them ends
    let unfinished = 0;
    let wake: (() => void) | null = null;
    const track = (promise: Promise<PredictChunkOutput>, next: SlicePosition, frames: number) => {
      const entry = { promise, next, frames, done: false };
      unfinished++;
      const ended = () => {
        entry.done = true;
        unfinished--;
        wake?.();
        wake = null;
      };
      promise.then(ended, ended); // awaited (errors included) in order by drainOne
      inFlight.set(seq++, entry);
    };
    const submit = (frames: PredictChunkInput['frames'], next: SlicePosition) => {
      const input: PredictChunkInput = { modelPath: resolve(opts.modelPath), modelSha256, model: shared, file: opts.input, format, stamp, frames, csvOptions };
      track((runner as JobRunner).run<PredictChunkOutput>('predict-chunk', input, { signal }), next, frames.length);
    };
    /** Writes out, in frame order, the batches whose results are in (stops at the first still running). */
    const drainDone = async () => {
      while (!signal?.aborted && inFlight.get(written)?.done) await drainOne();
    };

    // Near the end, smaller batches (shareOfWhatIsLeft). What is left is known from a shard's count, else estimated
    // from the selection's stop and, in a plain file, from the bytes left at the bytes per frame taken so far
    // (skipped frames included). The output does not depend on it.
    let perFrameMs = 0;
    let taken = 0;
    const framesLeft = (at: SlicePosition): number | null => {
      let left = total !== null ? total - resumedFrom - taken : Infinity;
      if (stop !== null) left = Math.min(left, Math.ceil(Math.max(0, stop - Math.max(at.index, selection.start)) / step));
      if (!compressed && fileBytes > 0 && taken > 0 && at.offset > from.offset) left = Math.min(left, ((fileBytes - at.offset) * taken) / (at.offset - from.offset));
      return Number.isFinite(left) ? Math.max(0, left) : null;
    };
    // fixed batches, or the first ones (4 per thread, before any time per frame is known): as they are
    const batchLimit = (at: SlicePosition, inBatch: number): number =>
      opts.batchFrames !== undefined || perFrameMs === 0 ? batchSize : shareOfWhatIsLeft(batchSize, inBatch, framesLeft(at), threads, perFrameMs);

    let batch: PredictChunkInput['frames'] = [];
    let batchBytes = 0;
    let pos = from;
    // the slices read above first, then the rest of the file
    for await (const s of (async function* () {
      yield* head.slices;
      if (!head.ended) yield* slices;
    })()) {
      pos = s.next;
      if (s.bytes) {
        batch.push({ index: s.index, line: s.line, bytes: new Uint8Array(s.bytes.buffer, s.bytes.byteOffset, s.bytes.byteLength) });
        batchBytes += s.bytes.length;
        taken++;
      }
      if (batch.length > 0 && (batch.length >= batchLimit(pos, batch.length) || batchBytes > 16 << 20)) {
        submit(batch, pos);
        batch = [];
        batchBytes = 0;
        // Up to one batch running and one waiting per thread, so that a thread that ends a batch finds the next:
        // results are written out in frame order as they become writable, and the next batch is read as soon as
        // any batch ends (not only the oldest: a long batch must not hold back the threads that finish short
        // ones). Results waiting for an earlier batch are bounded too (8 batches per thread).
        await drainDone();
        while (unfinished >= 2 * threads || inFlight.size >= 8 * threads) {
          if (signal?.aborted) throw new CancelledError();
          if (unfinished >= 2 * threads) await new Promise<void>((r) => (wake = r));
          else await drainOne();
          await drainDone();
        }
      }
      if (signal?.aborted) throw new CancelledError();
    }
    if (batch.length > 0 && seq === 0 && batchBytes <= inProcessBytes) {
      // the whole selection in one small batch: here, with this process's model and predictor
      const input = { file: opts.input, format, stamp, frames: batch, csvOptions };
      track(Promise.resolve().then(() => predictFrames(model, loaded.predict, input, { signal: signal ?? new AbortController().signal, progress: () => {} })), pos, batch.length);
    } else if (batch.length > 0) submit(batch, pos);
    while (inFlight.size > 0) {
      if (signal?.aborted) throw new CancelledError();
      await drainOne();
    }
    if (signal?.aborted) throw new CancelledError();

    await fh.sync();
    await fh.close();
    await fsp.rename(partial, opts.output);
    await fsp.rm(ckPath, { force: true });
    await syncFolder(dirname(resolve(opts.output)));
    return { output: opts.output, format, frames: framesDone, framesThisRun: framesDone - resumedFrom, resumedFrom, outside, summary: sumsKnown && sums ? summaryOfSums(sums) : null, seconds: (Date.now() - started) / 1000, threads, modelSha256, selection };
  } catch (e) {
    runner?.cancelAll();
    await Promise.allSettled([...inFlight.values()].map((x) => x.promise));
    await fh.close().catch(() => undefined);
    // stopped or refused before anything worth keeping: leave nothing behind
    if (framesDone === 0 && !ck) await Promise.all([fsp.rm(partial, { force: true }), fsp.rm(ckPath, { force: true })]);
    if (signal?.aborted && !(e instanceof InputError)) throw new CancelledError();
    // a full disk, a folder removed meanwhile…: a plain message naming the output; the frames done are kept
    if (typeof (e as NodeJS.ErrnoException)?.code !== 'string' || e instanceof InputError) throw e;
    const w = writeError(opts.output, e);
    const full = (e as NodeJS.ErrnoException).code === 'ENOSPC' || (e as NodeJS.ErrnoException).code === 'EDQUOT';
    const kept = framesDone > 0 || ck !== null;
    throw w instanceof InputError && full && kept ? new InputError(w.problem, w.where, 'free some space, then run the same command again: it continues from the checkpoint') : w;
  } finally {
    // the file reader, when it stopped early (an error)
    await slices.return(undefined).catch(() => undefined);
    // idle workers are unref'd and would not hold the process, but they hold memory (the model): free them now
    await runner?.close();
  }
}
