// Nesting depth of JSON text, measured before the text is parsed: JSON.parse itself copes with deep nesting,
// but every recursive walk over the result (flattening, canonical forms, decoding) would overflow the stack.
// One linear pass that skips strings. Pure code, runs in a browser too.
import { MAX_JSON_DEPTH } from '../core/limits.ts';

/** Deepest nesting of [ and { in `text` (strings skipped); stops counting once past `limit`. */
export function jsonNestingDepth(text: string, limit = Infinity): number {
  let depth = 0;
  let deepest = 0;
  const n = text.length;
  // next backslash at or after the scan position (n when none): strings are skipped with indexOf, which matters for
  // model files, whose arrays are megabytes of base64 in a few strings
  let slash = -1;
  for (let i = 0; i < n; i++) {
    const c = text.charCodeAt(i);
    if (c === 34) {
      // a string: jump to its closing quote, past escaped characters (a backslash and the character after it)
      let j = i + 1;
      for (;;) {
        if (slash < j) {
          slash = text.indexOf('\\', j);
          if (slash < 0) slash = n;
        }
        const q = text.indexOf('"', j);
        const quote = q < 0 ? n : q;
        if (slash < quote) {
          j = slash + 2;
          continue;
        }
        i = quote;
        break;
      }
    } else if (c === 91 || c === 123) {
      if (++depth > deepest) {
        deepest = depth;
        if (deepest > limit) return deepest;
      }
    } else if (c === 93 || c === 125) depth--;
  }
  return deepest;
}

/** True when `text` nests arrays and objects deeper than the project's limit (core/limits.ts). */
export function jsonTooDeep(text: string): boolean {
  return jsonNestingDepth(text, MAX_JSON_DEPTH) > MAX_JSON_DEPTH;
}
