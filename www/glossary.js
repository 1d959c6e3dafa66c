/* Plain words for the trade's terms where the page shows them: a term is
 * drawn with a small "?" button that opens its explanation in place
 * (keyboard and touch work; nothing hides on hover only). One list, so a
 * term is explained the same way everywhere. */

import { el } from './dom.js';

export const GLOSSARY = {
  dclf: 'A second global test (Diggle, Cressie, Loosmore and Ford): it adds up the squared distance between the observed curve and the chance curve over all distances, so a moderate departure that lasts picks it up.',
  mad: 'The global test behind the band: the largest gap between the observed curve and the chance curve at any distance, compared with the same gap in each simulated pattern.',
  donnelly: 'Events near the edge of the area have fewer neighbours inside it, so their nearest neighbour looks farther away. Donnelly (1978) gives the expected mean distance with that allowed for; without it the ratio leans towards "regular".',
  dispersion: 'The variance of the counts per cell divided by their mean. Counts that follow chance (Poisson) give about 1; clumped events give more, evenly spaced events less.',
  jones_diggle: 'Near the boundary part of each event\u2019s mound would fall outside the area and be lost. This correction (Jones 1993; Diggle 1985) rescales each mound so all of it counts inside, so the surface does not sag at the edge.',
  bernoulli: 'Each point is a case or a control; the test asks whether a circle holds more cases among its points than the share of cases overall.',
  poisson: 'Events are compared with area: a circle is expected to hold events in proportion to its area, as if every km\u00b2 were equally at risk.',
  poisson_population: 'Cases are compared with population counts at points (Kulldorff 1997): a circle is expected to hold the cases\u2019 share of the people counted in it. Each case is counted at its nearest population point.',
  llr: 'The log-likelihood ratio: how much better "the risk is higher inside this circle" explains the counts than "the risk is the same everywhere". Larger is stronger; on its own it is not a p-value.',
  eps: 'DBSCAN\u2019s reach: two events closer than this are neighbours. Groups of neighbours with enough events become clusters; events with too few neighbours are noise.',
  isotropic: 'Edge correction (Ripley 1976): a pair is counted more when much of the circle through the other event lies outside the area, where its neighbours could not be seen.',
  translation: 'Edge correction (Ohser 1983): a pair is counted more when the area overlaps little with a copy of itself shifted by the pair\u2019s separation.',
  border: 'Edge correction: only events (or places) farther from the edge than the distance being looked at are used, so nothing unseen is missed; it uses fewer events.',
  ce_t: 'T for a given k: for every case, count how many of its k nearest points are cases, and add these counts up. Points at the same address are each other\u2019s nearest; among equally near points a random order (from the seed) decides.',
  ce_normal_p: 'How unusual T is if cases were a random choice among all the points, from T\u2019s exact mean and spread under that choice and the bell curve. A quick guide; with few cases the relabelling p is the one to trust.',
  ce_combined: 'One test over all the k at once: each k\u2019s T is put on a common scale (its distance from the expected value in standard deviations), the largest is taken, and it is compared with the same largest value in each relabelling. Use it instead of picking the k with the smallest p.',
};

/** The term `label` with a "?" that shows GLOSSARY[key] beside it. */
export function term(key, label) {
  const text = GLOSSARY[key];
  if (!text) throw new Error(`no glossary entry "${key}"`);
  const note = el('span', { class: 'term-text', role: 'note', hidden: true }, text);
  const q = el('button', { type: 'button', class: 'term-q', 'aria-expanded': 'false', 'aria-label': `What is ${label}?`, title: `What is ${label}?` }, '?');
  q.addEventListener('click', (e) => {
    e.preventDefault();
    const open = note.hidden;
    note.hidden = !open;
    q.setAttribute('aria-expanded', open ? 'true' : 'false');
  });
  return el('span', { class: 'term', 'data-term': key }, label, ' ', q, note);
}
