import { ApiCallError } from './api.js';
import { h } from './dom.js';

/** A message line at the top of the page: errors as sentences, never traces. */
export function notify(message: string, tone: 'info' | 'error' | 'done' = 'info'): void {
  const area = document.getElementById('messages')!;
  const item = h('div', { class: `message ${tone}`, role: tone === 'error' ? 'alert' : 'status' }, h('span', {}, message), h('button', { class: 'quiet', 'aria-label': 'Dismiss', onclick: () => item.remove() }, '×'));
  area.append(item);
  if (tone !== 'error') setTimeout(() => item.remove(), 6000);
  while (area.children.length > 4) area.firstElementChild?.remove();
}

export function errorText(err: unknown): string {
  if (err instanceof ApiCallError) return err.message;
  if (err instanceof Error) return `Something went wrong: ${err.message}`;
  return 'Something went wrong.';
}

export function showError(err: unknown): void {
  notify(errorText(err), 'error');
}

/**
 * Run work item by item with a progress bar that appears only when the work lasts over half a
 * second, and a Cancel button (and Esc) that stops before the next item.
 */
export async function withProgress<T>(
  title: string,
  items: readonly T[],
  work: (item: T, index: number) => Promise<void>,
  options: { cancellable?: boolean } = {},
): Promise<{ done: number; cancelled: boolean }> {
  let cancelled = false;
  const bar = h('progress', { max: items.length, value: 0 });
  const label = h('span', { class: 'progress-label' }, `0 of ${items.length}`);
  const cancel = h('button', { class: 'secondary', onclick: () => (cancelled = true) }, 'Cancel');
  const single = items.length === 1;
  if (single) bar.removeAttribute('value');
  const box = h('div', { class: 'progress-box', role: 'dialog', 'aria-label': title, 'data-testid': 'progress' }, h('strong', {}, title), bar, single ? null : label, options.cancellable === false ? null : cancel);
  const onKey = (event: KeyboardEvent): void => {
    if (event.key === 'Escape') cancelled = true;
  };
  const timer = setTimeout(() => {
    document.body.append(box);
    if (options.cancellable !== false) cancel.focus();
  }, 500);
  document.addEventListener('keydown', onKey);
  let done = 0;
  try {
    for (let i = 0; i < items.length && !cancelled; i++) {
      await work(items[i]!, i);
      done = i + 1;
      if (!single) bar.value = done;
      label.textContent = `${done} of ${items.length}`;
    }
  } finally {
    clearTimeout(timer);
    document.removeEventListener('keydown', onKey);
    box.remove();
  }
  return { done, cancelled };
}
