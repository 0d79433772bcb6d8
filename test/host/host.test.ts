// The browser host: token required on every API call, loopback only, payloads validated against api/contract.ts's
// schemas before the service sees them, static files served with the CSP and never from outside the folder.
import { mkdtempSync, mkdirSync, rmSync, writeFileSync } from 'node:fs';
import { request } from 'node:http';
import { networkInterfaces, tmpdir } from 'node:os';
import { join } from 'node:path';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import type { ApiService } from '../../src-main/api/contract.ts';
import { InputError } from '../../src-main/core/errors.ts';
import { startHost, TOKEN_HEADER, type Host } from '../../src-main/host/server.ts';

const calls: { method: string; params: unknown }[] = [];
const service = {
  async getFrame(params: { datasetId: string; index: number }) {
    calls.push({ method: 'getFrame', params });
    if (params.index > 3) throw new InputError('no such frame', { file: 'water.xyz', frame: params.index }, 'pick a frame from 0 to 3');
    return { datasetId: params.datasetId, index: params.index };
  },
  async jobStatus(params: unknown) {
    calls.push({ method: 'jobStatus', params });
    return params;
  },
} as unknown as ApiService;

let host: Host;
let dir: string;
let scratch: string;

function http(path: string, opts: { method?: string; headers?: Record<string, string>; body?: string; hostname?: string } = {}) {
  return new Promise<{ status: number; headers: Record<string, string | string[] | undefined>; body: string }>((ok, fail) => {
    const req = request(
      { hostname: opts.hostname ?? '127.0.0.1', port: host.port, path, method: opts.method ?? 'GET', headers: opts.headers },
      (res) => {
        let body = '';
        res.setEncoding('utf8');
        res.on('data', (c) => (body += c));
        res.on('end', () => ok({ status: res.statusCode ?? 0, headers: res.headers, body }));
      },
    );
    req.on('error', fail);
    if (opts.body !== undefined) req.write(opts.body);
    req.end();
  });
}

const api = (method: string, payload: unknown, headers: Record<string, string> = {}) =>
  http(`/api/${method}`, {
    method: 'POST',
    headers: { 'content-type': 'application/json', [TOKEN_HEADER]: host.token, ...headers },
    body: JSON.stringify(payload),
  });

beforeAll(async () => {
  // the served folder, with a secret file beside it (outside it) that a path trick must not reach
  scratch = mkdtempSync(join(tmpdir(), 'pw-host-'));
  dir = join(scratch, 'renderer');
  mkdirSync(join(dir, 'assets'), { recursive: true });
  writeFileSync(join(dir, 'index.html'), '<!doctype html><title>t</title>');
  writeFileSync(join(dir, 'assets', 'app.js'), 'console.log(1)');
  writeFileSync(join(scratch, 'pw-secret.txt'), 'secret');
  host = await startHost({ service, rendererDir: dir });
});
afterAll(async () => {
  await host.close();
  rmSync(scratch, { recursive: true, force: true });
});

describe('browser host', () => {
  it('listens on 127.0.0.1 with a random port and a long token in the URL fragment', () => {
    expect(host.port).toBeGreaterThan(0);
    expect(host.token).toMatch(/^[0-9a-f]{64}$/);
    expect(host.url).toBe(`http://127.0.0.1:${host.port}/#token=${host.token}`);
  });

  it('is not reachable on other interfaces', async () => {
    const other = Object.values(networkInterfaces())
      .flat()
      .find((i) => i && i.family === 'IPv4' && !i.internal);
    if (!other) return; // a machine with loopback only: nothing else to try
    await expect(http('/', { hostname: other.address })).rejects.toThrow(/ECONNREFUSED/);
  });

  it('refuses API calls without the token or with a wrong one', async () => {
    const none = await http('/api/getFrame', { method: 'POST', headers: { 'content-type': 'application/json' }, body: '{"datasetId":"d1","index":0}' });
    expect(none.status).toBe(401);
    const wrong = await api('getFrame', { datasetId: 'd1', index: 0 }, { [TOKEN_HEADER]: host.token.replace(/.$/, (c) => (c === '0' ? '1' : '0')) });
    expect(wrong.status).toBe(401);
    expect(calls.length).toBe(0);
  });

  it('answers a valid call with the service value', async () => {
    const r = await api('getFrame', { datasetId: 'd1', index: 2 });
    expect(r.status).toBe(200);
    expect(JSON.parse(r.body)).toEqual({ ok: true, value: { datasetId: 'd1', index: 2 } });
    expect(r.headers['cache-control']).toBe('no-store');
  });

  it('fills schema defaults before the service sees the payload', async () => {
    const r = await api('jobStatus', { jobId: 'job-1' });
    expect(JSON.parse(r.body).value).toEqual({ jobId: 'job-1', since: 0 });
  });

  it('rejects payloads that break the schema, naming the field, without calling the service', async () => {
    const before = calls.length;
    for (const bad of [{ datasetId: 'd1', index: -1 }, { datasetId: 'd1', index: 1.5 }, { datasetId: 'd1' }, { datasetId: 'd1', index: 0, extra: 1 }, [1, 2]]) {
      const r = await api('getFrame', bad);
      expect(r.status).toBe(400);
      const body = JSON.parse(r.body);
      expect(body.ok).toBe(false);
      expect(body.error.message).toMatch(/^bad request to getFrame: /);
    }
    expect((JSON.parse((await api('getFrame', { datasetId: 'd1', index: -1 })).body).error.message)).toContain('index');
    expect(calls.length).toBe(before);
  });

  it('refuses unknown methods, non-JSON bodies and GET on the API', async () => {
    expect((await api('readAnyFile', {})).status).toBe(404);
    expect((await api('__proto__', {})).status).toBe(404);
    expect((await http('/api/getFrame', { method: 'POST', headers: { 'content-type': 'text/plain', [TOKEN_HEADER]: host.token }, body: '{}' })).status).toBe(415);
    expect((await http('/api/getFrame', { method: 'POST', headers: { 'content-type': 'application/json', [TOKEN_HEADER]: host.token }, body: '{not json' })).status).toBe(400);
    expect((await http('/api/getFrame', { headers: { [TOKEN_HEADER]: host.token } })).status).toBe(405);
  });

  it('passes a service error through in plain words with file and frame', async () => {
    const r = await api('getFrame', { datasetId: 'd1', index: 9 });
    const body = JSON.parse(r.body);
    expect(body.ok).toBe(false);
    expect(body.error).toMatchObject({ name: 'InputError', where: { file: 'water.xyz', frame: 9 }, hint: 'pick a frame from 0 to 3' });
    expect(body.error.message).toContain('water.xyz, frame 9: no such frame');
  });

  it('refuses a foreign Host header (DNS rebinding) and a foreign Origin', async () => {
    expect((await api('getFrame', { datasetId: 'd1', index: 0 }, { host: `evil.example:${host.port}` })).status).toBe(403);
    expect((await api('getFrame', { datasetId: 'd1', index: 0 }, { origin: 'http://evil.example' })).status).toBe(403);
    expect((await api('getFrame', { datasetId: 'd1', index: 0 }, { origin: `http://127.0.0.1:${host.port}` })).status).toBe(200);
  });

  it('serves the renderer with a strict CSP and nothing outside its folder', async () => {
    const index = await http('/');
    expect(index.status).toBe(200);
    expect(index.headers['content-type']).toMatch(/text\/html/);
    const csp = String(index.headers['content-security-policy']);
    expect(csp).toContain("default-src 'none'");
    expect(csp).toContain("script-src 'self'");
    expect(csp).not.toMatch(/script-src[^;]*unsafe/);
    expect((await http('/assets/app.js')).headers['content-type']).toMatch(/javascript/);
    expect((await http('/../pw-secret.txt')).status).not.toBe(200);
    expect((await http('/%2e%2e/pw-secret.txt')).status).toBe(404); // URL parsing folds it into the folder
    expect((await http('/..%2fpw-secret.txt')).status).toBe(403);
    expect((await http('/assets/missing.js')).status).toBe(404);
  });
});
