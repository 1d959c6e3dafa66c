/* The status line, the error banner, and the queue that runs user actions
 * one after another (body[data-done] counts finished actions for the tests). */

import { $, el, fmt, errorText } from './dom.js';

export function setStatus(text) {
  $('status').textContent = text;
}

export function showError(context, err) {
  let text = `${context}: ${errorText(err)}`;
  if (err && Array.isArray(err.by_reason) && err.by_reason.length > 0) {
    const parts = err.by_reason.map((r) => `${r.reason_text || r.reason} (${fmt(r.count)})`);
    text += ` Reasons: ${parts.join('; ')}.`;
  }
  $('error-text').textContent = text;
  // A file that read but could not be used: show its first rejected rows.
  const list = $('error-rows');
  list.replaceChildren();
  const rows = err && Array.isArray(err.rejections) ? err.rejections : [];
  for (const r of rows.slice(0, 5)) {
    const where = r.column ? `row ${fmt(r.row)}, column "${r.column}"` : `row ${fmt(r.row)}`;
    const value = r.value === '' || r.value === null || r.value === undefined ? 'empty' : `"${r.value}"`;
    list.append(el('li', null, `${where}: ${r.reason_text || r.reason} (${value})`));
  }
  if (rows.length > 5) list.append(el('li', null, `…and ${fmt(rows.length - 5)} more`));
  list.hidden = rows.length === 0;
  $('error-action').hidden = true;
  $('error-action').onclick = null;
  $('error-banner').hidden = false;
}

/** A button in the error banner that offers the way out (shown with the
 * message most recently given to showError). */
export function showAction(label, fn) {
  const b = $('error-action');
  b.textContent = label;
  b.hidden = false;
  b.onclick = act(fn);
}

export function clearError() {
  $('error-banner').hidden = true;
  $('error-text').textContent = '';
  $('error-rows').replaceChildren();
  $('error-rows').hidden = true;
  $('error-action').hidden = true;
  $('error-action').onclick = null;
}

/** Runs user actions one after another (the engine answers one request at
 * a time anyway) and counts finished actions in body[data-done] for tests. */
let queue = Promise.resolve();
let running = 0;
export function act(fn) {
  return (...args) => {
    // Never queue silently: say that this waits for the work in progress.
    if (running > 0) setStatus('Waiting: this starts when the current work is done (Cancel stops that).');
    running++;
    queue = queue
      .then(() => fn(...args))
      .catch((err) => { if (!(err && err.code === 'cancelled')) showError('Unexpected problem in the page', err); })
      .finally(() => {
        running--;
        document.body.dataset.done = String(Number(document.body.dataset.done || 0) + 1);
      });
    return queue;
  };
}
