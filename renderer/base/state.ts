import type { AppInfo, PatternPreview, ProjectState } from '../../src/api/contract.js';
import type { Normalisation } from '../chart/normalise.js';
import type { LoadedSample } from './sample-data.js';
import type { AxisUnit, IntensityScale } from '../chart/units.js';

export type ScreenName = 'samples' | 'library' | 'instrument' | 'series' | 'report' | 'settings';

export const SCREENS: ReadonlyArray<{ name: ScreenName; title: string }> = [
  { name: 'samples', title: 'Samples' },
  { name: 'library', title: 'Library' },
  { name: 'instrument', title: 'Instrument' },
  { name: 'series', title: 'Series' },
  { name: 'report', title: 'Report' },
  { name: 'settings', title: 'Settings' },
];

/** What the screens share: the open project, the selection and how the pattern is drawn. */
export const app = {
  info: null as AppInfo | null,
  project: null as ProjectState | null,
  screen: 'samples' as ScreenName,
  selected: null as number | null,
  overlays: new Set<number>(),
  /** Phases whose reference lines are drawn on the pattern; null = the sample's present phases. */
  checked: null as Set<string> | null,
  details: new Map<number, LoadedSample>(),
  /** The file in progress, drawn from its reduced pattern until its analysis is done. */
  preview: null as PatternPreview | null,
  view: {
    axis: '2theta' as AxisUnit,
    scale: 'linear' as IntensityScale,
    offsetFraction: 0.35,
    showFit: true,
    hklLabels: false,
    chartHeightPx: null as number | null,
    /** How stacked patterns are scaled before they are compared, and the 2θ picked for 'peak'. */
    normalisation: 'none' as Normalisation,
    peakTwoTheta: null as number | null,
    /** The candidates' scores (collapsed by default) and the A − B difference, open or not. */
    candidatesOpen: false,
    difference: { open: false, a: null as number | null, b: null as number | null },
  },
};

type Listener = () => void;
const listeners = new Set<Listener>();

export function onChange(listener: Listener): () => void {
  listeners.add(listener);
  return () => listeners.delete(listener);
}

export function changed(): void {
  for (const l of listeners) l();
}

export function setProject(project: ProjectState | null): void {
  if (app.project?.project.id !== project?.project.id) {
    app.selected = null;
    app.overlays.clear();
    app.checked = null;
  }
  app.project = project;
  app.details.clear();
}

export function verdictClass(verdict: string): string {
  if (verdict === 'target') return 'target';
  if (verdict === 'target with extra peaks') return 'extra';
  if (verdict === 'not the target' || verdict === 'featureless') return 'not';
  return 'none';
}
