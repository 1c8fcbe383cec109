import {
  CategoryScale,
  Chart,
  Legend,
  LinearScale,
  LineController,
  LineElement,
  LogarithmicScale,
  PointElement,
  ScatterController,
  Tooltip,
  type ChartDataset,
  type Plugin,
  type ScatterDataPoint,
} from 'chart.js';
import zoomPlugin from 'chartjs-plugin-zoom';
import { COLORS } from './colours.js';
import { decimateMinMax, visibleRange } from '../../src/core/model/decimate.js';
import { COARSE_ABOVE_POINTS, COARSE_COLUMNS, coarseIndices, nextTask } from './coarse.js';
import { placeLabels, type LabelRequest, type PlacementOptions } from './label-placement.js';
import { nearestIndex, READOUT_HINT, readingAt, readingText } from './readout.js';
import { axisTitle, convertX, intensityTitle, transformY, twoThetaFromDisplay, untransformY, type AxisUnit, type IntensityScale } from './units.js';

Chart.register(LineController, ScatterController, LineElement, PointElement, LinearScale, LogarithmicScale, CategoryScale, Tooltip, Legend, zoomPlugin);

export { COLORS };

export interface PatternSeries {
  label: string;
  x: Float32Array;
  y: Float32Array;
  background?: Float32Array | null;
  model?: Float32Array | null;
  /** For a long pattern: which points make each curve's coarse copy (see CurveSource), found off the page's thread. */
  coarse?: CoarseIndices | null;
}

/** Indices of each curve's coarse copy: the min/max points of COARSE_COLUMNS columns over the whole range. */
export interface CoarseIndices {
  y: Int32Array;
  background: Int32Array | null;
  model: Int32Array | null;
  /** Of the measured minus the fit. */
  difference: Int32Array | null;
}

export type MarkKind = 'matched' | 'unexplained' | 'satellite' | 'low-angle' | 'missing';

export interface PeakMark {
  twoTheta: number;
  /** Intensity (counts) where the mark sits. */
  y: number;
  kind: MarkKind;
  label: string;
  /** Miller indices of the reference line the peak was matched to, as the hkl label shows them. */
  hkl?: string;
  /** For a matched peak: the phase whose colour the mark takes (one of the view's phases). */
  phase?: string;
  /** Marks on the same peak below this one: a peak two phases share stacks their marks. */
  stackIndex?: number;
  /** Words written over the mark on the plot (the satellite's line, "Cu Kβ"). */
  tag?: string;
}

/** A phase in the legend, with the colour its peaks are marked in. */
export interface PhaseLegend {
  name: string;
  verdict: 'present' | 'uncertain';
  color: string;
}

export interface ReferenceStrip {
  name: string;
  color: string;
  /**
   * Counts above the background per unit of reference intensity, from the peaks matched to the phase;
   * without it the strongest line is drawn as tall as the highest point in view.
   */
  countsPerIntensity?: number | null;
  lines: Array<{ twoTheta: number; intensity: number | null; label: string }>;
}

export interface PatternViewModel {
  main: PatternSeries;
  overlays: PatternSeries[];
  marks: PeakMark[];
  references: ReferenceStrip[];
  lambda: number;
  axis: AxisUnit;
  scale: IntensityScale;
  /** Offset between stacked samples, as a fraction of the first pattern's span. */
  offsetFraction: number;
  showFit: boolean;
  /** Label matched peaks with their hkl. */
  hklLabels?: boolean;
  /** The phases whose peaks are marked, in legend order; a matched mark takes its phase's colour. */
  phases?: PhaseLegend[];
  /** False for a curve that is not a measurement (a difference of two): its legend says no "(measured)". */
  measured?: boolean;
  /** What the cursor readout calls the curve's values (default counts). */
  readoutValue?: string;
  /** The intensity axis's title when the patterns are normalised (else counts). */
  intensityTitle?: string | null;
}

const STRIP_ROW_PX = 18;
/** A band above the legend for the cursor readout, so the readout never covers the curve. */
const READOUT_BAND_PX = 20;

interface StripOptions {
  references: ReferenceStrip[];
  axis: AxisUnit;
  lambda: number;
}

/** Reference lines of the checked phases, drawn as sticks in rows beneath the pattern. */
const referenceStripPlugin: Plugin<'line'> = {
  id: 'referenceStrip',
  afterDraw(chart, _args, options) {
    const { references, axis, lambda } = options as unknown as StripOptions;
    if (!references?.length) return;
    const xScale = chart.scales.x!;
    const area = chart.chartArea;
    const ctx = chart.ctx;
    ctx.save();
    let top = xScale.bottom + 4;
    for (const ref of references) {
      ctx.strokeStyle = COLORS.grid;
      ctx.beginPath();
      ctx.moveTo(area.left, top + STRIP_ROW_PX - 2);
      ctx.lineTo(area.right, top + STRIP_ROW_PX - 2);
      ctx.stroke();
      ctx.strokeStyle = ref.color;
      ctx.lineWidth = 1.5;
      for (const line of ref.lines) {
        const px = xScale.getPixelForValue(convertX(line.twoTheta, axis, lambda));
        if (!(px >= area.left && px <= area.right)) continue;
        const height = 3 + ((line.intensity ?? 30) / 100) * (STRIP_ROW_PX - 6);
        ctx.beginPath();
        ctx.moveTo(px, top + STRIP_ROW_PX - 2);
        ctx.lineTo(px, top + STRIP_ROW_PX - 2 - height);
        ctx.stroke();
      }
      // The phase's name sits at the strip's left end, on a pale backing so sticks do not hide it.
      const label = ref.name.length > 40 ? `${ref.name.slice(0, 39)}…` : ref.name;
      ctx.font = '11px system-ui, sans-serif';
      const width = ctx.measureText(label).width;
      ctx.fillStyle = 'rgba(255,255,255,0.85)';
      ctx.fillRect(area.left + 1, top + 1, width + 8, STRIP_ROW_PX - 4);
      ctx.fillStyle = ref.color;
      ctx.textAlign = 'left';
      ctx.textBaseline = 'middle';
      ctx.fillText(label, area.left + 5, top + STRIP_ROW_PX / 2 - 1);
      top += STRIP_ROW_PX;
    }
    ctx.restore();
  },
};

/** Paints the canvas white first, so exported PNGs are not transparent. */
const paperPlugin: Plugin<'line'> = {
  id: 'paper',
  beforeDraw(chart) {
    const ctx = chart.ctx;
    ctx.save();
    ctx.fillStyle = '#ffffff';
    ctx.fillRect(0, 0, chart.width, chart.height);
    ctx.restore();
  },
};

interface MarkDataset {
  markKind?: MarkKind;
  markHkl?: Array<string | undefined>;
  markTags?: Array<string | undefined>;
  markPhase?: string;
}

/** The labels last drawn on a chart (for the SVG export): text, box and colour. */
export interface DrawnLabel {
  text: string;
  left: number;
  top: number;
  width: number;
  color: string;
  bold: boolean;
  /** The peak the label belongs to, when it was lifted off it (a leader line joins them). */
  anchor: { x: number; y: number } | null;
}

export const LABEL_HEIGHT_PX = 12;

/** Where a lifted label's leader line meets the label's lower edge: under the peak, or the label's nearest corner. */
export function leaderEndX(anchorX: number, left: number, width: number): number {
  return Math.min(Math.max(anchorX, left), left + width);
}
export const drawnLabels = new WeakMap<Chart, DrawnLabel[]>();

/**
 * Words over the low-angle extra peaks (always, so they stand out in print too) and, when asked,
 * the hkl of every matched peak; placed greedily so no two labels overlap and none covers a mark.
 */
const peakLabelPlugin: Plugin<'line'> = {
  id: 'peakLabels',
  afterDatasetsDraw(chart, _args, options) {
    const { hkl: showHkl } = options as unknown as { hkl?: boolean };
    const ctx = chart.ctx;
    const area = chart.chartArea;
    const requests: LabelRequest[] = [];
    const texts: Array<{ text: string; color: string; bold: boolean }> = [];
    const obstacles: PlacementOptions['obstacles'] = [];
    ctx.save();
    chart.data.datasets.forEach((dataset, index) => {
      const { markKind, markHkl, markTags } = dataset as MarkDataset;
      if (!markKind || !chart.isDatasetVisible(index)) return;
      const radius = Number((dataset as { pointRadius?: number }).pointRadius ?? 4);
      const xScale = chart.scales.x!;
      const yScale = chart.scales.y!;
      // From the data, not the point elements: chart.js leaves the elements of points out of view unplaced.
      (dataset.data as Array<{ x: number; y: number }>).forEach((point, i) => {
        const x = xScale.getPixelForValue(point.x);
        const y = yScale.getPixelForValue(point.y);
        if (!(x >= area.left && x <= area.right && y >= area.top && y <= area.bottom)) return;
        obstacles.push({ left: x - radius, top: y - radius, right: x + radius, bottom: y + radius });
        const hkl = showHkl ? markHkl?.[i] : undefined;
        const lowAngle = markKind === 'low-angle';
        const tag = markKind === 'satellite' ? markTags?.[i] : undefined;
        if (!lowAngle && !tag && !(markKind === 'matched' && hkl)) return;
        const text = lowAngle ? `low-angle extra${hkl ? ` ${hkl}` : ''}` : (tag ?? hkl!);
        ctx.font = `${lowAngle ? 'bold ' : ''}11px system-ui, sans-serif`;
        // The low-angle alarm goes first and may climb higher to find room; satellite names next; hkl labels follow by peak height.
        requests.push({ x, y: Math.max(area.top, y - radius), width: ctx.measureText(text).width + 4, height: LABEL_HEIGHT_PX, priority: (lowAngle ? 1e12 : tag ? 1e9 : 0) - y, ...(lowAngle ? { maxStack: 12 } : tag ? { maxStack: 4 } : {}) });
        texts.push({ text, color: lowAngle ? COLORS.lowAngle : tag ? COLORS.satellite : COLORS.ink, bold: lowAngle });
      });
    });
    const { placed, hidden } = placeLabels(requests, { left: area.left, right: area.right, top: area.top, obstacles });
    const drawn: DrawnLabel[] = [];
    ctx.textAlign = 'left';
    ctx.textBaseline = 'top';
    for (const p of placed) {
      const { text, color, bold } = texts[p.index]!;
      const r = requests[p.index]!;
      const anchor = p.stacked > 0 ? { x: r.x, y: r.y } : null;
      if (anchor) {
        ctx.strokeStyle = 'rgba(36,49,58,0.35)';
        ctx.lineWidth = 1;
        ctx.beginPath();
        ctx.moveTo(anchor.x, anchor.y - 2);
        ctx.lineTo(leaderEndX(anchor.x, p.left, r.width), p.top + LABEL_HEIGHT_PX);
        ctx.stroke();
      }
      ctx.fillStyle = color;
      ctx.font = `${bold ? 'bold ' : ''}11px system-ui, sans-serif`;
      ctx.fillText(text, p.left + 2, p.top);
      drawn.push({ text, left: p.left, top: p.top, width: r.width, color, bold, anchor });
    }
    ctx.restore();
    drawnLabels.set(chart as unknown as Chart, drawn);
    // For the record (and the browser tests): labels drawn and labels left out for want of room.
    chart.canvas.dataset.labelsShown = String(placed.length);
    chart.canvas.dataset.labelsHidden = String(hidden.length);
  },
};

interface StickOptions {
  references: ReferenceStrip[];
  axis: AxisUnit;
  lambda: number;
  scale: IntensityScale;
  main: PatternSeries;
}

/** Where a reference line's stick starts and ends, in counts: on the background, as tall as the phase's matched peaks say. */
function stickCounts(ref: ReferenceStrip, twoTheta: number, intensity: number | null, main: PatternSeries): { from: number; to: number } | null {
  const k = ref.countsPerIntensity;
  if (!k || !(k > 0) || main.x.length === 0) return null;
  const i = nearestIndex(main.x, twoTheta);
  const from = main.background ? main.background[i]! : 0;
  return { from, to: from + (intensity ?? 30) * k };
}

/** The highest stick top over the whole pattern (counts), so the intensity axis can reach it. */
function highestStick(references: ReferenceStrip[], main: PatternSeries): number {
  let top = -Infinity;
  const n = main.x.length;
  for (const ref of references)
    for (const line of ref.lines) {
      if (n === 0 || line.twoTheta < main.x[0]! || line.twoTheta > main.x[n - 1]!) continue;
      const stick = stickCounts(ref, line.twoTheta, line.intensity, main);
      if (stick && stick.to > top) top = stick.to;
    }
  return top;
}

/**
 * Reference lines drawn as sticks over the pattern, behind the curves. A phase with matched peaks
 * stands on the background with its sticks as tall as its matched peaks make them; another phase's
 * strongest line (100) is as tall as the highest measured point in view above the lowest. Heights are
 * in counts, drawn on the chosen intensity scale; the intensity axis reaches the tallest stick.
 */
export interface StickSegment {
  color: string;
  x: number;
  /** Pixel rows of the stick's foot and top. */
  bottom: number;
  top: number;
}

/** The reference sticks as the chart now shows them, in pixels (the canvas and the SVG export draw these). */
export function referenceSticks(chart: Chart): StickSegment[] {
  const options = (chart.options.plugins as Record<string, unknown> | undefined)?.referenceSticks as StickOptions | undefined;
  const measured = (chart.data.datasets[0]?.data ?? []) as Array<{ x: number; y: number }>;
  const xScale = chart.scales.x;
  const yScale = chart.scales.y;
  if (!options?.references?.length || measured.length === 0 || !xScale || !yScale) return [];
  const { references, axis, lambda, scale, main } = options;
  const area = chart.chartArea;
  const [low, high] = [Math.min(xScale.min, xScale.max), Math.max(xScale.min, xScale.max)];
  let min = Infinity;
  let max = -Infinity;
  for (const { x, y } of measured) {
    if (x < low || x > high) continue;
    if (y < min) min = y;
    if (y > max) max = y;
  }
  if (!(max > min)) return [];
  const base = untransformY(min, scale);
  const top = untransformY(max, scale);
  const pixel = (counts: number): number => Math.min(area.bottom, Math.max(area.top, yScale.getPixelForValue(transformY(counts, scale))));
  const out: StickSegment[] = [];
  for (const ref of references)
    for (const line of ref.lines) {
      const x = xScale.getPixelForValue(convertX(line.twoTheta, axis, lambda));
      if (!(x >= area.left && x <= area.right)) continue;
      const stick = stickCounts(ref, line.twoTheta, line.intensity, main) ?? { from: base, to: base + ((line.intensity ?? 30) / 100) * (top - base) };
      out.push({ color: ref.color, x, bottom: pixel(stick.from), top: pixel(stick.to) });
    }
  return out;
}

export const STICK_ALPHA = 0.55;

const referenceStickPlugin: Plugin<'line'> = {
  id: 'referenceSticks',
  beforeDatasetsDraw(chart) {
    const sticks = referenceSticks(chart as unknown as Chart);
    if (!sticks.length) return;
    const ctx = chart.ctx;
    ctx.save();
    ctx.globalAlpha = STICK_ALPHA;
    ctx.lineWidth = 1.5;
    for (const stick of sticks) {
      ctx.strokeStyle = stick.color;
      ctx.beginPath();
      ctx.moveTo(stick.x, stick.bottom);
      ctx.lineTo(stick.x, stick.top);
      ctx.stroke();
    }
    ctx.restore();
  },
};

type PointData = ScatterDataPoint[];

/**
 * A curve in display units, what is drawn being decimated from it for the current view. A long
 * curve also has a coarse copy (the min/max points of COARSE_COLUMNS columns over its whole range):
 * whole and slightly zoomed views are drawn from it, and its full-resolution arrays are made only
 * when a view needs them (zoomed in), so a curve of millions of points costs no pass over them.
 */
interface CurveSource {
  points: number;
  full(): { x: Float64Array; y: ArrayLike<number> };
  coarse?: { x: Float64Array; y: Float64Array };
}

/** The coarse copy is used while it has at least this many of its columns per pixel column in view. */
const COARSE_PER_PIXEL = 4;

/** Computed on first use, once. */
function once<T>(make: () => T): () => T {
  let value: T | undefined;
  return () => (value ??= make());
}

/**
 * A curve from its full arrays (made on demand) and, for a long one, its coarse copy: from the given
 * indices (display values at those points only), or else reduced from the full arrays here.
 */
function curveSource(
  points: number,
  full: () => { x: Float64Array; y: ArrayLike<number> },
  coarseX: (indices: Int32Array) => Float64Array,
  yAt: (i: number) => number,
  indices: Int32Array | null | undefined,
): CurveSource {
  const source: CurveSource = { points, full: once(full) };
  if (points <= COARSE_ABOVE_POINTS) return source;
  const kept = indices ?? coarseIndices(source.full().x, source.full().y);
  const y = new Float64Array(kept.length);
  for (let k = 0; k < kept.length; k++) y[k] = yAt(kept[k]!);
  source.coarse = { x: coarseX(kept), y };
  return source;
}

/** Display x at the given points only. */
function displayXAt(x: Float32Array, indices: Int32Array, axis: AxisUnit, lambda: number): Float64Array {
  const out = new Float64Array(indices.length);
  for (let k = 0; k < indices.length; k++) out[k] = convertX(x[indices[k]!]!, axis, lambda);
  return out;
}

/** The points the view draws from: the coarse copy while it is fine enough for this view and width. */
function drawFrom(source: CurveSource, low: number, high: number, columns: number): { x: Float64Array; y: ArrayLike<number> } {
  const coarse = source.coarse;
  if (!coarse || coarse.x.length < 2) return source.full();
  const whole = Math.abs(coarse.x[coarse.x.length - 1]! - coarse.x[0]!);
  return (COARSE_COLUMNS * (high - low)) / whole >= COARSE_PER_PIXEL * columns ? coarse : source.full();
}

type CurveDataset = ChartDataset<'line', PointData> & { source?: CurveSource };

/** 2θ converted once to the display unit (d runs backwards in index order; decimation copes with either). */
function displayX(x: Float32Array, axis: AxisUnit, lambda: number): Float64Array {
  const out = new Float64Array(x.length);
  for (let i = 0; i < x.length; i++) out[i] = convertX(x[i]!, axis, lambda);
  return out;
}

/** Intensities as drawn (scale and stacking offset applied), without a copy when nothing changes. */
function displayY(y: Float32Array, scale: IntensityScale, shift: ((v: number) => number) | null): ArrayLike<number> {
  if (scale === 'linear' && shift === null) return y;
  const out = new Float64Array(y.length);
  for (let i = 0; i < y.length; i++) {
    const v = transformY(y[i]!, scale);
    out[i] = shift ? shift(v) : v;
  }
  return out;
}

/**
 * Replaces each curve's drawn points by the min/max per pixel column of its visible part (all points
 * when zoomed in far enough), before chart.js lays the chart out: so a zoom or a pan re-decimates.
 */
const decimationPlugin: Plugin<'line'> = {
  id: 'patternDecimation',
  beforeUpdate(chart) {
    const scaleOptions = chart.options.scales?.x as { min?: number; max?: number } | undefined;
    const low = scaleOptions?.min;
    const high = scaleOptions?.max;
    if (low === undefined || high === undefined) return;
    const area = chart.chartArea;
    let drawn = 0;
    const columns = Math.max(1, Math.ceil(area && area.right > area.left ? area.right - area.left : chart.width));
    for (const dataset of chart.data.datasets as CurveDataset[]) {
      if (!dataset.source) continue;
      const source = drawFrom(dataset.source, low, high, columns);
      const { from, to } = visibleRange(source.x, low, high);
      const kept = decimateMinMax(source.x, source.y, { from, to, xLow: low, xHigh: high, buckets: columns });
      const data: PointData = new Array(kept.length);
      // chart.js wants x ascending (the options say the data is normalised): d runs backwards.
      const backwards = source.x.length > 1 && source.x[source.x.length - 1]! < source.x[0]!;
      for (let k = 0; k < kept.length; k++) {
        const i = kept[backwards ? kept.length - 1 - k : k]!;
        data[k] = { x: source.x[i]!, y: source.y[i]! };
      }
      dataset.data = data;
      drawn += data.length;
    }
    // For the record (and the browser tests): how many curve points the last update drew, over what.
    chart.canvas.dataset.drawnPoints = String(drawn);
    chart.canvas.dataset.viewRange = `${low} ${high}`;
    chart.canvas.dataset.columns = String(columns);
  },
  afterUpdate(chart) {
    // The first layout (and a resize) settles the plot's width only after the points were chosen:
    // choose again once, with one bucket per pixel column of the plot as it now is.
    const area = chart.chartArea;
    if (area && Math.ceil(area.right - area.left) !== Number(chart.canvas.dataset.columns)) requestAnimationFrame(() => chart.canvas && chart.update('none'));
  },
};

/** The span over the given points only. */
function spanAt(values: ArrayLike<number>, indices: Int32Array, scale: IntensityScale): { min: number; max: number } {
  let min = Infinity;
  let max = -Infinity;
  for (const i of indices) {
    const v = transformY(values[i]!, scale);
    if (v < min) min = v;
    if (v > max) max = v;
  }
  return { min, max };
}

function span(values: ArrayLike<number>, scale: IntensityScale): { min: number; max: number } {
  let min = Infinity;
  let max = -Infinity;
  for (let i = 0; i < values.length; i++) {
    const v = transformY(values[i]!, scale);
    if (v < min) min = v;
    if (v > max) max = v;
  }
  return { min, max };
}

interface MarkStyle {
  label: string;
  color: string;
  style: 'triangle' | 'rectRot' | 'circle' | 'crossRot';
  radius: number;
  rotation: number;
  fill: boolean;
}

const MARK_STYLES: Record<Exclude<MarkKind, 'matched'>, MarkStyle> = {
  unexplained: { label: 'unexplained peaks', color: COLORS.unexplained, style: 'rectRot', radius: 5, rotation: 0, fill: true },
  satellite: { label: 'tube satellite lines (Kβ, W Lα)', color: COLORS.satellite, style: 'crossRot', radius: 5, rotation: 0, fill: false },
  'low-angle': { label: 'low-angle extra peaks', color: COLORS.lowAngle, style: 'triangle', radius: 7, rotation: 180, fill: true },
  missing: { label: 'missing strong lines', color: COLORS.missing, style: 'circle', radius: 5, rotation: 0, fill: false },
};

/** The style of a phase's marks: a down-pointing triangle over each peak it explains, in its colour. */
function phaseStyle(phase: PhaseLegend): MarkStyle {
  return { label: phase.verdict === 'uncertain' ? `${phase.name} (uncertain)` : phase.name, color: phase.color, style: 'triangle', radius: 5, rotation: 180, fill: phase.verdict === 'present' };
}

/**
 * Peak marks: one dataset per phase (its colour, its name in the legend), then unexplained peaks,
 * satellites, the low-angle extra peaks and the missing strong lines. Marks on one peak stack upwards.
 */
function markDatasets(view: PatternViewModel, width: number): ChartDataset<'scatter', PointData>[] {
  const { axis, lambda, scale } = view;
  const groups: Array<{ style: MarkStyle; kind: MarkKind; phase?: string; marks: PeakMark[] }> = [];
  const phases = view.phases ?? [];
  for (const phase of phases) groups.push({ style: phaseStyle(phase), kind: 'matched', phase: phase.name, marks: view.marks.filter((m) => m.kind === 'matched' && m.phase === phase.name) });
  // A matched mark of no listed phase (a caller without phases) keeps the first phase colour.
  const orphans = view.marks.filter((m) => m.kind === 'matched' && !phases.some((p) => p.name === m.phase));
  if (orphans.length) groups.push({ style: { label: 'matched peaks', color: COLORS.phases[0]!, style: 'triangle', radius: 4, rotation: 180, fill: true }, kind: 'matched', marks: orphans });
  for (const kind of ['unexplained', 'satellite', 'low-angle', 'missing'] as const) groups.push({ style: MARK_STYLES[kind], kind, marks: view.marks.filter((m) => m.kind === kind) });
  const out: ChartDataset<'scatter', PointData>[] = [];
  for (const group of groups) {
    // In x order, as the chart's normalised data must be (else zoomed views lose marks).
    const marks = group.marks
      .map((m) => ({ mark: m, x: convertX(m.twoTheta, axis, lambda) }))
      .filter((m) => Number.isFinite(m.x))
      .sort((a, b) => a.x - b.x);
    if (!marks.length) continue;
    const s = group.style;
    const place = (m: PeakMark): number => {
      const level = group.kind === 'missing' ? 0 : 1 + (m.stackIndex ?? 0) * 1.4;
      return scale === 'log' ? transformY(m.y, scale) * 1.3 ** level : transformY(m.y, scale) + level * 0.03 * width;
    };
    out.push({
      type: 'scatter',
      label: s.label,
      data: marks.map(({ mark, x }) => ({ x, y: place(mark) })),
      pointStyle: s.style,
      pointRadius: s.radius,
      pointHoverRadius: s.radius + 2,
      pointRotation: s.rotation,
      borderColor: s.color,
      backgroundColor: s.fill ? s.color : 'rgba(255,255,255,0.9)',
      borderWidth: s.fill ? 1 : 2,
      parsing: false,
      markKind: group.kind,
      ...(group.phase !== undefined ? { markPhase: group.phase } : {}),
      markLabels: marks.map(({ mark }) => mark.label),
      markHkl: marks.map(({ mark }) => mark.hkl),
      markTags: marks.map(({ mark }) => mark.tag),
    } as ChartDataset<'scatter', PointData>);
  }
  return out;
}

/** Datasets for a view: stacked samples, fit, background and difference, peak marks. */
function buildDatasets(view: PatternViewModel): ChartDataset<'line' | 'scatter', PointData>[] {
  const { axis, lambda, scale } = view;
  const all = [view.main, ...view.overlays];
  // A long pattern's extremes are those of its coarse copy (it keeps every column's lowest and highest point).
  const range = view.main.coarse && view.main.x.length > COARSE_ABOVE_POINTS ? spanAt(view.main.y, view.main.coarse.y, scale) : span(view.main.y, scale);
  const width = range.max - range.min || 1;
  const stackShift = (i: number) => (v: number) => (scale === 'log' ? v * 10 ** (i * view.offsetFraction * 2) : v + i * view.offsetFraction * width);
  const line = (label: string, source: CurveSource, color: string, extra: Partial<ChartDataset<'line', PointData>> = {}): CurveDataset => ({
    type: 'line',
    label,
    data: [],
    source,
    borderColor: color,
    backgroundColor: color,
    borderWidth: 1.2,
    pointRadius: 0,
    pointHitRadius: 0,
    parsing: false,
    normalized: true,
    spanGaps: true,
    ...extra,
  });
  const datasets: ChartDataset<'line' | 'scatter', PointData>[] = [];
  const { main } = view;
  const coarse = main.coarse ?? null;
  const mainX = once(() => displayX(main.x, axis, lambda));
  const mainXAt = (indices: Int32Array): Float64Array => displayXAt(main.x, indices, axis, lambda);
  /** A curve over the main pattern's x: full display arrays on demand, display values at given points. */
  const overMain = (y: Float32Array, indices: Int32Array | null | undefined): CurveSource =>
    curveSource(main.x.length, () => ({ x: mainX(), y: displayY(y, scale, null) }), mainXAt, (i) => transformY(y[i]!, scale), indices);
  all.forEach((series, i) => {
    const color = i === 0 ? COLORS.measured : COLORS.overlays[i % COLORS.overlays.length]!;
    const label = i === 0 && view.overlays.length === 0 && view.measured !== false ? `${series.label} (measured)` : series.label;
    if (i === 0) return void datasets.push(line(label, overMain(series.y, coarse?.y), color));
    const shift = stackShift(i);
    const source = curveSource(
      series.x.length,
      () => ({ x: displayX(series.x, axis, lambda), y: displayY(series.y, scale, shift) }),
      (indices) => displayXAt(series.x, indices, axis, lambda),
      (k) => shift(transformY(series.y[k]!, scale)),
      series.coarse?.y,
    );
    datasets.push(line(label, source, color));
  });
  const single = view.overlays.length === 0;
  if (single && view.showFit && main.background) {
    datasets.push(line('background', overMain(main.background, coarse?.background), COLORS.background, { borderDash: [5, 4], borderWidth: 1 }));
  }
  if (single && view.showFit && main.model) {
    const model = main.model;
    datasets.push(line('fit', overMain(model, coarse?.model), COLORS.fit, { borderWidth: 1.4 }));
    if (scale !== 'log') {
      const differenceAt = (i: number): number => transformY(main.y[i]!, scale) - transformY(model[i]!, scale);
      // The difference curve hangs below the pattern: its highest point just under the lowest count
      // (over the coarse copy's points for a long pattern: they hold every column's highest difference).
      let maxDiff = 0;
      const highestOver = coarse?.difference;
      if (highestOver && main.x.length > COARSE_ABOVE_POINTS) for (const i of highestOver) maxDiff = Math.max(maxDiff, differenceAt(i));
      else for (let i = 0; i < main.y.length; i++) maxDiff = Math.max(maxDiff, differenceAt(i));
      const base = range.min - maxDiff - 0.04 * width;
      const full = (): { x: Float64Array; y: Float64Array } => {
        const diff = new Float64Array(main.y.length);
        for (let i = 0; i < diff.length; i++) diff[i] = base + differenceAt(i);
        return { x: mainX(), y: diff };
      };
      datasets.push(line('difference (measured − fit)', curveSource(main.x.length, full, mainXAt, (i) => base + differenceAt(i), highestOver), COLORS.difference, { borderWidth: 1 }));
    }
  }
  if (single) datasets.push(...markDatasets(view, width));
  return datasets;
}

/** The pattern view: chart.js with zoom and pan, min/max decimation per pixel column (re-done on zoom), reference strip and peak marks. */
export class PatternChart {
  readonly chart: Chart<'line', PointData>;
  private view: PatternViewModel | null = null;
  private destroyed = false;

  private readonly readout: HTMLElement | null;

  constructor(canvas: HTMLCanvasElement) {
    const box = canvas.parentElement;
    if (box) {
      this.readout = document.createElement('div');
      this.readout.className = 'chart-readout';
      this.readout.dataset.testid = 'chart-readout';
      this.readout.setAttribute('aria-live', 'off');
      this.readout.textContent = READOUT_HINT;
      box.append(this.readout);
      canvas.addEventListener('mousemove', (event) => this.showReading(event.offsetX, event.offsetY));
      canvas.addEventListener('mouseleave', () => this.showReading(null, null));
    } else {
      this.readout = null;
    }
    this.chart = new Chart<'line', PointData>(canvas, {
      type: 'line',
      data: { datasets: [] },
      plugins: [decimationPlugin, paperPlugin, referenceStickPlugin, referenceStripPlugin, peakLabelPlugin],
      options: {
        animation: false,
        responsive: true,
        maintainAspectRatio: false,
        parsing: false,
        normalized: true,
        interaction: { mode: 'nearest', intersect: true },
        scales: {
          x: { type: 'linear', title: { display: true, text: '2θ (degrees)' }, grid: { color: COLORS.grid } },
          y: { type: 'linear', title: { display: true, text: 'intensity (counts)' }, grid: { color: COLORS.grid } },
        },
        plugins: {
          legend: { position: 'top', align: 'end', labels: { boxWidth: 14, boxHeight: 2, color: COLORS.ink, font: { size: 11 } } },
          tooltip: {
            filter: (item) => (item.dataset as { markLabels?: string[] }).markLabels !== undefined,
            callbacks: { label: (item) => (item.dataset as { markLabels?: string[] }).markLabels?.[item.dataIndex] ?? '' },
          },
          zoom: {
            zoom: { wheel: { enabled: true }, pinch: { enabled: true }, drag: { enabled: true, modifierKey: 'shift', backgroundColor: 'rgba(42,140,130,0.12)' }, mode: 'x' },
            pan: { enabled: true, mode: 'xy' },
            limits: { x: { min: 'original', max: 'original', minRange: 0.05 } },
          },
        },
      },
    });
  }

  /**
   * Render a long pattern in steps, each its own task (the page's other work, the datasets, the
   * drawing), so the page never freezes for long on a curve of millions of points; a short one at once.
   */
  async renderInSteps(view: PatternViewModel): Promise<void> {
    if (view.main.x.length <= COARSE_ABOVE_POINTS) return this.render(view);
    await nextTask();
    if (this.destroyed) return;
    const datasets = buildDatasets(view);
    await nextTask();
    if (!this.destroyed) this.render(view, datasets);
  }

  render(view: PatternViewModel, prepared?: ChartDataset<'line' | 'scatter', PointData>[]): void {
    this.view = view;
    const chart = this.chart;
    const options = chart.options;
    const x = options.scales!.x!;
    const y = options.scales!.y!;
    x.reverse = view.axis === 'd';
    const n = view.main.x.length;
    if (n > 1) {
      const ends = [convertX(view.main.x[0]!, view.axis, view.lambda), convertX(view.main.x[n - 1]!, view.axis, view.lambda)];
      x.min = Math.min(...ends);
      x.max = Math.max(...ends);
    }
    (x as { title: { text: string } }).title.text = axisTitle(view.axis);
    (y as { type: string }).type = view.scale === 'log' ? 'logarithmic' : 'linear';
    (y as { title: { text: string } }).title.text = view.intensityTitle ?? intensityTitle(view.scale);
    options.layout = { padding: { top: this.readout ? READOUT_BAND_PX : 0, bottom: view.references.length * STRIP_ROW_PX + (view.references.length ? 10 : 4) } };
    (options.plugins as Record<string, unknown>).referenceStrip = { references: view.references, axis: view.axis, lambda: view.lambda };
    // Sticks over the pattern only for a single pattern: over stacked ones (scaled to the first alone)
    // they would read as one more curve; the strips beneath still show the lines with their names.
    const sticks = view.overlays.length ? [] : view.references;
    (options.plugins as Record<string, unknown>).referenceSticks = { references: sticks, axis: view.axis, lambda: view.lambda, scale: view.scale, main: view.main };
    const tallest = highestStick(sticks, view.main);
    (y as { suggestedMax?: number }).suggestedMax = Number.isFinite(tallest) ? transformY(tallest, view.scale) : undefined;
    (options.plugins as Record<string, unknown>).peakLabels = { hkl: view.hklLabels ?? false };
    // Headroom above the highest point for the marks and, when shown, stacked hkl labels.
    (y as { grace: string }).grace = view.hklLabels ? '14%' : '5%';
    chart.data.datasets = (prepared ?? buildDatasets(view)) as ChartDataset<'line', PointData>[];
    // For the record (and the browser tests): each phase's marks as drawn, with their colour and count.
    const phaseMarks = chart.data.datasets
      .filter((d) => (d as MarkDataset).markPhase !== undefined)
      .map((d) => ({ phase: (d as MarkDataset).markPhase!, color: String(d.borderColor), marks: d.data.length }));
    const kinds = (kind: MarkKind) => chart.data.datasets.filter((d) => (d as MarkDataset).markKind === kind).reduce((n, d) => n + d.data.length, 0);
    chart.canvas.dataset.phaseMarks = JSON.stringify(phaseMarks);
    chart.canvas.dataset.intensityTitle = (y as { title: { text: string } }).title.text;
    chart.canvas.dataset.curves = JSON.stringify(chart.data.datasets.filter((d) => (d as CurveDataset).source).map((d) => d.label));
    chart.canvas.dataset.otherMarks = JSON.stringify({ unexplained: kinds('unexplained'), satellite: kinds('satellite'), lowAngle: kinds('low-angle'), missing: kinds('missing') });
    chart.update('none');
  }

  /** The readout at a canvas position (CSS px), or the hint when the cursor is off the plot. */
  private showReading(px: number | null, py: number | null): void {
    const readout = this.readout;
    const view = this.view;
    if (!readout) return;
    const area = this.chart.chartArea;
    const xScale = this.chart.scales.x;
    const inside = px !== null && py !== null && area && xScale && px >= area.left && px <= area.right && py >= area.top && py <= area.bottom;
    const reading = inside && view ? readingAt(twoThetaFromDisplay(xScale.getValueForPixel(px)!, view.axis, view.lambda), view.lambda, view.main.x, view.main.y) : null;
    readout.textContent = reading ? readingText(reading, view?.readoutValue) : READOUT_HINT;
    readout.classList.toggle('reading', reading !== null);
  }

  resetZoom(): void {
    this.chart.resetZoom('none');
  }

  pan(fraction: number): void {
    const area = this.chart.chartArea;
    this.chart.pan({ x: fraction * (area.right - area.left) }, undefined, 'none');
  }

  zoom(factor: number): void {
    this.chart.zoom({ x: factor }, 'none');
  }

  currentView(): PatternViewModel | null {
    return this.view;
  }

  toPng(): string {
    return this.chart.toBase64Image('image/png', 1);
  }

  destroy(): void {
    this.destroyed = true;
    this.chart.destroy();
    this.readout?.remove();
  }
}

export { Chart };

/** Vertical error bars (± σ, in data units) for scatter datasets that carry an `errors` array. */
export const errorBarPlugin: Plugin<'scatter'> = {
  id: 'errorBars',
  afterDatasetsDraw(chart) {
    const ctx = chart.ctx;
    const yScale = chart.scales.y!;
    chart.data.datasets.forEach((dataset, index) => {
      const errors = (dataset as { errors?: Array<number | null> }).errors;
      if (!errors || !chart.isDatasetVisible(index)) return;
      const meta = chart.getDatasetMeta(index);
      ctx.save();
      ctx.strokeStyle = String(dataset.borderColor ?? COLORS.ink);
      ctx.lineWidth = 1.5;
      meta.data.forEach((element, i) => {
        const sigma = errors[i];
        const raw = dataset.data[i] as number | { y: number } | undefined;
        const point = typeof raw === 'number' ? { y: raw } : raw;
        if (sigma === null || sigma === undefined || !Number.isFinite(sigma) || !point) return;
        const { x } = element.getProps(['x'], true) as { x: number };
        const top = yScale.getPixelForValue(point.y + sigma);
        const bottom = yScale.getPixelForValue(point.y - sigma);
        ctx.beginPath();
        ctx.moveTo(x, top);
        ctx.lineTo(x, bottom);
        ctx.moveTo(x - 5, top);
        ctx.lineTo(x + 5, top);
        ctx.moveTo(x - 5, bottom);
        ctx.lineTo(x + 5, bottom);
        ctx.stroke();
      });
      ctx.restore();
    });
  },
};
