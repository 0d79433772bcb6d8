// The second line of an extended XYZ frame: whitespace-separated key=value pairs. Values are bare words,
// double-quoted strings (with backslash escapes), or arrays written as "1 2 3", {1 2 3} or [1, 2, 3]; a key
// without a value means `true`. This file only tokenises and formats that line; extxyz-parse.ts gives the
// special keys (Lattice, Properties, pbc) their meaning. Pure code, runs in a browser too.
import type { InfoValue } from '../core/geometry/frame.ts';
import { clipText as clipKey } from '../core/errors.ts';
import { MAX_JSON_DEPTH } from '../core/limits.ts';
import { strictNumber } from './decimal.ts';
import { jsonTooDeep } from './json-depth.ts';

/** One key=value item as written: `quoted` tells a bare word from a "..." string; `bracket` an {..}/[..] array. */
export interface RawItem {
  key: string;
  /** null for a key without a value. */
  value: string | null;
  quoted: boolean;
  /** The opening bracket of an array value, or null. */
  bracket: '{' | '[' | null;
  /** A quoted value that used a backslash escape: always read as a string, never as an array or number. */
  escaped: boolean;
}

/** Thrown by the tokeniser with a 0-based column; the caller adds file, line and frame. */
export class CommentSyntaxError extends Error {
  constructor(
    message: string,
    readonly column: number,
  ) {
    super(message);
  }
}

function isSpace(c: number): boolean {
  return c === 32 || c === 9 || c === 13 || c === 11 || c === 12;
}

const ESCAPES: Record<string, string> = { n: '\n', t: '\t', r: '\r' };

/**
 * Read a "..." string starting at the opening quote; returns the unescaped text, the index after it and
 * whether an escape was used. \n \t \r are control characters; a backslash before any other character
 * stands for that character (\" \\ and so on).
 */
function readQuoted(s: string, start: number): [string, number, boolean] {
  let out = '';
  let i = start + 1;
  let runStart = i;
  let escaped = false;
  while (i < s.length) {
    const ch = s[i];
    if (ch === '"') return [out + s.slice(runStart, i), i + 1, escaped];
    if (ch === '\\' && i + 1 < s.length) {
      escaped = true;
      out += s.slice(runStart, i);
      const next = s[i + 1];
      out += ESCAPES[next] ?? next;
      i += 2;
      runStart = i;
      continue;
    }
    i++;
  }
  throw new CommentSyntaxError('a quoted value is not closed (missing ")', start);
}

function readBare(s: string, start: number, stopAtEquals: boolean): [string, number] {
  let i = start;
  while (i < s.length) {
    const c = s.charCodeAt(i);
    if (isSpace(c) || (stopAtEquals && c === 61)) break;
    i++;
  }
  return [s.slice(start, i), i];
}

function readBracket(s: string, start: number): [string, number] {
  const close = s[start] === '{' ? '}' : ']';
  const end = s.indexOf(close, start + 1);
  if (end < 0) throw new CommentSyntaxError(`an array value opened with '${s[start]}' is not closed (missing '${close}')`, start);
  return [s.slice(start + 1, end), end + 1];
}

/** Split a comment line into key=value items (keys may be quoted; spaces around '=' are allowed). */
export function tokeniseComment(line: string): RawItem[] {
  const items: RawItem[] = [];
  const n = line.length;
  let i = 0;
  for (;;) {
    while (i < n && isSpace(line.charCodeAt(i))) i++;
    if (i >= n) return items;
    let key: string;
    if (line[i] === '"') [key, i] = readQuoted(line, i);
    else if (line[i] === '=') throw new CommentSyntaxError("a value without a key ('=' at the start of an item)", i);
    else [key, i] = readBare(line, i, true);
    let j = i;
    while (j < n && isSpace(line.charCodeAt(j))) j++;
    if (j < n && line[j] === '=') {
      j++;
      while (j < n && isSpace(line.charCodeAt(j))) j++;
      if (j >= n) throw new CommentSyntaxError(`key '${key}' has '=' but no value`, j);
      const c = line[j];
      if (c === '"') {
        const [v, k, escaped] = readQuoted(line, j);
        items.push({ key, value: v, quoted: true, bracket: null, escaped });
        i = k;
      } else if (c === '{' || c === '[') {
        const [v, k] = readBracket(line, j);
        items.push({ key, value: v, quoted: false, bracket: c, escaped: false });
        i = k;
      } else {
        const [v, k] = readBare(line, j, false);
        items.push({ key, value: v, quoted: false, bracket: null, escaped: false });
        i = k;
      }
      if (i < n && !isSpace(line.charCodeAt(i))) throw new CommentSyntaxError(`unexpected text right after the value of '${key}'`, i);
    } else {
      items.push({ key, value: null, quoted: false, bracket: null, escaped: false });
    }
  }
}

export { strictNumber };

/** Words that mean true/false in extended XYZ. */
export function parseBoolean(token: string): boolean | undefined {
  switch (token) {
    case 'T':
    case 'True':
    case 'true':
    case 'TRUE':
      return true;
    case 'F':
    case 'False':
    case 'false':
    case 'FALSE':
      return false;
    default:
      return undefined;
  }
}

/** Split an array body on whitespace and commas. */
export function splitArray(body: string): string[] {
  return body.split(/[\s,]+/).filter((t) => t.length > 0);
}

export class ValueError extends Error {}

/**
 * The meaning of one item as a frame property: a bracket array is a number[] (or a string if not numeric);
 * a quoted value with two or more numbers is a number[], otherwise a string; a bare word is a boolean,
 * a number, or a string. Non-finite numbers (nan, inf) are refused with ValueError.
 */
export function interpretValue(item: RawItem): InfoValue {
  if (item.value === null) return true;
  const v = item.value;
  if (item.bracket) {
    const parts = splitArray(v);
    const nums = parts.map(strictNumber);
    if (nums.every((x) => Number.isFinite(x))) return nums;
    if (parts.some((p) => isNonFiniteWord(p))) throw new ValueError(`array '${clipKey(item.key)}' holds a non-finite number`);
    return item.bracket + v + (item.bracket === '{' ? '}' : ']');
  }
  if (item.quoted) {
    if (item.escaped) return v;
    if (v.startsWith('_JSON ')) return fromJson(item.key, v);
    const parts = splitArray(v);
    if (parts.length >= 2 && !/,/.test(v)) {
      const nums = parts.map(strictNumber);
      if (nums.every((x) => Number.isFinite(x))) return nums;
      if (nums.every((x, k) => Number.isFinite(x) || isNonFiniteWord(parts[k]))) {
        throw new ValueError(`array '${clipKey(item.key)}' holds a non-finite number`);
      }
    }
    return v;
  }
  const b = parseBoolean(v);
  if (b !== undefined) return b;
  const x = strictNumber(v);
  if (Number.isFinite(x)) return x;
  if (isNonFiniteWord(v)) throw new ValueError(`value of '${clipKey(item.key)}' is not a finite number (${v})`);
  return v;
}

/**
 * A value some writers store as JSON behind a `_JSON ` prefix (nested arrays such as a 3×3 tensor): numbers,
 * booleans and strings as they are, nested numeric arrays flattened row-major; anything else stays the text.
 */
function fromJson(key: string, v: string): InfoValue {
  if (jsonTooDeep(v)) throw new ValueError(`value of '${clipKey(key)}' nests JSON deeper than ${MAX_JSON_DEPTH} levels`);
  let parsed: unknown;
  try {
    parsed = JSON.parse(v.slice(6));
  } catch {
    throw new ValueError(`value of '${clipKey(key)}' starts with _JSON but is not valid JSON`);
  }
  if (typeof parsed === 'number' || typeof parsed === 'boolean' || typeof parsed === 'string') return parsed;
  if (Array.isArray(parsed)) {
    const flat = (parsed as unknown[]).flat(Infinity);
    if (flat.every((x) => typeof x === 'number')) return flat as number[];
  }
  return v;
}

function looksLikeNumberList(v: string): boolean {
  const parts = splitArray(v);
  return parts.length >= 2 && parts.every((p) => !Number.isNaN(strictNumber(p)) || isNonFiniteWord(p));
}

function isNonFiniteWord(t: string): boolean {
  return /^[+-]?(nan|inf|infinity)$/i.test(t);
}

// ---- writing ----

/** Shortest text that parses back to exactly the same double (keeps the sign of −0). */
export function formatNumber(x: number): string {
  if (!Number.isFinite(x)) throw new RangeError(`cannot write a non-finite number (${x})`);
  return Object.is(x, -0) ? '-0' : String(x);
}

/** True when a string can be written bare and will read back as the same string. */
function bareSafe(s: string): boolean {
  if (s.length === 0) return false;
  if (/[\s"'={}[\]\\,]/.test(s)) return false;
  if (parseBoolean(s) !== undefined) return false;
  if (!Number.isNaN(strictNumber(s)) || isNonFiniteWord(s)) return false;
  return true;
}

function quote(s: string): string {
  return '"' + s.replace(/\\/g, '\\\\').replace(/"/g, '\\"').replace(/\n/g, '\\n').replace(/\r/g, '\\r').replace(/\t/g, '\\t') + '"';
}

/** Key text: bare when safe, quoted otherwise. */
export function formatKey(key: string): string {
  if (key.length > 0 && !/[\s"=\\]/.test(key) && key[0] !== '{' && key[0] !== '[') return key;
  return quote(key);
}

/** One property as `key=value` so that interpretValue() gives back an equal value. */
export function formatItem(key: string, value: InfoValue): string {
  const k = formatKey(key);
  if (value === true) return `${k}=T`;
  if (value === false) return `${k}=F`;
  if (typeof value === 'number') return `${k}=${formatNumber(value)}`;
  if (typeof value === 'string') {
    if (bareSafe(value)) return `${k}=${value}`;
    const q = quote(value);
    // A quoted text of two or more numbers would read back as an array (and one starting "_JSON " as JSON):
    // escape its first character, which marks the value as a string for our reader (see readQuoted) without
    // changing the text.
    if (q.indexOf('\\') < 0 && (looksLikeNumberList(value) || value.startsWith('_JSON '))) return `${k}="\\${q.slice(1)}`;
    return `${k}=${q}`;
  }
  if (value.length >= 2) return `${k}="${value.map(formatNumber).join(' ')}"`;
  return `${k}=[${value.map(formatNumber).join(', ')}]`;
}
