// End-to-end checks of the built page: loads offline from file:// and from a
// static server, requests nothing but itself, designs on load, reports bad input
// beside the field, designs the textbook plant correctly, reports an infeasible
// plant, works by keyboard alone, and measures its own design cycle.
// Run: node --test tests/e2e/   (after scripts/build-page)

import assert from 'node:assert/strict';
import fs from 'node:fs';
import path from 'node:path';
import { after, before, describe, test } from 'node:test';
import {
  artifactsDir,
  canvasStats,
  closeBrowser,
  design,
  designNow,
  distDir,
  pageFileUrl,
  pagePath,
  parseComplex,
  readGain,
  requireBuiltPage,
  screenshot,
  startStaticServer,
  tableRows,
  withPage,
} from './harness.mjs';

const CANVASES = ['pw-pole-map', 'pw-state-plot', 'pw-input-plot'];

let server;

before(async () => {
  requireBuiltPage();
  server = await startStaticServer(distDir);
});

after(async () => {
  await closeBrowser();
  if (server) await server.close();
});

async function assertCanvasesDrawn(page, ids = CANVASES) {
  for (const id of ids) {
    const s = await canvasStats(page, id);
    assert.ok(s, `canvas #${id} exists`);
    assert.ok(s.width > 100 && s.height > 100, `#${id} sized: ${JSON.stringify(s)}`);
    assert.ok(s.distinct >= 6, `#${id} has several colours: ${JSON.stringify(s)}`);
    assert.ok(s.dominantShare < 0.97, `#${id} is not nearly blank: ${JSON.stringify(s)}`);
  }
}

/** Every achieved pole in the pole table is within `tol` (relative) of its requested pole. */
async function assertPolesPlaced(page, tol = 1e-9) {
  const rows = await tableRows(page, 'pw-pole-table');
  assert.ok(rows.length > 0, 'the pole table has rows');
  for (const [requested, achieved] of rows) {
    const r = parseComplex(requested);
    const z = parseComplex(achieved);
    assert.ok(r && z, `pole cells parse: ${requested} / ${achieved}`);
    const err = Math.hypot(z.re - r.re, z.im - r.im) / Math.max(1, Math.hypot(r.re, r.im));
    assert.ok(err < tol, `${achieved} is the requested ${requested} (error ${err})`);
  }
  return rows;
}

/** Checks shared by every way of opening the page. */
async function checkLoadedPage(ctx, shotName) {
  const { page, url, requests, consoleErrors, pageErrors } = ctx;
  const status = await page.textContent('#pw-status');
  const shown = await page.textContent('#pw-error');
  assert.match(status, /^Designed: 4 states, 1 input/, `status line: ${status}; error box: ${shown}; console: ${ctx.consoleMessages}`);
  assert.equal(await page.getAttribute('#pw-status', 'data-outcome'), 'designed');
  assert.match(await page.textContent('#pw-version'), /^\d+\.\d+\.\d+/);
  assert.equal(await page.isHidden('#pw-error'), true, 'error box stays hidden');

  // The first demo is loaded and designed: K shown, finite, one row of four.
  assert.match(await page.inputValue('#pw-demo'), /^0$/);
  assert.match(await page.textContent('#pw-demo-description'), /^Illustrative/);
  const k = await readGain(page);
  assert.equal(k.length, 1);
  assert.equal(k[0].length, 4);
  assert.ok(k[0].every((v) => Number.isFinite(v) && v !== 0), `K: ${JSON.stringify(k)}`);
  assert.match(await page.textContent('.law'), /u = −K x/);
  const header = await page.evaluate(() => [...document.querySelectorAll('#pw-gain th')].map((t) => t.textContent));
  assert.deepEqual(header, ['K', 'carriage position (m)', 'carriage velocity (m/s)', 'head position (m)', 'head velocity (m/s)', 'motor force (N)']);
  await assertPolesPlaced(page);
  // The copyable text carries the same numbers.
  const text = await page.textContent('#pw-gain-text');
  const line = text.split('\n').find((l) => l.startsWith('motor force (N)\t'));
  assert.deepEqual(line.split('\t').slice(1).map(Number), k[0]);
  // Dimensions shown beside the matrices.
  assert.equal(await page.textContent('#pw-a-size'), '4 × 4');
  assert.equal(await page.textContent('#pw-b-size'), '4 × 1');
  // Screen-reader tables of the plots' key numbers.
  const states = await tableRows(page, 'pw-state-table');
  assert.equal(states.length, 4);
  assert.ok(states.every((r) => /^\d/.test(r[3])), `settling times: ${JSON.stringify(states)}`);
  const inputs = await tableRows(page, 'pw-input-table');
  assert.deepEqual(inputs.map((r) => r.slice(0, 1).concat(r.slice(2, 3))), [['motor force (N)', '60 N']]);

  await assertCanvasesDrawn(page);
  await screenshot(page, shotName);
  assert.deepEqual(pageErrors, [], 'no uncaught page errors');
  assert.deepEqual(consoleErrors, [], 'no console errors');
  assert.deepEqual(requests, [url], 'the page itself is the only request');
}

const OPENINGS = [
  ['file://', () => pageFileUrl],
  ['http://127.0.0.1', () => `${server.origin}/polewright.html`],
];

describe('built page', () => {
  test('opened from file:// it designs the first demo and requests nothing else', async () => {
    await withPage(pageFileUrl, (ctx) => checkLoadedPage(ctx, 'page-file.png'));
  });

  test('served over http it designs the first demo and requests nothing else', async () => {
    const url = `${server.origin}/polewright.html`;
    const logStart = server.log.length;
    await withPage(url, (ctx) => checkLoadedPage(ctx, 'page-http.png'));
    assert.deepEqual(server.log.slice(logStart), ['GET /polewright.html'], 'server saw only the page');
  });

  for (const [via, urlOf] of OPENINGS) {
    describe(`opened via ${via}`, () => {
      test('a stray token in A is reported beside A, the text is kept, results are marked stale', async () => {
        await withPage(urlOf(), async ({ page, url, requests, consoleErrors, pageErrors }) => {
          const before = await readGain(page);
          const original = await page.inputValue('#pw-a');
          const rows = original.split('\n');
          assert.match(rows[1], / 0\.625$/);
          rows[1] = rows[1].replace(/ 0\.625$/, ' x');
          const typed = rows.join('\n');
          await page.fill('#pw-a', typed);
          // No button: the page redesigns by itself after the debounce.
          await page.waitForFunction(() => !document.getElementById('pw-a-error').hidden);
          const message = await page.textContent('#pw-a-error');
          assert.match(message, /^row 2, column 4: "x" is not a number/, message);
          assert.equal(await page.inputValue('#pw-a'), typed, 'the typed text is kept exactly');
          assert.equal(await page.getAttribute('#pw-a', 'aria-invalid'), 'true');
          assert.equal(await page.getAttribute('#pw-status', 'data-outcome'), 'invalid');
          assert.deepEqual(await readGain(page), before, 'the last gain stays');
          assert.equal(await page.evaluate(() => document.getElementById('pw-results').classList.contains('is-stale')), true);
          assert.match(await page.textContent('#pw-results-note'), /last valid input/);
          assert.equal(await page.textContent('#pw-a-size'), '', 'no size for unreadable text');
          await screenshot(page, `page-error-${via.startsWith('file') ? 'file' : 'http'}.png`);

          // Fixing it brings fresh results back.
          await page.fill('#pw-a', original);
          assert.equal(await designNow(page), 'designed');
          assert.equal(await page.isHidden('#pw-a-error'), true);
          assert.equal(await page.evaluate(() => document.getElementById('pw-results').classList.contains('is-stale')), false);
          assert.deepEqual(await readGain(page), before);
          assert.deepEqual([...pageErrors, ...consoleErrors], []);
          assert.deepEqual(requests, [url]);
        });
      });

      test('the textbook third-order plant gives K = [199, 55, 8]', async () => {
        // Ogata, Modern Control Engineering, pole-placement example (from memory).
        await withPage(urlOf(), async ({ page, url, requests, consoleErrors, pageErrors }) => {
          const outcome = await design(page, { a: '0 1 0\n0 0 1\n-1 -5 -6', b: '0\n0\n1', poles: '-2±4j, -10' });
          assert.equal(outcome, 'designed', await page.textContent('#pw-status'));
          const k = await readGain(page);
          assert.equal(k.length, 1);
          const want = [199, 55, 8];
          k[0].forEach((v, j) => assert.ok(Math.abs(v - want[j]) <= 1e-9 * want[j], `K[${j}] = ${v}, want ${want[j]}`));
          assert.equal(await page.textContent('#pw-a-size'), '3 × 3');
          const header = await page.evaluate(() => [...document.querySelectorAll('#pw-gain th')].map((t) => t.textContent));
          assert.deepEqual(header, ['K', 'x1', 'x2', 'x3', 'u1']);
          await assertPolesPlaced(page);
          await assertCanvasesDrawn(page);
          await screenshot(page, `page-textbook-${via.startsWith('file') ? 'file' : 'http'}.png`);
          assert.deepEqual([...pageErrors, ...consoleErrors], []);
          assert.deepEqual(requests, [url]);
        });
      });

      test('an unstable mode that no input reaches is reported as infeasible', async () => {
        await withPage(urlOf(), async ({ page, url, requests, consoleErrors, pageErrors }) => {
          const outcome = await design(page, { a: '1 0\n0 -1', b: '0\n1', poles: '-1, -2' });
          assert.equal(outcome, 'infeasible');
          const note = await page.textContent('#pw-results-note');
          assert.match(note, /not possible/);
          assert.match(note, /mode at 1 is uncontrollable/);
          assert.equal(await page.isVisible('#pw-results-note'), true);
          assert.equal(await readGain(page), null, 'no gain is shown');
          assert.match(await page.textContent('#pw-controllability'), /Not stabilisable/);
          const modes = await tableRows(page, 'pw-controllability');
          assert.ok(modes.some((r) => r[0] === '1' && /not controllable and not stable/.test(r[2])), JSON.stringify(modes));
          // No field is blamed: the input is well formed.
          const shownErrors = await page.evaluate(() => [...document.querySelectorAll('.field-error')].filter((e) => !e.hidden).length);
          assert.equal(shownErrors, 0);
          await assertCanvasesDrawn(page, ['pw-pole-map']);
          assert.deepEqual([...pageErrors, ...consoleErrors], []);
          assert.deepEqual(requests, [url]);
        });
      });

      test('keyboard only: tab to the poles, type, the design updates; the pole map reads out by arrow keys', async () => {
        await withPage(urlOf(), async ({ page, url, requests, consoleErrors, pageErrors }) => {
          const before = await readGain(page);
          let reached = false;
          for (let i = 0; i < 60 && !reached; i += 1) {
            await page.keyboard.press('Tab');
            reached = await page.evaluate(() => document.activeElement && document.activeElement.id === 'pw-poles');
          }
          assert.ok(reached, 'Tab reaches the poles field');
          await page.keyboard.press('ControlOrMeta+A');
          await page.keyboard.type('-10±8j, -15±20j');
          await page.waitForFunction(() => /-15\+20j/.test(document.getElementById('pw-pole-table').textContent));
          assert.equal(await page.getAttribute('#pw-status', 'data-outcome'), 'designed');
          const k = await readGain(page);
          assert.notDeepEqual(k, before, 'a new gain');
          const rows = await assertPolesPlaced(page);
          assert.deepEqual(rows.map((r) => r[0]).sort(), ['-10+8j', '-10-8j', '-15+20j', '-15-20j'].sort());

          // On to the pole map; arrow keys step through the poles.
          reached = false;
          for (let i = 0; i < 60 && !reached; i += 1) {
            await page.keyboard.press('Tab');
            reached = await page.evaluate(() => document.activeElement && document.activeElement.id === 'pw-pole-map');
          }
          assert.ok(reached, 'Tab reaches the pole map');
          const first = await page.textContent('#pw-pole-pick');
          assert.match(first, /^Closed-loop pole 1 of 4: −15 [+−] 20j \(damping ratio 0\.6, natural frequency 25 rad\/s\)\.$/, first);
          await page.keyboard.press('ArrowRight');
          const second = await page.textContent('#pw-pole-pick');
          assert.match(second, /^Closed-loop pole 2 of 4: −15 [+−] 20j/);
          assert.notEqual(second, first);
          await page.keyboard.press('End');
          assert.match(await page.textContent('#pw-pole-pick'), /^Open-loop pole 4 of 4: /);
          await page.keyboard.press('ArrowRight');
          assert.match(await page.textContent('#pw-pole-pick'), /^Closed-loop pole 1 of 4: /, 'wraps around');
          await page.keyboard.press('Tab');
          assert.match(await page.textContent('#pw-pole-pick'), /^Point at a pole/);
          assert.deepEqual([...pageErrors, ...consoleErrors], []);
          assert.deepEqual(requests, [url]);
        });
      });
    });
  }

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
      await page.locator('#pw-pole-map').scrollIntoViewIfNeeded();
      const box = await page.locator('#pw-pole-map').boundingBox();
      await page.mouse.move(box.x + spot.x, box.y + spot.y);
      await page.waitForFunction(() => /^Closed-loop pole/.test(document.getElementById('pw-pole-pick').textContent));
      const text = await page.textContent('#pw-pole-pick');
      // The lowest closed-loop marker of the belt-axis demo is −20 − 30j.
      assert.match(text, /^Closed-loop pole \d of 4: −20 − 30j \(damping ratio 0\.5547, natural frequency 36\.0555 rad\/s\)\.$/, text);
      await page.mouse.move(box.x + 2, box.y + 2);
      assert.match(await page.textContent('#pw-pole-pick'), /Point at a pole/);
      assert.deepEqual([...pageErrors, ...consoleErrors], []);
    });
  });

  test('the second demo (two inputs) loads from the selector and designs', async () => {
    await withPage(pageFileUrl, async ({ page, consoleErrors, pageErrors }) => {
      const titles = await page.evaluate(() => [...document.querySelectorAll('#pw-demo option')].map((o) => o.textContent));
      assert.ok(titles.length >= 2, JSON.stringify(titles));
      await page.selectOption('#pw-demo', '1');
      assert.match(await page.textContent('#pw-demo-description'), /^Illustrative/);
      await page.click('#pw-load-demo');
      await page.waitForFunction(() => /2 inputs/.test(document.getElementById('pw-status').textContent));
      const k = await readGain(page);
      assert.equal(k.length, 2);
      assert.equal(k[0].length, 4);
      await assertPolesPlaced(page);
      const inputs = await tableRows(page, 'pw-input-table');
      assert.equal(inputs.length, 2);
      assert.ok(inputs.every((r) => r[2] === '150 W'), JSON.stringify(inputs));
      assert.match(await page.textContent('#pw-observability'), /^Observable/);
      await assertCanvasesDrawn(page);
      // The state plot can show the values as computed instead of scaled.
      const scaled = await canvasStats(page, 'pw-state-plot');
      await page.uncheck('#pw-normalise');
      const raw = await canvasStats(page, 'pw-state-plot');
      assert.notDeepEqual(raw, scaled);
      await screenshot(page, 'page-two-inputs.png');
      assert.deepEqual([...pageErrors, ...consoleErrors], []);
    });
  });

  test('copying K gives the labelled text (or selects it for copying)', async () => {
    await withPage(pageFileUrl, async ({ page, consoleErrors, pageErrors }) => {
      await page.focus('#pw-copy-gain');
      await page.keyboard.press('Enter');
      await page.waitForFunction(() => document.getElementById('pw-copy-status').textContent !== '');
      const note = await page.textContent('#pw-copy-status');
      if (note === 'Copied.') {
        // Nothing more to see: the clipboard itself is not readable here.
      } else {
        assert.match(note, /selected/);
        const selected = await page.evaluate(() => String(window.getSelection()));
        assert.match(selected, /^u = -K x/);
      }
      assert.deepEqual([...pageErrors, ...consoleErrors], []);
    });
  });

  test('one design cycle for n = 10, m = 2: median time over 30 cycles', async () => {
    // A chain of five masses (springs between neighbours and to both walls, light
    // damping), a force on the first and on the last: 10 states, 2 inputs.
    const k = [4, 3, 5, 2, 4, 3];
    const m = [1, 2, 1.5, 1, 2];
    const c = 0.2;
    const n = 10;
    const A = Array.from({ length: n }, () => Array(n).fill(0));
    const B = Array.from({ length: n }, () => [0, 0]);
    for (let i = 0; i < 5; i += 1) {
      const p = 2 * i;
      const v = p + 1;
      A[p][v] = 1;
      A[v][p] = -(k[i] + k[i + 1]) / m[i];
      A[v][v] = -c / m[i];
      if (i > 0) A[v][p - 2] = k[i] / m[i];
      if (i < 4) A[v][p + 2] = k[i + 1] / m[i];
    }
    B[1][0] = 1 / m[0];
    B[9][1] = 1 / m[4];
    const fields = {
      a: A.map((r) => r.join(' ')).join('\n'),
      b: B.map((r) => r.join(' ')).join('\n'),
      input_names: 'left force, right force',
      input_units: 'N, N',
      poles: '-1±1j, -1.5±1.2j, -2±0.8j, -2.5±1.5j, -3, -3.5',
      limits: '40, 40',
    };
    await withPage(pageFileUrl, async ({ page, consoleErrors, pageErrors }) => {
      assert.equal(await design(page, fields), 'designed', await page.textContent('#pw-status'));
      assert.match(await page.textContent('#pw-status'), /^Designed: 10 states, 2 inputs/);
      await assertPolesPlaced(page, 1e-8);
      const times = await page.evaluate(() => {
        const button = document.getElementById('pw-design');
        const status = document.getElementById('pw-status');
        const out = [];
        for (let i = 0; i < 35; i += 1) {
          status.removeAttribute('data-cycle-ms');
          button.click(); // synchronous: parse → analyse → place → simulate → draw
          out.push(Number(status.dataset.cycleMs));
        }
        return out.slice(5); // after a warm-up of 5
      });
      assert.equal(times.length, 30);
      assert.ok(times.every((t) => Number.isFinite(t) && t > 0), JSON.stringify(times));
      const sorted = [...times].sort((x, y) => x - y);
      const median = (sorted[14] + sorted[15]) / 2;
      const report = {
        what: 'one full design cycle of the page (read form, parse, analyse, place, simulate, update results, draw 3 canvases), timed with performance.now() inside the page',
        plant: 'chain of 5 masses: n = 10 states, m = 2 inputs, actuator limits',
        cycles: times.length,
        warm_up: 5,
        median_ms: median,
        min_ms: sorted[0],
        max_ms: sorted[sorted.length - 1],
        all_ms: times,
        user_agent: await page.evaluate(() => navigator.userAgent),
        date: new Date().toISOString(),
      };
      fs.mkdirSync(artifactsDir, { recursive: true });
      fs.writeFileSync(path.join(artifactsDir, 'cycle-time.json'), `${JSON.stringify(report, null, 2)}\n`);
      console.log(`design cycle, n = 10, m = 2: median ${median.toFixed(2)} ms over 30 cycles (min ${sorted[0].toFixed(2)}, max ${sorted[29].toFixed(2)})`);
      await assertCanvasesDrawn(page);
      assert.deepEqual([...pageErrors, ...consoleErrors], []);
    });
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

  test('every control has a label and user text never becomes markup', async () => {
    await withPage(pageFileUrl, async ({ page, consoleErrors, pageErrors }) => {
      const unlabelled = await page.evaluate(() =>
        [...document.querySelectorAll('input, textarea, select')]
          .filter((el) => !(el.labels && el.labels.length > 0))
          .map((el) => el.id),
      );
      assert.deepEqual(unlabelled, []);
      const outcome = await design(page, {
        a: '0 1\n0 0',
        b: '0\n1',
        state_names: '<img src=x>, <b>velocity</b>',
        input_names: '<script>x</script>',
        poles: '-1, -2',
      });
      assert.equal(outcome, 'designed');
      const header = await page.evaluate(() => [...document.querySelectorAll('#pw-gain th')].map((t) => t.textContent));
      assert.deepEqual(header, ['K', '<img src=x>', '<b>velocity</b>', '<script>x</script>']);
      assert.equal(await page.locator('#pw-results img, #pw-results b, #pw-results script').count(), 0);
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

  test('printed, the results stay readable', async () => {
    await withPage(pageFileUrl, async ({ page, consoleErrors, pageErrors }) => {
      await page.emulateMedia({ media: 'print' });
      assert.equal(await page.isVisible('#pw-gain'), true, 'the gain table prints');
      assert.equal(await page.isVisible('#pw-state-table'), true);
      assert.equal(await page.isVisible('#pw-design'), false, 'buttons are left out');
      const pdf = await page.pdf({ format: 'A4' });
      assert.ok(pdf.length > 10_000, `a PDF of ${pdf.length} bytes`);
      fs.mkdirSync(artifactsDir, { recursive: true });
      fs.writeFileSync(path.join(artifactsDir, 'page-print.pdf'), pdf);
      assert.deepEqual([...pageErrors, ...consoleErrors], []);
    });
  });
});
