/**
 * The layers of the house, kept by a test: which folder may import which, which packages each may
 * use, no cycles between folders, no reaching past a folder's index.ts, and a core with no Node.js
 * built-ins, no process and no console. The table is the one drawn in DEVELOPERS.md.
 */
import { readdirSync, readFileSync, statSync } from 'node:fs';
import { dirname, join, normalize, relative } from 'node:path';
import { fileURLToPath } from 'node:url';
import ts from 'typescript';
import { describe, expect, it } from 'vitest';

const root = normalize(join(dirname(fileURLToPath(import.meta.url)), '..', '..'));

/** Layer units: a folder (or, for core/errors.ts, one file). The order of core's rooms is the data flow. */
const CORE_ROOMS = ['errors', 'model', 'numeric', 'cif', 'pattern', 'process', 'crystal', 'library', 'size', 'match', 'series', 'report', 'analysis'] as const;

interface LayerRule {
  /** Units this one may import (besides itself). */
  mayImport: string[];
  /** npm packages (and node: built-ins by prefix 'node:') it may import. */
  packages: string[];
}

const coreRule = (room: string): LayerRule => {
  const below = CORE_ROOMS.slice(0, CORE_ROOMS.indexOf(room as (typeof CORE_ROOMS)[number])).map((r) => `core/${r}`);
  const packages: Record<string, string[]> = {
    model: ['@noble/hashes'],
    library: ['zod', 'papaparse'],
    size: ['zod'],
  };
  return { mayImport: below, packages: packages[room] ?? [] };
};

const CORE_ALL = CORE_ROOMS.map((r) => `core/${r}`);

export const RULES: Record<string, LayerRule> = {
  ...Object.fromEntries(CORE_ROOMS.map((r) => [`core/${r}`, coreRule(r)])),
  node: { mayImport: CORE_ALL, packages: ['node:', 'better-sqlite3'] },
  api: { mayImport: CORE_ALL, packages: ['zod'] },
  app: { mayImport: [...CORE_ALL, 'node', 'api'], packages: ['node:', 'zod'] },
  cli: { mayImport: [...CORE_ALL, 'node', 'api', 'app'], packages: ['node:', 'commander'] },
  host: { mayImport: [...CORE_ALL, 'node', 'api', 'app'], packages: ['node:'] },
  electron: { mayImport: ['api', 'app'], packages: ['node:', 'electron', 'zod'] },
  renderer: { mayImport: ['core/model', 'api'], packages: ['chart.js', 'chartjs-plugin-zoom'] },
};

/** The unit a project file belongs to, or null for files outside the layered tree. */
function unitOf(file: string): string | null {
  const rel = relative(root, file).split('\\').join('/');
  if (rel.startsWith('src/core/')) {
    const room = rel.slice('src/core/'.length).split('/')[0]!.replace(/\.ts$/, '');
    return `core/${room}`;
  }
  if (rel.startsWith('src/')) return rel.slice(4).split('/')[0]!.replace(/\.ts$/, '');
  if (rel.startsWith('electron/')) return 'electron';
  if (rel.startsWith('renderer/')) return 'renderer';
  return null;
}

function listTs(dir: string): string[] {
  const out: string[] = [];
  for (const name of readdirSync(dir)) {
    const path = join(dir, name);
    if (statSync(path).isDirectory()) out.push(...listTs(path));
    else if (name.endsWith('.ts') && !name.endsWith('.d.ts')) out.push(path);
  }
  return out;
}

interface ImportEdge {
  from: string;
  spec: string;
  /** Resolved project file for a relative import. */
  target?: string;
}

function importsOf(file: string): ImportEdge[] {
  const info = ts.preProcessFile(readFileSync(file, 'utf8'), true, true);
  return info.importedFiles.map(({ fileName: spec }) => {
    if (!spec.startsWith('.')) return { from: file, spec };
    const target = normalize(join(dirname(file), spec)).replace(/\.js$/, '.ts');
    return { from: file, spec, target };
  });
}

const files = [...listTs(join(root, 'src')), ...listTs(join(root, 'electron')), ...listTs(join(root, 'renderer'))];
const edges = files.flatMap(importsOf);
const place = (e: ImportEdge): string => `${relative(root, e.from)} imports '${e.spec}'`;

/** The one module of app/ the desktop shell may use: the client that starts the engine process. */
const SHELL_APP_MODULES = new Set(['src/app/engine-client.ts']);

describe('layers', () => {
  it('every project file belongs to a layer of the table', () => {
    const strays = files.filter((f) => {
      const unit = unitOf(f);
      return unit === null || RULES[unit] === undefined;
    });
    expect(strays.map((f) => relative(root, f))).toEqual([]);
  });

  it('imports between layers follow the table', () => {
    const breaches: string[] = [];
    for (const e of edges) {
      if (!e.target) continue;
      const from = unitOf(e.from)!;
      const to = unitOf(e.target);
      if (to === null) {
        breaches.push(`${place(e)}: outside the layered tree`);
        continue;
      }
      if (to === from) continue;
      if (!RULES[from]!.mayImport.includes(to)) breaches.push(`${place(e)}: ${from} may not import ${to}`);
      if (from === 'electron' && to === 'app' && !SHELL_APP_MODULES.has(relative(root, e.target))) {
        breaches.push(`${place(e)}: the shell takes only the engine client from app/`);
      }
    }
    expect(breaches).toEqual([]);
  });

  it('each layer uses only its own packages', () => {
    const breaches = edges
      .filter((e) => !e.target)
      .filter((e) => {
        const allowed = RULES[unitOf(e.from)!]!.packages;
        return !allowed.some((p) => (p.endsWith(':') ? e.spec.startsWith(p) : e.spec === p || e.spec.startsWith(`${p}/`)));
      })
      .map(place);
    expect(breaches).toEqual([]);
  });

  it('no cycles between folders', () => {
    const folderOf = (f: string) => relative(root, dirname(f));
    const graph = new Map<string, Set<string>>();
    for (const e of edges) {
      if (!e.target) continue;
      const a = folderOf(e.from);
      const b = folderOf(e.target);
      if (a === b) continue;
      if (!graph.has(a)) graph.set(a, new Set());
      graph.get(a)!.add(b);
    }
    const cycles: string[] = [];
    const state = new Map<string, 'open' | 'done'>();
    const stack: string[] = [];
    const visit = (n: string): void => {
      state.set(n, 'open');
      stack.push(n);
      for (const m of graph.get(n) ?? []) {
        if (state.get(m) === 'open') cycles.push([...stack.slice(stack.indexOf(m)), m].join(' → '));
        else if (!state.has(m)) visit(m);
      }
      stack.pop();
      state.set(n, 'done');
    };
    for (const n of graph.keys()) if (!state.has(n)) visit(n);
    expect(cycles).toEqual([]);
  });

  it('a folder with an index.ts is entered only through it', () => {
    const indexed = new Set(files.filter((f) => f.endsWith('/index.ts')).map((f) => dirname(f)));
    const breaches = edges
      .filter((e) => e.target && !e.target.endsWith('/index.ts'))
      .filter((e) => indexed.has(dirname(e.target!)) && !e.from.startsWith(dirname(e.target!) + '/'))
      .map(place);
    expect(breaches).toEqual([]);
  });

  it('the core touches no Node.js built-in, no process and no console', () => {
    const breaches: string[] = [];
    for (const f of files.filter((file) => unitOf(file)!.startsWith('core/'))) {
      // Comments and strings may speak of them; code may not use them.
      const code = readFileSync(f, 'utf8')
        .replace(/\/\*[\s\S]*?\*\//g, '')
        .replace(/\/\/.*$/gm, '')
        .replace(/'(?:[^'\\\n]|\\.)*'|"(?:[^"\\\n]|\\.)*"|`(?:[^`\\]|\\.)*`/g, "''");
      for (const word of ['process', 'console', 'Buffer', 'require', '__dirname']) {
        if (new RegExp(`(?<![.\\w])${word}\\b`).test(code)) breaches.push(`${relative(root, f)} uses ${word}`);
      }
    }
    expect(breaches).toEqual([]);
  });

  it('the rule table fails on a breach (a planted import is caught)', () => {
    const planted: ImportEdge = { from: join(root, 'src/core/model/units.ts'), spec: '../../node/batch.js', target: join(root, 'src/node/batch.ts') };
    const from = unitOf(planted.from)!;
    expect(RULES[from]!.mayImport.includes(unitOf(planted.target!)!)).toBe(false);
    expect(RULES['core/process']!.mayImport).toContain('core/model');
  });
});
