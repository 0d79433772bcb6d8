// The out-of-domain check (core/learning/domain.ts, science notes §8): it must fire where a prediction is at risk
// and stay quiet at the training state point.
//   - the real DFT water sample (test/fixtures/water-dft-sample.extxyz): 4 folds, a model of 6 frames, its 2
//     unseen frames as they are, and compressed / expanded uniformly by 5 % in length;
//   - the demo liquid (resources/demo, invented): a model of the even frames of state point liquid-B, the odd
//     frames unseen, the same frames ±5 % in length, and frames of the 270 K trajectory (the same state point);
//   - the demo crystal predicted by a liquid model (every fourth liquid frame, all three state points): the per-frame score must rank the frames by their actual error
//     (Spearman rank correlation > 0);
//   - the rule itself on hand-made training ranges: one borderline atom does not flag a frame, a far one does.
import { beforeAll, describe, expect, it } from 'vitest';
import { join } from 'node:path';
import type { Frame } from '../../../src-main/core/geometry/frame.ts';
import { predictFrame, trainModel, type Model } from '../../../src-main/core/learning/model.ts';
import { checkDomain, reasonText, summariseReasons, type DomainStats } from '../../../src-main/core/learning/domain.ts';
import { neighbourList } from '../../../src-main/core/geometry/neighbours.ts';
import { readAllStructures } from '../../../src-main/io/read-structures.ts';
import { waterFrames } from '../../helpers/trajectory.ts';

const scaled = (f: Frame, s: number): Frame => ({ ...f, positions: f.positions.map((x) => s * x), cell: f.cell!.map((x) => s * x) });
const flagged = (model: Model, frames: Frame[]) => frames.filter((f) => predictFrame(model, f).applicability.outside).length;
const demo = (name: string) => join(__dirname, '../../../resources/demo', name);

describe('out-of-domain check on the real DFT water sample', () => {
  it('quiet on unseen frames, fires on every frame compressed or expanded by 5 % in length', async () => {
    const w = waterFrames();
    let unseen = 0;
    let unseenFlagged = 0;
    let changed = 0;
    let changedFlagged = 0;
    for (let k = 0; k < 4; k++) {
      const test = [w[2 * k], w[2 * k + 1]];
      const model = await trainModel(w.filter((_, i) => i !== 2 * k && i !== 2 * k + 1), { tensorKey: 'eps_inf', kind: 'eps', route: 'cm' });
      unseen += test.length;
      unseenFlagged += flagged(model, test);
      const squeezed = test.flatMap((f) => [scaled(f, 0.95), scaled(f, 1.05)]);
      changed += squeezed.length;
      changedFlagged += flagged(model, squeezed);
      if (k === 0) {
        const a = predictFrame(model, scaled(test[0], 0.95)).applicability;
        // the reason names the number density and the shortened bonds in words
        expect(a.reasons.map((r) => r.key)).toContain('number density higher');
        expect(reasonText(a.reasons, 20)).toMatch(/O–H 0\.95 Å, shorter than any in training \(1\.00 Å\)/);
      }
    }
    console.log(`DFT: unseen frames flagged ${unseenFlagged}/${unseen}; ±5 % frames flagged ${changedFlagged}/${changed}`);
    expect(unseenFlagged / unseen).toBeLessThanOrEqual(0.1);
    expect(changedFlagged / changed).toBeGreaterThanOrEqual(0.9);
  }, 120_000);
});

describe('out-of-domain check on the demo liquid and crystal', () => {
  let liquid: Frame[];
  let model: Model;
  beforeAll(async () => {
    liquid = (await readAllStructures(demo('liquid.extxyz.gz'))).filter((f) => f.info.state_point === 'liquid-B');
    model = await trainModel(liquid.filter((_, i) => i % 2 === 0), { tensorKey: 'eps_ref', kind: 'eps', route: 'cm', settings: { radialFunctions: 4, angularOrder: 3 } });
  }, 180_000);

  it('quiet on unseen frames of the state point, fires on ±5 % in length', async () => {
    const unseen = liquid.filter((_, i) => i % 2 === 1);
    const traj = (await readAllStructures(demo('liquid-trajectory.extxyz.gz'))).filter((_, i) => i % 20 === 0);
    const a = flagged(model, unseen);
    const b = flagged(model, traj);
    const c = flagged(model, unseen.flatMap((f) => [scaled(f, 0.95), scaled(f, 1.05)]));
    console.log(`demo liquid-B: unseen frames flagged ${a}/${unseen.length}; trajectory frames (270 K) ${b}/${traj.length}; ±5 % frames ${c}/${2 * unseen.length}`);
    expect(a / unseen.length).toBeLessThanOrEqual(0.1);
    expect(b / traj.length).toBeLessThanOrEqual(0.1);
    expect(c / (2 * unseen.length)).toBeGreaterThanOrEqual(0.9);
  }, 180_000);

  it('on the crystal, the per-frame score ranks frames by their actual error (Spearman > 0)', async () => {
    const crystal = await readAllStructures(demo('crystal.extxyz.gz'));
    const all = await readAllStructures(demo('liquid.extxyz.gz'));
    const liquidModel = await trainModel(all.filter((_, i) => i % 4 === 0), { tensorKey: 'eps_ref', kind: 'eps', route: 'cm', settings: { radialFunctions: 4, angularOrder: 3 } });
    const score: number[] = [];
    const error: number[] = [];
    const perFrame: { frame: number; reasons: ReturnType<typeof predictFrame>['applicability']['reasons'] }[] = [];
    crystal.forEach((f, i) => {
      const p = predictFrame(liquidModel, f);
      const ref = f.info.eps_ref as number[];
      error.push(Math.hypot(...Array.from(p.eps, (v, q) => v - ref[q])));
      score.push(p.applicability.score);
      perFrame.push({ frame: i, reasons: p.applicability.reasons });
    });
    const rho = spearman(score, error);
    const summary = summariseReasons(perFrame);
    console.log(`demo crystal (${crystal.length} frames) by a model of every fourth liquid frame: Spearman(score, |Δε|) = ${rho.toFixed(3)}; reasons: ${summary.slice(0, 3).map((s) => `${s.key} in ${s.frames} frames`).join(', ')}`);
    expect(rho).toBeGreaterThan(0);
    expect(summary.length).toBeGreaterThan(0);
  }, 300_000);
});

function spearman(a: number[], b: number[]): number {
  const rank = (v: number[]) => {
    const r = new Array<number>(v.length);
    v.map((x, i) => [x, i] as const).sort((p, q) => p[0] - q[0]).forEach(([, i], k) => (r[i] = k));
    return r;
  };
  const ra = rank(a);
  const rb = rank(b);
  const m = (a.length - 1) / 2;
  let s = 0;
  let sa = 0;
  let sb = 0;
  for (let i = 0; i < a.length; i++) {
    s += (ra[i] - m) * (rb[i] - m);
    sa += (ra[i] - m) ** 2;
    sb += (rb[i] - m) ** 2;
  }
  return s / Math.sqrt(sa * sb);
}

describe('the flag rule on hand-made training ranges', () => {
  // a line of 40 atoms of one species 2 Å apart in a periodic box: each has 2 neighbours within 3 Å at 2 Å
  const N = 40;
  const line = (shift: (i: number) => number): Frame => ({
    species: Array(N).fill('X'),
    positions: Float64Array.from({ length: 3 * N }, (_, k) => (k % 3 === 0 ? 2 * Math.floor(k / 3) + shift(Math.floor(k / 3)) : 5)),
    cell: Float64Array.of(2 * N, 0, 0, 0, 10, 0, 0, 0, 10),
    pbc: [true, true, true],
    info: {},
    arrays: {},
  }) as unknown as Frame;
  const stats: DomainStats = {
    species: ['X'],
    cutoffRadius: 3,
    nearest: { min: [1.9], median: [2.0], max: [2.1] },
    count: { min: [2], median: [2], max: [2] },
    scale: { min: [], median: [], max: [] },
    density: { min: N / (2 * N * 100), max: N / (2 * N * 100), tolerance: 0.02 },
    atomRate: [0.01],
    rule: 'test',
  };
  const run = (f: Frame) => checkDomain(stats, f, neighbourList(f, 3), new Float64Array(N), { distance: new Float64Array(N), threshold: [1], centres: [], centre: new Int32Array(0), centreSpecies: new Int32Array(0) });

  it('stays quiet for one borderline atom, fires for one far out, or for many just out', () => {
    expect(run(line(() => 0)).outside).toBe(false);
    // one atom moved by 0.12 Å: its nearest distance 1.88 Å, just below the training minimum (u = 1.2)
    const one = run(line((i) => (i === 7 ? 0.12 : 0)));
    expect(one.atomsOutside).toBeGreaterThan(0);
    expect(one.outside).toBe(false);
    expect(reasonText(one.reasons)).toMatch(/X–X 1\.88 Å, shorter than any in training \(1\.90 Å\)/);
    // one atom moved by 0.4 Å: 1.60 Å, four times the training's own excursion below the median
    expect(run(line((i) => (i === 7 ? 0.4 : 0))).outside).toBe(true);
    // every fourth atom just out: many more atoms out than chance allows
    const many = run(line((i) => (i % 4 === 0 ? 0.12 : 0)));
    expect(many.reasons[0].score).toBeLessThan(2);
    expect(many.outside).toBe(true);
    // uniformly compressed by 1 % in length: density 3 % higher, beyond the 2 % tolerance
    const dense = run(scaled(line(() => 0), 0.99));
    expect(dense.outside).toBe(true);
    expect(dense.reasons.some((r) => r.key === 'number density higher')).toBe(true);
  });
});
