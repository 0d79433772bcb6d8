// The domain of a model (science notes §8): does a new frame look like the training data in the ways that change
// a polarisability? Beside the normalised feature distance (the shape of an environment, nearest-search.ts) it
// checks what a unit-normalised feature cannot see — scale:
//   - per atom, per species pair (a, b): the distance from an a atom to its nearest b atom;
//   - per atom: its neighbours within the cutoff (all species) and the scale of its neighbour density (ln of the
//     raw norm of its λ=0 power spectrum, before normalisation);
//   - per frame: the number density N/V.
// Every limit is the training data's own range. Per atom a score u: 0 at the training median, 1 at the training
// extreme (or, for the feature distance, at the 99.9 % quantile of held-out-frame distances), above 1 outside.
// A frame is flagged when its density lies beyond the training range (tolerance: 3 × the relative spread of one
// frame's mean coordination, from the spread over its atoms), when an atom is far out (u > 2: twice the training's own excursion), or
// when more atoms are out than unseen frames of the training data would show by chance (binomial 3σ from the
// rate at which new atoms beat a range set by n training atoms, 2/(n+1) per two-sided check, plus one atom).
import type { Frame } from '../geometry/frame.ts';
import type { NeighbourList } from '../geometry/neighbours.ts';
import { cellVolume } from '../geometry/cell.ts';
import type { DomainReason } from './model-types.ts';

/** Training ranges of the domain checks (stored in the model). */
export interface DomainStats {
  /** Species in model order; pairs are indexed a·S + b. */
  species: string[];
  /** The model's cutoff radius (Å). */
  cutoffRadius: number;
  /** Nearest b-neighbour distance of a atoms (Å), per pair a·S+b; NaN where training never had one within the cutoff. */
  nearest: Range;
  /** Neighbours within the cutoff, per species a. */
  count: Range;
  /** ln of the raw λ=0 norm per centre species (index of model.centres). */
  scale: Range;
  /** Number density N/V (atoms/Å³) over training frames, and the relative tolerance beyond that range. */
  density: { min: number | null; max: number | null; tolerance: number };
  /** Expected fraction of atoms of each species (model order) beyond their limits in an unseen training-like frame. */
  atomRate: number[];
  rule: string;
}

/** Training range per index (null where training had no value: JSON has no NaN). */
export interface Range {
  min: (number | null)[];
  median: (number | null)[];
  max: (number | null)[];
}

/** The range of index k as numbers (NaN where training had none). */
function at(r: Range, k: number): { min: number; median: number; max: number } {
  return { min: r.min[k] ?? NaN, median: r.median[k] ?? NaN, max: r.max[k] ?? NaN };
}

/** Collects per-atom geometry of training frames. */
export class DomainStatsBuilder {
  private readonly S: number;
  private readonly nearest: number[][];
  private readonly count: number[][];
  private readonly scale: number[][];
  private readonly density: number[] = [];
  private frames = 0;
  private atomCounts: number[];
  constructor(private readonly species: string[], private readonly centres: string[], private readonly cutoff: number) {
    this.S = species.length;
    this.nearest = Array.from({ length: this.S * this.S }, () => []);
    this.count = Array.from({ length: this.S }, () => []);
    this.scale = Array.from({ length: centres.length }, () => []);
    this.atomCounts = new Array(this.S).fill(0);
  }
  /** One training frame's values (domainFrame, computed here or in another thread); frames in training order. */
  addFrame(v: DomainFrame): void {
    this.frames++;
    for (let i = 0; i < v.speciesIndex.length; i++) {
      const a = v.speciesIndex[i];
      this.atomCounts[a]++;
      this.count[a].push(v.count[i]);
      for (let b = 0; b < this.S; b++) this.nearest[a * this.S + b].push(v.nearest[i * this.S + b]);
    }
    for (let e = 0; e < v.scaleSpecies.length; e++) this.scale[v.scaleSpecies[e]].push(v.logNorm[e]);
    if (v.density !== null) this.density.push(v.density);
  }
  build(): DomainStats {
    const S = this.S;
    // Tolerance on the number density beyond the training range: 3 × the relative spread one frame's mean
    // coordination has from its atoms alone (the frame-to-frame spread of a training set that spans several state
    // points is already in [min, max] and must not widen the tolerance further).
    const allCounts = this.count.flat();
    const atomMean = allCounts.reduce((s, v) => s + v, 0) / Math.max(1, allCounts.length);
    const sdAtoms = Math.sqrt(allCounts.reduce((s, v) => s + (v - atomMean) ** 2, 0) / Math.max(1, allCounts.length - 1));
    const perFrame = allCounts.length / Math.max(1, this.frames);
    const rel = atomMean > 0 ? sdAtoms / Math.sqrt(Math.max(1, perFrame)) / atomMean : 0;
    const checks = S + 2; // nearest per species, count, feature shape/scale
    const atomRate = this.atomCounts.map((n) => Math.min(1, (2 * checks) / (n + 1) + 0.001));
    return {
      species: [...this.species],
      cutoffRadius: this.cutoff,
      nearest: rangeOf(this.nearest),
      count: rangeOf(this.count),
      scale: rangeOf(this.scale),
      density: { min: this.density.length ? Math.min(...this.density) : null, max: this.density.length ? Math.max(...this.density) : null, tolerance: 3 * rel },
      atomRate,
      rule:
        'per atom: nearest-neighbour distance per species pair, neighbours within the cutoff and neighbour-density scale against the training range (score 1 at the training extreme), ' +
        'feature distance against the 99.9 % quantile of held-out-frame distances; per frame: number density against the training range ± 3 × the spread of the mean coordination of one frame; ' +
        'flag when the density is out, an atom scores above 2, or more atoms are out than chance allows (binomial 3σ + 1)',
    };
  }
}

function rangeOf(lists: number[][]): Range {
  const min: (number | null)[] = [];
  const median: (number | null)[] = [];
  const max: (number | null)[] = [];
  for (const l of lists) {
    if (!l.length) {
      min.push(null);
      median.push(null);
      max.push(null);
      continue;
    }
    const s = Float64Array.from(l).sort();
    min.push(s[0]);
    max.push(s[s.length - 1]);
    median.push(s[Math.floor((s.length - 1) / 2)]);
  }
  return { min, median, max };
}

/** What DomainStatsBuilder keeps of one training frame (plain data: it may come from a worker thread). */
export interface DomainFrame {
  speciesIndex: Int32Array;
  count: Int32Array;
  /** Per atom and species, the nearest distance, the cutoff when none is within it ("at least this far"). */
  nearest: Float64Array;
  /** ln of each positive raw λ=0 norm, with its centre species, in environment order. */
  scaleSpecies: Int32Array;
  logNorm: Float64Array;
  /** N/V, or null without a cell. */
  density: number | null;
}

/** One training frame's domain values: its neighbour list (built with at least the cutoff) and the raw λ=0 norms per centre. */
export function domainFrame(frame: Frame, pairs: NeighbourList, species: string[], cutoff: number, centreSpecies?: Int32Array, norms?: Float64Array): DomainFrame {
  const g = atomGeometry(frame, pairs, species, cutoff);
  // none within the cutoff counts as the cutoff: "at least this far"
  for (let k = 0; k < g.nearest.length; k++) g.nearest[k] = Math.min(g.nearest[k], cutoff);
  const scaleSpecies: number[] = [];
  const logNorm: number[] = [];
  if (norms && centreSpecies) {
    for (let e = 0; e < norms.length; e++) {
      if (norms[e] > 0) {
        scaleSpecies.push(centreSpecies[e]);
        logNorm.push(Math.log(norms[e]));
      }
    }
  }
  return { speciesIndex: g.speciesIndex, count: g.count, nearest: g.nearest, scaleSpecies: Int32Array.from(scaleSpecies), logNorm: Float64Array.from(logNorm), density: frame.cell ? frame.species.length / cellVolume(frame.cell) : null };
}

/** Per atom: nearest distance to each species (∞ when none within the cutoff) and neighbours within the cutoff. */
export function atomGeometry(frame: Frame, pairs: NeighbourList, species: string[], cutoff: number): { speciesIndex: Int32Array; nearest: Float64Array; count: Int32Array } {
  const S = species.length;
  const N = frame.species.length;
  const index = new Map(species.map((s, k) => [s, k]));
  const speciesIndex = new Int32Array(N);
  // frames list their atoms in runs of a species: look a name up only when it changes
  let last: string | undefined;
  let lastIndex = -1;
  for (let i = 0; i < N; i++) {
    const s = frame.species[i];
    if (s !== last) {
      last = s;
      lastIndex = index.get(s) ?? -1;
    }
    speciesIndex[i] = lastIndex;
  }
  const nearest = new Float64Array(N * S).fill(Infinity);
  const count = new Int32Array(N);
  const { start, distances, neighbour } = pairs;
  for (let i = 0; i < N; i++) {
    const o = i * S;
    let c = 0;
    for (let p = start[i], end = start[i + 1]; p < end; p++) {
      const d = distances[p];
      if (!(d > 0) || d >= cutoff) continue;
      c++;
      const b = speciesIndex[neighbour[p]];
      if (b >= 0 && d < nearest[o + b]) nearest[o + b] = d;
    }
    count[i] = c;
  }
  return { speciesIndex, nearest, count };
}

/** Score of a value against a training range: 0 at the median, 1 at the extreme on its side. */
function rangeScore(v: number, min: number, median: number, max: number): number {
  if (!Number.isFinite(median)) return 0;
  if (v < median) return (median - v) / Math.max(median - min, 1e-3 * Math.abs(median), 1e-9);
  return (v - median) / Math.max(max - median, 1e-3 * Math.abs(median), 1e-9);
}

/**
 * Whether an atom with domain score u lies outside the training data: beyond the training's extreme in some
 * check. The one rule for counting atoms outside and for marking them in the window.
 */
export function atomOutside(u: number): boolean {
  return u > 1;
}

/** What the domain check says about one frame. */
export interface DomainResult {
  /** Per atom score u (max over its checks; 0 inside … 1 at the training extreme). */
  atomScore: Float64Array;
  atomsOutside: number;
  fractionOutside: number;
  /** Graded per-frame score: √(mean u² + u_density²). */
  score: number;
  outside: boolean;
  reasons: DomainReason[];
}

const fmt = (x: number, d = 2) => x.toFixed(d);

/**
 * The per-atom and per-frame checks of one frame. `featureScore[i]` is the atom's normalised feature distance
 * d/θ (0 for atoms that are not centres); `norms` the raw λ=0 norms of the centres `centre` (species index of
 * model.centres in `centreSpecies`), when known.
 */
export function checkDomain(
  stats: DomainStats,
  frame: Frame,
  pairs: NeighbourList,
  featureScore: Float64Array,
  featureDetail: { distance: Float64Array; threshold: number[]; centres: string[]; centre: Int32Array; centreSpecies: Int32Array; norms?: Float64Array },
): DomainResult {
  const S = stats.species.length;
  const N = frame.species.length;
  const g = atomGeometry(frame, pairs, stats.species, stats.cutoffRadius);
  // the training ranges read below, taken once per frame (not once per atom)
  const scales = featureDetail.centres.map((_, s) => at(stats.scale, s));
  const counts = stats.species.map((_, a) => at(stats.count, a));
  const nearests = Array.from({ length: S * S }, (_, k) => at(stats.nearest, k));
  const u = Float64Array.from(featureScore);
  const worst = new Map<string, DomainReason>();
  // called only for scores that are not ≤ 1 (the callers test first, so that no key is written for atoms inside)
  const note = (key: string, score: number, atom: number | null, text: () => string) => {
    const w = worst.get(key);
    if (!w || score > w.score) worst.set(key, { key, score, atom, text: text() });
  };
  for (let e = 0; e < featureDetail.centre.length; e++) {
    const i = featureDetail.centre[e];
    const s = featureDetail.centreSpecies[e];
    const name = featureDetail.centres[s];
    if (!(featureScore[i] <= 1)) note(`${name} environment`, featureScore[i], i, () => `${name} environment ${fmt(featureDetail.distance[i], 3)} from the nearest training environment (limit ${fmt(featureDetail.threshold[s], 3)})`);
    const norm = featureDetail.norms?.[e];
    const sr = scales[s] ?? at(stats.scale, s);
    if (norm && norm > 0 && Number.isFinite(sr.median)) {
      const v = Math.log(norm);
      const us = rangeScore(v, sr.min, sr.median, sr.max);
      if (us > u[i]) u[i] = us;
      const low = v < sr.median;
      if (!(us <= 1)) note(`${name} density scale ${low ? 'low' : 'high'}`, us, i, () => `${name} neighbour density ×${fmt(Math.exp(v - sr.median))} the training median, ${low ? 'below' : 'above'} any in training (×${fmt(Math.exp((low ? sr.min : sr.max) - sr.median))})`);
    }
  }
  for (let i = 0; i < N; i++) {
    const a = g.speciesIndex[i];
    if (a < 0) continue;
    const A = stats.species[a];
    const cr = counts[a];
    const uc = rangeScore(g.count[i], cr.min, cr.median, cr.max);
    if (uc > u[i]) u[i] = uc;
    const more = g.count[i] > cr.median;
    if (!(uc <= 1)) note(`${A} neighbours ${more ? 'more' : 'fewer'}`, uc, i, () => `${A}: ${g.count[i]} neighbours within ${stats.cutoffRadius} Å, ${more ? 'more' : 'fewer'} than any in training (${more ? cr.max : cr.min})`);
    for (let b = 0; b < S; b++) {
      const k = a * S + b;
      const r = g.nearest[i * S + b];
      const B = stats.species[b];
      const nr = nearests[k];
      if (!Number.isFinite(nr.median)) continue; // no training atom of species A
      const rr = Math.min(r, stats.cutoffRadius); // none within the cutoff: at least the cutoff, as in training
      const ub = rangeScore(rr, nr.min, nr.median, nr.max);
      if (ub > u[i]) u[i] = ub;
      const shorter = rr < nr.median;
      if (!(ub <= 1)) note(`${A}–${B} ${shorter ? 'shorter' : 'longer'}`, ub, i, () =>
        nr.min >= stats.cutoffRadius
          ? `${A}–${B} ${fmt(rr)} Å: training never had ${B} within ${stats.cutoffRadius} Å of ${A}`
          : rr >= stats.cutoffRadius
            ? `${A} with no ${B} within ${stats.cutoffRadius} Å (training always had one, farthest ${fmt(nr.max)} Å)`
            : `${A}–${B} ${fmt(rr)} Å, ${shorter ? 'shorter' : 'longer'} than any in training (${fmt(shorter ? nr.min : nr.max)} Å)`,
      );
    }
  }
  let outsideAtoms = 0;
  let sum2 = 0;
  let expected = 0;
  let severe = false;
  for (let i = 0; i < N; i++) {
    if (atomOutside(u[i])) outsideAtoms++;
    if (u[i] > 2) severe = true;
    sum2 += u[i] * u[i];
    const a = g.speciesIndex[i];
    if (a >= 0) expected += stats.atomRate[a];
  }
  let uDensity = 0;
  const dmin = stats.density.min;
  const dmax = stats.density.max;
  if (frame.cell && dmin !== null && dmax !== null) {
    const rho = N / cellVolume(frame.cell);
    const dev = Math.max(0, (dmin - rho) / dmin, (rho - dmax) / dmax);
    uDensity = dev / Math.max(stats.density.tolerance, 1e-12);
    if (uDensity > 1) {
      const pct = (100 * stats.density.tolerance).toFixed(1);
      const range = dmin === dmax ? fmt(dmin, 4) : `${fmt(dmin, 4)}–${fmt(dmax, 4)}`;
      worst.set('number density', { key: rho > dmax ? 'number density higher' : 'number density lower', score: uDensity, atom: null, text: `number density ${fmt(rho, 4)} atoms/Å³, outside training ${range} (± ${pct} %)` });
    }
  }
  const allowed = expected + 3 * Math.sqrt(expected) + 1;
  const outside = uDensity > 1 || severe || outsideAtoms > allowed;
  const reasons = [...worst.values()].sort((x, y) => y.score - x.score);
  return { atomScore: u, atomsOutside: outsideAtoms, fractionOutside: N ? outsideAtoms / N : 0, score: Math.sqrt((N ? sum2 / N : 0) + uDensity * uDensity), outside, reasons };
}

/** The reasons of a frame in words (worst first, at most `limit`). */
export function reasonText(reasons: DomainReason[], limit = 3): string {
  if (!reasons.length) return '';
  const shown = reasons.slice(0, limit).map((r) => r.text);
  return shown.join('; ') + (reasons.length > limit ? `; and ${reasons.length - limit} more` : '');
}

/** Over a trajectory: for each reason key, the frames it appeared in (flagged or not) and the worst text. */
export function summariseReasons(perFrame: { frame: number; reasons: DomainReason[] }[]): { key: string; frames: number; worst: string }[] {
  const by = new Map<string, { frames: number; worst: DomainReason }>();
  for (const f of perFrame) {
    for (const r of f.reasons) {
      const b = by.get(r.key);
      if (!b) by.set(r.key, { frames: 1, worst: r });
      else {
        b.frames++;
        if (r.score > b.worst.score) b.worst = r;
      }
    }
  }
  return [...by.entries()].map(([key, v]) => ({ key, frames: v.frames, worst: v.worst.text })).sort((a, b) => b.frames - a.frames);
}

/**
 * Reasons read back from a prediction file (the `ood_reason` text of each frame, reasons joined by "; "): grouped
 * by their wording with the numbers taken out, most frequent first, with an example frame.
 */
export function summariseReasonTexts(perFrame: { frame: number; text: string }[]): { kind: string; frames: number; example: { frame: number; text: string } }[] {
  const by = new Map<string, { frames: number; example: { frame: number; text: string } }>();
  for (const f of perFrame) {
    if (!f.text) continue;
    const seen = new Set<string>();
    for (const part of f.text.split('; ')) {
      if (/^and \d+ more$/.test(part)) continue;
      const kind = part
        .replace(/\s*\([^)]*\)/g, '')
        .replace(/×?[-+]?\d+(\.\d+)?/g, '…')
        .trim();
      if (seen.has(kind)) continue;
      seen.add(kind);
      const b = by.get(kind);
      if (b) b.frames++;
      else by.set(kind, { frames: 1, example: { frame: f.frame, text: part } });
    }
  }
  return [...by.entries()].map(([kind, v]) => ({ kind, ...v })).sort((a, b) => b.frames - a.frames);
}
