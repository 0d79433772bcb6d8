// The nesting depth skips strings with indexOf (fast on model files); it must count exactly as a plain
// character-by-character scan does, on any text: escapes, unclosed strings, brackets inside strings.
import fc from 'fast-check';
import { describe, expect, it } from 'vitest';
import { jsonNestingDepth } from '../../src-main/io/json-depth.ts';

/** The plain scan (the code before strings were skipped with indexOf), kept as the reference. */
function plainDepth(text: string): number {
  let depth = 0;
  let deepest = 0;
  for (let i = 0; i < text.length; i++) {
    const c = text[i];
    if (c === '"') {
      for (i++; i < text.length; i++) {
        if (text[i] === '\\') i++;
        else if (text[i] === '"') break;
      }
    } else if (c === '[' || c === '{') deepest = Math.max(deepest, ++depth);
    else if (c === ']' || c === '}') depth--;
  }
  return deepest;
}

describe('jsonNestingDepth', () => {
  it('equals the plain scan on texts of brackets, quotes and backslashes', () => {
    const piece = fc.constantFrom('[', ']', '{', '}', '"', '\\', 'a', ',', '\\"', '"\\\\"');
    fc.assert(fc.property(fc.array(piece, { maxLength: 60 }), (parts) => {
      const text = parts.join('');
      expect(jsonNestingDepth(text)).toBe(plainDepth(text));
    }), { numRuns: 2000 });
  });

  it('skips a long string whole', () => {
    const text = `{"a":"${'x'.repeat(100000)}[[[","b":[["\\"["]]}`;
    expect(jsonNestingDepth(text)).toBe(3);
    expect(plainDepth(text)).toBe(3);
  });
});
