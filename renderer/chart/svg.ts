import type { Chart, ScatterDataPoint } from 'chart.js';
import { COLORS, drawnLabels, LABEL_HEIGHT_PX, leaderEndX, referenceSticks, STICK_ALPHA, type PatternViewModel } from './pattern-chart.js';
import { decimateMinMax, visibleRange } from '../../src/core/model/decimate.js';
import { convertX } from './units.js';

const esc = (text: string): string => text.replace(/[&<>"']/g, (c) => `&#${c.charCodeAt(0)};`);

/**
 * The chart as it is now (zoom included) as a standalone SVG: each curve as drawn on screen (first,
 * lowest, highest and last point per pixel column), axes with the chart's own ticks, peak marks and
 * the reference strip.
 */
export function chartToSvg(chart: Chart<'line', ScatterDataPoint[]>, view: PatternViewModel): string {
  const width = chart.width;
  const height = chart.height;
  const area = chart.chartArea;
  const xs = chart.scales.x!;
  const ys = chart.scales.y!;
  const out: string[] = [
    `<svg xmlns="http://www.w3.org/2000/svg" width="${width}" height="${height}" viewBox="0 0 ${width} ${height}" font-family="system-ui, sans-serif" font-size="11">`,
    `<rect width="100%" height="100%" fill="#ffffff"/>`,
    `<defs><clipPath id="plot"><rect x="${area.left}" y="${area.top}" width="${area.right - area.left}" height="${area.bottom - area.top}"/></clipPath></defs>`,
  ];
  for (const tick of xs.ticks) {
    const px = xs.getPixelForValue(tick.value);
    out.push(`<line x1="${px.toFixed(1)}" y1="${area.top}" x2="${px.toFixed(1)}" y2="${area.bottom}" stroke="${COLORS.grid}"/>`);
    out.push(`<text x="${px.toFixed(1)}" y="${area.bottom + 14}" text-anchor="middle" fill="${COLORS.ink}">${esc(String(tick.label ?? tick.value))}</text>`);
  }
  for (const tick of ys.ticks) {
    const py = ys.getPixelForValue(tick.value);
    if (!(py >= area.top && py <= area.bottom)) continue;
    out.push(`<line x1="${area.left}" y1="${py.toFixed(1)}" x2="${area.right}" y2="${py.toFixed(1)}" stroke="${COLORS.grid}"/>`);
    out.push(`<text x="${area.left - 6}" y="${(py + 4).toFixed(1)}" text-anchor="end" fill="${COLORS.ink}">${esc(String(tick.label ?? tick.value))}</text>`);
  }
  out.push(`<rect x="${area.left}" y="${area.top}" width="${area.right - area.left}" height="${area.bottom - area.top}" fill="none" stroke="${COLORS.ink}"/>`);
  const xTitle = (xs.options as { title?: { text?: string } }).title?.text ?? '';
  const yTitle = (ys.options as { title?: { text?: string } }).title?.text ?? '';
  out.push(`<text x="${(area.left + area.right) / 2}" y="${area.bottom + 30}" text-anchor="middle" fill="${COLORS.ink}">${esc(String(xTitle))}</text>`);
  out.push(`<text transform="translate(14 ${(area.top + area.bottom) / 2}) rotate(-90)" text-anchor="middle" fill="${COLORS.ink}">${esc(String(yTitle))}</text>`);

  for (const stick of referenceSticks(chart as unknown as Chart)) {
    out.push(`<line x1="${stick.x.toFixed(1)}" y1="${stick.bottom.toFixed(1)}" x2="${stick.x.toFixed(1)}" y2="${stick.top.toFixed(1)}" stroke="${stick.color}" stroke-opacity="${STICK_ALPHA}" stroke-width="1.5"/>`);
  }
  chart.data.datasets.forEach((dataset, index) => {
    if (!chart.isDatasetVisible(index)) return;
    const color = String(dataset.borderColor ?? COLORS.ink);
    const data = dataset.data as ScatterDataPoint[];
    if ((dataset as { type?: string }).type === 'scatter') {
      for (const p of data) {
        if (p.x === null || p.y === null) continue;
        const px = xs.getPixelForValue(p.x);
        const py = ys.getPixelForValue(p.y);
        if (px < area.left || px > area.right) continue;
        out.push(`<circle cx="${px.toFixed(1)}" cy="${py.toFixed(1)}" r="4" fill="${String(dataset.backgroundColor ?? color)}" stroke="${color}"/>`);
      }
      return;
    }
    const points = data.filter((p): p is { x: number; y: number } => p.x !== null && p.y !== null);
    const px = Float64Array.from(points, (p) => xs.getPixelForValue(p.x));
    const py = Float64Array.from(points, (p) => ys.getPixelForValue(p.y));
    const { from, to } = visibleRange(px, area.left, area.right);
    const kept = decimateMinMax(px, py, { from, to, xLow: area.left, xHigh: area.right, buckets: Math.ceil(area.right - area.left), fullResolutionPerBucket: 4 });
    const path = Array.from(kept, (i) => `${px[i]!.toFixed(1)},${py[i]!.toFixed(1)}`);
    const dash = (dataset as { borderDash?: number[] }).borderDash;
    out.push(`<polyline clip-path="url(#plot)" fill="none" stroke="${color}" stroke-width="1.2"${dash ? ` stroke-dasharray="${dash.join(' ')}"` : ''} points="${path.join(' ')}"><title>${esc(String(dataset.label ?? ''))}</title></polyline>`);
  });

  for (const label of drawnLabels.get(chart as unknown as Chart) ?? []) {
    if (label.anchor) out.push(`<line x1="${label.anchor.x.toFixed(1)}" y1="${(label.anchor.y - 2).toFixed(1)}" x2="${leaderEndX(label.anchor.x, label.left, label.width).toFixed(1)}" y2="${(label.top + LABEL_HEIGHT_PX).toFixed(1)}" stroke="${COLORS.ink}" stroke-opacity="0.35"/>`);
    out.push(`<text x="${(label.left + 2).toFixed(1)}" y="${(label.top + 10).toFixed(1)}" fill="${label.color}"${label.bold ? ' font-weight="bold"' : ''}>${esc(label.text)}</text>`);
  }
  // Legend: one short line and the label per visible curve, then a dot and the label per kind of mark
  // (each phase by name, in its colour), along the top; a row that would run past the plot starts another above.
  let legendX = area.left;
  let legendY = area.top - 10;
  chart.data.datasets.forEach((dataset, index) => {
    if (!chart.isDatasetVisible(index)) return;
    const color = String(dataset.borderColor ?? COLORS.ink);
    const label = String(dataset.label ?? '');
    const width = 30 + label.length * 6;
    if (legendX > area.left && legendX + width > area.right) {
      legendX = area.left;
      legendY -= 14;
    }
    const key = (dataset as { type?: string }).type === 'scatter'
      ? `<circle cx="${legendX + 7}" cy="${legendY}" r="4" fill="${String(dataset.backgroundColor ?? color)}" stroke="${color}"/>`
      : `<line x1="${legendX}" y1="${legendY}" x2="${legendX + 14}" y2="${legendY}" stroke="${color}" stroke-width="2"/>`;
    out.push(`${key}<text x="${legendX + 18}" y="${legendY + 4}" fill="${COLORS.ink}">${esc(label)}</text>`);
    legendX += width;
  });
  let top = xs.bottom + 4;
  for (const ref of view.references) {
    out.push(`<text x="${area.left + 5}" y="${top + 12}" fill="${ref.color}">${esc(ref.name)}</text>`);
    for (const line of ref.lines) {
      const px = xs.getPixelForValue(convertX(line.twoTheta, view.axis, view.lambda));
      if (px < area.left || px > area.right) continue;
      const h = 3 + ((line.intensity ?? 30) / 100) * 12;
      out.push(`<line x1="${px.toFixed(1)}" y1="${top + 16}" x2="${px.toFixed(1)}" y2="${(top + 16 - h).toFixed(1)}" stroke="${ref.color}" stroke-width="1.5"/>`);
    }
    top += 18;
  }
  out.push('</svg>');
  return out.join('\n');
}
