/**
 * Placement of text labels above peaks so that no two overlap: a greedy pass in order of importance
 * (common practice for map and chart labels). Each label first tries the spot just above its
 * anchor, then stacks one label-height higher at a time; a label with no free spot within the plot
 * is hidden rather than drawn over another.
 */

export interface LabelRequest {
  /** Anchor in pixels: the label is centred on x and sits above y. */
  x: number;
  y: number;
  width: number;
  height: number;
  /** Larger goes first (for example the peak's height). */
  priority: number;
  /** Highest stacking level tried for this label (default: the placement's maxStack). */
  maxStack?: number;
}

export interface PlacedLabel {
  /** Index into the requests. */
  index: number;
  /** The label's box (left, top) in pixels, with the requested width and height. */
  left: number;
  top: number;
  /** How many label-heights it was lifted above its first spot (0 = just above the anchor). */
  stacked: number;
}

export interface PlacementOptions {
  /** The area labels must stay inside (pixels). */
  left: number;
  right: number;
  top: number;
  /** Gap between the anchor and the label (px, default 3). */
  gapPx?: number;
  /** Highest stacking level tried before a label is hidden (default 3). */
  maxStack?: number;
  /** Boxes labels must not cover besides each other (for example a legend). */
  obstacles?: Array<{ left: number; top: number; right: number; bottom: number }>;
}

export interface Placement {
  placed: PlacedLabel[];
  /** Indices of the labels that found no free spot. */
  hidden: number[];
}

const overlaps = (a: { left: number; top: number; right: number; bottom: number }, b: { left: number; top: number; right: number; bottom: number }): boolean =>
  a.left < b.right && b.left < a.right && a.top < b.bottom && b.top < a.bottom;

export function placeLabels(requests: readonly LabelRequest[], options: PlacementOptions): Placement {
  const gap = options.gapPx ?? 3;
  const maxStack = options.maxStack ?? 3;
  const taken = [...(options.obstacles ?? [])];
  const order = requests.map((_, i) => i).sort((a, b) => requests[b]!.priority - requests[a]!.priority || a - b);
  const placed: PlacedLabel[] = [];
  const hidden: number[] = [];
  for (const index of order) {
    const r = requests[index]!;
    // Kept inside the plot sideways: a label at the edge slides in rather than being cut.
    const left = Math.min(Math.max(r.x - r.width / 2, options.left), options.right - r.width);
    let done = false;
    for (let level = 0; level <= (r.maxStack ?? maxStack) && !done; level++) {
      const top = r.y - gap - r.height * (level + 1);
      if (top < options.top || left < options.left) break;
      const box = { left, top, right: left + r.width, bottom: top + r.height };
      if (taken.some((t) => overlaps(t, box))) continue;
      taken.push(box);
      placed.push({ index, left, top, stacked: level });
      done = true;
    }
    if (!done) hidden.push(index);
  }
  return { placed, hidden };
}
