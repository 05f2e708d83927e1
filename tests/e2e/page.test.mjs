// End-to-end checks of the built page: loads offline from file:// and from a
// static server, requests nothing but itself, draws its canvases, has a strict CSP.
// Run: node --test tests/e2e/   (after scripts/build-page)

import assert from 'node:assert/strict';
import fs from 'node:fs';
import { after, before, describe, test } from 'node:test';
import {
  canvasStats,
  closeBrowser,
  distDir,
  pageFileUrl,
  pagePath,
  requireBuiltPage,
  screenshot,
  startStaticServer,
  withPage,
} from './harness.mjs';

const CANVASES = ['pw-pole-map', 'pw-time-plot'];

let server;

before(async () => {
  requireBuiltPage();
  server = await startStaticServer(distDir);
});

after(async () => {
  await closeBrowser();
  if (server) await server.close();
});

/** Checks shared by every way of opening the page. */
async function checkLoadedPage(ctx, shotName) {
  const { page, url, requests, consoleErrors, pageErrors } = ctx;
  const status = await page.textContent('#pw-status');
  const shown = await page.textContent('#pw-error');
  assert.match(status, /^Ready/, `status line: ${status}; error box: ${shown}; console: ${ctx.consoleMessages}`);
  assert.match(await page.textContent('#pw-version'), /^\d+\.\d+\.\d+/);
  assert.equal(await page.isHidden('#pw-error'), true, 'error box stays hidden');

  for (const id of CANVASES) {
    const s = await canvasStats(page, id);
    assert.ok(s, `canvas #${id} exists`);
    assert.ok(s.width > 100 && s.height > 100, `#${id} sized: ${JSON.stringify(s)}`);
    assert.ok(s.distinct >= 6, `#${id} has several colours: ${JSON.stringify(s)}`);
    assert.ok(s.dominantShare < 0.97, `#${id} is not nearly blank: ${JSON.stringify(s)}`);
  }

  await screenshot(page, shotName);
  assert.deepEqual(pageErrors, [], 'no uncaught page errors');
  assert.deepEqual(consoleErrors, [], 'no console errors');
  assert.deepEqual(requests, [url], 'the page itself is the only request');
}

describe('built page', () => {
  test('opened from file:// it works and requests nothing else', async () => {
    await withPage(pageFileUrl, (ctx) => checkLoadedPage(ctx, 'page-file.png'));
  });

  test('served over http it works and requests nothing else', async () => {
    const url = `${server.origin}/polewright.html`;
    const logStart = server.log.length;
    await withPage(url, (ctx) => checkLoadedPage(ctx, 'page-http.png'));
    assert.deepEqual(server.log.slice(logStart), ['GET /polewright.html'], 'server saw only the page');
  });

  test('the CSP meta comes first in <head>, before any script, and is strict', async () => {
    const html = fs.readFileSync(pagePath, 'utf8');
    const headOpen = html.indexOf('<head>');
    const cspAt = html.indexOf('<meta http-equiv="Content-Security-Policy"');
    assert.ok(headOpen >= 0 && cspAt > headOpen, 'CSP meta inside <head>');
    assert.match(html.slice(headOpen + 6, cspAt), /^\s*$/, 'nothing before the CSP meta in <head>');
    assert.ok(cspAt < html.indexOf('<script'), 'CSP meta before the first script');
    assert.equal(html.match(/<script type="module">/g)?.length, 1, 'exactly one executable script');
    assert.doesNotMatch(html, /<script[^>]+src=/, 'no external scripts');
    assert.doesNotMatch(html, /<link[^>]+rel="stylesheet"/, 'no external styles');

    await withPage(pageFileUrl, async ({ page }) => {
      const info = await page.evaluate(() => {
        const first = document.head.firstElementChild;
        const attrs = [];
        for (const el of document.querySelectorAll('*')) {
          for (const a of el.attributes) if (/^on/i.test(a.name)) attrs.push(`${el.tagName}.${a.name}`);
        }
        return {
          tag: first && first.tagName,
          equiv: first && first.getAttribute('http-equiv'),
          content: first && first.getAttribute('content'),
          handlerAttrs: attrs,
          styleAttrs: document.querySelectorAll('[style]').length,
        };
      });
      assert.equal(info.tag, 'META');
      assert.equal(info.equiv, 'Content-Security-Policy');
      const csp = Object.fromEntries(
        info.content.split(';').map((d) => d.trim().split(/\s+/)).map(([k, ...v]) => [k, v]),
      );
      assert.deepEqual(csp['default-src'], ["'none'"]);
      assert.deepEqual(csp['connect-src'], ["'none'"]);
      assert.deepEqual(csp['base-uri'], ["'none'"]);
      assert.deepEqual(csp['form-action'], ["'none'"]);
      assert.ok(csp['script-src'].includes("'wasm-unsafe-eval'"));
      assert.ok(!csp['script-src'].includes("'unsafe-inline'"), 'script allowed by hash, not unsafe-inline');
      assert.ok(!csp['script-src'].includes("'unsafe-eval'"));
      assert.ok(csp['script-src'].some((s) => s.startsWith("'sha256-")));
      assert.ok(csp['style-src'].some((s) => s.startsWith("'sha256-")));
      assert.deepEqual(info.handlerAttrs, [], 'no inline event-handler attributes');
      assert.equal(info.styleAttrs, 0, 'no style attributes (the CSP would block them)');
    });
  });

  test('pointing at a closed-loop pole reads out its value', async () => {
    await withPage(pageFileUrl, async ({ page, consoleErrors, pageErrors }) => {
      // Find a closed-loop marker by its colour (deep teal #0e5f5c) below the legend row.
      const spot = await page.evaluate(() => {
        const c = document.getElementById('pw-pole-map');
        const { data, width, height } = c.getContext('2d').getImageData(0, 0, c.width, c.height);
        const scale = c.width / c.clientWidth;
        const hits = [];
        for (let y = Math.round(40 * scale); y < height; y += 1) {
          for (let x = 0; x < width; x += 1) {
            const i = 4 * (y * width + x);
            if (Math.abs(data[i] - 14) + Math.abs(data[i + 1] - 95) + Math.abs(data[i + 2] - 92) < 40) hits.push([x, y]);
          }
        }
        if (hits.length === 0) return null;
        const [x0, y0] = hits[hits.length - 1]; // lowest marker
        const near = hits.filter(([x, y]) => Math.hypot(x - x0, y - y0) < 12 * scale);
        const cx = near.reduce((a, [x]) => a + x, 0) / near.length;
        const cy = near.reduce((a, [, y]) => a + y, 0) / near.length;
        return { x: cx / scale, y: cy / scale };
      });
      assert.ok(spot, 'a closed-loop marker is drawn');
      const box = await page.locator('#pw-pole-map').boundingBox();
      await page.mouse.move(box.x + spot.x, box.y + spot.y);
      await page.waitForFunction(() => /closed-loop pole/.test(document.getElementById('pw-pole-pick').textContent));
      const text = await page.textContent('#pw-pole-pick');
      assert.match(text, /^closed-loop pole \d: −?\d\.\d{3} [+−] \d\.\d{3}j$/);
      await page.mouse.move(box.x + 2, box.y + 2);
      assert.match(await page.textContent('#pw-pole-pick'), /Point at a pole/);
      assert.deepEqual([...pageErrors, ...consoleErrors], []);
    });
  });

  test('switching to discrete time redraws the map in the z-plane', async () => {
    await withPage(pageFileUrl, async ({ page, consoleErrors, pageErrors }) => {
      const before = await canvasStats(page, 'pw-pole-map');
      await page.selectOption('#pw-domain', 'discrete');
      const after = await canvasStats(page, 'pw-pole-map');
      assert.notDeepEqual(after, before, 'the canvas changed');
      assert.ok(after.distinct >= 6 && after.dominantShare < 0.97);
      await screenshot(page, 'page-discrete.png');
      assert.deepEqual([...pageErrors, ...consoleErrors], []);
    });
  });

  test('a high-density display gets a sharp bitmap', async () => {
    await withPage(
      pageFileUrl,
      async ({ page, consoleErrors, pageErrors }) => {
        const s = await page.evaluate(() => {
          const c = document.getElementById('pw-pole-map');
          return { bitmap: c.width, css: c.clientWidth };
        });
        assert.equal(s.bitmap, 2 * s.css);
        assert.deepEqual([...pageErrors, ...consoleErrors], []);
      },
      { deviceScaleFactor: 2 },
    );
  });

  test('the safety caution is visible and the full text is behind <details>', async () => {
    await withPage(pageFileUrl, async ({ page }) => {
      const caution = page.locator('.caution');
      assert.equal(await caution.isVisible(), true);
      const text = await caution.innerText();
      assert.match(text, /A design aid, not a safety function\./);
      assert.match(text, /IEC 61508/);
      assert.equal(await page.locator('.caution details').count(), 1);
      assert.equal(await page.title(), 'Polewright — state-feedback design');
    });
  });
});
