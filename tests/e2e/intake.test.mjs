// Real spreadsheet exports in the page: the date-order question when the
// dates cannot tell, the encoding on the file line, the banner when many rows
// are not used. Invented data only.
import { test, before, after } from 'node:test';
import assert from 'node:assert/strict';
import { launch, openPage, act, summaryNumber } from './helpers.mjs';

let browser;
before(async () => { browser = await launch(); });
after(async () => { await browser?.close(); });

const choose = (page, name, buffer) => act(page, () => page.setInputFiles('#events-file', { name, mimeType: 'text/csv', buffer }));

test('ambiguous dates: the column editor asks, and the answer re-reads the file', async () => {
  const { page, log } = await openPage(browser);
  await choose(page, 'ambiguous.csv', Buffer.from('x,y,date\n0,0,03/04/2025\n100,0,05/06/2025\n0,100,01/02/2025\n100,100,02/01/2025\n'));
  assert.equal(await summaryNumber(page, 'n_events'), 4);
  assert.equal(await page.isVisible('#date-question'), true);
  assert.match(await page.textContent('#date-question-text'), /Row 2 holds 03\/04\/2025/);
  assert.match(await page.textContent('#date-mdy'), /2025-03-04/);
  assert.equal(await page.inputValue('#map-date'), '');
  await act(page, () => page.click('#date-mdy'));
  assert.equal(await page.inputValue('#map-date'), 'month_day_year');
  assert.equal(await page.isVisible('#date-question'), false);
  assert.match(await page.textContent('#date-order-text'), /month\/day\/year, as chosen/);

  // A month/day/year file is detected without a question.
  await choose(page, 'us-dates.csv', Buffer.from('x,y,date\n0,0,03/04/2025\n100,0,04/23/2025\n0,100,01/02/2025\n'));
  assert.equal(await page.isVisible('#date-question'), false);
  assert.match(await page.textContent('#date-order-text'), /04\/23\/2025 on row 3 can only be month\/day\/year/);
  assert.deepEqual(log.pageErrors, []);
});

test('a Windows-1252 file is read and its encoding named; many rows not used raise a banner', async () => {
  const { page, log } = await openPage(browser);
  // "Käse" and "Länge" as Windows-1252 bytes (E4 = ä).
  const bytes = Buffer.concat([
    Buffer.from('Breite;L'), Buffer.from([0xe4]), Buffer.from('nge;Kategorie\n48,1;11,5;K'), Buffer.from([0xe4]),
    Buffer.from('se\n48,2;11,6;Brot\n48,3;11,4;Brot\nabc;11,4;Brot\n'),
  ]);
  await choose(page, 'export.csv', bytes);
  assert.equal(await summaryNumber(page, 'n_events'), 3);
  assert.match(await page.textContent('#events-name'), /export\.csv \(Windows-1252 \(Western European\)\): 3 of 4 rows used/);
  // 1 of 4 rows not used (25 %) is above the 10 % threshold.
  assert.equal(await page.isVisible('#rejected-banner'), true);
  assert.match(await page.textContent('#rejected-banner'), /1 of 4 rows \(25 %\)/);
  await choose(page, 'clean.csv', Buffer.from('x,y\n0,0\n100,0\n0,100\n'));
  assert.equal(await page.isVisible('#rejected-banner'), false);
  assert.deepEqual(log.pageErrors, []);
});
