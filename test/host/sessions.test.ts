// The browser host's sessions per tab: each id its own service, bounded in number, silent ones closed, a closed
// tab's session making room for a new tab, never one with a running job, and plain messages for every refusal.
// Over HTTP: the header is required and every tab's calls reach its own session.
import { request } from 'node:http';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import type { ApiService } from '../../src-main/api/contract.ts';
import { startHost, TOKEN_HEADER, type Host } from '../../src-main/host/server.ts';
import { SESSION_HEADER, SessionError, SessionPool, type PooledService } from '../../src-main/host/sessions.ts';

interface Fake extends PooledService {
  n: number;
  running: boolean;
  disposed: boolean;
}

function pool(options: { max?: number; idleMs?: number; goneAfterMs?: number } = {}) {
  let clock = 0;
  let made = 0;
  const p = new SessionPool<Fake>({
    create: () => {
      const f = { n: ++made, running: false, disposed: false } as Fake;
      f.busy = () => f.running;
      f.dispose = () => void (f.disposed = true);
      return f;
    },
    maxSessions: options.max ?? 2,
    idleMs: options.idleMs ?? 60_000,
    goneAfterMs: options.goneAfterMs ?? 10_000,
    now: () => clock,
  });
  return { p, advance: (ms: number) => void (clock += ms) };
}

const A = 'aaaaaaaa-0000-4000-8000-000000000001';
const B = 'bbbbbbbb-0000-4000-8000-000000000002';
const C = 'cccccccc-0000-4000-8000-000000000003';

function refusal(fn: () => unknown): SessionError {
  try {
    fn();
  } catch (e) {
    if (e instanceof SessionError) return e;
    throw e;
  }
  throw new Error('no refusal');
}

describe('session pool', () => {
  it('gives every id its own service, and the same one on every call', () => {
    const { p } = pool();
    const a = p.serviceFor(A);
    const b = p.serviceFor(B);
    expect(a).not.toBe(b);
    expect(p.serviceFor(A)).toBe(a);
    expect(p.size).toBe(2);
  });

  it('refuses a tab beyond the bound while the others are alive, saying what to do', () => {
    const { p, advance } = pool({ max: 2 });
    p.serviceFor(A);
    p.serviceFor(B);
    advance(5_000);
    const e = refusal(() => p.serviceFor(C));
    expect(e.status).toBe(503);
    expect(e.apiError.name).toBe('SessionRefused');
    expect(e.apiError.message).toMatch(/sessions of 2 open tabs/);
    expect(e.apiError.hint).toMatch(/close a tab .* then reload this page/);
    expect(p.size).toBe(2);
  });

  it('lets a new tab take the room of a closed one (silent past goneAfterMs), never of one with a running job', () => {
    const { p, advance } = pool({ max: 2, goneAfterMs: 10_000 });
    const a = p.serviceFor(A);
    const b = p.serviceFor(B);
    advance(8_000);
    p.touch(B); // B's tab is open and says so
    advance(4_000); // A silent for 12 s: gone; but it is running a job
    a.running = true;
    expect(refusal(() => p.serviceFor(C)).apiError.name).toBe('SessionRefused');
    // its silence counts from the end of its job
    a.running = false;
    expect(refusal(() => p.serviceFor(C)).apiError.name).toBe('SessionRefused');
    advance(8_000);
    p.touch(B);
    advance(3_000);
    const c = p.serviceFor(C);
    expect(a.disposed).toBe(true);
    expect(b.disposed).toBe(false);
    expect(p.serviceFor(B)).toBe(b);
    expect(p.serviceFor(C)).toBe(c);
    // A's tab comes back: told, not silently given an empty session
    const ended = refusal(() => p.serviceFor(A));
    expect(ended.status).toBe(410);
    expect(ended.apiError.name).toBe('SessionEnded');
    expect(ended.apiError.message).toMatch(/silent for 11 s and another tab needed the room/);
    expect(ended.apiError.hint).toMatch(/reload the page/);
  });

  it('closes a session not heard from for idleMs, unless a job of it is running', () => {
    const { p, advance } = pool({ idleMs: 60_000 });
    const a = p.serviceFor(A);
    const b = p.serviceFor(B);
    b.running = true;
    advance(61_000);
    p.sweep();
    expect(a.disposed).toBe(true);
    expect(b.disposed).toBe(false);
    expect(p.size).toBe(1);
    expect(refusal(() => p.touch(A)).apiError.message).toMatch(/nothing was heard from it for 61 s/);
    // a sign of life keeps a session open
    b.running = false;
    advance(50_000);
    p.touch(B);
    advance(50_000);
    p.sweep();
    expect(b.disposed).toBe(false);
  });

  it('refuses a missing or strange id', () => {
    const { p } = pool();
    expect(refusal(() => p.serviceFor(undefined)).apiError.message).toMatch(/no session id/);
    expect(refusal(() => p.serviceFor('../../x')).status).toBe(400);
    expect(refusal(() => p.serviceFor('short')).status).toBe(400);
    expect(p.size).toBe(0);
  });

  it('dispose ends every session', () => {
    const { p } = pool();
    const a = p.serviceFor(A);
    p.dispose();
    expect(a.disposed).toBe(true);
    expect(p.size).toBe(0);
  });
});

describe('host with a session pool', () => {
  let host: Host;
  const services: { id: number; calls: number }[] = [];
  const sessions = new SessionPool<PooledService>({
    maxSessions: 2,
    create: () => {
      const me = { id: services.length + 1, calls: 0 };
      services.push(me);
      return {
        async getFrame() {
          me.calls++;
          return { session: me.id, calls: me.calls };
        },
        busy: () => false,
        dispose: () => undefined,
      } as unknown as ApiService & PooledService;
    },
  });
  const post = (path: string, session: string | null) =>
    new Promise<{ status: number; body: { ok: boolean; value?: { session: number; calls: number }; error?: { name: string; message: string } } }>((ok, fail) => {
      const headers: Record<string, string> = { 'content-type': 'application/json', [TOKEN_HEADER]: host.token };
      if (session) headers[SESSION_HEADER] = session;
      const req = request({ hostname: '127.0.0.1', port: host.port, path, method: 'POST', headers }, (res) => {
        let text = '';
        res.setEncoding('utf8');
        res.on('data', (c) => (text += c));
        res.on('end', () => ok({ status: res.statusCode ?? 0, body: JSON.parse(text) }));
      });
      req.on('error', fail);
      req.end(JSON.stringify({ datasetId: 'd1', index: 0 }));
    });
  beforeAll(async () => {
    host = await startHost({ sessions, rendererDir: null });
  });
  afterAll(() => host.close());

  it('sends each tab to its own session, and refuses calls without an id or beyond the bound', async () => {
    expect((await post('/api/getFrame', A)).body.value).toEqual({ session: 1, calls: 1 });
    expect((await post('/api/getFrame', B)).body.value).toEqual({ session: 2, calls: 1 });
    expect((await post('/api/getFrame', A)).body.value).toEqual({ session: 1, calls: 2 });
    const none = await post('/api/getFrame', null);
    expect(none.status).toBe(400);
    expect(none.body.error?.message).toMatch(/no session id/);
    const third = await post('/api/getFrame', C);
    expect(third.status).toBe(503);
    expect(third.body.error?.name).toBe('SessionRefused');
    // the sign of life needs the token like any call, and knows the open sessions
    expect((await post('/session/alive', A)).body).toEqual({ ok: true, value: { known: true } });
    expect((await post('/session/alive', C)).body).toEqual({ ok: true, value: { known: false } });
    expect(services.map((s) => s.calls)).toEqual([2, 1]);
  });
});
