// (1) The demo is one click away: map drawn, summary figures shown, counts add up.
import { test, before, after } from 'node:test';
import assert from 'node:assert/strict';
import { launch, openPage, loadDemo, act, frame, summaryNumber, qualityCounts, canvasCensus, palette, demoFacts } from './helpers.mjs';

let browser;
before(async () => { browser = await launch(); });
after(async () => { await browser?.close(); });

test('the demo loads: map drawn, n equals the documented count, counts add up', async () => {
  const facts = demoFacts();
  const { page, log } = await openPage(browser);
  const pal = await palette(page);
  const empty = await canvasCensus(page, [pal.areaFill]);
  assert.equal(empty.notBackground, 0, 'the map starts blank');

  await loadDemo(page);
  assert.equal(await page.isVisible('#error-banner'), false, `no error: ${await page.textContent('#error-text')}`);

  // n in the summary equals the number of demo events inside the study area, as documented.
  assert.equal(await summaryNumber(page, 'n_events'), facts.cases.in_area);
  assert.equal(await summaryNumber(page, 'n_controls'), facts.population.in_area);

  // Data quality: rows read = used + not used, for events and controls, with the documented numbers.
  const ev = await qualityCounts(page, 'events');
  assert.equal(ev.read, ev.used + ev.rejected);
  assert.equal(ev.read, facts.cases.rows);
  assert.equal(ev.used, facts.cases.in_area);
  const ctl = await qualityCounts(page, 'controls');
  assert.equal(ctl.read, ctl.used + ctl.rejected);
  assert.equal(ctl.used, facts.population.in_area);

  // The map shows the study area and points in the category colours (exact colour pixels).
  const colours = [pal.areaFill, ...pal.categories, pal.single, pal.control];
  const census = await canvasCensus(page, colours);
  const [areaPx, ...rest] = census.counts;
  const eventPx = rest.slice(0, pal.categories.length + 1).reduce((a, b) => a + b, 0);
  const controlPx = rest[rest.length - 1];
  assert.ok(areaPx > census.total * 0.05, `study area fill drawn (${areaPx} px)`);
  assert.ok(eventPx >= facts.cases.in_area, `event squares drawn (${eventPx} px)`);
  assert.ok(controlPx > 0, 'controls drawn');

  // The legend lists the categories, controls, area, mean centre and ellipse.
  const legend = await page.textContent('#legend');
  for (const word of ['Controls', 'Study area', 'Mean centre', 'ellipse']) assert.match(legend, new RegExp(word));
  for (const cat of facts.cases.categories) assert.match(legend, new RegExp(cat));

  // Summary figures are all present and finite.
  for (const key of ['area_km2', 'intensity_per_km2', 'standard_distance_m', 'nn', 'mean_centre']) {
    const t = await page.textContent(`#summary dd[data-key="${key}"]`);
    assert.match(t, /\d/, `${key} shows a number`);
  }
  // Hiding controls removes their pixels; showing them brings them back.
  await page.uncheck('#show-controls');
  await frame(page);
  const hidden = await canvasCensus(page, [pal.control]);
  assert.equal(hidden.counts[0], 0, 'controls hidden');
  await page.check('#show-controls');
  await frame(page);
  const shown = await canvasCensus(page, [pal.control]);
  assert.ok(shown.counts[0] > 0, 'controls shown again');

  assert.deepEqual(log.pageErrors, []);
});
