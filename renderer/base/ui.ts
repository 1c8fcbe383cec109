import { ApiCallError } from './api.js';
import { h } from './dom.js';

/**
 * A message line at the top of the page: errors as sentences, never traces. The same message again
 * (many files refused for one reason) counts up on its line instead of stacking more lines.
 */
const dismissTimers = new WeakMap<Element, ReturnType<typeof setTimeout>>();
const INFO_SHOWN_MS = 6000;

export function notify(message: string, tone: 'info' | 'error' | 'done' = 'info'): void {
  const area = document.getElementById('messages')!;
  const same = [...area.children].find((el): el is HTMLElement => el instanceof HTMLElement && el.dataset.message === message && el.dataset.tone === tone);
  if (same) {
    const times = Number(same.dataset.times ?? '1') + 1;
    same.dataset.times = String(times);
    same.querySelector('.times')!.textContent = ` (×${times})`;
    area.append(same);
    dismissLater(same, tone);
    return;
  }
  const item = h(
    'div',
    { class: `message ${tone}`, role: tone === 'error' ? 'alert' : 'status', 'data-message': message, 'data-tone': tone },
    h('span', {}, message, h('span', { class: 'times' })),
    h('button', { class: 'quiet', 'aria-label': 'Dismiss', onclick: () => item.remove() }, '×'),
  );
  area.append(item);
  dismissLater(item, tone);
  while (area.children.length > 4) area.firstElementChild?.remove();
}

/** Information goes by itself after a while (counted again from its latest repeat); errors stay until dismissed. */
function dismissLater(item: Element, tone: string): void {
  if (tone === 'error') return;
  clearTimeout(dismissTimers.get(item));
  dismissTimers.set(item, setTimeout(() => item.remove(), INFO_SHOWN_MS));
}

export function errorText(err: unknown): string {
  if (err instanceof ApiCallError) return err.message;
  if (err instanceof Error) return `Something went wrong: ${err.message}`;
  return 'Something went wrong.';
}

export function showError(err: unknown): void {
  notify(errorText(err), 'error');
}

/** What a step of the work tells the progress box: the stage of the file in progress. */
export interface ProgressReport {
  /** The file in progress is at this stage now ("reading", "analysing"…); its timer starts again (the same stage again changes nothing). */
  stage(text: string): void;
  /** Dock the box in a corner, so the pattern drawn meanwhile can be seen. */
  dock(): void;
}

/**
 * Run work item by item with a progress box that appears only when the work lasts over half a
 * second: the count of items done, and for the item in progress its stage with a moving bar and the
 * seconds it has taken. Cancel (and Esc) stops before the next item and calls `onCancel`, which may
 * stop the item in progress.
 */
export async function withProgress<T>(
  title: string,
  items: readonly T[],
  work: (item: T, index: number, progress: ProgressReport) => Promise<void>,
  options: { cancellable?: boolean; onCancel?: () => void } = {},
): Promise<{ done: number; cancelled: boolean }> {
  let cancelled = false;
  const bar = h('progress', { max: items.length, value: 0 });
  const label = h('span', { class: 'progress-label' }, `0 of ${items.length}`);
  const stageText = h('span', { 'data-testid': 'progress-stage' });
  const stageTime = h('span', { class: 'progress-time' });
  const stageLine = h('div', { class: 'progress-stage' }, stageText, stageTime);
  // An indeterminate bar moves by itself while the engine works on one item.
  const itemBar = h('progress', { class: 'progress-item' });
  const cancelNow = (): void => {
    if (cancelled) return;
    cancelled = true;
    stageText.textContent = 'Cancelling…';
    options.onCancel?.();
  };
  const cancel = h('button', { class: 'secondary', onclick: cancelNow, 'data-testid': 'progress-cancel' }, 'Cancel');
  const single = items.length === 1;
  const box = h(
    'div',
    { class: 'progress-box', role: 'dialog', 'aria-label': title, 'data-testid': 'progress' },
    h('strong', {}, title),
    single ? null : h('div', { class: 'progress-count' }, bar, label),
    stageLine,
    itemBar,
    options.cancellable === false ? null : cancel,
  );
  stageLine.hidden = true;
  let stageStarted = performance.now();
  const tick = (): void => {
    const seconds = Math.floor((performance.now() - stageStarted) / 1000);
    stageTime.textContent = seconds >= 1 ? ` · ${seconds} s` : '';
  };
  const report: ProgressReport = {
    stage(text) {
      if (cancelled || text === stageText.textContent) return;
      stageLine.hidden = false;
      stageText.textContent = text;
      stageStarted = performance.now();
      tick();
    },
    dock: () => box.classList.add('docked'),
  };
  const onKey = (event: KeyboardEvent): void => {
    if (event.key === 'Escape') cancelNow();
  };
  const timer = setTimeout(() => {
    document.body.append(box);
    if (options.cancellable !== false) cancel.focus();
  }, 500);
  const clock = setInterval(tick, 1000);
  document.addEventListener('keydown', onKey);
  let done = 0;
  try {
    for (let i = 0; i < items.length && !cancelled; i++) {
      await work(items[i]!, i, report);
      done = i + 1;
      bar.value = done;
      label.textContent = `${done} of ${items.length}`;
    }
  } finally {
    clearTimeout(timer);
    clearInterval(clock);
    document.removeEventListener('keydown', onKey);
    box.remove();
  }
  return { done, cancelled };
}
