// Typed errors that say where (file, line, frame) and what to do. Every reader and converter throws these,
// so the CLI, the host and the window can show the same plain message.

export interface Where {
  file?: string;
  /** 1-based line number. */
  line?: number;
  /** 0-based frame index. */
  frame?: number;
}

export function describeWhere(where: Where): string {
  const parts: string[] = [];
  if (where.file !== undefined) parts.push(where.file);
  if (where.line !== undefined) parts.push(`line ${where.line}`);
  if (where.frame !== undefined) parts.push(`frame ${where.frame}`);
  return parts.join(', ');
}

/** Longest piece of input quoted back in a message; longer ones are cut (errors never echo whole values). */
export const MAX_QUOTED_CHARS = 40;

/** `s` as quoted in an error message: at most MAX_QUOTED_CHARS characters, cut ones ending in "...". */
export function clipText(s: string): string {
  return s.length > MAX_QUOTED_CHARS ? s.slice(0, MAX_QUOTED_CHARS - 3) + '...' : s;
}

/** Bad input data: a file that cannot be read as what it claims to be, or values that make no physical sense. */
export class InputError extends Error {
  override name = 'InputError';
  constructor(
    readonly problem: string,
    readonly where: Where = {},
    readonly hint?: string,
  ) {
    const at = describeWhere(where);
    super(`${at ? at + ': ' : ''}${problem}${hint ? ` — ${hint}` : ''}`);
  }
}

/** A physically impossible request, e.g. the polarisation catastrophe in the Clausius–Mossotti relation. */
export class PhysicsError extends Error {
  override name = 'PhysicsError';
  constructor(message: string, readonly where: Where = {}) {
    const at = describeWhere(where);
    super(`${at ? at + ': ' : ''}${message}`);
  }
}

/** A model file that is corrupt, of an unknown version, or asked to predict what it never saw. */
export class ModelError extends Error {
  override name = 'ModelError';
}

/** Work stopped on request (Ctrl-C, the Cancel button). */
export class CancelledError extends Error {
  override name = 'CancelledError';
  constructor() {
    super('cancelled');
  }
}
