// The cells: rendering, the input forms, the views of results the engine
// sends, and editing (add, move, duplicate, delete, rename).

import { $, AUTOSAVE, cellOf, docText, domID, el, fmt, notice, state, STATUS_WORDS } from './state.js';
import { ask } from './bridge.js';
import { addExports } from './plots.js';
import { runCells } from './compute.js';
import { fillSeriesCells, renderRuns } from './runs.js';

export let saveTimer = 0;

export let showTimer = 0;

export function changed(opts = {}) {
  clearTimeout(saveTimer);
  saveTimer = setTimeout(autosave, 300);
  if (opts.rebuild) renderCells();
  clearTimeout(showTimer);
  showTimer = setTimeout(refreshStates, 120);
}

export function autosave() {
  try {
    localStorage.setItem(AUTOSAVE, JSON.stringify({ source: state.source, at: new Date().toISOString(), doc: docText() }));
  } catch (e) {
    notice('Autosave failed: ' + e.message + '. Save the notebook to a file to keep it.', 'warn');
  }
}

// refreshStates asks the engine which cells are current after an edit,
// without computing anything.
export async function refreshStates() {
  if (state.running) { state.refreshAfterRun = true; return; }
  try {
    const r = await ask('show');
    applyViews(r.cells, false);
    showProblems(r.problems);
    renderRuns(r.runs);
  } catch (e) { notice(e.message, 'error'); }
}

export function showProblems(ps) {
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

export function renderCells() {
  const box = $('cells');
  box.replaceChildren(...state.doc.cells.map((c, i) => renderCell(c, i)));
  fillSeriesCells();
  $('title').value = state.doc.title || '';
}

export function renderCell(c, index) {
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
export function noteEditor(c, kind) {
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

export function boundText(inp) {
  if (!inp.low && !inp.high) return '';
  const lo = inp.low ? (inp.low.strict ? '(' : '[') + fmt(inp.low.value) : '(−∞';
  const hi = inp.high ? fmt(inp.high.value) + (inp.high.strict ? ')' : ']') : '∞)';
  return `${lo}, ${hi}`;
}

export function inputForm(c, kind) {
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
        // An optional reference left at (none) is left out of the file.
        field.addEventListener('change', () => set(field.value === '' && inp.optional ? undefined : field.value));
        break;
      }
      case 'text':
        if (inp.file) { field = fileField(c, inp, fid, msg, set); break; }
      // fall through
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

// MAX_FILE is the largest file a cell can hold (as the engine reads it).
const MAX_FILE = 64 * 1024 * 1024;

// fileField is the input of a file held in the study: a button to open
// one and a zone to drop one on. The file is stored gzip-compressed and
// base64-encoded, so the study stays one file that recomputes; the input
// named "file" gets its name.
export function fileField(c, inp, fid, msg, set) {
  const pick = el('input', { type: 'file', id: fid + '-pick', hidden: true });
  const size = c.inputs[inp.name] ? Math.round(c.inputs[inp.name].length * 3 / 4 / 1024) : 0;
  const what = el('span', { class: 'file-what', text: c.inputs[inp.name] ? `${c.inputs.file || 'a file'} (${size} KB compressed, in the study)` : 'no file yet' });
  const bar = el('progress', { class: 'file-bar', max: 1, value: 0, hidden: true });
  const take = async (f) => {
    if (!f) return;
    if (f.size > MAX_FILE) { msg.textContent = `${f.name} has ${(f.size / 1048576).toFixed(1)} MiB; at most 64 MiB can be imported`; return; }
    msg.textContent = '';
    bar.hidden = false;
    try {
      const data = await packFile(f, (x) => { bar.value = x; });
      c.inputs.file = f.name;
      what.textContent = `${f.name} (${Math.round(data.length * 3 / 4 / 1024)} KB compressed, in the study)`;
      set(data);
      notice(`Read ${f.name}; recompute the cell to import it.`, 'ok');
    } catch (e) {
      msg.textContent = `${f.name} could not be read: ${e.message}`;
    } finally { bar.hidden = true; }
  };
  pick.addEventListener('change', () => { take(pick.files[0]); pick.value = ''; });
  const field = el('div', { class: 'file-drop', id: fid, tabindex: '0', role: 'button', 'aria-label': `Open or drop the file of ${c.id}` },
    el('button', { type: 'button', onclick: () => pick.click() }, 'Open a file…'), ' or drop one here · ', what, bar, pick);
  field.addEventListener('dragover', (e) => { e.preventDefault(); field.classList.add('over'); });
  field.addEventListener('dragleave', () => field.classList.remove('over'));
  field.addEventListener('drop', (e) => { e.preventDefault(); field.classList.remove('over'); take(e.dataTransfer.files[0]); });
  return field;
}

// packFile reads a file, gzip-compresses it and returns it base64-encoded,
// reporting the fraction read.
export async function packFile(f, progress) {
  const reader = f.stream().getReader();
  let done = 0;
  const counted = new ReadableStream({
    async pull(ctl) {
      const { value, done: end } = await reader.read();
      if (end) { ctl.close(); return; }
      done += value.length;
      progress(done / Math.max(f.size, 1));
      ctl.enqueue(value);
    },
  });
  const gz = new Uint8Array(await new Response(counted.pipeThrough(new CompressionStream('gzip'))).arrayBuffer());
  if (gz.toBase64) return gz.toBase64();
  let s = '';
  for (let i = 0; i < gz.length; i += 0x8000) s += String.fromCharCode(...gz.subarray(i, i + 0x8000));
  return btoa(s);
}

// parseField turns what was typed into the JSON value of an input. What
// cannot be read is kept as typed, so the engine names the problem too and
// nothing the user typed is lost.
export function parseField(inp, s) {
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

export function applyViews(views, fromRun) {
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
export function applyView(sec, v) {
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
export function scalarTable(scalars, intervals) {
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

export function numCell(s) {
  return el('span', { class: 'value', 'data-name': s.name, 'data-value': s.value, 'data-label': s.label, title: `${s.value} (${s.label})`, text: s.shown.replace(/^-/, '−') });
}

export function labelPill(label) {
  const sign = { guaranteed: '■', estimate: '≈', reference: '◇' }[label] || '?';
  return el('span', { class: `label label-${label}` }, el('span', { 'aria-hidden': 'true', text: sign + ' ' }), label);
}

export function freshID(base) {
  const taken = new Set(state.doc.cells.map((c) => c.id));
  base = (base || 'cell').replace(/[^A-Za-z0-9_-]/g, '').slice(0, 56) || 'cell';
  if (!taken.has(base)) return base;
  for (let i = 2; ; i++) if (!taken.has(`${base}-${i}`)) return `${base}-${i}`;
}

export function addCell(kind) {
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

export function moveCell(id, by) {
  const cs = state.doc.cells;
  const i = cs.findIndex((c) => c.id === id);
  const j = i + by;
  if (i < 0 || j < 0 || j >= cs.length) return;
  [cs[i], cs[j]] = [cs[j], cs[i]];
  changed({ rebuild: true });
  focusCell(id);
}

export function duplicateCell(id) {
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

export function deleteCell(id) {
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

export function undoDelete() {
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

export function renameCell(c, input) {
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

export function focusCell(id) {
  const sec = document.getElementById(domID(id));
  if (sec) { sec.focus({ preventScroll: false }); state.focus = id; }
}
