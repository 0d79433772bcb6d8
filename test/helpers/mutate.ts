// Text mutations for the readers' property tests: overwrite, insert or delete characters, cut the text, or
// replace a whole line; positions are taken modulo the current length, so any natural number is valid.
export type Mutation =
  | { op: 'set' | 'insert'; at: number; text: string }
  | { op: 'delete'; at: number; len: number }
  | { op: 'truncate'; at: number }
  | { op: 'line'; at: number; text: string };

export function mutate(text: string, ms: readonly Mutation[]): string {
  let t = text;
  for (const m of ms) {
    const at = t.length === 0 ? 0 : m.at % t.length;
    if (m.op === 'set') t = t.slice(0, at) + m.text + t.slice(at + 1);
    else if (m.op === 'insert') t = t.slice(0, at) + m.text + t.slice(at);
    else if (m.op === 'delete') t = t.slice(0, at) + t.slice(at + m.len);
    else if (m.op === 'truncate') t = t.slice(0, at);
    else {
      // the new text lands where a count, comment or atom line was
      const lines = t.split('\n');
      lines[m.at % lines.length] = m.text;
      t = lines.join('\n');
    }
  }
  return t;
}
