// One app session per browser tab on the browser host. The page makes a session id of its own (kept in the tab's
// sessionStorage, so a reload keeps its work) and sends it with every call (header `x-polarweave-session`); the
// host keeps one app service per id, so two tabs never see or overwrite each other's data sets, models and
// predictions. The pool is bounded: at most `maxSessions` at once; a tab that has not been heard from for
// `goneAfterMs` (its page sends a sign of life every SIGN_OF_LIFE_MS while open) counts as closed and its session
// may make room for a new tab; a session not heard from for `idleMs` is closed. A session with a running job is
// never closed. Refusals and ended sessions come back as plain API errors that say what to do.
// The Electron shell needs none of this: there one window is one service.
import type { ApiError, ApiService } from '../api/contract.ts';

export const SESSION_HEADER = 'x-polarweave-session';

/** How often an open page tells the host it is still there (ms); the renderer's client uses the same value. */
export const SIGN_OF_LIFE_MS = 30_000;

/** What the page may send as its id: a random UUID, or anything of the same plain alphabet. */
const ID_PATTERN = /^[A-Za-z0-9-]{16,64}$/;

/** Sessions ended here, remembered (at most this many) so that their tab is told instead of silently starting afresh. */
const REMEMBERED_ENDINGS = 256;

export interface PooledService extends ApiService {
  /** Stops the session's own jobs. */
  dispose(): void;
  /** Whether a job of the session is still running (such a session is never closed). */
  busy(): boolean;
}

export interface SessionPoolOptions<S extends PooledService> {
  create: () => S;
  /** Sessions kept at once (default 8). */
  maxSessions?: number;
  /** A session not heard from for this long is closed (default 2 h). */
  idleMs?: number;
  /** A tab not heard from for this long counts as closed: its session makes room for a new one when the pool is full (default 3 min). */
  goneAfterMs?: number;
  now?: () => number;
}

/** A call the pool cannot serve: refused (full, bad id) or for a session that has ended. */
export class SessionError extends Error {
  constructor(
    readonly apiError: ApiError,
    readonly status: number,
  ) {
    super(apiError.message);
    this.name = apiError.name;
  }
}

interface Entry<S> {
  service: S;
  seen: number;
}

const minutes = (ms: number) => (ms >= 120_000 ? `${Math.round(ms / 60_000)} minutes` : `${Math.round(ms / 1000)} s`);

export class SessionPool<S extends PooledService> {
  private readonly sessions = new Map<string, Entry<S>>();
  private readonly ended = new Map<string, string>();
  readonly maxSessions: number;
  readonly idleMs: number;
  readonly goneAfterMs: number;
  private readonly now: () => number;

  constructor(private readonly options: SessionPoolOptions<S>) {
    this.maxSessions = Math.max(1, options.maxSessions ?? 8);
    this.idleMs = options.idleMs ?? 2 * 3600_000;
    this.goneAfterMs = options.goneAfterMs ?? 3 * 60_000;
    this.now = options.now ?? Date.now;
  }

  /** The session of a tab, made on its first call. Throws SessionError when the id is unusable, the session ended, or the pool is full. */
  serviceFor(id: string | undefined): S {
    const key = checkedId(id);
    this.sweep();
    const now = this.now();
    const found = this.sessions.get(key);
    if (found) {
      found.seen = now;
      return found.service;
    }
    const why = this.ended.get(key);
    if (why !== undefined) {
      throw new SessionError({ name: 'SessionEnded', message: `this tab's session has ended: ${why}; its data sets, models and predictions are gone from the host`, hint: 'reload the page to start a new session (save projects before leaving a tab unused for long)' }, 410);
    }
    if (this.sessions.size >= this.maxSessions && !this.makeRoom(now)) {
      throw new SessionError(
        {
          name: 'SessionRefused',
          message: `this host already keeps the sessions of ${this.maxSessions} open tabs, the most it holds at once`,
          hint: `close a tab of this app that you no longer need (its session ends ${minutes(this.goneAfterMs)} after it was closed), then reload this page`,
        },
        503,
      );
    }
    const service = this.options.create();
    this.sessions.set(key, { service, seen: now });
    return service;
  }

  /** A sign of life from an open tab: keeps its session (an ended one is reported, none is made). */
  touch(id: string | undefined): { known: boolean } {
    const key = checkedId(id);
    this.sweep();
    const found = this.sessions.get(key);
    if (found) found.seen = this.now();
    else if (this.ended.has(key)) this.serviceFor(key); // throws SessionEnded
    return { known: !!found };
  }

  /** The session of an id, if it is open (tests and scripts). */
  get(id: string): S | undefined {
    return this.sessions.get(id)?.service;
  }

  get size(): number {
    return this.sessions.size;
  }

  /** Closes the sessions not heard from for idleMs (none with a running job: a session's silence counts from its last job). */
  sweep(): void {
    const now = this.now();
    for (const [id, e] of this.sessions) {
      if (e.service.busy()) e.seen = now; // its silence counts from the end of its last job
      else if (now - e.seen >= this.idleMs) this.end(id, `nothing was heard from it for ${minutes(now - e.seen)}`);
    }
  }

  /** Closes every session (host stopped). */
  dispose(): void {
    for (const id of [...this.sessions.keys()]) this.end(id, 'the host was stopped');
  }

  /** Ends the longest-silent session of a tab that has gone (not heard from for goneAfterMs, no running job). */
  private makeRoom(now: number): boolean {
    let oldest: [string, Entry<S>] | null = null;
    for (const entry of this.sessions) {
      const [, e] = entry;
      if (now - e.seen < this.goneAfterMs || e.service.busy()) continue;
      if (!oldest || e.seen < oldest[1].seen) oldest = entry;
    }
    if (!oldest) return false;
    this.end(oldest[0], `its tab was silent for ${minutes(now - oldest[1].seen)} and another tab needed the room`);
    return true;
  }

  private end(id: string, why: string): void {
    const e = this.sessions.get(id);
    if (!e) return;
    this.sessions.delete(id);
    e.service.dispose();
    this.ended.set(id, why);
    if (this.ended.size > REMEMBERED_ENDINGS) this.ended.delete(this.ended.keys().next().value as string);
  }
}

function checkedId(id: string | undefined): string {
  if (id === undefined || id === '') {
    throw new SessionError({ name: 'ApiValidationError', message: `the page sent no session id (header ${SESSION_HEADER})`, hint: 'reload the page; an older page of this app may be open in this tab' }, 400);
  }
  if (!ID_PATTERN.test(id)) {
    throw new SessionError({ name: 'ApiValidationError', message: `the session id is not one this app makes (16–64 letters, digits or dashes)`, hint: 'reload the page' }, 400);
  }
  return id;
}
