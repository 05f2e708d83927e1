// End-to-end checks of choosing and editing poles on the built page: dragging requested
// poles on the pole map (the conjugate follows, a real pole stays real), keyboard moves,
// add / remove, undo / redo, pinning a design and comparing against it, the pole-choice
// sections (pattern, specification with its region, LQR, fastest design within the
// limits), and the measured update time of a drag for n = 10, m = 2.
// Run: node --test tests/e2e/   (after scripts/build-page)

import assert from 'node:assert/strict';
import { execFileSync } from 'node:child_process';
import fs from 'node:fs';
import os from 'node:os';
import path from 'node:path';
import { after, before, describe, test } from 'node:test';
import {
  actuatedChainFields,
  artifactsDir,
  beltAxisLoop,
  closeBrowser,
  design,
  designNow,
  drag,
  massChainFields,
  pageFileUrl,
  parseComplex,
  repoRoot,
  readGain,
  requireBuiltPage,
  screenshot,
  setFields,
  settled,
  tableRows,
  tableRowsAtFullPrecision,
  withPage,
} from './harness.mjs';

before(() => requireBuiltPage());
after(async () => closeBrowser());

/** The editable (requested) markers' positions on the pole map, in page pixels. */
async function requestedPoints(page) {
  await page.locator('#pw-pole-map').scrollIntoViewIfNeeded();
  const box = await page.locator('#pw-pole-map').boundingBox();
  const attr = await page.getAttribute('#pw-pole-map', 'data-requested-px');
  if (!attr) return [];
  return attr.split(' ').map((p) => p.split(',').map(Number)).map(([x, y]) => [box.x + x, box.y + y]);
}


/** The poles field split into its items (a pair stays one item, as typed). */
async function poleItems(page) {
  return (await page.inputValue('#pw-poles')).split(',').map((s) => s.trim()).filter(Boolean);
}

/**
 * Requested and achieved poles of the result table as complex numbers, read at 17 significant
 * digits (the Digits select is set and restored): at the default 5 digits a miss below about
 * 5e-5 could not be seen.
 */
async function placedPoles(page) {
  const rows = await tableRowsAtFullPrecision(page, 'pw-pole-table');
  return rows.map((r) => ({ requested: parseComplex(r[0]), achieved: parseComplex(r[1]) }));
}

/** Every achieved pole within `tol` (relative) of its requested pole; `count` rows. */
function assertPlaced(poles, count, tol = 1e-8) {
  assert.equal(poles.length, count, `${count} poles in the table: ${JSON.stringify(poles)}`);
  for (const { requested, achieved } of poles) {
    const scale = Math.max(1, Math.hypot(requested.re, requested.im));
    assert.ok(Math.hypot(requested.re - achieved.re, requested.im - achieved.im) <= tol * scale, JSON.stringify({ requested, achieved }));
  }
}

const noErrors = ({ pageErrors, consoleErrors }) => assert.deepEqual([...pageErrors, ...consoleErrors], []);

describe('editing poles on the map', () => {
  test('dragging a pair moves both members; undo and redo restore the lists exactly', async () => {
    await withPage(pageFileUrl, async (ctx) => {
      const { page, url, requests } = ctx;
      assert.equal(await page.getAttribute('#pw-status', 'data-outcome'), 'designed');
      const original = await page.inputValue('#pw-poles');
      assert.equal(original, '-12±9j, -20±30j');
      const gain0 = await readGain(page);
      const points = await requestedPoints(page);
      assert.equal(points.length, 4, 'one ring per requested pole');
      // Entry order: -12+9j, -12-9j, -20+30j, -20-30j. Drag the upper member of the first
      // pair 30 px left and 25 px up.
      await drag(page, points[0], -30, -25);
      const items = await poleItems(page);
      assert.equal(items.length, 2, `still two pairs: ${items}`);
      assert.match(items[0], /±/, 'the conjugate follows: still written as a pair');
      assert.equal(items[1], '-20±30j', 'the other pair is untouched');
      const moved = parseComplex(items[0].replace('±', '+'));
      assert.ok(moved.re < -12 && moved.im > 9, JSON.stringify(moved));
      assert.equal(await page.getAttribute('#pw-status', 'data-outcome'), 'designed');
      const table = await placedPoles(page);
      assertPlaced(table, 4);
      assert.ok(table.some((p) => Math.abs(p.requested.re - moved.re) < 1e-9 && Math.abs(p.requested.im + moved.im) < 1e-9), 'the lower member sits at the conjugate');
      assert.notDeepEqual(await readGain(page), gain0, 'the gain followed the drag');
      const draggedText = await page.inputValue('#pw-poles');
      assert.ok(Number(await page.getAttribute('#pw-pole-map', 'data-drag-updates')) >= 1);
      // The lower member drags the same pair (mirrored).
      const after1 = await requestedPoints(page);
      await drag(page, after1[1], 0, 20);
      const items2 = await poleItems(page);
      const moved2 = parseComplex(items2[0].replace('±', '+'));
      assert.ok(moved2.im > moved.im, `dragging the lower member down widens the pair: ${items2[0]}`);
      // Undo twice returns to the demo's list; redo twice to the second drag.
      await page.click('#pw-undo');
      assert.equal(await page.inputValue('#pw-poles'), draggedText);
      await page.click('#pw-undo');
      assert.equal(await page.inputValue('#pw-poles'), original);
      assert.deepEqual(await readGain(page), gain0, 'undo restores the gain exactly');
      assert.equal(await page.isDisabled('#pw-undo'), true);
      await page.click('#pw-redo');
      await page.click('#pw-redo');
      assert.deepEqual(await poleItems(page), items2);
      assert.equal(await page.isDisabled('#pw-redo'), true);
      await screenshot(page, 'page-after-drag.png');
      noErrors(ctx);
      assert.deepEqual(requests, [url]);
    });
  });

  test('a real pole stays on the real axis; keyboard moves, add and remove, Ctrl+Z', async () => {
    await withPage(pageFileUrl, async (ctx) => {
      const { page } = ctx;
      const titles = await page.evaluate(() => [...document.querySelectorAll('#pw-demo option')].map((o) => o.textContent));
      await page.selectOption('#pw-demo', String(titles.findIndex((t) => /heated plate/.test(t))));
      await page.click('#pw-load-demo');
      await page.waitForFunction(() => document.getElementById('pw-status').dataset.outcome === 'designed' && document.getElementById('pw-poles').value.startsWith('-0.02,'));
      const before = await poleItems(page);
      assert.deepEqual(before, ['-0.02', '-0.025', '-0.06±0.02j']);
      const points = await requestedPoints(page);
      // Drag the first real pole up and to the left: it may only slide along the axis.
      await drag(page, points[0], -15, -40);
      const items = await poleItems(page);
      assert.equal(items.length, 3);
      assert.doesNotMatch(items[0], /j/, `a real pole stays real: ${items[0]}`);
      assert.ok(Number(items[0]) < -0.02, items[0]);
      assert.equal(await page.getAttribute('#pw-status', 'data-outcome'), 'designed');
      assertPlaced(await placedPoles(page), 4);

      // Keyboard: the map takes focus on the first requested pole (fastest first). The drag
      // left the map focused on the dragged pole: leave it first.
      await page.focus('#pw-poles');
      await page.focus('#pw-pole-map');
      assert.match(await page.textContent('#pw-pole-pick'), /^Requested pole 1 of 4: /);
      await page.keyboard.press('n');
      await page.keyboard.press('n');
      const pick = await page.textContent('#pw-pole-pick');
      assert.match(pick, /^Requested pole 3 of 4: /, pick);
      const beforeKey = await page.inputValue('#pw-poles');
      await page.keyboard.press('Shift+ArrowLeft');
      const afterKey = await page.inputValue('#pw-poles');
      assert.notEqual(afterKey, beforeKey, 'Shift+Left moves the chosen pole');
      // Pole 3 is the real -0.025: Up would lift it off the axis, so nothing changes and the
      // note says why.
      assert.match(pick, /^Requested pole 3 of 4: −0\.025 /);
      await page.keyboard.press('ArrowUp');
      assert.equal(await page.inputValue('#pw-poles'), afterKey);
      assert.match(await page.textContent('#pw-edit-note'), /real/i);
      await page.keyboard.press('ControlOrMeta+z');
      assert.equal(await page.inputValue('#pw-poles'), beforeKey, 'Ctrl+Z undoes the key press');
      await page.keyboard.press('ControlOrMeta+y');
      assert.equal(await page.inputValue('#pw-poles'), afterKey);

      // Add a real pole: one too many for the plant, said beside the field; then remove it.
      await page.click('#pw-add-real');
      assert.equal((await poleItems(page)).length, 4);
      assert.equal(await page.getAttribute('#pw-status', 'data-outcome'), 'invalid');
      assert.match(await page.textContent('#pw-poles-error'), /5 poles/);
      assert.equal((await requestedPoints(page)).length, 5, 'the added pole is on the map');
      assert.equal(await page.isDisabled('#pw-remove-pole'), false, 'the new pole is chosen');
      await page.click('#pw-remove-pole');
      assert.equal(await page.inputValue('#pw-poles'), afterKey);
      assert.equal(await page.getAttribute('#pw-status', 'data-outcome'), 'designed');
      noErrors(ctx);
    });
  });

  test('pin a design, change it, compare side by side; unpin', async () => {
    await withPage(pageFileUrl, async (ctx) => {
      const { page } = ctx;
      assert.equal(await page.isHidden('#pw-compare'), true);
      await page.click('#pw-pin');
      assert.equal(await page.isVisible('#pw-compare'), true);
      assert.equal(await page.getAttribute('#pw-pole-map', 'data-pinned-poles'), '4');
      await page.fill('#pw-poles', '-24±18j, -40±60j');
      assert.equal(await designNow(page), 'designed');
      const rows = await tableRows(page, 'pw-compare-table');
      const figures = rows.map((r) => r[0]);
      for (const f of ['slowest settling time (s)', 'largest overshoot (%)', 'gain norm ‖K‖', 'eigenvector condition κ']) {
        assert.ok(figures.some((x) => x.startsWith(f.split(' ')[0])), `${f} in ${figures}`);
      }
      const settle = rows.find((r) => r[0].startsWith('slowest settling'));
      assert.ok(Number(settle[2]) < Number(settle[1]), `twice as fast settles sooner: ${settle}`);
      assert.equal(settle[3], 'current');
      assert.match(await page.textContent('#pw-compare-label'), /-12±9j, -20±30j/);
      await screenshot(page, 'page-compare.png');
      await page.click('#pw-unpin');
      assert.equal(await page.isHidden('#pw-compare'), true);
      assert.equal(await page.getAttribute('#pw-pole-map', 'data-pinned-poles'), '0');
      noErrors(ctx);
    });
  });
});

describe('dragging', () => {
  // The time per update is measured by tests/bench/page_cycle.mjs (a benchmark); nothing here
  // asserts speed.
  test('dragging a pole redesigns as it moves, with and without the loop simulated (no timing asserted)', async () => {
    await withPage(pageFileUrl, async (ctx) => {
      const { page } = ctx;
      assert.equal(await design(page, massChainFields()), 'designed', await page.textContent('#pw-status'));
      const points = await requestedPoints(page);
      assert.equal(points.length, 10);
      // Warm-up drag, then the measured one: a pair's upper member, 60 moves of 1.5 px.
      await drag(page, points[0], -10, 5, 10);
      const start = (await requestedPoints(page))[0];
      await drag(page, start, -60, -45, 60);
      const updates = Number(await page.getAttribute('#pw-pole-map', 'data-drag-updates'));
      const median = Number(await page.getAttribute('#pw-pole-map', 'data-drag-median-ms'));
      assert.ok(updates >= 30, `${updates} redesigns during 60 moves`);
      assert.ok(Number.isFinite(median) && median > 0, String(median));
      assert.equal(await page.getAttribute('#pw-status', 'data-outcome'), 'designed');
      assertPlaced(await placedPoles(page), 10, 1e-9);
      // The same with the whole loop simulated: the belt-axis demo with a head-position
      // measurement, an observer, integral action and a reference step (continuous controller).
      assert.equal(await beltAxisLoop(page), 'designed', await page.textContent('#pw-status'));
      assert.equal(await page.isVisible('#pw-loop-section'), true);
      const belt = (await requestedPoints(page))[0];
      await drag(page, belt, -8, 4, 10);
      await drag(page, (await requestedPoints(page))[0], -40, -30, 60);
      const loopUpdates = Number(await page.getAttribute('#pw-pole-map', 'data-drag-updates'));
      const loopMedian = Number(await page.getAttribute('#pw-pole-map', 'data-drag-median-ms'));
      assert.ok(loopUpdates >= 30 && Number.isFinite(loopMedian) && loopMedian > 0, `${loopUpdates} ${loopMedian}`);
      assert.equal(await page.getAttribute('#pw-status', 'data-outcome'), 'designed');
      noErrors(ctx);
    });
  });
});

describe('choosing the poles from the form', () => {
  test('specification: region drawn, poles suggested and adopted without changing the design', async () => {
    await withPage(pageFileUrl, async (ctx) => {
      const { page, url, requests } = ctx;
      await page.selectOption('#pw-pole_source', 'specification');
      await page.waitForFunction(() => !document.getElementById('pw-spec_overshoot-field').hidden);
      assert.equal(await page.isHidden('#pw-poles-field'), true, 'the list is not read');
      await page.fill('#pw-spec_overshoot', '5');
      await page.fill('#pw-spec_settling_time', '0.5');
      assert.equal(await designNow(page), 'designed', await page.textContent('#pw-status'));
      assert.equal(await page.isVisible('#pw-pole-choice'), true);
      const summary = await page.textContent('#pw-choice-summary');
      assert.match(summary, /^Specification/);
      // Second-order formula (e.g. Franklin, Powell & Emami-Naeini, Feedback Control of Dynamic
      // Systems; from memory): ζ = −ln(Mp) / √(π² + ln²(Mp)) = 0.6901 for Mp = 5 %.
      const zeta = -Math.log(0.05) / Math.sqrt(Math.PI ** 2 + Math.log(0.05) ** 2);
      assert.ok((await page.textContent('#pw-choice-details')).includes(zeta.toFixed(4)), `ζ = ${zeta.toFixed(4)} shown`);
      assert.match(await page.textContent('#pw-pole-legend'), /region/);
      await page.locator('#pw-pole-section').screenshot({ path: path.join(artifactsDir, 'pole-map-specification.png') });
      assert.equal(await page.getAttribute('#pw-pole-map', 'data-requested-px'), '', 'nothing to drag before adopting');
      // At the default 5 digits the suggested poles are rounded to 5 significant digits (and
      // the note says so); at 17 they are exact and adopting them keeps the design exactly.
      const rounded = await page.textContent('#pw-choice-poles');
      for (const n of rounded.match(/\d+\.?\d*/g)) assert.ok(n.replace('.', '').replace(/^0+/, '').length <= 5, `${n} in ${rounded}`);
      assert.match(await page.textContent('#pw-choice-details') + await page.textContent('#pw-pole-choice'), /written with 5 significant digits/);
      await page.selectOption('#pw-digits', '17');
      await page.waitForFunction((r) => document.getElementById('pw-choice-poles').textContent !== r, rounded);
      const suggested = await page.textContent('#pw-choice-poles');
      const gain = await readGain(page);
      await page.click('#pw-adopt');
      await page.waitForFunction(() => document.getElementById('pw-pole_source').value === 'list');
      assert.equal(await page.inputValue('#pw-poles'), suggested);
      assert.equal(await page.getAttribute('#pw-status', 'data-outcome'), 'designed');
      assert.deepEqual(await readGain(page), gain, 'adopting keeps the design exactly');
      assert.equal((await requestedPoints(page)).length, 4, 'the adopted poles can be dragged');
      assert.equal(await page.isHidden('#pw-pole-choice'), true);
      noErrors(ctx);
      assert.deepEqual(requests, [url]);
    });
  });

  test('a digital design from a specification: the region is drawn in the z-plane', async () => {
    await withPage(pageFileUrl, async (ctx) => {
      const { page } = ctx;
      const titles = await page.evaluate(() => [...document.querySelectorAll('#pw-demo option')].map((o) => o.textContent));
      await page.selectOption('#pw-demo', String(titles.findIndex((t) => /digital/.test(t))));
      await page.click('#pw-load-demo');
      await page.waitForFunction(() => document.getElementById('pw-status').dataset.outcome === 'designed' && document.getElementById('pw-sample_time').value !== '');
      await page.selectOption('#pw-pole_source', 'specification');
      await page.fill('#pw-spec_overshoot', '5');
      await page.fill('#pw-spec_settling_time', '0.3');
      assert.equal(await designNow(page), 'designed', await page.textContent('#pw-status'));
      const legend = await page.textContent('#pw-pole-legend');
      // σ from the settling envelope, σ = −ln(0.02 √(1 − ζ²)) / Ts (the bound the region uses),
      // and its image |z| = e^(−σT) with T = 1 ms.
      const zeta = -Math.log(0.05) / Math.sqrt(Math.PI ** 2 + Math.log(0.05) ** 2);
      const sigma = -Math.log(0.02 * Math.sqrt(1 - zeta * zeta)) / 0.3;
      assert.match(legend, /\|z\| ≤ /, legend);
      const radius = Number(/\|z\| ≤ ([0-9.]+)/.exec(legend)[1]);
      const decay = Number(/Re s ≤ −([0-9.]+)/.exec(legend)[1]);
      assert.ok(Math.abs(radius - Math.exp(-sigma * 0.001)) < 1e-4, `${radius} vs ${Math.exp(-sigma * 0.001)}`);
      assert.ok(Math.abs(decay - sigma) < 1e-3, `${decay} vs ${sigma}`);
      await page.check('#pw-pole-zoom');
      await page.locator('#pw-pole-section').screenshot({ path: path.join(artifactsDir, 'pole-map-specification-z.png') });
      noErrors(ctx);
    });
  });

  test('Bessel pattern and the fastest design within the limits', async () => {
    await withPage(pageFileUrl, async (ctx) => {
      const { page } = ctx;
      await page.selectOption('#pw-pole_source', 'pattern');
      await page.fill('#pw-pattern_settling_time', '0.4');
      assert.equal(await designNow(page), 'designed', await page.textContent('#pw-status'));
      assert.match(await page.textContent('#pw-choice-summary'), /^Bessel pattern/);
      assert.equal((await page.textContent('#pw-choice-poles')).split(',').length, 2, 'two pairs for four states');
      assertPlaced(await placedPoles(page), 4);
      await page.check('#pw-search');
      await page.waitForFunction(() => /Speed factor/.test(document.getElementById('pw-choice-details').textContent));
      assert.equal(await page.getAttribute('#pw-status', 'data-outcome'), 'designed');
      const facts = await page.textContent('#pw-search-facts');
      const ratio = Number(/Peak input at the factor found: ([0-9.]+) %/.exec(facts)[1]);
      assert.ok(ratio <= 100 && ratio > 90, `the limiting input ends close to, and within, its limit: ${ratio} %`);
      // The simulated free response agrees: its peak input is within the 60 N limit.
      const inputs = await tableRows(page, 'pw-input-table');
      assert.ok(Number(inputs[0][1].split(' ')[0]) <= 60 * (1 + 1e-6), JSON.stringify(inputs[0]));
      noErrors(ctx);
    });
  });

  test('the search for the fastest design runs in slices, says so, and is not repeated while its inputs stay the same', async () => {
    await withPage(pageFileUrl, async (ctx) => {
      const { page } = ctx;
      await page.selectOption('#pw-pole_source', 'pattern');
      await page.fill('#pw-pattern_settling_time', '0.4');
      assert.equal(await designNow(page), 'designed', await page.textContent('#pw-status'));
      // Turning the search on: the cycle leaves the search to slices of the main thread and
      // says so at once (read in the same task as the click, before any slice has run).
      const started = await page.evaluate(() => {
        const status = document.getElementById('pw-status');
        status.removeAttribute('data-outcome');
        const box = document.getElementById('pw-search');
        box.checked = true;
        box.dispatchEvent(new Event('change', { bubbles: true }));
        return [status.textContent, status.getAttribute('data-pending'), status.getAttribute('data-outcome'), document.getElementById('pw-verdicts').getAttribute('aria-busy')];
      });
      assert.match(started[0], /^Searching for the fastest design within the actuator limits: 0 trial designs of at most \d+ so far/);
      assert.deepEqual(started.slice(1), ['search', null, 'true']);
      await page.waitForFunction(() => document.getElementById('pw-status').hasAttribute('data-outcome'));
      await settled(page);
      assert.equal(await page.getAttribute('#pw-status', 'data-outcome'), 'designed', await page.textContent('#pw-status'));
      assert.equal(await page.getAttribute('#pw-verdicts', 'aria-busy'), null, 'not busy once designed');
      const factor = async () => Number(/Speed factor ([0-9.]+)/.exec(await page.textContent('#pw-search-facts'))[1]);
      const first = await factor();
      const trials = Number(/([0-9]+) trial designs were simulated/.exec(await page.textContent('#pw-search-facts'))[1]);
      assert.ok(trials >= 10, `${trials} trial designs`);
      assert.equal(await page.getAttribute('#pw-status', 'data-search-evaluations'), null, 'the progress count goes with the search');
      // An input's name is not a search input: designed in the same task, no search.
      const renamed = await page.evaluate(() => {
        const status = document.getElementById('pw-status');
        status.removeAttribute('data-outcome');
        document.getElementById('pw-input_names').value = 'push force';
        document.getElementById('pw-design').click();
        return [status.getAttribute('data-pending'), status.getAttribute('data-outcome')];
      });
      assert.notEqual(renamed[0], 'search');
      assert.equal(renamed[1], 'designed');
      await settled(page);
      assert.equal(await factor(), first);
      // A tighter limit is a search input: a new search, in slices, and a slower design.
      const limit = Number((await page.inputValue('#pw-limits')).split(/[ ,]+/)[0]);
      const tightened = await page.evaluate((value) => {
        const status = document.getElementById('pw-status');
        status.removeAttribute('data-outcome');
        document.getElementById('pw-limits').value = value;
        document.getElementById('pw-design').click();
        return status.getAttribute('data-pending');
      }, String(limit / 2));
      assert.equal(tightened, 'search');
      await page.waitForFunction(() => document.getElementById('pw-status').hasAttribute('data-outcome'));
      await settled(page);
      assert.equal(await page.getAttribute('#pw-status', 'data-outcome'), 'designed');
      const tighter = await factor();
      assert.ok(tighter < first, `${tighter} against ${first}`);
      // An edit while a search runs drops it: back to the first limit (a new search starts),
      // then at once to the half limit again — the design shown is the half limit's, whose
      // search the last design already holds, and nothing is left pending or busy.
      const dropped = await page.evaluate(([full, half]) => {
        const status = document.getElementById('pw-status');
        const limits = document.getElementById('pw-limits');
        status.removeAttribute('data-outcome');
        limits.value = full;
        document.getElementById('pw-design').click();
        const first = status.getAttribute('data-pending');
        limits.value = half;
        document.getElementById('pw-design').click();
        return [first, status.getAttribute('data-outcome')];
      }, [String(limit), String(limit / 2)]);
      assert.deepEqual(dropped, ['search', 'designed']);
      await settled(page);
      await page.evaluate(() => new Promise((r) => setTimeout(r, 200)));
      assert.equal(await factor(), tighter);
      assert.equal(await page.getAttribute('#pw-status', 'data-pending'), null);
      assert.equal(await page.getAttribute('#pw-verdicts', 'aria-busy'), null);
      assert.equal(await page.getAttribute('#pw-status', 'data-outcome'), 'designed');
      noErrors(ctx);
    });
  });

  test('an edit elsewhere in the form while a search runs keeps the search and its trial designs', async () => {
    await withPage(pageFileUrl, async (ctx) => {
      const { page } = ctx;
      // An invented chain of 15 unit masses and springs, each with its own actuator (limits
      // 5 N), released from a unit displacement of the first mass: a search of some 30 trial
      // designs, several slices long.
      const fields = actuatedChainFields(15);
      assert.equal(await design(page, fields), 'designed', await page.textContent('#pw-status'));
      await page.evaluate(() => {
        const box = document.getElementById('pw-search');
        box.checked = true;
        box.dispatchEvent(new Event('change', { bubbles: true }));
      });
      await page.waitForFunction(() => Number(document.getElementById('pw-status').dataset.searchEvaluations) > 0);
      // A new state name is not a search input: the cycle takes the running search over, with
      // the trial designs it has done (read in the same task, before any further slice).
      const taken = await page.evaluate(() => {
        const status = document.getElementById('pw-status');
        const before = Number(status.dataset.searchEvaluations);
        document.getElementById('pw-state_names').value = Array.from({ length: 30 }, (_, i) => `s${i + 1}`).join(', ');
        document.getElementById('pw-design').click();
        return [before, status.getAttribute('data-pending'), Number(status.dataset.searchEvaluations)];
      });
      assert.ok(taken[0] > 0, JSON.stringify(taken));
      assert.equal(taken[1], 'search');
      assert.equal(taken[2], taken[0], 'the count goes on from where it was');
      await page.waitForFunction(() => document.getElementById('pw-status').hasAttribute('data-outcome'));
      await settled(page);
      assert.equal(await page.getAttribute('#pw-status', 'data-outcome'), 'designed', await page.textContent('#pw-status'));
      const trials = Number(/([0-9]+) trial designs were simulated/.exec(await page.textContent('#pw-search-facts'))[1]);
      assert.ok(trials > taken[0], `${trials} trial designs in all, ${taken[0]} before the edit`);
      noErrors(ctx);
    });
  });

  test('LQR by Bryson weights: the double integrator gives K = [1, √3]', async () => {
    await withPage(pageFileUrl, async (ctx) => {
      const { page } = ctx;
      // Q = I, R = 1 on ẍ = u: K = [1, √3], closed-loop poles −√3/2 ± j/2 (the classic closed
      // form, e.g. Anderson & Moore, Optimal Control: Linear Quadratic Methods, 1990; from memory).
      await setFields(page, { a: '0 1\n0 0', b: '0\n1', pole_source: 'lqr', lqr_max_state: '1, 1', lqr_max_input: '1' });
      // 17 display digits: the pole table then shows the poles exactly.
      await page.selectOption('#pw-digits', '17');
      assert.equal(await designNow(page), 'designed', await page.textContent('#pw-status'));
      const [k] = await readGain(page);
      assert.ok(Math.abs(k[0] - 1) < 1e-12 && Math.abs(k[1] - Math.sqrt(3)) < 1e-12, JSON.stringify(k));
      const facts = await page.textContent('#pw-lqr-facts');
      assert.match(facts, /Normalised residual/);
      assert.equal(await page.isVisible('#pw-lqr-x'), true);
      const poles = (await placedPoles(page)).map((p) => p.achieved);
      for (const p of poles) assert.ok(Math.abs(p.re + Math.sqrt(3) / 2) < 1e-12 && Math.abs(Math.abs(p.im) - 0.5) < 1e-12, JSON.stringify(p));
      assert.match(await page.textContent('#pw-choice-details'), /60°/, 'the guaranteed margins are stated');
      // The margins of the loop as built: L(s) = (√3 s + 1)/s², |L| = 1 at ω_c² = (3 + √13)/2,
      // phase margin atan(√3 ω_c) = 72.38° (by hand).
      assert.match(await page.textContent('#pw-margins'), /phase margin 72\.37\d*° at 1\.817\d* rad\/s/);
      noErrors(ctx);
    });
  });

  test('robustness: the spinning body is fragile all inputs at once; pole sensitivity; the uncertainty cloud on demand', async () => {
    await withPage(pageFileUrl, async (ctx) => {
      const { page } = ctx;
      // x' = [[0, 10], [−10, 0]] x + u with both poles at −1: K = [[1, 10], [−10, 1]] and the
      // closed loop −I. Loop at a time each input sees 1/s (90°, unbounded gain; by hand); all
      // inputs at once the disk margin is 0.09975 (checked against numpy in check_margins.py).
      await setFields(page, { a: '0 10\n-10 0', b: '1 0\n0 1', poles: '-1, -1', sensitivity_entry: 'A 1 2', uncertain_entries: 'A 1 2 10%', uncertainty_samples: '200', uncertainty_seed: '3' });
      assert.equal(await designNow(page), 'designed', await page.textContent('#pw-status'));
      const margins = await page.textContent('#pw-margins');
      assert.match(margins, /phase margin 90° at 1 rad\/s/);
      assert.match(margins, /All inputs at once: disk margin 0\.09975\d* .*exact/);
      // Loop at a time the disk (size 2 at skew 0) guarantees gains from 0 to ∞: the computed
      // 1.1e-16 and 9.0e15 are read within rounding.
      assert.match(margins, /disk margin 2 \(gain × 0 to × ∞/);
      const freq = await tableRows(page, 'pw-frequency-table');
      assert.ok(freq.length >= 10 && freq.some((r) => /\(peak\)/.test(r.join(' '))), JSON.stringify(freq.slice(0, 3)));
      // The closed loop −I has the pole −1 twice: first-order sensitivity is not defined there,
      // and the table says so rather than print a basis-dependent figure.
      const sens = await tableRows(page, 'pw-sensitivity-table');
      assert.equal(sens.length, 2, JSON.stringify(sens));
      for (const r of sens) assert.ok(r[0] === '-1' && /repeated pole/.test(r[1]), JSON.stringify(r));
      assert.match(await page.textContent('#pw-sensitivity-summary'), /Repeated poles \(-1, -1\)/);
      assert.match(await page.textContent('#pw-uncertainty'), /200 samples of the uncertain plant are ready/);
      // The page says it is sampling (and disables the button) in the same task as the click;
      // the samples are drawn in slices after it.
      const busy = await page.evaluate(() => {
        document.getElementById('pw-sample-uncertainty').click();
        const status = document.getElementById('pw-status');
        return [status.textContent, status.getAttribute('data-pending'), document.getElementById('pw-sample-uncertainty').disabled, document.getElementById('pw-uncertainty').getAttribute('aria-busy')];
      });
      assert.deepEqual(busy, ['Sampling the uncertain plant: 0 of 200 samples so far…', 'cloud', true, 'true']);
      await page.waitForFunction(() => /seed 3/.test(document.getElementById('pw-uncertainty').textContent));
      await settled(page);
      assert.equal(await page.isDisabled('#pw-sample-uncertainty'), false);
      assert.equal(await page.getAttribute('#pw-uncertainty', 'aria-busy'), null);
      assert.equal(await page.getAttribute('#pw-status', 'data-cloud-samples'), null, 'the progress count goes with the cloud');
      // Every sample is [[−1, 10 u], [0, −1]] with |u| ≤ 0.1: all stable, decay rate 1 (by hand).
      assert.match(await page.textContent('#pw-uncertainty'), /200 of 200 stable \(100 %\); worst decay rate 1 1\/s/);
      noErrors(ctx);
    });
  });

  test('the uncertainty cloud is drawn in slices, says how far it is, is dropped by an edit, and is the command line\'s cloud', async () => {
    await withPage(pageFileUrl, async (ctx) => {
      const { page } = ctx;
      // The illustrative belt axis with a measured head position, an observer and integral action,
      // A(2, 1) uncertain by 20 % and B by 10 %: 3,000 perturbed loops, each closed, solved and
      // simulated, far more than one slice.
      assert.equal(await beltAxisLoop(page), 'designed', await page.textContent('#pw-status'));
      await page.fill('#pw-uncertain_entries', 'A 2 1 20%\nB 10%');
      await page.fill('#pw-uncertainty_samples', '3000');
      await page.fill('#pw-uncertainty_seed', '5');
      assert.equal(await designNow(page), 'designed', await page.textContent('#pw-status'));
      const click = () => page.evaluate(() => {
        document.getElementById('pw-sample-uncertainty').click();
        return document.getElementById('pw-status').getAttribute('data-pending');
      });
      assert.equal(await click(), 'cloud');
      // Part of the way: the page has given the main thread back (this poll ran) with some of
      // the samples drawn.
      await page.waitForFunction(() => Number(document.getElementById('pw-status').dataset.cloudSamples) > 0);
      const part = await page.evaluate(() => [Number(document.getElementById('pw-status').dataset.cloudSamples), document.getElementById('pw-status').textContent]);
      assert.ok(part[0] > 0 && part[0] < 3000, JSON.stringify(part));
      assert.match(part[1], /^Sampling the uncertain plant: \d+ of 3000 samples so far…$/);
      // An edit drops the cloud (it belongs to one design): nothing left busy or pending, and the
      // report offers the samples again.
      const dropped = await page.evaluate(() => {
        document.getElementById('pw-state_names').value = 'carriage x, carriage v, head x, head v';
        document.getElementById('pw-design').click();
        const status = document.getElementById('pw-status');
        return [status.getAttribute('data-pending'), status.getAttribute('data-cloud-samples'), document.getElementById('pw-sample-uncertainty').disabled, document.getElementById('pw-uncertainty').getAttribute('aria-busy')];
      });
      assert.deepEqual(dropped, ['robustness', null, false, null]);
      await settled(page);
      await page.evaluate(() => new Promise((r) => setTimeout(r, 200)));
      assert.equal(await page.getAttribute('#pw-status', 'data-pending'), null);
      assert.match(await page.textContent('#pw-uncertainty'), /3000 samples of the uncertain plant are ready to draw/);
      // A change that reaches the form while the samples are drawn but starts no cycle of its
      // own (set without an input event): the cycle after the last slice finds another form,
      // so it designs that form without the cloud (drawn for the old one) instead of drawing
      // a new cloud in one task.
      assert.equal(await click(), 'cloud');
      await page.evaluate(() => {
        document.getElementById('pw-state_names').value = 'carriage p, carriage s, head p, head s';
      });
      await page.waitForFunction(() => document.getElementById('pw-status').getAttribute('data-pending') !== 'cloud');
      await settled(page);
      assert.equal(await page.getAttribute('#pw-status', 'data-outcome'), 'designed');
      assert.match(await page.textContent('#pw-uncertainty'), /3000 samples of the uncertain plant are ready to draw/);
      assert.equal(await page.isDisabled('#pw-sample-uncertainty'), false);
      // Drawn to the end this time: the figures are those the command-line tool computes in one
      // piece from the saved design file.
      assert.equal(await click(), 'cloud');
      await page.waitForFunction(() => /seed 5/.test(document.getElementById('pw-uncertainty').textContent));
      await settled(page);
      const text = await page.textContent('#pw-uncertainty');
      const [download] = await Promise.all([page.waitForEvent('download'), page.click('#pw-save')]);
      const dir = fs.mkdtempSync(path.join(os.tmpdir(), 'pw-cloud-'));
      const file = path.join(dir, 'design.json');
      fs.writeFileSync(file, fs.readFileSync(await download.path(), 'utf8'));
      execFileSync('cargo', ['build', '--release', '-q', '-p', 'polewright', '--bin', 'polewright'], { cwd: repoRoot, stdio: 'inherit' });
      const cli = JSON.parse(execFileSync(path.join(repoRoot, 'target', 'release', 'polewright'), ['design', file], { encoding: 'utf8', maxBuffer: 64 << 20 }));
      const u = cli.uncertainty;
      assert.ok(u && u.samples === 3000, JSON.stringify(u && { samples: u.samples }));
      assert.ok(text.includes(`: ${u.stable} of 3000 stable`), `${text} against ${u.stable} stable`);
      if (u.response.not_settled > 0) assert.ok(text.includes(`(${u.response.not_settled} did not settle)`), `${text} against ${u.response.not_settled}`);
      else assert.ok(!text.includes('did not settle'), text);
      noErrors(ctx);
    });
  });

  test('deadbeat with one input: a Jordan block, K = [1/T², 3/(2T)], said in the warnings', async () => {
    await withPage(pageFileUrl, async (ctx) => {
      const { page } = ctx;
      // Zero-order-hold double integrator at T = 0.1 s with both z-plane poles at 0: the closed
      // form K = [1/T², 3/(2T)] = [100, 15] (by hand: det(zI − Φ + ΓK) = z²), once refused.
      await setFields(page, { a: '0 1\n0 0', b: '0\n1', sample_time: '0.1', plane: 'z', poles: '0, 0' });
      assert.equal(await designNow(page), 'designed', await page.textContent('#pw-status'));
      const [k] = await readGain(page);
      assert.ok(Math.abs(k[0] - 100) < 1e-9 && Math.abs(k[1] - 15) < 1e-10, JSON.stringify(k));
      const warnings = await page.textContent('#pw-warnings');
      assert.match(warnings, /deadbeat/);
      assert.match(warnings, /Jordan block/);
      // The achieved poles sit within ε^(1/2) of z = 0: the readout says z = 0, not ln z / T.
      await page.focus('#pw-pole-map');
      for (let i = 0; i < 6 && !/^Closed-loop/.test(await page.textContent('#pw-pole-pick')); i += 1) await page.keyboard.press('n');
      assert.match(await page.textContent('#pw-pole-pick'), /^Closed-loop pole 1 of 2: z = 0 \(deadbeat \/ delay/);
      assert.doesNotMatch(await page.textContent('body'), /inf rad\/s|inf times/, 'no infinite bandwidth or speed-up');
      noErrors(ctx);
    });
  });

  test('the session continues the robust placement: the gain moves with the poles, and says when a fresh design differs', async () => {
    await withPage(pageFileUrl, async (ctx) => {
      const { page } = ctx;
      // A seeded random two-input plant (test data, the fourth of crate/tests/
      // search_and_continuation.rs) on which a fresh placement jumps between local optima
      // as the pair's real part crosses −2.56 (the command-line tool: a relative gain change of
      // about 100 × the step there).
      const a = '0.618004 0.590364 -0.614366 0.677426\n-0.460227 0.397690 -0.451466 -0.210432\n-0.584715 -0.752779 -0.484239 -0.187876\n0.465711 -0.498585 0.581940 -0.665761';
      const b = '0.526329 -0.204365\n-0.321625 0.483684\n0.316579 0.008021\n-0.391429 0.916013';
      const norm = (g) => Math.hypot(...g.flat());
      let previous = null;
      let worst = 0;
      let saidFresh = false;
      for (let s = 0; s <= 6; s++) {
        const re = -2.62 + 0.02 * s;
        await setFields(page, { a, b, poles: `${re.toFixed(2)}±1.5j, -1, -1.7` });
        assert.equal(await designNow(page), 'designed', await page.textContent('#pw-status'));
        const gain = await readGain(page);
        if (previous) {
          const change = Math.hypot(...gain.flat().map((v, i) => v - previous.flat()[i])) / norm(gain) / 0.02;
          worst = Math.max(worst, change);
        }
        previous = gain;
        if (/fresh design of this document/.test(await page.textContent('#pw-warnings'))) saidFresh = true;
      }
      assert.ok(worst <= 5, `the continued gain moved by ${worst.toFixed(2)} × the step`);
      assert.ok(saidFresh, 'past the jump of a fresh placement, the page says that a fresh design differs');
      noErrors(ctx);
    });
  });
});

