// End-to-end checks of the design document on the built page, from file:// and from
// http://127.0.0.1: Save design downloads the document, Open design (picker) restores every
// field, a bad file changes nothing, Remember this design restores after a reload (and stores
// nothing when off), leaving with unsaved changes asks first, and undo/redo cover every form change.
// Run: node --test tests/e2e/   (after scripts/build-page)

import assert from 'node:assert/strict';
import fs from 'node:fs';
import os from 'node:os';
import path from 'node:path';
import { execFileSync } from 'node:child_process';
import { after, before, describe, test } from 'node:test';
import { closeBrowser, distDir, FORM_FIELDS, pageFileUrl, requireBuiltPage, startStaticServer, withPage } from './harness.mjs';

before(() => requireBuiltPage());
after(async () => closeBrowser());

const ALL_FIELDS = ['title', 'notes', ...FORM_FIELDS];

/** Every form control's value (checkboxes as "true"/""). */
async function fieldValues(page) {
  return page.evaluate((keys) => Object.fromEntries(keys.map((k) => {
    const el = document.getElementById(`pw-${k}`);
    return [k, el.type === 'checkbox' ? (el.checked ? 'true' : '') : el.value];
  })), ALL_FIELDS);
}

async function waitDesigned(page) {
  await page.waitForFunction(() => document.getElementById('pw-status').hasAttribute('data-outcome'));
}

async function saveDownload(page) {
  const [download] = await Promise.all([page.waitForEvent('download'), page.click('#pw-save')]);
  return fs.readFileSync(await download.path(), 'utf8');
}

async function checkSaveOpen(url) {
  await withPage(url, async ({ page, requests }) => {
    await waitDesigned(page);
    await page.fill('#pw-title', 'Illustrative carriage, review copy');
    await page.fill('#pw-notes', 'Invented data.\nSecond line.');
    await page.fill('#pw-limits', '');
    const before = await fieldValues(page);
    const text = await saveDownload(page);
    const doc = JSON.parse(text);
    assert.equal(doc.format, 'polewright.design');
    assert.equal(doc.version, 3);
    assert.equal(doc.title, 'Illustrative carriage, review copy');
    // A reload (nothing remembered) brings the first demonstration back; then another design
    // replaces it; opening the saved file brings every field back.
    await page.reload();
    await waitDesigned(page);
    assert.equal((await fieldValues(page)).title, '', 'nothing was stored');
    await page.selectOption('#pw-demo', '1');
    await page.click('#pw-load-demo');
    assert.notDeepEqual(await fieldValues(page), before);
    await page.setInputFiles('#pw-open-file', { name: 'saved.json', mimeType: 'application/json', buffer: Buffer.from(text) });
    await page.waitForFunction(() => document.getElementById('pw-file-status').textContent.startsWith('Opened'));
    assert.deepEqual(await fieldValues(page), before);
    // A truncated file is refused with the reason, and the page keeps its design.
    await page.setInputFiles('#pw-open-file', { name: 'bad.json', mimeType: 'application/json', buffer: Buffer.from(text.slice(0, 40)) });
    await page.waitForFunction(() => document.getElementById('pw-file-status').textContent.includes('was not opened'));
    assert.deepEqual(await fieldValues(page), before);
    // A newer version is refused by name.
    await page.setInputFiles('#pw-open-file', { name: 'new.json', mimeType: 'application/json', buffer: Buffer.from(text.replace('"version": 3', '"version": 7')) });
    await page.waitForFunction(() => document.getElementById('pw-file-status').textContent.includes('version 7 is newer'));
    assert.deepEqual(await fieldValues(page), before);
    // A file over 8 MiB is refused unread, by its size.
    await page.setInputFiles('#pw-open-file', { name: 'huge.json', mimeType: 'application/json', buffer: Buffer.alloc(9_000_000, 32) });
    await page.waitForFunction(() => document.getElementById('pw-file-status').textContent.includes('9000000 bytes'));
    assert.match(await page.textContent('#pw-file-status'), /up to 8388608 bytes \(8 MiB\) are read\. Nothing was changed\./);
    assert.deepEqual(await fieldValues(page), before);
    // Nothing left the page: every request is the page itself or a data:/blob: URL.
    const base = url.split('#')[0];
    assert.deepEqual(requests.filter((r) => r !== base && !r.startsWith('data:') && !r.startsWith('blob:')), []);
  });
}

describe('design document', () => {
  test('save, open and refused bad, newer and oversized files, from file://', async () => checkSaveOpen(pageFileUrl));

  test('save, open and refused bad, newer and oversized files, from http://127.0.0.1', async () => {
    const server = await startStaticServer(distDir);
    try {
      await checkSaveOpen(`${server.origin}/polewright.html`);
    } finally {
      await server.close();
    }
  });

  test('a saved work in progress opens and says what is left to fix', async () => {
    await withPage(pageFileUrl, async ({ page }) => {
      await waitDesigned(page);
      const doc = JSON.stringify({
        format: 'polewright.design', version: 3, title: 'Half done',
        plant: { a: '0 1\n0 0', b: '0\n1' }, feedback: { poles: '-1, -2, -3' },
      });
      await page.setInputFiles('#pw-open-file', { name: 'wip.json', mimeType: 'application/json', buffer: Buffer.from(doc) });
      await page.waitForFunction(() => document.getElementById('pw-file-status').textContent.includes('need'));
      const status = await page.textContent('#pw-file-status');
      assert.match(status, /feedback\.poles/);
      assert.equal(await page.inputValue('#pw-poles'), '-1, -2, -3', 'what was typed is kept');
      await page.click('#pw-design');
      await page.waitForFunction(() => !document.getElementById('pw-poles-error').hidden);
      assert.match(await page.textContent('#pw-poles-error'), /3 poles given but the plant has 2 states/);
    });
  });

  test('after an internal error the page stops designing until reloaded', async () => {
    await withPage(pageFileUrl, async ({ page }) => {
      await waitDesigned(page);
      const gain = await page.textContent('#pw-gain');
      // Break the page from outside: a control the cycle reads disappears.
      await page.evaluate(() => document.getElementById('pw-seed').remove());
      await page.fill('#pw-poles', '-5, -6, -7, -8');
      await page.click('#pw-design');
      await page.waitForFunction(() => !document.getElementById('pw-error').hidden);
      assert.match(await page.textContent('#pw-status'), /Stopped/);
      // Nothing designs any more: edits leave the last results and the status alone.
      await page.fill('#pw-poles', '-9, -10, -11, -12');
      await page.click('#pw-design');
      await new Promise((r) => setTimeout(r, 400));
      assert.match(await page.textContent('#pw-status'), /Stopped/);
      assert.equal(await page.textContent('#pw-gain'), gain);
      // A reload starts afresh.
      await page.reload();
      await waitDesigned(page);
      assert.equal(await page.isHidden('#pw-error'), true);
    });
  });

  test('remembering on restores the form and the pinned design after a reload; off stores nothing', async () => {
    await withPage(pageFileUrl, async ({ page }) => {
      await waitDesigned(page);
      assert.equal(await page.evaluate(() => localStorage.length), 0, 'nothing stored before opting in');
      await page.fill('#pw-title', 'Remembered design');
      // A pinned design (the demo as loaded), then an edited current one.
      await page.click('#pw-pin');
      const pinnedPoles = await page.getAttribute('#pw-pole-map', 'data-pinned-poles');
      assert.notEqual(pinnedPoles, '0');
      await page.fill('#pw-poles', '-4, -5, -6, -7');
      await page.check('#pw-remember');
      await page.click('#pw-design');
      await waitDesigned(page);
      const before = await fieldValues(page);
      await page.reload();
      await page.waitForFunction(() => document.getElementById('pw-status').hasAttribute('data-outcome'));
      assert.deepEqual(await fieldValues(page), before);
      assert.equal(await page.isChecked('#pw-remember'), true);
      assert.equal(await page.getAttribute('#pw-pole-map', 'data-pinned-poles'), pinnedPoles, 'the pinned design is restored too');
      assert.equal(await page.isVisible('#pw-compare'), true, 'with its comparison table');
      await page.uncheck('#pw-remember');
      assert.equal(await page.evaluate(() => localStorage.length), 0, 'turning it off removes what was stored');
      await page.reload();
      await page.waitForFunction(() => document.getElementById('pw-status').hasAttribute('data-outcome'));
      assert.notEqual((await fieldValues(page)).title, 'Remembered design');
      assert.equal(await page.evaluate(() => localStorage.length), 0);
    });
  });

  test('leaving with unsaved changes asks first', async () => {
    await withPage(pageFileUrl, async ({ page }) => {
      await waitDesigned(page);
      await page.click('#pw-title');
      await page.keyboard.type('edited');
      const dialogs = [];
      page.on('dialog', (d) => {
        dialogs.push(d.type());
        d.dismiss();
      });
      await page.close({ runBeforeUnload: true });
      await new Promise((r) => setTimeout(r, 500));
      assert.deepEqual(dialogs, ['beforeunload']);
    });
  });

  test('undo and redo cover every form change: a demonstration load, a choice, typed text', async () => {
    await withPage(pageFileUrl, async ({ page }) => {
      await waitDesigned(page);
      await page.fill('#pw-poles', '-3, -4, -5, -6');
      const typed = await fieldValues(page);
      await page.selectOption('#pw-demo', '1');
      await page.click('#pw-load-demo');
      await waitDesigned(page);
      const loaded = await fieldValues(page);
      assert.notDeepEqual(loaded, typed);
      await page.selectOption('#pw-tracking', 'feedforward');
      await page.waitForFunction(() => !document.getElementById('pw-form-undo').disabled);
      const chosen = await fieldValues(page);
      await page.click('#pw-form-undo');
      assert.deepEqual(await fieldValues(page), loaded, 'the choice is undone');
      await page.click('#pw-form-undo');
      assert.deepEqual(await fieldValues(page), typed, 'the demo load is undone, the typed poles are back');
      await page.click('#pw-form-redo');
      assert.deepEqual(await fieldValues(page), loaded);
      await page.click('#pw-form-redo');
      assert.deepEqual(await fieldValues(page), chosen);
      assert.equal(await page.isDisabled('#pw-form-redo'), true);
      // Ctrl+Z outside a text field undoes too.
      await page.focus('#pw-tracking');
      await page.keyboard.press('Control+z');
      assert.deepEqual(await fieldValues(page), loaded);
    });
  });

  test('the Export panel downloads what the command-line tool writes, byte for byte', async () => {
    const root = path.resolve(path.dirname(new URL(import.meta.url).pathname), '..', '..');
    // The same build as the page's: the release CLI (built here if missing).
    execFileSync('cargo', ['build', '--release', '-q', '-p', 'polewright', '--bin', 'polewright'], { cwd: root, stdio: 'inherit' });
    const cli = path.join(root, 'target', 'release', 'polewright');
    await withPage(pageFileUrl, async ({ page, requests, url }) => {
      await waitDesigned(page);
      await page.selectOption('#pw-demo', '1');
      await page.click('#pw-load-demo');
      await waitDesigned(page);
      const saved = await saveDownload(page);
      const dir = fs.mkdtempSync(path.join(os.tmpdir(), 'pw-export-'));
      fs.writeFileSync(path.join(dir, 'design.json'), saved);
      for (const [format, precision, count] of [['c', 'double', 2], ['c', 'float', 2], ['json', 'double', 1], ['csv', 'double', 1], ['rust', 'double', 1]]) {
        await page.selectOption('#pw-export-format', format);
        await page.selectOption('#pw-export-precision', precision);
        const downloads = [];
        page.on('download', (d) => downloads.push(d));
        await page.click('#pw-export');
        await page.waitForFunction(() => document.getElementById('pw-export-status').textContent.startsWith('Exported'));
        while (downloads.length < count) await new Promise((r) => setTimeout(r, 50));
        page.removeAllListeners('download');
        const out = path.join(dir, `${format}-${precision}`);
        execFileSync(cli, ['export', path.join(dir, 'design.json'), '--format', format, '--precision', precision, '--out', out], { stdio: 'pipe' });
        for (const d of downloads) {
          const got = fs.readFileSync(await d.path(), 'utf8');
          const want = fs.readFileSync(path.join(out, d.suggestedFilename()), 'utf8');
          assert.equal(got, want, `${format}/${precision}: ${d.suggestedFilename()} differs from the CLI's`);
        }
        assert.equal(downloads.length, count, `${format}: ${downloads.map((d) => d.suggestedFilename())}`);
      }
      assert.deepEqual(requests, [url], 'nothing but the page itself was requested');
      fs.rmSync(dir, { recursive: true, force: true });
    });
  });

  test('the design record: printed from the page and by the CLI, two A4 pages with the gains, the hash and the sign-off', async () => {
    const root = path.resolve(path.dirname(new URL(import.meta.url).pathname), '..', '..');
    execFileSync('cargo', ['build', '--release', '-q', '-p', 'polewright', '--bin', 'polewright'], { cwd: root, stdio: 'inherit' });
    const cli = path.join(root, 'target', 'release', 'polewright');
    const dir = fs.mkdtempSync(path.join(os.tmpdir(), 'pw-record-'));
    const pdfText = (pdf) => execFileSync('pdftotext', ['-layout', pdf, '-'], { encoding: 'utf8' });
    const pages = (pdf) => Number(/Pages:\s+(\d+)/.exec(execFileSync('pdfinfo', [pdf], { encoding: 'utf8' }))[1]);
    // The CLI's record of the illustrative digital belt axis, rendered by Chromium's own
    // --print-to-pdf.
    const example = path.join(root, 'examples', 'belt-axis-digital.json');
    const html = execFileSync(cli, ['report', example], { encoding: 'utf8' });
    fs.writeFileSync(path.join(dir, 'record.html'), html);
    const cliPdf = path.join(dir, 'cli.pdf');
    execFileSync('/usr/bin/chromium', ['--headless', '--no-sandbox', '--disable-gpu', '--no-pdf-header-footer', `--print-to-pdf=${cliPdf}`, `file://${path.join(dir, 'record.html')}`], { stdio: 'ignore' });
    const result = JSON.parse(execFileSync(cli, ['design', example], { encoding: 'utf8' }));
    const k0 = result.feedback.gain[0][0].toExponential(6).replace('e+', 'e');
    const text = pdfText(cliPdf);
    assert.ok(pages(cliPdf) <= 2, `the record has ${pages(cliPdf)} pages`);
    for (const needle of ['Design record', 'Sign-off', 'Designed by', 'Checked by', 'CAUTION', 'SHA-256', k0, 'Float32 re-check']) {
      assert.ok(text.includes(needle), `the record shows ${needle}`);
    }
    // The page prints the same record (its own print layout).
    await withPage(pageFileUrl, async ({ page, requests, url, consoleErrors, pageErrors }) => {
      await waitDesigned(page);
      const doc = fs.readFileSync(example, 'utf8');
      await page.setInputFiles('#pw-open-file', { name: 'belt.json', mimeType: 'application/json', buffer: Buffer.from(doc) });
      await page.waitForFunction(() => document.getElementById('pw-file-status').textContent.startsWith('Opened'));
      await waitDesigned(page);
      await page.evaluate(() => { window.print = () => {}; });
      await page.click('#pw-print-record');
      await page.emulateMedia({ media: 'print' });
      const pagePdf = path.join(dir, 'page.pdf');
      await page.pdf({ path: pagePdf, format: 'A4' });
      const shown = pdfText(pagePdf);
      assert.ok(pages(pagePdf) <= 2, `the page's record has ${pages(pagePdf)} pages`);
      for (const needle of ['Design record', 'Sign-off', k0, 'SHA-256']) assert.ok(shown.includes(needle), `the printed page shows ${needle}`);
      assert.ok(!shown.includes('Export for firmware'), 'only the record is printed');
      assert.deepEqual([...consoleErrors, ...pageErrors], [], 'no CSP violation or error while printing');
      assert.deepEqual(requests, [url]);
    });
    // Hostile text in the record is shown, never run.
    const hostile = JSON.parse(fs.readFileSync(example, 'utf8'));
    hostile.version = 3;
    hostile.notes = hostile.comment;
    delete hostile.comment;
    hostile.title = "<script>document.title='run'</script><img src=x onerror=\"document.title='run'\">";
    fs.writeFileSync(path.join(dir, 'hostile.json'), JSON.stringify(hostile));
    fs.writeFileSync(path.join(dir, 'hostile.html'), execFileSync(cli, ['report', path.join(dir, 'hostile.json')], { encoding: 'utf8' }));
    await withPage(`file://${path.join(dir, 'hostile.html')}`, async ({ page }) => {
      assert.notEqual(await page.title(), 'run');
      assert.match(await page.textContent('h1'), /<script>/, 'the title is shown as text');
      assert.equal(await page.evaluate(() => document.querySelectorAll('script, img').length), 0);
    }, { waitReady: false });
    fs.rmSync(dir, { recursive: true, force: true });
  });
});

