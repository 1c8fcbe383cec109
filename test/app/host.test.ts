import { request } from 'node:http';
import { mkdirSync, writeFileSync } from 'node:fs';
import { join } from 'node:path';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import type { ApiDispatcher } from '../../src/api/reply.js';
import { CONTENT_SECURITY_POLICY } from '../../src/api/csp.js';
import { startHost, type RunningHost } from '../../src/host/server.js';
import { freshDataDir } from './fixtures.js';

interface Answer {
  status: number;
  headers: Record<string, string | string[] | undefined>;
  body: string;
}

function send(port: number, path: string, options: { method?: string; headers?: Record<string, string>; body?: string } = {}): Promise<Answer> {
  return new Promise((resolve, reject) => {
    const req = request({ host: '127.0.0.1', port, path, method: options.method ?? 'GET', headers: options.headers }, (res) => {
      const chunks: Buffer[] = [];
      res.on('data', (c: Buffer) => chunks.push(c));
      res.on('end', () => resolve({ status: res.statusCode ?? 0, headers: res.headers, body: Buffer.concat(chunks).toString('utf8') }));
    });
    req.on('error', reject);
    if (options.body) req.write(options.body);
    req.end();
  });
}

const calls: Array<{ method: string; params: unknown }> = [];
const api: ApiDispatcher = {
  async call(method, params) {
    calls.push({ method, params });
    return { ok: true, result: { echo: method } };
  },
  close() {},
};

let host: RunningHost;
let cookie = '';
const staticDir = join(freshDataDir('crystallog-host-'), 'renderer');

beforeAll(async () => {
  mkdirSync(staticDir, { recursive: true });
  writeFileSync(join(staticDir, 'index.html'), '<!doctype html><title>t</title>');
  writeFileSync(join(staticDir, 'secret.txt'), 'not served');
  host = await startHost({ api, staticDir, token: 'test-token-0123456789' });
});
afterAll(() => host.close());

const own = (): Record<string, string> => ({ Host: `127.0.0.1:${host.port}` });

describe('the browser-mode host lets in only this launch’s page', () => {
  it('listens on the loopback address only', () => {
    expect(host.origin).toBe(`http://127.0.0.1:${host.port}`);
  });

  it('swaps the launch token for an HttpOnly, SameSite=Strict cookie', async () => {
    const answer = await send(host.port, '/?token=test-token-0123456789', { headers: own() });
    expect(answer.status).toBe(303);
    const setCookie = String(answer.headers['set-cookie']);
    expect(setCookie).toMatch(/HttpOnly/);
    expect(setCookie).toMatch(/SameSite=Strict/);
    cookie = setCookie.split(';')[0]!;
  });

  it('refuses a wrong token', async () => {
    expect((await send(host.port, '/?token=guess', { headers: own() })).status).toBe(403);
  });

  it('refuses pages without the cookie', async () => {
    const answer = await send(host.port, '/', { headers: own() });
    expect(answer.status).toBe(403);
    expect(answer.body).toMatch(/link printed when it started/);
  });

  it('serves the page with a strict Content-Security-Policy', async () => {
    const answer = await send(host.port, '/', { headers: { ...own(), Cookie: cookie } });
    expect(answer.status).toBe(200);
    expect(answer.headers['content-security-policy']).toBe(CONTENT_SECURITY_POLICY);
    expect(CONTENT_SECURITY_POLICY).toContain("script-src 'self'");
    expect(CONTENT_SECURITY_POLICY).not.toContain('unsafe');
    expect(answer.headers['x-content-type-options']).toBe('nosniff');
  });

  it('refuses a foreign Host header (DNS rebinding)', async () => {
    const answer = await send(host.port, '/', { headers: { Host: `evil.example:${host.port}`, Cookie: cookie } });
    expect(answer.status).toBe(421);
  });

  it('refuses API calls from another origin', async () => {
    const answer = await send(host.port, '/api/app.info', { method: 'POST', headers: { ...own(), Cookie: cookie, Origin: 'http://evil.example', 'Content-Type': 'application/json' }, body: '{}' });
    expect(answer.status).toBe(403);
  });

  it('refuses API calls without an Origin, as GET, or without a JSON body', async () => {
    const base = { ...own(), Cookie: cookie };
    expect((await send(host.port, '/api/app.info', { method: 'POST', headers: { ...base, 'Content-Type': 'application/json' }, body: '{}' })).status).toBe(403);
    expect((await send(host.port, '/api/app.info', { headers: { ...base, Origin: host.origin } })).status).toBe(405);
    expect((await send(host.port, '/api/app.info', { method: 'POST', headers: { ...base, Origin: host.origin, 'Content-Type': 'text/plain' }, body: '{}' })).status).toBe(415);
  });

  it('passes a well-formed call to the API', async () => {
    calls.length = 0;
    const answer = await send(host.port, '/api/project.state', { method: 'POST', headers: { ...own(), Cookie: cookie, Origin: host.origin, 'Content-Type': 'application/json' }, body: '{"a":1}' });
    expect(answer.status).toBe(200);
    expect(JSON.parse(answer.body)).toEqual({ ok: true, result: { echo: 'project.state' } });
    expect(calls).toEqual([{ method: 'project.state', params: { a: 1 } }]);
  });

  it('answers bad JSON with a sentence', async () => {
    const answer = await send(host.port, '/api/project.state', { method: 'POST', headers: { ...own(), Cookie: cookie, Origin: host.origin, 'Content-Type': 'application/json' }, body: '{nope' });
    expect(answer.status).toBe(400);
    expect(JSON.parse(answer.body).error.message).toBe('The request body is not valid JSON.');
  });

  it('serves only known file types from its own folder', async () => {
    const base = { ...own(), Cookie: cookie };
    expect((await send(host.port, '/secret.txt', { headers: base })).status).toBe(404);
    expect((await send(host.port, '/../../etc/passwd', { headers: base })).status).toBe(404);
    expect((await send(host.port, '/%2e%2e/%2e%2e/etc/hosts.html', { headers: base })).status).toBe(404);
  });
});
