// The page's shared state and small DOM helpers. The notebook lives here as
// the JSON object of its file; every number comes from the engine with its
// label, nothing numerical happens in the page.

export const $ = (id) => document.getElementById(id);

export const AUTOSAVE = 'gapbook.autosave';

export const state = {
  doc: null,          // the notebook as the JSON object of its file
  kinds: new Map(),   // kind name -> {name, doc, inputs, body}
  views: new Map(),   // cell id -> latest view from the worker
  caution: '',
  module: null,       // compiled WebAssembly.Module, reused on restart
  worker: null,
  ready: null,        // promise of the current worker's readiness
  pending: new Map(), // request id -> {resolve, reject, onEvent}
  nextId: 1,
  running: null,      // {id, cells:Set} while a computation runs
  members: new Map(), // "cell hash row" -> a finished member (pool.js)
  deleted: null,      // {cell, index} for undo
  focus: null,        // id of the cell last focused
  source: 'default',
  standalone: document.documentElement.dataset.mode === 'standalone',
  firstResults: 0,    // ms from navigation to first results (for the benchmark)
  marks: {},          // ms from navigation to each stage of the start
  // The standalone page as it arrived, to save it again with new results.
  pristine: '<!DOCTYPE html>\n' + document.documentElement.outerHTML,
};
window.gapbook = state; // for tests and the curious: read-only use

export function text(id) { const e = $(id); return e ? e.textContent : ''; }

export function docText() { return JSON.stringify(state.doc, null, 2); }

export function cellOf(id) { return state.doc.cells.find((c) => c.id === id); }

export const STATUS_WORDS = { ok: 'current', stale: 'stale', error: 'failed', running: 'computing' };

export function el(tag, attrs = {}, ...kids) {
  const e = document.createElement(tag);
  for (const [k, v] of Object.entries(attrs)) {
    if (v === undefined || v === null || v === false) continue;
    if (k === 'class') e.className = v;
    else if (k === 'text') e.textContent = v;
    else if (k.startsWith('on')) e.addEventListener(k.slice(2), v);
    else e.setAttribute(k, v === true ? '' : v);
  }
  e.append(...kids.filter((k) => k !== null && k !== undefined));
  return e;
}

// Cell ids from a file may be hostile; DOM ids are derived, never trusted.
export const domID = (id) => 'cell-' + encodeURIComponent(id);

export const fmt = (v) => String(v).replace('-', '−');

export function download(name, content, type) {
  const a = el('a', { href: URL.createObjectURL(new Blob([content], { type })), download: name });
  document.body.append(a);
  a.click();
  setTimeout(() => { URL.revokeObjectURL(a.href); a.remove(); }, 1000);
}

export let noticeTimer = 0;

export function notice(msg, tone = 'ok') {
  const n = $('notice');
  n.replaceChildren(el('span', { text: msg }));
  n.dataset.tone = tone;
  clearTimeout(noticeTimer);
  if (tone === 'ok') noticeTimer = setTimeout(() => { n.replaceChildren(); }, 6000);
}
