/**
 * Two builds of the peak search side by side (DEVELOPERS.md: judge a change by counting its work or by
 * timing old and new interleaved): whether their results are identical, the fit's counted work
 * (fitWork), and CPU / wall time interleaved on the same inputs (the demo's patterns as src/app/demo.ts
 * simulates them, examples/*.xy, and 50 of the whole-job benchmark's patterns, bench/inputs.ts).
 *   node bench/compare-builds.mjs <old dist> <new dist> [counts|variants|time|fine|fitonly] [pairs or rounds]
 * where a dist is a built tree (npm run build), e.g. a `git worktree add` of the old commit.
 */
import { readdirSync } from 'node:fs';
import { join, resolve } from 'node:path';
import { createHash } from 'node:crypto';
if (process.argv.length < 4) {
  console.error('usage: node bench/compare-builds.mjs <old dist> <new dist> [counts|variants|time|fine|fitonly] [pairs or rounds]');
  process.exit(2);
}
const OLD = resolve(process.argv[2]), NEW = resolve(process.argv[3]);
const mode = process.argv[4] ?? 'all';
const extra = process.argv[5];
async function load(root) {
  const peaks = await import(`${root}/src/core/process/peaks.js`);
  const fit = await import(`${root}/src/core/process/fit.js`);
  return { findPeaks: peaks.findPeaks, fitPeakGroups: fit.fitPeakGroups, fitWork: fit.fitWork, resetFitWork: fit.resetFitWork };
}
const old = await load(OLD), neu = await load(NEW);
const { readPatternFile } = await import(`${NEW}/src/node/files.js`);
const { anodeWavelength } = await import(`${NEW}/src/core/model/wavelengths.js`);
const { simulatePattern, TYPICAL_LAB_INSTRUMENT } = await import(`${NEW}/src/core/crystal/simulate.js`);
const { demoReferences, DEMO_VARIANT_SIZES_NM, DEMO_EXPOSURE_HOURS, demoImpurityScales } = await import(`${NEW}/src/app/demo.js`);
const { prepareInputs } = await import(`${NEW}/bench/inputs.js`);
const CU = anodeWavelength('Cu');
// The demo's patterns, simulated as src/app/demo.ts does.
const refs = demoReferences(join(NEW, '..', 'reference-patterns', 'cif'));
const RANGE = { twoThetaMinDeg: 5, twoThetaMaxDeg: 60, stepDeg: 0.01 };
const sim = (phases, seed, range = RANGE) => simulatePattern({ phases, wavelength: CU, ...range, instrument: TYPICAL_LAB_INSTRUMENT, peakCounts: 6000, noiseSeed: seed, name: `demo-${seed}` });
const demo = [sim([{ lines: refs.get('standard').lines, scale: 1 }], 301, { twoThetaMinDeg: 10, twoThetaMaxDeg: 100, stepDeg: 0.01 })];
DEMO_VARIANT_SIZES_NM.forEach((v, i) => demo.push(sim([{ lines: refs.get('target').lines, scale: 1, sizeNm: v.sizeNm }], 101 + i)));
DEMO_EXPOSURE_HOURS.forEach((h, i) => {
  const { hydrate, pbi2 } = demoImpurityScales(h);
  const ph = [{ lines: refs.get('target').lines, scale: 1 - hydrate - pbi2, sizeNm: 48 }];
  if (hydrate > 0) ph.push({ lines: refs.get('hydrate').lines, scale: hydrate, sizeNm: 30 });
  if (pbi2 > 0) ph.push({ lines: refs.get('pbi2').lines, scale: pbi2, sizeNm: 40 });
  demo.push(sim(ph, 201 + i));
});
const exDir = join(NEW, '..', 'examples');
const examples = readdirSync(exDir).filter((f) => f.endsWith('.xy')).map((f) => readPatternFile(join(exDir, f)));
const job = prepareInputs(50).patternFiles.map((f) => readPatternFile(f));
const sets = { demo, examples, job50: job };
const hashOf = (r) => createHash('sha256').update(JSON.stringify(r.peaks) + JSON.stringify(Array.from(r.background))).digest('hex').slice(0, 16);
function work(impl, patterns) {
  impl.resetFitWork();
  const hashes = patterns.map((p) => hashOf(impl.findPeaks(p, { wavelength: CU })));
  return { ...impl.fitWork, hash: createHash('sha256').update(hashes.join()).digest('hex').slice(0, 16) };
}
if (mode === 'all' || mode === 'counts') {
  for (const [name, pats] of Object.entries(sets)) {
    const o = work(old, pats), n = work(neu, pats);
    console.log(`${name} (${pats.length} patterns)\n  old ${JSON.stringify(o)}\n  new ${JSON.stringify(n)}\n  identical results: ${o.hash === n.hash}`);
  }
}
if (mode === 'all' || mode === 'variants') {
  // Other fit options on the demo and example patterns, at the peaks the search found: TCH + asymmetry, fixed window, single line, pruning.
  const { singleWavelength } = await import(`${NEW}/src/core/model/wavelengths.js`);
  const variants = [
    ['tch+asymmetry', { wavelength: CU, profile: 'tch', asymmetry: true }],
    ['pseudo-voigt window 8', { wavelength: CU, windowFwhm: 8 }],
    ['single line, prune 3σ', { wavelength: singleWavelength(1.5406), pruneBelowSigma: 3 }],
  ];
  const pats = [...demo, ...examples];
  const starts = pats.map((p) => { const r = old.findPeaks(p, { wavelength: CU }); return { bg: r.background, at: r.peaks.map((q) => q.twoTheta) }; });
  for (const [name, opts] of variants) {
    const run = (impl) => { impl.resetFitWork(); const h = pats.map((p, i) => { const r = impl.fitPeakGroups(p, starts[i].bg, starts[i].at, opts); return createHash('sha256').update(JSON.stringify(r.peaks) + JSON.stringify(Array.from(r.model))).digest('hex'); }); return { ...impl.fitWork, hash: createHash('sha256').update(h.join()).digest('hex').slice(0, 16) }; };
    const o = run(old), n = run(neu);
    console.log(`${name} (${pats.length} patterns)\n  old ${JSON.stringify(o)}\n  new ${JSON.stringify(n)}\n  identical results: ${o.hash === n.hash}`);
  }
}
if (mode === 'fitonly') {
  // The group fits alone, at the search's peaks (with its acceptance rules), pattern by pattern interleaved.
  const rounds = Number(extra ?? 5);
  const cpuMs = () => { const c = process.cpuUsage(); return (c.user + c.system) / 1000; };
  const cases = job.map((p) => { const r = old.findPeaks(p, { wavelength: CU }); return { p, bg: r.background, at: r.peaks.map((q) => q.twoTheta) }; });
  const opts = { wavelength: CU, pruneBelowSigma: 3, minFwhmDeg: 0.012 };
  const acc = { thresholdSigma: 3, convergedChi2Change: 0.01 };
  const one = (impl, c) => { const c0 = cpuMs(); impl.fitPeakGroups(c.p, c.bg, c.at, opts, acc); return cpuMs() - c0; };
  for (const c of cases.slice(0, 10)) { one(old, c); one(neu, c); }
  const ratios = [];
  for (let r = 0; r < rounds; r++) {
    let o = 0, n = 0;
    cases.forEach((c, i) => { if ((i + r) % 2 === 0) { o += one(old, c); n += one(neu, c); } else { n += one(neu, c); o += one(old, c); } });
    ratios.push(n / o);
    console.log(`round ${r + 1}: old ${o.toFixed(0)} ms CPU, new ${n.toFixed(0)} ms CPU, new/old ${(n / o).toFixed(3)}`);
  }
  const s = [...ratios].sort((a, b) => a - b);
  console.log(`median new/old ${s[s.length >> 1].toFixed(3)}`);
}
if (mode === 'fine') {
  // Interleaved pattern by pattern (old, new / new, old alternating), CPU time summed per round over the 50 patterns.
  const rounds = Number(extra ?? 5);
  const cpuMs = () => { const c = process.cpuUsage(); return (c.user + c.system) / 1000; };
  const one = (impl, p) => { const c0 = cpuMs(); impl.findPeaks(p, { wavelength: CU }); return cpuMs() - c0; };
  for (const p of job.slice(0, 10)) { one(old, p); one(neu, p); }
  const ratios = [];
  for (let r = 0; r < rounds; r++) {
    let o = 0, n = 0;
    job.forEach((p, i) => { if ((i + r) % 2 === 0) { o += one(old, p); n += one(neu, p); } else { n += one(neu, p); o += one(old, p); } });
    ratios.push(n / o);
    console.log(`round ${r + 1}: old ${o.toFixed(0)} ms CPU, new ${n.toFixed(0)} ms CPU, new/old ${(n / o).toFixed(3)}`);
  }
  const s = [...ratios].sort((a, b) => a - b);
  console.log(`median new/old ${s[s.length >> 1].toFixed(3)}`);
}
if (mode === 'all' || mode === 'time') {
  const pairs = Number(extra ?? 4);
  // Wall and CPU time of the search over all 50 patterns; the pair's order alternates.
  const cpuMs = () => { const c = process.cpuUsage(); return (c.user + c.system) / 1000; };
  const time = (impl) => { const c0 = cpuMs(); const t0 = performance.now(); for (const p of job) impl.findPeaks(p, { wavelength: CU }); return { wall: performance.now() - t0, cpu: cpuMs() - c0 }; };
  time(old); time(neu); // warm-up
  const to = [], tn = [];
  for (let k = 0; k < pairs; k++) {
    if (k % 2 === 0) { to.push(time(old)); tn.push(time(neu)); } else { tn.push(time(neu)); to.push(time(old)); }
    console.log(`pair ${k + 1} (${k % 2 === 0 ? 'old first' : 'new first'}): old ${to[k].wall.toFixed(0)} ms wall / ${to[k].cpu.toFixed(0)} ms CPU, new ${tn[k].wall.toFixed(0)} / ${tn[k].cpu.toFixed(0)} ms (${job.length} patterns)`);
  }
  const med = (a) => { const s = [...a].sort((x, y) => x - y); return s.length % 2 ? s[s.length >> 1] : (s[s.length / 2 - 1] + s[s.length / 2]) / 2; };
  for (const key of ['wall', 'cpu']) {
    const o = to.map((t) => t[key]), n = tn.map((t) => t[key]);
    const ratios = o.map((v, k) => n[k] / v);
    console.log(`${key}: median old ${med(o).toFixed(0)} ms, new ${med(n).toFixed(0)} ms; per-pair new/old ${ratios.map((r) => r.toFixed(3)).join(' ')}, median ${med(ratios).toFixed(3)}`);
  }
}
