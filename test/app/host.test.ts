import { request } from 'node:http';
import { mkdirSync, writeFileSync } from 'node:fs';
import { join } from 'node:path';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { createAppApi } from '../../src/app/api.js';
import type { ApiDispatcher } from '../../src/api/reply.js';
import { CONTENT_SECURITY_POLICY } from '../../src/api/csp.js';
import { startHost, type RunningHost } from '../../src/host/server.js';
import { b64, freshDataDir, siliconPatternText } from './fixtures.js';

interface Answer {
  status: number;
  headers: Record<string, string | string[] | undefined>;
  body: string;
}

function send(port: number, path: string, options: { method?: string; headers?: Record<string, string>; body?: string | Buffer } = {}): Promise<Answer> {
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

  it('passes a file in progress sent as its raw bytes, its other fields from the address; raw bytes nowhere else', async () => {
    calls.length = 0;
    const headers = { ...own(), Cookie: cookie, Origin: host.origin, 'Content-Type': 'application/octet-stream' };
    const bytes = Buffer.from('10.0 100\n10.1 120\n');
    const answer = await send(host.port, '/api/sample.stage?jobId=j-1&fileName=a%20b.xy', { method: 'POST', headers, body: bytes });
    expect(answer.status).toBe(200);
    expect(calls).toHaveLength(1);
    const params = calls[0]!.params as { jobId: string; fileName: string; bytes: Uint8Array };
    expect([params.jobId, params.fileName, Buffer.from(params.bytes).toString('utf8')]).toEqual(['j-1', 'a b.xy', '10.0 100\n10.1 120\n']);
    expect((await send(host.port, '/api/library.import?fileName=x.json', { method: 'POST', headers, body: bytes })).status).toBe(415);
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

describe('the browser-mode host answers bad input with a sentence, not a fault', () => {
  const apiCall = (path: string, body: string | Buffer) =>
    send(host.port, path, { method: 'POST', headers: { ...own(), Cookie: cookie, Origin: host.origin, 'Content-Type': 'application/json' }, body });

  it('answers a broken % escape in an API name or a page address with 400 and a sentence', async () => {
    calls.length = 0;
    const api = await apiCall('/api/%E0%A4%A', '{}');
    expect(api.status).toBe(400);
    expect(JSON.parse(api.body)).toEqual({ ok: false, error: { kind: 'input', message: 'The name of this request holds a broken % escape.' } });
    expect(calls).toEqual([]);
    const page = await send(host.port, '/app%E0%A4%A.js', { headers: { ...own(), Cookie: cookie } });
    expect(page.headers['content-type']).toMatch(/^text\/plain/);
    expect(page.status).toBe(400);
    expect(page.body).toBe('This address holds a broken % escape.');
  });

  it('answers a 100 MB request with 413 and its sentence, which reaches the client, then closes the connection', async () => {
    const body = Buffer.alloc(100 * 1024 * 1024, 0x20);
    const answer = await apiCall('/api/sample.add', body);
    expect(answer.status).toBe(413);
    expect(answer.headers.connection).toBe('close');
    expect(JSON.parse(answer.body).error.message).toBe('The request is larger than 64 MB; send fewer files at once.');
    // The host still serves the next request.
    expect((await apiCall('/api/project.state', '{}')).status).toBe(200);
  }, 60_000);
});

describe('file and project names holding NUL are refused as bad input', () => {
  let realHost: RunningHost;
  let realCookie = '';
  const realApi = createAppApi({ mode: 'browser', dataDir: freshDataDir('crystallog-host-nul-') });
  beforeAll(async () => {
    realHost = await startHost({ api: realApi, staticDir, token: 'test-token-nul-0123456789' });
    const launch = await send(realHost.port, '/?token=test-token-nul-0123456789', { headers: { Host: `127.0.0.1:${realHost.port}` } });
    realCookie = String(launch.headers['set-cookie']).split(';')[0]!;
  });
  afterAll(async () => {
    await realHost.close();
    realApi.close();
  });
  const call = (method: string, params: unknown) =>
    send(realHost.port, `/api/${method}`, {
      method: 'POST',
      headers: { Host: `127.0.0.1:${realHost.port}`, Cookie: realCookie, Origin: realHost.origin, 'Content-Type': 'application/json' },
      body: JSON.stringify(params),
    });

  it('answers 400 with a sentence for a NUL in a dropped file name, a reference file name or a project name', async () => {
    expect((await call('project.create', { name: 'NUL checks' })).status).toBe(200);
    const cases: Array<[string, unknown, RegExp]> = [
      ['sample.add', { fileName: 'si\u0000.xy', bytesBase64: b64(siliconPatternText({ points: 2001 })) }, /^FileName: a file name cannot hold control characters \(such as NUL\)\.$/],
      ['library.import', { fileName: 'refs\u0000.json', text: '[]' }, /^FileName: a file name cannot hold control characters/],
      ['project.create', { name: 'a\u0000b' }, /^Name: a name cannot hold control characters/],
    ];
    for (const [method, params, message] of cases) {
      const answer = await call(method, params);
      expect(answer.status, method).toBe(400);
      const reply = JSON.parse(answer.body);
      expect(reply.error.kind).toBe('input');
      expect(reply.error.message).toMatch(message);
    }
    const nulInName = await send(realHost.port, '/api/app.info%00', {
      method: 'POST',
      headers: { Host: `127.0.0.1:${realHost.port}`, Cookie: realCookie, Origin: realHost.origin, 'Content-Type': 'application/json' },
      body: '{}',
    });
    expect(nulInName.status).toBe(400);
    expect(JSON.parse(nulInName.body).error.message).toBe('Crystallog has no request called "app.info\\x00".');
    const state = JSON.parse((await call('project.state', {})).body);
    expect(state.result.samples).toEqual([]);
  });
});
