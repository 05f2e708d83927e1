// Polewright page bootstrap.
//
// scripts/inline_page.py places this file after the wasm-bindgen glue in the
// page's single inline module script, so `initSync`, `version`, `draw_pole_map`,
// `pick_pole` and `draw_time_plot` below are the glue's own functions. The wasm
// bytes come from the base64 data block #pw-wasm in the same page: nothing is
// ever fetched. The inliner wraps this file in a block, so its names cannot
// clash with the glue's. Keep this file small; the work belongs in Rust.

const byId = (id) => document.getElementById(id);

function showError(message) {
  const box = byId('pw-error');
  if (box) {
    // Keep a message the panic hook already wrote; add the JS-side one.
    box.textContent = box.hidden ? message : `${box.textContent}\n${message}`;
    box.hidden = false;
  }
  const status = byId('pw-status');
  if (status) {
    status.textContent = 'Stopped: see the message above.';
    status.classList.add('is-error');
  }
  console.error(message);
}

function guarded(fn) {
  return (...args) => {
    try {
      return fn(...args);
    } catch (err) {
      showError(`Polewright error: ${err && err.message ? err.message : String(err)}`);
      return undefined;
    }
  };
}

function wasmBytes() {
  const text = byId('pw-wasm').textContent.replace(/\s+/g, '');
  const binary = atob(text);
  const bytes = new Uint8Array(binary.length);
  for (let i = 0; i < binary.length; i += 1) bytes[i] = binary.charCodeAt(i);
  return bytes;
}

// ---- illustrative data (replaced by the design results later) ----

const demoPoles = {
  open_loop: [[0, 0], [-1.2, 0], [3.1, 0], [-3.3, 0]],
  closed_loop: [[-2, 1.5], [-2, -1.5], [-4, 0.8], [-4, -0.8]],
  not_assigned: [[-0.6, 0]],
};

function toDiscrete(points, h) {
  // z = exp(s h)
  return points.map(([re, im]) => {
    const r = Math.exp(re * h);
    return [r * Math.cos(im * h), r * Math.sin(im * h)];
  });
}

function poleScene() {
  const discrete = byId('pw-domain').value === 'discrete';
  if (!discrete) return { ...demoPoles, discrete };
  const h = 0.25;
  return {
    open_loop: toDiscrete(demoPoles.open_loop, h),
    closed_loop: toDiscrete(demoPoles.closed_loop, h),
    not_assigned: toDiscrete(demoPoles.not_assigned, h),
    discrete,
  };
}

function timeScene() {
  const t = [];
  const x1 = [];
  const x2 = [];
  const u = [];
  for (let i = 0; i <= 400; i += 1) {
    const s = i * 0.01;
    const e = Math.exp(-2 * s);
    t.push(s);
    x1.push(e * (Math.cos(1.5 * s) + 1.33 * Math.sin(1.5 * s)) * 0.8 + 0.2 * Math.exp(-4 * s));
    x2.push(-e * 2.1 * Math.sin(1.5 * s));
    u.push(Math.max(-2.5, -3.2 * e * Math.cos(1.5 * s - 0.4)));
  }
  return {
    t,
    series: [
      { name: 'x₁ position', values: x1 },
      { name: 'x₂ velocity', values: x2 },
      { name: 'u input', values: u },
    ],
    limits: [
      { value: 2.5, label: 'u max' },
      { value: -2.5, label: 'u min' },
    ],
    band: { lower: -0.02, upper: 0.02, label: '±2 % band' },
    x_label: 't [s]',
    y_label: 'state / input',
  };
}

function formatPole(p) {
  const re = p.re.toPrecision(4).replace('-', '−');
  const im = Math.abs(p.im).toPrecision(4);
  return `${re} ${p.im < 0 ? '−' : '+'} ${im}j`;
}

const setNames = { open_loop: 'open-loop', closed_loop: 'closed-loop', not_assigned: 'not assignable' };

const redraw = guarded(() => {
  draw_pole_map('pw-pole-map', poleScene());
  draw_time_plot('pw-time-plot', timeScene());
});

const onPointer = guarded((event) => {
  const pick = pick_pole('pw-pole-map', poleScene(), event.offsetX, event.offsetY);
  byId('pw-pole-pick').textContent = pick
    ? `${setNames[pick.set] || pick.set} pole ${pick.index + 1}: ${formatPole(pick)}`
    : 'Point at a pole to read its value.';
});

const boot = guarded(() => {
  initSync({ module: wasmBytes() });
  byId('pw-version').textContent = version();
  redraw();
  byId('pw-status').textContent = 'Ready. Showing illustrative data.';
});

window.addEventListener('error', (e) => showError(`Polewright error: ${e.message}`));
window.addEventListener('unhandledrejection', (e) => showError(`Polewright error: ${e.reason}`));
byId('pw-form').addEventListener('submit', (e) => e.preventDefault());
byId('pw-domain').addEventListener('change', redraw);
byId('pw-pole-map').addEventListener('pointermove', onPointer);
let resizePending = false;
window.addEventListener('resize', () => {
  if (resizePending) return;
  resizePending = true;
  requestAnimationFrame(() => {
    resizePending = false;
    redraw();
  });
});
window.addEventListener('beforeprint', () => {
  for (const d of document.querySelectorAll('details')) d.open = true;
});

boot();
