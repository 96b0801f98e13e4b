// gapbook page: shows the notebook, edits it, and asks the engine in a Web
// Worker (Go compiled to WebAssembly) to compute. No numerics here: every
// number comes from the worker with its label. Plain modern JavaScript.
'use strict';

const $ = (id) => document.getElementById(id);
const AUTOSAVE = 'gapbook.autosave';

const state = {
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

// ---------- the worker ----------

function workerURL() {
  if (!state.standalone) return 'worker.js';
  const src = text('src-wasm-exec') + '\n' + text('src-worker');
  return URL.createObjectURL(new Blob([src], { type: 'text/javascript' }));
}

function text(id) { const e = $(id); return e ? e.textContent : ''; }

async function loadModule() {
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

function startWorker() {
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
      else if (m.type === 'error') { state.pending.delete(m.id); p.reject(new Error(m.error)); }
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
function engineFailed(why) {
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

function failPending(msg) {
  for (const p of state.pending.values()) p.reject(new Error(msg));
  state.pending.clear();
}

function restartWorker() {
  if (state.worker) state.worker.terminate();
  startWorker();
}

async function ask(op, fields = {}, onEvent = null) {
  await state.ready;
  const id = state.nextId++;
  return new Promise((resolve, reject) => {
    state.pending.set(id, { resolve, reject, onEvent });
    state.worker.postMessage(JSON.stringify({ id, op, ...fields }));
  });
}

// ---------- the document ----------

function docText() { return JSON.stringify(state.doc, null, 2); }

function cellOf(id) { return state.doc.cells.find((c) => c.id === id); }

let saveTimer = 0;
let showTimer = 0;
function changed(opts = {}) {
  clearTimeout(saveTimer);
  saveTimer = setTimeout(autosave, 300);
  if (opts.rebuild) renderCells();
  clearTimeout(showTimer);
  showTimer = setTimeout(refreshStates, 120);
}

function autosave() {
  try {
    localStorage.setItem(AUTOSAVE, JSON.stringify({ source: state.source, at: new Date().toISOString(), doc: docText() }));
  } catch (e) {
    notice('Autosave failed: ' + e.message + '. Save the notebook to a file to keep it.', 'warn');
  }
}

// refreshStates asks the engine which cells are current after an edit,
// without computing anything.
async function refreshStates() {
  if (state.running) { state.refreshAfterRun = true; return; }
  try {
    const r = await ask('show', { doc: docText() });
    applyViews(r.cells, false);
    showProblems(r.problems);
    renderRuns(r.runs);
  } catch (e) { notice(e.message, 'error'); }
}

function showProblems(ps) {
  const el = $('problems') || (() => {
    const d = document.createElement('div'); d.id = 'problems'; d.className = 'problems';
    $('cells').before(d); return d;
  })();
  el.replaceChildren();
  if (!ps || !ps.length) return;
  const h = document.createElement('p'); h.textContent = 'This notebook has problems to fix:';
  const ul = document.createElement('ul');
  for (const p of ps) { const li = document.createElement('li'); li.textContent = p; ul.append(li); }
  el.append(h, ul);
}

// ---------- rendering the cells ----------

const STATUS_WORDS = { ok: 'current', stale: 'stale', error: 'failed', running: 'computing' };

function el(tag, attrs = {}, ...kids) {
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
const domID = (id) => 'cell-' + encodeURIComponent(id);

function renderCells() {
  const box = $('cells');
  box.replaceChildren(...state.doc.cells.map((c, i) => renderCell(c, i)));
  fillSeriesCells();
  $('title').value = state.doc.title || '';
}

function renderCell(c, index) {
  const kind = state.kinds.get(c.kind);
  const sec = el('section', { class: 'cell', id: domID(c.id), tabindex: '-1', 'aria-label': `${c.kind} cell ${c.id}` });
  sec.dataset.cell = c.id;
  sec.addEventListener('focusin', () => { state.focus = c.id; });

  const idInput = el('input', { class: 'cell-id', type: 'text', value: c.id, 'aria-label': 'Cell id', maxlength: '64', spellcheck: 'false' });
  idInput.addEventListener('change', () => renameCell(c, idInput));
  const head = el('header', { class: 'cell-head' },
    idInput,
    el('span', { class: 'kind', text: c.kind }),
    el('span', { class: 'status', text: 'stale' }),
    el('progress', { class: 'bar', max: '1', value: '0', hidden: true, 'aria-label': `Progress of ${c.id}` }),
    el('span', { class: 'progress-msg' }),
    el('span', { class: 'tools' },
      el('button', { type: 'button', class: 'run', title: 'Recompute this cell and what it needs (Alt+R)', onclick: () => runCells([c.id]) }, 'Recompute'),
      el('button', { type: 'button', title: 'Move up (Alt+↑)', 'aria-label': `Move ${c.id} up`, onclick: () => moveCell(c.id, -1), disabled: index === 0 }, '↑'),
      el('button', { type: 'button', title: 'Move down (Alt+↓)', 'aria-label': `Move ${c.id} down`, onclick: () => moveCell(c.id, 1), disabled: index === state.doc.cells.length - 1 }, '↓'),
      el('button', { type: 'button', title: 'Duplicate (Alt+C)', onclick: () => duplicateCell(c.id) }, 'Duplicate'),
      el('button', { type: 'button', class: 'danger', title: 'Delete (Alt+Delete)', onclick: () => deleteCell(c.id) }, 'Delete')));
  sec.append(head);

  const main = el('div', { class: 'cell-main' });
  if (!kind) {
    main.append(el('p', { class: 'cell-error', text: `Unknown kind "${c.kind}". Known kinds: ${[...state.kinds.keys()].join(', ')}.` }));
  } else if (kind.body) {
    main.classList.add('note');
    main.append(noteEditor(c, kind));
  } else {
    main.append(inputForm(c, kind), el('div', { class: 'results', 'aria-live': 'polite' }));
  }
  sec.append(main, el('div', { class: 'cell-foot' }));
  const v = state.views.get(c.id);
  if (v) applyView(sec, v);
  return sec;
}

// A note: the rendered text; "Edit" opens the markdown beside a live preview.
function noteEditor(c, kind) {
  const wrap = el('div', { class: 'note-wrap' });
  const preview = el('div', { class: 'note-body' });
  const area = el('textarea', { class: 'note-src', 'aria-label': `Markdown of ${c.id}`, rows: '8', spellcheck: 'true' });
  area.value = (c.inputs && typeof c.inputs.text === 'string') ? c.inputs.text : '';
  const editor = el('div', { class: 'note-editor', hidden: true }, area);
  const toggle = el('button', { type: 'button', class: 'note-toggle', 'aria-expanded': 'false' }, 'Edit text');
  toggle.addEventListener('click', () => {
    const open = editor.hidden;
    editor.hidden = !open;
    toggle.textContent = open ? 'Done' : 'Edit text';
    toggle.setAttribute('aria-expanded', String(open));
    wrap.classList.toggle('editing', open);
    if (open) area.focus();
  });
  let t = 0;
  area.addEventListener('input', () => {
    c.inputs = c.inputs || {};
    c.inputs.text = area.value;
    changed();
    clearTimeout(t);
    t = setTimeout(async () => {
      try { preview.innerHTML = (await ask('preview', { text: area.value })).html; } catch (e) { notice(e.message, 'error'); }
    }, 80);
  });
  wrap.append(editor, preview, toggle);
  return wrap;
}

function boundText(inp) {
  if (!inp.low && !inp.high) return '';
  const lo = inp.low ? (inp.low.strict ? '(' : '[') + fmt(inp.low.value) : '(−∞';
  const hi = inp.high ? fmt(inp.high.value) + (inp.high.strict ? ')' : ']') : '∞)';
  return `${lo}, ${hi}`;
}
const fmt = (v) => String(v).replace('-', '−');

function inputForm(c, kind) {
  const form = el('form', { class: 'inputs', novalidate: true, 'aria-label': `Inputs of ${c.id}` });
  form.addEventListener('submit', (e) => { e.preventDefault(); runCells([c.id]); });
  c.inputs = c.inputs || {};
  // Inputs the file sets, or that have no default, come first; the others
  // wait behind a disclosure so a kind with many inputs stays readable.
  const more = el('details', { class: 'more-inputs' });
  const main = [];
  for (const inp of kind.inputs) {
    const fid = `${domID(c.id)}-in-${inp.name}`;
    const raw = c.inputs[inp.name];
    const msg = el('span', { class: 'field-msg', id: fid + '-msg', 'aria-live': 'polite' });
    let field;
    const set = (value) => { if (value === undefined) delete c.inputs[inp.name]; else c.inputs[inp.name] = value; changed(); };
    switch (inp.type) {
      case 'bool':
        field = el('input', { type: 'checkbox', id: fid, checked: (raw ?? inp.default) === true });
        field.addEventListener('change', () => set(field.checked));
        break;
      case 'choice':
        field = el('select', { id: fid }, ...inp.choices.map((ch) => el('option', { value: ch, text: ch })));
        const cur = raw ?? inp.default ?? '';
        if (!inp.choices.includes(cur)) field.append(el('option', { value: String(cur), text: `${JSON.stringify(cur).slice(0, 40)} (not allowed)` }));
        field.value = String(cur);
        field.addEventListener('change', () => set(field.value));
        break;
      case 'ref': {
        const before = state.doc.cells.slice(0, state.doc.cells.indexOf(c))
          .filter((o) => !inp.refKinds || !inp.refKinds.length || inp.refKinds.includes(o.kind));
        field = el('select', { id: fid }, el('option', { value: '', text: '(none)' }),
          ...before.map((o) => el('option', { value: o.id, text: `${o.id} (${o.kind})` })));
        const cur = raw ?? inp.default ?? '';
        if (cur && !before.some((o) => o.id === cur)) field.append(el('option', { value: cur, text: `${cur} (not an earlier cell)` }));
        field.value = cur;
        field.addEventListener('change', () => set(field.value));
        break;
      }
      default: {
        const shown = raw === undefined ? (inp.default ?? '') : raw;
        const listy = inp.type === 'numbers' || inp.type === 'texts';
        field = el('input', { type: 'text', id: fid, spellcheck: 'false', autocomplete: 'off',
          inputmode: (inp.type === 'number' || inp.type === 'integer') ? 'decimal' : null,
          placeholder: listy ? 'comma separated' : null });
        field.value = Array.isArray(shown) ? shown.join(', ') : String(shown);
        field.addEventListener('change', () => {
          const [value, problem] = parseField(inp, field.value);
          msg.textContent = problem || '';
          field.setAttribute('aria-invalid', problem ? 'true' : 'false');
          set(value);
        });
      }
    }
    field.setAttribute('aria-describedby', fid + '-msg ' + fid + '-doc');
    field.dataset.input = inp.name;
    const range = boundText(inp);
    const row = el('div', { class: 'input-row' },
      el('label', { for: fid, text: inp.name }),
      field,
      el('span', { class: 'field-doc', id: fid + '-doc', text: inp.doc + (range ? ` ∈ ${range}` : '') }),
      msg);
    if (raw !== undefined || (inp.default === null && !inp.optional)) main.push(row); else more.append(row);
  }
  form.append(...main);
  const n = more.childElementCount;
  if (n) {
    more.prepend(el('summary', { text: `${n} more input${n > 1 ? 's' : ''} at their defaults` }));
    form.append(more);
  }
  return form;
}

// parseField turns what was typed into the JSON value of an input. What
// cannot be read is kept as typed, so the engine names the problem too and
// nothing the user typed is lost.
function parseField(inp, s) {
  const t = s.trim();
  if (t === '' && inp.default !== null && inp.default !== undefined) return [undefined, ''];
  const num = (x) => {
    const v = Number(x.replace('−', '-'));
    return x.trim() === '' || !Number.isFinite(v) ? null : v;
  };
  const inRange = (v) => {
    if (inp.low && (v < inp.low.value || (inp.low.strict && v === inp.low.value))) return false;
    if (inp.high && (v > inp.high.value || (inp.high.strict && v === inp.high.value))) return false;
    return true;
  };
  const want = 'want ' + (inp.type === 'integer' ? 'a whole number' : 'a number') + (boundText(inp) ? ' in ' + boundText(inp) : '');
  switch (inp.type) {
    case 'number': case 'integer': {
      const v = num(t);
      if (v === null || !inRange(v) || (inp.type === 'integer' && !Number.isInteger(v))) return [t, `${want}, got "${t}"`];
      return [v, ''];
    }
    case 'numbers': {
      const parts = t === '' ? [] : t.split(/[,;\s]+/).filter(Boolean);
      const vs = parts.map(num);
      const bad = vs.findIndex((v) => v === null || !inRange(v));
      if (bad >= 0) return [t, `element ${bad + 1}: ${want}, got "${parts[bad]}"`];
      return [vs, ''];
    }
    case 'texts':
      return [t === '' ? [] : t.split(',').map((x) => x.trim()).filter(Boolean), ''];
    default:
      if (inp.maxLen && new TextEncoder().encode(s).length > inp.maxLen) return [s, `at most ${inp.maxLen} bytes`];
      return [s, ''];
  }
}

function applyViews(views, fromRun) {
  for (let v of views) {
    const old = state.views.get(v.id);
    // An edit makes results stale, not wrong to look at: keep the last ones,
    // faded, until the cell is computed again.
    if (v.status === 'stale' && !v.scalars.length && !v.html && old && (old.scalars.length || old.html)) {
      v = { ...old, status: 'stale', error: null, reproduced: '', differences: null, fields: v.fields, earlier: true };
    } else if (old && old.reproduced && !v.reproduced && v.status === 'ok' && v.digest === old.digest) {
      // Whether the saved results were reproduced is known from the last run.
      v = { ...v, reproduced: old.reproduced, differences: old.differences };
    }
    state.views.set(v.id, v);
    const sec = document.getElementById(domID(v.id));
    if (sec && !(state.running && state.running.cells.has(v.id) && !fromRun)) applyView(sec, v);
  }
}

// applyView shows a cell's state and results from the worker.
function applyView(sec, v) {
  sec.dataset.status = v.status;
  sec.querySelector('.status').textContent = STATUS_WORDS[v.status] || v.status;
  const bar = sec.querySelector('.bar');
  bar.hidden = true;
  sec.querySelector('.progress-msg').textContent = '';
  const body = sec.querySelector('.note-body');
  if (body && v.body !== undefined) body.innerHTML = v.body; // safe HTML from the engine; CSP forbids scripts anyway
  const res = sec.querySelector('.results');
  if (res) {
    res.replaceChildren();
    if (v.scalars.length) res.append(scalarTable(v.scalars, v.intervals));
    if (v.html) {
      const box = el('div', { class: 'rendered' });
      box.innerHTML = v.html;
      res.append(box);
      addExports(box, v);
    }
    if (!v.scalars.length && !v.html && v.status !== 'error') {
      res.append(el('p', { class: 'empty', text: v.status === 'ok' ? 'No results to show.' : 'Not computed yet for these inputs.' }));
    }
  }
  for (const m of sec.querySelectorAll('.field-msg.engine')) { m.textContent = ''; m.classList.remove('engine'); }
  if (v.fields) {
    for (const [name, msg] of Object.entries(v.fields)) {
      const f = sec.querySelector(`[data-input="${CSS.escape(name)}"]`);
      const m = f && f.parentElement.querySelector('.field-msg');
      if (m && !m.textContent) { m.textContent = msg; m.classList.add('engine'); f.closest('details')?.setAttribute('open', ''); }
    }
  }
  const foot = sec.querySelector('.cell-foot');
  foot.replaceChildren();
  if (v.error) {
    const e = el('p', { class: 'cell-error', role: 'alert' }, el('strong', { text: 'Failed: ' }),
      (v.error.field ? `input ${v.error.field}: ` : '') + v.error.msg);
    foot.append(e);
  }
  if (v.earlier) {
    foot.append(el('p', { class: 'earlier', text: 'Faded: results of earlier inputs. Recompute to bring them up to date.' }));
  }
  if (v.reproduced === 'yes' && v.digest) {
    const how = (v.differences && v.differences.length) ? `; ${v.differences[0]}` : ` (digest ${v.digest.slice(0, 12)}…)`;
    foot.append(el('p', { class: 'repro yes', text: `✓ reproduced the saved results${how}` }));
  } else if (v.reproduced === 'no') {
    foot.append(el('div', { class: 'repro no' }, el('p', { text: '✗ differs from the saved results:' }),
      el('ul', {}, ...(v.differences || []).map((d) => el('li', { text: d })))));
  }
}

// Each interval of the results is one row [lower, upper] with its label;
// the scalars at its ends are shown there and not again on their own.
function scalarTable(scalars, intervals) {
  const t = el('table', { class: 'scalars' },
    el('thead', {}, el('tr', {}, el('th', { scope: 'col', text: 'quantity' }), el('th', { scope: 'col', text: 'value' }),
      el('th', { scope: 'col', text: 'label' }), el('th', { scope: 'col', text: 'unit or meaning' }))));
  const tb = el('tbody');
  const byName = new Map(scalars.map((s) => [s.name, s]));
  const used = new Set();
  for (const iv of intervals || []) {
    const lo = byName.get(iv.ends[0]), hi = byName.get(iv.ends[1]);
    if (!lo || !hi) continue;
    used.add(lo.name); used.add(hi.name);
    tb.append(el('tr', { class: 'interval', 'data-interval': iv.name },
      el('th', { scope: 'row', text: iv.name }),
      el('td', { class: 'num' }, '[', numCell(lo), ', ', numCell(hi), ']'),
      el('td', {}, labelPill(iv.label)), el('td', { text: iv.unit || '' })));
  }
  for (const s of scalars) {
    if (used.has(s.name)) continue;
    tb.append(el('tr', {}, el('th', { scope: 'row', text: s.name }), el('td', { class: 'num' }, numCell(s)),
      el('td', {}, labelPill(s.label)), el('td', { text: s.unit || '' })));
  }
  t.append(tb);
  return t;
}

function numCell(s) {
  return el('span', { class: 'value', 'data-name': s.name, 'data-value': s.value, 'data-label': s.label, title: `${s.value} (${s.label})`, text: s.shown.replace(/^-/, '−') });
}

function labelPill(label) {
  const sign = { guaranteed: '■', estimate: '≈', reference: '◇' }[label] || '?';
  return el('span', { class: `label label-${label}` }, el('span', { 'aria-hidden': 'true', text: sign + ' ' }), label);
}

// Tables get CSV, plots and colour maps SVG downloads.
function addExports(box, v) {
  box.querySelectorAll('table.data').forEach((t, i) => {
    const name = v.tables[i] || 'table';
    t.after(el('p', { class: 'export' }, el('button', { type: 'button', onclick: async () => {
      try {
        const r = await ask('csv', { doc: docText(), cell: v.id, table: name });
        download(`${v.id}-${name}.csv`, r.csv, 'text/csv');
      } catch (e) { notice(e.message, 'error'); }
    } }, 'CSV'), el('button', { type: 'button', onclick: () => download(`${v.id}-${name}.svg`, tableSVG(t), 'image/svg+xml') }, 'SVG')));
  });
  box.querySelectorAll('figure').forEach((f, i) => {
    const svg = f.querySelector('svg');
    if (!svg) return;
    f.append(el('p', { class: 'export' }, el('button', { type: 'button', onclick: () => download(`${v.id}-figure${i + 1}.svg`, svg.outerHTML, 'image/svg+xml') }, 'SVG')));
  });
}

// tableSVG draws the shown table as text in an SVG image (for slides).
function tableSVG(t) {
  const rows = [...t.rows].map((r) => [...r.cells].map((c) => c.textContent));
  const w = 110, h = 20;
  const cols = Math.max(...rows.map((r) => r.length));
  const esc = (s) => s.replace(/[&<>"]/g, (ch) => ({ '&': '&amp;', '<': '&lt;', '>': '&gt;', '"': '&quot;' }[ch]));
  let body = '';
  rows.forEach((r, i) => r.forEach((c, j) => {
    body += `<text x="${j * w + w - 6}" y="${i * h + 15}" text-anchor="end"${i === 0 ? ' font-weight="bold"' : ''}>${esc(c)}</text>`;
  }));
  return `<svg xmlns="http://www.w3.org/2000/svg" width="${cols * w}" height="${rows.length * h}" font-family="sans-serif" font-size="12"><rect width="100%" height="100%" fill="#fff"/>${body}</svg>`;
}

function download(name, content, type) {
  const a = el('a', { href: URL.createObjectURL(new Blob([content], { type })), download: name });
  document.body.append(a);
  a.click();
  setTimeout(() => { URL.revokeObjectURL(a.href); a.remove(); }, 1000);
}

// ---------- computing ----------

async function runCells(only, opts = {}) {
  if (state.running) { notice('A computation is running; stop it first (Esc).', 'warn'); return null; }
  const ids = only || state.doc.cells.map((c) => c.id);
  const run = { cells: new Set(ids) };
  state.running = run;
  $('stop').disabled = false;
  document.body.classList.add('busy');
  const started = performance.now();
  try {
    const r = await ask('run', { doc: docText(), only: only || undefined, record: opts.record, override: opts.override }, (m) => {
      if (state.running !== run) return;
      if (m.type === 'progress') showProgress(m);
      else if (m.type === 'cell') { applyViews([m.view], true); noteFirstResults(); }
    });
    if (state.running !== run) return null;
    mergeResults(JSON.parse(r.doc));
    applyViews(r.cells, true);
    renderRuns(r.runs);
    noteFirstResults();
    const secs = ((performance.now() - started) / 1000).toFixed(2);
    const failed = r.cells.filter((c) => c.status === 'error').length;
    notice(failed ? `Computed in ${secs} s; ${failed} cell(s) failed.` : `Computed in ${secs} s.`, failed ? 'warn' : 'ok');
    changed();
    return r;
  } catch (e) {
    if (state.running === run) notice(e.message, 'error');
    return null;
  } finally {
    if (state.running === run) endRun();
  }
}

function noteFirstResults() {
  if (!state.firstResults) state.firstResults = performance.now();
}

// mark records when a stage of the start was reached (ms since navigation).
function mark(name) { state.marks[name] = Math.round(performance.now()); }

function endRun() {
  state.running = null;
  $('stop').disabled = true;
  document.body.classList.remove('busy');
  if (state.refreshAfterRun) { state.refreshAfterRun = false; refreshStates(); }
}

function showProgress(m) {
  if (state.running) state.running.current = m.cell;
  const sec = document.getElementById(domID(m.cell));
  if (!sec) return;
  sec.dataset.status = 'running';
  sec.querySelector('.status').textContent = STATUS_WORDS.running;
  const bar = sec.querySelector('.bar');
  bar.hidden = false;
  bar.value = m.fraction;
  sec.querySelector('.progress-msg').textContent = m.message || '';
}

// mergeResults takes the results and history the engine saved, keeping
// any edits made while it computed (their hashes mark them stale).
function mergeResults(done) {
  for (const c of done.cells) {
    const mine = cellOf(c.id);
    if (mine && c.results) mine.results = c.results;
  }
  if (done.history) state.doc.history = done.history; else delete state.doc.history;
}

function stop() {
  if (!state.running) return;
  const run = state.running;
  state.running = null;
  restartWorker(); // a message cannot reach a busy engine; a fresh one can
  failPending('stopped');
  for (const id of run.cells) {
    const sec = document.getElementById(domID(id));
    const v = state.views.get(id);
    if (sec && v) applyView(sec, v);
    else if (sec) { sec.dataset.status = 'stale'; sec.querySelector('.status').textContent = 'stale'; sec.querySelector('.bar').hidden = true; }
  }
  endRun();
  notice('Stopped. The engine was restarted; the notebook is as it was.', 'warn');
  refreshStates();
}

// ---------- editing cells ----------

function freshID(base) {
  const taken = new Set(state.doc.cells.map((c) => c.id));
  base = (base || 'cell').replace(/[^A-Za-z0-9_-]/g, '').slice(0, 56) || 'cell';
  if (!taken.has(base)) return base;
  for (let i = 2; ; i++) if (!taken.has(`${base}-${i}`)) return `${base}-${i}`;
}

function addCell(kind) {
  const k = state.kinds.get(kind);
  if (!k) return;
  const c = { id: freshID(kind), kind, inputs: {} };
  for (const inp of k.inputs) if (inp.default === null && !inp.optional && inp.type === 'ref') {
    const prev = state.doc.cells.filter((o) => !inp.refKinds || !inp.refKinds.length || inp.refKinds.includes(o.kind)).pop();
    if (prev) c.inputs[inp.name] = prev.id;
  }
  const at = state.focus ? state.doc.cells.findIndex((o) => o.id === state.focus) + 1 : state.doc.cells.length;
  state.doc.cells.splice(at > 0 ? at : state.doc.cells.length, 0, c);
  changed({ rebuild: true });
  focusCell(c.id);
}

function moveCell(id, by) {
  const cs = state.doc.cells;
  const i = cs.findIndex((c) => c.id === id);
  const j = i + by;
  if (i < 0 || j < 0 || j >= cs.length) return;
  [cs[i], cs[j]] = [cs[j], cs[i]];
  changed({ rebuild: true });
  focusCell(id);
}

function duplicateCell(id) {
  const cs = state.doc.cells;
  const i = cs.findIndex((c) => c.id === id);
  if (i < 0) return;
  const copy = structuredClone(cs[i]);
  copy.id = freshID(id);
  delete copy.results;
  cs.splice(i + 1, 0, copy);
  changed({ rebuild: true });
  focusCell(copy.id);
}

function deleteCell(id) {
  const cs = state.doc.cells;
  const i = cs.findIndex((c) => c.id === id);
  if (i < 0) return;
  state.deleted = { cell: cs[i], index: i };
  cs.splice(i, 1);
  $('undo').hidden = false;
  notice(`Deleted cell ${id}. Undo with Alt+U or the Undo delete button.`, 'ok');
  changed({ rebuild: true });
  const next = cs[Math.min(i, cs.length - 1)];
  if (next) focusCell(next.id);
}

function undoDelete() {
  const d = state.deleted;
  if (!d) return;
  const c = d.cell;
  if (cellOf(c.id)) c.id = freshID(c.id);
  state.doc.cells.splice(Math.min(d.index, state.doc.cells.length), 0, c);
  state.deleted = null;
  $('undo').hidden = true;
  changed({ rebuild: true });
  focusCell(c.id);
}

function renameCell(c, input) {
  const id = input.value.trim();
  if (id === c.id) return;
  if (!/^[A-Za-z0-9_-]{1,64}$/.test(id) || cellOf(id)) {
    notice(`Cell id "${id}" is not usable: use 1 to 64 letters, digits, - and _, not taken by another cell.`, 'error');
    input.value = c.id;
    return;
  }
  const old = c.id;
  c.id = id;
  // References to the old id follow the rename.
  for (const o of state.doc.cells) {
    const k = state.kinds.get(o.kind);
    if (!k || !o.inputs) continue;
    for (const inp of k.inputs) if (inp.type === 'ref' && o.inputs[inp.name] === old) o.inputs[inp.name] = id;
  }
  state.views.delete(old);
  changed({ rebuild: true });
}

function focusCell(id) {
  const sec = document.getElementById(domID(id));
  if (sec) { sec.focus({ preventScroll: false }); state.focus = id; }
}

// ---------- runs panel ----------

function renderRuns(runs) {
  state.runs = runs || [];
  const list = $('run-list');
  list.replaceChildren(...state.runs.map((r, i) => el('li', {},
    el('label', {}, el('input', { type: 'checkbox', value: String(i), class: 'run-pick' }),
      el('span', { class: 'run-label', text: r.label || `run ${i + 1}` }),
      el('span', { class: 'run-meta', text: ` ${r.at.replace('T', ' ').replace('Z', ' UTC')} · ${r.ok} current${r.failed ? `, ${r.failed} failed` : ''}` })))).reverse());
  if (!state.runs.length) list.append(el('li', { class: 'empty', text: 'No runs recorded yet. Record one, or run a series of values.' }));
  const tables = [...new Set(state.runs.flatMap((r) => r.tables))];
  const sel = $('cmp-table');
  const cur = sel.value;
  sel.replaceChildren(el('option', { value: '', text: '(none)' }), ...tables.map((t) => el('option', { value: t, text: t })));
  if (tables.includes(cur)) sel.value = cur;
}

async function compareRuns() {
  const runs = [...document.querySelectorAll('.run-pick:checked')].map((b) => Number(b.value)).sort((a, b) => a - b);
  if (!runs.length) { notice('Choose one or more runs to compare.', 'warn'); return; }
  const [cell, table] = ($('cmp-table').value || '/').split('/');
  try {
    const r = await ask('compare', { doc: docText(), runs, cell, table, x: $('cmp-x').value.trim(), y: $('cmp-y').value.trim() });
    const box = $('comparison');
    box.hidden = false;
    box.replaceChildren(el('header', { class: 'cell-head' }, el('h2', { text: `${runs.length} run${runs.length > 1 ? 's' : ''} compared` }),
      el('span', { class: 'tools' }, el('button', { type: 'button', onclick: () => { box.hidden = true; } }, 'Close'))));
    const t = el('div', { class: 'rendered' });
    t.innerHTML = r.html;
    box.append(t, el('p', { class: 'export' }, el('button', { type: 'button', onclick: () => download('runs.csv', r.csv, 'text/csv') }, 'CSV')));
    if (r.plot) { const f = el('figure', { class: 'plot' }); f.innerHTML = r.plot; box.append(f); }
    if (r.plotError) box.append(el('p', { class: 'field-msg', text: r.plotError }));
    box.scrollIntoView({ block: 'start' });
  } catch (e) { notice(e.message, 'error'); }
}

function fillSeriesCells() {
  const sel = $('series-cell');
  const cur = sel.value;
  sel.replaceChildren(...state.doc.cells.filter((c) => numericInputs(c).length).map((c) => el('option', { value: c.id, text: c.id })));
  if (cur && cellOf(cur)) sel.value = cur;
  fillSeriesInputs();
}

function numericInputs(c) {
  const k = state.kinds.get(c.kind);
  return k ? k.inputs.filter((i) => i.type === 'number' || i.type === 'integer') : [];
}

function fillSeriesInputs() {
  const c = cellOf($('series-cell').value);
  $('series-input').replaceChildren(...(c ? numericInputs(c) : []).map((i) => el('option', { value: i.name, text: i.name })));
}

async function runSeries(e) {
  e.preventDefault();
  const cell = $('series-cell').value, input = $('series-input').value;
  const values = $('series-values').value.split(/[,;\s]+/).filter(Boolean).map(Number);
  if (!cell || !input || !values.length || values.some((v) => !Number.isFinite(v))) {
    notice('A series needs a cell, one of its numeric inputs and a list of numbers such as 1.5, 2, 3.', 'warn');
    return;
  }
  for (const v of values) {
    const r = await runCells(null, { record: `${cell}.${input} = ${v}`, override: { cell, input, value: v } });
    if (!r) return;
  }
  refreshStates(); // the page shows the document's own inputs again
}

// ---------- files, links, reports ----------

async function compress(textIn) {
  const s = new Blob([textIn]).stream().pipeThrough(new CompressionStream('deflate-raw'));
  const bytes = new Uint8Array(await new Response(s).arrayBuffer());
  let bin = '';
  for (let i = 0; i < bytes.length; i += 0x8000) bin += String.fromCharCode(...bytes.subarray(i, i + 0x8000));
  return btoa(bin).replace(/\+/g, '-').replace(/\//g, '_').replace(/=+$/, '');
}

async function decompress(b64) {
  const bin = atob(b64.replace(/-/g, '+').replace(/_/g, '/'));
  const bytes = Uint8Array.from(bin, (c) => c.charCodeAt(0));
  const s = new Blob([bytes]).stream().pipeThrough(new DecompressionStream('deflate-raw'));
  return new Response(s).text();
}

async function shareLink() {
  const url = location.href.split('#')[0] + '#nb=' + await compress(docText());
  state.lastShare = url;
  try {
    await navigator.clipboard.writeText(url);
    notice(`Link copied (${url.length} characters). It carries the notebook itself; nothing is sent anywhere.`, 'ok');
  } catch {
    notice('Copy this link: ' + url, 'ok');
  }
  history.replaceState(null, '', url);
}

function saveFile() {
  const name = (state.doc.title || 'notebook').replace(/[^A-Za-z0-9 _-]/g, '').trim().replace(/\s+/g, '-').slice(0, 60) || 'notebook';
  download(name + '.gapbook', docText() + '\n', 'application/json');
}

async function openText(t, source) {
  let doc;
  try { doc = JSON.parse(t); } catch (e) { notice('This file is not a gapbook notebook (not JSON): ' + e.message, 'error'); return false; }
  let r;
  try {
    r = await ask('show', { doc: t });
  } catch (e) { notice(e.message, 'error'); return false; }
  state.doc = doc;
  state.doc.cells = Array.isArray(state.doc.cells) ? state.doc.cells : [];
  state.source = source;
  state.views.clear();
  for (const v of r.cells) state.views.set(v.id, v);
  renderCells();
  showProblems(r.problems);
  renderRuns(r.runs);
  autosave();
  return true;
}

async function report() {
  try {
    const r = await ask('report', { doc: docText() });
    const w = window.open(URL.createObjectURL(new Blob([r.html], { type: 'text/html' })), '_blank');
    if (!w) download('report.html', r.html, 'text/html');
  } catch (e) { notice(e.message, 'error'); }
}

async function standalone() {
  if (state.standalone) {
    download('gapbook-standalone.html', state.pristine.replace(
      /(<script type="application\/json" id="src-notebook">)[\s\S]*?(<\/script>)/, (m, a, b) => a + docText().replace(/</g, '\\u003c') + b), 'text/html');
    return;
  }
  try {
    const r = await fetch('standalone', { method: 'POST', body: docText() });
    if (!r.ok) throw new Error(await r.text());
    download('gapbook-standalone.html', await r.blob(), 'text/html');
  } catch (e) { notice('The standalone page could not be made: ' + e.message, 'error'); }
}

let noticeTimer = 0;
function notice(msg, tone = 'ok') {
  const n = $('notice');
  n.replaceChildren(el('span', { text: msg }));
  n.dataset.tone = tone;
  clearTimeout(noticeTimer);
  if (tone === 'ok') noticeTimer = setTimeout(() => { n.replaceChildren(); }, 6000);
}

// ---------- start ----------

async function initialDoc() {
  const h = location.hash;
  if (h.startsWith('#nb=')) {
    try { return { text: await decompress(h.slice(4)), source: 'link', note: 'Opened the notebook carried by the link.' }; }
    catch (e) { notice('The link does not carry a readable notebook: ' + e.message, 'error'); }
  }
  let served = null;
  if (state.standalone) served = text('src-notebook');
  else {
    const r = await fetch('notebook.gapbook');
    served = r.ok ? await r.text() : null;
  }
  const source = state.standalone ? 'standalone' : 'served';
  try {
    const a = JSON.parse(localStorage.getItem(AUTOSAVE) || 'null');
    if (a && a.source === source && a.doc && a.doc !== served && !state.standalone) {
      return { text: a.doc, source, restored: served, note: `Restored your work from ${a.at.replace('T', ' ').slice(0, 19)} UTC.` };
    }
  } catch { /* a broken autosave is ignored */ }
  return { text: served || '{"gapbook":2,"title":"","cells":[]}', source };
}

async function boot() {
  const t0 = performance.now();
  try {
    const [mod, init] = await Promise.all([loadModule().then((m) => (mark('compiled'), m)), initialDoc()]);
    state.module = mod;
    startWorker();
    await state.ready;
    mark('ready');
    $('caution').replaceChildren(el('strong', { text: 'Caution. ' }), state.caution);
    $('add-kind').replaceChildren(...[...state.kinds.values()].map((k) => el('option', { value: k.name, title: k.doc, text: k.name })));
    $('add-kind').value = 'note';
    $('booting')?.remove();
    if (!await openText(init.text, init.source)) return;
    mark('shown');
    // Saved results or rendered notes are on screen: those are first results.
    if ([...state.views.values()].some((v) => v.status === 'ok' || v.body)) noteFirstResults();
    if (init.note) {
      // A lasting banner: the notices that follow must not hide where the notebook came from.
      const banner = el('p', { id: 'restored', class: 'restored', role: 'status' }, el('span', { text: init.note }));
      const close = () => banner.remove();
      if (init.restored) {
        banner.append(' ', el('button', { type: 'button', onclick: async () => {
          close();
          if (await openText(init.restored, init.source)) { notice('Opened the original notebook.', 'ok'); runCells(null); }
        } }, 'Open the original instead'));
      }
      banner.append(' ', el('button', { type: 'button', 'aria-label': 'Dismiss', onclick: close }, 'Dismiss'));
      $('notice').before(banner);
    }
    state.bootMs = performance.now() - t0;
    // Saved results are on screen now; recompute to bring every cell up to date.
    await runCells(null);
    if (state.standalone) reportReproduction();
    document.body.dataset.ready = 'true';
  } catch (e) {
    const b = $('booting');
    if (b) { b.textContent = e.message; b.className = 'cell-error'; }
    notice(e.message, 'error');
    document.body.dataset.ready = 'failed';
  }
}

function reportReproduction() {
  const vs = [...state.views.values()].filter((v) => v.reproduced);
  const yes = vs.filter((v) => v.reproduced === 'yes').length;
  const box = el('p', { class: 'repro-summary', id: 'repro-summary', role: 'status' });
  box.dataset.yes = String(yes);
  box.dataset.total = String(vs.length);
  box.textContent = vs.length === 0 ? 'This page had no saved results to reproduce.'
    : yes === vs.length ? `All ${yes} saved results were reproduced on this computer.`
      : `${yes} of ${vs.length} saved results were reproduced; the others are marked.`;
  $('cells').before(box);
}

function keys(e) {
  if (e.key === 'Escape' && state.running) { e.preventDefault(); stop(); return; }
  if (!e.altKey || e.ctrlKey || e.metaKey) return;
  const id = state.focus && cellOf(state.focus) ? state.focus : null;
  const act = {
    r: () => (e.shiftKey ? runCells(null) : id && runCells([id])),
    ArrowUp: () => id && moveCell(id, -1),
    ArrowDown: () => id && moveCell(id, 1),
    c: () => id && duplicateCell(id),
    Delete: () => id && deleteCell(id),
    u: undoDelete,
    n: () => addCell($('add-kind').value),
    s: saveFile,
    o: () => $('file').click(),
    h: () => $('toggle-runs').click(),
  }[e.key.length === 1 ? e.key.toLowerCase() : e.key];
  if (act) { e.preventDefault(); act(); }
}

function wire() {
  $('run-all').addEventListener('click', () => runCells(null));
  $('stop').addEventListener('click', stop);
  $('open').addEventListener('click', () => $('file').click());
  $('file').addEventListener('change', async () => {
    const f = $('file').files[0];
    if (f && await openText(await f.text(), 'file')) { notice(`Opened ${f.name}.`, 'ok'); runCells(null); }
    $('file').value = '';
  });
  $('save').addEventListener('click', saveFile);
  $('share').addEventListener('click', shareLink);
  $('report').addEventListener('click', report);
  $('standalone').addEventListener('click', standalone);
  $('toggle-runs').addEventListener('click', () => {
    const open = document.body.classList.toggle('runs-hidden');
    $('toggle-runs').setAttribute('aria-expanded', String(!open));
  });
  $('add').addEventListener('click', () => addCell($('add-kind').value));
  $('undo').addEventListener('click', undoDelete);
  $('title').addEventListener('change', () => { state.doc.title = $('title').value; changed(); });
  $('run-form').addEventListener('submit', (e) => {
    e.preventDefault();
    runCells(null, { record: $('run-label').value.trim() || `run ${(state.runs || []).length + 1}` });
  });
  $('series-cell').addEventListener('change', fillSeriesInputs);
  $('series-form').addEventListener('submit', runSeries);
  $('compare').addEventListener('click', compareRuns);
  document.addEventListener('keydown', keys);
  window.addEventListener('hashchange', async () => {
    if (location.hash.startsWith('#nb=') && location.href !== state.lastShare) {
      if (await openText(await decompress(location.hash.slice(4)), 'link')) runCells(null);
    }
  });
}

wire();
boot();
