// Choosing which frames of a long run deserve a reference calculation, in bounded memory.
//
// Frames arrive one at a time (a trajectory is streamed) with their frame-level feature vector
// (core/descriptors/frame-features.ts), a time, and, when a model judged them, a score. A CandidatePool keeps at
// most `capacity` of them, whatever the trajectory's length:
// - 'spread' pools (no model) keep every `thin`-th arrival; when full, `thin` doubles and every other kept frame
//   is dropped, so the kept frames always cover the whole run evenly;
// - 'score' pools keep the highest scores seen: when full, the lower half is dropped and later frames must beat
//   the lowest score kept.
// Then:
// - chooseDiverse: farthest-point sampling — start from the frame farthest from the mean (or, when frames are
//   already known, from the one farthest from them), then repeatedly take the frame farthest from everything
//   taken or known;
// - chooseHighest: the highest scores first.
// Both skip frames closer in time than `minGap` to a frame taken, and frames closer in feature space than
// `duplicate` to a frame taken or known (near duplicates), and may so return fewer than asked.
import { rowDistance } from '../learning/sparse.ts';

export type PoolPolicy = 'spread' | 'score';

export interface Candidate {
  /** Frame number in its file (0-based). */
  frame: number;
  /** Time (fs), or NaN when unknown. */
  time: number;
  score: number;
}

export class CandidatePool {
  readonly dim: number;
  readonly capacity: number;
  readonly policy: PoolPolicy;
  /** Spread pools: one arrival in this many is kept (1 until the pool first fills). */
  thin = 1;
  /** Score pools: a frame needs more than this score to be kept (−∞ until the pool first fills). */
  floor = -Infinity;
  /** Frames offered so far. */
  arrivals = 0;
  count = 0;
  private features: Float64Array;
  private meta: Candidate[] = [];
  private arrival: number[] = [];

  constructor(dim: number, capacity: number, policy: PoolPolicy) {
    if (!Number.isInteger(dim) || dim < 1) throw new RangeError(`CandidatePool: dim must be a positive integer, got ${dim}`);
    if (!Number.isInteger(capacity) || capacity < 2) throw new RangeError(`CandidatePool: capacity must be an integer ≥ 2, got ${capacity}`);
    this.dim = dim;
    this.capacity = capacity;
    this.policy = policy;
    this.features = new Float64Array(dim * capacity);
  }

  /** Whether the next arrival would be kept (spread pools: callers may skip computing its features if not). */
  wantsNext(): boolean {
    return this.policy === 'score' || this.arrivals % this.thin === 0;
  }

  /** Offer a frame; returns whether it was kept. Score pools need a finite score. */
  offer(c: Candidate, feature: ArrayLike<number>): boolean {
    if (feature.length !== this.dim) throw new RangeError(`CandidatePool: feature of length ${feature.length}, expected ${this.dim}`);
    const k = this.arrivals++;
    if (this.policy === 'spread') {
      if (k % this.thin !== 0) return false;
      if (this.count === this.capacity) {
        this.thin *= 2;
        this.compact((i) => this.arrival[i] % this.thin === 0);
        if (k % this.thin !== 0) return false;
      }
    } else {
      if (!Number.isFinite(c.score)) throw new RangeError(`CandidatePool: frame ${c.frame} has no finite score`);
      if (!(c.score > this.floor)) return false;
      if (this.count === this.capacity) {
        const scores = this.meta.map((m) => m.score).sort((a, b) => b - a);
        this.floor = scores[Math.floor(this.capacity / 2) - 1];
        const floor = this.floor;
        // keep at most capacity/2: the scores above the floor, and as many equal to it as fit
        let room = Math.floor(this.capacity / 2) - scores.filter((s) => s > floor).length;
        this.compact((i) => this.meta[i].score > floor || (this.meta[i].score === floor && room-- > 0));
        if (!(c.score > this.floor)) return false;
      }
    }
    this.features.set(feature, this.count * this.dim);
    this.meta.push({ ...c });
    this.arrival.push(k);
    this.count++;
    return true;
  }

  private compact(keep: (i: number) => boolean): void {
    let w = 0;
    const meta: Candidate[] = [];
    const arrival: number[] = [];
    for (let i = 0; i < this.count; i++) {
      if (!keep(i)) continue;
      if (w !== i) this.features.copyWithin(w * this.dim, i * this.dim, (i + 1) * this.dim);
      meta.push(this.meta[i]);
      arrival.push(this.arrival[i]);
      w++;
    }
    this.meta = meta;
    this.arrival = arrival;
    this.count = w;
  }

  candidate(i: number): Candidate {
    return this.meta[i];
  }

  /** The kept features, row i at i·dim (a view; valid until the next offer). */
  rows(): Float64Array {
    return this.features.subarray(0, this.count * this.dim);
  }
}

/** Root-mean-square distance of rows from their mean: the scale that duplicate thresholds are given against. */
export function featureSpread(rows: Float64Array, dim: number): number {
  const n = rows.length / dim;
  if (n === 0) return 0;
  const mean = new Float64Array(dim);
  for (let i = 0; i < n; i++) for (let f = 0; f < dim; f++) mean[f] += rows[i * dim + f] / n;
  let s = 0;
  for (let i = 0; i < n; i++) s += rowDistance(rows, i, mean, 0, dim) ** 2;
  return Math.sqrt(s / n);
}

export interface ChoiceRules {
  /** Frames closer in time than this (fs) to a frame taken are skipped (0: no rule). Needs known times. */
  minGap: number;
  /** Frames closer than this in feature space to a frame taken or known are near duplicates and skipped. */
  duplicate: number;
  /** Feature rows of frames already computed (e.g. the training set), row-major, `dim` each. */
  known?: Float64Array;
}

/** Why fewer frames were chosen than asked (null when all were found). */
export type ShortReason = 'pool' | 'gap' | 'duplicate' | null;

export interface Choice {
  /** Pool indices, in the order chosen. */
  chosen: number[];
  /** Per chosen frame: its distance to the nearest frame taken before it or known (∞ for the first, unknown). */
  distance: number[];
  short: ShortReason;
}

function nearestKnown(pool: CandidatePool, known: Float64Array | undefined): Float64Array {
  const rows = pool.rows();
  const out = new Float64Array(pool.count).fill(Infinity);
  if (!known) return out;
  const m = known.length / pool.dim;
  for (let i = 0; i < pool.count; i++) for (let j = 0; j < m; j++) out[i] = Math.min(out[i], rowDistance(rows, i, known, j, pool.dim));
  return out;
}

function tooClose(pool: CandidatePool, i: number, chosen: number[], minGap: number): boolean {
  if (!(minGap > 0)) return false;
  const t = pool.candidate(i).time;
  return chosen.some((j) => Math.abs(pool.candidate(j).time - t) < minGap);
}

/** Farthest-point sampling of up to k pool frames under the rules (deterministic). */
export function chooseDiverse(pool: CandidatePool, k: number, rules: ChoiceRules): Choice {
  const n = pool.count;
  const rows = pool.rows();
  const dim = pool.dim;
  const dist = nearestKnown(pool, rules.known);
  const excluded = new Uint8Array(n);
  const chosen: number[] = [];
  const distance: number[] = [];
  let short: ShortReason = null;
  if (!rules.known || rules.known.length === 0) {
    // no known frames: start from the frame farthest from the mean (as sparse.ts's sampling does)
    const mean = new Float64Array(dim);
    for (let i = 0; i < n; i++) for (let f = 0; f < dim; f++) mean[f] += rows[i * dim + f] / n;
    dist.fill(0);
    for (let i = 0; i < n; i++) dist[i] = rowDistance(rows, i, mean, 0, dim);
    let first = -1;
    for (let i = 0; i < n; i++) if (first < 0 || dist[i] > dist[first]) first = i;
    if (first >= 0 && k > 0) {
      chosen.push(first);
      distance.push(Infinity);
      excluded[first] = 1;
      dist.fill(Infinity);
      for (let i = 0; i < n; i++) if (!excluded[i]) dist[i] = rowDistance(rows, i, rows, first, dim);
    }
  }
  while (chosen.length < k) {
    let best = -1;
    let sawGap = false;
    for (let i = 0; i < n; i++) {
      if (excluded[i]) continue;
      if (tooClose(pool, i, chosen, rules.minGap)) {
        sawGap = true;
        continue;
      }
      if (best < 0 || dist[i] > dist[best]) best = i;
    }
    if (best < 0) {
      short = sawGap ? 'gap' : 'pool';
      break;
    }
    if (!(dist[best] >= rules.duplicate) || dist[best] === 0) {
      short = 'duplicate';
      break;
    }
    chosen.push(best);
    distance.push(dist[best]);
    excluded[best] = 1;
    for (let i = 0; i < n; i++) if (!excluded[i]) dist[i] = Math.min(dist[i], rowDistance(rows, i, rows, best, dim));
  }
  return { chosen, distance, short };
}

/** Up to k pool frames of the highest score under the rules (ties: earlier frame first). */
export function chooseHighest(pool: CandidatePool, k: number, rules: ChoiceRules): Choice {
  const n = pool.count;
  const rows = pool.rows();
  const order = Array.from({ length: n }, (_, i) => i).sort((a, b) => pool.candidate(b).score - pool.candidate(a).score || pool.candidate(a).frame - pool.candidate(b).frame);
  const known = nearestKnown(pool, rules.known);
  const chosen: number[] = [];
  const distance: number[] = [];
  let skippedGap = false;
  let skippedDuplicate = false;
  for (const i of order) {
    if (chosen.length >= k) break;
    if (tooClose(pool, i, chosen, rules.minGap)) {
      skippedGap = true;
      continue;
    }
    let d = known[i];
    for (const j of chosen) d = Math.min(d, rowDistance(rows, i, rows, j, pool.dim));
    if (d < rules.duplicate || d === 0) {
      skippedDuplicate = true;
      continue;
    }
    chosen.push(i);
    distance.push(d);
  }
  const short: ShortReason = chosen.length >= k ? null : skippedDuplicate ? 'duplicate' : skippedGap ? 'gap' : 'pool';
  return { chosen, distance, short };
}
