import { CONTENT_SECURITY_POLICY } from '../api/csp.js';
import { createServer, type IncomingMessage, type ServerResponse } from 'node:http';
import { randomBytes, timingSafeEqual } from 'node:crypto';
import { readFile, realpath } from 'node:fs/promises';
import { extname, join, sep } from 'node:path';
import type { AddressInfo } from 'node:net';
import type { ApiDispatcher } from '../api/reply.js';
import { MAX_PATTERN_MB_SETTING, maxPatternBytes, tooLargeMessage } from '../core/model/file-limits.js';

/**
 * The local host of browser mode: the same screens and the same API as the desktop shell, served on
 * the loopback interface only, to the one browser that was given this launch's token.
 * Defences: bound to 127.0.0.1; a per-launch random token (URL once, then an HttpOnly SameSite=Strict
 * cookie); Host header must name this host and port (DNS rebinding); Origin, when sent, must be this
 * host (cross-site requests); API calls only as POST with a JSON body; a strict Content-Security-Policy.
 */
export interface HostOptions {
  api: ApiDispatcher;
  /** Folder of the built screens (index.html, app.js, app.css). */
  staticDir: string;
  /** Port to listen on; 0 (default) picks a free one. */
  port?: number;
  /** Token for this launch; random when omitted. */
  token?: string;
  /** Largest API request body accepted, bytes (default 64 MB: a drop of many pattern files comes in chunks). */
  maxBodyBytes?: number;
}

export interface RunningHost {
  /** Address to open once: carries the token, which the host swaps for a cookie. */
  launchUrl: string;
  origin: string;
  port: number;
  token: string;
  close(): Promise<void>;
}

const COOKIE = 'crystallog_token';

/** Requests whose body may be a file's raw bytes (application/octet-stream); their other fields come in the query. */
const BINARY_BODY_METHODS = new Set(['sample.stage']);

const SECURITY_HEADERS: Record<string, string> = {
  'Content-Security-Policy': CONTENT_SECURITY_POLICY,
  'X-Content-Type-Options': 'nosniff',
  'Referrer-Policy': 'no-referrer',
  'Cross-Origin-Opener-Policy': 'same-origin',
  'Cross-Origin-Resource-Policy': 'same-origin',
  'X-Frame-Options': 'DENY',
  'Cache-Control': 'no-store',
};

const CONTENT_TYPES: Record<string, string> = {
  '.html': 'text/html; charset=utf-8',
  '.js': 'text/javascript; charset=utf-8',
  '.css': 'text/css; charset=utf-8',
  '.svg': 'image/svg+xml',
  '.png': 'image/png',
  '.map': 'application/json',
};

export async function startHost(options: HostOptions): Promise<RunningHost> {
  const token = options.token ?? randomBytes(32).toString('base64url');
  const maxBody = options.maxBodyBytes ?? 64 * 1024 * 1024;
  let port = options.port ?? 0;
  const server = createServer((req, res) => {
    handle(req, res).catch(() => send(res, 500, 'text/plain; charset=utf-8', 'The local host could not answer this request.'));
  });

  async function handle(req: IncomingMessage, res: ServerResponse): Promise<void> {
    const allowedHosts = [`127.0.0.1:${port}`, `localhost:${port}`];
    if (!allowedHosts.includes(req.headers.host ?? '')) {
      return send(res, 421, 'text/plain; charset=utf-8', 'This host answers only requests addressed to 127.0.0.1 on its own port.');
    }
    const origin = req.headers.origin;
    if (origin !== undefined && !allowedHosts.some((h) => origin === `http://${h}`)) {
      return send(res, 403, 'text/plain; charset=utf-8', 'Requests from other web sites are refused.');
    }
    const url = parseRequestUrl(req.url, port);
    if (!url) return send(res, 400, 'text/plain; charset=utf-8', 'The address of this request cannot be read.');
    const given = url.searchParams.get('token');
    if (given !== null) {
      if (!sameSecret(given, token)) return send(res, 403, 'text/plain; charset=utf-8', 'This launch link is not valid; start Crystallog again to get a new one.');
      res.writeHead(303, {
        ...SECURITY_HEADERS,
        'Set-Cookie': `${COOKIE}=${token}; HttpOnly; SameSite=Strict; Path=/`,
        Location: '/',
      });
      res.end();
      return;
    }
    if (!sameSecret(readCookie(req.headers.cookie, COOKIE) ?? '', token)) {
      return send(res, 403, 'text/plain; charset=utf-8', 'Open Crystallog through the link printed when it started; this browser has not been given its token.');
    }
    if (url.pathname.startsWith('/api/')) return handleApi(req, res, url.pathname.slice('/api/'.length), url);
    if (req.method !== 'GET' && req.method !== 'HEAD') return send(res, 405, 'text/plain; charset=utf-8', 'Only GET for pages.');
    return serveStatic(res, url.pathname);
  }

  async function handleApi(req: IncomingMessage, res: ServerResponse, method: string, url: URL): Promise<void> {
    if (req.method !== 'POST') return send(res, 405, 'text/plain; charset=utf-8', 'API calls are POST requests.');
    const methodName = decodePath(method);
    const contentType = req.headers['content-type'] ?? '';
    const binary = contentType.startsWith('application/octet-stream') && methodName !== null && BINARY_BODY_METHODS.has(methodName);
    if (!binary && !contentType.startsWith('application/json')) {
      return send(res, 415, 'text/plain; charset=utf-8', 'API calls carry a JSON body (a file in progress: its bytes).');
    }
    if (req.headers.origin === undefined) {
      return send(res, 403, 'text/plain; charset=utf-8', 'API calls must come from the Crystallog page itself.');
    }
    if (methodName === null) {
      return sendJson(res, 400, { ok: false, error: { kind: 'input', message: 'The name of this request holds a broken % escape.' } });
    }
    const limit = binary ? Math.max(maxBody, maxPatternBytes(process.env[MAX_PATTERN_MB_SETTING])) : maxBody;
    const body = await readBody(req, limit);
    if (body === null) {
      // The whole body was read (and dropped), so the client, done sending, reads this answer; the
      // connection is then closed rather than kept for another request.
      const message = binary ? `This file is too large: ${tooLargeMessage(Number(req.headers['content-length'] ?? limit + 1), limit)}.` : `The request is larger than ${Math.round(maxBody / 1048576)} MB; send fewer files at once.`;
      return sendJson(res, 413, { ok: false, error: { kind: 'input', message } }, { Connection: 'close' });
    }
    let params: unknown;
    if (binary) {
      // A file's bytes as the body (sent by the browser from the File itself, never as a string on the page), the other fields in the address.
      params = { ...Object.fromEntries(url.searchParams), bytes: body };
    } else {
      try {
        params = body.length === 0 ? {} : JSON.parse(body.toString('utf8'));
      } catch {
        return sendJson(res, 400, { ok: false, error: { kind: 'input', message: 'The request body is not valid JSON.' } });
      }
    }
    const reply = await options.api.call(methodName, params);
    const status = reply.ok ? 200 : reply.error.kind === 'input' ? 400 : 500;
    return sendJson(res, status, reply);
  }

  async function serveStatic(res: ServerResponse, pathname: string): Promise<void> {
    const decoded = pathname === '/' ? '/index.html' : decodePath(pathname);
    if (decoded === null) return send(res, 400, 'text/plain; charset=utf-8', 'This address holds a broken % escape.');
    const file = await staticFile(options.staticDir, decoded);
    const type = file === null ? undefined : CONTENT_TYPES[extname(file)];
    if (file === null || !type) return send(res, 404, 'text/plain; charset=utf-8', 'Not found.');
    try {
      const body = await readFile(file);
      res.writeHead(200, { ...SECURITY_HEADERS, 'Content-Type': type, 'Content-Length': body.length });
      res.end(body);
    } catch {
      send(res, 404, 'text/plain; charset=utf-8', 'Not found.');
    }
  }

  await new Promise<void>((resolve, reject) => {
    server.once('error', reject);
    server.listen(port, '127.0.0.1', () => resolve());
  });
  port = (server.address() as AddressInfo).port;
  const originUrl = `http://127.0.0.1:${port}`;
  return {
    launchUrl: `${originUrl}/?token=${token}`,
    origin: originUrl,
    port,
    token,
    close: () =>
      new Promise<void>((resolve) => {
        server.closeAllConnections();
        server.close(() => resolve());
      }),
  };
}

function sameSecret(given: string, token: string): boolean {
  const a = Buffer.from(given);
  const b = Buffer.from(token);
  return a.length === b.length && timingSafeEqual(a, b);
}

function readCookie(header: string | undefined, name: string): string | undefined {
  if (!header) return undefined;
  for (const part of header.split(';')) {
    const eq = part.indexOf('=');
    if (eq > 0 && part.slice(0, eq).trim() === name) return part.slice(eq + 1).trim();
  }
  return undefined;
}

/**
 * The body as text, or null when it is larger than maxBytes: then the rest is still read and dropped,
 * so the answer saying so reaches a client that is still sending (closing the socket while data is
 * unread would reset the connection and lose the answer). Node's own requestTimeout bounds how long
 * a client may keep sending.
 */
function readBody(req: IncomingMessage, maxBytes: number): Promise<Buffer | null> {
  return new Promise((resolve, reject) => {
    const chunks: Buffer[] = [];
    let size = 0;
    req.on('data', (chunk: Buffer) => {
      size += chunk.length;
      if (size > maxBytes) chunks.length = 0;
      else chunks.push(chunk);
    });
    req.on('end', () => resolve(size > maxBytes ? null : Buffer.concat(chunks)));
    req.on('error', reject);
  });
}

/** A path with its % escapes decoded; null for a broken escape (bad input, not a fault). */
function decodePath(path: string): string | null {
  try {
    return decodeURIComponent(path);
  } catch {
    return null;
  }
}

function parseRequestUrl(raw: string | undefined, port: number): URL | null {
  try {
    return new URL(raw ?? '/', `http://127.0.0.1:${port}`);
  } catch {
    return null;
  }
}

/**
 * The file a page address names inside the screens' folder, or null when it would lie outside it:
 * ".." steps (plain or %-encoded), encoded slashes, NUL, and links pointing out of the folder all end here.
 */
async function staticFile(staticDir: string, decodedPath: string): Promise<string | null> {
  if (decodedPath.includes('\0') || decodedPath.includes('\\')) return null;
  const segments = decodedPath.split('/').filter((part) => part !== '' && part !== '.');
  if (segments.length === 0 || segments.includes('..')) return null;
  try {
    const root = await realpath(staticDir);
    const file = await realpath(join(root, ...segments));
    return file.startsWith(root + sep) ? file : null;
  } catch {
    return null;
  }
}

function send(res: ServerResponse, status: number, type: string, body: string): void {
  res.writeHead(status, { ...SECURITY_HEADERS, 'Content-Type': type });
  res.end(body);
}

function sendJson(res: ServerResponse, status: number, value: unknown, extraHeaders: Record<string, string> = {}): void {
  const body = JSON.stringify(value);
  res.writeHead(status, { ...SECURITY_HEADERS, ...extraHeaders, 'Content-Type': 'application/json; charset=utf-8', 'Content-Length': Buffer.byteLength(body) });
  res.end(body);
}
