// Smoke tests of dist/polewright.html in the second browser engine: Debian's firefox-esr,
// driven over WebDriver BiDi by puppeteer-core (npm). Locked-down laptops often run Firefox
// ESR, so the page must work there from file:// as it does in Chromium (tests/e2e/ holds the
// full suite, which runs in Chromium).
//
// From file://: the first demonstration designs; editing the pole list redesigns; Save gives
// the design document (captured from the download link the page makes); opening an edited copy
// of it through the file picker designs that copy; no console error and no page error.

import { test, before, after, describe } from 'node:test';
import assert from 'node:assert/strict';
import fs from 'node:fs';
import os from 'node:os';
import path from 'node:path';
import { fileURLToPath, pathToFileURL } from 'node:url';
import puppeteer from 'puppeteer-core';

const root = path.resolve(path.dirname(fileURLToPath(import.meta.url)), '..', '..');
const pagePath = path.join(root, 'dist', 'polewright.html');
const FIREFOX = process.env.POLEWRIGHT_FIREFOX || '/usr/bin/firefox-esr';

let browser;
before(async () => {
  if (!fs.existsSync(pagePath)) throw new Error(`${pagePath} is missing: run scripts/build-page first`);
  browser = await puppeteer.launch({ browser: 'firefox', executablePath: FIREFOX, headless: true, timeout: 60_000 });
});
after(async () => {
  if (browser) await browser.close();
});

async function openPage() {
  const page = await browser.newPage();
  const problems = [];
  page.on('console', (m) => {
    if (m.type() === 'error') problems.push(`console: ${m.text()}`);
  });
  page.on('pageerror', (e) => problems.push(`page: ${e && e.message ? e.message : e}`));
  await page.setViewport({ width: 1280, height: 800 });
  await page.goto(pathToFileURL(pagePath).href, { waitUntil: 'load' });
  await page.waitForFunction(() => /^Designed/.test(document.getElementById('pw-status').textContent), { timeout: 30_000 });
  return { page, problems };
}

const text = (page, sel) => page.$eval(sel, (el) => el.textContent);

describe('Firefox ESR', () => {
  test('opened from file:// it designs the first demonstration', async () => {
    const { page, problems } = await openPage();
    assert.match(await text(page, '#pw-status'), /^Designed: \d+ states?, \d+ inputs?/);
    const gain = await text(page, '#pw-gain-text');
    assert.ok(gain.split('\n').length >= 3, gain);
    assert.ok(gain.split(/\s+/).some((t) => Number.isFinite(Number(t)) && Math.abs(Number(t)) > 0), gain);
    assert.deepEqual(problems, []);
    await page.close();
  });

  test('editing the pole list redesigns; save and open a design', async () => {
    const { page, problems } = await openPage();
    const before = await text(page, '#pw-gain-text');
    await page.$eval('#pw-poles', (el) => { el.value = ''; });
    await page.type('#pw-poles', '-12±9j, -25±20j');
    await page.waitForFunction(() => /−25 \+ 20j/.test(document.getElementById('pw-pole-table').textContent), { timeout: 20_000 });
    assert.notEqual(await text(page, '#pw-gain-text'), before, 'a new gain');
    // Save: the page downloads through a data: link; its address holds the document.
    await page.evaluate(() => {
      window.pwSaved = null;
      const click = HTMLAnchorElement.prototype.click;
      HTMLAnchorElement.prototype.click = function capture() {
        if (this.download) window.pwSaved = this.href;
        else click.call(this);
      };
    });
    await page.click('#pw-save');
    const href = await page.evaluate(() => window.pwSaved);
    assert.ok(href && href.startsWith('data:application/json'), String(href).slice(0, 80));
    const saved = JSON.parse(decodeURIComponent(href.slice(href.indexOf(',') + 1)));
    assert.equal(saved.format, 'polewright.design');
    assert.equal(saved.feedback.poles, '-12±9j, -25±20j', 'the poles as typed');
    // Open an edited copy through the file picker.
    saved.feedback.poles = '-10±8j, -20±15j';
    const file = path.join(fs.mkdtempSync(path.join(os.tmpdir(), 'pw-ff-')), 'edited.json');
    fs.writeFileSync(file, JSON.stringify(saved));
    const input = await page.$('#pw-open-file');
    await input.uploadFile(file);
    await page.waitForFunction(() => document.getElementById('pw-poles').value === '-10±8j, -20±15j', { timeout: 20_000 });
    await page.waitForFunction(() => /−20 \+ 15j/.test(document.getElementById('pw-pole-table').textContent), { timeout: 20_000 });
    assert.match(await text(page, '#pw-status'), /^Designed/);
    assert.deepEqual(problems, []);
    await page.close();
  });
});
