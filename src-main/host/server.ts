// The browser host: the same API as the Electron window, over HTTP on 127.0.0.1 only, on a random port,
// with a per-run token required on every API call (header `x-polarweave-token`). It also serves the built
// renderer (out/renderer) with a strict CSP; the page reads the token from the URL fragment (#token=…),
// which browsers never send to a server or put in Referer headers. With a session pool (sessions.ts) every tab
// has its own session: the page sends its id with each call, and `POST /session/alive` is its sign of life.
import { randomBytes, timingSafeEqual } from 'node:crypto';
import { createReadStream } from 'node:fs';
import { stat } from 'node:fs/promises';
import { createServer, type IncomingMessage, type ServerResponse } from 'node:http';
import type { AddressInfo } from 'node:net';
import { extname, join, normalize, resolve, sep } from 'node:path';
import type { ApiResponse, ApiService } from '../api/contract.ts';
import { MAX_REQUEST_BYTES } from '../core/limits.ts';
import { dispatch } from '../api/dispatch.ts';
import { CONTENT_SECURITY_POLICY } from './csp.ts';
import { SESSION_HEADER, SessionError, type PooledService, type SessionPool } from './sessions.ts';

export const TOKEN_HEADER = 'x-polarweave-token';

export interface HostOptions {
  /** One service for every call (tests)… */
  service?: ApiService;
  /** …or one per browser tab, by the session id the page sends. */
  sessions?: SessionPool<PooledService>;
  /** Folder with the built renderer (index.html); null: API only. */
  rendererDir: string | null;
  /** 0 (default) = a random free port. */
  port?: number;
  /** Default: 32 random bytes, hex. */
  token?: string;
  /** Largest request body accepted (bytes). */
  maxBodyBytes?: number;
}

export interface Host {
  /** Address to open, with the token in the fragment. */
  url: string;
  origin: string;
  port: number;
  token: string;
  close(): Promise<void>;
}

const MIME: Record<string, string> = {
  '.html': 'text/html; charset=utf-8',
  '.js': 'text/javascript; charset=utf-8',
  '.mjs': 'text/javascript; charset=utf-8',
  '.css': 'text/css; charset=utf-8',
  '.svg': 'image/svg+xml',
  '.png': 'image/png',
  '.json': 'application/json; charset=utf-8',
  '.woff2': 'font/woff2',
  '.ico': 'image/x-icon',
};

const LOOPBACK = new Set(['127.0.0.1', '::ffff:127.0.0.1', '::1']);

function securityHeaders(res: ServerResponse): void {
  res.setHeader('Content-Security-Policy', CONTENT_SECURITY_POLICY);
  res.setHeader('X-Content-Type-Options', 'nosniff');
  res.setHeader('Referrer-Policy', 'no-referrer');
  res.setHeader('Cross-Origin-Opener-Policy', 'same-origin');
  res.setHeader('Cross-Origin-Resource-Policy', 'same-origin');
  res.setHeader('X-Frame-Options', 'DENY');
}

function sendJson(res: ServerResponse, status: number, body: unknown): void {
  const text = JSON.stringify(body);
  res.writeHead(status, { 'Content-Type': 'application/json; charset=utf-8', 'Cache-Control': 'no-store' });
  res.end(text);
}

function plain(res: ServerResponse, status: number, text: string): void {
  res.writeHead(status, { 'Content-Type': 'text/plain; charset=utf-8', 'Cache-Control': 'no-store' });
  res.end(text + '\n');
}

function tokenMatches(given: string | string[] | undefined, token: string): boolean {
  if (typeof given !== 'string') return false;
  const a = Buffer.from(given);
  const b = Buffer.from(token);
  return a.length === b.length && timingSafeEqual(a, b);
}

class TooLarge extends Error {}

/** The body as text; TooLarge as soon as it passes `limit` (announced by Content-Length, or counted). */
async function readBody(req: IncomingMessage, limit: number): Promise<string> {
  const declared = Number(req.headers['content-length'] ?? NaN);
  if (declared > limit) throw new TooLarge();
  const chunks: Buffer[] = [];
  let size = 0;
  for await (const chunk of req) {
    size += (chunk as Buffer).length;
    if (size > limit) throw new TooLarge();
    chunks.push(chunk as Buffer);
  }
  return Buffer.concat(chunks).toString('utf8');
}

/** Longest run of non-space characters an error message may carry back (no echo of long values). */
const MAX_RUN = 120;

/** An error's texts with every long unbroken run cut, and the whole kept short: the page never gets a value back. */
function quiet(response: ApiResponse<unknown>): ApiResponse<unknown> {
  if (response.ok) return response;
  const cut = (t: string) => t.replace(new RegExp(`\\S{${MAX_RUN},}`, 'g'), (run) => run.slice(0, 40) + '…').slice(0, 2000);
  const error = { ...response.error, message: cut(response.error.message) };
  if (error.hint !== undefined) error.hint = cut(error.hint);
  return { ok: false, error };
}

function decodePath(text: string): string | null {
  try {
    return decodeURIComponent(text);
  } catch {
    return null; // a malformed %-encoding: the caller answers 400
  }
}

export async function startHost(options: HostOptions): Promise<Host> {
  const token = options.token ?? randomBytes(32).toString('hex');
  const limit = options.maxBodyBytes ?? MAX_REQUEST_BYTES;
  const rendererDir = options.rendererDir ? resolve(options.rendererDir) : null;
  if (!options.service === !options.sessions) throw new Error('startHost: give a service or a session pool, not both');
  let port = 0;

  const server = createServer(async (req, res) => {
    securityHeaders(res);
    try {
      // Loopback only: the socket is bound to 127.0.0.1, and we check again here.
      if (!LOOPBACK.has(req.socket.remoteAddress ?? '')) return plain(res, 403, 'loopback connections only');
      // DNS-rebinding guard: the Host header must name this loopback address.
      const host = req.headers.host ?? '';
      if (host !== `127.0.0.1:${port}` && host !== `localhost:${port}`) return plain(res, 403, 'unexpected Host header');
      const url = new URL(req.url ?? '/', `http://127.0.0.1:${port}`);

      if (url.pathname.startsWith('/api/') || url.pathname === '/session/alive') {
        if (req.method !== 'POST') {
          res.setHeader('Allow', 'POST');
          return plain(res, 405, 'API calls use POST');
        }
        const origin = req.headers.origin;
        if (origin !== undefined && origin !== `http://127.0.0.1:${port}` && origin !== `http://localhost:${port}`) {
          return plain(res, 403, 'cross-origin API calls are refused');
        }
        if (!tokenMatches(req.headers[TOKEN_HEADER], token)) {
          return sendJson(res, 401, { ok: false, error: { name: 'Unauthorised', message: 'missing or wrong access token; open the address printed at start-up' } });
        }
        const type = req.headers['content-type'] ?? '';
        if (!type.startsWith('application/json')) return plain(res, 415, 'API calls send application/json');
        let payload: unknown;
        try {
          const text = await readBody(req, limit);
          payload = text.length ? JSON.parse(text) : {};
        } catch (e) {
          if (e instanceof TooLarge) {
            // stop receiving at once: answer, then close the connection instead of reading the rest
            res.setHeader('Connection', 'close');
            sendJson(res, 413, { ok: false, error: { name: 'ApiValidationError', message: `request larger than ${limit >> 20} MiB` } });
            req.destroy();
            return;
          }
          return sendJson(res, 400, { ok: false, error: { name: 'ApiValidationError', message: 'unreadable request: the body is not JSON' } });
        }
        let service: ApiService;
        try {
          const sessionId = req.headers[SESSION_HEADER];
          const id = typeof sessionId === 'string' ? sessionId : undefined;
          if (url.pathname === '/session/alive') {
            if (!options.sessions) return sendJson(res, 200, { ok: true, value: { known: true } });
            return sendJson(res, 200, { ok: true, value: options.sessions.touch(id) });
          }
          service = options.sessions ? options.sessions.serviceFor(id) : (options.service as ApiService);
        } catch (e) {
          if (e instanceof SessionError) return sendJson(res, e.status, { ok: false, error: e.apiError });
          throw e;
        }
        const method = decodePath(url.pathname.slice('/api/'.length));
        if (method === null) return plain(res, 400, 'malformed URL encoding');
        const outcome = await dispatch(service, method, payload);
        const status = { ok: 200, 'bad-request': 400, 'unknown-method': 404, failed: 200 }[outcome.status];
        return sendJson(res, status, quiet(outcome.response));
      }

      if (req.method !== 'GET' && req.method !== 'HEAD') return plain(res, 405, 'only GET here');
      if (!rendererDir) return plain(res, 404, 'no renderer is served by this host');
      const decoded = decodePath(url.pathname);
      if (decoded === null) return plain(res, 400, 'malformed URL encoding');
      const rel = url.pathname === '/' ? 'index.html' : decoded.replace(/^\/+/, '');
      const file = normalize(join(rendererDir, rel));
      if (file !== rendererDir && !file.startsWith(rendererDir + sep)) return plain(res, 403, 'outside the app folder');
      const info = await stat(file).catch(() => null);
      if (!info || !info.isFile()) return plain(res, 404, 'not found');
      res.writeHead(200, {
        'Content-Type': MIME[extname(file).toLowerCase()] ?? 'application/octet-stream',
        'Content-Length': info.size,
        'Cache-Control': 'no-cache',
      });
      if (req.method === 'HEAD') return res.end();
      createReadStream(file).pipe(res);
    } catch (e) {
      if (!res.headersSent) sendJson(res, 500, { ok: false, error: { name: 'Error', message: 'internal error in the host' } });
      else res.destroy();
    }
  });

  await new Promise<void>((ok, fail) => {
    server.once('error', fail);
    server.listen(options.port ?? 0, '127.0.0.1', () => ok());
  });
  port = (server.address() as AddressInfo).port;
  const origin = `http://127.0.0.1:${port}`;
  return {
    url: `${origin}/#token=${token}`,
    origin,
    port,
    token,
    close: () =>
      new Promise<void>((ok) => {
        server.close(() => ok());
        server.closeAllConnections();
      }),
  };
}
