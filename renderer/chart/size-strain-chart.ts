/**
 * The Halder–Wagner size–strain plot as a small SVG: each reflection's (β* / d*)² against β* / d*² with
 * its error bar, and the fitted line (slope 1/D, intercept (2ε)²). Drawn by hand: a dozen points do not
 * need a charting library, and SVG prints and exports as it is shown.
 */
import type { SizeStrainView } from '../../src/api/contract.js';
import { axisScale, niceTicks } from '../../src/core/model/ticks.js';

const SVG_NS = 'http://www.w3.org/2000/svg';
const WIDTH = 360;
const HEIGHT = 220;
const MARGIN = { left: 58, right: 12, top: 10, bottom: 40 };

function node(tag: string, attributes: Record<string, string | number>, text?: string): SVGElement {
  const element = document.createElementNS(SVG_NS, tag);
  for (const [k, v] of Object.entries(attributes)) element.setAttribute(k, String(v));
  if (text !== undefined) element.textContent = text;
  return element;
}

export function sizeStrainChart(view: SizeStrainView): SVGElement {
  const svg = node('svg', { viewBox: `0 0 ${WIDTH} ${HEIGHT}`, class: 'size-strain-chart', role: 'img', 'aria-label': 'Halder–Wagner size–strain plot' });
  const xs = view.points.map((p) => p.x);
  const ys = view.points.flatMap((p) => [p.y - p.sigmaY, p.y + p.sigmaY]);
  const xMax = Math.max(...xs) * 1.08;
  const yMax = Math.max(...ys, view.intercept + view.slope * xMax) * 1.08;
  const yMin = Math.min(0, ...ys, view.intercept);
  const px = (x: number): number => MARGIN.left + (x / xMax) * (WIDTH - MARGIN.left - MARGIN.right);
  const py = (y: number): number => HEIGHT - MARGIN.bottom - ((y - yMin) / (yMax - yMin)) * (HEIGHT - MARGIN.top - MARGIN.bottom);
  svg.append(node('line', { x1: px(0), y1: py(yMin), x2: px(xMax), y2: py(yMin), class: 'axis' }));
  svg.append(node('line', { x1: px(0), y1: py(yMin), x2: px(0), y2: py(yMax), class: 'axis' }));
  // Round ticks with short labels; the power of ten goes into the axis title (as in the report).
  const xScale = axisScale(xMax);
  const yScale = axisScale(Math.max(Math.abs(yMin), yMax));
  for (const t of niceTicks(0, xMax * xScale.factor, 4)) svg.append(node('text', { x: px(t / xScale.factor), y: HEIGHT - MARGIN.bottom + 14, 'text-anchor': 'middle', class: 'tick' }, String(t)));
  for (const t of niceTicks(yMin * yScale.factor, yMax * yScale.factor, 4)) svg.append(node('text', { x: MARGIN.left - 4, y: py(t / yScale.factor) + 3, 'text-anchor': 'end', class: 'tick' }, String(t)));
  svg.append(node('text', { x: (px(0) + px(xMax)) / 2, y: HEIGHT - 6, 'text-anchor': 'middle', class: 'axis-title' }, `β* / d*² (Å)${xScale.note}`));
  svg.append(node('text', { x: 12, y: (py(yMin) + py(yMax)) / 2, 'text-anchor': 'middle', class: 'axis-title', transform: `rotate(-90 12 ${(py(yMin) + py(yMax)) / 2})` }, `(β* / d*)² (no unit)${yScale.note}`));
  svg.append(node('line', { x1: px(0), y1: py(view.intercept), x2: px(xMax), y2: py(view.intercept + view.slope * xMax), class: 'fit-line' }));
  for (const p of view.points) {
    svg.append(node('line', { x1: px(p.x), y1: py(p.y - p.sigmaY), x2: px(p.x), y2: py(p.y + p.sigmaY), class: 'error-bar' }));
    const dot = node('circle', { cx: px(p.x), cy: py(p.y), r: 3.5, class: 'point' });
    dot.append(node('title', {}, `${p.twoTheta.toFixed(2)}° 2θ`));
    svg.append(dot);
  }
  return svg;
}
