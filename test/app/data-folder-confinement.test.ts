/**
 * No request to the browser-mode host reads or writes outside its own folders: the screens' folder
 * for pages, the app-data folder for everything the API stores. Every hostile path below is sent to a
 * host over the real API; the files outside the app-data folder must keep every byte, no new file may
 * appear beside them, and no answer may carry the content of a file outside.
 */
import { request } from 'node:http';
import { lstatSync, mkdirSync, readdirSync, readFileSync, readlinkSync, symlinkSync, writeFileSync } from 'node:fs';
import { join } from 'node:path';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { createAppApi } from '../../src/app/api.js';
import { startHost, type RunningHost } from '../../src/host/server.js';
import { b64, freshDataDir, SILICON, siliconPatternText } from './fixtures.js';

const sandbox = freshDataDir('crystallog-confinement-');
const dataDir = join(sandbox, 'data');
const staticDir = join(sandbox, 'renderer');
const outside = join(sandbox, 'outside');
const SECRET = 'SECRET-OUTSIDE-THE-APP-FOLDERS';

interface Answer {
  status: number;
  body: string;
}

function rawRequest(port: number, path: string, headers: Record<string, string>, method = 'GET', body?: string): Promise<Answer> {
  return new Promise((resolve, reject) => {
    const req = request({ host: '127.0.0.1', port, path, method, headers }, (res) => {
      const chunks: Buffer[] = [];
      res.on('data', (c: Buffer) => chunks.push(c));
      res.on('end', () => resolve({ status: res.statusCode ?? 0, body: Buffer.concat(chunks).toString('utf8') }));
    });
    req.on('error', reject);
    if (body) req.write(body);
    req.end();
  });
}

/** Every entry under dir except the app-data folder: path → bytes (files) or link target (links). */
function snapshotOutsideData(dir: string, into = new Map<string, string>()): Map<string, string> {
  for (const entry of readdirSync(dir)) {
    const path = join(dir, entry);
    if (path === dataDir) continue;
    const stat = lstatSync(path);
    if (stat.isSymbolicLink()) into.set(path, `link → ${readlinkSync(path)}`);
    else if (stat.isDirectory()) snapshotOutsideData(path, into.set(path, 'folder'));
    else into.set(path, readFileSync(path).toString('base64'));
  }
  return into;
}

let host: RunningHost;
let headers: Record<string, string> = {};
const api = createAppApi({ mode: 'browser', dataDir });
let before: Map<string, string>;

beforeAll(async () => {
  mkdirSync(staticDir, { recursive: true });
  mkdirSync(outside, { recursive: true });
  writeFileSync(join(staticDir, 'index.html'), '<!doctype html><title>screens</title>');
  writeFileSync(join(staticDir, 'app.js'), 'console.log(1)');
  writeFileSync(join(sandbox, 'secret.html'), SECRET);
  writeFileSync(join(outside, 'secret.js'), SECRET);
  writeFileSync(join(outside, 'refs.json'), JSON.stringify({ ...SILICON, name: SECRET }));
  // Links inside the screens' folder that point out of it.
  symlinkSync(join(sandbox, 'secret.html'), join(staticDir, 'leak.html'));
  symlinkSync(outside, join(staticDir, 'linked'));
  host = await startHost({ api, staticDir, token: 'confinement-token-0123456789' });
  const launch = await rawRequest(host.port, '/?token=confinement-token-0123456789', { Host: `127.0.0.1:${host.port}` });
  expect(launch.status).toBe(303);
  headers = { Host: `127.0.0.1:${host.port}`, Cookie: `crystallog_token=${host.token}` };
  before = snapshotOutsideData(sandbox);
});

afterAll(async () => {
  await host.close();
  api.close();
});

const call = (method: string, params: unknown) =>
  rawRequest(host.port, `/api/${method}`, { ...headers, Origin: host.origin, 'Content-Type': 'application/json' }, 'POST', JSON.stringify(params));

describe('the page route serves only files inside the screens’ folder', () => {
  it('serves the screens themselves (the checks below are not refusing everything)', async () => {
    expect((await rawRequest(host.port, '/', headers)).status).toBe(200);
    expect((await rawRequest(host.port, '/app.js', headers)).body).toBe('console.log(1)');
  });

  const escapes = [
    '/../secret.html',
    '/%2e%2e/secret.html',
    '/%2E%2E%2Fsecret.html',
    '/..%2fsecret.html',
    '/..%2Foutside%2Fsecret.js',
    '/..%5csecret.html',
    '/.%2e/.%2e/secret.html',
    '/%2e%2e%2f%2e%2e%2f%2e%2e%2f%2e%2e%2fetc%2fhosts.html',
    `/${encodeURIComponent(join(sandbox, 'secret.html'))}`,
    join(sandbox, 'secret.html'),
    `/${join(sandbox, 'secret.html')}`,
    `/C:%5c..%5c..%5csecret.html`,
    '/leak.html',
    '/linked/secret.js',
    '/linked%2fsecret.js',
    '/index.html%00.js',
    '/app.js%00',
  ];
  it.each(escapes)('refuses %s', async (path) => {
    const answer = await rawRequest(host.port, path, headers);
    expect([400, 404]).toContain(answer.status);
    expect(answer.body).not.toContain(SECRET);
  });
});

describe('the API stores only inside the app-data folder, whatever names it is given', () => {
  it('keeps hostile project names, project ids, file names and reference names inside the app-data folder', async () => {
    const answers: Answer[] = [];
    for (const name of ['../../escape-project', `${outside}/escape-project`, '..\\..\\escape-project', '..']) {
      const created = await call('project.create', { name });
      answers.push(created);
      expect(created.status, name).toBe(200);
    }
    for (const id of ['../outside/secret', '..', `${outside}/secret`, '..%2f..%2fsecret', 'x/../../secret']) {
      const opened = await call('project.open', { id });
      answers.push(opened);
      expect(opened.status, id).toBe(400);
    }
    answers.push(await call('project.create', { name: 'confinement' }));
    for (const fileName of ['../../escape.xy', `${outside}/escape.xy`, '../outside/secret.js', '..\\..\\escape.xy']) {
      const added = await call('sample.add', { fileName, bytesBase64: b64(siliconPatternText({ points: 2001 })) });
      answers.push(added);
      expect(added.status, fileName).toBe(200);
      expect(JSON.parse(added.body).result.fileName).toBe(fileName);
    }
    // The file name of an import only labels the text sent with it; the file it names is never read.
    const imported = await call('library.import', { fileName: join(outside, 'refs.json'), text: JSON.stringify({ ...SILICON, name: 'sent text' }) });
    answers.push(imported);
    expect(JSON.parse(imported.body).result.imported).toEqual(['sent text']);
    for (const name of ['../../escape-reference', `${outside}/escape-reference`]) {
      answers.push(await call('library.save', { reference: { ...SILICON, name } }));
      answers.push(await call('library.get', { name }));
      answers.push(await call('library.history', { name }));
    }
    answers.push(await call('library.get', { name: '../secret.html' }));
    answers.push(await call('instrument.fit', { sampleId: 1, standard: join(outside, 'refs.json') }));
    answers.push(await call('report.build', { format: 'html' }));
    answers.push(await call('report.build', { format: 'csv' }));
    answers.push(await rawRequest(host.port, '/api/%2e%2e%2fsecret.html', { ...headers, Origin: host.origin, 'Content-Type': 'application/json' }, 'POST', '{}'));
    answers.push(await rawRequest(host.port, '/api/../secret.html', { ...headers, Origin: host.origin, 'Content-Type': 'application/json' }, 'POST', '{}'));

    for (const answer of answers) expect(answer.body).not.toContain(SECRET);
    expect(snapshotOutsideData(sandbox)).toEqual(before);
    // What was written is the app's own layout: projects by their generated ids, the library, the state.
    const projects = readdirSync(join(dataDir, 'projects'));
    expect(projects.length).toBeGreaterThanOrEqual(5);
    for (const file of projects) expect(file).toMatch(/^[a-z0-9-]+\.sqlite(-wal|-shm)?$/);
    for (const file of readdirSync(dataDir)) expect(file).toMatch(/^(projects|library\.sqlite(-wal|-shm)?|state\.json)$/);
  }, 120_000);
});
