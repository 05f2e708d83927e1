// Polewright page bootstrap: wiring only.
//
// scripts/inline_page.py places this file after the wasm-bindgen glue in the
// page's single inline module script, so `initSync`, `version`, `init_page`,
// `update_page`, … below are the glue's own functions. The wasm bytes come from
// the base64 data block #pw-wasm in the same page: nothing is ever fetched.
// The inliner wraps this file in a block, so its names cannot clash with the
// glue's. Rust (crate/web/src/lib.rs) reads the form, designs, and builds every
// result element and canvas; this file only forwards events to it.

const byId = (id) => document.getElementById(id);
const DEBOUNCE_MS = 150;

let ready = false;

// After an internal error the page stops designing until it is reloaded: what runs next could
// be built on a broken state. (With Remember on, the reload brings the design back.)
function showError(message) {
  ready = false;
  const box = byId('pw-error');
  if (box) {
    // Keep a message the panic hook already wrote; add the JS-side one.
    box.textContent = box.hidden ? message : `${box.textContent}\n${message}`;
    box.hidden = false;
  }
  const status = byId('pw-status');
  if (status) {
    status.textContent = 'Stopped after an internal error (see the message above): reload the page to go on.';
    status.classList.add('is-error');
  }
  console.error(message);
}

function guarded(fn) {
  return (...args) => {
    if (!ready) return undefined; // events before the wasm is running are ignored
    try {
      return fn(...args);
    } catch (err) {
      showError(`Polewright error: ${err && err.message ? err.message : String(err)}`);
      return undefined;
    }
  };
}

// The wasm is stored raw-deflate compressed; the browser's own DecompressionStream unpacks it
// from a Blob in memory (not a fetch: nothing touches the network, and connect-src 'none' holds).
async function wasmBytes() {
  const block = byId('pw-wasm');
  const text = block.textContent.replace(/\s+/g, '');
  const binary = atob(text);
  const packed = new Uint8Array(binary.length);
  for (let i = 0; i < binary.length; i += 1) packed[i] = binary.charCodeAt(i);
  if (block.dataset.encoding !== 'deflate-raw') return packed;
  if (typeof DecompressionStream !== 'function') {
    throw new Error('this browser cannot unpack the page (it lacks DecompressionStream); use Chromium 103+, Firefox 113+ or Safari 16.4+');
  }
  const stream = new Blob([packed]).stream().pipeThrough(new DecompressionStream('deflate-raw'));
  return new Uint8Array(await new Response(stream).arrayBuffer());
}


let pending = 0;
const designNow = guarded(() => {
  clearTimeout(pending);
  if (ready) update_page();
  rememberNow();
});
const designSoon = () => {
  if (!ready) return;
  clearTimeout(pending);
  pending = setTimeout(designNow, DEBOUNCE_MS);
};

const loadDemo = guarded(() => {
  load_demo(Number(byId('pw-demo').value));
  designNow();
});
const undoForm = (redo) => guarded(() => {
  if (undo_form(redo)) designNow();
});
// Ctrl+Z / Ctrl+Y outside a text field undo and redo form changes (inside one, the browser's
// own undo edits the text; on the pole map, its own keys undo pole edits).
const isTextField = (el) => el && (el.tagName === 'TEXTAREA' || (el.tagName === 'INPUT' && el.type !== 'checkbox' && el.type !== 'file'));

// Keys on the pole map: N / P (PageDown / PageUp) choose a pole, Home / End the first / last;
// the arrow keys move the chosen requested pole (Shift: larger steps); Delete removes it,
// + adds a real pole; Ctrl+Z / Ctrl+Y (or Ctrl+Shift+Z) undo and redo; Escape ends a drag.
const MOVE_KEYS = { ArrowRight: 'right', ArrowLeft: 'left', ArrowUp: 'up', ArrowDown: 'down' };
const onPoleKey = guarded((event) => {
  const key = event.key;
  const ctrl = event.ctrlKey || event.metaKey;
  if (ctrl && (key === 'z' || key === 'Z')) undo_edit(event.shiftKey);
  else if (ctrl && (key === 'y' || key === 'Y')) undo_edit(true);
  else if (ctrl || event.altKey) return;
  else if (key in MOVE_KEYS) move_pole(MOVE_KEYS[key], event.shiftKey);
  else if (key === 'n' || key === 'N' || key === 'PageDown') step_pole(1);
  else if (key === 'p' || key === 'P' || key === 'PageUp') step_pole(-1);
  else if (key === 'Home' || key === 'End') jump_pole(key === 'End');
  else if (key === 'Delete' || key === 'Backspace') remove_pole();
  else if (key === '+' || key === 'Insert') add_pole('real');
  else if (key === 'Escape') pole_pointer_up(true);
  else if (key === 'i' || key === 'I' || key === 'o' || key === 'O') zoomAtCentre(poleMap, key.toLowerCase() === 'i' ? 1.5 : 1 / 1.5);
  else if (key === '0') reset_plot(poleMap.id);
  else return;
  event.preventDefault();
});

function selectText(el) {
  const range = document.createRange();
  range.selectNodeContents(el);
  const sel = window.getSelection();
  sel.removeAllRanges();
  sel.addRange(range);
}

// Copy buttons: data-copy names the text (Rust's copy_text), data-copy-target the <pre>
// that shows it (selected for Ctrl+C when the clipboard is not available), data-copy-status
// the element that says what happened.
const copyText = guarded((button) => {
  const text = copy_text(button.dataset.copy);
  const note = byId(button.dataset.copyStatus);
  const pre = byId(button.dataset.copyTarget);
  if (!text) {
    note.textContent = 'There is nothing to copy.';
    return;
  }
  const fallback = () => {
    pre.closest('details').open = true;
    selectText(pre);
    note.textContent = 'The text is selected: press Ctrl+C (or ⌘C) to copy it.';
  };
  if (navigator.clipboard && navigator.clipboard.writeText) {
    navigator.clipboard.writeText(text).then(() => {
      note.textContent = 'Copied.';
    }, fallback);
  } else {
    fallback();
  }
});

// The design document: save (download), open (picker or drop), remember in this browser,
// undo a load or open, and ask before leaving with unsaved changes. Rust checks and converts;
// this only moves text between the page and the browser.
const STORE_ON = 'polewright.remember';
const STORE_FORM = 'polewright.form';
let savedText = null; // the document as last saved, opened or first shown
const storage = () => {
  try {
    return window.localStorage;
  } catch (err) {
    return null; // storage refused (some browsers for file:// pages): remembering is off
  }
};
const remembering = () => byId('pw-remember').checked;
function rememberNow() {
  const store = storage();
  if (!store || !remembering()) return;
  try {
    store.setItem(STORE_ON, '1');
    store.setItem(STORE_FORM, form_state());
  } catch (err) {
    byId('pw-file-status').textContent = `This browser did not store the design (${err.message}).`;
  }
}
const markSaved = guarded(() => {
  savedText = document_text();
});
const saveDesign = guarded(() => {
  const text = document_text();
  const title = byId('pw-title').value.trim().replace(/[^A-Za-z0-9._ -]+/g, '').replace(/\s+/g, '-') || 'design';
  const link = document.createElement('a');
  link.href = `data:application/json;charset=utf-8,${encodeURIComponent(text)}`;
  link.download = `${title}.json`;
  document.body.appendChild(link);
  link.click();
  link.remove();
  savedText = text;
  byId('pw-file-status').textContent = `Saved as ${link.download} (in the browser's download folder).`;
});
const exportFiles = guarded(() => {
  const format = byId('pw-export-format').value;
  const precision = byId('pw-export-precision').value;
  const answer = export_files(format, precision);
  if (typeof answer === 'string') {
    byId('pw-export-status').textContent = answer;
    return;
  }
  for (const file of answer) {
    const link = document.createElement('a');
    link.href = `data:text/plain;charset=utf-8,${encodeURIComponent(file.contents)}`;
    link.download = file.name;
    document.body.appendChild(link);
    link.click();
    link.remove();
  }
  byId('pw-export-status').textContent = `Exported ${answer.map((f) => f.name).join(', ')} (in the browser's download folder).`;
});
const printRecord = guarded(() => {
  const answer = record_fragment_html(new Date().toISOString().slice(0, 10));
  if (answer.startsWith('Not ')) {
    byId('pw-export-status').textContent = answer;
    return;
  }
  byId('pw-record').innerHTML = answer;
  document.body.classList.add('printing-record');
  window.print();
});
window.addEventListener('afterprint', () => document.body.classList.remove('printing-record'));
const openText = guarded((text, name) => {
  const problem = open_document(text, name);
  if (!problem) {
    designNow();
    markSaved();
  }
});
// Design files over 8 MiB are refused unread (the same limit as the command line's).
const MAX_DESIGN_BYTES = 8 * 1024 * 1024;
function openFile(file) {
  if (!file) return;
  if (file.size > MAX_DESIGN_BYTES) {
    byId('pw-file-status').textContent = `${file.name} is ${file.size} bytes; design files of up to ${MAX_DESIGN_BYTES} bytes (8 MiB) are read. Nothing was changed.`;
    return;
  }
  file.text().then((text) => openText(text, file.name), (err) => {
    byId('pw-file-status').textContent = `${file.name} could not be read: ${err.message}`;
  });
}

async function boot() {
  try {
    initSync({ module: await wasmBytes() });
    ready = true;
    byId('pw-version').textContent = version();
    init_page();
    const store = storage();
    if (store && store.getItem(STORE_ON) === '1') {
      byId('pw-remember').checked = true;
      const saved = store.getItem(STORE_FORM);
      if (saved && restore_form_state(saved)) byId('pw-file-status').textContent = 'The remembered design was restored.';
    }
    update_page();
    watchCanvasesInView();
    markSaved();
  } catch (err) {
    showError(`Polewright could not start: ${err && err.message ? err.message : String(err)}`);
  }
}

window.addEventListener('error', (e) => showError(`Polewright error: ${e.message}`));
window.addEventListener('unhandledrejection', (e) => showError(`Polewright error: ${e.reason}`));

const form = byId('pw-form');
form.addEventListener('submit', (e) => {
  e.preventDefault();
  designNow();
});
form.addEventListener('input', (e) => {
  if (e.target.id !== 'pw-demo') designSoon();
});
// A choice (select, checkbox) redesigns at once: it also shows or hides fields.
form.addEventListener('change', (e) => {
  if (e.target.id !== 'pw-demo' && (e.target.tagName === 'SELECT' || e.target.type === 'checkbox')) designNow();
});
byId('pw-demo').addEventListener('change', guarded((e) => show_demo_description(Number(e.target.value))));
byId('pw-load-demo').addEventListener('click', loadDemo);
byId('pw-form-undo').addEventListener('click', undoForm(false));
byId('pw-form-redo').addEventListener('click', undoForm(true));
document.addEventListener('keydown', (e) => {
  const ctrl = e.ctrlKey || e.metaKey;
  if (!ctrl || isTextField(e.target) || e.target === poleMap) return;
  if (e.key === 'z' || e.key === 'Z') undoForm(e.shiftKey)();
  else if (e.key === 'y' || e.key === 'Y') undoForm(true)();
  else return;
  e.preventDefault();
});
byId('pw-save').addEventListener('click', saveDesign);
byId('pw-export').addEventListener('click', exportFiles);
byId('pw-print-record').addEventListener('click', printRecord);
// Sampling the uncertain plant can take a while: the page draws the samples in slices and
// says so itself (status line, button disabled, list busy), then shows the design with them.
byId('pw-sample-uncertainty').addEventListener('click', guarded(() => sample_uncertainty()));
byId('pw-open-file').addEventListener('change', (e) => {
  openFile(e.target.files[0]);
  e.target.value = '';
});
document.addEventListener('dragover', (e) => {
  if (e.dataTransfer && [...e.dataTransfer.types].includes('Files')) {
    e.preventDefault();
    document.body.classList.add('is-dropping');
  }
});
document.addEventListener('dragleave', () => document.body.classList.remove('is-dropping'));
document.addEventListener('drop', (e) => {
  document.body.classList.remove('is-dropping');
  if (e.dataTransfer && e.dataTransfer.files.length) {
    e.preventDefault();
    openFile(e.dataTransfer.files[0]);
  }
});
byId('pw-remember').addEventListener('change', (e) => {
  const store = storage();
  if (!store) {
    e.target.checked = false;
    byId('pw-file-status').textContent = 'This browser does not allow storage for this page: nothing is remembered.';
    return;
  }
  if (e.target.checked) {
    rememberNow();
  } else {
    store.removeItem(STORE_ON);
    store.removeItem(STORE_FORM);
  }
});
window.addEventListener('beforeunload', (e) => {
  if (!ready || savedText === null) return;
  let now = null;
  try {
    now = document_text();
  } catch (err) {
    return;
  }
  if (now !== savedText) {
    e.preventDefault();
    e.returnValue = '';
  }
});
for (const button of document.querySelectorAll('button[data-copy]')) {
  button.addEventListener('click', () => copyText(button));
}
byId('pw-normalise').addEventListener('change', guarded((e) => set_state_scale(e.target.checked)));
byId('pw-pole-zoom').addEventListener('change', guarded((e) => set_pole_zoom(e.target.checked)));
byId('pw-signal-axes').addEventListener('change', guarded((e) => set_signal_axes(e.target.value)));
byId('pw-digits').addEventListener('change', guarded((e) => set_display_digits(Number(e.target.value))));

const poleMap = byId('pw-pole-map');
// Dragging a requested pole: at most one redesign per animation frame, at the latest
// pointer position (moves in between are coalesced).
let dragging = false;
let queued = null;
const flushMove = guarded(() => {
  const at = queued;
  queued = null;
  if (at) pole_pointer_move(at[0], at[1]);
});
// A drag that starts away from the requested poles moves the view instead (the buttons
// under the map do the same with single clicks).
let panFrom = null;
poleMap.addEventListener('pointerdown', guarded((e) => {
  if (e.button !== 0) return;
  if (pole_pointer_down(e.offsetX, e.offsetY)) {
    dragging = true;
    poleMap.setPointerCapture(e.pointerId);
    poleMap.classList.add('is-dragging');
    poleMap.focus({ preventScroll: true });
    e.preventDefault();
  } else {
    panFrom = [e.offsetX, e.offsetY];
    poleMap.setPointerCapture(e.pointerId);
    poleMap.classList.add('is-panning');
  }
}));
poleMap.addEventListener('pointermove', guarded((e) => {
  if (panFrom) {
    const [x, y] = panFrom;
    panFrom = [e.offsetX, e.offsetY];
    if (x !== e.offsetX || y !== e.offsetY) pan_plot(poleMap.id, e.offsetX - x, e.offsetY - y);
    return;
  }
  if (!dragging) {
    hover_pole(e.offsetX, e.offsetY);
    return;
  }
  if (!queued) requestAnimationFrame(flushMove);
  queued = [e.offsetX, e.offsetY];
}));
const endDrag = (cancel) => guarded(() => {
  if (panFrom) {
    panFrom = null;
    poleMap.classList.remove('is-panning');
  }
  if (!dragging) return;
  if (!cancel) flushMove();
  queued = null;
  dragging = false;
  poleMap.classList.remove('is-dragging');
  pole_pointer_up(cancel);
});
poleMap.addEventListener('pointerup', endDrag(false));
poleMap.addEventListener('pointercancel', endDrag(true));
poleMap.addEventListener('lostpointercapture', endDrag(false));
poleMap.addEventListener('pointerleave', guarded(() => {
  if (!dragging) hover_pole(-1e6, -1e6);
}));
byId('pw-undo').addEventListener('click', guarded(() => undo_edit(false)));
byId('pw-redo').addEventListener('click', guarded(() => undo_edit(true)));
byId('pw-add-real').addEventListener('click', guarded(() => add_pole('real')));
byId('pw-add-pair').addEventListener('click', guarded(() => add_pole('pair')));
byId('pw-remove-pole').addEventListener('click', guarded(() => remove_pole()));
byId('pw-adopt').addEventListener('click', guarded(() => adopt_poles()));
byId('pw-pin').addEventListener('click', guarded(() => pin_design()));
byId('pw-unpin').addEventListener('click', guarded(() => unpin_design()));
poleMap.addEventListener('keydown', onPoleKey);
poleMap.addEventListener('focus', guarded(() => step_pole(0)));
// Leaving the map for its own toolbar (Remove, Undo…) keeps the chosen pole; leaving both
// drops it.
const editBar = document.querySelector('.edit-bar');
const leavesEditing = (e) => !(e.relatedTarget && (e.relatedTarget === poleMap || editBar.contains(e.relatedTarget)));
poleMap.addEventListener('blur', guarded((e) => {
  if (leavesEditing(e)) clear_pole_focus();
}));
editBar.addEventListener('focusout', guarded((e) => {
  if (leavesEditing(e)) clear_pole_focus();
}));

// Canvas sizes are read only here, after layout (the design cycle never forces one).
let resizePending = false;
const resized = () => {
  if (resizePending) return;
  resizePending = true;
  requestAnimationFrame(() => {
    resizePending = false;
    guarded(canvases_resized)();
  });
};
window.addEventListener('resize', resized);
if (typeof ResizeObserver === 'function') {
  const observer = new ResizeObserver(resized);
  for (const canvas of document.querySelectorAll('canvas.plot')) observer.observe(canvas);
}
// A canvas out of view is painted when it comes near the window (the cycle skips it);
// watched from start-up on (boot calls this once the wasm runs).
const plotCanvases = [...document.querySelectorAll('canvas.plot')];
function watchCanvasesInView() {
  if (typeof IntersectionObserver !== 'function') return;
  const seen = new IntersectionObserver((entries) => {
    for (const e of entries) guarded(canvas_in_view)(e.target.id, e.isIntersecting);
  }, { rootMargin: '200px' });
  for (const canvas of plotCanvases) seen.observe(canvas);
}
window.addEventListener('beforeprint', () => {
  for (const d of document.querySelectorAll('details')) d.open = true;
  for (const canvas of plotCanvases) guarded(canvas_in_view)(canvas.id, true);
});

boot();

// Form sections fold under their headings; a section link unfolds its section and brings it
// into view in the form pane (Rust unfolds a section itself when one of its fields gets an error).
function setSectionOpen(section, open) {
  section.classList.toggle('is-collapsed', !open);
  section.querySelector('.section-toggle').setAttribute('aria-expanded', String(open));
}
document.querySelectorAll('.section-toggle').forEach((button) => {
  button.addEventListener('click', () => {
    const section = button.closest('.form-section');
    setSectionOpen(section, section.classList.contains('is-collapsed'));
  });
});
document.querySelectorAll('.section-nav a').forEach((link) => {
  link.addEventListener('click', (event) => {
    event.preventDefault();
    const section = byId(link.getAttribute('href').slice(1));
    setSectionOpen(section, true);
    section.scrollIntoView({ block: 'start' });
    section.querySelector('.section-toggle').focus({ preventScroll: true });
  });
});

// Zoom and pan (the views are Rust's): the wheel zooms about the pointer, a drag on a time plot
// moves its time window, keys on a focused plot (+ / − or I / O zoom, ← / → move, 0 shows
// everything; on the pole map I / O and 0), a double click shows everything again, and the
// buttons under each plot do the same with single clicks.
function zoomAtCentre(canvas, factor) {
  zoom_plot(canvas.id, factor, canvas.clientWidth / 2, canvas.clientHeight / 2);
}
function plotTools(canvas) {
  const bar = document.createElement('div');
  bar.className = 'plot-tools';
  bar.setAttribute('role', 'group');
  bar.setAttribute('aria-label', 'View of this plot');
  const tools = [['Zoom in', () => zoomAtCentre(canvas, 1.5)], ['Zoom out', () => zoomAtCentre(canvas, 1 / 1.5)],
    ['Pan left', () => pan_plot(canvas.id, canvas.clientWidth / 4, 0)], ['Pan right', () => pan_plot(canvas.id, -canvas.clientWidth / 4, 0)],
    ['Show all', () => reset_plot(canvas.id)]];
  for (const [label, act] of tools) {
    const b = document.createElement('button');
    b.type = 'button';
    b.textContent = label;
    b.tabIndex = -1; // keyboard users have the plot's own keys
    b.addEventListener('click', guarded(act));
    bar.appendChild(b);
  }
  canvas.closest('figure').after(bar);
}
for (const canvas of document.querySelectorAll('canvas.plot')) {
  canvas.addEventListener('wheel', guarded((e) => {
    e.preventDefault();
    zoom_plot(canvas.id, e.deltaY < 0 ? 1.25 : 1 / 1.25, e.offsetX, e.offsetY);
  }), { passive: false });
  canvas.addEventListener('dblclick', guarded(() => reset_plot(canvas.id)));
  if (canvas === poleMap) continue;
  canvas.tabIndex = 0;
  canvas.setAttribute('aria-keyshortcuts', '+ - ArrowLeft ArrowRight 0');
  plotTools(canvas);
  let from = null;
  canvas.addEventListener('pointerdown', (e) => {
    if (e.button !== 0) return;
    from = e.offsetX;
    canvas.setPointerCapture(e.pointerId);
  });
  canvas.addEventListener('pointermove', guarded((e) => {
    if (from === null) return;
    pan_plot(canvas.id, e.offsetX - from, 0);
    from = e.offsetX;
  }));
  const stop = () => { from = null; };
  canvas.addEventListener('pointerup', stop);
  canvas.addEventListener('pointercancel', stop);
  canvas.addEventListener('keydown', guarded((e) => {
    const k = e.key;
    if (e.ctrlKey || e.metaKey || e.altKey) return;
    if (k === '+' || k === '=' || k === 'i' || k === 'I') zoomAtCentre(canvas, 1.5);
    else if (k === '-' || k === 'o' || k === 'O') zoomAtCentre(canvas, 1 / 1.5);
    else if (k === 'ArrowLeft') pan_plot(canvas.id, canvas.clientWidth / 10, 0);
    else if (k === 'ArrowRight') pan_plot(canvas.id, -canvas.clientWidth / 10, 0);
    else if (k === '0' || k === 'Home') reset_plot(canvas.id);
    else return;
    e.preventDefault();
  }));
}
byId('pw-zoom-in').addEventListener('click', guarded(() => zoomAtCentre(poleMap, 1.5)));
byId('pw-zoom-out').addEventListener('click', guarded(() => zoomAtCentre(poleMap, 1 / 1.5)));
byId('pw-zoom-reset').addEventListener('click', guarded(() => reset_plot(poleMap.id)));
for (const [id, dx, dy] of [['pw-view-left', 1, 0], ['pw-view-right', -1, 0], ['pw-view-up', 0, 1], ['pw-view-down', 0, -1]]) {
  byId(id).addEventListener('click', guarded(() => pan_plot(poleMap.id, dx * poleMap.clientWidth / 4, dy * poleMap.clientHeight / 4)));
}

// After the results change (any path: typing, a drag, a file, undo), mark the tables that
// scroll sideways as focusable regions at the next frame, when layout is computed anyway.
let tablesPending = false;
new MutationObserver(() => {
  if (tablesPending) return;
  tablesPending = true;
  requestAnimationFrame(() => {
    tablesPending = false;
    guarded(refresh_scrollable_tables)();
  });
}).observe(document.querySelector('.outputs'), { childList: true, subtree: true });
