// Trade terms in the page carry a plain-words explanation behind a "?".
import { test, before, after } from 'node:test';
import assert from 'node:assert/strict';
import { join } from 'node:path';
import { launch, openPage, loadDemo, act, OUT } from './helpers.mjs';

let browser;
before(async () => { browser = await launch(); });
after(async () => { await browser?.close(); });

test('the scan model, the reach and the Clark-Evans correction explain themselves', async () => {
  const { page, log } = await openPage(browser);
  await loadDemo(page);
  // The demo has a population file: the scan's model is Bernoulli.
  const q = page.locator('#hs-scan-model .term[data-term="bernoulli"] .term-q');
  await q.waitFor({ state: 'visible' });
  const note = page.locator('#hs-scan-model .term[data-term="bernoulli"] .term-text');
  assert.equal(await note.isVisible(), false, 'closed until asked');
  await q.click();
  assert.equal(await note.isVisible(), true);
  assert.equal(await q.getAttribute('aria-expanded'), 'true');
  assert.match(await note.textContent(), /case or a control/);
  // Keyboard: Enter on the focused "?" closes it again.
  await q.focus();
  await page.keyboard.press('Enter');
  assert.equal(await note.isVisible(), false);
  // DBSCAN's reach.
  assert.equal(await page.locator('#hotspots .term[data-term="eps"]').count(), 1);
  // Clark-Evans: the Donnelly row.
  await act(page, () => page.click('#clu-ce-run'));
  const d = page.locator('#clu-ce-result .term[data-term="donnelly"]');
  assert.equal(await d.count(), 1);
  await d.locator('.term-q').click();
  assert.match(await d.locator('.term-text').textContent(), /Donnelly \(1978\)/);
  await page.locator('#clustering').screenshot({ path: join(OUT, 'terms-clark-evans.png') });
  assert.deepEqual(log.pageErrors, []);
});
