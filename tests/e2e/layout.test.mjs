// The workbench layout and the display numbers, measured in the page (headless Chromium).
//
// One view: at 1440 × 900, 1280 × 800 and 1024 × 768, after the Targets section is opened from
// the section links, the pole field, the gain table, the pole map and the response canvas are
// all inside the window at once, and the page itself does not scroll. No table is clipped: a
// table wider than its box sits in a box that scrolls sideways, with its row labels kept in view.
// Readable numbers: no page text carries a Rust type name or more digits than chosen.

import { test, after, describe } from 'node:test';
import assert from 'node:assert/strict';
import { withPage, closeBrowser, pageFileUrl, requireBuiltPage, readGain, design, tableRows, canvasStats } from './harness.mjs';

requireBuiltPage();
after(closeBrowser);

const VIEWPORTS = [
  { width: 1440, height: 900 },
  { width: 1280, height: 800 },
  { width: 1024, height: 768 },
];

async function loadDemo(page, index) {
  await page.selectOption('#pw-demo', String(index));
  await page.click('#pw-load-demo');
  await page.waitForFunction(() => /^Designed/.test(document.getElementById('pw-status').textContent));
}

async function box(page, id) {
  const b = await page.locator(`#${id}`).boundingBox();
  assert.ok(b, `#${id} has no box (hidden?)`);
  return b;
}

describe('workbench layout', () => {
  test('one view: pole field, gain, pole map and a response inside the window at three sizes', async () => {
    let checked = 0;
    for (const viewport of VIEWPORTS) {
      for (const demo of [0, 1]) {
        await withPage(pageFileUrl, async ({ page, pageErrors, consoleErrors }) => {
          await loadDemo(page, demo);
          await page.click('.section-nav a[href="#pw-targets-section"]');
          // The section link unfolds the section and scrolls the form pane, not the page.
          await page.waitForFunction(() => {
            const r = document.getElementById('pw-poles').getBoundingClientRect();
            return r.top >= 0 && r.bottom <= window.innerHeight;
          });
          for (const id of ['pw-poles', 'pw-gain-table', 'pw-pole-map', 'pw-overview-plot']) {
            const b = await box(page, id);
            const where = `#${id} at ${viewport.width} × ${viewport.height} (demo ${demo}): ${JSON.stringify(b)}`;
            assert.ok(b.width > 50 && b.height > 20, where);
            assert.ok(b.x >= 0 && b.y >= 0, where);
            assert.ok(b.x + b.width <= viewport.width + 0.5 && b.y + b.height <= viewport.height + 0.5, where);
          }
          // The page itself does not scroll: each pane scrolls on its own.
          const scroll = await page.evaluate(() => [document.documentElement.scrollHeight, document.documentElement.scrollWidth]);
          assert.ok(scroll[0] <= viewport.height && scroll[1] <= viewport.width, `page scrolls: ${scroll}`);
          // The response beside the map is drawn and named.
          assert.match(await page.textContent('#pw-overview-caption'), /Free response|Loop simulation/);
          assert.deepEqual([...pageErrors, ...consoleErrors], []);
          checked += 1;
        }, { viewport });
      }
    }
    assert.equal(checked, 6);
  });

  test('no table is clipped: wide tables scroll in their own box and keep their row labels in view', async () => {
    await withPage(pageFileUrl, async ({ page }) => {
      await loadDemo(page, 1);
      await page.check('#pw-pole-zoom');
      const report = await page.evaluate(() => [...document.querySelectorAll('table')].filter((t) => t.offsetParent !== null).map((t) => {
        const wrap = t.parentElement;
        const style = getComputedStyle(wrap);
        const rowHeader = t.querySelector('tbody th');
        return {
          id: wrap.id || wrap.className,
          wider: t.scrollWidth > wrap.clientWidth + 1,
          scrolls: ['auto', 'scroll'].includes(style.overflowX),
          sticky: rowHeader ? getComputedStyle(rowHeader).position === 'sticky' : null,
        };
      }));
      assert.ok(report.length >= 5, JSON.stringify(report));
      const wide = report.filter((r) => r.wider);
      for (const r of wide) {
        assert.ok(r.scrolls, `table in ${r.id} is wider than its box and the box does not scroll`);
        if (r.sticky !== null) assert.ok(r.sticky, `table in ${r.id} scrolls without keeping its row labels`);
      }
      // At 1024 px the two-input gain table (4 states) is wider than its box: the case is tested.
      assert.ok(wide.some((r) => r.id === 'pw-gain-table'), JSON.stringify(report));
    }, { viewport: { width: 1024, height: 768 } });
  });

  test('form sections fold and unfold; a field error unfolds its section', async () => {
    await withPage(pageFileUrl, async ({ page }) => {
      const toggle = '#pw-plant-heading .section-toggle';
      await page.click(toggle);
      assert.equal(await page.getAttribute(toggle, 'aria-expanded'), 'false');
      assert.equal(await page.isVisible('#pw-a'), false);
      // An error in a folded section (set from outside, as a loaded file or an undo could)
      // unfolds it so that the message naming the field is seen.
      await page.evaluate(() => {
        const a = document.getElementById('pw-a');
        a.value = '0 1\n0 zero';
        a.dispatchEvent(new Event('input', { bubbles: true }));
      });
      await page.waitForFunction(() => !document.getElementById('pw-a-error').hidden);
      assert.equal(await page.isVisible('#pw-a'), true);
      assert.equal(await page.getAttribute(toggle, 'aria-expanded'), 'true');
      assert.match(await page.textContent('#pw-a-error'), /zero/);
    }, { viewport: { width: 1280, height: 800 } });
  });
});

describe('readable numbers', () => {
  test('no page text names a Rust type or shows more digits than chosen; copies keep full precision', async () => {
    await withPage(pageFileUrl, async ({ page }) => {
      for (const demo of [0, 1, 2]) {
        await loadDemo(page, demo);
        for (const digits of ['5', '3']) {
          await page.selectOption('#pw-digits', digits);
          await page.waitForFunction(() => /^Designed/.test(document.getElementById('pw-status').textContent));
          const text = await page.evaluate(() => {
            // Shown text only: not the copyable full-precision blocks, the form's own fields,
            // the hidden record or the caution.
            const skip = new Set(['pw-gain-text', 'pw-controller-text', 'pw-obs-text', 'pw-record']);
            const parts = [];
            for (const el of document.querySelectorAll('.outputs td, .outputs li, .outputs p, .outputs figcaption, .outputs code')) {
              if ([...skip].some((id) => el.closest(`#${id}`))) continue;
              if (el.closest('[hidden]')) continue;
              parts.push(el.textContent);
            }
            return parts.join('\n');
          });
          assert.doesNotMatch(text, /[A-Z][a-z]+[A-Z][a-z]+ \{|\{ [a-z_]+: |[A-Z][a-z]+\([A-Z][a-z]+/, 'a Rust debug text');
          // No number with more significant digits than chosen (a decimal mantissa).
          const numbers = text.match(/\d+\.\d+/g) || [];
          const tooLong = numbers.filter((n) => n.replace('.', '').replace(/^0+/, '').length > Number(digits));
          assert.deepEqual(tooLong, [], `demo ${demo}, ${digits} digits`);
          assert.ok(numbers.length > 10, `demo ${demo}: only ${numbers.length} decimals found`);
        }
        // The copied gain keeps full precision whatever is shown.
        const k = await readGain(page);
        const full = await page.textContent('#pw-gain-text');
        assert.ok(k.flat().every(Number.isFinite));
        assert.ok(full.split(/\s+/).some((t) => /\d\.\d{8,}/.test(t)), full);
        await page.selectOption('#pw-digits', '5');
      }
    }, { viewport: { width: 1280, height: 800 } });
  });
});

describe('the plant as it really is', () => {
  test('zeros on the map and in words, the dip, state limits, a load through E', async () => {
    await withPage(pageFileUrl, async ({ page, pageErrors, consoleErrors }) => {
      // G(s) = (2 − s) / ((s + 1)(s + 3)) (zero at +2, by hand) with feedforward tracking,
      // a velocity limit and a load on the first state's rate through E (invented data).
      const outcome = await design(page, {
        a: '0 1\n-3 -4', b: '0\n1', c: '2 -1', poles: '-2±1j', tracking: 'feedforward', reference: '1',
        state_names: 'x, v', state_limits: 'none, 0.05', disturbance: '0.2', disturbance_time: '3', disturbance_input: '1 0', duration: '8',
      });
      assert.equal(outcome, 'designed', await page.textContent('#pw-status'));
      assert.match(await page.textContent('#pw-zeros'), /Plant zeros .*: 2\. 1 zero in the right half-plane: the plant is non-minimum-phase/);
      assert.match(await page.textContent('#pw-verdicts'), /Non-minimum-phase plant: a zero at 2/);
      assert.match(await page.getAttribute('#pw-pole-map', 'aria-label'), /1 plant zeros/);
      assert.match(await page.textContent('#pw-pole-legend'), /a zero of the plant/);
      const loop = await tableRows(page, 'pw-loop-table');
      const dip = Number(loop[0][5].replace(' %', ''));
      assert.ok(dip > 1, `undershoot ${loop[0][5]}`);
      const states = await tableRows(page, 'pw-loop-state-table');
      assert.equal(states.length, 2, JSON.stringify(states));
      assert.match(states[1][2], /±0\.05: EXCEEDED/);
      assert.match(await page.textContent('#pw-warnings'), /In the loop simulation, state 2 \(v\) reaches/);
      assert.equal(await page.textContent('#pw-disturbance_input-size'), '2 × 1');
      // Integral action with the reference also fed forward (two degrees of freedom).
      const again = await design(page, { a: '0 1\n-3 -4', b: '0\n1', c: '2 -1', poles: '-2±1j, -3', tracking: 'integral', tracking_feedforward: true, reference: '1' });
      assert.equal(again, 'designed', await page.textContent('#pw-status'));
      assert.match(await page.textContent('#pw-controller-law'), /N_u r − K \(x − N_x r\) − K_i z/);
      assert.match(await page.textContent('#pw-tracking-note'), /Two degrees of freedom/);
      assert.deepEqual([...pageErrors, ...consoleErrors], []);
    }, { viewport: { width: 1280, height: 800 } });
  });
});

describe('zoom and pan', () => {
  test('time plots zoom by wheel, keys and buttons, pan by drag and keys, and show all again; the pole map zooms and moves by buttons and by a drag away from its poles', async () => {
    await withPage(pageFileUrl, async ({ page, pageErrors, consoleErrors }) => {
      await loadDemo(page, 0);
      const plot = page.locator('#pw-state-plot');
      await plot.scrollIntoViewIfNeeded();
      const whole = await canvasStats(page, 'pw-state-plot');
      const box = await plot.boundingBox();
      // The wheel zooms about the pointer.
      await page.mouse.move(box.x + box.width * 0.3, box.y + box.height / 2);
      await page.mouse.wheel(0, -300);
      // The wheel's handler repaints synchronously: the canvas has changed when it returns.
      const zoomed = await canvasStats(page, 'pw-state-plot');
      assert.notDeepEqual(zoomed, whole, 'the wheel zoomed the plot');
      // A drag moves the window; the keys and the buttons act without dragging.
      await page.mouse.move(box.x + box.width * 0.6, box.y + box.height / 2);
      await page.mouse.down();
      await page.mouse.move(box.x + box.width * 0.4, box.y + box.height / 2, { steps: 4 });
      await page.mouse.up();
      const dragged = await canvasStats(page, 'pw-state-plot');
      assert.notDeepEqual(dragged, zoomed, 'the drag moved the window');
      await plot.focus();
      await page.keyboard.press('0');
      assert.deepEqual(await canvasStats(page, 'pw-state-plot'), whole, '0 shows the whole run again');
      await page.keyboard.press('+');
      assert.notDeepEqual(await canvasStats(page, 'pw-state-plot'), whole, '+ zooms in');
      const tools = page.locator('#pw-state-plot').locator('xpath=ancestor::figure/following-sibling::div[1]');
      await tools.getByRole('button', { name: 'Pan right' }).click();
      await tools.getByRole('button', { name: 'Show all' }).click();
      assert.deepEqual(await canvasStats(page, 'pw-state-plot'), whole, 'Show all restores the whole run');
      // The pole map: buttons (and I / O / 0 on the focused map) zoom about the centre.
      const before = await page.getAttribute('#pw-pole-map', 'data-requested-px');
      const map = await canvasStats(page, 'pw-pole-map');
      await page.click('#pw-zoom-in');
      assert.notDeepEqual(await canvasStats(page, 'pw-pole-map'), map, 'the map zoomed in');
      await page.click('#pw-zoom-reset');
      assert.deepEqual(await canvasStats(page, 'pw-pole-map'), map, 'the whole view again');
      assert.equal(await page.getAttribute('#pw-pole-map', 'data-requested-px'), before);
      // The map's view moves by buttons (a quarter of the map) and by a drag that starts away
      // from the requested poles; the poles themselves stay where they are.
      const poles = await page.inputValue('#pw-poles');
      const px = async () => (await page.getAttribute('#pw-pole-map', 'data-requested-px')).split(' ').map((p) => p.split(',').map(Number));
      const at0 = await px();
      const mapBox = await page.locator('#pw-pole-map').boundingBox();
      await page.click('#pw-view-right');
      const right = await px();
      assert.ok(Math.abs(right[0][0] - (at0[0][0] - mapBox.width / 4)) < 1.5 && Math.abs(right[0][1] - at0[0][1]) < 0.5, `moved left by a quarter: ${JSON.stringify([at0[0], right[0]])}`);
      await page.click('#pw-view-up');
      const up = await px();
      assert.ok(up[0][1] > right[0][1] + mapBox.height / 8, 'the view moved up: the poles move down');
      await page.click('#pw-zoom-reset');
      assert.deepEqual(await px(), at0);
      // A drag from an empty corner of the map.
      const [sx, sy] = [mapBox.x + 12, mapBox.y + 12];
      assert.ok(at0.every(([x, y]) => Math.hypot(x - 12, y - 12) > 30), 'the corner is away from the poles');
      await page.mouse.move(sx, sy);
      await page.mouse.down();
      await page.mouse.move(sx + 40, sy + 25, { steps: 5 });
      await page.mouse.up();
      const dragged2 = await px();
      assert.ok(Math.abs(dragged2[0][0] - at0[0][0] - 40) < 1.5 && Math.abs(dragged2[0][1] - at0[0][1] - 25) < 1.5, `the drag moved the view: ${JSON.stringify([at0[0], dragged2[0]])}`);
      assert.equal(await page.inputValue('#pw-poles'), poles, 'moving the view edits no pole');
      await page.click('#pw-zoom-reset');
      assert.deepEqual([...pageErrors, ...consoleErrors], []);
    }, { viewport: { width: 1280, height: 800 } });
  });
});

describe('targets', () => {
  test('every visible control is at least 24 × 24 px, or a 20 px checkbox with room around it (WCAG 2.2, 2.5.8)', async () => {
    await withPage(pageFileUrl, async ({ page }) => {
      await loadDemo(page, 1);
      const found = await page.evaluate(() => {
        const all = [...document.querySelectorAll('button, select, input, textarea, summary, a, label.file-button')]
          .filter((e) => e.offsetParent !== null && !e.classList.contains('visually-hidden'));
        const boxes = all.map((e) => ({ e, r: e.getBoundingClientRect() }));
        const out = { checked: 0, small: [] };
        for (const { e, r } of boxes) {
          out.checked += 1;
          const name = `${e.tagName} ${e.id || e.className || e.textContent.trim().slice(0, 20)} ${Math.round(r.width)}×${Math.round(r.height)}`;
          if (e.type === 'checkbox') {
            // 20 px and no other target within a 24 px circle about its centre.
            const cx = r.left + r.width / 2;
            const cy = r.top + r.height / 2;
            const crowded = boxes.some(({ e: o, r: q }) => o !== e && !(o.tagName === 'LABEL') && Math.max(q.left - cx, 0, cx - q.right) ** 2 + Math.max(q.top - cy, 0, cy - q.bottom) ** 2 < 12 * 12);
            if (r.width < 19.5 || r.height < 19.5 || crowded) out.small.push(name);
          } else if (r.width < 23.5 || r.height < 23.5) {
            out.small.push(name);
          }
        }
        return out;
      });
      assert.ok(found.checked > 60, `only ${found.checked} controls found`);
      assert.deepEqual(found.small, []);
    }, { viewport: { width: 1280, height: 800 } });
  });
});
