// Joining the outputs of `predict --shard K/N` (or of runs over adjacent `--frames` ranges) into one file, in
// frame order, streamed and written atomically. Before anything appears it checks that every shard comes from
// the same model (sha256) and the same input file, that no shard is missing or given twice, and that no frame
// is missing or doubled, naming the shard files and frame numbers in the error. The shard marks (the "frames"
// and "shard" fields of the CSV identity line, the pred_shard key of extended XYZ frames) are dropped, so the
// result has the bytes of one unsharded run over the same frames.
import { createReadStream } from 'node:fs';
import { CancelledError, InputError } from '../../core/errors.ts';
import { atomicWriteStream } from '../../io/atomic.ts';
import { builtin } from '../../io/builtin.ts';
import { fileKind } from '../../io/read-structures.ts';
import { identityLine, parseFrameStamp, parseIdentityLine, parseShardStampText, PRED_KEYS, selectionText, type Identity, type SelectionText } from '../../io/prediction/prediction-format.ts';

type Kind = 'csv' | 'extxyz';

interface ShardHead {
  file: string;
  kind: Kind;
  modelSha256: string;
  input: string;
  identity: Identity | null;
  /** CSV: the comment lines before the header row (with their '# '), and the header row. */
  comments: string[];
  columns: string | null;
  frames: SelectionText | undefined;
  shard: { k: number; n: number; of: SelectionText } | undefined;
  first: number | null;
}

export interface MergeResult {
  output: string;
  frames: number;
  shards: number;
  modelSha256: string;
}

function kindOf(file: string): Kind {
  const k = fileKind(file);
  if (k && !k.gzip && (k.kind === 'csv' || k.kind === 'extxyz')) return k.kind;
  throw new InputError('not a prediction file (.csv or .extxyz)', { file }, 'give the files that `predict --shard` wrote');
}

async function* lines(file: string, signal?: AbortSignal): AsyncGenerator<string> {
  const stream = createReadStream(file, { encoding: 'utf8', highWaterMark: 1 << 20 });
  const rl = builtin('node:readline').createInterface({ input: stream, crlfDelay: Infinity });
  try {
    for await (const l of rl) {
      if (signal?.aborted) throw new CancelledError();
      yield l;
    }
  } catch (e) {
    const code = (e as NodeJS.ErrnoException).code;
    if (code === 'ENOENT') throw new InputError('file not found', { file }, 'check the shard file names');
    throw e;
  } finally {
    rl.close();
    stream.destroy();
  }
}

const NO_STAMP = `carries no ${PRED_KEYS.frame} / ${PRED_KEYS.modelSha256} / ${PRED_KEYS.input} stamp`;

function parseShardStamp(text: string, file: string, line: number) {
  const s = parseShardStampText(text);
  if (!s) throw new InputError(`unreadable ${PRED_KEYS.shard} value "${text}"`, { file, line }, 'the file was not written by `predict --shard`, or was edited');
  return s;
}

/** Identity and first frame of a shard, from its first lines. */
async function head(file: string, signal?: AbortSignal): Promise<ShardHead> {
  const kind = kindOf(file);
  let n = 0;
  if (kind === 'csv') {
    let identity: Identity | null = null;
    let columns: string | null = null;
    const comments: string[] = [];
    const done = (first: number | null): ShardHead => {
      if (!identity) throw new InputError('no identity line (# Identity: model …; model sha256 …; input …)', { file }, 'merge joins files written by `polarweave predict`');
      if (columns === null) throw new InputError('the file has no header row', { file }, 'the shard is incomplete; predict it again');
      return { file, kind, modelSha256: identity.modelSha256, input: `${identity.inputName}:${identity.inputBytes}`, identity, comments, columns, frames: identity.frames, shard: identity.shard, first };
    };
    for await (const l of lines(file, signal)) {
      n++;
      if (columns === null && l.startsWith('#')) {
        comments.push(l);
        identity ??= parseIdentityLine(l);
        continue;
      }
      if (columns === null) {
        columns = l;
        continue;
      }
      return done(Number(l.split(',', 1)[0]));
    }
    return done(null);
  }
  for await (const l of lines(file, signal)) {
    n++;
    if (n === 2) {
      const m = parseFrameStamp(l);
      if (!m) throw new InputError(`frame 0 of the file ${NO_STAMP}`, { file, line: 2 }, 'merge joins files written by `polarweave predict`');
      const s = m.shardText !== null ? parseShardStamp(m.shardText, file, 2) : undefined;
      return { file, kind, modelSha256: m.modelSha256, input: m.input, identity: null, comments: [], columns: null, frames: s?.frames, shard: s ? { k: s.k, n: s.n, of: s.of } : undefined, first: m.frame };
    }
  }
  // an empty extended XYZ shard (no frames): nothing to check but its name
  return { file, kind, modelSha256: '', input: '', identity: null, comments: [], columns: null, frames: undefined, shard: undefined, first: null };
}

function range(a: number, b: number, step: number): string {
  return a === b ? `frame ${a}` : `frames ${a}…${b}${step !== 1 ? ` (every ${step})` : ''}`;
}

function shardRange(of: SelectionText, k: number, n: number): string {
  if (of.stop === null) return '';
  const count = of.stop > of.start ? Math.ceil((of.stop - of.start) / of.step) : 0;
  const j0 = Math.floor(((k - 1) * count) / n);
  const j1 = Math.floor((k * count) / n);
  if (j1 <= j0) return ' (no frames)';
  return ` (${range(of.start + j0 * of.step, of.start + (j1 - 1) * of.step, of.step)})`;
}

/** Check the shards against each other; returns them in frame order and the frame step. */
function plan(heads: ShardHead[]): { order: ShardHead[]; step: number | null } {
  const withFrames = heads.filter((h) => h.modelSha256 !== '');
  const ref = withFrames[0];
  if (!ref) return { order: heads, step: null };
  for (const h of withFrames) {
    if (h.kind !== ref.kind) throw new InputError(`${h.file} is ${h.kind} but ${ref.file} is ${ref.kind}`, { file: h.file }, 'merge shards of one output format');
    if (h.modelSha256 !== ref.modelSha256) {
      throw new InputError(`${h.file} and ${ref.file} come from different models (sha256 ${h.modelSha256.slice(0, 12)}… and ${ref.modelSha256.slice(0, 12)}…)`, { file: h.file }, 'predict every shard with the same model file');
    }
    if (h.input !== ref.input) throw new InputError(`${h.file} and ${ref.file} come from different input files (${h.input} and ${ref.input})`, { file: h.file }, 'predict every shard from the same trajectory');
    if (h.columns !== ref.columns) throw new InputError(`${h.file} and ${ref.file} have different columns`, { file: h.file }, 'predict every shard with the same model and options');
  }
  // shard numbering
  const sharded = withFrames.filter((h) => h.shard);
  if (sharded.length > 0) {
    const s0 = sharded[0].shard!;
    const byK = new Map<number, ShardHead>();
    for (const h of heads) {
      const s = h.shard;
      if (!s) {
        if (h.modelSha256 === '') continue;
        throw new InputError(`${h.file} is not a --shard output but ${sharded[0].file} is`, { file: h.file }, 'merge the outputs of one sharded run');
      }
      if (s.n !== s0.n || selectionText(s.of) !== selectionText(s0.of)) {
        throw new InputError(`${h.file} is shard ${s.k}/${s.n} of frames ${selectionText(s.of)}, but ${sharded[0].file} is ${s0.k}/${s0.n} of frames ${selectionText(s0.of)}`, { file: h.file }, 'merge the outputs of one sharded run');
      }
      const twin = byK.get(s.k);
      if (twin) throw new InputError(`shard ${s.k}/${s.n} is given twice: ${twin.file} and ${h.file}`, { file: h.file }, 'give each shard once');
      byK.set(s.k, h);
    }
    const missing: string[] = [];
    for (let k = 1; k <= s0.n; k++) if (!byK.has(k)) missing.push(`${k}/${s0.n}${shardRange(s0.of, k, s0.n)}`);
    if (missing.length > 0) throw new InputError(`shard${missing.length > 1 ? 's' : ''} ${missing.join(', ')} ${missing.length > 1 ? 'are' : 'is'} missing`, {}, 'run the missing shard(s) with `predict --shard K/N`, then merge again');
  }
  const steps = new Set(withFrames.map((h) => h.frames?.step ?? h.shard?.of.step).filter((s): s is number => s !== undefined));
  if (steps.size > 1) throw new InputError(`the shards use different frame strides (${[...steps].join(', ')})`, {}, 'predict every shard with the same --stride');
  const order = [...heads].sort((a, b) => (a.first ?? a.frames?.start ?? Infinity) - (b.first ?? b.frames?.start ?? Infinity) || (a.shard?.k ?? 0) - (b.shard?.k ?? 0));
  return { order, step: steps.size === 1 ? [...steps][0] : null };
}

/** Join shard files into `output` (CSV or extended XYZ, as the shards are). */
export async function mergeShards(files: string[], output: string, signal?: AbortSignal): Promise<MergeResult> {
  if (files.length === 0) throw new InputError('no shard files given', {}, 'list the shard outputs to join');
  const outKind = kindOf(output);
  const heads: ShardHead[] = [];
  for (const f of files) heads.push(await head(f, signal));
  for (const h of heads) if (h.kind !== outKind) throw new InputError(`${h.file} is ${h.kind}, the output ${output} would be ${outKind}`, { file: h.file }, 'give the output the shards’ extension');
  const { order, step: knownStep } = plan(heads);
  const ref = order.find((h) => h.modelSha256 !== '');
  const out = atomicWriteStream(output);
  let step = knownStep;
  let prev: { file: string; last: number } | null = null;
  let count = 0;
  const check = (file: string, frame: number, line: number, last: number | null) => {
    if (last === null) {
      if (prev !== null && step !== null) {
        const expected = prev.last + step;
        if (frame > expected) throw new InputError(`${range(expected, frame - step, step)} ${expected === frame - step ? 'is' : 'are'} missing between ${prev.file} and ${file}`, { file, line }, 'predict the missing frames (a missing or incomplete shard), then merge again');
        if (frame < expected) throw new InputError(`${range(frame, prev.last, step)} ${frame === prev.last ? 'is' : 'are'} in both ${prev.file} and ${file}`, { file, line }, 'the shards overlap: give each frame range once');
      } else if (prev !== null && step === null) {
        if (frame <= prev.last) throw new InputError(`frame ${frame} is in both ${prev.file} and ${file}`, { file, line }, 'the shards overlap: give each frame range once');
        step = frame - prev.last;
      }
      return;
    }
    if (step === null) step = frame - last;
    if (frame === last) throw new InputError(`frame ${frame} appears twice`, { file, line }, 'the shard file is damaged; predict it again');
    if (frame !== last + step) {
      if (frame < last) throw new InputError(`frame ${frame} comes after frame ${last}: frames out of order`, { file, line }, 'the shard file is damaged; predict it again');
      throw new InputError(`${range(last + step, frame - step, step)} ${last + step === frame - step ? 'is' : 'are'} missing inside the shard`, { file, line }, 'the shard is incomplete or damaged; predict it again');
    }
  };
  try {
    if (outKind === 'csv' && ref?.identity) {
      const id: Identity = { ...ref.identity, frames: undefined, shard: undefined };
      const of = ref.identity.shard?.of;
      if (of && (of.start !== 0 || of.step !== 1)) id.frames = of;
      const idText = identityLine(id).replace(/\n$/, '');
      await out.write(ref.comments.map((c) => (parseIdentityLine(c) ? idText : c) + '\n').join('') + (ref.columns as string) + '\n');
    }
    for (const h of order) {
      let last: number | null = null;
      let first: number | null = null;
      let n = 0;
      if (h.kind === 'csv') {
        let pastHeader = false;
        for await (const l of lines(h.file, signal)) {
          n++;
          if (!pastHeader && l.startsWith('#')) continue;
          if (!pastHeader) {
            pastHeader = true;
            continue;
          }
          if (l === '') continue;
          const frame = Number(l.split(',', 1)[0]);
          if (!Number.isInteger(frame)) throw new InputError(`no frame number at the start of the row`, { file: h.file, line: n }, 'the shard file is damaged; predict it again');
          check(h.file, frame, n, last);
          if (first === null) first = frame;
          last = frame;
          count++;
          await out.write(l + '\n');
        }
      } else {
        let atomsLeft = -1; // -1: at a count line; 0: at the comment line; >0: atom lines to copy
        let frameAtoms = 0;
        for await (const l of lines(h.file, signal)) {
          n++;
          if (atomsLeft === -1) {
            if (l.trim() === '') continue;
            if (!/^\s*\d+\s*$/.test(l)) throw new InputError(`expected the atom count of a frame, found '${l.slice(0, 40)}'`, { file: h.file, line: n }, 'the shard file is damaged; predict it again');
            frameAtoms = Number(l);
            atomsLeft = 0;
            await out.write(l + '\n');
            continue;
          }
          if (atomsLeft === 0) {
            const m = parseFrameStamp(l);
            if (!m) throw new InputError(`the frame ${NO_STAMP}`, { file: h.file, line: n }, 'merge joins files written by `polarweave predict`');
            if (m.modelSha256 !== ref?.modelSha256) throw new InputError(`a frame comes from another model (sha256 ${m.modelSha256.slice(0, 12)}…)`, { file: h.file, line: n }, 'predict every shard with the same model file');
            const frame = m.frame;
            check(h.file, frame, n, last);
            if (first === null) first = frame;
            last = frame;
            count++;
            await out.write((m.shardField ? l.slice(0, l.length - m.shardField.length) : l) + '\n');
            atomsLeft = frameAtoms;
            if (atomsLeft === 0) atomsLeft = -1;
            continue;
          }
          await out.write(l + '\n');
          if (--atomsLeft === 0) atomsLeft = -1;
        }
        if (atomsLeft !== -1) throw new InputError('the file ends inside a frame', { file: h.file, line: n }, 'the shard is incomplete; predict it again');
      }
      if (h.frames) {
        const f = h.frames;
        const st = f.step;
        const lastWanted = f.stop === null ? null : f.stop > f.start ? f.start + Math.floor((f.stop - 1 - f.start) / st) * st : null;
        if (first === null && lastWanted !== null) throw new InputError(`${h.file} holds no frames but should hold ${range(f.start, lastWanted, st)}`, { file: h.file }, 'the shard is incomplete; predict it again');
        if (first !== null && first !== f.start) throw new InputError(`${h.file} should start at frame ${f.start} but starts at frame ${first}`, { file: h.file }, 'the shard is damaged; predict it again');
        if (last !== null && lastWanted !== null && last < lastWanted) {
          throw new InputError(`${h.file} ends at frame ${last}: ${range(last + st, lastWanted, st)} ${last + st === lastWanted ? 'is' : 'are'} missing (the shard is incomplete)`, { file: h.file }, 'predict the shard again');
        }
      }
      if (last !== null) prev = { file: h.file, last };
    }
    await out.commit();
  } catch (e) {
    await out.abort();
    throw e;
  }
  return { output, frames: count, shards: files.length, modelSha256: ref?.modelSha256 ?? '' };
}
