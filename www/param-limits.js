/* Limits and defaults of the page's number controls, from the engine's own
 * description of each analysis's options (parameterSpec), so the page never
 * keeps a second copy of them. A control says which option it sets with
 * data-param="method.option" (and data-param-scale, e.g. 100 for a percent). */

import { state } from './state.js';

/** One option of an analysis as the engine describes it, or null. */
export function paramSpec(method, name) {
  const spec = state.spec && state.spec.find((x) => x.analysis === method);
  return spec ? spec.fields.find((f) => f.name === name) || null : null;
}

/** Gives every control under root marked data-param the limits of its
 * option, and its default when the control is empty and has no placeholder. */
export function applyParameterLimits(root = document) {
  const found = [...root.querySelectorAll('[data-param]')];
  if (root.matches && root.matches('[data-param]')) found.push(root);
  for (const input of found) {
    const [method, name] = input.dataset.param.split('.');
    const f = paramSpec(method, name);
    if (!f) continue;
    const scale = Number(input.dataset.paramScale || 1);
    if (f.min !== null) input.min = String(f.min * scale);
    if (f.max !== null) input.max = String(f.max * scale);
    if (f.kind === 'integer') input.step = '1';
    if (input.value === '' && !input.placeholder && typeof f.default === 'number') input.value = String(f.default * scale);
  }
}

/** Reads the description from the engine and applies it now and to every
 * control added later (panels build theirs as data arrives). */
export function watchParameterLimits(engine) {
  state.spec = engine.parameterSpec();
  applyParameterLimits();
  new MutationObserver((changes) => {
    for (const c of changes) for (const n of c.addedNodes) if (n.nodeType === 1) applyParameterLimits(n);
  }).observe(document.body, { childList: true, subtree: true });
}
