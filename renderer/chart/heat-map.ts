/**
 * The heat map of a series: 2θ across, one band per sample in series order (the first at the bottom,
 * as in the waterfall), intensity as colour on one square-root scale shared by every band, so weak
 * peaks show beside strong ones and bands compare; a colour key with its counts at the right. Drawn on
 * a plain canvas; the layout and the values per pixel column are pure and tested.
 */
import { COLORS, heatColour, PAPER } from './colours.js';
import { columnMaxima } from './grid.js';

export interface HeatMapRow {
  label: string;
  x: ArrayLike<number>;
  y: ArrayLike<number>;
}

export interface HeatMapLayout {
  left: number;
  right: number;
  top: number;
  bottom: number;
  /** Left edge of the colour key's bar. */
  keyLeft: number;
  keyWidth: number;
}

/** Round tick values covering [min, max]: steps of 1, 2 or 5 times a power of ten, about `count` of them. */
export function niceTicks(min: number, max: number, count = 5): number[] {
  if (!(max > min) || !Number.isFinite(min) || !Number.isFinite(max)) return Number.isFinite(min) ? [min] : [];
  const raw = (max - min) / Math.max(1, count);
  const power = 10 ** Math.floor(Math.log10(raw));
  const step = [1, 2, 5, 10].map((m) => m * power).find((s) => s >= raw)!;
  const ticks: number[] = [];
  for (let t = Math.ceil(min / step) * step; t <= max + step * 1e-9; t += step) ticks.push(Number(t.toPrecision(12)));
  return ticks;
}

/**
 * Every band on one grid of `columns` pixel columns over the 2θ range all samples cover, with the
 * highest point per column (grid.ts) and the shared minimum and maximum of the values.
 */
export function heatMapValues(rows: readonly HeatMapRow[], columns: number): { from: number; to: number; values: Float64Array[]; min: number; max: number } | null {
  if (!rows.length || columns < 1) return null;
  let from = -Infinity;
  let to = Infinity;
  for (const r of rows) {
    if (r.x.length < 2) return null;
    from = Math.max(from, r.x[0]!);
    to = Math.min(to, r.x[r.x.length - 1]!);
  }
  if (!(to > from)) return null;
  const values = rows.map((r) => columnMaxima(r.x, r.y, from, to, columns));
  let min = Infinity;
  let max = -Infinity;
  for (const v of values)
    for (const u of v) {
      if (u < min) min = u;
      if (u > max) max = u;
    }
  return { from, to, values, min: Math.max(0, min), max };
}

const FONT = '11px system-ui, sans-serif';

/** Draws the heat map into the canvas at its CSS size (and the device's pixel ratio); returns what it drew. */
export function drawHeatMap(canvas: HTMLCanvasElement, rows: readonly HeatMapRow[]): { columns: number; rows: number } | null {
  const box = canvas.getBoundingClientRect();
  const ratio = window.devicePixelRatio || 1;
  canvas.width = Math.max(1, Math.round(box.width * ratio));
  canvas.height = Math.max(1, Math.round(box.height * ratio));
  const ctx = canvas.getContext('2d');
  if (!ctx) return null;
  ctx.setTransform(ratio, 0, 0, ratio, 0, 0);
  ctx.fillStyle = PAPER;
  ctx.fillRect(0, 0, box.width, box.height);
  ctx.font = FONT;
  const labelWidth = Math.min(150, Math.max(...rows.map((r) => ctx.measureText(r.label).width), 20));
  const layout: HeatMapLayout = { left: labelWidth + 12, right: box.width - 78, top: 10, bottom: box.height - 40, keyLeft: box.width - 64, keyWidth: 12 };
  const columns = Math.floor(layout.right - layout.left);
  const data = heatMapValues(rows, columns);
  if (!data || columns < 10 || layout.bottom - layout.top < 20) return null;
  // One √ scale for every band (square root of counts: weak peaks stay visible beside strong ones).
  const lo = Math.sqrt(data.min);
  const hi = Math.sqrt(data.max);
  const t = (v: number) => (hi > lo ? (Math.sqrt(Math.max(0, v)) - lo) / (hi - lo) : 0);
  const bandHeight = (layout.bottom - layout.top) / rows.length;
  const image = ctx.createImageData(columns, 1);
  rows.forEach((row, r) => {
    const values = data.values[r]!;
    for (let c = 0; c < columns; c++) {
      const [red, green, blue] = heatColour(t(values[c]!));
      image.data.set([red, green, blue, 255], 4 * c);
    }
    // A one-pixel-high strip, stretched over the band (first sample at the bottom).
    const strip = document.createElement('canvas');
    strip.width = columns;
    strip.height = 1;
    strip.getContext('2d')!.putImageData(image, 0, 0);
    const top = layout.bottom - (r + 1) * bandHeight;
    ctx.imageSmoothingEnabled = false;
    ctx.drawImage(strip, layout.left, top, columns, bandHeight);
    // A thin paper line between bands, so neighbouring samples read apart.
    if (r > 0) {
      ctx.fillStyle = PAPER;
      ctx.fillRect(layout.left, top + bandHeight - 0.5, columns, 1);
    }
    ctx.fillStyle = COLORS.ink;
    ctx.textAlign = 'right';
    ctx.textBaseline = 'middle';
    const label = ctx.measureText(row.label).width > labelWidth ? `${row.label.slice(0, 18)}…` : row.label;
    ctx.fillText(label, layout.left - 6, top + bandHeight / 2);
  });
  ctx.strokeStyle = COLORS.ink;
  ctx.strokeRect(layout.left, layout.top, columns, layout.bottom - layout.top);
  // 2θ axis.
  ctx.textAlign = 'center';
  ctx.textBaseline = 'top';
  for (const tick of niceTicks(data.from, data.to, 8)) {
    const x = layout.left + ((tick - data.from) / (data.to - data.from)) * columns;
    ctx.beginPath();
    ctx.moveTo(x, layout.bottom);
    ctx.lineTo(x, layout.bottom + 4);
    ctx.stroke();
    ctx.fillText(String(tick), x, layout.bottom + 6);
  }
  ctx.fillText('2θ (degrees)', (layout.left + layout.right) / 2, layout.bottom + 22);
  // Colour key: the same √ scale, ticks in counts.
  const keyHeight = layout.bottom - layout.top;
  for (let py = 0; py < keyHeight; py++) {
    const [red, green, blue] = heatColour(1 - py / keyHeight);
    ctx.fillStyle = `rgb(${red},${green},${blue})`;
    ctx.fillRect(layout.keyLeft, layout.top + py, layout.keyWidth, 1.5);
  }
  ctx.strokeRect(layout.keyLeft, layout.top, layout.keyWidth, keyHeight);
  ctx.fillStyle = COLORS.ink;
  ctx.textAlign = 'left';
  ctx.textBaseline = 'middle';
  let lastY = Infinity;
  // Round counts, placed on the √ scale (denser towards the top; one that would touch the last is left out).
  for (const tick of niceTicks(data.min, data.max, 6)) {
    const y = layout.bottom - t(tick) * keyHeight;
    if (y < layout.top - 1 || y > layout.bottom + 1 || lastY - y < 13) continue;
    lastY = y;
    ctx.fillText(tick >= 10000 ? `${(tick / 1000).toFixed(0)}k` : String(Math.round(tick)), layout.keyLeft + layout.keyWidth + 4, y);
  }
  ctx.save();
  ctx.translate(box.width - 6, (layout.top + layout.bottom) / 2);
  ctx.rotate(-Math.PI / 2);
  ctx.textAlign = 'center';
  ctx.textBaseline = 'bottom';
  ctx.fillText('counts (√ scale)', 0, 0);
  ctx.restore();
  canvas.dataset.columns = String(columns);
  canvas.dataset.rows = String(rows.length);
  canvas.dataset.range = `${data.from.toFixed(3)} ${data.to.toFixed(3)}`;
  return { columns, rows: rows.length };
}
