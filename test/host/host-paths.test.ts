// The browser host against a hostile page that holds the token: it may open by path only files inside the
// folder given at start (links followed and checked), gets one "cannot open" whatever the path (so it learns
// nothing about which files exist, nor their content), cannot read a project's paths outside that folder,
// is stopped early on an oversized body, never gets a long value echoed back, and gets 400 for broken
// %-encodings.
import { mkdirSync, mkdtempSync, rmSync, symlinkSync, writeFileSync } from 'node:fs';
import { request } from 'node:http';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { PathAccess } from '../../src-main/app/path-access.ts';
import { createAppService } from '../../src-main/app/wiring.ts';
import type { AppService } from '../../src-main/app/service.ts';
import { startHost, TOKEN_HEADER, type Host } from '../../src-main/host/server.ts';
import { PROJECT_FORMAT, PROJECT_VERSION } from '../../src-main/app/project-file.ts';

const WATER = `3\nLattice="9 0 0 0 9 0 0 0 9" Properties=species:S:1:pos:R:3\nO 1 1 1\nH 1.96 1 1\nH 0.76 1.93 1\n`;
const SECRET_CIF = `data_x\n_secret_password hunter2-very-secret\n_cell_length_a 5\n_cell_length_b 5\n_cell_length_c 5\n_cell_angle_alpha 90\n_cell_angle_beta 90\n_cell_angle_gamma 90\nloop_\n_atom_site_label\n_atom_site_fract_x\n_atom_site_fract_y\n_atom_site_fract_z\nNa1 0 0 0\n`;

let root: string;
let shared: string;
let outside: string;
let service: AppService;
let host: Host;
let small: Host;

function http(h: Host, path: string, body?: string, headers: Record<string, string> = {}) {
  return new Promise<{ status: number; body: string }>((ok, fail) => {
    const req = request({ hostname: '127.0.0.1', port: h.port, path, method: body === undefined ? 'GET' : 'POST', headers: { 'content-type': 'application/json', [TOKEN_HEADER]: h.token, ...headers } }, (res) => {
      let text = '';
      res.setEncoding('utf8');
      res.on('data', (c) => (text += c));
      res.on('end', () => ok({ status: res.statusCode ?? 0, body: text }));
    });
    req.on('error', fail);
    if (body !== undefined) req.write(body);
    req.end();
  });
}

const api = (method: string, payload: unknown, h = host) => http(h, `/api/${method}`, JSON.stringify(payload));

beforeAll(async () => {
  root = mkdtempSync(join(tmpdir(), 'pw-host-paths-'));
  shared = join(root, 'shared');
  outside = join(root, 'private');
  mkdirSync(shared);
  mkdirSync(outside);
  writeFileSync(join(shared, 'water.extxyz'), WATER);
  writeFileSync(join(outside, 'planted.cif'), SECRET_CIF);
  writeFileSync(join(outside, 'planted.extxyz'), 'hunter2-very-secret\n');
  symlinkSync(join(outside, 'planted.cif'), join(shared, 'link.cif'));
  service = createAppService({ spawn: () => { throw new Error('no workers in this test'); }, demoDir: root, paths: new PathAccess({ folders: [shared] }) });
  host = await startHost({ service, rendererDir: null });
  small = await startHost({ service, rendererDir: null, maxBodyBytes: 4096 });
});
afterAll(async () => {
  await host.close();
  await small.close();
  service.dispose();
  rmSync(root, { recursive: true, force: true });
});

describe('browser host: paths and hostile requests', () => {
  it('opens a file inside the folder given at start', async () => {
    const r = await api('openStructures', { path: join(shared, 'water.extxyz') });
    expect(r.status).toBe(200);
    expect(JSON.parse(r.body).value.frames).toBe(1);
  });

  it('refuses every path outside it with the same words, whether the file exists or not, and echoes no content', async () => {
    const answers = [];
    for (const path of [join(outside, 'planted.cif'), join(outside, 'planted.extxyz'), join(outside, 'missing.cif'), '/etc/passwd.extxyz', join(shared, '..', 'private', 'planted.cif')]) {
      const r = await api('openStructures', { path });
      expect(r.status).toBe(200);
      const body = JSON.parse(r.body);
      expect(body.ok).toBe(false);
      expect(body.error.message).toMatch(/^cannot open '/);
      expect(r.body).not.toMatch(/hunter2|not found|no such|exist/);
      answers.push(body.error.hint);
    }
    expect(new Set(answers).size).toBe(1);
  });

  it('refuses a link inside the folder that points outside it', async () => {
    const r = await api('openStructures', { path: join(shared, 'link.cif') });
    expect(JSON.parse(r.body).error.message).toMatch(/^cannot open 'link\.cif'/);
    expect(r.body).not.toMatch(/hunter2/);
  });

  it('refuses a project naming a path outside the folder (no way around the rule)', async () => {
    const project = { format: PROJECT_FORMAT, version: PROJECT_VERSION, savedAt: '', datasets: [{ id: 'd1', name: 'x', origin: { kind: 'path', path: join(outside, 'planted.cif') } }], models: [], predictions: [] };
    const r = await api('openProject', { name: 'p.pwproj.json', text: JSON.stringify(project) });
    const body = JSON.parse(r.body);
    expect(body.ok).toBe(false);
    expect(body.error.message).toMatch(/^cannot open 'planted\.cif'/);
    expect(r.body).not.toMatch(/hunter2/);
  });

  it('stops an oversized body from its Content-Length, without echoing anything of it', async () => {
    const big = JSON.stringify({ name: 'a.extxyz', text: '7'.repeat(10_000) });
    const r = await api('openStructures', JSON.parse(big), small);
    expect(r.status).toBe(413);
    expect(r.body).not.toMatch(/7777/);
    expect(r.body.length).toBeLessThan(200);
    // announced as 1 GB but only a few bytes sent: answered at once from the header, nothing is waited for
    const announced = await http(small, '/api/openStructures', '{"name":"a.extxyz","text":"1"}', { 'content-length': String(1 << 30) });
    expect(announced.status).toBe(413);
  });

  it('never echoes a long value back in an error', async () => {
    const r = await api('openStructures', { name: 'a.extxyz', text: '9'.repeat(100_000) + '\n' });
    const body = JSON.parse(r.body);
    expect(body.ok).toBe(false);
    expect(r.body).not.toMatch(/9{41}/);
    expect(r.body.length).toBeLessThan(1000);
    const key = await api('getFrame', { datasetId: 'd1', index: 0, ['k'.repeat(50_000)]: 1 });
    expect(key.status).toBe(400);
    expect(key.body).not.toMatch(/k{121}/);
  });

  it('answers 400, not 500, to malformed %-encodings', async () => {
    expect((await http(host, '/api/%E0%A4%A', '{}')).status).toBe(400);
    expect((await http(host, '/api/get%ZZFrame', '{}')).status).toBe(400);
  });
});
