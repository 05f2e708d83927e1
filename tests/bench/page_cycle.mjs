// Browser benchmark of the page's design cycle (headless Chromium; not a test: it asserts
// nothing about speed). Each scenario fills the form, designs once, then starts 35 cycles
// synchronously with the "Design now" button (the first 5 warm up), alternating one pole so
// that the gain, the tables and every canvas change each time. Each cycle's time is the
// page's own performance.now() figure (the status line's data-cycle-ms); the robustness
// analysis the page runs right after each cycle is timed too (data-robustness-ms), and the
// next cycle starts when it is done.
//
// Then the search for the fastest design on a 30-state plant and two uncertainty clouds, run by
// the page in slices (total time, longest main-thread task, worst delay of a timer meanwhile),
// and two pole drags, timed by the page itself (data-drag-median-ms).
//
//   node tests/bench/page_cycle.mjs            # print the figures
//   node tests/bench/page_cycle.mjs --record   # and append one line to tests/bench/log.jsonl
//   node tests/bench/page_cycle.mjs --only=listed_n10_m2   # one scenario (or --only=drag, --only=search, --only=cloud)
//
// The log is append-only and committed: the README quotes only figures it holds.

import { execFileSync } from 'node:child_process';
import fs from 'node:fs';
import os from 'node:os';
import path from 'node:path';
import { actuatedChainFields, beltAxisLoop, browser, closeBrowser, design, designNow, drag, massChainFields, pageFileUrl, repoRoot, requireBuiltPage, withPage } from '../e2e/harness.mjs';

const CYCLES = 30;
const WARM_UP = 5;

/** A flexible structure in modal form (a reduced finite-element model): `modes` lightly damped
 * modes (ζ = 0.02, ω = 1 … ) driven by two actuators with invented mode-shape values; n = 2·modes,
 * m = 2. The listed poles keep each frequency and raise the damping to 0.3. */
export function modalFields(modes) {
  const n = 2 * modes;
  const A = Array.from({ length: n }, () => Array(n).fill(0));
  const B = Array.from({ length: n }, () => [0, 0]);
  const poles = [];
  for (let i = 0; i < modes; i += 1) {
    const w = 1 + 0.5 * i;
    A[2 * i][2 * i + 1] = 1;
    A[2 * i + 1][2 * i] = -w * w;
    A[2 * i + 1][2 * i + 1] = -2 * 0.02 * w;
    B[2 * i + 1] = [Math.sin(0.7 * (i + 1)).toFixed(4), Math.cos(1.3 * (i + 1)).toFixed(4)];
    poles.push(`${(-0.3 * w).toFixed(3)}±${(w * Math.sqrt(1 - 0.09)).toFixed(3)}j`);
  }
  return {
    a: A.map((r) => r.join(' ')).join('\n'),
    b: B.map((r) => r.join(' ')).join('\n'),
    input_names: 'actuator 1, actuator 2',
    input_units: 'N, N',
    poles: poles.join(', '),
    limits: '100, 100',
  };
}

/** The mass chain with two measured positions, an observer, integral action on both, a digital
 * controller at 2 ms with one sample of computation delay, and a 10 s loop: 5,000 samples. */
function fullLoopFields() {
  const f = massChainFields();
  const c = [Array(10).fill(0), Array(10).fill(0)];
  c[0][0] = 1;
  c[1][8] = 1;
  return {
    ...f,
    c: c.map((r) => r.join(' ')).join('\n'),
    observer: 'speed_factor',
    tracking: 'integral',
    tracked_outputs: '1, 2',
    integral_poles: '-4, -4.5',
    sample_time: '0.002',
    computation_delay: true,
    reference: '0.1, 0',
    duration: '10',
  };
}

const SCENARIOS = [
  { key: 'listed_n10_m2', what: 'chain of 5 masses, n = 10, m = 2, listed poles, actuator limits', fields: massChainFields, alternate: ['-3.5', '-3.6'] },
  { key: 'loop_n10_m2_5000', what: 'the same with two measured positions, observer, integral action, digital at 2 ms with a computation delay, 5,000-sample loop', fields: fullLoopFields, alternate: ['-3.5', '-3.6'] },
  { key: 'listed_n50_m2', what: 'flexible structure in modal form, 25 modes: n = 50, m = 2, listed poles, actuator limits', fields: () => modalFields(25), alternate: ['-3.900±12.401j', '-4.000±12.401j'] },
];

function quantile(values, q) {
  const v = [...values].sort((x, y) => x - y);
  const i = (v.length - 1) * q;
  const lo = Math.floor(i);
  const hi = Math.ceil(i);
  return v[lo] + (v[hi] - v[lo]) * (i - lo);
}

async function runScenario(s) {
  return withPage(pageFileUrl, async ({ page }) => {
    const outcome = await design(page, s.fields());
    if (outcome !== 'designed') throw new Error(`${s.key}: ${await page.textContent('#pw-status')}`);
    const raw = await page.evaluate(async ({ cycles, warm, alternate }) => {
      const button = document.getElementById('pw-design');
      const status = document.getElementById('pw-status');
      const poles = document.getElementById('pw-poles');
      const p0 = poles.value;
      const p1 = p0.replace(alternate[0], alternate[1]);
      if (p1 === p0) throw new Error(`pole ${alternate[0]} not in the list`);
      const times = [];
      const deferred = [];
      const outcomes = [];
      const phases = [];
      for (let i = 0; i < cycles + warm; i += 1) {
        poles.value = i % 2 ? p1 : p0;
        button.click(); // synchronous: read → evaluate (parse, analyse, place, simulate) → draw → results
        times.push(Number(status.dataset.cycleMs));
        outcomes.push(status.dataset.outcome);
        phases.push(status.dataset.cyclePhases || '');
        // The robustness analysis the cycle left runs on the page's own timer; wait for it.
        for (let w = 0; status.hasAttribute('data-pending') && w < 10000; w += 1) await new Promise((r) => setTimeout(r, 1));
        if (status.hasAttribute('data-pending')) throw new Error('the robustness analysis did not finish');
        deferred.push(Number(status.dataset.robustnessMs));
      }
      return { times: times.slice(warm), deferred: deferred.slice(warm), outcomes, phases: phases.slice(warm) };
    }, { cycles: CYCLES, warm: WARM_UP, alternate: s.alternate });
    if (!raw.outcomes.every((o) => o === 'designed')) throw new Error(`${s.key}: ${raw.outcomes.join(' ')}`);
    const deferred = raw.deferred.filter((t) => Number.isFinite(t));
    const byPhase = {};
    for (const line of raw.phases) {
      for (const item of line.split(' ').filter(Boolean)) {
        const [k, v] = item.split('=');
        (byPhase[k] ||= []).push(Number(v));
      }
    }
    // A phase missing from a cycle took no time in it.
    const phaseMedians = Object.fromEntries(Object.entries(byPhase).map(([k, v]) => [k, Number(quantile(v.concat(Array(raw.times.length - v.length).fill(0)), 0.5).toFixed(2))]));
    return {
      what: s.what,
      cycles: raw.times.length,
      median_ms: quantile(raw.times, 0.5),
      p95_ms: quantile(raw.times, 0.95),
      max_ms: Math.max(...raw.times),
      deferred_median_ms: deferred.length ? quantile(deferred, 0.5) : null,
      deferred_max_ms: deferred.length ? Math.max(...deferred) : null,
      phase_median_ms: phaseMedians,
    };
  }, { viewport: { width: 1440, height: 900 } });
}

/** Drag the first requested pole by (`dx`, `dy`) px in `steps` moves (one frame each); the
 * page's median update time of that drag (data-drag-median-ms) and its update count. */
async function dragFirstPole(page, dx, dy, steps) {
  await page.locator('#pw-pole-map').scrollIntoViewIfNeeded();
  const box = await page.locator('#pw-pole-map').boundingBox();
  const [x, y] = (await page.getAttribute('#pw-pole-map', 'data-requested-px')).split(' ')[0].split(',').map(Number);
  await drag(page, [box.x + x, box.y + y], dx, dy, steps);
  return { median_ms: Number(await page.getAttribute('#pw-pole-map', 'data-drag-median-ms')), updates: Number(await page.getAttribute('#pw-pole-map', 'data-drag-updates')) };
}

/** Drag updates (move the pole, write the list, quick cycle: design, simulate, draw): a warm-up
 * drag, then one of 60 moves. Without and with the whole loop simulated. */
async function runDrags() {
  return withPage(pageFileUrl, async ({ page }) => {
    if ((await design(page, massChainFields())) !== 'designed') throw new Error('drag: the mass chain was not designed');
    await dragFirstPole(page, -10, 5, 10);
    const plain = await dragFirstPole(page, -60, -45, 60);
    // The belt-axis demo with a head-position measurement, an observer, integral action and a
    // reference step: the continuous loop is simulated on every update.
    if ((await beltAxisLoop(page)) !== 'designed') throw new Error('drag: the belt-axis loop was not designed');
    await dragFirstPole(page, -8, 4, 10);
    const withLoop = await dragFirstPole(page, -40, -30, 60);
    return {
      drag_n10_m2: { what: 'drag a pole of the 5-mass chain (n = 10, m = 2): median update over one drag of 60 moves', ...plain },
      drag_with_loop: { what: 'drag a pole of the belt-axis demo with observer, integral action and the loop simulated', ...withLoop },
    };
  }, { viewport: { width: 1440, height: 900 } });
}


/** Starts work the page runs in slices (`action`: 'search' turns the search on, 'cloud' presses
 * "Sample the uncertain plant") and times it by the page's clock: from the click to the design
 * shown (the cycle after the slices sets data-outcome), the longest main-thread task meanwhile
 * (PerformanceObserver "longtask", tasks over 50 ms; 0 when there were none) and the worst wait
 * of a zero-delay timer queued meanwhile (standing for a keystroke's handler); a robustness
 * analysis that follows the design in a task of its own is timed apart (data-robustness-ms). */
async function timeSlices(page, action) {
  return page.evaluate(async (what) => {
    const status = document.getElementById('pw-status');
    const tasks = [];
    const observer = new PerformanceObserver((list) => list.getEntries().forEach((e) => tasks.push({ start: e.startTime, duration: e.duration })));
    observer.observe({ type: 'longtask', buffered: false });
    let doneAt = null;
    const mutations = new MutationObserver(() => {
      if (doneAt === null && status.hasAttribute('data-outcome')) doneAt = performance.now();
    });
    mutations.observe(status, { attributes: true });
    let probeWorst = 0;
    const probe = () => {
      const queued = performance.now();
      setTimeout(() => {
        probeWorst = Math.max(probeWorst, performance.now() - queued);
        if (doneAt === null) probe();
      }, 0);
    };
    status.removeAttribute('data-outcome');
    const t0 = performance.now();
    if (what === 'search') {
      const box = document.getElementById('pw-search');
      box.checked = true;
      box.dispatchEvent(new Event('change', { bubbles: true }));
    } else {
      document.getElementById('pw-sample-uncertainty').click();
    }
    const pending = status.getAttribute('data-pending');
    probe();
    for (let w = 0; doneAt === null && w < 600000; w += 1) await new Promise((res) => setTimeout(res, 1));
    for (let w = 0; status.hasAttribute('data-pending') && w < 600000; w += 1) await new Promise((res) => setTimeout(res, 1));
    await new Promise((res) => setTimeout(res, 50));
    observer.disconnect();
    mutations.disconnect();
    const during = tasks.filter((t) => t.start < doneAt).map((t) => t.duration);
    const facts = document.getElementById('pw-search-facts')?.textContent ?? '';
    return {
      sliced: pending === what,
      total_ms: doneAt - t0,
      trial_designs: Number((/([0-9]+) trial designs/.exec(facts) || [])[1]),
      longest_task_ms: during.length ? Math.max(...during) : 0,
      long_tasks: during.length,
      worst_timer_delay_ms: probeWorst,
      final_cycle_ms: Number(status.dataset.cycleMs),
      final_cycle_phases: status.dataset.cyclePhases,
      robustness_ms: Number(status.dataset.robustnessMs),
      outcome: status.dataset.outcome,
      cloud: document.getElementById('pw-uncertainty').textContent.split('.')[0],
    };
  }, action);
}

/** The search for the fastest design on the actuated chain (n = 30, m = 15), started by turning
 * the search on; the page runs it in slices ([`timeSlices`]). */
async function runSearch() {
  return withPage(pageFileUrl, async ({ page }) => {
    if ((await design(page, actuatedChainFields(15))) !== 'designed') throw new Error(`search: the chain was not designed: ${await page.textContent('#pw-status')}`);
    const { cloud, outcome, ...r } = await timeSlices(page, 'search');
    if (outcome !== 'designed' || !r.sliced) throw new Error(`search: ${outcome}, sliced ${r.sliced}`);
    return { what: 'turn on the search for the fastest design: chain of 15 masses each with its actuator (n = 30, m = 15), run in slices', ...r };
  }, { viewport: { width: 1440, height: 900 } });
}

/** Sampling the uncertain plant, drawn by the page in slices ([`timeSlices`]): the belt-axis
 * loop (observer, integral action; 4 states) at the largest sample count, and the modal plant at
 * the page's state limit. */
async function runClouds() {
  const out = {};
  const cases = [
    ['cloud_belt_loop_10000', 'the belt-axis loop with observer and integral action, A(2, 1) ±20 % and B ±10 %: 10,000 samples, each closed, solved and simulated', beltAxisLoop, 'A 2 1 20%\nB 10%', '10000'],
    ['cloud_modal_n50_500', 'flexible structure, 25 modes (n = 50, m = 2), B ±10 % (norm-bounded): 500 samples', (page) => design(page, modalFields(25)), 'B 10%', '500'],
  ];
  for (const [key, what, load, entries, samples] of cases) {
    out[key] = await withPage(pageFileUrl, async ({ page }) => {
      if ((await load(page)) !== 'designed') throw new Error(`${key}: not designed: ${await page.textContent('#pw-status')}`);
      await page.fill('#pw-uncertain_entries', entries);
      await page.fill('#pw-uncertainty_samples', samples);
      if ((await designNow(page)) !== 'designed') throw new Error(`${key}: ${await page.textContent('#pw-status')}`);
      const { trial_designs: _, outcome, ...r } = await timeSlices(page, 'cloud');
      if (outcome !== 'designed' || !r.sliced || !r.cloud.startsWith(`${samples} samples`)) throw new Error(`${key}: ${outcome}, sliced ${r.sliced}: ${r.cloud}`);
      return { what, ...r };
    }, { viewport: { width: 1440, height: 900 } });
  }
  return out;
}

function machine() {
  const cpus = os.cpus();
  return { cpu: cpus[0]?.model ?? 'unknown', cores: cpus.length, memory_gib: Math.round(os.totalmem() / 2 ** 30), os: `${os.type()} ${os.release()}` };
}

function commit() {
  try {
    const id = execFileSync('git', ['rev-parse', '--short', 'HEAD'], { cwd: repoRoot }).toString().trim();
    const dirty = execFileSync('git', ['status', '--porcelain', '--untracked-files=no'], { cwd: repoRoot }).toString().trim() !== '';
    return dirty ? `${id}+changes` : id;
  } catch {
    return 'unknown';
  }
}

async function main() {
  requireBuiltPage();
  const only = process.argv.find((a) => a.startsWith('--only='))?.slice(7);
  const results = {};
  for (const s of SCENARIOS.filter((x) => !only || x.key === only)) {
    results[s.key] = await runScenario(s);
    const r = results[s.key];
    const def = r.deferred_median_ms === null ? '' : `; then robustness ${r.deferred_median_ms.toFixed(1)} ms (max ${r.deferred_max_ms.toFixed(1)})`;
    console.log(`  phases: ${JSON.stringify(r.phase_median_ms)}`);
    console.log(`${s.key}: median ${r.median_ms.toFixed(2)} ms, 95th percentile ${r.p95_ms.toFixed(2)} ms, max ${r.max_ms.toFixed(2)} ms over ${r.cycles} cycles${def}  (${r.what})`);
  }
  if (!only || only === 'search') {
    const r = await runSearch();
    results.search_n30_m15 = r;
    console.log(`search_n30_m15: designed ${r.total_ms.toFixed(0)} ms after the click (${r.trial_designs} trial designs); longest task ${r.longest_task_ms.toFixed(1)} ms (${r.long_tasks} over 50 ms); a zero-delay timer waited at most ${r.worst_timer_delay_ms.toFixed(1)} ms; the cycle after the search ${r.final_cycle_ms.toFixed(1)} ms (${r.final_cycle_phases}), its robustness analysis ${r.robustness_ms.toFixed(1)} ms  (${r.what})`);
  }
  if (!only || only === 'cloud') {
    for (const [key, r] of Object.entries(await runClouds())) {
      results[key] = r;
      console.log(`${key}: designed ${r.total_ms.toFixed(0)} ms after the click; longest task ${r.longest_task_ms.toFixed(1)} ms (${r.long_tasks} over 50 ms); a zero-delay timer waited at most ${r.worst_timer_delay_ms.toFixed(1)} ms; the cycle after the samples ${r.final_cycle_ms.toFixed(1)} ms (${r.final_cycle_phases})  (${r.what}; ${r.cloud})`);
    }
  }
  if (!only || only === 'drag') {
    for (const [key, r] of Object.entries(await runDrags())) {
      results[key] = r;
      console.log(`${key}: median ${r.median_ms.toFixed(2)} ms over ${r.updates} updates  (${r.what})`);
    }
  }
  const b = await browser();
  const entry = { date: new Date().toISOString(), benchmark: 'page_cycle', commit: commit(), machine: machine(), browser: `Chromium ${b.version()} (headless)`, results };
  await closeBrowser();
  if (process.argv.includes('--record')) {
    fs.appendFileSync(path.join(repoRoot, 'tests', 'bench', 'log.jsonl'), `${JSON.stringify(entry)}\n`);
    console.log('appended to tests/bench/log.jsonl');
  }
}

if (process.argv[1] && process.argv[1].endsWith("page_cycle.mjs")) main().catch(async (e) => {
  console.error(e);
  await closeBrowser();
  process.exit(1);
});
