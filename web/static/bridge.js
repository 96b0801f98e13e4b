// The bridge to the engine: a Web Worker running Go compiled to
// WebAssembly. It starts and restarts the worker, sends requests and keeps
// the engine's copy of the notebook in step with the page's, cell by cell.

import { docText, domID, el, notice, state, STATUS_WORDS, text } from './state.js';
import { applyView } from './cells.js';
import { endRun } from './compute.js';

export function workerURL() {
  if (!state.standalone) return 'worker.js';
  const src = text('src-wasm-exec') + '\n' + text('src-worker');
  return URL.createObjectURL(new Blob([src], { type: 'text/javascript' }));
}

export async function loadModule() {
  if (state.standalone) {
    const b64 = text('src-wasm').replace(/\s+/g, '');
    const gz = Uint8Array.fromBase64 ? Uint8Array.fromBase64(b64)
      : Uint8Array.from(atob(b64), (c) => c.charCodeAt(0));
    const raw = await new Response(new Blob([gz]).stream()
      .pipeThrough(new DecompressionStream('gzip'))).arrayBuffer();
    return WebAssembly.compile(raw);
  }
  const r = await fetch('gapbook.wasm');
  if (!r.ok) throw new Error('the engine gapbook.wasm is missing (' + r.status + '); build it with: make wasm');
  return WebAssembly.compileStreaming(r);
}

export function startWorker() {
  forget(); // a fresh engine has no notebook yet
  const w = new Worker(workerURL());
  state.worker = w;
  state.ready = new Promise((resolve, reject) => {
    w.onmessage = (e) => {
      let m;
      try { m = JSON.parse(e.data); } catch { return; }
      if (m.type === 'ready') {
        state.kinds = new Map(m.kinds.map((k) => [k.name, k]));
        state.caution = m.caution;
        resolve();
        return;
      }
      if (m.type === 'fatal') { reject(new Error(m.error)); return; }
      if (m.type === 'exit') { engineFailed('The engine stopped unexpectedly (for example out of memory)'); return; }
      const p = state.pending.get(m.id);
      if (!p) return;
      if (m.type === 'done') { state.pending.delete(m.id); p.resolve(m); }
      else if (m.type === 'error') {
        // What the engine holds is no longer certain: send it all next time.
        forget();
        state.pending.delete(m.id);
        p.reject(new Error(m.error));
      }
      else if (p.onEvent) p.onEvent(m);
    };
  });
  w.onerror = (e) => {
    e.preventDefault();
    engineFailed('The engine stopped unexpectedly: ' + (e.message || 'unknown error'));
  };
  w.postMessage({ module: state.module });
}

// engineFailed starts a fresh engine after a crash; the notebook lives in
// the page and in the autosave, so nothing is lost but the running cell.
export function engineFailed(why) {
  const run = state.running;
  failPending(why + '; a fresh engine was started');
  restartWorker();
  if (run) {
    state.running = null;
    for (const id of run.cells) {
      const sec = document.getElementById(domID(id));
      const v = state.views.get(id);
      if (sec && v) applyView(sec, v);
    }
    // The cell that was computing is the likely cause: say so on it.
    const sec = run.current && document.getElementById(domID(run.current));
    if (sec) {
      sec.dataset.status = 'error';
      sec.querySelector('.status').textContent = STATUS_WORDS.error;
      sec.querySelector('.cell-foot').replaceChildren(el('p', { class: 'cell-error', role: 'alert' },
        el('strong', { text: 'Failed: ' }), 'the engine stopped while computing this cell; check its sizes (a finer mesh needs more memory).'));
    }
    endRun();
  }
  notice(why + '. A fresh engine was started; your notebook is intact.', 'error');
}

export function failPending(msg) {
  for (const p of state.pending.values()) p.reject(new Error(msg));
  state.pending.clear();
}

export function restartWorker() {
  if (state.worker) state.worker.terminate();
  startWorker();
}

// The engine keeps its own copy of the notebook. A fresh engine gets the
// whole document once; after that each request carries only what changed
// since the last one: the cells whose JSON differs, the order of the cells
// when it changed, the title and the history.
const sent = { whole: false, cells: new Map(), order: '', title: '', history: '' };

// OPS_WITH_DOC are the operations that read the notebook.
const OPS_WITH_DOC = new Set(['show', 'plan', 'run', 'report', 'csv', 'compare']);

function forget() {
  sent.whole = false;
  sent.cells.clear();
}

// cellKey is what decides whether a cell changed: everything but its
// results, which only the engine writes (an edit made while a run computed
// must reach the engine although the run's results were merged into it).
function cellKey(c) {
  const { results, ...rest } = c;
  return JSON.stringify(rest);
}

function remember(doc) {
  sent.whole = true;
  sent.cells = new Map((doc.cells || []).map((c) => [c.id, cellKey(c)]));
  sent.order = JSON.stringify((doc.cells || []).map((c) => c.id));
  sent.title = doc.title || '';
  sent.history = JSON.stringify(doc.history || []);
}

// syncedHistory records that the engine holds the page's history.
export function syncedHistory() { if (sent.whole) sent.history = JSON.stringify(state.doc.history || []); }

// changes returns the fields that bring the engine's copy up to date:
// the whole document the first time, an edit after that.
function changes() {
  const doc = state.doc;
  if (!sent.whole) { remember(doc); return { doc: docText() }; }
  const edit = {};
  const cells = [];
  // The engine drops the cells left out of an order: forget them, so that
  // one that comes back (undo) is sent again.
  const ids = new Set(doc.cells.map((c) => c.id));
  for (const id of sent.cells.keys()) if (!ids.has(id)) sent.cells.delete(id);
  for (const c of doc.cells) {
    const s = cellKey(c);
    if (sent.cells.get(c.id) !== s) { cells.push(c); sent.cells.set(c.id, s); }
  }
  if (cells.length) edit.cells = cells;
  const order = JSON.stringify(doc.cells.map((c) => c.id));
  if (order !== sent.order) { edit.order = doc.cells.map((c) => c.id); sent.order = order; }
  if ((doc.title || '') !== sent.title) { edit.title = doc.title || ''; sent.title = edit.title; }
  const history = JSON.stringify(doc.history || []);
  if (history !== sent.history) { edit.history = doc.history || []; sent.history = history; }
  return Object.keys(edit).length ? { edit } : {};
}

// ask sends one request to the engine and resolves with its answer. A
// request with its own "doc" (a file being opened) replaces the engine's
// copy.
export async function ask(op, fields = {}, onEvent = null) {
  await state.ready;
  const id = state.nextId++;
  let sync = {};
  if (fields.doc !== undefined) {
    forget();
    try { remember(JSON.parse(fields.doc)); } catch { /* the engine says what is wrong */ }
  } else if (OPS_WITH_DOC.has(op) && state.doc) {
    sync = changes();
  }
  return new Promise((resolve, reject) => {
    state.pending.set(id, { resolve, reject, onEvent });
    state.worker.postMessage(JSON.stringify({ id, op, ...sync, ...fields }));
  });
}
