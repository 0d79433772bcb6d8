// The reference loop on the invented demo liquid (src-main/demo/reference-loop.ts): at the same cost in reference
// calculations, frames chosen by diversity beat random frames, and frames added by error bar beat frames added at
// random, each against the mean over 10 seeds of the random baseline. The margin (2 %) is a check of the method, not
// of the invented data's numbers: with choosing broken (e.g. the chooser ignoring its features, or error bars
// that do not track the error) the chosen sets fall to the random baseline's level and the test fails.
// Heavy: 22 trainings on 20–30 frames of 256 atoms (several minutes on two cores); the loop runs once.
import { beforeAll, describe, expect, it } from 'vitest';
import { referenceLoopNote, runReferenceLoop, type ReferenceLoopResult } from '../../src-main/demo/reference-loop.ts';

const MARGIN = 0.98;

describe('reference loop on the demo liquid', () => {
  let r: ReferenceLoopResult;
  beforeAll(async () => {
    r = await runReferenceLoop({ seeds: 10 });
  }, 1_800_000);

  it('chooses distinct frames, the error-bar ones away from the diverse ones', () => {
    expect(new Set(r.chosen.diversity).size).toBe(20);
    expect(r.chosen.errorBar.length).toBe(10);
    expect(r.chosen.errorBar.filter((i) => r.chosen.diversity.includes(i))).toEqual([]);
    expect(r.random.values.length).toBe(10);
  });

  it('20 frames by diversity: lower held-out error than the mean of 20 random frames (10 seeds)', () => {
    expect(r.diversity, referenceLoopNote(r)).toBeLessThan(MARGIN * r.random.mean);
  });

  it('+10 frames by error bar: lower held-out error than the mean of +10 random frames (10 seeds)', () => {
    expect(r.errorBar, referenceLoopNote(r)).toBeLessThan(MARGIN * r.randomMore.mean);
  });

  it('the closing note gives both comparisons with their spread', () => {
    const note = referenceLoopNote(r);
    expect(note).toMatch(/invented/);
    expect(note).toContain(`± ${r.random.sd.toExponential(2)}`);
    expect(note).toContain(`± ${r.randomMore.sd.toExponential(2)}`);
  });
});
