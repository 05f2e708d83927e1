// Shared helpers for the end-to-end tests of dist/polewright.html.
//
// withPage(url, fn) opens the page in a fresh browser context of one shared
// headless Chromium and hands fn an object with the page and everything seen
// while it ran: every request, console errors, uncaught page errors.
// startStaticServer(dir) serves a directory on 127.0.0.1 (random port) and
// logs every request it receives, so tests can prove nothing else was asked for.

import { chromium } from 'playwright-core';
import fs from 'node:fs';
import http from 'node:http';
import path from 'node:path';
import { fileURLToPath, pathToFileURL } from 'node:url';

export const repoRoot = path.resolve(path.dirname(fileURLToPath(import.meta.url)), '..', '..');
export const distDir = path.join(repoRoot, 'dist');
export const pagePath = path.join(distDir, 'polewright.html');
export const pageFileUrl = pathToFileURL(pagePath).href;
export const artifactsDir = path.join(repoRoot, 'tests', 'artifacts');

export const CHROMIUM_PATH = process.env.POLEWRIGHT_CHROMIUM || '/usr/bin/chromium';
export const CHROMIUM_ARGS = [
  '--no-sandbox',
  '--disable-gpu',
  '--disable-quic',
  '--no-first-run',
  '--disable-background-networking',
  '--disable-component-update',
  '--disable-sync',
  '--disable-default-apps',
  '--disable-extensions',
];

let browserPromise = null;

/** The shared browser (launched on first use; Playwright gives it a fresh temporary profile). */
export function browser() {
  if (!browserPromise) {
    browserPromise = chromium.launch({
      executablePath: CHROMIUM_PATH,
      headless: true,
      args: CHROMIUM_ARGS,
      timeout: 60_000,
    });
  }
  return browserPromise;
}

/** Close the shared browser; call from an `after` hook. */
export async function closeBrowser() {
  if (browserPromise) {
    const b = await browserPromise;
    browserPromise = null;
    await b.close();
  }
}

/** Fail early with a useful message when the page has not been built. */
export function requireBuiltPage() {
  if (!fs.existsSync(pagePath)) {
    throw new Error(`${pagePath} is missing: run scripts/build-page first`);
  }
}

/**
 * Open `url` in a fresh context and run `fn(ctx)` with
 * ctx = { page, url, requests, consoleErrors, pageErrors, consoleMessages }.
 * Waits for the page's status line to leave "Starting…" unless opts.waitReady is false.
 */
export async function withPage(url, fn, opts = {}) {
  const b = await browser();
  const context = await b.newContext({
    viewport: opts.viewport || { width: 1200, height: 1100 },
    deviceScaleFactor: opts.deviceScaleFactor || 1,
    serviceWorkers: 'block',
  });
  const page = await context.newPage();
  const requests = [];
  const consoleErrors = [];
  const consoleMessages = [];
  const pageErrors = [];
  context.on('request', (r) => requests.push(r.url()));
  page.on('console', (m) => {
    consoleMessages.push(`${m.type()}: ${m.text()}`);
    if (m.type() === 'error') consoleErrors.push(m.text());
  });
  page.on('pageerror', (e) => pageErrors.push(String(e && e.stack ? e.stack : e)));
  try {
    await page.goto(url, { waitUntil: 'load', timeout: 30_000 });
    if (opts.waitReady !== false) {
      await page.waitForFunction(
        () => {
          const s = document.getElementById('pw-status');
          return s && s.textContent !== 'Starting…';
        },
        null,
        { timeout: 20_000 },
      );
    }
    return await fn({ page, url, requests, consoleErrors, pageErrors, consoleMessages });
  } finally {
    await context.close();
  }
}

const MIME = {
  '.html': 'text/html; charset=utf-8',
  '.js': 'text/javascript; charset=utf-8',
  '.css': 'text/css; charset=utf-8',
  '.wasm': 'application/wasm',
  '.png': 'image/png',
};

/**
 * Serve `root` on 127.0.0.1 with a random free port.
 * Returns { origin, log, close } where log lists "METHOD /path" for every request.
 */
export async function startStaticServer(root) {
  const log = [];
  const base = path.resolve(root);
  const server = http.createServer((req, res) => {
    log.push(`${req.method} ${req.url}`);
    const urlPath = decodeURIComponent(new URL(req.url, 'http://127.0.0.1').pathname);
    const file = path.resolve(base, `.${urlPath}`);
    if (req.method !== 'GET' || !file.startsWith(base + path.sep)) {
      res.writeHead(405).end();
      return;
    }
    fs.readFile(file, (err, data) => {
      if (err) {
        res.writeHead(404, { 'content-type': 'text/plain' }).end('not found');
        return;
      }
      res.writeHead(200, {
        'content-type': MIME[path.extname(file)] || 'application/octet-stream',
        'cache-control': 'no-store',
      });
      res.end(data);
    });
  });
  await new Promise((resolve, reject) => {
    server.once('error', reject);
    server.listen(0, '127.0.0.1', resolve);
  });
  const { port } = server.address();
  return {
    origin: `http://127.0.0.1:${port}`,
    log,
    close: () => new Promise((resolve) => server.close(() => resolve())),
  };
}

/**
 * Colour statistics of a canvas, read back with getImageData:
 * { width, height, distinct, dominantShare } over every 2nd pixel.
 */
export async function canvasStats(page, id) {
  await paintedInView(page, id);
  return page.evaluate((canvasId) => {
    const c = document.getElementById(canvasId);
    if (!c) return null;
    const ctx = c.getContext('2d');
    const { data } = ctx.getImageData(0, 0, c.width, c.height);
    const counts = new Map();
    let n = 0;
    for (let i = 0; i < data.length; i += 8) {
      const key = (data[i] << 24) | (data[i + 1] << 16) | (data[i + 2] << 8) | data[i + 3];
      counts.set(key, (counts.get(key) || 0) + 1);
      n += 1;
    }
    const dominant = Math.max(...counts.values());
    return { width: c.width, height: c.height, distinct: counts.size, dominantShare: dominant / n };
  }, id);
}

/**
 * Bring canvas `id` into view when the page left it unpainted out of view (`data-waiting`),
 * and wait until it is painted. A canvas that is hidden stays as it is.
 */
export async function paintedInView(page, id) {
  const waiting = await page.evaluate((canvasId) => {
    const c = document.getElementById(canvasId);
    if (!c || !c.hasAttribute('data-waiting') || c.offsetParent === null) return false;
    c.scrollIntoView({ block: 'center' });
    return true;
  }, id);
  if (waiting) await page.waitForFunction((canvasId) => !document.getElementById(canvasId).hasAttribute('data-waiting'), id);
}

/**
 * How many pixels of canvas `id` are within `tolerance` (per channel) of each colour in
 * `hexes` (`#rrggbb`), read back with getImageData (the canvas is brought into view first).
 */
export async function colourCounts(page, id, hexes, tolerance = 12) {
  await paintedInView(page, id);
  return page.evaluate(([canvasId, wanted, tol]) => {
    const c = document.getElementById(canvasId);
    const { data } = c.getContext('2d').getImageData(0, 0, c.width, c.height);
    const rgb = wanted.map((h) => [1, 3, 5].map((i) => parseInt(h.slice(i, i + 2), 16)));
    const counts = rgb.map(() => 0);
    for (let i = 0; i < data.length; i += 4) {
      rgb.forEach(([r, g, b], k) => {
        if (Math.abs(data[i] - r) <= tol && Math.abs(data[i + 1] - g) <= tol && Math.abs(data[i + 2] - b) <= tol) counts[k] += 1;
      });
    }
    return counts;
  }, [id, hexes, tolerance]);
}

/**
 * The rows of table `id` read at 17 significant digits: the Digits select is set to 17 and then
 * restored, so that a difference below the display resolution can be seen.
 */
export async function tableRowsAtFullPrecision(page, id) {
  const digits = await page.inputValue('#pw-digits');
  if (digits !== '17') {
    await page.selectOption('#pw-digits', '17');
    await nextFrame(page);
  }
  const rows = await tableRows(page, id);
  if (digits !== '17') {
    await page.selectOption('#pw-digits', digits);
    await nextFrame(page);
  }
  return rows;
}

/** Save a full-page screenshot under tests/artifacts/ (every canvas painted first). Returns its path. */
export async function screenshot(page, name) {
  for (const id of await page.evaluate(() => [...document.querySelectorAll('canvas[data-waiting]')].map((c) => c.id))) await paintedInView(page, id);
  fs.mkdirSync(artifactsDir, { recursive: true });
  const file = path.join(artifactsDir, name);
  await page.screenshot({ path: file, fullPage: true });
  return file;
}

/** The form's field keys; the control for key k has the id `pw-k`. */
export const FORM_FIELDS = [
  'a', 'b', 'state_names', 'state_units', 'state_limits', 'input_names', 'input_units',
  'c', 'd', 'output_names', 'output_units',
  'poles', 'pole_source', 'pattern_family', 'pattern_normalisation', 'pattern_settling_time',
  'spec_overshoot', 'spec_settling_time', 'spec_rise_time', 'settling_band', 'lqr_max_state', 'lqr_max_input', 'search',
  'limits', 'initial_state', 'duration',
  'observer', 'observer_poles', 'observer_speed', 'observer_form',
  'tracking', 'tracked_outputs', 'integral_poles', 'tracking_feedforward', 'anti_windup', 'anti_windup_time',
  'sample_time', 'computation_delay', 'delay_poles', 'plane',
  'reference', 'reference_time', 'disturbance', 'disturbance_input', 'disturbance_time', 'noise_std', 'seed',
  'disk_skew', 'sensitivity_entry', 'uncertain_entries', 'uncertainty_samples', 'uncertainty_seed',
];

/** The choice fields (selects and the checkbox) and their "not used" value. */
export const CHOICE_DEFAULTS = {
  observer: 'none', observer_form: 'predictor', tracking: 'none', anti_windup: 'none', plane: 's',
  pole_source: 'list', pattern_family: 'bessel', pattern_normalisation: 'unit_settling_time', settling_band: '2',
  computation_delay: false, search: false, tracking_feedforward: false,
};

/**
 * Set every form control without designing: text fields get `fields[key]` (or blank), selects
 * the given value (or their "not used" choice), the checkbox true/false. Hidden sub-fields are
 * set through the DOM (a user cannot type into them; the page ignores them while hidden).
 */
export async function setFields(page, fields) {
  for (const key of Object.keys(fields)) {
    if (!FORM_FIELDS.includes(key)) throw new Error(`no form field ${key}`);
  }
  for (const key of FORM_FIELDS) {
    const sel = `#pw-${key}`;
    const value = key in CHOICE_DEFAULTS ? fields[key] ?? CHOICE_DEFAULTS[key] : fields[key] ?? '';
    if (await page.isVisible(sel)) {
      if (typeof value === 'boolean') await page.setChecked(sel, value);
      else if (key in CHOICE_DEFAULTS) await page.selectOption(sel, value);
      else await page.fill(sel, value);
    } else {
      await page.evaluate(([s, v]) => {
        const el = document.querySelector(s);
        if (typeof v === 'boolean') el.checked = v;
        else el.value = v;
      }, [sel, value]);
    }
  }
}

/**
 * Fill the form: every field in `fields` gets its text, every other field is cleared.
 * Then press "Design now" and wait for the cycle it starts to finish.
 */
export async function design(page, fields) {
  await setFields(page, fields);
  return designNow(page);
}

/**
 * Load the belt-axis demo and give it a head-position measurement, an observer (speed factor),
 * integral action and a reference step, so that the continuous loop is simulated on every
 * update; design it and return the outcome.
 */
export async function beltAxisLoop(page) {
  await page.selectOption('#pw-demo', '0');
  await page.click('#pw-load-demo');
  await page.waitForFunction(() => document.getElementById('pw-status').dataset.outcome === 'designed' && document.getElementById('pw-a').value.startsWith('0 1 0 0'));
  await page.fill('#pw-c', '0 0 1 0');
  await page.selectOption('#pw-observer', 'speed_factor');
  await page.selectOption('#pw-tracking', 'integral');
  await page.fill('#pw-integral_poles', '-10');
  await page.fill('#pw-reference', '0.01');
  return designNow(page);
}

/**
 * Press "Design now" and wait for the page's cycle and the robustness analysis it leaves for
 * right after it; returns the status line's outcome.
 */
export async function designNow(page) {
  await page.evaluate(() => document.getElementById('pw-status').removeAttribute('data-outcome'));
  await page.click('#pw-design');
  await page.waitForFunction(() => document.getElementById('pw-status').hasAttribute('data-outcome'));
  await settled(page);
  return page.getAttribute('#pw-status', 'data-outcome');
}

/** Wait until no robustness analysis is pending (the status line has no data-pending). */
export async function settled(page) {
  await page.waitForFunction(() => !document.getElementById('pw-status').hasAttribute('data-pending'));
}

/** Resolves at the page's next animation frame. */
export const nextFrame = (page) => page.evaluate(() => new Promise((r) => requestAnimationFrame(() => r())));

/** Drags from `from` by (`dx`, `dy`) pixels in `steps` moves, one animation frame each. */
export async function drag(page, from, dx, dy, steps = 10) {
  await page.mouse.move(from[0], from[1]);
  await page.mouse.down();
  for (let i = 1; i <= steps; i += 1) {
    await page.mouse.move(from[0] + (dx * i) / steps, from[1] + (dy * i) / steps);
    await nextFrame(page);
  }
  await page.mouse.up();
  await nextFrame(page);
}

/**
 * Record what the page copies: navigator.clipboard.writeText is replaced (in this page only)
 * by a recorder that keeps the text and succeeds. Returns a function that reads the records.
 */
export async function recordClipboard(page) {
  await page.evaluate(() => {
    window.__copied = [];
    const clipboard = { writeText: (text) => { window.__copied.push(String(text)); return Promise.resolve(); } };
    Object.defineProperty(navigator, 'clipboard', { value: clipboard, configurable: true });
  });
  return () => page.evaluate(() => window.__copied);
}

/** The gain table as numbers (rows = inputs), read from the displayed text. */
// The gain at full precision, read from its copyable text (the table shows rounded figures):
// line 1 the heading, line 2 the symbol and the state labels, then one row per input.
export async function readGain(page) {
  return page.evaluate(() => {
    if (!document.getElementById('pw-gain')) return null;
    const lines = document.getElementById('pw-gain-text').textContent.split('\n').filter((l) => l !== '');
    return lines.slice(2).map((line) => line.split('\t').slice(1).map(Number));
  });
}

/** A number as the page shows it (`−1.2346e-6`: a typographic minus allowed). */
export function shownNumber(text) {
  return Number(text.trim().replace(/\u2212/g, '-'));
}

/** Rows of a result table (the element with id `hostId` holds one table) as arrays of cell texts. */
export async function tableRows(page, hostId) {
  return page.evaluate((id) => {
    const host = document.getElementById(id);
    const table = host && host.querySelector('table');
    if (!table) return [];
    return [...table.querySelectorAll('tbody tr')].map((tr) =>
      [...tr.querySelectorAll('th, td')].map((c) => c.textContent.trim()),
    );
  }, hostId);
}

/**
 * Parse a complex number as the page writes it in tables: `−2`, `2j`, `−1 + 2j`, `−1.5e-3 − 2j`
 * (typographic minus signs and spaces allowed; the ASCII forms `-1+2j` too).
 */
export function parseComplex(text) {
  const t = text.trim().replace(/\u2212/g, '-').replace(/\s+/g, '');
  const num = '[+-]?(?:\\d+\\.?\\d*|\\.\\d+)(?:e[+-]?\\d+)?';
  const unsigned = '(?:\\d+\\.?\\d*|\\.\\d+)(?:e[+-]?\\d+)?';
  let m = new RegExp(`^(${num})$`, 'i').exec(t);
  if (m) return { re: Number(m[1]), im: 0 };
  m = new RegExp(`^(${num})j$`, 'i').exec(t);
  if (m) return { re: 0, im: Number(m[1]) };
  m = new RegExp(`^(${num})([+-]${unsigned})j$`, 'i').exec(t);
  if (m) return { re: Number(m[1]), im: Number(m[2]) };
  return null;
}

/**
 * Form fields of a chain of five masses (springs between neighbours and to both walls, light
 * damping), a force on the first and on the last: 10 states, 2 inputs (an invented test plant).
 */
/** A chain of `k` masses (unit masses and springs, damping 0.05), each with its own actuator
 * (invented, illustrative): n = 2k, m = k; listed poles −0.5(1 + 0.1 i) ± 0.8(1 + 0.1 i) j, limits
 * 5 N, and the initial state a unit displacement of the first mass (the search's situation). */
export function actuatedChainFields(k) {
  const n = 2 * k;
  const A = Array.from({ length: n }, () => Array(n).fill(0));
  const B = Array.from({ length: n }, () => Array(k).fill(0));
  for (let i = 0; i < k; i += 1) {
    const p = 2 * i;
    A[p][p + 1] = 1;
    A[p + 1][p] = -((i > 0 ? 1 : 0) + (i < k - 1 ? 1 : 0));
    A[p + 1][p + 1] = -0.05;
    if (i > 0) A[p + 1][p - 2] = 1;
    if (i < k - 1) A[p + 1][p + 2] = 1;
    B[p + 1][i] = 1;
  }
  const x0 = Array(n).fill(0);
  x0[0] = 1;
  return {
    a: A.map((r) => r.join(' ')).join('\n'),
    b: B.map((r) => r.join(' ')).join('\n'),
    poles: Array.from({ length: k }, (_, i) => `${(-0.5 * (1 + 0.1 * i)).toFixed(3)}±${(0.8 * (1 + 0.1 * i)).toFixed(3)}j`).join(', '),
    limits: Array(k).fill('5').join(', '),
    initial_state: x0.join(' '),
  };
}

export function massChainFields() {
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
  return {
    a: A.map((r) => r.join(' ')).join('\n'),
    b: B.map((r) => r.join(' ')).join('\n'),
    input_names: 'left force, right force',
    input_units: 'N, N',
    poles: '-1±1j, -1.5±1.2j, -2±0.8j, -2.5±1.5j, -3, -3.5',
    limits: '40, 40',
  };
}
