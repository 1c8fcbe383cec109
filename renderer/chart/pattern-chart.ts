import {
  CategoryScale,
  Chart,
  Decimation,
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
import { axisTitle, convertX, intensityTitle, transformY, type AxisUnit, type IntensityScale } from './units.js';

Chart.register(LineController, ScatterController, LineElement, PointElement, LinearScale, LogarithmicScale, CategoryScale, Tooltip, Legend, Decimation, zoomPlugin);

export const COLORS = {
  ink: '#24313a',
  measured: '#2f3d46',
  fit: '#2a8c82',
  background: '#9aa4a6',
  difference: '#8c76ad',
  matched: '#2a8c82',
  unexplained: '#c08a2e',
  lowAngle: '#b8432f',
  missing: '#8a4f86',
  grid: '#e4e2dc',
  overlays: ['#2f3d46', '#3f6fa0', '#b56a2c', '#5d8a3a', '#8c4a7c', '#6b6b6b', '#2a8c82', '#a0453f'],
  phases: ['#3f6fa0', '#b56a2c', '#5d8a3a', '#8c4a7c', '#6b6b6b', '#a0453f'],
};

export interface PatternSeries {
  label: string;
  x: Float32Array;
  y: Float32Array;
  background?: Float32Array | null;
  model?: Float32Array | null;
}

export type MarkKind = 'matched' | 'unexplained' | 'low-angle' | 'missing';

export interface PeakMark {
  twoTheta: number;
  /** Intensity (counts) where the mark sits. */
  y: number;
  kind: MarkKind;
  label: string;
}

export interface ReferenceStrip {
  name: string;
  color: string;
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
}

const STRIP_ROW_PX = 18;

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

/** Labels the low-angle extra peaks in words, so they stand out in print too. */
const lowAngleLabelPlugin: Plugin<'line'> = {
  id: 'lowAngleLabels',
  afterDatasetsDraw(chart) {
    const ctx = chart.ctx;
    chart.data.datasets.forEach((dataset, index) => {
      if ((dataset as { markKind?: MarkKind }).markKind !== 'low-angle' || !chart.isDatasetVisible(index)) return;
      const meta = chart.getDatasetMeta(index);
      ctx.save();
      ctx.fillStyle = COLORS.lowAngle;
      ctx.font = 'bold 11px system-ui, sans-serif';
      ctx.textAlign = 'center';
      for (const element of meta.data) {
        const { x, y } = element.getProps(['x', 'y'], true) as { x: number; y: number };
        if (x < chart.chartArea.left || x > chart.chartArea.right) continue;
        ctx.fillText('low-angle extra', x, Math.max(chart.chartArea.top + 10, y - 14));
      }
      ctx.restore();
    });
  },
};

type PointData = ScatterDataPoint[];

function points(x: Float32Array, y: ArrayLike<number>, axis: AxisUnit, lambda: number, scale: IntensityScale, shift: (v: number) => number): PointData {
  const n = x.length;
  const out: PointData = new Array(n);
  for (let i = 0; i < n; i++) out[i] = { x: convertX(x[i]!, axis, lambda), y: shift(transformY(y[i]!, scale)) };
  // d decreases as 2θ grows: keep x ascending for decimation, and reverse the axis instead.
  if (axis === 'd') out.reverse();
  return out;
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

/** Datasets for a view: stacked samples, fit, background and difference, peak marks. */
function buildDatasets(view: PatternViewModel): ChartDataset<'line' | 'scatter', PointData>[] {
  const { axis, lambda, scale } = view;
  const all = [view.main, ...view.overlays];
  const range = span(view.main.y, scale);
  const width = range.max - range.min || 1;
  const stackShift = (i: number) => (v: number) => (scale === 'log' ? v * 10 ** (i * view.offsetFraction * 2) : v + i * view.offsetFraction * width);
  const line = (label: string, data: PointData, color: string, extra: Partial<ChartDataset<'line', PointData>> = {}): ChartDataset<'line', PointData> => ({
    type: 'line',
    label,
    data,
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
  all.forEach((series, i) => {
    const color = i === 0 ? COLORS.measured : COLORS.overlays[i % COLORS.overlays.length]!;
    datasets.push(line(i === 0 && view.overlays.length === 0 ? `${series.label} (measured)` : series.label, points(series.x, series.y, axis, lambda, scale, stackShift(i)), color));
  });
  const single = view.overlays.length === 0;
  const { main } = view;
  if (single && view.showFit && main.background) {
    datasets.push(line('background', points(main.x, main.background, axis, lambda, scale, (v) => v), COLORS.background, { borderDash: [5, 4], borderWidth: 1 }));
  }
  if (single && view.showFit && main.model) {
    datasets.push(line('fit', points(main.x, main.model, axis, lambda, scale, (v) => v), COLORS.fit, { borderWidth: 1.4 }));
    if (scale !== 'log') {
      const diff = new Float64Array(main.y.length);
      let maxDiff = 0;
      for (let i = 0; i < diff.length; i++) {
        diff[i] = transformY(main.y[i]!, scale) - transformY(main.model[i]!, scale);
        if (diff[i]! > maxDiff) maxDiff = diff[i]!;
      }
      const base = range.min - maxDiff - 0.04 * width;
      const x = main.x;
      const data: PointData = new Array(diff.length);
      for (let i = 0; i < diff.length; i++) data[i] = { x: convertX(x[i]!, axis, lambda), y: base + diff[i]! };
      if (axis === 'd') data.reverse();
      datasets.push(line('difference (measured − fit)', data, COLORS.difference, { borderWidth: 1 }));
    }
  }
  if (single) {
    const styles: Record<MarkKind, { label: string; color: string; style: 'triangle' | 'rectRot' | 'circle'; radius: number; rotation: number; fill: boolean }> = {
      matched: { label: 'matched peaks', color: COLORS.matched, style: 'triangle', radius: 4, rotation: 180, fill: true },
      unexplained: { label: 'unexplained peaks', color: COLORS.unexplained, style: 'rectRot', radius: 5, rotation: 0, fill: true },
      'low-angle': { label: 'low-angle extra peaks', color: COLORS.lowAngle, style: 'triangle', radius: 7, rotation: 180, fill: true },
      missing: { label: 'missing strong lines', color: COLORS.missing, style: 'circle', radius: 5, rotation: 0, fill: false },
    };
    for (const kind of ['matched', 'unexplained', 'low-angle', 'missing'] as MarkKind[]) {
      const marks = view.marks.filter((m) => m.kind === kind);
      if (!marks.length) continue;
      const s = styles[kind];
      const lift = kind === 'missing' ? 0 : 0.03 * width;
      datasets.push({
        type: 'scatter',
        label: s.label,
        data: marks.map((m) => ({ x: convertX(m.twoTheta, axis, lambda), y: scale === 'log' ? transformY(m.y, scale) * 1.3 : transformY(m.y, scale) + lift })),
        pointStyle: s.style,
        pointRadius: s.radius,
        pointHoverRadius: s.radius + 2,
        pointRotation: s.rotation,
        borderColor: s.color,
        backgroundColor: s.fill ? s.color : 'rgba(255,255,255,0.9)',
        borderWidth: kind === 'missing' ? 2 : 1,
        parsing: false,
        markKind: kind,
        markLabels: marks.map((m) => m.label),
      } as ChartDataset<'scatter', PointData>);
    }
  }
  return datasets;
}

/** The pattern view: chart.js with zoom and pan, min-max decimation, reference strip and peak marks. */
export class PatternChart {
  readonly chart: Chart<'line', PointData>;
  private view: PatternViewModel | null = null;

  constructor(canvas: HTMLCanvasElement) {
    this.chart = new Chart<'line', PointData>(canvas, {
      type: 'line',
      data: { datasets: [] },
      plugins: [paperPlugin, referenceStripPlugin, lowAngleLabelPlugin],
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
          decimation: { enabled: true, algorithm: 'min-max' },
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

  render(view: PatternViewModel): void {
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
    (y as { title: { text: string } }).title.text = intensityTitle(view.scale);
    options.layout = { padding: { bottom: view.references.length * STRIP_ROW_PX + 4 } };
    (options.plugins as Record<string, unknown>).referenceStrip = { references: view.references, axis: view.axis, lambda: view.lambda };
    chart.data.datasets = buildDatasets(view) as ChartDataset<'line', PointData>[];
    chart.update('none');
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
    this.chart.destroy();
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
