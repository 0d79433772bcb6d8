// The trajectory charts' x axis: the frames' time in ps when every frame carries time_fs, else frame numbers.
import { describe, expect, it } from 'vitest';
import { framesTimePs } from '../../src-main/app/service.ts';

describe('framesTimePs', () => {
  it('turns time_fs into ps, and gives null when a frame has no time', () => {
    expect(framesTimePs([{ info: { time_fs: 0 } }, { info: { time_fs: 2500 } }])).toEqual([0, 2.5]);
    expect(framesTimePs([{ info: { time_fs: 0 } }, { info: {} }])).toBeNull();
    expect(framesTimePs([{ info: { time_fs: '5' } }])).toBeNull();
  });
});
